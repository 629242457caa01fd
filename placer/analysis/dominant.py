"""The dominant part of a network function whose op-amps are modelled.

A real op-amp model raises the order of a section's network function: the
roots the design must place (nearest the target) come with *parasitic*
roots the model adds (near the op-amp's GBW), which the design leaves
free. :class:`DominantFunction` splits H(s) into the two parts and offers
the evaluator interface of :class:`placer.analysis.network.NetworkFunction`
(``coefficients``, ``poles``, ``zeros``), so the solver and the snapper
place the dominant roots as they would an ideal function's.

The split is defined so that the dominant part equals H(s) at frequencies
well below the parasitic roots: ``H(s) = H_dom(s)·Π(1 − s/z_par)/Π(1 − s/p_par)``,
so its pass-band gain is the full function's (at DC for a low-pass).

The roots of a whole batch of coefficient vectors are found at once
(:func:`polished_roots`): a quadratic factor by Bairstow's iteration where
a root bound proves it is the pair nearest the target, companion-matrix
eigenvalues (:func:`placer.analysis.network.batched_roots`) polished by Newton
steps otherwise.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .network import batched_roots
from .protocols import ComplexArray, FloatArray, PartFunction, PartValues, RootTargets

#: An array of any dtype (the numeric helpers mix real and complex rows).
_Array = NDArray[Any]

__all__ = [
    "polished_roots",
    "nearest_root_set",
    "DominantFunction",
]

_REAL_TOLERANCE = 1e-7
#: Batches up to this size are split one sample at a time (scipy's polishing calls).
_SMALL_BATCH = 4


# -- roots of many polynomials at once ---------------------------------------

def polished_roots(coefficients: ArrayLike, omega_ref: float = 1.0, *,
                   near: Sequence[complex] | None = None) -> ComplexArray:
    """Roots of many polynomials at once, polished (vectorised over the batch).

    Degrees up to two are solved in closed form. Higher degrees use the
    companion-matrix eigenvalues of :func:`placer.analysis.network.batched_roots`,
    refined here by Newton steps on each root (kept where they lower
    |p(x)|). With a hint `near` (two roots, rad/s, e.g. a section's target
    poles) a quadratic factor near them is first found by Bairstow's
    iteration and the quotient solved in closed form (or by eigenvalues),
    which is much faster for the small, many polynomials of a discrete
    search; samples where that does not converge fall back to the
    eigenvalues. Unlike :func:`placer.analysis.network.batched_roots`, roots at the
    origin are split off exactly and the arithmetic is done in
    s/`omega_ref`.

    Parameters
    ----------
    coefficients : ndarray, shape (n + 1, *batch)
        Highest power first (the layout of
        :meth:`placer.analysis.network.NetworkFunction.coefficients`).
    omega_ref : float
        Frequency scale (rad/s): roots are found for s/omega_ref, which keeps
        the arithmetic balanced.
    near : sequence of complex, optional
        Two roots (rad/s) some root pair of every polynomial lies near.

    Returns
    -------
    ndarray, shape (*batch, n), complex
        Roots in rad/s (NaN for a sample whose leading coefficient is zero
        or not finite). Roots the structure puts at the origin (trailing
        coefficients zero in every sample) come back as exact zeros, last.

    References
    ----------
    L. Bairstow, "Investigations relating to the stability of the
    aeroplane", Reports and Memoranda 154, Advisory Committee for
    Aeronautics, 1914 (the quadratic-factor iteration; as in Press et al.,
    Numerical Recipes, section 9.5 — from memory).

    Examples
    --------
    >>> r = polished_roots(np.array([[1.0, 1.0], [3.0, 0.0], [2.0, -4.0]]))
    >>> np.sort(r[0].real), np.sort(r[1].real)
    (array([-2., -1.]), array([-2.,  2.]))
    >>> c = np.poly([-1 + 2j, -1 - 2j, -50.0, -300.0]).reshape(-1, 1)
    >>> np.sort_complex(polished_roots(c, near=[-1 + 2j, -1 - 2j])[0]).round(9) + 0
    array([-300.+0.j,  -50.+0.j,   -1.-2.j,   -1.+2.j])
    """
    c = np.asarray(coefficients, dtype=float)
    batch = c.shape[1:]
    monic, good, origin = _normalise(c.reshape(c.shape[0], -1), omega_ref)
    hint = None if near is None else np.asarray(near, dtype=complex) / omega_ref
    x = _monic_roots(monic, hint)
    roots = np.where(good[:, None], x * omega_ref, np.nan)
    roots = np.concatenate([roots, np.zeros((roots.shape[0], origin), dtype=complex)], axis=1)
    return roots.reshape(*batch, roots.shape[1])


def _normalise(c: _Array, omega_ref: float) -> tuple[_Array, NDArray[np.bool_], int]:
    """Monic polynomials in s/omega_ref from coefficient rows (n + 1, B).

    Leading rows that are zero in every sample are dropped; trailing ones
    (roots at the origin) are counted and dropped. Returns the monic rows,
    a mask of the samples whose coefficients were finite with a non-zero
    lead (the others are set to x^n), and the count of origin roots.
    """
    while c.shape[0] > 1 and np.all(c[0] == 0):
        c = c[1:]
    origin = 0
    while c.shape[0] - origin > 1 and np.all(c[c.shape[0] - 1 - origin] == 0):
        origin += 1
    c = c[: c.shape[0] - origin]
    n = c.shape[0] - 1
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        monic = c / c[:1] / omega_ref ** np.arange(n + 1)[:, None]
    good = np.all(np.isfinite(monic), axis=0)
    monic = np.where(good, monic, 0.0)
    monic[0] = 1.0
    return monic, good, origin


def _monic_roots(monic: _Array, hint: _Array | None = None) -> _Array:
    """Roots (B, n) of monic polynomials (n + 1, B); `hint`: a root pair, scaled."""
    n = monic.shape[0] - 1
    count = monic.shape[1]
    if n <= 2:
        return _low_degree_roots(monic)
    x = np.full((count, n), np.nan, dtype=complex)
    todo = np.ones(count, dtype=bool)
    if hint is not None and len(hint) == 2:
        factor, quotient, converged = _bairstow(monic, *_pair_factor(hint))
        if np.any(converged):
            x[converged, :2] = _low_degree_roots(factor[:, converged])
            x[converged, 2:] = _small_roots(quotient[:, converged])
            todo = ~converged
    if np.any(todo):
        x[todo] = _eigen_roots(monic[:, todo])
    return x


def _start_factor(monic: _Array, pair: _Array) -> tuple[_Array, _Array]:
    """Where to start the quadratic-factor search, per sample.

    When the other roots are much larger than the pair (parasitic poles
    far above the band), the low-order end of the polynomial is nearly the
    pair's factor: a_{n-2}·x² + a_{n-1}·x + a_n. Samples where that is not
    finite start from the target pair.
    """
    u0, v0 = _pair_factor(pair)
    with np.errstate(divide="ignore", invalid="ignore"):
        u = monic[-2] / monic[-3]
        v = monic[-1] / monic[-3]
    usable = np.isfinite(u) & np.isfinite(v)
    return np.where(usable, u, u0), np.where(usable, v, v0)


def _pair_factor(pair: Sequence[complex] | _Array) -> tuple[float, float]:
    """(u, v) of x² + u·x + v with the roots `pair`."""
    return -float((pair[0] + pair[1]).real), float((pair[0] * pair[1]).real)


def _low_degree_roots(monic: _Array) -> _Array:
    """Roots of monic polynomials of degree 0, 1 or 2, shape (n + 1, B) -> (B, n)."""
    n = monic.shape[0] - 1
    if n == 0:
        return np.zeros((monic.shape[1], 0), dtype=complex)
    if n == 1:
        return (-monic[1]).astype(complex)[:, None]
    b, c = monic[1], monic[2]
    disc = b * b - 4 * c
    root = np.sqrt(np.abs(disc))
    # real roots: the sign that avoids cancellation, then Vieta for the other
    q = -(b + np.where(b >= 0, 1.0, -1.0) * root) / 2
    with np.errstate(divide="ignore", invalid="ignore"):
        other = np.where(q != 0, c / q, 0.0)
    real = disc >= 0
    first = np.where(real, q, -b / 2) + 1j * np.where(real, 0.0, root / 2)
    second = np.where(real, other, -b / 2) - 1j * np.where(real, 0.0, root / 2)
    return np.stack([first, second], axis=1)


def _small_roots(monic: _Array) -> _Array:
    """Roots of the (short) quotient polynomials, closed form when possible."""
    if monic.shape[0] <= 3:
        return _low_degree_roots(monic)
    return _eigen_roots(monic)


def _eigen_roots(monic: _Array) -> _Array:
    """Companion-matrix eigenvalues of monic polynomials (n + 1, B) -> (B, n), polished.

    An empty batch (B = 0) gives an empty (0, n) array: the companion
    routine cannot tell the degree of no polynomial at all (it would
    answer degree 0), and callers assign the result into (B, n) slots.
    """
    if monic.shape[1] == 0:
        return np.zeros((0, monic.shape[0] - 1), dtype=complex)
    return _polish(monic.T, batched_roots(monic))


def _bairstow(monic: _Array, u: float | _Array, v: float | _Array, *, iterations: int = 30,
              tolerance: float = 1e-13) -> tuple[_Array, _Array, NDArray[np.bool_]]:
    """Quadratic factors x² + u·x + v of monic polynomials (n + 1, B), n ≥ 3.

    Newton's method on the remainder of the division, from (u, v) (one
    pair, or one per sample); each iteration works only on the samples not
    yet converged.
    Returns the factors (3, B), the quotients (n − 1, B) and a mask of the
    samples that converged.
    """
    n = monic.shape[0] - 1
    count = monic.shape[1]
    u = np.array(np.broadcast_to(np.asarray(u, dtype=float), (count,)))
    v = np.array(np.broadcast_to(np.asarray(v, dtype=float), (count,)))
    converged = np.zeros(count, dtype=bool)
    active = np.arange(count)
    with np.errstate(all="ignore"):
        for _ in range(iterations):
            a, ua, va = monic[:, active], u[active], v[active]
            b = np.empty_like(a)
            d = np.zeros_like(a)   # ∂b/∂u; ∂b/∂v is d shifted by one
            b[0] = a[0]
            b[1] = a[1] - ua * b[0]
            d[1] = -b[0]
            for i in range(2, n + 1):
                b[i] = a[i] - ua * b[i - 1] - va * b[i - 2]
                d[i] = -b[i - 1] - ua * d[i - 1] - va * d[i - 2]
            det = d[n - 1] * d[n - 1] - d[n - 2] * d[n]
            du = (-b[n - 1] * d[n - 1] + b[n] * d[n - 2]) / det
            dv = (-b[n] * d[n - 1] + b[n - 1] * d[n]) / det
            finite = np.isfinite(du) & np.isfinite(dv)
            u[active] = np.where(finite, ua + du, ua)
            v[active] = np.where(finite, va + dv, va)
            size = np.abs(u[active]) + np.sqrt(np.abs(v[active]))
            done = finite & (np.abs(du) <= tolerance * size) & (np.abs(dv) <= tolerance * size * size)
            converged[active[done]] = True
            active = active[finite & ~done]
            if active.size == 0:
                break
        b = np.empty_like(monic)
        b[0] = monic[0]
        b[1] = monic[1] - u * b[0]
        for i in range(2, n + 1):
            b[i] = monic[i] - u * b[i - 1] - v * b[i - 2]
        # a last iterate that stalled at round-off counts when its remainder vanishes
        remainder = np.abs(b[n - 1]) + np.abs(b[n])
        scale = np.max(np.abs(monic), axis=0)
        converged |= np.isfinite(remainder) & (remainder <= 1e-12 * scale)
    factor = np.stack([np.ones(count), u, v])
    return factor, b[: n - 1], converged & np.isfinite(u) & np.isfinite(v)


def _polish(monic: _Array, x: _Array, steps: int = 2) -> _Array:
    """Newton steps on every root of every monic polynomial (B, n+1)."""
    n = monic.shape[1] - 1
    for _ in range(steps):
        p = np.ones_like(x) * monic[:, :1]
        dp = np.zeros_like(x)
        for i in range(1, n + 1):
            dp = dp * x + p
            p = p * x + monic[:, i : i + 1]
        with np.errstate(divide="ignore", invalid="ignore"):
            trial = x - p / dp
        q = np.ones_like(trial) * monic[:, :1]
        for i in range(1, n + 1):
            q = q * trial + monic[:, i : i + 1]
        better = np.isfinite(trial) & (np.abs(q) < np.abs(p))
        x = np.where(better, trial, x)
    return x


def _poly_rows(roots: _Array) -> _Array:
    """Coefficients of Π(s − r) over the last axis, highest first: (k + 1, B)."""
    count, k = roots.shape
    out = np.zeros((k + 1, count), dtype=complex)
    out[0] = 1.0
    for j in range(k):
        out[1:] = out[1:] - roots[:, j][None, :] * out[:-1]
    return out


def nearest_root_set(roots: _Array, targets: Sequence[complex] | _Array) -> NDArray[np.bool_]:
    """Which roots of each sample form the set nearest some targets.

    Every k-subset of the n roots whose polynomial is real (closed under
    conjugation) is a candidate; its cost is the smallest sum of distances
    to the k targets over the matchings.

    Parameters
    ----------
    roots : ndarray, shape (B, n), complex
        Each sample's roots (rad/s, or any common scale).
    targets : sequence of complex
        The k roots to match, on the same scale.

    Returns
    -------
    ndarray, shape (B, n), bool
        True for the k roots chosen in each sample; an all-False row for a
        sample with no real k-subset.

    Examples
    --------
    >>> nearest_root_set(np.array([[-100.0, -1 + 1j, -1 - 1j]]), [-1 + 1j, -1 - 1j])
    array([[False,  True,  True]])
    """
    count, n = roots.shape
    k = len(targets)
    mask = np.zeros((count, n), dtype=bool)
    if k == 0:
        return mask
    if k >= n:
        mask[:] = True
        return mask
    targets = np.asarray(targets, dtype=complex)
    scale = np.maximum(np.abs(targets).max(), 1e-300)
    best = np.full(count, np.inf)
    chosen = np.full(count, -1)
    combos = list(itertools.combinations(range(n), k))
    matchings = list(itertools.permutations(range(k)))
    for index, combo in enumerate(combos):
        subset = roots[:, combo]
        coefficients = _poly_rows(subset)
        size = np.max(np.abs(coefficients), axis=0)
        with np.errstate(invalid="ignore", divide="ignore"):
            real = np.max(np.abs(coefficients.imag), axis=0) <= _REAL_TOLERANCE * size
        cost = np.min(
            [np.sum(np.abs(subset[:, list(m)] - targets[None, :]), axis=1) for m in matchings], axis=0
        ) / scale
        cost = np.where(real & np.isfinite(cost), cost, np.inf)
        better = cost < best
        best = np.where(better, cost, best)
        chosen = np.where(better, index, chosen)
    for index, combo in enumerate(combos):
        rows = chosen == index
        if np.any(rows):
            mask[np.ix_(rows, list(combo))] = True
    return mask


# -- the dominant part of a network function ---------------------------------

def _dominant_split(coefficients: _Array, targets: Sequence[complex] | _Array, omega_ref: float, *,
                    with_rest: bool = False) -> _RootSplit:
    """Split the roots of each polynomial into the set nearest `targets` and the rest.

    Parameters
    ----------
    coefficients : ndarray, shape (n + 1, B)
    targets : sequence of complex, rad/s
    omega_ref : float, rad/s
    with_rest : bool
        Also return the other roots themselves (not only their product).

    Returns
    -------
    _RootSplit
        The k roots nearest the targets (B, k), rad/s, sorted by magnitude;
        the product Π(−r) over the other roots (B,), (rad/s)^(n − k); the
        other roots (B, n − k) when asked; a mask of the samples where a
        real root set was found.

    Notes
    -----
    For a root pair, the quadratic factor near the targets is found by
    Bairstow's iteration. When a lower bound on the magnitude of the
    quotient's roots (Fujiwara's bound on the reversed polynomial) puts
    every other root farther from every target than the pair's roots are,
    the pair is the nearest set, and the product of the other roots is
    the quotient's constant term: no other root is needed. Other samples
    go through the general search (:func:`nearest_root_set` over all roots).

    References
    ----------
    M. Fujiwara, "Über die obere Schranke des absoluten Betrages der
    Wurzeln einer algebraischen Gleichung", Tôhoku Math. J. 10, 1916
    (from memory).
    """
    monic, good, origin = _normalise(np.asarray(coefficients, dtype=float), omega_ref)
    n = monic.shape[0] - 1
    count = monic.shape[1]
    total = n + origin
    k = len(targets)
    rest_count = max(total - k, 0)
    scaled = np.asarray(targets, dtype=complex) / omega_ref
    dominant = np.full((count, k), np.nan, dtype=complex)
    product = np.full(count, np.nan, dtype=complex)
    rest = np.full((count, rest_count), np.nan, dtype=complex) if with_rest else None
    origin_roots = np.zeros((count, origin), dtype=complex)
    if k >= total:
        x = np.concatenate([_monic_roots(monic), origin_roots], axis=1)
        dominant[:, :total] = _by_size(x) * omega_ref
        return _RootSplit(dominant, np.ones(count, dtype=complex), rest, good & (k == total))
    if k == 0:
        # nothing to match: only the product of all the roots is needed
        product = monic[-1] * omega_ref ** n * (0.0 if origin else 1.0) + 0j
        if with_rest:
            rest = np.concatenate([_monic_roots(monic) * omega_ref, origin_roots], axis=1)
        return _RootSplit(dominant, product, rest, good)
    if count <= _SMALL_BATCH:
        return _split_each(monic, good, origin, scaled, omega_ref, with_rest)
    fast = np.zeros(count, dtype=bool)
    attempted = k == 2 and n >= 3
    if attempted:
        factor, quotient, converged = _bairstow(monic, *_start_factor(monic, scaled))
        pair = _low_degree_roots(factor)
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            reach = np.max(np.abs(pair[:, :, None] - scaled[None, None, :]), axis=(1, 2))
            floor = 0.0 if origin else _root_floor(quotient)
        fast = converged & good & np.isfinite(reach) & (floor - np.max(np.abs(scaled)) >= reach)
        if np.any(fast):
            dominant[fast] = _by_size(pair[fast]) * omega_ref
            product[fast] = quotient[-1, fast] * omega_ref ** (n - 2)
            if rest is not None:  # with_rest
                rest[fast] = _by_size(_small_roots(quotient[:, fast])) * omega_ref
    slow = ~fast
    valid = fast.copy()
    if np.any(slow):
        if attempted:
            # reuse the factors found; only the samples that did not converge need eigenvalues
            x = np.full((int(np.sum(slow)), n), np.nan, dtype=complex)
            done = converged[slow]
            x[done, :2] = pair[slow][done]
            x[done, 2:] = _small_roots(quotient[:, slow][:, done])
            if np.any(~done):
                x[~done] = _eigen_roots(monic[:, slow][:, ~done])
        else:
            x = _monic_roots(monic[:, slow])
        x = np.concatenate([x, origin_roots[slow]], axis=1)
        mask = nearest_root_set(x, scaled)
        others = _take(x, ~mask, rest_count) * omega_ref
        dominant[slow] = _take(x, mask, k) * omega_ref
        product[slow] = np.prod(-others, axis=1)
        if rest is not None:  # with_rest
            rest[slow] = others
        valid[slow] = np.sum(mask, axis=1) == k
    return _RootSplit(dominant, product, rest, valid & good)


def _split_each(monic: _Array, good: NDArray[np.bool_], origin: int, scaled: _Array,
                omega_ref: float, with_rest: bool) -> _RootSplit:
    """:func:`_dominant_split` for a few samples, one at a time (less overhead)."""
    n = monic.shape[0] - 1
    count = monic.shape[1]
    k = len(scaled)
    total = n + origin
    targets = [complex(z) for z in scaled]
    dominant = np.full((count, k), np.nan, dtype=complex)
    product = np.full(count, np.nan, dtype=complex)
    rest = np.full((count, total - k), np.nan, dtype=complex) if with_rest else None
    valid = np.zeros(count, dtype=bool)
    matchings = list(itertools.permutations(range(k)))
    for j in range(count):
        if not good[j]:
            continue
        x = [complex(r) for r in np.roots(monic[:, j])] + [0j] * origin
        best, chosen = math.inf, None
        for combo in itertools.combinations(range(total), k):
            subset = [x[i] for i in combo]
            if not _is_real_set(subset):
                continue
            cost = min(sum(abs(subset[m[i]] - targets[i]) for i in range(k)) for m in matchings)
            if cost < best:
                best, chosen = cost, combo
        if chosen is None:
            continue
        picked = sorted((x[i] * omega_ref for i in chosen), key=abs)
        others = sorted((x[i] * omega_ref for i in range(total) if i not in chosen), key=abs)
        dominant[j] = picked
        product[j] = math.prod(-r for r in others)
        if rest is not None:  # with_rest
            rest[j] = others
        valid[j] = True
    return _RootSplit(dominant, product, rest, valid)


def _is_real_set(roots: Sequence[complex]) -> bool:
    """True when Π(x − r) over `roots` has real coefficients (within round-off)."""
    coefficients = [1 + 0j]
    for r in roots:
        coefficients = [a - r * b for a, b in zip(coefficients + [0j], [0j] + coefficients)]
    size = max(abs(c) for c in coefficients)
    return all(abs(c.imag) <= _REAL_TOLERANCE * size for c in coefficients)


def _root_floor(monic: _Array) -> _Array:
    """A lower bound on the root magnitudes of monic polynomials (m + 1, B).

    Fujiwara's upper bound applied to the reversed polynomial.
    """
    m = monic.shape[0] - 1
    if m == 0:
        return np.full(monic.shape[1], np.inf)
    last = monic[-1]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        flipped = monic[::-1] / last            # monic: 1, q_{m-1}/q_m, ..., 1/q_m
        terms = [np.abs(flipped[i]) ** (1.0 / i) for i in range(1, m)]
        terms.append(np.abs(flipped[m] / 2) ** (1.0 / m))
        floor = 1.0 / (2 * np.max(np.array(terms), axis=0))
    return np.where(np.isfinite(floor) & (last != 0), floor, 0.0)


def _by_size(roots: _Array) -> _Array:
    return np.take_along_axis(roots, np.argsort(np.abs(roots), axis=1, kind="stable"), axis=1)


@dataclass(frozen=True)
class _RootSplit:
    dominant: np.ndarray     # (B, k), rad/s
    product: np.ndarray      # (B,), Π(−r) over the other roots
    rest: np.ndarray | None  # (B, n − k), rad/s, when asked
    valid: np.ndarray        # (B,)


@dataclass(frozen=True)
class DominantFunction:
    """The dominant part of a network function whose op-amps are modelled.

    It has the evaluator interface the solver and the snapper use
    (:meth:`coefficients`, :meth:`poles`, :meth:`zeros`), so a
    :class:`placer.place.solve.Problem` built with ``nf=DominantFunction(...)``
    places the roots nearest the target while the parasitic roots the
    op-amp model adds stay free.

    Attributes
    ----------
    full : placer.analysis.network.NetworkFunction
        The modelled circuit's whole H(s).
    target_poles, target_zeros : tuple of complex
        The roots to match (rad/s), e.g. a section's.
    omega_ref : float
        Frequency scale for the root finder (rad/s).

    Examples
    --------
    A unity-gain Sallen–Key whose op-amp has a GBW of 1 MHz (what
    :func:`placer.place.amplifier.apply_amplifier` builds) has three poles:

    >>> from dataclasses import replace
    >>> from placer.circuit.library import get_topology
    >>> from placer.analysis.network import network_function
    >>> from placer.place.solve import goal_from_roots
    >>> ideal = get_topology("sallen-key-lowpass-unity").circuit
    >>> circuit = replace(ideal, elements=tuple(
    ...     replace(e, gbw=1e6) if e.kind == "opamp" else e for e in ideal.elements))
    >>> goal = goal_from_roots([-1e4 + 6e4j, -1e4 - 6e4j], kind="lowpass")
    >>> dominant = DominantFunction.for_goal(network_function(circuit), goal)
    >>> values = {"R1": 10e3, "R2": 10e3, "C1": 10e-9, "C2": 1e-9}
    >>> numerator, denominator = dominant.coefficients(values)
    >>> denominator.shape, round(float(numerator[-1] / denominator[-1]), 12)
    ((3,), 1.0)
    >>> len(dominant.parasitic_poles(values))
    1
    """

    full: PartFunction
    target_poles: tuple[complex, ...]
    target_zeros: tuple[complex, ...] = ()
    omega_ref: float = 1.0

    @classmethod
    def for_goal(cls, full: PartFunction, goal: RootTargets) -> DominantFunction:
        """The dominant part matching a :class:`placer.place.solve.Goal`'s roots."""
        return cls(full=full, target_poles=tuple(goal.poles), target_zeros=tuple(goal.zeros),
                   omega_ref=float(goal.omega_ref))

    @property
    def symbols(self) -> Mapping[str, Any]:
        return self.full.symbols

    @property
    def gain_kind(self) -> str:
        return self.full.gain_kind

    @property
    def order(self) -> int:
        return len(self.target_poles)

    def _trivial(self, numerator: FloatArray, denominator: FloatArray) -> bool:
        return (denominator.shape[0] - 1 <= len(self.target_poles)
                and numerator.shape[0] - 1 <= len(self.target_zeros))

    def _splits(self, numerator: FloatArray, denominator: FloatArray,
                with_rest: bool = False) -> tuple[_RootSplit, _RootSplit | None]:
        flat_d = denominator.reshape(denominator.shape[0], -1)
        poles = _dominant_split(flat_d, self.target_poles, self.omega_ref, with_rest=with_rest)
        zeros = None
        flat_n = numerator.reshape(numerator.shape[0], -1)
        if flat_n.shape[0] - 1 > len(self.target_zeros):
            zeros = _dominant_split(flat_n, self.target_zeros, self.omega_ref, with_rest=with_rest)
        return poles, zeros

    def coefficients(self, values: PartValues) -> tuple[FloatArray, FloatArray]:
        """Coefficients of the dominant N and D, highest power first.

        Same layout as :meth:`placer.analysis.network.NetworkFunction.coefficients`:
        shapes ``(len(target_zeros) + 1, *batch)`` and
        ``(len(target_poles) + 1, *batch)``; D is monic; NaN where no real
        dominant root set exists. N carries the gain that makes
        ``H = H_dom·Π(1 − s/z_par)/Π(1 − s/p_par)``.
        """
        numerator, denominator = self.full.coefficients(values)
        if self._trivial(numerator, denominator):
            return numerator, denominator
        batch = denominator.shape[1:]
        poles, zeros = self._splits(numerator, denominator)
        flat_n = numerator.reshape(numerator.shape[0], -1)
        lead = denominator.reshape(denominator.shape[0], -1)[0]
        valid = poles.valid
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if zeros is None:
                reduced_n = flat_n / (lead * poles.product).real
            else:
                valid = valid & zeros.valid
                gain = flat_n[0] / lead * zeros.product / poles.product
                reduced_n = (_poly_rows(zeros.dominant) * gain[None, :]).real
            reduced_d = _poly_rows(poles.dominant).real
        reduced_n = np.where(valid[None, :], reduced_n, np.nan)
        reduced_d = np.where(valid[None, :], reduced_d, np.nan)
        return (reduced_n.reshape(reduced_n.shape[0], *batch),
                reduced_d.reshape(reduced_d.shape[0], *batch))

    def poles(self, values: PartValues) -> ComplexArray:
        """Dominant poles (rad/s) for one set of part values."""
        numerator, denominator = self.full.coefficients(values)
        if self._trivial(numerator, denominator):
            return self.full.poles(values)
        return self._splits(numerator, denominator)[0].dominant[0]

    def zeros(self, values: PartValues) -> ComplexArray:
        """Dominant finite zeros (rad/s) for one set of part values."""
        numerator, denominator = self.full.coefficients(values)
        zeros = None if self._trivial(numerator, denominator) else self._splits(numerator, denominator)[1]
        if zeros is None:
            return self.full.zeros(values)
        return zeros.dominant[0]

    def parasitic_poles(self, values: PartValues) -> ComplexArray:
        """The poles the op-amp model adds (rad/s), for one set of part values."""
        numerator, denominator = self.full.coefficients(values)
        if self._trivial(numerator, denominator):
            return np.zeros(0, dtype=complex)
        return cast(_Array, self._splits(numerator, denominator, with_rest=True)[0].rest)[0]

    def parasitic_zeros(self, values: PartValues) -> ComplexArray:
        """The zeros the op-amp model adds (rad/s), for one set of part values."""
        numerator, denominator = self.full.coefficients(values)
        zeros = None if self._trivial(numerator, denominator) else self._splits(
            numerator, denominator, with_rest=True)[1]
        return np.zeros(0, dtype=complex) if zeros is None else cast(_Array, zeros.rest)[0]


def _take(roots: _Array, mask: NDArray[np.bool_], count: int) -> _Array:
    """The masked roots of each row, `count` per row, sorted by magnitude."""
    rows = roots.shape[0]
    if count <= 0:
        return np.zeros((rows, 0), dtype=complex)
    order = np.argsort(~mask, axis=1, kind="stable")[:, :count]
    picked = np.take_along_axis(roots, order, axis=1)
    full = np.take_along_axis(mask, order, axis=1)
    picked = np.where(full, picked, np.nan)
    by_size = np.argsort(np.abs(picked), axis=1, kind="stable")
    return np.take_along_axis(picked, by_size, axis=1)
