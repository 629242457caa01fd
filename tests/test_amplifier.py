"""Tests of placer.place.amplifier, placer.analysis.dominant and placer.place.gbw: op-amp models,
dominant roots, correction, GBW.

Outside references are named beside each check.
"""

import math

import numpy as np
import pytest

from placer.place.amplifier import AmplifiedCandidate, amplifier_summary, place_section_with_amplifier
from placer.place.opamp import apply_amplifier, check_amplifier
from placer.circuit.elements import Circuit, Element, circuit_from_dict
from placer.design import design
from placer.analysis.dominant import DominantFunction, polished_roots
from placer.errors import SpecError
from placer.place.gbw import required_gbw
from placer.circuit.library import get_topology
from placer.analysis.network import circuit_poles, network_function
from placer.place.solve import goal_from_section
from placer.spec.reader import AmplifierSpec, amplifier_from_table, spec_from_dict
from placer.target.targets import make_section

TWO_PI = 2 * math.pi
F0 = 10e3


def lowpass(q, f0=F0):
    return make_section("lowpass", TWO_PI * f0, q)


def nearest_pair(poles, section):
    """f0 (Hz) and Q of the pole pair nearest the section's upper pole."""
    target = section.poles[0]
    upper = min((p for p in poles if p.imag >= 0), key=lambda p: abs(p - target))
    return abs(upper) / TWO_PI, abs(upper) / (-2 * upper.real)


# -- applying the model --------------------------------------------------------

def test_every_opamp_gets_the_model():
    circuit = get_topology("tow-thomas-lowpass").circuit
    built = apply_amplifier(circuit, AmplifierSpec(gbw=1e6, gain=1e5))
    opamps = [e for e in built.elements if e.kind == "opamp"]
    assert len(opamps) == circuit.opamp_count == 3
    assert all(e.gbw == 1e6 and e.gain == 1e5 for e in opamps)
    assert len(built.elements) == len(circuit.elements)


def test_output_resistance_becomes_an_internal_node_and_a_resistor():
    circuit = get_topology("mfb-lowpass").circuit
    built = apply_amplifier(circuit, AmplifierSpec(gbw=1e6, gain=1e5, output_resistance=75.0))
    opamp = built.element("U1")
    resistor = built.element("U1.ro")
    assert opamp.nodes == ("gnd", "n2", "U1.int")
    assert resistor.kind == "resistor" and resistor.value == 75.0
    assert resistor.nodes == ("U1.int", "vout")
    # the JSON form re-reads to the same circuit (the schema of docs/architecture.md)
    again = circuit_from_dict(built.to_dict())
    values = {"R1": 10e3, "R2": 10e3, "R3": 10e3, "C1": 10e-9, "C2": 1e-9}
    np.testing.assert_allclose(np.sort_complex(circuit_poles(again, values)),
                               np.sort_complex(circuit_poles(built, values)), rtol=1e-9)


def test_a_modelled_circuit_cannot_be_modelled_twice_over_its_names():
    circuit = apply_amplifier(get_topology("sallen-key-lowpass-unity").circuit,
                              AmplifierSpec(gbw=1e6, output_resistance=50.0))
    with pytest.raises(SpecError, match=r"'U1.int' and 'U1.ro'.*already used"):
        apply_amplifier(circuit, AmplifierSpec(gbw=5e6, output_resistance=50.0))


def test_a_passive_circuit_has_nothing_to_model():
    circuit = get_topology("rc-lowpass").circuit
    assert apply_amplifier(circuit, AmplifierSpec(gbw=1e6, output_resistance=50.0)) is circuit


def test_an_output_resistance_for_a_vcvs_only_circuit_is_refused():
    circuit = Circuit((
        Element("R1", "resistor", ("vin", "n1"), value=1e3),
        Element("C1", "capacitor", ("n1", "gnd"), value=1e-9),
        Element("E1", "vcvs", ("vout", "gnd", "n1", "gnd"), gain=2.0),
        Element("RL", "resistor", ("vout", "gnd"), value=1e4),
    ), name="buffered-rc")
    with pytest.raises(SpecError, match=r"applies to op-amps only.*'buffered-rc'.*'E1'"):
        apply_amplifier(circuit, AmplifierSpec(output_resistance=50.0))
    with pytest.raises(SpecError, match="output resistance 50 Ω"):
        apply_amplifier(circuit, AmplifierSpec(output_resistance=50.0))


@pytest.mark.parametrize("model, pattern", [
    (AmplifierSpec(gain=-10.0), r"gain = -10\.0 V/V must be a positive"),
    (AmplifierSpec(gbw=0.0), r"gbw = 0\.0 Hz must be a positive"),
    (AmplifierSpec(gbw=-1e6), r"gbw = -1000000\.0 Hz"),
    (AmplifierSpec(gbw=1e6, output_resistance=-5.0), r"output_resistance = -5\.0 ohm"),
])
def test_model_figures_no_opamp_has_are_refused(model, pattern):
    with pytest.raises(SpecError, match=pattern):
        apply_amplifier(get_topology("mfb-lowpass").circuit, model)


def test_a_negative_gain_in_a_spec_table_is_refused():
    with pytest.raises(SpecError, match=r"gain = -5 must be a positive open-loop gain"):
        amplifier_from_table({"gbw": "1 MHz", "gain": -5})


def test_a_gbw_at_or_below_f0_is_refused_naming_the_section():
    section = make_section("lowpass", TWO_PI * 1591.55, 2.0)
    with pytest.raises(SpecError) as error:
        check_amplifier(AmplifierSpec(gbw=1e3), section, index=2)
    assert str(error.value).startswith(
        "gbw 1 kHz is at or below section 2's f0 1.6 kHz; an op-amp needs GBW well above f0, "
        "typically ≥ 100·f0·Q")
    with pytest.raises(SpecError, match="the section's f0"):
        place_section_with_amplifier(section, get_topology("mfb-lowpass"), AmplifierSpec(gbw=1.5e3))


def test_design_refuses_a_gbw_below_a_later_sections_f0():
    spec = spec_from_dict({
        "target": {"response": "lowpass", "sections": [{"f0": "500 Hz", "q": 0.7},
                                                       {"f0": "1.6 kHz", "q": 2}]},
        "cascade": {"ordering": "as-given"},
        "amplifier": {"gbw": "1 kHz"},
    }, source="spec.toml")
    with pytest.raises(SpecError, match=r"gbw 1 kHz is at or below section 2's f0 1.6 kHz"):
        design(spec)


# -- roots -----------------------------------------------------------------------

def test_polished_roots_agree_with_numpy_roots():
    # reference: numpy.roots (companion-matrix eigenvalues, one polynomial at a time)
    rng = np.random.default_rng(3)
    for degree in (1, 2, 3, 4, 6):
        coefficients = rng.normal(size=(degree + 1, 200))
        ours = polished_roots(coefficients, omega_ref=1.7)
        for j in range(coefficients.shape[1]):
            expected = np.roots(coefficients[:, j])
            for root in expected:
                assert np.min(np.abs(ours[j] - root)) <= 1e-7 * max(1.0, abs(root))


def test_polished_roots_with_a_hint_find_spread_roots():
    # dominant pair near 1, parasitic roots 20..2000 times higher: numpy.roots as reference
    rng = np.random.default_rng(4)
    poles = []
    for _ in range(300):
        q, w = rng.uniform(0.5, 10), rng.uniform(0.5, 2)
        pair = -w / (2 * q) + 1j * w * math.sqrt(max(1 - 1 / (4 * q * q), 0))
        poles.append([pair, pair.conjugate(), -rng.uniform(20, 2000), -rng.uniform(20, 2000)])
    coefficients = np.array([np.real(np.poly(p)) for p in poles]).T
    ours = polished_roots(coefficients, near=[-0.1 + 1j, -0.1 - 1j])
    for j, expected in enumerate(poles):
        for root in expected:
            assert np.min(np.abs(ours[j] - root)) <= 1e-8 * abs(root)


class _GivenCoefficients:
    """A stand-in network function whose denominator is given (any batch)."""

    symbols = {}
    gain_kind = "dc"

    def __init__(self, denominator):
        self.denominator = denominator

    def coefficients(self, values):
        return np.ones((1, self.denominator.shape[1])), self.denominator


def test_dominant_pair_of_fifth_degree_where_the_quadratic_factor_search_fails():
    # A 3rd-order Bessel section with three modelled op-amps: degree 5, a batch
    # larger than the one-at-a-time path, no sample where Bairstow's search
    # converges. It used to end in "ValueError: shape mismatch ... (0,0) ...
    # (0,3)". Reference: numpy.roots, and the real pair nearest the target.
    column = np.array([1.0444319526954103e-01, 1.3130372684834013e+07, 4.1447837409319469e+14,
                       1.1320141316286418e+20, 1.4834887531750682e+25, 9.3244005493534635e+29])
    target = (-65810.65851056643 + 62785.63624025595j, -65810.65851056643 - 62785.63624025595j)
    full = _GivenCoefficients(np.repeat(column[:, None], 6, axis=1))
    dominant = DominantFunction(full=full, target_poles=target, omega_ref=90956.46701410589)
    _, denominator = dominant.coefficients({})
    roots = np.roots(column)
    pair = sorted((r for r in roots if abs(r.imag) > 1), key=lambda r: r.imag)
    expected = np.real(np.poly(pair))
    assert denominator.shape == (3, 6)
    for j in range(6):
        np.testing.assert_allclose(denominator[:, j], expected, rtol=1e-9)


# -- symbolic against numeric with the model in place ----------------------------

@pytest.mark.parametrize("topology_id, values", [
    ("sallen-key-lowpass-unity", {"R1": 12e3, "R2": 33e3, "C1": 22e-9, "C2": 1e-9}),
    ("mfb-lowpass", {"R1": 10e3, "R2": 22e3, "R3": 4.7e3, "C1": 47e-9, "C2": 1e-9}),
    ("sallen-key-highpass-unity", {"R1": 4.7e3, "R2": 47e3, "C1": 10e-9, "C2": 10e-9}),
])
@pytest.mark.parametrize("model", [
    AmplifierSpec(gbw=1e6),
    AmplifierSpec(gbw=2e5, gain=1e4),
    AmplifierSpec(gbw=1e6, gain=1e5, output_resistance=75.0),
])
def test_numeric_mna_poles_match_the_symbolic_function(topology_id, values, model):
    # two independent paths: the pencil (G, C) eigenvalues and the roots of det M
    modelled = apply_amplifier(get_topology(topology_id).circuit, model)
    numeric = circuit_poles(modelled, values)
    symbolic = network_function(modelled).poles(values)
    assert len(numeric) == len(symbolic) == 3
    for root in symbolic:
        assert np.min(np.abs(numeric - root)) <= 1e-6 * abs(root)


def test_dominant_and_parasitic_poles_are_all_the_circuits_poles():
    topology = get_topology("tow-thomas-lowpass")
    values = {"R1": 10e3, "R2": 22e3, "R3": 10e3, "R4": 10e3, "C1": 10e-9, "C2": 10e-9,
              **topology.values}
    modelled = apply_amplifier(topology.circuit, AmplifierSpec(gbw=1e6, gain=1e5))
    section = lowpass(2.0, f0=1.6e3)
    dominant = DominantFunction.for_goal(network_function(modelled), goal_from_section(section))
    ours = np.concatenate([dominant.poles(values), dominant.parasitic_poles(values)])
    numeric = circuit_poles(modelled, values)
    assert len(ours) == len(numeric)
    for root in numeric:
        assert np.min(np.abs(ours - root)) <= 1e-6 * abs(root)


# -- first-order Q enhancement of the unity-gain Sallen–Key ----------------------

@pytest.mark.parametrize("q", [2.0, 5.0])
def test_unity_gain_sallen_key_q_enhancement_is_the_first_order_one(q):
    """Finite GBW (A = ωt/s) in a unity-gain Sallen–Key low-pass.

    Nodal analysis of R1 (in–n1), R2 (n1–n2), C1 (n1–out), C2 (n2–gnd) and a
    follower with gain β = A/(1 + A) gives
    D(s) = (1 + (R1 + R2)C2·s + R1R2C1C2·s²)(1 + s/ωt) + R1C1·s²/ωt,
    whose dominant factor to first order in 1/ωt is
    1 + (R1 + R2)C2·s + (R1R2C1C2 + R1C1/ωt)·s², so
    ΔQ/Q ≈ +(ω0/2ωt)·√(R1C1/(R2C2)) and Δω0/ω0 ≈ −(ω0/2ωt)·√(R1C1/(R2C2)).
    For equal resistors and C1 = 4Q²C2 this is ΔQ/Q ≈ Q·ω0/ωt, the textbook
    "Q enhancement" (Schaumann & Van Valkenburg, Design of Analog Filters,
    2001, finite-GBW effects on the Sallen–Key stage; Sedra & Smith,
    Microelectronic Circuits, filter chapter — both from memory; the
    expression here is derived, the textbooks give the equal-R form).
    """
    section = lowpass(q)
    result = place_section_with_amplifier(section, get_topology("sallen-key-lowpass-unity"),
                                          AmplifierSpec(gbw=1000 * F0), coarse_budget=400)
    v = result.ideal_snapped.values
    ratio = math.sqrt(v["R1"] * v["C1"] / (v["R2"] * v["C2"]))
    omega0 = 1 / math.sqrt(v["R1"] * v["R2"] * v["C1"] * v["C2"])
    first_order = 100 * omega0 / (2 * TWO_PI * 1000 * F0) * ratio
    assert result.ideal_drift.q_shift_pct == pytest.approx(first_order, rel=0.05)
    assert result.ideal_drift.f0_shift_pct == pytest.approx(-first_order, rel=0.05)


# -- the corrected design ---------------------------------------------------------

@pytest.mark.parametrize("topology_id", ["sallen-key-lowpass-unity", "mfb-lowpass"])
def test_corrected_design_hits_f0_and_q_at_gbw_twenty_f0(topology_id):
    section = lowpass(5.0)
    model = AmplifierSpec(gbw=20 * F0)
    result = place_section_with_amplifier(section, get_topology(topology_id), model)
    assert isinstance(result, AmplifiedCandidate) and result.reachable
    # independent check: numeric MNA of the modelled circuit with the snapped values
    built = apply_amplifier(get_topology(topology_id).circuit, model).with_values(result.snapped.values)
    poles = circuit_poles(built)
    f0, q = nearest_pair(poles, section)
    assert f0 == pytest.approx(F0, rel=0.01)
    assert q == pytest.approx(5.0, rel=0.01)
    # the ideal design would have drifted by much more (at GBW = 20·f0, Q = 5)
    assert abs(result.ideal_drift.f0_pct) > 5
    assert abs(result.drift.f0_pct) <= 1 and abs(result.drift.q_pct) <= 1
    # a GBW 25 % below the model's pulls f0 down again (finite GBW lowers ω0)
    assert result.low_gbw_drift.f0_pct < 0 and result.low_gbw_drift.f0_shift_pct < 0
    # one parasitic pole per op-amp, above the band
    assert len(result.parasitic_poles_hz) == 1 and result.parasitic_poles_hz[0] > 2 * F0
    extra = [p for p in poles if abs(p - section.poles[0]) > 0.1 * abs(p)
             and abs(p - section.poles[1]) > 0.1 * abs(p)]
    assert abs(extra[0]) / TWO_PI == pytest.approx(result.parasitic_poles_hz[0], rel=1e-6)


def test_corrected_highpass_keeps_its_zeros_at_the_origin():
    section = make_section("highpass", TWO_PI * F0, 2.0)
    model = AmplifierSpec(gbw=50 * F0, gain=1e5, output_resistance=50.0)
    result = place_section_with_amplifier(section, get_topology("sallen-key-highpass-unity"),
                                          model, coarse_budget=400)
    assert result.reachable
    built = apply_amplifier(get_topology("sallen-key-highpass-unity").circuit, model)
    f0, q = nearest_pair(circuit_poles(built.with_values(result.snapped.values)), section)
    assert f0 == pytest.approx(F0, rel=0.01) and q == pytest.approx(2.0, rel=0.01)


def test_a_topology_without_opamps_is_placed_as_it_is():
    section = make_section("lowpass", TWO_PI * F0)
    result = place_section_with_amplifier(section, get_topology("rc-lowpass"), AmplifierSpec(gbw=1e6))
    assert result.reachable and result.parasitic_poles == ()
    assert "no op-amp" in result.note
    assert result.drift.f0_shift_pct == pytest.approx(0.0, abs=1e-9)


# -- design() with an amplifier ---------------------------------------------------

def test_design_with_an_amplifier_builds_modelled_sections():
    spec = spec_from_dict({
        "target": {"response": "lowpass", "sections": [{"f0": "10 kHz", "q": 2},
                                                       {"f0": "7 kHz", "q": 0.8}]},
        "cascade": {"ordering": "as-given"},
        "candidates": {"topologies": ["sallen-key-lowpass-unity", "mfb-lowpass"]},
        "amplifier": {"gbw": "400 kHz", "gain": "100 dB", "output_resistance": "50"},
    }, source="spec.toml")
    result = design(spec)
    section = result.sections[0]
    summary = amplifier_summary(section)
    assert summary["amplifier"]["gbw_hz"] == 400e3
    assert abs(summary["ideal_design"]["f0_error_pct"]) > 1
    assert abs(summary["corrected_design"]["f0_error_pct"]) <= 1
    assert abs(summary["corrected_design"]["q_error_pct"]) <= 1
    assert summary["corrected_design_at_low_gbw"]["gbw_hz"] == pytest.approx(300e3)
    # the section's JSON circuit, re-read and analysed on its own, has the achieved poles
    again = circuit_from_dict(section.circuit.to_dict())
    opamps = [e for e in again.elements if e.kind == "opamp"]
    assert all(e.gbw == 400e3 for e in opamps)
    assert any(e.name.endswith(".ro") for e in again.elements)
    assert not any(p.name.endswith(".ro") for p in section.parts)  # not on the BOM
    poles = circuit_poles(again)
    f0, q = nearest_pair(poles, section.section)
    assert f0 == pytest.approx(10e3, rel=0.01) and q == pytest.approx(2.0, rel=0.01)
    parasitic = sorted(abs(p) / TWO_PI for p in poles if abs(p) > 3 * TWO_PI * 10e3)
    np.testing.assert_allclose(parasitic, summary["parasitic_poles_hz"], rtol=1e-6)
    # the cascade is the modelled sections joined, with no buffer (each output is driven);
    # the next section loads the first one's output resistance a little, so the
    # dominant poles agree closely and the parasitic ones only roughly
    cascade = circuit_from_dict(result.circuit.to_dict())
    assert cascade.opamp_count == sum(s.circuit.opamp_count for s in result.sections)
    every = np.concatenate([circuit_poles(s.circuit) for s in result.sections])
    cascade_poles = circuit_poles(cascade)
    assert len(cascade_poles) == len(every)
    for root in every:
        rtol = 2e-3 if abs(root) < 3 * TWO_PI * 10e3 else 0.05
        assert np.min(np.abs(cascade_poles - root)) <= rtol * abs(root)


# -- GBW requirement ----------------------------------------------------------------

def test_required_gbw_is_met_and_lower_than_uncorrected():
    section = lowpass(3.0)
    topology = get_topology("mfb-lowpass")
    need = required_gbw(section, topology, error_pct=1.0, rtol=0.1)
    assert 2 * F0 < need.gbw_hz < need.uncorrected_gbw_hz < math.inf
    assert need.parasitic_poles_hz and need.parasitic_poles_hz[0] > F0
    # at the returned GBW a corrected design meets 1 % on an independent (numeric) check
    model = AmplifierSpec(gbw=need.gbw_hz)
    result = place_section_with_amplifier(section, topology, model, coarse_budget=400)
    built = apply_amplifier(topology.circuit, model).with_values(result.snapped.values)
    f0, q = nearest_pair(circuit_poles(built), section)
    assert abs(f0 / F0 - 1) <= 0.01 and abs(q / 3.0 - 1) <= 0.01


def test_required_gbw_rejects_a_bad_bound():
    with pytest.raises(SpecError, match=r"error_pct = -1"):
        required_gbw(lowpass(1.0), get_topology("mfb-lowpass"), error_pct=-1)
    with pytest.raises(SpecError, match=r"gain = -3"):
        required_gbw(lowpass(1.0), get_topology("mfb-lowpass"), amplifier_gain=-3)


def test_corrected_design_bears_the_gbw_spread():
    # Unity-gain Sallen-Key, Q = 1 at 10 kHz, single-pole op-amp of GBW = 20·f0: among the
    # exact corrected designs the placement prefers one whose f0 and Q stay close when the
    # GBW is 25 % off (the spread an op-amp's datasheet allows, common practice, no source).
    # Checked on the built circuit's own numeric MNA poles at 0.75·GBW and 1.25·GBW.
    f0, gbw = 10e3, 200e3
    section = make_section("lowpass", 2 * math.pi * f0, 1.0, gain=1.0)
    topology = get_topology("sallen-key-lowpass-unity")
    candidate = place_section_with_amplifier(section, topology, AmplifierSpec(gbw=gbw, gain=1e5))
    assert candidate.error_pct < 0.25                       # nominal: on target
    w0 = 2 * math.pi * f0
    for edge in (0.75 * gbw, 1.25 * gbw):
        built = apply_amplifier(topology.circuit, AmplifierSpec(gbw=edge, gain=1e5))
        poles = circuit_poles(built.with_values(candidate.snapped.values))
        pair = sorted(poles, key=lambda p: abs(abs(p) - w0))[:2]
        omega0 = math.sqrt(abs(pair[0] * pair[1]))
        q = omega0 / -float((pair[0] + pair[1]).real)
        # an arbitrary exact design moves up to ~10 % here; the preferred one under 1.5 %
        assert abs(omega0 / w0 - 1) < 0.015 and abs(q - 1) < 0.015
