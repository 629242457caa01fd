"""Bad input fails before the numerical stack loads.

Each case runs ``placer.cli.main`` in a fresh interpreter and reads
``sys.modules`` afterwards: a missing, malformed or mistyped spec file (or
a bad option) must be refused with exit 2 and one ``error:`` line while
sympy, scipy, matplotlib, python-control and numpy are still unloaded.
No time is measured here (``benchmarks/bench_startup.py`` does that).
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
HEAVY = ("sympy", "scipy", "matplotlib", "control", "numpy")
PROBE = (
    "import json, sys\n"
    "from placer.cli import main\n"
    "try:\n"
    "    rc = main(sys.argv[1:])\n"
    "except SystemExit as exit:\n"
    "    rc = exit.code\n"
    f"print(json.dumps([rc, [m for m in {HEAVY!r} if m in sys.modules]]))\n"
)


def run(args, cwd):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    done = subprocess.run([sys.executable, "-c", PROBE, *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300)
    rc, loaded = json.loads(done.stdout.strip().splitlines()[-1])
    return rc, loaded, done.stderr


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("startup")
    (folder / "malformed.toml").write_text('title = "x"\n[target\norder = 4\n')
    (folder / "unknown.toml").write_text('[tagret]\nresponse = "lowpass"\n')
    (folder / "badkey.toml").write_text('[target]\nresponse = "lowpass"\n[parts]\nresistor_serie = "E96"\n')
    (folder / "folder.toml").mkdir()
    (folder / "latin1.toml").write_bytes('title = "caf\xe9"\n'.encode("latin-1"))
    return folder


CASES = [
    (["design", "missing.toml"], "spec file 'missing.toml' does not exist"),
    (["design", "malformed.toml"], "malformed.toml: not valid TOML"),
    (["design", "unknown.toml"], "unknown key 'tagret'; did you mean 'target'?"),
    (["design", "folder.toml"], "is a directory, not a file"),
    (["design", "latin1.toml"], "not UTF-8 text"),
    (["design", "badkey.toml"], "badkey.toml: [parts]: unknown key 'resistor_serie'"),
    (["target", "missing.toml"], "does not exist"),
    (["compare", "unknown.toml"], "unknown key 'tagret'"),
    (["loop", "malformed.toml"], "not valid TOML"),
    (["explore", "missing.toml", "--no-browser"], "does not exist"),
    (["design", str(ROOT / "examples" / "adc-antialias.toml"), "--plots", "no-such-folder"],
     "--plots: folder 'no-such-folder' does not exist"),
    (["design", str(ROOT / "examples" / "adc-antialias.toml"), "--samples", "0"],
     "--samples 0: give a whole number >= 1"),
    (["design", str(ROOT / "examples" / "adc-antialias.toml"), "--json",
      str(ROOT / "examples" / "adc-antialias.toml")], "is an input file; refusing to overwrite it"),
    (["design"], "the following arguments are required: SPEC"),
]


@pytest.mark.parametrize("args, message", CASES, ids=[" ".join(c[0][:2]) + f" #{i}"
                                                      for i, c in enumerate(CASES)])
def test_bad_input_fails_before_the_numerical_stack(files, args, message):
    rc, loaded, stderr = run(args, files)
    assert rc == 2
    lines = stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), stderr
    assert message in lines[0]
    assert loaded == [], f"loaded before the error: {loaded}"


def test_help_and_version_load_nothing_heavy(files):
    for args in (["--help"], ["design", "--help"], ["--version"]):
        rc, loaded, _ = run(args, files)
        assert rc == 0 and loaded == [], (args, loaded)


def test_the_probe_sees_the_stack_once_a_spec_is_read(files):
    # the control case: a good file goes on to the real reader, which loads the stack,
    # so an empty list above means the early check answered, not a blind probe
    rc, loaded, stderr = run(["target", str(ROOT / "examples" / "adc-antialias.toml")], files)
    assert rc == 0, stderr
    assert {"sympy", "numpy"} <= set(loaded)


def test_a_bad_value_past_the_early_check_still_fails_cleanly(files):
    # order 40 is a type-correct key: the early check passes it, the full reader refuses it
    (files / "order.toml").write_text('[target]\nresponse = "lowpass"\n'
                                      'approximation = "butterworth"\norder = 40\ncutoff = "1k"\n')
    rc, _, stderr = run(["design", "order.toml"], files)
    lines = stderr.strip().splitlines()
    assert rc == 2 and len(lines) == 1 and lines[0].startswith("error: order.toml")
    assert "order = 40" in lines[0] and "12" in lines[0]
