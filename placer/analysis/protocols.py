"""The interfaces the analysis stage's functions share, as typing Protocols.

Four kinds of object stand for a transfer function in placer:

- :class:`placer.analysis.network.NetworkFunction`, the symbolic H(s) of a
  circuit with its numeric evaluators;
- the same function at another op-amp GBW by frequency scaling
  (``placer.place.opamp.ScaledFunction``);
- :class:`placer.analysis.dominant.DominantFunction`, the dominant part of a
  function whose op-amps are modelled;
- :class:`placer.analysis.response.Response`, a numeric response held as a
  cascade of sections.

All four have an order and their poles and zeros (:class:`RootedFunction`).
The first three are functions of the part values and share the evaluator
interface the solver, the snapper and the Monte Carlo use
(:class:`PartFunction`): the part symbols, where the gain is read, and the
coefficients, poles and zeros for a set of part values. A Response has
numbers already, so its ``poles()`` and ``zeros()`` take none.

Examples
--------
>>> from placer.circuit.library import get_topology
>>> from placer.analysis.network import network_function
>>> nf = network_function(get_topology("rc-lowpass").circuit)
>>> isinstance(nf, PartFunction), isinstance(nf, RootedFunction)
(True, True)
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any, Protocol, runtime_checkable

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "ComplexArray",
    "FloatArray",
    "PartFunction",
    "PartValues",
    "RootTargets",
    "RootedFunction",
]

#: Real coefficients, responses' magnitudes, part values as arrays.
FloatArray = NDArray[np.float64]
#: Roots (rad/s) and complex responses.
ComplexArray = NDArray[np.complex128]
#: Part symbol → value (SI units): a number, or an array for many samples at once.
PartValues = Mapping[str, ArrayLike]


@runtime_checkable
class RootedFunction(Protocol):
    """What every transfer function of placer has: an order, poles and zeros.

    ``poles`` and ``zeros`` return roots in rad/s; a function of the part
    values takes the values (:class:`PartFunction`), a numeric response
    takes nothing.
    """

    @property
    def order(self) -> int:
        """Degree of the denominator in s (of the dominant part, for a DominantFunction)."""
        ...

    @property
    def poles(self) -> Callable[..., ComplexArray]:
        ...

    @property
    def zeros(self) -> Callable[..., ComplexArray]:
        ...


@runtime_checkable
class PartFunction(Protocol):
    """H(s) in the part symbols, evaluated for part values.

    The interface :class:`placer.analysis.network.NetworkFunction`, the
    frequency-scaled function of an op-amp circuit and
    :class:`placer.analysis.dominant.DominantFunction` share, and that the
    solver and the snapper call.
    """

    @property
    def symbols(self) -> Mapping[str, Any]:
        """Part symbol name → its sympy Symbol."""
        ...

    @property
    def gain_kind(self) -> str:
        """Where the pass-band gain is read: "dc", "hf" or "center"."""
        ...

    @property
    def order(self) -> int:
        """Degree of the denominator in s."""
        ...

    def coefficients(self, values: PartValues) -> tuple[FloatArray, FloatArray]:
        """Numeric coefficients of N and D, highest power of s first.

        Shapes ``(deg N + 1, *sample_shape)`` and ``(deg D + 1, *sample_shape)``.
        """
        ...

    def poles(self, values: PartValues) -> ComplexArray:
        """Poles in rad/s for one set of part values."""
        ...

    def zeros(self, values: PartValues) -> ComplexArray:
        """Finite zeros in rad/s for one set of part values."""
        ...


class RootTargets(Protocol):
    """Roots to match, as a placement goal (``placer.place.solve.Goal``) holds them."""

    @property
    def poles(self) -> tuple[complex, ...]:
        ...

    @property
    def zeros(self) -> tuple[complex, ...]:
        ...

    @property
    def omega_ref(self) -> float:
        ...
