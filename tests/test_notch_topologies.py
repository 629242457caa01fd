"""The active notch topologies against their published formulas.

Kerwin, Huelsman and Newcomb, "State-variable synthesis for insensitive
integrated circuit transfer functions", IEEE J. Solid-State Circuits SC-2,
1967: the biquad's low- and high-pass outputs summed give jω-axis zeros
(from memory).

N. Fliege, "A new class of second-order RC-active filters with two
operational amplifiers", Nachrichtentechnische Zeitschrift 26, 1973: with
matched pairs the notch is H(s) = (s² + ω0²)/(s² + s·ω0/Q + ω0²), unity
gain on both sides, ω0 = 1/(RC) and Q = RQ/(2R) (from memory).

The expected values below are the closed forms, evaluated with numpy, not
with the code under test.
"""

import math

import numpy as np
import pytest

from placer.place.opamp import AmplifierSpec, apply_amplifier
from placer.design import place_section
from placer.circuit.library import get_topology
from placer.analysis.network import circuit_gain, circuit_poles, circuit_zeros, network_function
from placer.place.solve import goal_from_section, make_problem, solve
from placer.target.targets import make_section

RNG = np.random.default_rng(7)


def _values(names):
    return {n: float(10 ** RNG.uniform(3.5, 5.0)) if n.startswith("R") else float(10 ** RNG.uniform(-8.5, -7.0))
            for n in names}


@pytest.mark.parametrize("trial", range(4))
def test_khn_notch_zero_pole_and_gain_formulas(trial):
    topology = get_topology("khn-notch")
    nf = network_function(topology.circuit)
    v = _values(topology.symbols)
    R1, R2, R3, R4, R5, R6, R7, R8, R9 = (v[f"R{i}"] for i in range(1, 10))
    C1, C2 = v["C1"], v["C2"]
    # KHN: w0 = sqrt(R4/(R3 R5 R6 C1 C2)), Q = w0 R5 C1 R3 (R1+R2)/(R1 (R3+R4)) (from memory)
    w0 = math.sqrt(R4 / (R3 * R5 * R6 * C1 * C2))
    q = w0 * R5 * C1 * R3 * (R1 + R2) / (R1 * (R3 + R4))
    wz = math.sqrt(R7 / (R9 * R5 * R6 * C1 * C2))
    dc = -(R8 / R9) * R2 * (R3 + R4) / (R4 * (R1 + R2))
    figures = nf.second_order_figures(v)
    assert float(figures.omega0) == pytest.approx(w0, rel=1e-9)
    assert float(figures.q) == pytest.approx(q, rel=1e-9)
    assert float(figures.gain) == pytest.approx(dc, rel=1e-9)
    zeros = nf.zeros(v)
    np.testing.assert_allclose(sorted(np.abs(zeros)), [wz, wz], rtol=1e-9)
    np.testing.assert_allclose(np.real(zeros), 0.0, atol=1e-9 * wz)   # on the jw axis
    # the independent numeric path (matrix pencil) agrees
    circuit = topology.circuit.with_values(v)
    np.testing.assert_allclose(sorted(np.abs(circuit_zeros(circuit))), [wz, wz], rtol=1e-7)
    np.testing.assert_allclose(sorted(np.abs(circuit_poles(circuit))), [w0, w0], rtol=1e-7)


def test_khn_notch_reaches_a_high_q_hum_notch():
    # A 50 Hz notch with Q = 2 is beyond any passive RC notch (Q <= 0.5,
    # common practice); the active notch reaches it exactly.
    omega = 2 * math.pi * 50
    section = make_section("notch", omega, 2.0, gain=1.0, zero_omega=omega)
    problem = make_problem(get_topology("khn-notch"), goal_from_section(section))
    solution = solve(problem, seed=0)
    figures = problem.nf.second_order_figures(solution.values)
    assert float(figures.omega0) == pytest.approx(omega, rel=1e-6)
    assert float(figures.q) == pytest.approx(2.0, rel=1e-6)
    assert np.abs(problem.nf.zeros(solution.values)) == pytest.approx([omega, omega], rel=1e-6)


def _fliege_values(trial):
    rng = np.random.default_rng(100 + trial)
    r0, r3, r4, rq = (float(10 ** rng.uniform(3.5, 5.0)) for _ in range(4))
    c1, c2 = (float(10 ** rng.uniform(-8.5, -7.0)) for _ in range(2))
    return {"R1": r0, "R2": r0, "R3": r3, "R4": r4, "R5": rq, "R6": rq, "C1": c1, "C2": c2}


@pytest.mark.parametrize("trial", range(4))
def test_fliege_notch_matches_its_formula(trial):
    nf = network_function(get_topology("fliege-notch").circuit)
    v = _fliege_values(trial)
    # Fliege (1973): w0 = 1/sqrt(R3 R4 C1 C2), Q = w0 C2 (R5 || R6) (from memory)
    w0 = 1 / math.sqrt(v["R3"] * v["R4"] * v["C1"] * v["C2"])
    q = w0 * v["C2"] * v["R5"] * v["R6"] / (v["R5"] + v["R6"])
    figures = nf.second_order_figures(v)
    assert float(figures.omega0) == pytest.approx(w0, rel=1e-9)
    assert float(figures.q) == pytest.approx(q, rel=1e-9)
    assert float(figures.gain) == pytest.approx(1.0, rel=1e-9)
    # H(s) = (s^2 + w0^2)/(s^2 + s w0/Q + w0^2): numerator and denominator differ only
    # in the s term, so the gain is 1 at DC and at high frequency, 0 at w0
    numerator, denominator = nf.coefficients(v)
    np.testing.assert_allclose(np.asarray(numerator, float) / denominator[0],
                               [1.0, 0.0, w0 ** 2], rtol=1e-9, atol=1e-9 * w0)
    np.testing.assert_allclose(np.asarray(denominator, float) / denominator[0],
                               [1.0, w0 / q, w0 ** 2], rtol=1e-9)
    circuit = get_topology("fliege-notch").circuit.with_values(v)
    np.testing.assert_allclose(sorted(circuit_zeros(circuit).imag), [-w0, w0], rtol=1e-7)
    assert circuit_gain(circuit) == pytest.approx(1.0, rel=1e-9)


def test_fliege_notch_depth_follows_the_pair_match():
    # With R1 = R2 and R5 = R6 the null is exact; a mismatch of the input pair leaves
    # |H(jw0)| = |R1 R5 - R2 R6| / (R1 (R5 + R6)), the s-term the two coefficients no
    # longer share (derived here from the formula above; that the depth rests on the
    # matching is common practice, no source).
    nf = network_function(get_topology("fliege-notch").circuit)
    v = _fliege_values(0)
    w0 = 1 / math.sqrt(v["R3"] * v["R4"] * v["C1"] * v["C2"])
    v["R2"] = 1.01 * v["R1"]
    w0_mismatched = w0 * math.sqrt(1.01)
    numerator, denominator = nf.coefficients(v)
    s = 1j * w0_mismatched
    depth = abs(np.polyval(numerator, s) / np.polyval(denominator, s))
    expected = abs(v["R1"] * v["R5"] - v["R2"] * v["R6"]) / (v["R1"] * (v["R5"] + v["R6"]))
    assert depth == pytest.approx(expected, rel=1e-6)
    assert 20 * math.log10(depth) == pytest.approx(-46.0, abs=0.1)


def test_fliege_notch_is_stable_with_real_op_amps():
    # A two-op-amp impedance-converter notch works with single-pole op-amps that meet
    # the usual rule GBW >= 100 f0 Q: the pole pair stays near the ideal one (Q enhanced
    # by a few per cent, like every active biquad's) and the other poles lie far out in
    # the left half-plane (common practice, no source).
    topology = get_topology("fliege-notch")
    f0, q, r = 1e3, 5.0, 10e3
    c = 1 / (2 * math.pi * f0 * r)
    v = {"R1": 10e3, "R2": 10e3, "R3": r, "R4": r, "R5": 2 * q * r, "R6": 2 * q * r,
         "C1": c, "C2": c}
    w0 = 2 * math.pi * f0
    for gbw, q_rel in ((100 * f0 * q, 0.08), (1000 * f0 * q, 0.01)):
        real = apply_amplifier(topology.circuit.with_values(v), AmplifierSpec(gbw=gbw, gain=1e5))
        poles = circuit_poles(real)
        assert np.all(poles.real < 0)
        pair = min(poles, key=lambda p: abs(abs(p) - w0))
        assert abs(pair) == pytest.approx(w0, rel=1e-3)
        assert abs(pair) / (-2 * pair.real) == pytest.approx(q, rel=q_rel)
        assert np.sort(np.abs(poles))[2] > 50 * w0


def test_fliege_notch_places_a_hum_notch_on_standard_parts():
    # 50 Hz, Q = 2, gain 1 (the hum-notch example): the matched pairs stay matched after
    # snapping, so the zeros stay on the jw axis at the snapped w0.
    omega = 2 * math.pi * 50
    section = make_section("notch", omega, 2.0, gain=1.0, zero_omega=omega)
    candidate = place_section(section, get_topology("fliege-notch"))
    assert candidate.reachable, candidate.reason
    values = candidate.snapped.values
    assert values["R2"] == values["R1"] and values["R6"] == values["R5"]
    assert candidate.error_pct < 1.0
    zeros = network_function(get_topology("fliege-notch").circuit).zeros(values)
    np.testing.assert_allclose(np.real(zeros), 0.0, atol=1e-9 * omega)


def test_akerberg_mossberg_enhances_q_less_than_tow_thomas():
    # Akerberg and Mossberg (IEEE Trans. Circuits and Systems CAS-21, 1974) put the
    # inverter inside the second integrator's loop to cancel the op-amps' phase lag; with
    # the same parts and real op-amps its Q moves far less than the Tow-Thomas biquad's
    # (the paper's claim, from memory; common practice).
    f0, q = 10e3, 10.0
    w0 = 2 * math.pi * f0
    r = 10e3
    c = 1 / (w0 * r)
    v = {"R1": r, "R2": q * r, "C1": c, "R3": r, "C2": c, "R4": r, "R5": r, "R6": r}

    def q_shift(topology_id, gbw):
        circuit = get_topology(topology_id).circuit.with_values(v)
        poles = circuit_poles(apply_amplifier(circuit, AmplifierSpec(gbw=gbw, gain=1e5)))
        pair = min(poles, key=lambda p: abs(abs(p) - w0))
        return abs(pair) / (-2 * pair.real) / q - 1

    for gbw in (100 * f0, 1000 * f0):
        tow_thomas, akerberg = q_shift("tow-thomas-lowpass", gbw), q_shift("akerberg-mossberg-lowpass", gbw)
        assert tow_thomas > 0.03                      # Q enhancement, as the trade knows it
        assert abs(akerberg) < 0.25 * tow_thomas
