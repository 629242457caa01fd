"""Tests of placer.design: from a spec to sections, parts and one circuit.

Outside references, named beside each check:

* Butterworth fourth-order section Q values 0.5412 and 1.3066 (from the
  coefficient table a1 = 1.8478, a2 = 0.7654, b = 1: Carter and Mancini,
  *Op Amps for Everyone*, active filter design chapter, from memory), and
  the Butterworth poles from scipy.signal.butter (reference library);
* the numeric MNA path (:func:`placer.analysis.network.circuit_poles`), analysing
  the built circuits on their own, against the symbolic network functions
  the design used.
"""

import math
import textwrap

import numpy as np
import pytest
from scipy import signal

from placer.design import design
from placer.errors import UnreachableTarget
from placer.eseries import nearest
from placer.analysis.network import circuit_poles, circuit_response, network_function
from placer.spec.reader import load_spec

TWO_PI = 2.0 * math.pi
CUTOFF_HZ = 2e3

BUTTERWORTH_4 = f"""
title = "fourth-order Butterworth"

[target]
response = "lowpass"
approximation = "butterworth"
order = 4
cutoff = "{CUTOFF_HZ} Hz"

[parts]
resistor_series = "E96"
capacitor_series = "E12"
resistor_range = ["1k", "1M"]
capacitor_range = ["100p", "10u"]
"""

RC_LADDER_2 = """
id = "rc-ladder-2"
title = "Passive RC ladder, second order"
response = "lowpass"
order = 2
[[elements]]
name = "R1"
kind = "resistor"
nodes = ["vin", "n1"]
symbol = "R1"
[[elements]]
name = "C1"
kind = "capacitor"
nodes = ["n1", "gnd"]
symbol = "C1"
[[elements]]
name = "R2"
kind = "resistor"
nodes = ["n1", "vout"]
symbol = "R2"
[[elements]]
name = "C2"
kind = "capacitor"
nodes = ["vout", "gnd"]
symbol = "C2"
"""


def write(path, text):
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def figures(poles):
    """ω0 = √(p1·p2) and Q = ω0/(−(p1 + p2)) of a pole pair."""
    p1, p2 = poles
    omega0 = math.sqrt(abs((p1 * p2).real))
    return omega0, omega0 / -float((p1 + p2).real)


def match(achieved, wanted):
    """Pair each wanted root with its nearest achieved root (order-independent).

    Returns the largest |a − w| / |w| over the pairs.
    """
    achieved = list(achieved)
    assert len(achieved) == len(wanted)
    worst = 0.0
    for w in wanted:
        distances = [abs(a - w) for a in achieved]
        i = int(np.argmin(distances))
        worst = max(worst, distances[i] / abs(w))
        achieved.pop(i)
    return worst


@pytest.fixture(scope="module")
def butterworth(tmp_path_factory):
    path = write(tmp_path_factory.mktemp("spec") / "butterworth4.toml", BUTTERWORTH_4)
    spec = load_spec(path)
    return spec, design(spec, seed=0)


def test_butterworth_sections_are_the_handbook_ones(butterworth):
    spec, result = butterworth
    assert len(result.sections) == 2
    qs = sorted(s.section.q for s in result.sections)
    # Butterworth n = 4 section Q values, rounded to 4 places (handbook table, from memory)
    assert qs == pytest.approx([0.5412, 1.3066], abs=5e-5)
    for s in result.sections:
        assert s.section.omega0 == pytest.approx(TWO_PI * CUTOFF_HZ, rel=1e-12)
    # and the target's poles are scipy's Butterworth poles at the cut-off
    _, poles, _ = signal.butter(4, TWO_PI * CUTOFF_HZ, analog=True, output="zpk")
    assert match(spec.target.poles, poles) < 1e-12


def test_sections_meet_their_figures_within_the_reported_errors(butterworth):
    _, result = butterworth
    for s in result.sections:
        errors = s.candidate.errors
        # the section's own circuit, values in, analysed numerically
        omega0, q = figures(circuit_poles(s.circuit))
        f0_pct = 100 * (omega0 / s.section.omega0 - 1)
        q_pct = 100 * (q / s.section.q - 1)
        assert f0_pct == pytest.approx(errors.f0_pct, rel=1e-6, abs=1e-9)
        assert q_pct == pytest.approx(errors.q_pct, rel=1e-6, abs=1e-9)
        assert max(abs(f0_pct), abs(q_pct)) <= errors.worst_root_error_pct + 1e-9
        # preferred values, chosen together, land within a few tenths of a percent
        assert errors.worst_root_error_pct < 0.3


def test_parts_are_on_their_series_with_unique_designators(butterworth):
    _, result = butterworth
    names = [p.name for p in result.parts]
    assert len(names) == len(set(names))
    for part in result.parts:
        assert part.series in ("E96", "E12")
        assert part.series == ("E96" if part.kind == "resistor" else "E12")
        assert nearest(part.value, part.series) == part.value
        low, high = {"resistor": (1e3, 1e6), "capacitor": (100e-12, 10e-6)}[part.kind]
        assert low <= part.value <= high


def test_cascade_circuit_on_its_own_has_the_achieved_poles(butterworth):
    spec, result = butterworth
    alone = circuit_poles(result.circuit)
    # the symbolic network function of each section's topology at its snapped values
    achieved = []
    for s in result.sections:
        nf = network_function(s.topology.circuit)
        achieved.extend(nf.poles(s.candidate.snapped.values))
    assert len(alone) == 4
    assert match(alone, achieved) < 1e-6
    assert match(result.poles, achieved) < 1e-6
    # within the stated error of the target (worst root error over the sections)
    stated = max(s.candidate.errors.worst_root_pct for s in result.sections) / 100
    assert match(alone, spec.target.poles) <= stated + 1e-9
    assert stated < 5e-3


def test_cascade_has_the_target_pass_band_gain(butterworth):
    _, result = butterworth
    dc = circuit_response(result.circuit, [TWO_PI * 1e-3])[0]
    assert abs(dc) == pytest.approx(abs(result.gain), rel=1e-6)
    # 0 dB asked; an inverting stage may flip the sign
    assert abs(dc) == pytest.approx(1.0, rel=1e-3)


def test_target_no_candidate_can_reach(tmp_path):
    write(tmp_path / "rc-ladder-2.toml", RC_LADDER_2)
    spec_text = BUTTERWORTH_4 + '\n[candidates]\ntopologies = ["rc-ladder-2.toml"]\n'
    spec = load_spec(write(tmp_path / "spec.toml", spec_text))
    with pytest.raises(UnreachableTarget) as caught:
        design(spec, seed=0)
    error = caught.value
    assert "cannot be reached" in error.reason
    assert "rc-ladder-2" in error.reason
    assert "only real poles" in error.reason
    assert "sallen-key-lowpass-unity" in error.alternatives


def test_target_out_of_reach_of_the_capacitor_range(tmp_path):
    # the Q = 1.31 section needs C1/C2 >= 6.83 in a unity-gain Sallen–Key
    spec_text = BUTTERWORTH_4.replace('capacitor_range = ["100p", "10u"]',
                                      'capacitor_range = ["1n", "4.7n"]')
    spec_text += '\n[candidates]\ntopologies = ["sallen-key-lowpass-unity"]\n'
    spec = load_spec(write(tmp_path / "spec.toml", spec_text))
    with pytest.raises(UnreachableTarget) as caught:
        design(spec, seed=0)
    assert "C1/C2 >= 4Q^2" in caught.value.reason
    assert "Q 1.307" in caught.value.reason
