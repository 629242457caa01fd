"""A fixed part or a constraint that no candidate has is bad input, not ignored."""

import pytest

from placer.cli import main
from placer.design import design
from placer.errors import SpecError
from placer.spec.reader import load_spec

SPEC = """
[target]
approximation = "butterworth"
order = 2
cutoff = "1 kHz"
[parts]
{line}
"""


def _spec(tmp_path, line):
    path = tmp_path / "spec.toml"
    path.write_text(SPEC.format(line=line))
    return path


def test_misnamed_fixed_part_with_default_candidates(tmp_path):
    spec = load_spec(_spec(tmp_path, 'fixed = { Rx = "10k" }'))
    with pytest.raises(SpecError, match=r"parts\.fixed\.Rx: no candidate topology has a part 'Rx'"):
        design(spec)


def test_misnamed_constraint_with_default_candidates(tmp_path):
    spec = load_spec(_spec(tmp_path, 'constraints = ["C9 = C1"]'))
    with pytest.raises(SpecError, match=r"'C9 = C1' names 'C9'"):
        design(spec)


def test_cli_exit_status_two_and_one_line(tmp_path, capsys):
    path = _spec(tmp_path, 'fixed = { Rx = "10k" }')
    assert main(["design", str(path), "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("error: ") and "Rx" in err[0]
