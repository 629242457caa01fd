"""Second-order figures from coefficients and roots: ω0, Q, pass-band gain.

One place for the readings every stage makes of a section's function:

* :func:`omega0_q` — ω0 and Q of a2·s² + a1·s + a0 (Q signed: negative for
  poles in the right half-plane; NaN where the roots do not define them);
* :func:`first_order_omega` — the pole frequency a0/a1 of a1·s + a0, and
  :func:`zero_pair_omega` the zeros' ω0 √|b0/b2| of a second-order numerator;
* :func:`passband_gain` — the signed gain at DC, at ω0 (band-pass) or at
  high frequency, read off the coefficients;
* :func:`pair_figures` — ω0 and Q of two poles, ω0 = √|p1·p2|,
  Q = ω0 / −(p1 + p2) (a complex pair or two real poles);
* :func:`dominant_pair` — ω0 and Q of a higher-order denominator's
  dominant pole pair (the complex pair of highest Q; with only real poles,
  the two slowest).

Every function works on numbers and on arrays (coefficients highest power
first along the first axis, samples along the others).

Examples
--------
>>> import numpy as np
>>> w0, q = omega0_q(1.0, 0.5, 4.0)       # s² + 0.5 s + 4: ω0 = 2, Q = 2/0.5
>>> float(w0), float(q)
(2.0, 4.0)
>>> float(passband_gain(np.array([8.0]), np.array([1.0, 0.5, 4.0]), "dc"))
2.0
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = [
    "SecondOrderFigures",
    "omega0_q",
    "first_order_omega",
    "zero_pair_omega",
    "passband_gain",
    "pair_figures",
    "dominant_pair",
]


@dataclass(frozen=True)
class SecondOrderFigures:
    """ω0 (rad/s), Q and pass-band gain as arrays (one per sample)."""

    omega0: np.ndarray
    q: np.ndarray
    gain: np.ndarray


def omega0_q(a2: Any, a1: Any, a0: Any) -> tuple[Any, Any]:
    """ω0 and Q of a2·s² + a1·s + a0, Q signed (negative: poles in the right half-plane).

    NaN for a pair of real poles on either side of the origin (a0/a2 < 0).
    Works on numbers and arrays.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        omega0 = np.sqrt(np.where(a0 / a2 >= 0, a0 / a2, np.nan))
        q = np.sqrt(np.where(a0 * a2 >= 0, a0 * a2, np.nan)) / (a1 * np.sign(a2))
    return omega0, q


def first_order_omega(a1: Any, a0: Any) -> Any:
    """The pole frequency a0/a1 (rad/s) of a1·s + a0."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return a0 / a1


def zero_pair_omega(b2: Any, b0: Any) -> Any:
    """ω0 of the zeros of b2·s² + b1·s + b0, √|b0/b2| (rad/s)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.sqrt(np.abs(b0 / b2))


def passband_gain(numerator: np.ndarray, denominator: np.ndarray, kind: str) -> Any:
    """Signed pass-band gain from coefficient arrays (highest power first).

    `kind` says where it is read: "dc" (N(0)/D(0)), "center" (b1/a1 of a
    second-order band-pass, the gain at ω0) or "hf" (the leading
    coefficients' ratio; 0 when N has lower degree than D). Vectorised
    over trailing sample axes.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        if kind == "dc":
            return numerator[-1] / denominator[-1]
        if kind == "center" and denominator.shape[0] == 3:
            return (numerator[-2] if numerator.shape[0] >= 2 else 0 * numerator[0]) / denominator[-2]
        if numerator.shape[0] == denominator.shape[0]:
            return numerator[0] / denominator[0]
        if kind == "center" and numerator.shape[0] >= 2 and denominator.shape[0] >= 2:
            return numerator[-2] / denominator[-2]
    # a numerator of lower degree (or a first-order denominator asked for a
    # centre gain, a topology that cannot fit the section) has no such gain
    return 0 * denominator[0]


def pair_figures(p1: complex, p2: complex) -> tuple[float, float]:
    """ω0 = √|p1·p2| (rad/s) and Q = ω0 / −Re(p1 + p2) of two poles."""
    omega0 = float(np.sqrt(abs(p1 * p2)))
    return omega0, omega0 / -float((p1 + p2).real)


def dominant_pair(denominator: np.ndarray, omega_ref: float) -> tuple[np.ndarray, np.ndarray]:
    """ω0 and Q of the complex pair with the highest Q, per column.

    With no complex pair, the two real poles nearest the origin are taken
    as a pair (ω0 = √(p1 p2), Q = ω0 / −(p1 + p2)).
    """
    from .network import batched_roots   # network reads its figures from here

    roots = batched_roots(denominator, scale=omega_ref)
    magnitude = np.abs(roots)
    upper = roots.imag > 1e-9 * magnitude
    damping = np.where(upper, np.abs(roots.real) / np.where(magnitude > 0, magnitude, 1.0), np.inf)
    rows = np.arange(roots.shape[0])
    pole = roots[rows, np.argmin(damping, axis=1)]
    omega_complex = np.abs(pole)
    q_complex = omega_complex / (-2.0 * pole.real)
    real_magnitude = np.where(upper | (roots.imag < -1e-9 * magnitude), np.inf, magnitude)
    nearest = np.argsort(real_magnitude, axis=1)[:, :2]
    p1 = roots[rows, nearest[:, 0]].real
    p2 = roots[rows, nearest[:, 1]].real
    omega_real = np.sqrt(p1 * p2)
    q_real = omega_real / -(p1 + p2)
    has_pair = upper.any(axis=1)
    return np.where(has_pair, omega_complex, omega_real), np.where(has_pair, q_complex, q_real)
