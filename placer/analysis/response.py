"""A continuous-time response held as a cascade of small sections.

:class:`Response` never multiplies its sections into one high-order
polynomial: roots given as zeros, poles and a gain are paired into
second-order sections (conjugate pairs together, each zero pair with the
nearest pole pair), and the views (poles, H(jω), state space, DC and
high-frequency gains) are taken section by section. Frequencies are in
rad/s inside and hertz where a person reads them (``reference_hz``).

Examples
--------
>>> import control
>>> lowpass = Response.from_sections([control.tf([1.0], [1.0, 2**0.5, 1.0])])
>>> lowpass.order, round(lowpass.dc_gain, 12)
(2, 1.0)
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import control
import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import SpecError
from .protocols import ComplexArray, FloatArray

__all__ = ["Response"]

_TWO_PI = 2 * math.pi


def _real_poly(roots: Sequence[complex]) -> FloatArray:
    return np.real(np.poly(roots)) if len(roots) else np.array([1.0])


def _pair_roots(roots: ArrayLike, what: str) -> list[list[complex]]:
    """Split roots into conjugate pairs and real roots (rad/s)."""
    roots = np.asarray(roots, dtype=complex).ravel()
    scale = np.maximum(np.abs(roots), 1e-290)  # 1e-9 of it stays a normal float (no underflow)
    complex_mask = np.abs(roots.imag) > 1e-9 * scale
    real = list(roots[~complex_mask].real)
    upper = list(roots[complex_mask & (roots.imag > 0)])
    lower = list(roots[complex_mask & (roots.imag < 0)])
    pairs: list[list[complex]] = []
    for root in upper:
        if not lower:
            raise SpecError(f"{what} {root} has no complex conjugate; roots must come in pairs")
        i = int(np.argmin([abs(root.conjugate() - other) for other in lower]))
        lower.pop(i)
        pairs.append([root, root.conjugate()])
    if lower:
        raise SpecError(f"{what} {lower[0]} has no complex conjugate; roots must come in pairs")
    real.sort(key=abs)
    groups = pairs + [real[i:i + 2] for i in range(0, len(real), 2)]
    return groups


@dataclass(frozen=True)
class Response:
    """A continuous-time response as a cascade of small sections.

    Attributes
    ----------
    sections : tuple of control.TransferFunction
        SISO, continuous, proper; the response is their product.

    Examples
    --------
    >>> r = Response.from_zpk([], [-1 + 1j, -1 - 1j, -3], 6.0)
    >>> len(r.sections), round(r.dc_gain, 12)
    (2, 1.0)
    """

    sections: tuple[control.TransferFunction, ...]

    def __post_init__(self) -> None:
        sections = tuple(self.sections)
        if not sections:
            raise SpecError("a response needs at least one section")
        for i, section in enumerate(sections):
            if not isinstance(section, control.TransferFunction):
                raise SpecError(
                    f"section {i} is a {type(section).__name__}, not a control.TransferFunction; "
                    "use Response.from_zpk for roots"
                )
            if not section.issiso() or not section.isctime():
                raise SpecError(f"section {i} must be a SISO continuous-time transfer function")
            numerator, denominator = _coefficients(section)
            if numerator.size > denominator.size:
                raise SpecError(
                    f"section {i} is improper (numerator order {numerator.size - 1} > "
                    f"denominator order {denominator.size - 1}); it has no step response"
                )
        object.__setattr__(self, "sections", sections)

    @classmethod
    def from_sections(cls, sections: Iterable[control.TransferFunction]) -> Response:
        """A response from a list of python-control TransferFunctions."""
        return cls(tuple(sections))

    @classmethod
    def from_zpk(cls, zeros: ArrayLike, poles: ArrayLike, k: float) -> Response:
        """A response ``k·Π(s − z)/Π(s − p)`` split into second-order sections.

        Complex roots must come in conjugate pairs (rad/s). Each pole pair
        takes the nearest zero pair; the gain ``k`` sits in the first section.
        """
        pole_groups = _pair_roots(poles, "pole")
        zero_groups = _pair_roots(zeros, "zero")
        if sum(map(len, zero_groups)) > sum(map(len, pole_groups)):
            raise SpecError("more zeros than poles: the response is improper")
        if not pole_groups:
            return cls((control.tf([float(k)], [1.0]),))
        assigned: list[list[complex]] = [[] for _ in pole_groups]
        room = [len(g) for g in pole_groups]
        # Zero pairs first (they always fit a pole pair), each to the nearest pole group.
        for group in sorted(zero_groups, key=len, reverse=True):
            nearest = np.argsort([abs(np.mean(p) - np.mean(group)) for p in pole_groups])
            target = next(i for i in nearest if room[i] >= len(group))
            assigned[target] += list(group)
            room[target] -= len(group)
        sections = []
        for i, (pole_group, zero_group) in enumerate(zip(pole_groups, assigned)):
            numerator = _real_poly(zero_group) * (float(k) if i == 0 else 1.0)
            sections.append(control.tf(numerator, _real_poly(pole_group)))
        return cls(tuple(sections))

    # -- views -------------------------------------------------------------
    def poles(self) -> ComplexArray:
        """All poles, rad/s."""
        return np.concatenate([np.asarray(s.poles(), complex) for s in self.sections])

    def zeros(self) -> ComplexArray:
        """All finite zeros, rad/s."""
        return np.concatenate([np.asarray(s.zeros(), complex) for s in self.sections])

    @property
    def order(self) -> int:
        """Total degree of the denominators."""
        return int(sum(_coefficients(s)[1].size - 1 for s in self.sections))

    def evaluate(self, omega: ArrayLike) -> ComplexArray:
        """H(jω) for `omega` in rad/s (product of the sections)."""
        omega = np.asarray(omega, dtype=float)
        out = np.ones(omega.shape, dtype=complex)
        for section in self.sections:
            numerator, denominator = _coefficients(section)
            out = out * np.polyval(numerator, 1j * omega) / np.polyval(denominator, 1j * omega)
        return out

    def state_space(self) -> control.StateSpace:
        """The series connection of the sections as a control.StateSpace."""
        return control.series(*[control.ss(s) for s in self.sections])

    @property
    def dc_gain(self) -> float:
        """H(0): ``inf`` with a net pole at the origin, 0.0 with a net zero there.

        Roots at the origin are counted from exactly-zero trailing
        coefficients.
        """
        net, gain = 0, 1.0
        for section in self.sections:
            numerator, denominator = _coefficients(section)
            if not np.any(numerator):
                return 0.0
            at_numerator, at_denominator = _origin_roots(numerator), _origin_roots(denominator)
            net += at_numerator - at_denominator
            gain *= numerator[-1 - at_numerator] / denominator[-1 - at_denominator]
        if net > 0:
            return 0.0
        return math.inf if net < 0 else float(gain)

    @property
    def hf_gain(self) -> float:
        """lim H(s) as s → ∞ (0.0 for a strictly proper response)."""
        gain = 1.0
        for section in self.sections:
            numerator, denominator = _coefficients(section)
            if numerator.size < denominator.size:
                return 0.0
            gain *= numerator[0] / denominator[0]
        return float(gain)

    @property
    def reference_hz(self) -> float:
        """Geometric mean of the nonzero pole magnitudes, Hz (1 Hz if none)."""
        magnitudes = np.abs(self.poles())
        magnitudes = magnitudes[magnitudes > 0]
        if not magnitudes.size:
            magnitudes = np.abs(self.zeros())
            magnitudes = magnitudes[magnitudes > 0]
        if not magnitudes.size:
            return 1.0
        return float(np.exp(np.mean(np.log(magnitudes))) / _TWO_PI)


def _coefficients(section: control.TransferFunction) -> tuple[FloatArray, FloatArray]:
    numerator = np.trim_zeros(np.atleast_1d(np.asarray(section.num[0][0], float)), "f")
    denominator = np.trim_zeros(np.atleast_1d(np.asarray(section.den[0][0], float)), "f")
    return (numerator if numerator.size else np.array([0.0])), denominator


def _origin_roots(poly: NDArray[Any]) -> int:
    """Multiplicity of the root s = 0: the number of trailing zero coefficients."""
    nonzero = np.nonzero(poly)[0]
    return int(poly.size - 1 - nonzero[-1]) if nonzero.size else 0
