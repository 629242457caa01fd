"""Tests of placer.evidence.figures (step and frequency figures) and placer.evidence.verify
(deviations, margins)."""

import math

import control
import numpy as np
import pytest
import scipy.signal

from placer.errors import SpecError
from placer.analysis.response import Response
from placer.evidence.figures import HALF_POWER_DB, frequency_figures, step_figures
from placer.evidence.verify import deviation, margins, verify

W0 = 2 * math.pi * 1e3      # rad/s


def _second_order(zeta, omega0=W0, numerator=None):
    numerator = [omega0**2] if numerator is None else numerator
    return Response.from_sections([control.tf(numerator, [1.0, 2 * zeta * omega0, omega0**2])])


def _butterworth(order, omega0=W0):
    z, p, k = scipy.signal.butter(order, omega0, analog=True, output="zpk")
    return Response.from_zpk(z, p, k)


# -- step -------------------------------------------------------------------

@pytest.mark.parametrize("zeta", [0.05, 0.1, 0.2, 0.3, 0.5, 0.7, 0.9])
def test_overshoot_of_second_order_lowpass(zeta):
    # Mp = exp(−πζ/√(1−ζ²)): Ogata, Modern Control Engineering, transient
    # response of second-order systems (from memory); to 0.1 %
    expected = 100 * math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2))
    figures = step_figures(_second_order(zeta))
    assert figures.overshoot_pct == pytest.approx(expected, rel=1e-3)
    assert figures.final_value == pytest.approx(1.0, rel=1e-12)
    # Peak time π/(ω0√(1−ζ²)): Ogata, same section (from memory)
    assert figures.peak_time_s == pytest.approx(math.pi / (W0 * math.sqrt(1 - zeta**2)), rel=1e-3)


def test_rise_and_settling_time_of_first_order_lowpass():
    tau = 1e-3
    figures = step_figures(Response.from_sections([control.tf([1.0], [tau, 1.0])]))
    # 10–90 % rise time ln(9)·τ (common practice, no source)
    assert figures.rise_time_s == pytest.approx(math.log(9) * tau, rel=1e-5)
    # 2 % settling: e^(−t/τ) = 0.02 → t = ln(50)·τ (derived by hand)
    assert figures.settling_time_s == pytest.approx(math.log(50) * tau, rel=1e-5)
    assert figures.overshoot_pct == 0.0
    assert not figures.zero_dc_gain


def test_step_output_matches_scipy_for_a_fourth_order_cascade():
    # Reference library: scipy.signal.step on the same zpk
    z, p, k = scipy.signal.butter(4, W0, analog=True, output="zpk")
    figures = step_figures(Response.from_zpk(z, p, k))
    _, expected = scipy.signal.step(scipy.signal.ZerosPolesGain(z, p, k), T=figures.time_s)
    np.testing.assert_allclose(figures.output, expected, rtol=0, atol=1e-9)


def test_time_grid_reaches_twelve_slowest_time_constants():
    figures = step_figures(_second_order(0.1))
    assert figures.time_s[-1] == pytest.approx(12 / (0.1 * W0), rel=1e-12)


def test_inverting_lowpass_step():
    figures = step_figures(Response.from_sections([control.tf([-2.0], [1e-3, 1.0])]))
    assert figures.final_value == pytest.approx(-2.0)
    assert figures.rise_time_s == pytest.approx(math.log(9) * 1e-3, rel=1e-5)


def test_highpass_step_reports_zero_dc_figures_with_a_note():
    figures = step_figures(_second_order(0.5, numerator=[1.0, 0.0, 0.0]))
    assert figures.zero_dc_gain
    assert figures.overshoot_pct is None and figures.rise_time_s is None
    assert figures.final_value == 0.0
    # y(0+) = H(∞) = 1 by the initial-value theorem (derived by hand)
    assert figures.peak == pytest.approx(1.0, rel=1e-12)
    assert figures.peak_time_s == 0.0
    assert figures.settling_time_s > 0
    assert any("zero DC gain" in note for note in figures.notes)
    assert all(not math.isnan(x) for x in (figures.peak, figures.settling_time_s))


def test_bandpass_step_settles_to_two_percent_of_peak():
    figures = step_figures(_second_order(0.1, numerator=[0.2 * W0, 0.0]))
    assert figures.zero_dc_gain
    later = figures.time_s > figures.settling_time_s
    assert np.all(np.abs(figures.output[later]) <= 0.02 * abs(figures.peak) + 1e-12)


def test_unstable_response_has_no_step_figures():
    figures = step_figures(Response.from_sections([control.tf([1.0], [1.0, -1.0])]))
    assert figures.rise_time_s is None and figures.settling_time_s is None
    assert "not stable" in figures.notes[0]


# -- frequency --------------------------------------------------------------

def test_butterworth_second_order_half_power_at_omega0():
    # |H(jω0)| = 1/√2 for Q = 1/√2 (Butterworth definition, common practice)
    figures = frequency_figures(_second_order(1 / math.sqrt(2)))
    assert figures.kind == "lowpass"
    assert figures.f3db_hz == pytest.approx(1e3, rel=1e-5)
    assert figures.gain_db == pytest.approx(0.0, abs=1e-12)
    assert figures.peak_hz == 0.0


@pytest.mark.parametrize("order", [3, 4, 8])
def test_butterworth_half_power_from_scipy_zpk(order):
    # Reference library: scipy.signal.butter(analog=True) puts −3 dB at Wn
    assert frequency_figures(_butterworth(order)).f3db_hz == pytest.approx(1e3, rel=1e-6)


def test_butterworth_highpass_half_power_at_omega0():
    figures = frequency_figures(_second_order(1 / math.sqrt(2), numerator=[1.0, 0.0, 0.0]))
    assert figures.kind == "highpass"
    assert figures.f3db_hz == pytest.approx(1e3, rel=1e-5)


def test_second_order_bandpass_edges():
    # H = (ω0/Q)s/(s² + (ω0/Q)s + ω0²): f_lo·f_hi = f0², f_hi − f_lo = f0/Q
    # (Schaumann & Van Valkenburg, Design of Analog Filters — from memory)
    q = 5.0
    figures = frequency_figures(_second_order(1 / (2 * q), numerator=[W0 / q, 0.0]))
    assert figures.kind == "bandpass"
    assert figures.peak_hz == pytest.approx(1e3, rel=1e-6)
    assert figures.gain_db == pytest.approx(0.0, abs=1e-9)
    assert figures.band_low_hz * figures.band_high_hz == pytest.approx(1e6, rel=1e-8)
    assert figures.band_high_hz - figures.band_low_hz == pytest.approx(1e3 / q, rel=1e-8)


def test_peaking_of_a_high_q_lowpass():
    # Peak |H| = Q/√(1 − 1/(4Q²)) at ω0√(1 − 1/(2Q²)) (derived by hand)
    q = 2.0
    figures = frequency_figures(_second_order(1 / (2 * q)))
    assert figures.peak_db == pytest.approx(20 * math.log10(q / math.sqrt(1 - 1 / (4 * q * q))),
                                            abs=1e-9)
    assert figures.peak_hz == pytest.approx(1e3 * math.sqrt(1 - 1 / (2 * q * q)), rel=1e-6)


def test_notch_and_allpass_kinds():
    notch = frequency_figures(_second_order(0.25, numerator=[1.0, 0.0, W0**2]))
    assert notch.kind == "bandstop"
    # Stop-band edges of a notch with Q = 2: product f0², difference f0/Q (derived by hand)
    assert notch.band_low_hz * notch.band_high_hz == pytest.approx(1e6, rel=1e-8)
    assert notch.band_high_hz - notch.band_low_hz == pytest.approx(500.0, rel=1e-8)
    allpass = frequency_figures(_second_order(0.25, numerator=[1.0, -W0 / 2, W0**2]))
    assert allpass.kind == "flat" and allpass.f3db_hz is None and allpass.notes


def test_half_power_level_is_half_power():
    assert HALF_POWER_DB == pytest.approx(3.0103, abs=1e-4)


# -- responses from roots ---------------------------------------------------

def test_from_zpk_matches_scipy_freqs_zpk():
    # Reference library: scipy.signal.freqs_zpk
    z, p, k = scipy.signal.ellip(6, 0.5, 60, W0, analog=True, output="zpk")
    response = Response.from_zpk(z, p, k)
    assert len(response.sections) == 3 and response.order == 6
    omega = np.geomspace(W0 / 10, W0 * 10, 500)
    _, expected = scipy.signal.freqs_zpk(z, p, k, worN=omega)
    np.testing.assert_allclose(response.evaluate(omega), expected, rtol=1e-9)


def test_from_zpk_rejects_unpaired_and_improper_roots():
    with pytest.raises(SpecError, match="no complex conjugate"):
        Response.from_zpk([], [-1 + 1j, -2], 1.0)
    with pytest.raises(SpecError, match="improper"):
        Response.from_zpk([-1, -2], [-3], 1.0)
    with pytest.raises(SpecError, match="TransferFunction"):
        Response.from_sections([np.array([1.0])])


# -- deviation and verify ---------------------------------------------------

def test_deviation_of_a_gain_error_and_an_inversion():
    target = _butterworth(4)
    z, p, k = scipy.signal.butter(4, W0, analog=True, output="zpk")
    louder = Response.from_zpk(z, p, 1.1 * k)
    found = deviation(louder, target)
    # 20 log10(1.1) everywhere, no phase change (derived by hand)
    assert found.magnitude_db == pytest.approx(20 * math.log10(1.1), abs=1e-9)
    assert found.phase_deg == pytest.approx(0.0, abs=1e-9)
    assert not found.inverted
    assert found.band_hz == pytest.approx((100.0, 10e3), rel=1e-12)
    flipped = deviation(Response.from_zpk(z, p, -k), target)
    assert flipped.inverted and flipped.phase_deg == pytest.approx(0.0, abs=1e-9)


def test_deviation_of_a_shifted_first_order_pole():
    # H_d/H_t = (1 + jω/a)/(1 + jω/b): phase atan(ω/a) − atan(ω/b), largest at
    # ω = √(ab); magnitude rises with ω, largest at the band's top (derived by hand)
    a, b = 1000.0, 1100.0
    target = Response.from_sections([control.tf([a], [1.0, a])])
    design = Response.from_sections([control.tf([b], [1.0, b])])
    found = deviation(design, target, (1.0, 1e6), points=200_001, floor_db=200.0)
    w = math.sqrt(a * b)
    expected = math.degrees(math.atan(w / a) - math.atan(w / b))
    assert found.phase_deg == pytest.approx(expected, rel=1e-6)
    top = 2 * math.pi * 1e6
    assert found.magnitude_db == pytest.approx(
        10 * math.log10((1 + (top / a) ** 2) / (1 + (top / b) ** 2)), rel=1e-9)
    assert found.magnitude_at_hz == pytest.approx(1e6, rel=1e-12)


def test_deviation_skips_the_deep_stop_band():
    z, p, k = scipy.signal.ellip(4, 0.5, 60, W0, analog=True, output="zpk")
    target = Response.from_zpk(z, p, k)
    design = Response.from_zpk(np.asarray(z) * 1.001, np.asarray(p) * 1.001, k)
    found = deviation(design, target)
    assert math.isfinite(found.magnitude_db) and found.magnitude_db < 10


def test_verify_reports_target_design_and_continuous():
    target = _butterworth(4)
    z, p, k = scipy.signal.butter(4, W0, analog=True, output="zpk")
    continuous = Response.from_zpk(z, np.asarray(p) * 1.0001, k * 1.0001**4)
    snapped = Response.from_zpk(z, np.asarray(p) * 1.02, k * 1.02**4)
    result = verify(snapped, target, continuous=continuous)
    assert result.continuous_deviation.magnitude_db < result.deviation.magnitude_db
    assert result.snapping_deviation is not None
    assert result.design.frequency.f3db_hz == pytest.approx(1020.0, rel=1e-6)
    assert result.target.step.overshoot_pct == pytest.approx(
        result.design.step.overshoot_pct, rel=1e-6)   # scaling ω changes no shape
    assert result.band_hz == pytest.approx((100.0, 10e3))


def test_verify_wants_responses_and_a_good_band():
    target = _butterworth(2)
    with pytest.raises(SpecError, match="Response"):
        verify([control.tf([1.0], [1.0, 1.0])], target)
    with pytest.raises(SpecError, match="0 < low < high"):
        verify(target, target, band_hz=(10.0, 1.0))


# -- margins ----------------------------------------------------------------

def test_phase_margin_of_integrator_with_pole():
    # L = k/(s(1 + s/p)), p = 10 rad/s. Crossover at ω = 10: |L| = 1 gives
    # k = ω√(1 + (ω/p)²) = 10√2; PM = 180 − 90 − atan(ω/p) = 45° (derived by hand)
    p = 10.0
    loop = control.tf([10 * math.sqrt(2)], [1 / p, 1.0, 0.0])
    found = margins(loop)
    assert found.phase_margin_deg == pytest.approx(45.0, abs=1e-9)
    assert found.crossover_hz == pytest.approx(10.0 / (2 * math.pi), rel=1e-9)
    # Reference library: python-control margin()
    _, pm, _, wcp = control.margin(loop)
    assert found.phase_margin_deg == pytest.approx(pm, abs=1e-9)
    assert found.crossover_hz * 2 * math.pi == pytest.approx(wcp, rel=1e-9)
    assert found.gain_margin_db is None and found.phase_crossover_hz is None
    assert any("no phase crossover" in note for note in found.notes)
    assert found.stable


def test_gain_margin_of_triple_pole():
    # L = K/(s+1)³: phase −180° at ω = tan 60° = √3, |L(j√3)| = K/8, so
    # GM = 8/K; Routh: closed loop stable for K < 8 (derived by hand)
    found = margins(control.tf([2.0], [1.0, 3.0, 3.0, 1.0]))
    assert found.gain_margin_db == pytest.approx(20 * math.log10(4.0), abs=1e-9)
    assert found.phase_crossover_hz * 2 * math.pi == pytest.approx(math.sqrt(3), rel=1e-9)
    omega = math.sqrt(2 ** (2 / 3) - 1)
    assert found.phase_margin_deg == pytest.approx(180 - 3 * math.degrees(math.atan(omega)),
                                                   abs=1e-9)
    assert found.stable
    assert not margins(control.tf([100.0], [1.0, 3.0, 3.0, 1.0])).stable


def test_no_crossover_gives_none_with_notes():
    found = margins(control.tf([0.5], [1.0, 1.0]))
    assert found.phase_margin_deg is None and found.crossover_hz is None
    assert found.gain_margin_db is None
    assert any("no gain crossover" in note for note in found.notes)
    assert any("no phase crossover" in note for note in found.notes)
    assert found.stable


def test_several_crossovers_report_the_smallest_phase_margin():
    # An integrator and a resonance: |L| crosses 1 three times
    loop = control.tf([300.0], [1.0, 0.2, 100.0, 0.0])
    _, pm, _, _, wgc, _ = control.stability_margins(loop, returnall=True)  # reference library
    found = margins(loop)
    assert len(pm) == 3
    assert found.phase_margin_deg == pytest.approx(min(pm))
    assert found.crossover_hz * 2 * math.pi == pytest.approx(wgc[np.argmin(pm)])
    assert any("3 gain crossovers" in note for note in found.notes)


def test_margins_of_a_response_cascade():
    loop = Response.from_sections([control.tf([10 * math.sqrt(2)], [1.0, 0.0]),
                                   control.tf([1.0], [0.1, 1.0])])
    assert margins(loop).phase_margin_deg == pytest.approx(45.0, abs=1e-6)
    with pytest.raises(SpecError, match="loop must be"):
        margins([1.0, 2.0])


def test_sallen_key_network_through_verify():
    # A unity-gain Sallen–Key from placer.analysis.network with Butterworth values
    # (equal R, C1 = 2 C2 for Q = 1/√2; derived by hand) against the scipy target
    from placer.circuit.elements import Circuit, Element
    from placer.analysis.network import network_function

    nf = network_function(Circuit((
        Element("R1", "resistor", ("vin", "n1"), symbol="R1"),
        Element("R2", "resistor", ("n1", "n2"), symbol="R2"),
        Element("C1", "capacitor", ("n1", "vout"), symbol="C1"),
        Element("C2", "capacitor", ("n2", "gnd"), symbol="C2"),
        Element("U1", "opamp", ("n2", "vout", "vout")),
    )))
    c2 = 10e-9
    r = 1 / (W0 * c2 * math.sqrt(2))
    design = Response.from_sections([nf.transfer_function(
        {"R1": r, "R2": r, "C1": 2 * c2, "C2": c2})])
    result = verify(design, _butterworth(2))
    assert result.deviation.magnitude_db == pytest.approx(0.0, abs=1e-9)
    assert result.deviation.phase_deg == pytest.approx(0.0, abs=1e-7)
    assert not result.deviation.inverted
    assert result.design.frequency.f3db_hz == pytest.approx(1e3, rel=1e-9)
