"""The second-order readings against scipy.signal's roots and frequency response."""

import math

import numpy as np
import pytest
from scipy import signal

from placer.analysis.second_order import (
    dominant_pair,
    first_order_omega,
    omega0_q,
    pair_figures,
    passband_gain,
    zero_pair_omega,
)


@pytest.mark.parametrize("w0, q", [(1.0, 0.5), (2 * math.pi * 1e3, 0.7071), (5e4, 12.0)])
def test_omega0_q_matches_the_roots(w0, q):
    # the roots of s² + (w0/Q) s + w0², from scipy.signal.tf2zpk
    _, poles, _ = signal.tf2zpk([1.0], [1.0, w0 / q, w0**2])
    got_w0, got_q = omega0_q(3.0, 3.0 * w0 / q, 3.0 * w0**2)   # scale does not matter
    assert float(got_w0) == pytest.approx(abs(poles[0]), rel=1e-9)
    assert float(got_w0) == pytest.approx(w0, rel=1e-12)
    assert float(got_q) == pytest.approx(q, rel=1e-12)
    assert pair_figures(poles[0], poles[1]) == pytest.approx((w0, q), rel=1e-9)


def test_signs_and_undefined_figures():
    # the same polynomial negated reads the same; right-half-plane poles give Q < 0
    assert float(omega0_q(-1.0, -0.5, -4.0)[1]) == pytest.approx(4.0)
    assert float(omega0_q(1.0, -0.5, 4.0)[1]) == pytest.approx(-4.0)
    # real poles either side of the origin (s² − 1) define no ω0
    assert math.isnan(float(omega0_q(1.0, 0.0, -1.0)[0]))


def test_gains_match_scipy_freqs():
    w0, q, k = 1e3, 2.0, 3.0
    den = np.array([1.0, w0 / q, w0**2])
    cases = {"dc": (np.array([k * w0**2]), 0.0),
             "center": (np.array([k * w0 / q, 0.0]), w0),
             "hf": (np.array([k, 0.0, 0.0]), 1e9)}
    for kind, (num, at) in cases.items():
        _, h = signal.freqs(num, den, worN=[at])
        assert float(passband_gain(num, den, kind)) == pytest.approx(abs(h[0]), rel=1e-5), kind
    # a low-pass numerator has no high-frequency gain
    assert float(passband_gain(np.array([1.0]), den, "hf")) == 0.0


def test_first_order_and_zero_frequencies():
    assert first_order_omega(2e-3, 4.0) == pytest.approx(2e3)
    assert float(zero_pair_omega(2.0, 2.0 * 1234.0**2)) == pytest.approx(1234.0)


def test_dominant_pair_of_a_fourth_order_butterworth():
    # scipy.signal.butter: the pair nearest the jω axis has Q = 1/(2 sin(π/8)) = 1.3066
    _, p, _ = signal.butter(4, 1.0, analog=True, output="zpk")
    den = np.real(np.poly(p))[:, None]
    w0, q = dominant_pair(den, 1.0)
    assert float(w0[0]) == pytest.approx(1.0, rel=1e-9)
    assert float(q[0]) == pytest.approx(1 / (2 * math.sin(math.pi / 8)), rel=1e-9)
