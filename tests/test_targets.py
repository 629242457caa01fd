"""Tests of placer.target.targets, placer.target.sections, placer.spec.target_table and placer.target.approximations.

Outside references: handbook pole and Q tables (Williams & Taylor,
*Electronic Filter Design Handbook*, recalled from memory and each checked
against scipy.signal before being asserted), closed-form −3 dB formulas
(common practice), and scipy.signal (butter, cheby1, cheby2, ellip,
bessel, buttord, cheb1ord, cheb2ord, ellipord) as a reference library.
"""

import json
import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import optimize, signal

from placer.target.approximations import (
    HALF_POWER_LOSS_DB,
    band_from_edges,
    estimate_order,
    estimate_orders,
    lowpass_prototype,
)
from placer.errors import SpecError
from placer.target.sections import split_sections
from placer.spec.target_table import target_from_table, target_to_dict
from placer.target.targets import (
    Section,
    Target,
    design_target,
    make_section,
    reference_omega_for,
    target_from_roots,
    target_from_sections,
)

TWO_PI = 2.0 * math.pi
HALF_POWER = 10.0 ** (-HALF_POWER_LOSS_DB / 20.0)


def sorted_roots(roots):
    return np.array(sorted(np.asarray(roots, complex),
                           key=lambda r: (round(r.imag, 6), round(r.real, 6))))


def assert_same_roots(actual, expected, *, rtol=0.0, atol=0.0):
    assert len(actual) == len(expected)
    assert_allclose(sorted_roots(actual), sorted_roots(expected), rtol=rtol, atol=atol)


def assert_table_roots(actual, table, places=4):
    """Real and imaginary parts each agree with a table rounded to *places*."""
    actual, table = upper_poles(actual), sorted_roots(table)
    half_unit = 0.5 * 10.0 ** -places + 1e-12
    assert_allclose(actual.real, table.real, rtol=0, atol=half_unit)
    assert_allclose(actual.imag, table.imag, rtol=0, atol=half_unit)


def upper_poles(roots):
    """One root of each conjugate pair and every real root, sorted."""
    return sorted_roots([r for r in roots if r.imag >= -1e-12])


def half_power_frequency(target, guess):
    """Frequency (rad/s) where a unit-level |H| passes 1/√2, found here.

    The highest such frequency for a low-pass, the lowest for a high-pass,
    by bisection on the target's own response (independent of the module's
    root finder).
    """
    # Offset so that no grid point falls on the cutoff itself.
    grid = guess * np.logspace(-0.98765, 1.01234, 20000)
    above = np.nonzero(np.abs(target.frequency_response(grid)) >= HALF_POWER)[0]
    i = above[-1] if target.response == "lowpass" else above[0] - 1
    excess = lambda w: abs(target.frequency_response([w])[0]) - HALF_POWER
    return optimize.brentq(excess, grid[i], grid[i + 1], xtol=1e-14, rtol=1e-14)


# ---------------------------------------------------------------------------
# Handbook tables (from memory, verified against scipy.signal)

# Butterworth section Q, orders 2-8, rounded to 4 places: Williams & Taylor,
# Electronic Filter Design Handbook, Butterworth pole table (from memory).
BUTTERWORTH_Q = {
    2: [0.7071],
    3: [1.0000],
    4: [0.5412, 1.3066],
    5: [0.6180, 1.6180],
    6: [0.5176, 0.7071, 1.9319],
    7: [0.5550, 0.8019, 2.2470],
    8: [0.5098, 0.6013, 0.9000, 2.5629],
}


@pytest.mark.parametrize("order", sorted(BUTTERWORTH_Q))
def test_butterworth_section_q_matches_handbook(order):
    target = design_target("butterworth", order, frequency_hz=1.0 / TWO_PI)
    sections = split_sections(target)
    qs = [s.q for s in sections if s.order == 2]
    # Williams & Taylor Butterworth table, 4 places (from memory).
    assert qs == pytest.approx(BUTTERWORTH_Q[order], abs=5e-5)
    assert [s.order for s in sections].count(1) == order % 2
    # Normalised Butterworth: every pole on the unit circle (common practice).
    assert [s.omega0 for s in sections] == pytest.approx([1.0] * len(sections), rel=1e-12)


# Bessel poles normalised to unit delay at DC: Williams & Taylor, Bessel
# pole table (from memory; agrees with scipy.signal.bessel(norm="delay")).
BESSEL_DELAY_POLES = {
    2: [-1.5000 + 0.8660j],
    3: [-2.3222, -1.8389 + 1.7544j],
    4: [-2.8962 + 0.8672j, -2.1038 + 2.6574j],
    5: [-3.6467, -3.3520 + 1.7427j, -2.3247 + 3.5710j],
}
# Section Q of the same Bessel filters, from the same table (from memory).
BESSEL_Q = {2: [0.5774], 3: [0.6910], 4: [0.5219, 0.8055], 5: [0.5635, 0.9165]}


@pytest.mark.parametrize("order", sorted(BESSEL_DELAY_POLES))
def test_bessel_delay_normalised_poles_match_handbook(order):
    _, poles, _ = lowpass_prototype("bessel", order, bessel_norm="delay",
                                    normalisation="natural")
    # Williams & Taylor Bessel table, 4 places (from memory).
    assert_table_roots(poles, BESSEL_DELAY_POLES[order])


@pytest.mark.parametrize("order", sorted(BESSEL_Q))
def test_bessel_sections_from_spec_match_handbook(order):
    # cutoff = 1/(2π) Hz with bessel_norm = "delay": unit delay, as the table.
    target = target_from_table({"approximation": "bessel", "order": order,
                                "cutoff": 1.0 / TWO_PI, "bessel_norm": "delay"})
    sections = [s for s in split_sections(target) if s.order == 2]
    # Williams & Taylor Bessel table Q, 4 places (from memory).
    assert [s.q for s in sections] == pytest.approx(BESSEL_Q[order], abs=5e-5)
    table_f0 = sorted(abs(p) for p in BESSEL_DELAY_POLES[order] if p.imag)
    # Section ω0 = |p| of the table's poles (4-place table: 1e-4 relative).
    assert [s.omega0 for s in sections] == pytest.approx(table_f0, rel=1e-4)


# Chebyshev I poles normalised to the ripple edge, orders 2-4: classical
# Chebyshev pole tables (Williams & Taylor; from memory). All twelve agree
# with scipy.signal.cheby1 to 4 places, so none was dropped.
CHEBYSHEV_POLES = {
    (0.5, 2): [-0.7128 + 1.0040j],
    (0.5, 3): [-0.6265, -0.3132 + 1.0219j],
    (0.5, 4): [-0.4233 + 0.4209j, -0.1754 + 1.0163j],
    (1.0, 2): [-0.5489 + 0.8951j],
    (1.0, 3): [-0.4942, -0.2471 + 0.9660j],
    (1.0, 4): [-0.3369 + 0.4073j, -0.1395 + 0.9834j],
}


@pytest.mark.parametrize("ripple, order", sorted(CHEBYSHEV_POLES))
def test_chebyshev_ripple_edge_poles_match_handbook(ripple, order):
    _, poles, _ = lowpass_prototype("chebyshev1", order, ripple_db=ripple,
                                    normalisation="passband_edge")
    # Chebyshev pole table, 4 places (from memory).
    assert_table_roots(poles, CHEBYSHEV_POLES[ripple, order])
    # scipy.signal.cheby1 designs at the ripple edge (reference library).
    _, reference, _ = signal.cheby1(order, ripple, 1.0, analog=True, output="zpk")
    assert_same_roots(poles, reference, atol=1e-9)


# ---------------------------------------------------------------------------
# Against scipy.signal and closed forms


@pytest.mark.parametrize("order", range(1, 13))
def test_butterworth_and_bessel_mag_match_scipy(order):
    for name, reference in (
        ("butterworth", signal.butter(order, 1.0, analog=True, output="zpk")),
        ("bessel", signal.bessel(order, 1.0, analog=True, output="zpk", norm="mag")),
    ):
        zeros, poles, k = lowpass_prototype(name, order)
        # scipy.signal.butter / bessel(norm="mag") are −3 dB at 1 rad/s.
        assert_same_roots(poles, reference[1], rtol=1e-9, atol=1e-12)
        assert k == pytest.approx(reference[2], rel=1e-8)


@pytest.mark.parametrize("norm", ["phase", "delay", "mag"])
@pytest.mark.parametrize("order", [1, 3, 6, 10])
def test_bessel_natural_norms_match_scipy(norm, order):
    _, poles, _ = lowpass_prototype("bessel", order, bessel_norm=norm,
                                    normalisation="natural")
    # scipy.signal.bessel with the same explicit norm (reference library).
    _, reference, _ = signal.bessel(order, 1.0, analog=True, output="zpk", norm=norm)
    assert_same_roots(poles, reference, rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("ripple", [0.1, 0.5, 1.0, 2.0, 3.0])
@pytest.mark.parametrize("order", [1, 2, 5, 8, 12])
def test_chebyshev1_cutoff_is_closed_form_half_power_point(ripple, order):
    # −3 dB / ripple-edge ratio cosh(acosh(1/ε)/n), ε² = 10^(rp/10) − 1:
    # Williams & Taylor, Chebyshev section (common practice).
    epsilon = math.sqrt(10.0 ** (ripple / 10.0) - 1.0)
    ratio = math.cosh(math.acosh(1.0 / epsilon) / order)
    _, poles, _ = lowpass_prototype("chebyshev1", order, ripple_db=ripple)
    _, reference, _ = signal.cheby1(order, ripple, 1.0 / ratio, analog=True, output="zpk")
    assert_same_roots(poles, reference, rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("attenuation", [20.0, 40.0, 60.0])
@pytest.mark.parametrize("order", [1, 2, 5, 9, 12])
def test_chebyshev2_cutoff_is_closed_form_half_power_point(attenuation, order):
    # |H|² = ε²T²/(1+ε²T²) with 1/ε² = 10^(As/10) − 1, so −3 dB where
    # T_n(1/ω) = 1/ε (common practice, no source).
    inv_epsilon = math.sqrt(10.0 ** (attenuation / 10.0) - 1.0)
    ratio = 1.0 / math.cosh(math.acosh(inv_epsilon) / order)
    zeros, poles, _ = lowpass_prototype("chebyshev2", order, attenuation_db=attenuation)
    rz, rp, _ = signal.cheby2(order, attenuation, 1.0 / ratio, analog=True, output="zpk")
    assert_same_roots(poles, rp, rtol=1e-9, atol=1e-12)
    assert_same_roots(zeros, rz, rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("order", [1, 2, 3, 6, 9, 12])
def test_elliptic_edges_match_scipy(order):
    zeros, poles, _ = lowpass_prototype("elliptic", order, ripple_db=0.5,
                                        attenuation_db=50.0, normalisation="passband_edge")
    # scipy.signal.ellip designs at the ripple edge (reference library).
    rz, rp, _ = signal.ellip(order, 0.5, 50.0, 1.0, analog=True, output="zpk")
    assert_same_roots(poles, rp, rtol=1e-9, atol=1e-12)
    assert_same_roots(zeros, rz, rtol=1e-9, atol=1e-12)


def test_chebyshev2_stopband_edge_matches_scipy():
    zeros, poles, _ = lowpass_prototype("chebyshev2", 5, attenuation_db=40.0,
                                        normalisation="stopband_edge")
    # scipy.signal.cheby2 designs at the stop-band edge (reference library).
    rz, rp, _ = signal.cheby2(5, 40.0, 1.0, analog=True, output="zpk")
    assert_same_roots(poles, rp, rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("order", [2, 4, 6, 8, 12])
def test_linkwitz_riley_is_squared_butterworth_with_minus6_db_at_corner(order):
    zeros, poles, k = lowpass_prototype("linkwitz-riley", order)
    corner = (math.sqrt(2.0) + 1.0) ** (1.0 / order)
    # Linkwitz (JAES 1976): Butterworth of order n/2, squared (reference library
    # scipy.signal.butter for the Butterworth).
    _, half, _ = signal.butter(order // 2, corner, analog=True, output="zpk")
    assert_same_roots(poles, np.concatenate([half, half]), rtol=1e-9, atol=1e-12)
    _, h = signal.freqs_zpk(zeros, poles, k, worN=[corner])
    # −6.0206 dB (|H| = 1/2) at the Butterworth corner (Linkwitz 1976).
    assert abs(h[0]) == pytest.approx(0.5, rel=1e-9)


# ---------------------------------------------------------------------------
# Every target's −3 dB point is at its cutoff

FAMILIES = [
    ("butterworth", {}),
    ("chebyshev1", {"ripple_db": 0.5}),
    ("chebyshev1", {"ripple_db": 1.0}),
    ("chebyshev1", {"ripple_db": 3.0}),
    ("chebyshev1", {"ripple_db": HALF_POWER_LOSS_DB}),
    ("chebyshev2", {"attenuation_db": 40.0}),
    ("bessel", {}),
    ("elliptic", {"ripple_db": 1.0, "attenuation_db": 60.0}),
    ("elliptic", {"ripple_db": 0.1, "attenuation_db": 30.0}),
    ("linkwitz-riley", {}),
]


@pytest.mark.parametrize("name, levels", FAMILIES)
@pytest.mark.parametrize("order", [1, 2, 3, 4, 5, 6, 8, 10, 12])
@pytest.mark.parametrize("response", ["lowpass", "highpass"])
def test_half_power_point_is_at_cutoff(name, levels, order, response):
    if name == "linkwitz-riley" and order % 2:
        pytest.skip("linkwitz-riley orders are even")
    cutoff_hz = 1234.5
    target = design_target(name, order, response=response, frequency_hz=cutoff_hz, **levels)
    found = half_power_frequency(target, TWO_PI * cutoff_hz)
    # Definition of cutoff used throughout placer: 0.01 % in frequency.
    assert found == pytest.approx(TWO_PI * cutoff_hz, rel=1e-4)
    h = abs(target.frequency_response([TWO_PI * cutoff_hz])[0])
    assert h == pytest.approx(HALF_POWER, rel=1e-8)


@pytest.mark.parametrize("name, levels", FAMILIES[:8])
def test_bandpass_half_power_edges(name, levels):
    target = target_from_table({"approximation": name, "order": 4, "response": "bandpass",
                                "low_edge": "1 kHz", "high_edge": "4 kHz",
                                **{k[:-3]: v for k, v in levels.items()}})
    h = np.abs(target.frequency_response([TWO_PI * 1e3, TWO_PI * 4e3]))
    # The prototype's −3 dB point maps to both band edges (lp2bp, common practice).
    assert_allclose(h, HALF_POWER, rtol=1e-8)
    assert target.reference_omega == pytest.approx(TWO_PI * 2e3, rel=1e-12)


def test_chebyshev_ripple_and_gain_level():
    target = target_from_table({"approximation": "chebyshev1", "order": 4, "ripple": "1 dB",
                                "passband_edge": "1 kHz", "gain": "6 dB"})
    omega = TWO_PI * np.linspace(0.0, 1e3, 4001)
    level_db = 20 * np.log10(np.abs(target.frequency_response(omega)))
    # Equiripple between gain − ripple and gain (Chebyshev definition).
    assert level_db.max() == pytest.approx(6.0, abs=1e-6)
    assert level_db.min() == pytest.approx(5.0, abs=1e-6)
    assert level_db[-1] == pytest.approx(5.0, abs=1e-9)
    # Even order: DC sits at the bottom of the ripple.
    assert target.gain_db == pytest.approx(5.0, abs=1e-12)


@pytest.mark.parametrize("name", ["butterworth", "chebyshev1", "chebyshev2", "elliptic",
                                  "bessel", "linkwitz-riley"])
@pytest.mark.parametrize("response", ["lowpass", "highpass"])
def test_mask_targets_meet_ripple_and_attenuation(name, response):
    # A mask even a Bessel can meet: 1 dB to 1 kHz, 25 dB from 5 kHz.
    if response == "lowpass":
        edges = {"passband_edge": "1 kHz", "stopband_edge": "5 kHz"}
        passband = TWO_PI * np.logspace(0, 3, 2000)
        stopband = TWO_PI * np.logspace(np.log10(5e3), 7, 4000)
    else:
        edges = {"passband_edge": "5 kHz", "stopband_edge": "1 kHz"}
        passband = TWO_PI * np.logspace(np.log10(5e3), 7, 2000)
        stopband = TWO_PI * np.logspace(0, 3, 4000)
    target = target_from_table({"approximation": name, "response": response, "ripple": 1.0,
                                "attenuation": 25.0, **edges})
    loss = -20 * np.log10(np.abs(target.frequency_response(np.concatenate([passband, stopband]))))
    assert loss[:len(passband)].max() <= 1.0 + 1e-9
    assert loss[len(passband):].min() >= 25.0 - 1e-9
    # The pass-band edge loses exactly the ripple (the design meets it there).
    edge = TWO_PI * (1e3 if response == "lowpass" else 5e3)
    assert -20 * np.log10(abs(target.frequency_response([edge])[0])) == pytest.approx(1.0, abs=1e-9)


# ---------------------------------------------------------------------------
# Bessel normalisations as frequency meanings


def test_bessel_delay_norm_sets_dc_group_delay():
    target = target_from_table({"approximation": "bessel", "order": 5, "cutoff": "1 kHz",
                                "bessel_norm": "delay"})
    omega = np.array([1e-3, 2e-3]) * TWO_PI * 1e3
    phase = np.unwrap(np.angle(target.frequency_response(omega)))
    delay = -(phase[1] - phase[0]) / (omega[1] - omega[0])
    # scipy.signal.bessel norm="delay": group delay 1/Wn at DC (reference library docs).
    assert delay == pytest.approx(1.0 / (TWO_PI * 1e3), rel=1e-5)


def test_bessel_phase_norm_matches_butterworth_asymptote():
    target = target_from_table({"approximation": "bessel", "order": 4, "cutoff": 500.0,
                                "bessel_norm": "phase"})
    omega = TWO_PI * 500.0 * 1e4
    # scipy.signal.bessel docs, norm="phase": the magnitude asymptotes are those
    # of a Butterworth of the same order with cutoff Wn, i.e. (ωc/ω)^n.
    assert abs(target.frequency_response([omega])[0]) == pytest.approx(1e-16, rel=1e-6)


def test_bessel_allpass_is_delay_equaliser():
    target = target_from_table({"approximation": "bessel", "order": 3, "cutoff": "1 kHz",
                                "response": "allpass", "bessel_norm": "delay"})
    omega = TWO_PI * np.logspace(0, 5, 50)
    assert_allclose(np.abs(target.frequency_response(omega)), 1.0, rtol=1e-12)
    assert_allclose(sorted_roots(target.zeros), sorted_roots(-np.conj(target.poles)), atol=1e-9)
    w = np.array([1e-3, 2e-3]) * TWO_PI * 1e3
    phase = np.unwrap(np.angle(target.frequency_response(w)))
    # An allpass doubles its low-pass's phase, so twice the DC delay (common practice).
    assert -(phase[1] - phase[0]) / (w[1] - w[0]) == pytest.approx(2 / (TWO_PI * 1e3), rel=1e-5)
    assert target.frequency_response([0.0])[0].real == pytest.approx(1.0, rel=1e-12)


# ---------------------------------------------------------------------------
# Order estimation

MASKS = [
    ("lowpass", 1000.0, 1.0, 2000.0, 40.0),
    ("lowpass", 1000.0, 0.5, 1300.0, 60.0),
    ("lowpass", 50.0, 3.0, 500.0, 20.0),
    ("highpass", 2000.0, 0.1, 500.0, 50.0),
    ("highpass", 1e4, 1.0, 7e3, 25.0),
    ("bandpass", (1000.0, 2000.0), 1.0, (700.0, 3000.0), 35.0),
    ("bandpass", (1e4, 1.2e4), 0.5, (9e3, 1.35e4), 45.0),
]


@pytest.mark.parametrize("response, wp, rp, ws, rs", MASKS)
def test_orders_agree_with_scipy(response, wp, rp, ws, rs):
    found = {e.approximation: e for e in estimate_orders(wp, rp, ws, rs, response=response)}
    # scipy.signal buttord / cheb1ord / cheb2ord / ellipord, analog=True.
    assert found["butterworth"].order == signal.buttord(wp, ws, rp, rs, analog=True)[0]
    assert found["chebyshev1"].order == signal.cheb1ord(wp, ws, rp, rs, analog=True)[0]
    assert found["chebyshev2"].order == signal.cheb2ord(wp, ws, rp, rs, analog=True)[0]
    assert found["elliptic"].order == signal.ellipord(wp, ws, rp, rs, analog=True)[0]
    for estimate in found.values():
        if estimate.stopband_attenuation_db is not None:
            assert estimate.stopband_attenuation_db >= rs - 1e-6


@pytest.mark.parametrize("response, wp, rp, ws, rs", [m for m in MASKS if m[0] != "bandpass"])
def test_butterworth_cutoff_matches_buttord(response, wp, rp, ws, rs):
    (estimate,) = [e for e in estimate_orders(wp, rp, ws, rs, response=response)
                   if e.approximation == "butterworth"]
    if estimate.order > 12:
        assert estimate.cutoff_hz is None  # beyond the design range: no design
        return
    # scipy.signal.buttord's Wn is the −3 dB frequency meeting gpass at wp.
    assert estimate.cutoff_hz == pytest.approx(
        float(signal.buttord(wp, ws, rp, rs, analog=True)[1]), rel=1e-9)


def test_chebyshev2_cutoff_matches_cheb2ord():
    order, stop_edge = signal.cheb2ord(1000.0, 2000.0, 1.0, 40.0, analog=True)
    (estimate,) = [e for e in estimate_orders(1000.0, 1.0, 2000.0, 40.0)
                   if e.approximation == "chebyshev2"]
    # cheb2ord's Wn is the stop-band edge; the −3 dB point follows from
    # T_n(ws/w) = sqrt(10^(As/10) − 1) (common practice, no source).
    expected = stop_edge / math.cosh(math.acosh(math.sqrt(10 ** 4.0 - 1)) / order)
    assert estimate.cutoff_hz == pytest.approx(float(expected), rel=1e-9)


@pytest.mark.parametrize("wp, rp, ws, rs", [(1e3, 3.0, 4e3, 20.0), (1e3, 1.0, 5e3, 25.0),
                                            (1e3, 1.0, 5e3, 30.0), (1e3, 3.0, 3e3, 15.0)])
def test_bessel_order_is_lowest_meeting_mask(wp, rp, ws, rs):
    order = estimate_order("bessel", wp, rp, ws, rs).order
    assert order is not None

    def attenuation(n):
        # scipy.signal.bessel(norm="mag") as the reference library.
        z, p, k = signal.bessel(n, 1.0, analog=True, output="zpk", norm="mag")
        loss = lambda w: -20 * np.log10(abs(signal.freqs_zpk(z, p, k, worN=[w])[1][0]))
        w_pass = optimize.brentq(lambda w: loss(w) - rp, 1e-6, 1.0)
        return loss(w_pass * ws / wp)

    assert attenuation(order) >= rs
    if order > 1:
        assert attenuation(order - 1) < rs


def test_bessel_order_none_when_mask_too_steep():
    assert estimate_order("bessel", 1e3, 0.1, 1.1e3, 60.0).order is None


def test_estimate_orders_rejects_wrong_side():
    with pytest.raises(SpecError, match=r"stopband_edge = 900 Hz.*passband_edge = 1000 Hz"):
        estimate_orders(1000.0, 1.0, 900.0, 40.0)


def test_band_from_edges():
    assert band_from_edges(100.0, 400.0) == (200.0, 300.0)


# ---------------------------------------------------------------------------
# Section factoring


def product_response(sections, omega):
    return np.prod([s.frequency_response(omega) for s in sections], axis=0)


def dense_grid(target):
    magnitudes = [abs(r) for r in target.poles + target.zeros if r != 0]
    grid = np.logspace(np.log10(min(magnitudes)) - 2, np.log10(max(magnitudes)) + 2, 20001)
    # DC and a far high frequency stand in for the response's two limits.
    limits = [0.0, 1e6 * max(magnitudes)]
    return np.sort(np.concatenate([grid, limits, [abs(p.imag) for p in target.poles if p.imag]]))


TARGETS = [
    ("butterworth", 6, {}),
    ("chebyshev1", 7, {"ripple_db": 1.0}),
    ("chebyshev2", 6, {"attenuation_db": 50.0}),
    ("elliptic", 5, {"ripple_db": 0.5, "attenuation_db": 60.0}),
    ("bessel", 8, {}),
    ("linkwitz-riley", 4, {}),
]


def build(name, order, levels, response):
    if response in ("bandpass", "bandstop"):
        return design_target(name, order, response=response, center_hz=1e3,
                             bandwidth_hz=400.0, **levels)
    return design_target(name, order, response=response, frequency_hz=1e3, **levels)


@pytest.mark.parametrize("name, order, levels", TARGETS)
@pytest.mark.parametrize("response", ["lowpass", "highpass", "bandpass", "bandstop", "allpass"])
@pytest.mark.parametrize("rule", ["headroom", "first", "equal"])
def test_sections_multiply_to_target(name, order, levels, response, rule):
    target = build(name, order, levels, response)
    sections = split_sections(target, gain=rule)
    omega = dense_grid(target)[::20]
    expected = target.frequency_response(omega)
    # Same transfer function: relative to the response's peak.
    assert_allclose(product_response(sections, omega), expected,
                    rtol=1e-8, atol=1e-9 * np.max(np.abs(expected)))
    assert sum(s.order for s in sections) == target.order
    if response in ("lowpass", "allpass", "bandstop"):
        # Every section quotes its gain at DC, where the target does.
        assert math.prod(s.gain for s in sections) == pytest.approx(target.gain, rel=1e-9)
    if response == "bandpass":
        assert [s.kind for s in sections].count("bandpass") + \
            [s.kind for s in sections].count("notch") == order


@pytest.mark.parametrize("name, order, levels", TARGETS)
def test_highpass_all_pole_gains_multiply_to_target_gain(name, order, levels):
    if "attenuation_db" in levels:
        pytest.skip("notch sections quote their gain at DC, not at HF")
    target = build(name, order, levels, "highpass")
    sections = split_sections(target, gain="equal")
    assert {s.kind for s in sections} == {"highpass"}
    assert math.prod(s.gain for s in sections) == pytest.approx(target.gain, rel=1e-9)


@pytest.mark.parametrize("name, order, levels", TARGETS)
@pytest.mark.parametrize("response", ["lowpass", "highpass", "bandpass"])
def test_headroom_rule(name, order, levels, response):
    target = build(name, order, levels, response)
    sections = split_sections(target, gain="headroom", ordering="ascending-q")
    omega = dense_grid(target)
    output_peak = np.max(np.abs(product_response(sections, omega)))
    for i in range(1, len(sections)):
        node_peak = np.max(np.abs(product_response(sections[:i], omega)))
        # No internal node peaks above the output (dynamic-range scaling,
        # Schaumann & Van Valkenburg ch. 6); it reaches it to grid accuracy.
        assert node_peak <= output_peak * (1 + 1e-6)
        assert node_peak == pytest.approx(output_peak, rel=1e-3)


@pytest.mark.parametrize("name, order, levels", TARGETS)
def test_orderings(name, order, levels):
    target = build(name, order, levels, "lowpass")
    ascending = [s.q or 0.0 for s in split_sections(target)]
    assert ascending == sorted(ascending)
    descending = [s.q or 0.0 for s in split_sections(target, ordering="descending-q")]
    assert descending == sorted(descending, reverse=True)
    given = split_sections(target, ordering="as-given")
    first_pole = [min(i for i, p in enumerate(target.poles)
                      if any(abs(p - q) < 1e-9 * abs(p) for q in s.poles)) for s in given]
    assert first_pole == sorted(first_pole)


def test_first_gain_rule_puts_all_gain_first():
    target = design_target("butterworth", 4, frequency_hz=1e3, gain_db=20.0)
    gains = [s.gain for s in split_sections(target, gain="first")]
    assert gains == pytest.approx([10.0, 1.0], rel=1e-12)
    equal = [s.gain for s in split_sections(target, gain="equal")]
    assert equal == pytest.approx([math.sqrt(10.0)] * 2, rel=1e-12)


def test_notch_zeros_pair_with_nearest_pole_pair():
    # Hand-made target: pole pairs at 1 and 10 rad/s, notch zeros at 1.2 and 12.
    low = make_section("notch", 1.0, 5.0, zero_omega=1.2)
    high = make_section("notch", 10.0, 0.7, zero_omega=12.0)
    target = Target(poles=high.poles + low.poles, zeros=low.zeros + high.zeros,
                    gain=1.0, response="lowpass")
    sections = split_sections(target)
    assert [(s.kind, s.omega0, s.zero_omega) for s in sections] == [
        ("notch", pytest.approx(10.0), pytest.approx(12.0)),
        ("notch", pytest.approx(1.0), pytest.approx(1.2)),
    ]


def test_elliptic_notch_pairing_is_nearest():
    target = design_target("elliptic", 6, frequency_hz=1.0 / TWO_PI, ripple_db=1.0,
                           attenuation_db=50.0)
    sections = split_sections(target)
    assert [s.kind for s in sections] == ["notch"] * 3
    # Nearest-pairing for an elliptic low-pass puts the lowest zero with the
    # highest-Q pole, and so on up (Williams & Taylor, elliptic section; from memory).
    by_q = sorted(sections, key=lambda s: -s.q)
    assert [s.zero_omega for s in by_q] == sorted(s.zero_omega for s in sections)
    for section in sections:
        # Each notch zero lies above its own poles' ω0 in a low-pass (common practice).
        assert section.zero_omega > section.omega0


def test_wide_bandpass_pairs_real_poles_into_one_section():
    # Butterworth order 3 over 100 Hz - 10 kHz: the real prototype pole
    # becomes two real poles, which must share one band-pass section.
    target = target_from_table({"approximation": "butterworth", "order": 3,
                                "response": "bandpass", "low_edge": 100.0,
                                "high_edge": 1e4})
    assert sum(1 for p in target.poles if p.imag == 0) == 2
    sections = split_sections(target)
    assert [s.kind for s in sections] == ["bandpass"] * 3
    assert min(s.q for s in sections) < 0.5


def test_odd_order_has_one_first_order_section():
    for name in ("butterworth", "bessel", "chebyshev1"):
        sections = split_sections(design_target(name, 7, frequency_hz=1e3, ripple_db=(
            1.0 if name == "chebyshev1" else None)))
        assert [s.order for s in sections].count(1) == 1


def test_allpass_sections_are_allpass():
    target = design_target("bessel", 5, response="allpass", frequency_hz=1e3)
    sections = split_sections(target)
    assert {s.kind for s in sections} == {"allpass"}
    omega = TWO_PI * np.logspace(0, 5, 200)
    for s in sections:
        assert_allclose(np.abs(s.frequency_response(omega)), s.gain, rtol=1e-12)


def test_section_transfer_coefficients():
    lp = make_section("lowpass", 1000.0, 0.5, gain=2.0)
    num, den = lp.transfer_coefficients()
    # H = G·ω0²/(s² + (ω0/Q)s + ω0²) (common practice).
    assert_allclose(den, [1.0, 2000.0, 1e6], rtol=1e-12)
    assert_allclose(num, [0.0, 0.0, 2e6], rtol=1e-12)
    bp = make_section("bandpass", 100.0, 10.0, gain=3.0)
    assert abs(bp.frequency_response([100.0])[0]) == pytest.approx(3.0, rel=1e-12)
    hp = make_section("highpass", 50.0, gain=0.5)
    assert_allclose(hp.transfer_coefficients().numerator, [0.5, 0.0], atol=1e-15)
    ap = make_section("allpass", 10.0)
    # First-order allpass (ω0 − s)/(ω0 + s), +1 at DC (common practice).
    assert_allclose(ap.transfer_coefficients().numerator, [-1.0, 10.0], rtol=1e-12)
    notch = make_section("notch", 1000.0, 2.0, zero_omega=2000.0, gain=1.0)
    assert_allclose(notch.transfer_coefficients().numerator, [0.25, 0.0, 1e6], rtol=1e-12)
    assert notch.zero_f0_hz == pytest.approx(2000.0 / TWO_PI)
    assert lp.f0_hz == pytest.approx(1000.0 / TWO_PI) and lp.zero_f0_hz is None


def test_section_rejects_bad_shapes():
    with pytest.raises(SpecError, match="first-order"):
        Section("bandpass", 1, 1.0, None, 1.0, None, (-1.0,), (0.0,))
    with pytest.raises(SpecError, match="kind = 'lowpas'"):
        make_section("lowpas", 1.0, 0.7)


def test_split_rejects_zero_that_fits_no_section():
    target = target_from_roots([-1.0, -10.0], [-3.0], gain_db=0.0)
    with pytest.raises(SpecError, match=r"zero \(-3\+0j\)"):
        split_sections(target)


# ---------------------------------------------------------------------------
# Target basics and explicit roots


def test_target_zpk_gain_at_reference():
    target = design_target("chebyshev1", 3, response="highpass", frequency_hz=100.0,
                           ripple_db=1.0, gain_db=12.0)
    z, p, k = target.zpk()
    assert k == pytest.approx(10 ** 0.6, rel=1e-12)
    assert abs(target.frequency_response([1e9])[0]) == pytest.approx(10 ** 0.6, rel=1e-6)
    odd_allpass = design_target("butterworth", 3, response="allpass", frequency_hz=1.0)
    assert odd_allpass.zpk().k < 0
    assert odd_allpass.frequency_response([0.0])[0].real == pytest.approx(1.0)


def test_reference_for_custom_with_origin_zero():
    # Zero at the origin and excess poles: DC and HF gains are both zero.
    omega = reference_omega_for("custom", [-1.0, -100.0], [0.0])
    assert omega == pytest.approx(10.0, rel=1e-12)


def test_roots_in_hz_and_rad_per_s_agree():
    hz = target_from_table({"poles": [[-100, 200], [-100, -200], -50], "units": "Hz",
                            "gain": 3})
    rad = target_from_table({"poles": [[-200 * math.pi, 400 * math.pi],
                                       [-200 * math.pi, -400 * math.pi], -100 * math.pi],
                             "units": "rad/s", "gain": "3 dB"})
    assert_allclose(sorted_roots(hz.poles), sorted_roots(rad.poles), rtol=1e-12)
    assert hz.gain_db == pytest.approx(3.0) and rad.gain_db == pytest.approx(3.0)
    assert hz.response == "custom" and hz.reference_omega == 0.0


def test_complete_conjugates_and_allow_unstable():
    t = target_from_table({"poles": [[-1, 2]], "units": "rad/s", "complete_conjugates": True})
    assert_allclose(sorted_roots(t.poles), [-1 - 2j, -1 + 2j])
    u = target_from_table({"poles": [0.5, -2.0], "units": "rad/s", "allow_unstable": True})
    assert 0.5 in u.poles


def test_sections_table():
    t = target_from_table({"sections": [{"f0": "1 kHz", "q": 0.7071},
                                        {"f0": "2 kHz"},
                                        {"f0": "3 kHz", "q": 2, "zero_f0": "5 kHz"}],
                           "gain": "6 dB"})
    assert t.order == 5 and t.gain_db == pytest.approx(6.0)
    kinds = sorted(s.kind for s in split_sections(t))
    assert kinds == ["lowpass", "lowpass", "notch"]
    assert abs(t.frequency_response([0.0])[0]) == pytest.approx(10 ** 0.3, rel=1e-12)
    assert abs(t.frequency_response([TWO_PI * 5e3])[0]) < 1e-9


def test_target_from_sections_roundtrip():
    target = design_target("chebyshev1", 5, frequency_hz=1e3, ripple_db=0.5, gain_db=6.0)
    sections = split_sections(target)
    rebuilt = target_from_sections(sections, gain_db=target.gain_db, response="lowpass")
    omega = TWO_PI * np.logspace(1, 5, 100)
    assert_allclose(rebuilt.frequency_response(omega), target.frequency_response(omega),
                    rtol=1e-9)


def test_target_to_dict_is_json():
    target = design_target("elliptic", 3, response="highpass", frequency_hz=1e3,
                           ripple_db=1.0, attenuation_db=40.0)
    data = target_to_dict(target)
    text = json.dumps(data, allow_nan=False)
    back = json.loads(text)
    assert back["reference_frequency_hz"] is None
    assert len(back["poles"]) == 3 and all(len(r) == 2 for r in back["poles"])
    assert {s["kind"] for s in back["sections"]} == {"highpass", "notch"}
    first = next(s for s in back["sections"] if s["order"] == 1)
    assert first["q"] is None and first["zero_f0_hz"] is None
    notch = next(s for s in back["sections"] if s["kind"] == "notch")
    assert notch["zero_f0_hz"] < notch["f0_hz"]


# ---------------------------------------------------------------------------
# Bad input: each names the key and the value


def spec_error(table):
    with pytest.raises(SpecError) as info:
        target_from_table(table, source="filter.toml")
    message = str(info.value)
    assert message.startswith("filter.toml")
    return message


def test_order_out_of_range():
    message = spec_error({"approximation": "butterworth", "order": 13, "cutoff": 1e3})
    assert "order" in message and "13" in message
    message = spec_error({"approximation": "butterworth", "order": 0, "cutoff": 1e3})
    assert "order" in message and "0" in message


def test_non_integer_order():
    message = spec_error({"approximation": "butterworth", "order": 2.5, "cutoff": 1e3})
    assert "order" in message and "2.5" in message


def test_non_positive_cutoff():
    message = spec_error({"approximation": "butterworth", "order": 2, "cutoff": "-1 kHz"})
    assert "cutoff" in message and "-1 kHz" in message
    message = spec_error({"approximation": "butterworth", "order": 2, "cutoff": 0})
    assert "cutoff" in message and "= 0" in message


def test_non_positive_ripple():
    message = spec_error({"approximation": "chebyshev1", "order": 2, "cutoff": 1e3,
                          "ripple": "0 dB"})
    assert "ripple" in message and "0 dB" in message


def test_non_positive_attenuation():
    message = spec_error({"approximation": "chebyshev2", "order": 2, "cutoff": 1e3,
                          "attenuation": -40})
    assert "attenuation" in message and "-40" in message


def test_stopband_edge_on_wrong_side_lowpass():
    message = spec_error({"approximation": "elliptic", "passband_edge": "1 kHz",
                          "stopband_edge": "800 Hz", "ripple": 1, "attenuation": 40})
    assert "stopband_edge = 800 Hz" in message and "passband_edge = 1000 Hz" in message


def test_stopband_edge_on_wrong_side_highpass():
    message = spec_error({"approximation": "butterworth", "response": "highpass",
                          "passband_edge": "1 kHz", "stopband_edge": "2 kHz",
                          "ripple": 1, "attenuation": 40})
    assert "stopband_edge = 2000 Hz" in message and "below" in message


def test_odd_linkwitz_riley():
    message = spec_error({"approximation": "linkwitz-riley", "order": 3, "cutoff": 1e3})
    assert "order = 3" in message and "linkwitz-riley" in message and "even" in message


def test_lone_complex_pole():
    message = spec_error({"poles": [[-1, 2]], "units": "rad/s"})
    assert "pole (-1+2j) rad/s has no conjugate; give both or set complete_conjugates = true" \
        in message


def test_right_half_plane_pole():
    message = spec_error({"poles": [[1, 2], [1, -2]], "units": "Hz"})
    assert "(1+2j) Hz" in message and "allow_unstable" in message


def test_unknown_approximation_suggests_nearest():
    message = spec_error({"approximation": "buterworth", "order": 2, "cutoff": 1e3})
    assert "approximation = 'buterworth'" in message and "did you mean 'butterworth'" in message


def test_unknown_key_suggests_nearest():
    message = spec_error({"approximation": "butterworth", "order": 2, "cutof": 1e3})
    assert "cutof = 1000.0" in message and "did you mean 'cutoff'" in message


def test_unknown_section_key():
    message = spec_error({"sections": [{"f0": 1e3, "qq": 1}]})
    assert "sections[0].qq = 1" in message and "did you mean 'q'" in message


def test_key_without_meaning_is_rejected():
    message = spec_error({"approximation": "butterworth", "order": 2, "cutoff": 1e3,
                          "ripple": "1 dB"})
    assert "ripple = '1 dB'" in message and "no meaning" in message


def test_cutoff_with_deep_ripple_is_ambiguous():
    message = spec_error({"approximation": "chebyshev1", "order": 3, "cutoff": 1e3,
                          "ripple": 4})
    assert "4 dB" in message and "passband_edge" in message


def test_order_below_mask_requirement():
    message = spec_error({"approximation": "elliptic", "order": 3, "passband_edge": 1e3,
                          "stopband_edge": 1.5e3, "ripple": 1, "attenuation": 40})
    needed = signal.ellipord(1e3, 1.5e3, 1, 40, analog=True)[0]  # scipy.signal reference
    assert "order = 3" in message and f"order {needed}" in message


def test_units_required_with_poles():
    message = spec_error({"poles": [-1.0]})
    assert "units" in message and "Hz" in message


def test_unknown_response_suggests_nearest():
    message = spec_error({"approximation": "butterworth", "order": 2, "cutoff": 1e3,
                          "response": "low-pass"})
    assert "response = 'low-pass'" in message and "'lowpass'" in message


def test_mask_estimates_order():
    target = target_from_table({"approximation": "chebyshev1", "passband_edge": "1 kHz",
                                "stopband_edge": "2 kHz", "ripple": "1 dB",
                                "attenuation": "40 dB"})
    # scipy.signal.cheb1ord (reference library).
    assert target.order == signal.cheb1ord(1e3, 2e3, 1, 40, analog=True)[0]
