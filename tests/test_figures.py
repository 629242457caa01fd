"""Response figures read from one reference: the pass-band peak.

Outside references, named beside each check:

* scipy.signal.freqs_zpk (reference library) on the target's roots, for
  the half-power level below the peak;
* the crests of an even-order Chebyshev I low-pass sit where the Chebyshev
  polynomial T_n vanishes, ω = ω_p·cos((2k − 1)π/(2n)) (Williams and
  Taylor, Electronic Filter Design Handbook, Chebyshev response; from
  memory);
* a geometric band-pass transform puts its edges at f_low·f_high = f0² with
  f_high − f_low the prototype's bandwidth (standard filter-design texts,
  e.g. Schaumann and Van Valkenburg, Design of Analog Filters; from memory);
* a notch passes a step's edge straight through, y(0+) = H(∞) (initial-value
  theorem, derived by hand).
"""

import math

import control
import numpy as np
import pytest
from scipy import optimize, signal

from placer.evidence.gather import Evidence
from placer.report.console import evidence_text, fmt_edges, fmt_peak_at
from placer.analysis.response import Response
from placer.target.targets import design_target
from placer.evidence.figures import HALF_POWER_DB, frequency_figures, step_figures
from placer.evidence.verify import verify

TWO_PI = 2 * math.pi


def _response(target):
    z, p, k = target.zpk()
    return Response.from_zpk(z, p, k)


def _half_power_below_peak_hz(target, low_hz, high_hz):
    """Independent: brentq on scipy.signal.freqs_zpk for peak − 3.0103 dB."""
    z, p, k = target.zpk()
    grid = np.geomspace(low_hz / 100, high_hz * 100, 20001) * TWO_PI
    peak = np.max(np.abs(signal.freqs_zpk(z, p, k, worN=grid)[1]))

    def excess(f):
        h = signal.freqs_zpk(z, p, k, worN=[TWO_PI * f])[1][0]
        return 20 * math.log10(abs(h) / peak) + 10 * math.log10(2)
    return optimize.brentq(excess, low_hz, high_hz, xtol=1e-9)


@pytest.mark.parametrize("name, order, levels, cutoff_hz", [
    ("chebyshev1", 4, {"ripple_db": 1.0}, 12e3),
    ("chebyshev1", 6, {"ripple_db": 2.0}, 830.0),
    ("elliptic", 4, {"ripple_db": 0.5, "attenuation_db": 35.0}, 4.7e3),
])
def test_even_order_minus_3_db_is_measured_from_the_peak(name, order, levels, cutoff_hz):
    target = design_target(name, order, frequency_hz=cutoff_hz, **levels)
    figures = frequency_figures(_response(target))
    # an even-order elliptic keeps a finite gain at high frequency, 35 dB down: still
    # a low-pass, not a band-stop (scipy.signal.ellip's design is a low-pass)
    assert figures.kind == "lowpass"
    # DC sits a ripple below the peak, so the old reading (3 dB under DC) was high
    assert figures.gain_db == pytest.approx(-levels["ripple_db"], abs=1e-9)
    assert figures.peak_db == pytest.approx(0.0, abs=1e-9)
    assert figures.f3db_hz == pytest.approx(cutoff_hz, rel=1e-7)
    independent = _half_power_below_peak_hz(target, 0.9 * cutoff_hz, 1.1 * cutoff_hz)
    assert figures.f3db_hz == pytest.approx(independent, rel=1e-7)
    assert HALF_POWER_DB == pytest.approx(10 * math.log10(2), rel=1e-15)


@pytest.mark.parametrize("cutoff_hz", [12e3, 12.0007e3, 7.3e3, 333.0])
def test_chebyshev_peak_is_its_lowest_crest_whatever_the_scale(cutoff_hz):
    n, ripple = 4, 1.0
    target = design_target("chebyshev1", n, frequency_hz=cutoff_hz, ripple_db=ripple)
    figures = frequency_figures(_response(target))
    # Ripple edge of this design: the cutoff over cosh(acosh(1/ε)/n)
    # (Chebyshev I, Williams and Taylor; from memory).
    epsilon = math.sqrt(10 ** (ripple / 10) - 1)
    edge = cutoff_hz / math.cosh(math.acosh(1 / epsilon) / n)
    lowest_crest = edge * math.cos(3 * math.pi / (2 * n))
    assert figures.peak_hz == pytest.approx(lowest_crest, rel=1e-5)


def test_highpass_peak_is_not_at_dc():
    butterworth = design_target("butterworth", 3, response="highpass", frequency_hz=90.0)
    figures = frequency_figures(_response(butterworth))
    assert figures.peak_hz is None          # the high-frequency limit
    assert fmt_peak_at(figures.peak_hz) == "high freq."
    assert fmt_peak_at(0.0) == "DC"
    # An even-order Chebyshev high-pass: crests at ω_p / cos((2k − 1)π/(2n)); the
    # lowest one is k = 1 (Williams and Taylor; from memory).
    n, ripple, cutoff = 4, 0.5, 2.2e3
    chebyshev = design_target("chebyshev1", n, response="highpass", frequency_hz=cutoff,
                              ripple_db=ripple)
    figures = frequency_figures(_response(chebyshev))
    epsilon = math.sqrt(10 ** (ripple / 10) - 1)
    edge = cutoff * math.cosh(math.acosh(1 / epsilon) / n)
    assert figures.peak_hz == pytest.approx(edge / math.cos(math.pi / (2 * n)), rel=1e-5)
    assert figures.f3db_hz == pytest.approx(cutoff, rel=1e-7)


def test_bandpass_row_shows_both_edges_and_the_bandwidth():
    # A 6th-order Chebyshev band-pass, not one of the examples
    target = design_target("chebyshev1", 3, response="bandpass", center_hz=7.5e3,
                           bandwidth_hz=1.9e3, ripple_db=0.5)
    figures = frequency_figures(_response(target))
    assert figures.kind == "bandpass"
    # geometric transform: f_low·f_high = f0², f_high − f_low = bandwidth (standard texts)
    assert figures.band_low_hz * figures.band_high_hz == pytest.approx(7.5e3 ** 2, rel=1e-7)
    assert figures.bandwidth_hz == pytest.approx(1.9e3, rel=1e-7)
    text = fmt_edges(figures)
    assert "–" in text and "BW 1.9 kHz" in text
    verification = verify(_response(target), _response(target))
    shown = evidence_text(Evidence(verification=verification, sections=(), envelope={}))
    assert "BW 1.9 kHz" in shown


def test_notch_step_has_no_rise_time_and_a_note():
    omega = TWO_PI * 400.0
    notch = Response.from_sections([control.tf([1.0, 0.0, omega ** 2],
                                               [1.0, omega / 5.0, omega ** 2])])
    figures = step_figures(notch)
    # y(0+) = H(∞) = 1 = H(0): the output starts at its final value (derived by hand)
    assert figures.output[0] == pytest.approx(1.0, abs=1e-12)
    assert figures.rise_time_s is None
    assert any("rise time does not apply" in note for note in figures.notes)
    assert figures.settling_time_s is not None and figures.settling_time_s > 0
    verification = verify(notch, notch)
    # the step-response table is the second one with a "target" row
    row = [line for line in evidence_text(Evidence(
        verification=verification, sections=(), envelope={})).splitlines()
        if line.strip().startswith("target")][1]
    assert "n/a" in row and " 0 s" not in row


def test_bode_phases_share_one_branch():
    from placer.report.plots import bode_figure, common_phase_branch

    omega0 = TWO_PI * 1e3
    omega = omega0 * np.geomspace(1e-2, 1e2, 801)
    s = 1j * omega
    target = omega0 ** 2 / (s ** 2 + 2 ** 0.5 * omega0 * s + omega0 ** 2)
    # Two inverting builds of it: one as is, one with a lead pair that tips the
    # first point's angle to the other side of ±180°.
    plain = -1.0003 * target
    lead = -target * (s / (0.4 * omega0) + 1) / (s / (4 * omega0) + 1)

    def curve(h):
        return 20 * np.log10(np.abs(h)), np.degrees(np.unwrap(np.angle(h)))
    curves = {"target": curve(target), "preferred values": curve(plain),
              "continuous values": curve(lead)}
    # each unwrapped from its own start: 360° apart (numpy's unwrap, reference library)
    assert curves["preferred values"][1][0] - curves["continuous values"][1][0] == \
        pytest.approx(360.0, abs=2.0)
    aligned = common_phase_branch(curves, "target")
    assert aligned["target"][1][0] == pytest.approx(0.0, abs=1.0)
    for label in ("preferred values", "continuous values"):
        # an inverting build: 180° below the target, on the same branch
        assert aligned[label][1][0] == pytest.approx(-180.0, abs=2.0)
    gap = np.abs(aligned["preferred values"][1] - curves["target"][1] + 180.0)
    assert np.max(gap) < 0.1
    fig = bode_figure(omega / TWO_PI, curves, reference="target")
    lines = {line.get_label(): np.asarray(line.get_ydata(), float) for line in fig.axes[-1].lines}
    assert abs(lines["preferred values"][0] - lines["continuous values"][0]) < 2.0


def test_inverse_chebyshev_highpass_peak_and_step():
    # An inverse-Chebyshev high-pass rises monotonically to its high-frequency gain
    # (scipy.signal.cheby2's pass band is maximally flat, reference library), with a
    # finite DC gain 45 dB down.
    target = design_target("chebyshev2", 4, response="highpass", frequency_hz=1e3,
                           attenuation_db=45.0)
    response = _response(target)
    z, p, k = target.zpk()
    grid = TWO_PI * np.geomspace(1e3, 1e7, 2001)
    magnitude = np.abs(signal.freqs_zpk(z, p, k, worN=grid)[1])
    assert np.all(np.diff(magnitude) >= -1e-12)
    figures = frequency_figures(response)
    assert figures.kind == "highpass" and figures.peak_hz is None
    step = step_figures(response)
    # DC gain 10^(-45/20): relative overshoot and rise would be meaningless there
    assert step.final_value == pytest.approx(10 ** (-45 / 20), rel=1e-6)
    assert step.overshoot_pct is None and step.rise_time_s is None
    assert step.settling_time_s is not None
