"""Numeric analysis of a circuit with numbers for every part: no symbols.

Poles are the finite generalised eigenvalues of the MNA pencil (−G, C),
after frequency and row/column scaling; zeros those of the same pencil with
the output column replaced by the excitation; the frequency response solves
(G + jωC) x = b. This is the independent check of the symbolic path in
:mod:`placer.analysis.network`, and the fast path where no symbols are needed (a
built circuit with op-amp models, a Monte Carlo build).

Examples
--------
>>> from placer.circuit.elements import Circuit, Element
>>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), value=1e3),
...               Element("C1", "capacitor", ("vout", "gnd"), value=1e-6)))
>>> circuit_poles(rc).round(6).tolist()
[(-1000+0j)]
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import scipy.linalg
from numpy.typing import ArrayLike, NDArray

from ..errors import NumericalWarning, TopologyError
from .mna import NumericSystem, numeric_system

if TYPE_CHECKING:
    from ..circuit.elements import Circuit

__all__ = [
    "CircuitRoots",
    "circuit_roots",
    "circuit_poles",
    "natural_frequencies",
    "circuit_zeros",
    "circuit_gain",
    "circuit_response",
    "pencil_eigenvalues",
]

def _finite_eigenvalues(A: NDArray[np.float64], B: NDArray[np.float64]) -> NDArray[np.complex128]:
    """Finite λ with A x = λ B x, after frequency and row/column scaling."""
    nonzero_a = np.abs(A[A != 0])
    nonzero_b = np.abs(B[B != 0])
    if nonzero_b.size == 0:
        return np.array([], dtype=complex)
    scale = math.exp(np.mean(np.log(nonzero_a)) - np.mean(np.log(nonzero_b))) if nonzero_a.size else 1.0
    Bs = B * scale
    magnitude = np.abs(A) + np.abs(Bs)
    rows = np.where(magnitude.max(axis=1) > 0, magnitude.max(axis=1), 1.0)
    A1, B1 = A / rows[:, None], Bs / rows[:, None]
    magnitude = np.abs(A1) + np.abs(B1)
    cols = np.where(magnitude.max(axis=0) > 0, magnitude.max(axis=0), 1.0)
    A1, B1 = A1 / cols[None, :], B1 / cols[None, :]
    alpha, beta = scipy.linalg.eig(A1, B1, right=False, homogeneous_eigvals=True)
    finite = np.abs(beta) > 1e-11 * np.maximum(np.abs(alpha), np.abs(beta))
    values = alpha[finite] / beta[finite] * scale
    return values[np.abs(values) < 1e12 * scale]


def pencil_eigenvalues(A: ArrayLike, B: ArrayLike) -> NDArray[np.complex128]:
    """The finite λ with A x = λ B x, scaled as for a circuit's poles and zeros.

    For an MNA pencil (−G, C) these are the natural frequencies (rad/s);
    for a bordered (system) pencil, the transmission zeros.
    """
    return _finite_eigenvalues(np.asarray(A, float), np.asarray(B, float))


@dataclass(frozen=True)
class CircuitRoots:
    """Poles and finite zeros (rad/s) and the constant k of a numeric circuit.

    H(s) = k·Π(s − z)/Π(s − p); coinciding pole–zero pairs are cancelled.
    ``gain_imaginary`` is |Im k|/|k| as computed: far from 0 means the
    roots lost accuracy (:func:`circuit_gain` warns then).
    """

    poles: np.ndarray
    zeros: np.ndarray
    gain: float
    gain_imaginary: float = 0.0


def circuit_roots(circuit: Circuit, values: Mapping[str, float] | None = None) -> CircuitRoots:
    """Poles, zeros and gain constant from the MNA pencil, in one pass.

    Parameters
    ----------
    values : mapping, optional
        Numbers for parts that carry a symbol.

    Returns
    -------
    CircuitRoots
    """
    system = numeric_system(circuit, values)
    _require_regular(system)
    poles, zeros = _cancel_pairs(_finite_eigenvalues(-system.G, system.C), _zeros_of(system))
    # Probe at the geometric mean of the root magnitudes: at the largest one,
    # s·C swamps G for roots decades apart and the solve loses digits (a
    # fifth-order ladder with roots from 1e3 to 7e7 rad/s lost five).
    magnitudes = np.abs(np.concatenate([poles, zeros]))
    magnitudes = magnitudes[magnitudes > 0]
    scale = float(np.exp(np.mean(np.log(magnitudes)))) if magnitudes.size else 1.0
    probe = scale * (0.3 + 1.1j)
    h = np.linalg.solve(system.G + probe * system.C, system.b.astype(complex))[system.output]
    k = h * np.prod(probe - poles) / np.prod(probe - zeros)
    return CircuitRoots(poles=poles, zeros=zeros, gain=float(k.real),
                        gain_imaginary=float(abs(k.imag) / abs(k)) if k else 0.0)


def circuit_poles(circuit: Circuit,
                  values: Mapping[str, float] | None = None) -> NDArray[np.complex128]:
    """Poles (rad/s) of a circuit with numeric parts, from the MNA pencil."""
    return circuit_roots(circuit, values).poles


def natural_frequencies(circuit: Circuit, values: Mapping[str, float] | None = None) -> np.ndarray:
    """Every natural frequency (rad/s) of a circuit with numeric parts.

    The finite eigenvalues of the MNA pencil, with none cancelled against
    a zero: a mode the output does not see (or the input does not reach)
    still grows if it lies in the right half-plane, so stability is judged
    on these, not on :func:`circuit_poles`.

    Examples
    --------
    >>> from placer.circuit.elements import Circuit, Element
    >>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), value=1e3),
    ...               Element("C1", "capacitor", ("vout", "gnd"), value=1e-6)))
    >>> natural_frequencies(rc).round(6).tolist()
    [(-1000+0j)]
    """
    system = numeric_system(circuit, values)
    _require_regular(system)
    return _finite_eigenvalues(-system.G, system.C)


def circuit_zeros(circuit: Circuit,
                  values: Mapping[str, float] | None = None) -> NDArray[np.complex128]:
    """Finite zeros (rad/s) of the input-to-output function, numerically."""
    return circuit_roots(circuit, values).zeros


def circuit_gain(circuit: Circuit, values: Mapping[str, float] | None = None) -> float:
    """The constant k of H(s) = k·Π(s − z)/Π(s − p), numerically."""
    roots = circuit_roots(circuit, values)
    if roots.gain_imaginary > 1e-6:
        warnings.warn("the gain constant came out complex; roots may be inaccurate",
                      NumericalWarning, stacklevel=2)
    return roots.gain


def _require_regular(system: NumericSystem) -> None:
    """Raise TopologyError when det(G + sC) vanishes for every s.

    A singular pencil (an op-amp with no feedback path, a floating
    sub-circuit) has no poles; its QZ decomposition would return arbitrary
    numbers. Probed at two points on the circuit's own frequency scale,
    after row and column equilibration.
    """
    G, C = system.G, system.C
    nonzero_g, nonzero_c = np.abs(G[G != 0]), np.abs(C[C != 0])
    scale = 1.0
    if nonzero_g.size and nonzero_c.size:
        scale = math.exp(np.mean(np.log(nonzero_g)) - np.mean(np.log(nonzero_c)))
    for probe in (0.31 + 1.13j, -0.71 + 2.37j):
        matrix = G + probe * scale * C
        rows = np.abs(matrix).max(axis=1)
        matrix = matrix / np.where(rows > 0, rows, 1.0)[:, None]
        cols = np.abs(matrix).max(axis=0)
        matrix = matrix / np.where(cols > 0, cols, 1.0)[None, :]
        singular = np.linalg.svd(matrix, compute_uv=False)
        if singular[-1] > 1e-13 * singular[0]:
            return
    raise TopologyError(
        "the MNA matrix is singular: the circuit has no unique solution "
        "(check for floating nodes, or op-amps with no feedback path)"
    )


def _zeros_of(system: NumericSystem) -> NDArray[np.complex128]:
    G = system.G.copy()
    C = system.C.copy()
    G[:, system.output] = system.b
    C[:, system.output] = 0.0
    return _finite_eigenvalues(-G, C)


def _cancel_pairs(poles: Iterable[complex], zeros: Iterable[complex],
                  rtol: float = 1e-7) -> tuple[NDArray[np.complex128], NDArray[np.complex128]]:
    """Drop pole-zero pairs that coincide (uncontrollable or unobservable modes)."""
    poles = list(poles)
    kept_zeros = []
    for z in zeros:
        if poles:
            distances = [abs(p - z) for p in poles]
            i = int(np.argmin(distances))
            if distances[i] <= rtol * max(abs(z), abs(poles[i]), 1e-30):
                poles.pop(i)
                continue
        kept_zeros.append(z)
    return np.array(poles, dtype=complex), np.array(kept_zeros, dtype=complex)


def circuit_response(circuit: Circuit, omega: ArrayLike,
                     values: Mapping[str, float] | None = None) -> NDArray[np.complex128]:
    """H(jω) of a circuit by solving (G + jωC) x = b; `omega` in rad/s."""
    system = numeric_system(circuit, values)
    omega = np.atleast_1d(np.asarray(omega, dtype=float))
    matrices = system.G[None, :, :] + 1j * omega[:, None, None] * system.C[None, :, :]
    rhs = np.broadcast_to(system.b.astype(complex), (omega.size, system.b.size))[..., None]
    try:
        x = np.linalg.solve(matrices, rhs)[..., 0]
    except np.linalg.LinAlgError:
        raise TopologyError("the MNA matrix is singular at some frequency of the grid") from None
    return x[:, system.output]
