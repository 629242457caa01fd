"""Tests of placer.place.gbw: the GBW a section needs, and the searches behind it.

Outside references are named beside each check. Nothing here times anything
(benchmarks/bench_gbw.py compares the speed of the old and the new search).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from placer.place.amplifier import place_section_with_amplifier
from placer.place.opamp import GBW_SPREAD, AmplifierSpec, apply_amplifier, function_at_gbw
from placer.analysis.dominant import DominantFunction
from placer.place.gbw import _bisect, _guided_bisect, required_gbw
from placer.circuit.library import get_topology
from placer.analysis.network import circuit_poles, network_function
from placer.place.placement import place_ideal
from placer.place.solve import goal_from_section, root_errors
from placer.target.targets import make_section

TWO_PI = 2 * math.pi
F0 = 10e3
Q = 2.0
RTOL = 0.05


def section():
    return make_section("lowpass", TWO_PI * F0, Q)


def pair_figures(poles):
    """f0 (Hz) and Q of the pole pair nearest the section's upper pole."""
    target = section().poles[0]
    upper = min((p for p in poles if p.imag >= 0), key=lambda p: abs(p - target))
    return abs(upper) / TWO_PI, abs(upper) / (-2 * upper.real)


def assert_same_roots(found, expected, *, rtol):
    """Each expected root has its own found root within rtol (order-independent).

    `found` may hold more: the numeric pencil cancels pole-zero pairs the
    symbolic function keeps (an inverter's op-amp pole, for one).
    """
    found = list(np.asarray(found, dtype=complex))
    assert len(found) >= len(expected)
    for root in expected:
        distances = [abs(f - root) for f in found]
        i = int(np.argmin(distances))
        assert distances[i] <= rtol * abs(root), (root, found)
        found.pop(i)


def built_error_pct(topology, values, gbw):
    """Worst of the f0 and Q errors, percent, from the numeric MNA poles at `gbw`."""
    built = apply_amplifier(topology.circuit, AmplifierSpec(gbw=gbw)).with_values(values)
    f0, q = pair_figures(circuit_poles(built))
    return 100 * max(abs(f0 / F0 - 1), abs(q / Q - 1))


def corrected_meets(topology, gbw, bound=1.0):
    """Whether the design corrected at `gbw` meets `bound` there and at gbw·(1 ± spread)."""
    design = place_section_with_amplifier(section(), topology, AmplifierSpec(gbw=gbw),
                                          coarse_budget=400)
    if not design.reachable or design.error_pct > bound:
        return False
    return all(built_error_pct(topology, design.snapped.values, edge) <= bound
               for edge in (gbw * (1 - GBW_SPREAD), gbw * (1 + GBW_SPREAD)))


# -- one derivation for every GBW ---------------------------------------------------

@pytest.mark.parametrize("topology_id, gain", [
    ("sallen-key-lowpass-unity", None),
    ("tow-thomas-lowpass", None),
    ("mfb-lowpass", 1e5),
])
def test_scaled_function_is_the_derivation_at_that_gbw(topology_id, gain):
    # H(s; R, C, ωt) = H(s/ωt; R, C·ωt, 1): the scaled function must give the
    # roots a fresh derivation at the GBW gives, and the numeric MNA pencil too
    topology = get_topology(topology_id)
    ideal = place_ideal(section(), topology)
    family = function_at_gbw(topology.circuit, AmplifierSpec(gain=gain))
    for gbw in (3e5, 4.7e6, 2e8):
        modelled = apply_amplifier(topology.circuit, AmplifierSpec(gbw=gbw, gain=gain))
        direct = network_function(modelled)
        scaled = family(gbw)
        for mine, theirs in zip(scaled.coefficients(ideal.snapped.values),
                                direct.coefficients(ideal.snapped.values)):
            np.testing.assert_allclose(mine / mine[0], theirs / theirs[0], rtol=1e-9)
        numeric = circuit_poles(modelled.with_values(ideal.snapped.values))
        for poles in (scaled.poles(ideal.snapped.values), direct.poles(ideal.snapped.values)):
            assert_same_roots(poles, numeric, rtol=1e-6)
        goal = goal_from_section(section())
        mine = root_errors(DominantFunction.for_goal(scaled, goal), ideal.snapped.values, goal)
        theirs = root_errors(DominantFunction.for_goal(direct, goal), ideal.snapped.values, goal)
        assert mine.worst_error_with_gain_pct == pytest.approx(theirs.worst_error_with_gain_pct, rel=1e-9, abs=1e-12)


def test_a_fixed_capacitor_falls_back_to_one_derivation_per_gbw():
    # a capacitor with a value (no symbol) cannot be scaled outside the derivation
    topology = get_topology("sallen-key-lowpass-unity")
    values = {"C1": 22e-9}
    circuit = topology.circuit.with_values(values)
    assert any(e.kind == "capacitor" and not e.is_symbolic for e in circuit.elements)
    family = function_at_gbw(circuit, AmplifierSpec())
    direct = network_function(apply_amplifier(circuit, AmplifierSpec(gbw=1e6)))
    assert family(1e6) is direct


# -- the guided bisection ---------------------------------------------------------

@settings(max_examples=200, deadline=None)
@given(threshold=st.floats(1.0, 1e5), hint=st.floats(1.0, 1e5), rtol=st.sampled_from([0.005, 0.02, 0.1]),
       slope=st.floats(0.3, 3.0))
def test_guided_bisection_returns_what_plain_bisection_returns(threshold, hint, rtol, slope):
    # for a monotone test the guided search must reproduce _bisect exactly, whatever the hint
    low, high = 2.0, 2e4

    def worst(x):
        return (threshold / x) ** slope

    plain = _bisect(lambda x: worst(x) <= 1.0, low, high, rtol)
    guided = _guided_bisect(worst, 1.0, low, high, rtol, hint)
    assert guided == plain


def test_guided_bisection_tries_no_more_than_plain_with_a_good_hint():
    calls = {"plain": 0, "guided": 0}

    def worst_for(counter):
        def worst(x):
            calls[counter] += 1
            return 3.7e3 / x
        return worst

    plain_worst = worst_for("plain")
    _bisect(lambda x: plain_worst(x) <= 1.0, 2.0, 2e4, 0.02)
    _guided_bisect(worst_for("guided"), 1.0, 2.0, 2e4, 0.02, 3.9e3)
    assert calls["guided"] < calls["plain"]


def test_guided_bisection_answer_is_tried_even_when_the_test_is_not_monotone():
    # met above 100 and in a pocket (30, 32), missed elsewhere: the answer must be
    # a tried point that meets, with a tried miss at most 1 + rtol below it
    tried = {}

    def worst(x):
        tried[x] = 0.5 if (x >= 100 or 30 < x < 32) else 2.0
        return tried[x]

    rtol = 0.02
    answer = _guided_bisect(worst, 1.0, 2.0, 2e4, rtol, hint=31.0)
    assert tried[answer] <= 1.0
    misses = [x for x, w in tried.items() if w > 1.0 and x < answer]
    assert misses and answer / max(misses) <= 1 + rtol


def test_guided_bisection_limits():
    assert _guided_bisect(lambda x: 2.0, 1.0, 2.0, 2e4, 0.02, 10.0) == math.inf
    assert _guided_bisect(lambda x: 0.5, 1.0, 2.0, 2e4, 0.02, 10.0) == 2.0


# -- the requirement ----------------------------------------------------------------

@pytest.fixture(scope="module")
def sallen_key_need():
    return required_gbw(section(), get_topology("sallen-key-lowpass-unity"), rtol=RTOL)


def test_corrected_requirement_is_met_and_minimal(sallen_key_need):
    # checked with the public placement and the numeric MNA poles, not the search's own path
    topology = get_topology("sallen-key-lowpass-unity")
    gbw = sallen_key_need.gbw_hz
    assert 2 * F0 < gbw < math.inf
    assert corrected_meets(topology, gbw)
    assert not corrected_meets(topology, gbw / (1 + RTOL) ** 2)


def test_uncorrected_requirement_is_met_and_minimal(sallen_key_need):
    topology = get_topology("sallen-key-lowpass-unity")
    ideal = place_ideal(section(), topology)
    gbw = sallen_key_need.uncorrected_gbw_hz
    assert built_error_pct(topology, ideal.snapped.values, gbw) <= 1.0
    assert built_error_pct(topology, ideal.snapped.values, gbw / (1 + RTOL) ** 2) > 1.0


def test_uncorrected_needs_at_least_the_corrected(sallen_key_need):
    assert sallen_key_need.gbw_hz <= sallen_key_need.uncorrected_gbw_hz
    assert sallen_key_need.parasitic_poles_hz and sallen_key_need.parasitic_poles_hz[0] > F0


def test_unity_gain_sallen_key_uncorrected_need_is_beyond_the_rule_of_thumb(sallen_key_need):
    # GBW >= 100·f0·Q keeps a unity-gain Sallen-Key within a few percent of its
    # f0 and Q (common practice, no source); a 1 % bound needs more, but not a
    # thousand times f0·Q
    rule = 100 * F0 * Q
    assert rule < sallen_key_need.uncorrected_gbw_hz < 10 * rule
    topology = get_topology("sallen-key-lowpass-unity")
    ideal = place_ideal(section(), topology)
    assert 1.0 < built_error_pct(topology, ideal.snapped.values, rule) < 10.0


def test_uncorrected_need_goes_as_one_over_the_error():
    # for GBW far above f0 the op-amp shifts f0 and Q by amounts proportional to
    # f0/GBW (Schaumann and Van Valkenburg, Design of Analog Filters, 2001, the
    # chapter on finite-GBW effects; from memory): a bound twice as loose, above
    # the ideal design's own error, needs about half the GBW
    topology = get_topology("sallen-key-lowpass-unity")
    ideal = place_ideal(section(), topology)
    floor = ideal.errors.worst_error_with_gain_pct
    tight = required_gbw(section(), topology, error_pct=1.0, rtol=0.01, gbw_spread=0.0)
    loose = required_gbw(section(), topology, error_pct=2.0, rtol=0.01, gbw_spread=0.0)
    ratio = tight.uncorrected_gbw_hz / loose.uncorrected_gbw_hz
    assert ratio == pytest.approx((2.0 - floor) / (1.0 - floor), rel=0.1)


def test_without_spread_the_corrected_design_needs_little():
    # with the exact GBW known, re-solving absorbs the op-amp down to a few f0
    need = required_gbw(section(), get_topology("sallen-key-lowpass-unity"), rtol=0.1,
                        gbw_spread=0.0)
    assert need.gbw_hz < 20 * F0
    assert "±" not in need.note
