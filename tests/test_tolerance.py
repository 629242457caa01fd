"""Tests of placer.analysis.sensitivity and placer.evidence.tolerance: sensitivities and Monte Carlo."""

import math
import warnings

import numpy as np
import pytest

from placer.circuit.elements import Circuit, Element
from placer.errors import NumericalWarning, SpecError
from placer.analysis.network import circuit_poles, network_function
from placer.analysis.sensitivity import sensitivities
from placer.evidence.tolerance import (
    MAX_SAMPLES,
    cascade_monte_carlo,
    monte_carlo,
)


def _sallen_key(prefix="", inp="vin", out="vout"):
    """Unity-gain Sallen–Key low-pass: R1 in→n1, R2 n1→n2, C1 n1→out, C2 n2→gnd."""
    n1, n2 = f"{prefix}n1", f"{prefix}n2"
    names = [f"R1{prefix}", f"R2{prefix}", f"C1{prefix}", f"C2{prefix}"]
    return (
        Element(names[0], "resistor", (inp, n1), symbol=names[0]),
        Element(names[1], "resistor", (n1, n2), symbol=names[1]),
        Element(names[2], "capacitor", (n1, out), symbol=names[2]),
        Element(names[3], "capacitor", (n2, "gnd"), symbol=names[3]),
        Element(f"U1{prefix}", "opamp", (n2, out, out)),
    )


SK = network_function(Circuit(_sallen_key()))
SK_VALUES = {"R1": 10e3, "R2": 22e3, "C1": 10e-9, "C2": 4.7e-9}

# Multiple-feedback low-pass: R1 in→n1, R2 n1→out, R3 n1→n2, C1 n1→gnd, C2 n2→out.
MFB = network_function(Circuit((
    Element("R1", "resistor", ("vin", "n1"), symbol="R1"),
    Element("R2", "resistor", ("n1", "vout"), symbol="R2"),
    Element("R3", "resistor", ("n1", "n2"), symbol="R3"),
    Element("C1", "capacitor", ("n1", "gnd"), symbol="C1"),
    Element("C2", "capacitor", ("n2", "vout"), symbol="C2"),
    Element("U1", "opamp", ("gnd", "n2", "vout")),
)))
MFB_VALUES = {"R1": 10e3, "R2": 10e3, "R3": 4.7e3, "C1": 47e-9, "C2": 2.2e-9}

RC = network_function(Circuit((
    Element("R1", "resistor", ("vin", "vout"), symbol="R1"),
    Element("C1", "capacitor", ("vout", "gnd"), symbol="C1"),
)))
RC_VALUES = {"R1": 1e3, "C1": 1e-6}


def _butterworth4_values(f0=1e3, c2=10e-9):
    """Equal-R unity-gain Sallen–Key values for the two sections of a 4th-order Butterworth."""
    omega0 = 2 * math.pi * f0
    out = {}
    for k, suffix in ((1, "a"), (3, "b")):
        q = 1 / (2 * math.cos(k * math.pi / 8))
        r = 1 / (omega0 * c2 * 2 * q)      # C1/C2 = 4Q², R = 1/(ω0 √(C1 C2))
        out.update({f"R1{suffix}": r, f"R2{suffix}": r, f"C1{suffix}": 4 * q * q * c2,
                    f"C2{suffix}": c2})
    return out


# Two Sallen–Key sections in one circuit: a fourth-order network (numeric path).
FOURTH = network_function(Circuit(_sallen_key("a", "vin", "mid") + _sallen_key("b", "mid", "vout")))
FOURTH_VALUES = _butterworth4_values()

# Passive RC ladder of order 3: only real poles.
LADDER = network_function(Circuit(tuple(
    element
    for i, (a, b) in enumerate((("vin", "n1"), ("n1", "n2"), ("n2", "vout")), start=1)
    for element in (Element(f"R{i}", "resistor", (a, b), symbol=f"R{i}"),
                    Element(f"C{i}", "capacitor", (b, "gnd"), symbol=f"C{i}"))
)))
LADDER_VALUES = {"R1": 1e3, "R2": 10e3, "R3": 100e3, "C1": 100e-9, "C2": 10e-9, "C3": 1e-9}


# -- sensitivities ----------------------------------------------------------

def test_sallen_key_omega0_sensitivities_are_minus_one_half():
    # ω0 = 1/√(R1 R2 C1 C2) for the unity-gain Sallen–Key (derived by hand from
    # the circuit; Schaumann & Van Valkenburg, Design of Analog Filters — from memory)
    s = sensitivities(SK, SK_VALUES)
    assert s.method == "symbolic"
    for name in SK_VALUES:
        assert s.omega0[name] == pytest.approx(-0.5, abs=1e-12)


def test_sallen_key_q_sensitivities_closed_form():
    # Q = √(R1 R2 C1 / C2) / (R1 + R2): S_C1^Q = 1/2, S_C2^Q = −1/2,
    # S_R1^Q = 1/2 − R1/(R1 + R2) (derived by hand)
    s = sensitivities(SK, SK_VALUES)
    r1, r2 = SK_VALUES["R1"], SK_VALUES["R2"]
    assert s.q["C1"] == pytest.approx(0.5, abs=1e-12)
    assert s.q["C2"] == pytest.approx(-0.5, abs=1e-12)
    assert s.q["R1"] == pytest.approx(0.5 - r1 / (r1 + r2), abs=1e-12)
    assert s.q["R2"] == pytest.approx(0.5 - r2 / (r1 + r2), abs=1e-12)
    assert all(v == 0.0 for v in s.gain.values())


@pytest.mark.parametrize("nf, values", [(SK, SK_VALUES), (MFB, MFB_VALUES),
                                        (FOURTH, FOURTH_VALUES), (LADDER, LADDER_VALUES)],
                         ids=["sallen-key", "mfb", "fourth-order", "rc-ladder"])
def test_sensitivity_sums_of_an_rc_network(nf, values):
    # Σ_R S_R^ω0 = −1, Σ_C S_C^ω0 = −1, Σ_R S_R^Q = Σ_C S_C^Q = 0 for any
    # active-RC network (impedance and frequency scaling): Schaumann & Van
    # Valkenburg, Design of Analog Filters, sensitivity chapter (from memory)
    s = sensitivities(nf, values)
    tolerance = 1e-9 if s.method == "symbolic" else 1e-7    # central differences
    resistors = [n for n in values if n.startswith("R")]
    capacitors = [n for n in values if n.startswith("C")]
    assert sum(s.omega0[n] for n in resistors) == pytest.approx(-1.0, abs=tolerance)
    assert sum(s.omega0[n] for n in capacitors) == pytest.approx(-1.0, abs=tolerance)
    assert sum(s.q[n] for n in resistors) == pytest.approx(0.0, abs=tolerance)
    assert sum(s.q[n] for n in capacitors) == pytest.approx(0.0, abs=tolerance)


def test_mfb_gain_sensitivities():
    # H(0) = −R2/R1 for the MFB low-pass (derived by hand): S_R2 = 1, S_R1 = −1
    s = sensitivities(MFB, MFB_VALUES)
    assert s.gain["R2"] == pytest.approx(1.0, abs=1e-12)
    assert s.gain["R1"] == pytest.approx(-1.0, abs=1e-12)
    assert s.gain["C1"] == 0.0


def test_fourth_order_dominant_pair_is_the_high_q_section():
    # The sections are buffered, so the dominant (Q = 1.3066) pair depends on
    # section "b" only, with the Sallen–Key sensitivities −1/2 (derived by hand)
    s = sensitivities(FOURTH, FOURTH_VALUES)
    assert s.method == "numeric" and s.figure == "dominant pole pair"
    for name in ("R1b", "R2b", "C1b", "C2b"):
        assert s.omega0[name] == pytest.approx(-0.5, abs=1e-7)
    for name in ("R1a", "R2a", "C1a", "C2a"):
        assert s.omega0[name] == pytest.approx(0.0, abs=1e-7)
    assert s.q["C1b"] == pytest.approx(0.5, abs=1e-7)


def test_first_order_has_no_q():
    s = sensitivities(RC, RC_VALUES)
    assert s.q is None
    assert s.omega0 == {"R1": -1.0, "C1": -1.0}


# -- Monte Carlo ------------------------------------------------------------

@pytest.mark.parametrize("nf, values", [(SK, SK_VALUES), (RC, RC_VALUES),
                                        (FOURTH, FOURTH_VALUES)],
                         ids=["second", "first", "fourth"])
def test_zero_tolerance_samples_equal_nominal_exactly(nf, values):
    result = monte_carlo(nf, values, {n: 0.0 for n in values}, samples=3000,
                         allow_zero=True, windows={"f0": 1e-12})
    assert np.all(result.f0_hz == result.nominal_f0_hz)
    assert np.all(result.gain == result.nominal_gain)
    if result.q is not None:
        assert np.all(result.q == result.nominal_q)
    assert result.yield_fraction == 1.0
    assert result.statistics["f0_hz"].std == 0.0


def test_nominal_figures_match_the_network():
    result = monte_carlo(SK, SK_VALUES, 0.01, samples=10)
    figures = SK.second_order_figures(SK_VALUES)
    assert result.nominal_f0_hz * 2 * math.pi == pytest.approx(float(figures.omega0), rel=1e-15)
    assert result.nominal_q == pytest.approx(float(figures.q), rel=1e-15)
    assert result.nominal_gain == 1.0


@pytest.mark.parametrize("distribution, spread", [("uniform", 1 / math.sqrt(3)), ("gaussian", 1 / 3)])
def test_single_part_spread_matches_first_order_sensitivity(distribution, spread):
    # std(f0)/f0 ≈ |S_R1^ω0| · σ_R1 with σ = tol/√3 (uniform) or tol/3 (3σ = tol):
    # first-order propagation of variance (common practice, no source)
    tolerance = 0.002
    result = monte_carlo(SK, SK_VALUES, {"R1": tolerance}, samples=200_000, seed=7,
                         distribution=distribution)
    relative_std = result.statistics["f0_hz"].std / result.nominal_f0_hz
    assert relative_std == pytest.approx(0.5 * tolerance * spread, rel=0.02)


def test_yield_of_one_uniform_capacitor_against_closed_form():
    # f0 ∝ 1/C, C = C0(1 + δ), δ uniform in ±5 %: |1/(1+δ) − 1| ≤ 2 % ⇔
    # δ ∈ [−0.02/1.02, 0.02/0.98], probability (0.02/0.98 + 0.02/1.02)/0.10
    # (derived by hand)
    expected = (0.02 / 0.98 + 0.02 / 1.02) / 0.10
    result = monte_carlo(RC, RC_VALUES, {"C1": 0.05}, samples=200_000, seed=3,
                         windows={"f0": 0.02})
    assert result.yield_fraction == pytest.approx(expected, abs=0.005)
    assert result.window_yield == {"f0": result.yield_fraction}


def test_gain_window_in_db():
    # gain = −R2/R1; R2 uniform ±10 %: |20 log10(1+δ)| ≤ 0.5 dB ⇔
    # δ ∈ [10^(−0.025) − 1, 10^(0.025) − 1] (derived by hand)
    expected = (10 ** 0.025 - 10 ** -0.025) / 0.2
    result = monte_carlo(MFB, MFB_VALUES, {"R2": 0.10}, samples=200_000, seed=5,
                         windows={"gain_db": 0.5})
    assert result.nominal_gain == pytest.approx(-1.0)
    assert result.yield_fraction == pytest.approx(expected, abs=0.005)


def test_contributions_sum_to_one_and_rank_the_loosest_part_first():
    tolerances = {"R1": 0.01, "R2": 0.01, "C1": 0.05, "C2": 0.01}
    result = monte_carlo(SK, SK_VALUES, tolerances, samples=100)
    for key in ("f0", "q"):
        assert sum(result.contributions[key].values()) == pytest.approx(1.0, abs=1e-12)
    assert result.ranking["f0"][0] == "C1"
    # Equal |S^ω0| = 1/2: the shares go as tolerance² (derived by hand)
    assert result.contributions["f0"]["C1"] == pytest.approx(25 / 28, rel=1e-9)
    assert result.contributions["gain"] == {n: 0.0 for n in tolerances}


def test_rc_ladder_dominant_pair_from_the_two_slowest_real_poles():
    result = monte_carlo(LADDER, LADDER_VALUES, 0.01, samples=50)
    # Independent check through the numeric MNA pencil (placer.analysis.network.circuit_poles)
    circuit = Circuit(_ladder_circuit())
    poles = np.sort(np.abs(circuit_poles(circuit)))
    omega0 = math.sqrt(poles[0] * poles[1])
    assert result.nominal_f0_hz == pytest.approx(omega0 / (2 * math.pi), rel=1e-9)
    assert result.nominal_q == pytest.approx(omega0 / (poles[0] + poles[1]), rel=1e-9)


def _ladder_circuit():
    elements = []
    for i, (a, b) in enumerate((("vin", "n1"), ("n1", "n2"), ("n2", "vout")), start=1):
        elements.append(Element(f"R{i}", "resistor", (a, b), value=LADDER_VALUES[f"R{i}"]))
        elements.append(Element(f"C{i}", "capacitor", (b, "gnd"), value=LADDER_VALUES[f"C{i}"]))
    return tuple(elements)


def test_same_seed_same_result_and_other_seed_differs():
    a = monte_carlo(SK, SK_VALUES, 0.01, samples=5000, seed=11)
    b = monte_carlo(SK, SK_VALUES, 0.01, samples=5000, seed=11)
    c = monte_carlo(SK, SK_VALUES, 0.01, samples=5000, seed=12)
    assert np.array_equal(a.f0_hz, b.f0_hz) and np.array_equal(a.q, b.q)
    assert not np.array_equal(a.f0_hz, c.f0_hz)


def test_progress_is_called_per_chunk_and_changes_nothing():
    calls = []
    with_progress = monte_carlo(FOURTH, FOURTH_VALUES, 0.01, samples=4500, seed=2,
                                progress=lambda done, total: calls.append((done, total)))
    without = monte_carlo(FOURTH, FOURTH_VALUES, 0.01, samples=4500, seed=2)
    assert calls == [(1999, 4500), (3999, 4500), (4500, 4500)]
    assert np.array_equal(with_progress.f0_hz, without.f0_hz)


def test_results_are_read_only():
    result = monte_carlo(SK, SK_VALUES, 0.01, samples=10)
    with pytest.raises(ValueError):
        result.f0_hz[0] = 0.0


# -- cascade ----------------------------------------------------------------

def test_cascade_sections_are_independent_and_the_gain_multiplies():
    sections = [(SK, SK_VALUES, 0.01), (MFB, MFB_VALUES, {"R1": 0.01, "R2": 0.01})]
    result = cascade_monte_carlo(sections, samples=20_000, seed=4,
                                 windows={"f0": 0.02, "gain_db": 0.1})
    again = cascade_monte_carlo(sections, samples=20_000, seed=4,
                                windows={"f0": 0.02, "gain_db": 0.1})
    assert np.array_equal(result.gain, again.gain)
    assert result.nominal_gain == pytest.approx(-1.0)
    np.testing.assert_array_equal(result.gain, result.sections[0].gain * result.sections[1].gain)
    f0a, f0b = result.sections[0].f0_hz, result.sections[1].f0_hz
    assert abs(np.corrcoef(f0a, f0b)[0, 1]) < 0.03
    assert 0.0 < result.yield_fraction <= min(r.window_yield["f0"] for r in result.sections)


def test_cascade_of_identical_sections_draws_different_samples():
    part = (SK, SK_VALUES, 0.01)
    result = cascade_monte_carlo([part, part], samples=100, seed=0)
    assert not np.array_equal(result.sections[0].f0_hz, result.sections[1].f0_hz)


def test_cascade_rejects_malformed_sections():
    with pytest.raises(SpecError, match="section 0"):
        cascade_monte_carlo([(SK, SK_VALUES)], samples=10)
    with pytest.raises(SpecError, match="at least one section"):
        cascade_monte_carlo([], samples=10)


# -- bad input --------------------------------------------------------------

@pytest.mark.parametrize("tolerance, shown", [(1.5, "150 %"), (1.0, "100 %"), (-0.01, "-1 %"),
                                              (0.0, "0 %")])
def test_bad_tolerance_names_part_and_value(tolerance, shown):
    with pytest.raises(SpecError) as error:
        monte_carlo(SK, SK_VALUES, {"R1": tolerance, "C1": 0.01}, samples=10)
    assert str(error.value) == f"tolerance of 'R1' must be between 0 and 100 %, not {shown}"


def test_tolerance_for_an_unknown_part():
    with pytest.raises(SpecError, match="'R9', which is not a part"):
        monte_carlo(SK, SK_VALUES, {"R9": 0.01}, samples=10)


def test_samples_below_one():
    with pytest.raises(SpecError, match="samples must be at least 1, not 0"):
        monte_carlo(SK, SK_VALUES, 0.01, samples=0)
    with pytest.raises(SpecError, match="whole number"):
        monte_carlo(SK, SK_VALUES, 0.01, samples=2.5)


def test_too_many_samples_are_capped_with_a_warning():
    with pytest.warns(NumericalWarning, match="capped at 1,000,000"):
        result = monte_carlo(RC, RC_VALUES, 0.01, samples=MAX_SAMPLES + 1)
    assert result.samples == MAX_SAMPLES and result.f0_hz.size == MAX_SAMPLES


def test_unknown_distribution_lists_the_valid_ones():
    with pytest.raises(SpecError) as error:
        monte_carlo(SK, SK_VALUES, 0.01, samples=10, distribution="normal")
    assert "{'uniform', 'gaussian'}" in str(error.value) and "'normal'" in str(error.value)


def test_missing_value_names_the_part():
    with pytest.raises(SpecError, match="'C2'"):
        monte_carlo(SK, {"R1": 1e3, "R2": 1e3, "C1": 1e-9}, 0.01, samples=10)
    with pytest.raises(SpecError, match="'C2'"):
        sensitivities(SK, {"R1": 1e3, "R2": 1e3, "C1": 1e-9})


def test_bad_windows():
    with pytest.raises(SpecError, match="'f3db'"):
        monte_carlo(SK, SK_VALUES, 0.01, samples=10, windows={"f3db": 0.1})
    with pytest.raises(SpecError, match="first-order network has no Q"):
        monte_carlo(RC, RC_VALUES, 0.01, samples=10, windows={"q": 0.1})
    with pytest.raises(SpecError, match="window 'f0' must be a positive number"):
        monte_carlo(SK, SK_VALUES, 0.01, samples=10, windows={"f0": -1})


def test_no_warning_for_a_normal_run():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        monte_carlo(FOURTH, FOURTH_VALUES, 0.05, samples=2000, distribution="gaussian")


# -- notch rejection at a fixed frequency -------------------------------------

def _notch_magnitude(omega, omega0, q):
    # Standard second-order notch (s^2 + w0^2)/(s^2 + s w0/Q + w0^2) on the jw axis
    # (any filter handbook's notch section; common practice, no source).
    return abs(omega0**2 - omega**2) / math.hypot(omega0**2 - omega**2, omega * omega0 / q)


def _fliege():
    from placer.circuit.library import get_topology

    r, rq, c = 10e3, 40e3, 1 / (2 * math.pi * 50 * 10e3)
    values = {"R1": 10e3, "R2": 10e3, "R3": r, "R4": r, "R5": rq, "R6": rq, "C1": c, "C2": c}
    return network_function(get_topology("fliege-notch").circuit), values


def test_nominal_rejection_matches_the_notch_formula_and_scipy():
    import scipy.signal

    nf, values = _fliege()                      # f0 = 50 Hz, Q = RQ/(2R) = 2
    reject_hz = 51.0
    result = monte_carlo(nf, values, {"R3": 0.01}, samples=10, seed=0, reject_hz=reject_hz)
    expected = -20 * math.log10(_notch_magnitude(2 * math.pi * reject_hz, 2 * math.pi * 50, 2.0))
    assert result.nominal_rejection_db == pytest.approx(expected, rel=1e-9)
    numerator, denominator = nf.coefficients(values)
    _, h = scipy.signal.freqs(numerator, denominator, worN=[2 * math.pi * reject_hz])
    assert result.nominal_rejection_db == pytest.approx(-20 * math.log10(abs(h[0])), rel=1e-9)
    assert result.reject_hz == reject_hz


def test_rejection_yield_matches_the_closed_form():
    # Only R3 varies, uniform ±5 %: w0 and Q both scale as (1 + u)^(-1/2) (Fliege notch,
    # w0 = 1/sqrt(R3 R4 C1 C2), Q = w0 C2 (R5 || R6)); the fraction of u in [-5 %, 5 %]
    # that keeps at least 30 dB at 50 Hz, from the notch formula on a fine grid.
    nf, values = _fliege()
    u = np.linspace(-0.05, 0.05, 200_001)
    omega0 = 2 * math.pi * 50 / np.sqrt(1 + u)
    q = 2.0 / np.sqrt(1 + u)
    magnitude = np.abs(omega0**2 - (2 * math.pi * 50) ** 2) / np.hypot(
        omega0**2 - (2 * math.pi * 50) ** 2, 2 * math.pi * 50 * omega0 / q)
    expected = float(np.mean(magnitude <= 10 ** (-30 / 20)))
    result = monte_carlo(nf, values, {"R3": 0.05}, samples=100_000, seed=11,
                         windows={"rejection_db": 30.0}, reject_hz=50.0)
    assert result.nominal_rejection_db == 200.0          # the exact null, capped
    assert result.yield_fraction == pytest.approx(expected, abs=0.006)   # ~4 sigma
    assert result.window_yield == {"rejection_db": result.yield_fraction}
    assert result.statistics["rejection_db"].minimum >= 0


def test_rejection_window_needs_a_frequency():
    nf, values = _fliege()
    with pytest.raises(SpecError, match="reject_hz"):
        monte_carlo(nf, values, {"R3": 0.01}, samples=10, windows={"rejection_db": 30.0})
    with pytest.raises(SpecError, match="positive frequency"):
        monte_carlo(nf, values, {"R3": 0.01}, samples=10, reject_hz=-5.0)


# -- worker processes ---------------------------------------------------------

def test_worker_processes_give_the_same_samples():
    # The draws are made once, up front; the figures are per sample, so 1 or 2
    # workers give identical arrays (the requirement: same result, seeded).
    from placer.evidence.tolerance import PARALLEL_MIN_SAMPLES

    nf, values = _fliege()
    kwargs = dict(samples=PARALLEL_MIN_SAMPLES + 1, seed=4, reject_hz=50.0,
                  windows={"f0": 0.02, "rejection_db": 20.0})
    one = monte_carlo(nf, values, 0.01, workers=1, **kwargs)
    two = monte_carlo(nf, values, 0.01, workers=2, **kwargs)
    for name in ("f0_hz", "q", "gain", "rejection_db", "passed"):
        np.testing.assert_array_equal(getattr(one, name), getattr(two, name))
    assert one.yield_fraction == two.yield_fraction


@pytest.mark.parametrize("workers", [0, -1, 1.5, "2", True])
def test_bad_worker_count(workers):
    nf, values = _fliege()
    with pytest.raises(SpecError, match="workers must be a whole number >= 1"):
        monte_carlo(nf, values, 0.01, samples=10, workers=workers)
