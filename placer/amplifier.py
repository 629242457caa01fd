"""Real op-amps: apply a model, and design with it so the roots stay put.

A design solved with ideal op-amps (nullors) drifts when it is built: a
finite gain-bandwidth product enhances Q and pulls ω0 down, most for
high-Q, high-frequency stages. This module

* applies an op-amp model (:func:`apply_amplifier`): every op-amp gets the
  model's DC gain A0 (V/V) and GBW (Hz), the single-pole model
  ``(s + ωt/A0)·v_out = ωt·(v+ − v−)``, ωt = 2π·GBW, of :mod:`placer.mna`;
  an output resistance becomes an explicit resistor ``U1.ro`` from the
  op-amp's internal node ``U1.int`` to its output pin, so the symbolic and
  the numeric MNA paths both see it;
* splits the now higher-order network function into its *dominant* part
  (the roots nearest the target, which the design must place) and its
  *parasitic* part (the roots the op-amp model adds, left free)
  (:class:`DominantFunction`), with the roots of a whole batch of
  coefficient vectors found at once (vectorised: a quadratic factor by
  Bairstow's iteration where a root bound proves it is the pair nearest
  the target, companion-matrix eigenvalues otherwise);
* re-solves and re-snaps a section with the model in place, starting from
  the ideal-op-amp solution (:func:`place_section_with_amplifier`), and
  reports the drift the ideal design would have had beside the corrected
  design's, and the parasitic poles;
* finds the smallest GBW for which a corrected design still meets an error
  bound (:func:`required_gbw`).

The dominant part is defined so that it equals H(s) at frequencies well
below the parasitic roots: ``H(s) = H_dom(s)·Π(1 − s/z_par)/Π(1 − s/p_par)``,
so its pass-band gain is the full function's (at DC for a low-pass).

References
----------
R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*, Oxford
University Press, 2001, the chapters on active-filter non-idealities
(Q enhancement by finite GBW; from memory).
A. S. Sedra and K. C. Smith, *Microelectronic Circuits*, the filter chapter
on the effect of finite op-amp bandwidth (from memory).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, replace

import numpy as np

from .circuit import Element
from .errors import SpecError, UnreachableTarget
from .network import circuit_poles, network_function
from .snap import COARSE_BUDGET, snap
from .solve import goal_from_section, make_problem, root_errors, solve
from .spec import AmplifierSpec
from .units import format_value

__all__ = [
    "apply_amplifier",
    "check_amplifier",
    "batched_roots",
    "DominantFunction",
    "Drift",
    "AmplifiedCandidate",
    "place_section_with_amplifier",
    "amplifier_summary",
    "GBWRequirement",
    "GBW_SPREAD",
    "required_gbw",
]

#: Relative imaginary part below which a root (or a root set's polynomial) counts as real.
_REAL_TOLERANCE = 1e-7
#: Batches up to this size are split one sample at a time (scipy's polishing calls).
_SMALL_BATCH = 4
#: Relative spread of an op-amp's GBW around its typical value (process and
#: temperature) that a corrected design should bear (common practice, no source).
GBW_SPREAD = 0.25
_PART_KINDS = ("resistor", "capacitor", "inductor")


# -- the model ---------------------------------------------------------------

def _check_model(amplifier):
    """Reject model figures no op-amp has; return (gain, gbw, resistance)."""
    gain, gbw = amplifier.gain, amplifier.gbw
    resistance = amplifier.output_resistance
    if gain is not None and not (math.isfinite(gain) and gain > 0):
        raise SpecError(
            f"amplifier gain = {gain!r} V/V must be a positive open-loop gain "
            "(V/V, for example 1e5; or '100 dB' in a spec file)"
        )
    if gbw is not None and not (math.isfinite(gbw) and gbw > 0):
        raise SpecError(
            f"amplifier gbw = {gbw!r} Hz must be a positive frequency "
            "(for example 1e6 for 1 MHz)"
        )
    if resistance is not None and not (math.isfinite(resistance) and resistance >= 0):
        raise SpecError(
            f"amplifier output_resistance = {resistance!r} ohm must be zero or positive"
        )
    return gain, gbw, resistance or 0.0


def _describe(amplifier):
    words = []
    if amplifier.gbw is not None:
        words.append(f"gbw {format_value(amplifier.gbw, 'Hz')}")
    if amplifier.gain is not None:
        words.append(f"gain {amplifier.gain:.3g} V/V")
    if amplifier.output_resistance:
        words.append(f"output_resistance {format_value(amplifier.output_resistance, 'ohm')}")
    return ", ".join(words) or "ideal"


def apply_amplifier(circuit, amplifier):
    """Give every op-amp of a circuit the amplifier model.

    Parameters
    ----------
    circuit : Circuit
    amplifier : placer.spec.AmplifierSpec
        ``gbw`` (Hz), ``gain`` (DC open-loop, V/V), ``output_resistance``
        (ohm); None fields stay ideal.

    Returns
    -------
    Circuit
        Op-amps carry ``gain`` and ``gbw``. With ``output_resistance`` > 0,
        op-amp ``U1`` drives a new node ``U1.int`` and a resistor ``U1.ro``
        joins it to the op-amp's output node. A circuit with no op-amp and
        no controlled source comes back unchanged.

    Raises
    ------
    SpecError
        For a non-positive gain or GBW, a negative output resistance, or a
        circuit whose only amplifiers are controlled sources (the model
        applies to op-amps only).

    Examples
    --------
    >>> from placer.library import get_topology
    >>> model = AmplifierSpec(gbw=1e6, gain=1e5, output_resistance=50.0)
    >>> built = apply_amplifier(get_topology("sallen-key-lowpass-unity").circuit, model)
    >>> [(e.name, e.nodes) for e in built.elements if e.name.startswith("U1")]
    [('U1', ('n2', 'vout', 'U1.int')), ('U1.ro', ('U1.int', 'vout'))]
    """
    gain, gbw, resistance = _check_model(amplifier)
    opamps = [e for e in circuit.elements if e.kind == "opamp"]
    if not opamps:
        sources = [e.name for e in circuit.elements if e.kind in ("vcvs", "ccvs", "cccs", "vccs")]
        if sources and (gain is not None or gbw is not None or resistance > 0):
            label = f"circuit {circuit.name!r}" if circuit.name else "the circuit"
            raise SpecError(
                f"the amplifier model ({_describe(amplifier)}) applies to op-amps only, and "
                f"{label} has none: its gain comes from {sources[0]!r}, an ideal controlled "
                "source; write the amplifier as an 'opamp' element (with its gain-setting "
                "resistors) to model it, or leave [amplifier] out"
            )
        return circuit
    names = {e.name for e in circuit.elements}
    nodes = set(circuit.nodes)
    elements = []
    for element in circuit.elements:
        if element.kind != "opamp":
            elements.append(element)
            continue
        modelled = replace(element, gain=gain, gbw=gbw)
        if resistance > 0:
            internal, resistor = f"{element.name}.int", f"{element.name}.ro"
            if internal in nodes or resistor in names:
                raise SpecError(
                    f"op-amp {element.name!r}: the names {internal!r} and {resistor!r} for its "
                    "output resistance are already used in the circuit; rename that node or element"
                )
            output = element.nodes[2]
            modelled = replace(modelled, nodes=(element.nodes[0], element.nodes[1], internal))
            elements.append(modelled)
            elements.append(Element(resistor, "resistor", (internal, output), value=float(resistance)))
        else:
            elements.append(modelled)
    return replace(circuit, elements=tuple(elements), _graph=None)


def check_amplifier(amplifier, section, *, index=None):
    """Reject a GBW at or below a section's f0; check the model's figures.

    Parameters
    ----------
    amplifier : placer.spec.AmplifierSpec
    section : placer.targets.Section
    index : int, optional
        The section's number in the cascade, for the message.

    Raises
    ------
    SpecError
        Naming the GBW, the section and its f0 (both in Hz).
    """
    _check_model(amplifier)
    if amplifier.gbw is None:
        return
    f0 = section.omega0 / (2 * math.pi)
    if amplifier.gbw <= f0:
        where = f"section {index}'s" if index is not None else "the section's"
        q = section.q if section.q is not None else 0.5
        raise SpecError(
            f"gbw {format_value(amplifier.gbw, 'Hz')} is at or below {where} f0 "
            f"{format_value(f0, 'Hz', digits=2)}; an op-amp needs GBW well above f0, "
            f"typically ≥ 100·f0·Q ({format_value(100 * f0 * q, 'Hz')} here)"
        )


# -- roots of many polynomials at once ---------------------------------------

def batched_roots(coefficients, omega_ref=1.0, *, near=None):
    """Roots of many polynomials at once (vectorised over the batch).

    Degrees up to two are solved in closed form. Higher degrees use the
    eigenvalues of the companion matrices (numpy, batched); with a hint
    `near` (two roots, rad/s, e.g. a section's target poles) a quadratic
    factor near them is first found by Bairstow's iteration and the
    quotient solved in closed form (or by eigenvalues), which is much
    faster for the small, many polynomials of a discrete search; samples
    where that does not converge fall back to the eigenvalues.

    Parameters
    ----------
    coefficients : ndarray, shape (n + 1, *batch)
        Highest power first (the layout of
        :meth:`placer.network.NetworkFunction.coefficients`).
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
    >>> r = batched_roots(np.array([[1.0, 1.0], [3.0, 0.0], [2.0, -4.0]]))
    >>> np.sort(r[0].real), np.sort(r[1].real)
    (array([-2., -1.]), array([-2.,  2.]))
    >>> c = np.poly([-1 + 2j, -1 - 2j, -50.0, -300.0]).reshape(-1, 1)
    >>> np.sort_complex(batched_roots(c, near=[-1 + 2j, -1 - 2j])[0]).round(9) + 0
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


def _normalise(c, omega_ref):
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


def _monic_roots(monic, hint=None):
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


def _start_factor(monic, pair):
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


def _pair_factor(pair):
    """(u, v) of x² + u·x + v with the roots `pair`."""
    return -float((pair[0] + pair[1]).real), float((pair[0] * pair[1]).real)


def _low_degree_roots(monic):
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


def _small_roots(monic):
    """Roots of the (short) quotient polynomials, closed form when possible."""
    if monic.shape[0] <= 3:
        return _low_degree_roots(monic)
    return _eigen_roots(monic)


def _eigen_roots(monic):
    """Companion-matrix eigenvalues of monic polynomials (n + 1, B) -> (B, n)."""
    n = monic.shape[0] - 1
    count = monic.shape[1]
    companion = np.zeros((count, n, n))
    companion[:, 0, :] = -monic[1:].T
    companion[:, np.arange(1, n), np.arange(n - 1)] = 1.0
    return _polish(monic.T, np.linalg.eigvals(companion))


def _bairstow(monic, u, v, *, iterations=30, tolerance=1e-13):
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


def _polish(monic, x, steps=2):
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


def _poly_rows(roots):
    """Coefficients of Π(s − r) over the last axis, highest first: (k + 1, B)."""
    count, k = roots.shape
    out = np.zeros((k + 1, count), dtype=complex)
    out[0] = 1.0
    for j in range(k):
        out[1:] = out[1:] - roots[:, j][None, :] * out[:-1]
    return out


def _select(roots, targets):
    """Mask (B, n) of the root set nearest `targets`, closed under conjugation.

    Every k-subset of the n roots whose polynomial is real is a candidate;
    its cost is the smallest sum of distances to the k targets over the
    matchings. Samples with no real k-subset get an all-False row.
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

def _dominant_split(coefficients, targets, omega_ref, *, with_rest=False):
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
    go through the general search (:func:`_select` over all roots).

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
            if with_rest:
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
        mask = _select(x, scaled)
        others = _take(x, ~mask, rest_count) * omega_ref
        dominant[slow] = _take(x, mask, k) * omega_ref
        product[slow] = np.prod(-others, axis=1)
        if with_rest:
            rest[slow] = others
        valid[slow] = np.sum(mask, axis=1) == k
    return _RootSplit(dominant, product, rest, valid & good)


def _split_each(monic, good, origin, scaled, omega_ref, with_rest):
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
        if with_rest:
            rest[j] = others
        valid[j] = True
    return _RootSplit(dominant, product, rest, valid)


def _is_real_set(roots):
    """True when Π(x − r) over `roots` has real coefficients (within round-off)."""
    coefficients = [1 + 0j]
    for r in roots:
        coefficients = [a - r * b for a, b in zip(coefficients + [0j], [0j] + coefficients)]
    size = max(abs(c) for c in coefficients)
    return all(abs(c.imag) <= _REAL_TOLERANCE * size for c in coefficients)


def _root_floor(monic):
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


def _by_size(roots):
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
    :class:`placer.solve.Problem` built with ``nf=DominantFunction(...)``
    places the roots nearest the target while the parasitic roots the
    op-amp model adds stay free.

    Attributes
    ----------
    full : placer.network.NetworkFunction
        The modelled circuit's whole H(s).
    target_poles, target_zeros : tuple of complex
        The roots to match (rad/s), e.g. a section's.
    omega_ref : float
        Frequency scale for the root finder (rad/s).

    Examples
    --------
    >>> from placer.library import get_topology
    >>> from placer.solve import goal_from_roots
    >>> circuit = apply_amplifier(get_topology("sallen-key-lowpass-unity").circuit,
    ...                           AmplifierSpec(gbw=1e6))
    >>> goal = goal_from_roots([-1e4 + 6e4j, -1e4 - 6e4j], kind="lowpass")
    >>> dominant = DominantFunction.for_goal(network_function(circuit), goal)
    >>> values = {"R1": 10e3, "R2": 10e3, "C1": 10e-9, "C2": 1e-9}
    >>> numerator, denominator = dominant.coefficients(values)
    >>> denominator.shape, round(float(numerator[-1] / denominator[-1]), 12)
    ((3,), 1.0)
    >>> len(dominant.parasitic_poles(values))
    1
    """

    full: object
    target_poles: tuple
    target_zeros: tuple = ()
    omega_ref: float = 1.0

    @classmethod
    def for_goal(cls, full, goal):
        """The dominant part matching a :class:`placer.solve.Goal`'s roots."""
        return cls(full=full, target_poles=tuple(goal.poles), target_zeros=tuple(goal.zeros),
                   omega_ref=float(goal.omega_ref))

    @property
    def symbols(self):
        return self.full.symbols

    @property
    def gain_kind(self):
        return self.full.gain_kind

    @property
    def order(self):
        return len(self.target_poles)

    def _trivial(self, numerator, denominator):
        return (denominator.shape[0] - 1 <= len(self.target_poles)
                and numerator.shape[0] - 1 <= len(self.target_zeros))

    def _splits(self, numerator, denominator, with_rest=False):
        flat_d = denominator.reshape(denominator.shape[0], -1)
        poles = _dominant_split(flat_d, self.target_poles, self.omega_ref, with_rest=with_rest)
        zeros = None
        flat_n = numerator.reshape(numerator.shape[0], -1)
        if flat_n.shape[0] - 1 > len(self.target_zeros):
            zeros = _dominant_split(flat_n, self.target_zeros, self.omega_ref, with_rest=with_rest)
        return poles, zeros

    def coefficients(self, values):
        """Coefficients of the dominant N and D, highest power first.

        Same layout as :meth:`placer.network.NetworkFunction.coefficients`:
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

    def poles(self, values):
        """Dominant poles (rad/s) for one set of part values."""
        numerator, denominator = self.full.coefficients(values)
        if self._trivial(numerator, denominator):
            return self.full.poles(values)
        return self._splits(numerator, denominator)[0].dominant[0]

    def zeros(self, values):
        """Dominant finite zeros (rad/s) for one set of part values."""
        numerator, denominator = self.full.coefficients(values)
        zeros = None if self._trivial(numerator, denominator) else self._splits(numerator, denominator)[1]
        if zeros is None:
            return self.full.zeros(values)
        return zeros.dominant[0]

    def parasitic_poles(self, values):
        """The poles the op-amp model adds (rad/s), for one set of part values."""
        numerator, denominator = self.full.coefficients(values)
        if self._trivial(numerator, denominator):
            return np.zeros(0, dtype=complex)
        return self._splits(numerator, denominator, with_rest=True)[0].rest[0]

    def parasitic_zeros(self, values):
        """The zeros the op-amp model adds (rad/s), for one set of part values."""
        numerator, denominator = self.full.coefficients(values)
        zeros = None if self._trivial(numerator, denominator) else self._splits(
            numerator, denominator, with_rest=True)[1]
        return np.zeros(0, dtype=complex) if zeros is None else zeros.rest[0]


def _take(roots, mask, count):
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


# -- designing with the model ------------------------------------------------

@dataclass(frozen=True)
class Drift:
    """How far a design's dominant roots sit from the target, percent.

    ``f0_pct`` and ``q_pct`` compare the design evaluated with the op-amp
    model against the target (what the built board shows); ``f0_shift_pct``
    and ``q_shift_pct`` isolate the op-amp's part: the same part values
    with the model against with ideal op-amps. ``q_*`` are None for a
    first-order section.
    """

    f0_pct: float | None
    q_pct: float | None
    f0_shift_pct: float | None
    q_shift_pct: float | None

    @property
    def worst_pct(self):
        return max(abs(x) for x in (self.f0_pct, self.q_pct) if x is not None)


@dataclass(frozen=True)
class AmplifiedCandidate:
    """One topology placed for one section with a real op-amp model.

    The first fields are those of :class:`placer.design.Candidate` (it ranks
    and builds the same way); ``problem``, ``solution``, ``snapped`` and
    ``errors`` belong to the corrected design, evaluated with the model.

    Attributes
    ----------
    amplifier : placer.spec.AmplifierSpec
    circuit : Circuit
        The topology's circuit with the model applied (parts symbolic).
    ideal_snapped : placer.snap.SnapResult
        The design solved and snapped with ideal op-amps.
    ideal_errors : placer.solve.RootErrors
        That design's errors with ideal op-amps.
    ideal_drift, drift : Drift
        The ideal design's and the corrected design's figures with the model.
    low_gbw_drift : Drift
        The corrected design's figures when the op-amp's GBW is
        :data:`GBW_SPREAD` below the model's (its shifts are against the
        corrected design at the model's GBW): how much the correction
        leans on the exact GBW.
    parasitic_poles : tuple of complex
        The poles the model adds, at the corrected values (rad/s).
    note : str
        Why nothing was modelled, when so (no op-amp in the topology).
    """

    topology: object
    reachable: bool
    reason: str = ""
    problem: object = None
    solution: object = None
    snapped: object = None
    errors: object = None
    continuous_errors: object = None
    amplifier: object = None
    circuit: object = None
    ideal_snapped: object = None
    ideal_errors: object = None
    ideal_drift: Drift | None = None
    drift: Drift | None = None
    low_gbw_drift: Drift | None = None
    parasitic_poles: tuple = ()
    note: str = ""

    @property
    def error_pct(self):
        """Worst root/figure error after snapping, with the model, percent."""
        return _worst_pct(self.errors) if self.reachable else math.inf

    @property
    def spread(self):
        return _value_spread(self.topology, self.snapped.values) if self.reachable else {}

    @property
    def parasitic_poles_hz(self):
        """|p|/2π of each parasitic pole, Hz, smallest first."""
        return tuple(sorted(abs(p) / (2 * math.pi) for p in self.parasitic_poles))


def _worst_pct(errors):
    worst = errors.worst_pct
    if errors.gain_db is not None:
        worst = max(worst, 100 * abs(10 ** (errors.gain_db / 20) - 1))
    return worst


def _value_spread(topology, values):
    """Largest/smallest value ratio per part kind (as placer.design.value_spread)."""
    out = {}
    for kind in _PART_KINDS:
        numbers = [values[e.symbol] for e in topology.circuit.elements
                   if e.kind == kind and e.symbol in values]
        numbers += [e.value for e in topology.circuit.elements
                    if e.kind == kind and e.symbol is None and e.value]
        if len(numbers) >= 2:
            out[kind] = max(numbers) / min(numbers)
    return out


@dataclass(frozen=True)
class _Ideal:
    goal: object
    problem: object
    solution: object
    snapped: object
    errors: object


def _problem_options(topology, parts):
    """Ranges, series, fixed parts and constraints as place_section reads them."""
    if parts is None:
        return None, None, {}, ()
    fixed = {k: v for k, v in parts.fixed.items() if k in topology.symbols}
    constraints = tuple(
        c for c in parts.constraints if c.part in topology.symbols and c.source in topology.symbols
    )
    return dict(parts.ranges), dict(parts.series), fixed, constraints


def _ideal_placement(section, topology, parts, seed):
    """Solve and snap with ideal op-amps, as placer.design.place_section does."""
    goal = goal_from_section(section)
    ranges, series, fixed, constraints = _problem_options(topology, parts)
    problem = make_problem(topology, goal, ranges=ranges, fixed=fixed, constraints=constraints)
    solution = solve(problem, seed=seed)
    snapped = snap(problem, solution, series=series)
    return _Ideal(goal, problem, solution, snapped, root_errors(problem.nf, snapped.values, goal))


def _drift(ideal_nf, modelled_nf, values, goal):
    modelled = root_errors(modelled_nf, values, goal)
    ideal = root_errors(ideal_nf, values, goal)

    def shift(a, b):
        if a is None or b is None:
            return None
        return float(100 * ((1 + a / 100) / (1 + b / 100) - 1))

    def number(x):
        return None if x is None else float(x)

    return Drift(
        f0_pct=number(modelled.f0_pct), q_pct=number(modelled.q_pct),
        f0_shift_pct=shift(modelled.f0_pct, ideal.f0_pct),
        q_shift_pct=shift(modelled.q_pct, ideal.q_pct),
    )


def _pair_figures(poles, goal):
    """ω0 (rad/s) and Q (None for one pole) of the poles nearest the goal's."""
    x = np.asarray(poles, dtype=complex)[None, :] / goal.omega_ref
    mask = _select(x, np.asarray(goal.poles, dtype=complex) / goal.omega_ref)[0]
    chosen = np.asarray(poles, dtype=complex)[mask]
    if len(chosen) == 1:
        return abs(chosen[0]), None
    if len(chosen) != 2:
        return math.nan, math.nan
    omega0 = math.sqrt(abs(chosen[0] * chosen[1]))
    return omega0, omega0 / -float((chosen[0] + chosen[1]).real)


def _low_gbw_drift(topology, amplifier, values, goal):
    """Drift of a design when the GBW is GBW_SPREAD low, from numeric MNA poles."""
    if amplifier.gbw is None:
        return None
    figures = []
    for gbw in (amplifier.gbw, amplifier.gbw * (1 - GBW_SPREAD)):
        model = replace(amplifier, gbw=gbw)
        built = apply_amplifier(topology.circuit, model).with_values(values)
        figures.append(_pair_figures(circuit_poles(built), goal))
    (omega_nominal, q_nominal), (omega_low, q_low) = figures

    def pct(a, b):
        return None if a is None or b is None else float(100 * (a / b - 1))

    return Drift(
        f0_pct=pct(omega_low, goal.omega0), q_pct=pct(q_low, goal.q),
        f0_shift_pct=pct(omega_low, omega_nominal), q_shift_pct=pct(q_low, q_nominal),
    )


def place_section_with_amplifier(section, topology, amplifier, *, parts=None, seed=0,
                                 coarse_budget=COARSE_BUDGET):
    """Solve and snap one topology for one section with real op-amps.

    The section is first placed with ideal op-amps (as
    :func:`placer.design.place_section` does); then, with every op-amp
    modelled, the dominant poles (and zeros) are re-solved onto the target
    starting from the ideal solution, the parasitic roots left free, and
    the result is snapped to the preferred-value series.

    Parameters
    ----------
    section : placer.targets.Section
    topology : Topology
    amplifier : placer.spec.AmplifierSpec
        GBW in Hz, DC gain in V/V, output resistance in ohm.
    parts : placer.spec.PartsSpec, optional
    seed : int
    coarse_budget : int
        Coarse-part combinations the snapper may enumerate (see
        :func:`placer.snap.snap`).

    Returns
    -------
    AmplifiedCandidate
        ``reachable`` False with the reason when the topology cannot reach
        the section, with ideal op-amps or with the model.

    Raises
    ------
    SpecError
        For a GBW at or below the section's f0, model figures no op-amp
        has, or a topology whose amplifiers are controlled sources.

    Examples
    --------
    >>> from placer.library import get_topology
    >>> from placer.targets import make_section
    >>> section = make_section("lowpass", 2 * math.pi * 10e3, 2.0)
    >>> c = place_section_with_amplifier(section, get_topology("sallen-key-lowpass-unity"),
    ...                                  AmplifierSpec(gbw=1e6), coarse_budget=200)
    >>> abs(c.drift.q_pct) < 1 < abs(c.ideal_drift.q_pct)
    True
    """
    check_amplifier(amplifier, section)
    modelled = apply_amplifier(topology.circuit, amplifier)
    try:
        ideal = _ideal_placement(section, topology, parts, seed)
    except UnreachableTarget as reason:
        return AmplifiedCandidate(topology=topology, reachable=False, reason=reason.reason,
                                  amplifier=amplifier, circuit=modelled)
    return _correct(section, topology, amplifier, modelled, ideal, parts, seed, coarse_budget)


def _correct(section, topology, amplifier, modelled, ideal, parts, seed, coarse_budget):
    goal = ideal.goal
    full = network_function(modelled)
    dominant = DominantFunction.for_goal(full, goal)
    ideal_drift = _drift(ideal.problem.nf, dominant, ideal.snapped.values, goal)
    common = dict(topology=topology, amplifier=amplifier, circuit=modelled,
                  ideal_snapped=ideal.snapped, ideal_errors=ideal.errors, ideal_drift=ideal_drift)
    if modelled is topology.circuit:
        return AmplifiedCandidate(
            reachable=True, problem=ideal.problem, solution=ideal.solution, snapped=ideal.snapped,
            errors=ideal.errors, continuous_errors=root_errors(ideal.problem.nf, ideal.solution.values, goal),
            drift=ideal_drift, note="the topology has no op-amp: nothing to model", **common,
        )
    ranges, series, fixed, constraints = _problem_options(topology, parts)
    try:
        problem = make_problem(topology, goal, ranges=ranges, fixed=fixed, constraints=constraints,
                               nf=dominant)
        starts = [ideal.solution.u, *ideal.solution.alternatives]
        solution = solve(problem, seed=seed, initial=starts)
    except UnreachableTarget as reason:
        return AmplifiedCandidate(
            reachable=False,
            reason=f"with the op-amp model ({_describe(amplifier)}): {reason.reason}", **common,
        )
    snapped = snap(problem, solution, series=series, coarse_budget=coarse_budget)
    return AmplifiedCandidate(
        reachable=True, problem=problem, solution=solution, snapped=snapped,
        errors=root_errors(dominant, snapped.values, goal),
        continuous_errors=root_errors(dominant, solution.values, goal),
        drift=_drift(ideal.problem.nf, dominant, snapped.values, goal),
        parasitic_poles=tuple(complex(p) for p in dominant.parasitic_poles(snapped.values)),
        low_gbw_drift=_low_gbw_drift(topology, amplifier, snapped.values, goal),
        **common,
    )


def amplifier_summary(candidate):
    """The op-amp figures of a placed candidate, JSON-ready; None when ideal.

    Parameters
    ----------
    candidate : AmplifiedCandidate or placer.design.SectionDesign
        (a SectionDesign's winning candidate is used).

    Returns
    -------
    dict or None
        ``amplifier`` (gbw_hz, gain, output_resistance_ohm, preset),
        ``ideal_design`` and ``corrected_design`` (f0_error_pct, q_error_pct
        against the target with the model; f0_shift_pct, q_shift_pct caused
        by the op-amp alone), ``corrected_design_at_low_gbw`` (the same with
        the GBW :data:`GBW_SPREAD` lower, its ``gbw_hz``; shifts against the
        corrected design at the model's GBW; None without a GBW),
        ``parasitic_poles_hz`` and ``parasitic_poles`` (``[re, im]`` in
        rad/s), ``note``.
    """
    candidate = getattr(candidate, "candidate", candidate)
    if not isinstance(candidate, AmplifiedCandidate) or not candidate.reachable:
        return None
    amplifier = candidate.amplifier

    def figures(drift):
        return {"f0_error_pct": drift.f0_pct, "q_error_pct": drift.q_pct,
                "f0_shift_pct": drift.f0_shift_pct, "q_shift_pct": drift.q_shift_pct}

    return {
        "amplifier": {"gbw_hz": amplifier.gbw, "gain": amplifier.gain,
                      "output_resistance_ohm": amplifier.output_resistance,
                      "preset": amplifier.preset},
        "ideal_design": figures(candidate.ideal_drift),
        "corrected_design": figures(candidate.drift),
        "corrected_design_at_low_gbw": None if candidate.low_gbw_drift is None else {
            "gbw_hz": amplifier.gbw * (1 - GBW_SPREAD), **figures(candidate.low_gbw_drift)},
        "parasitic_poles_hz": list(candidate.parasitic_poles_hz),
        "parasitic_poles": [[p.real, p.imag] for p in candidate.parasitic_poles],
        "note": candidate.note,
    }


# -- how much GBW a section needs --------------------------------------------

@dataclass(frozen=True)
class GBWRequirement:
    """The smallest op-amp GBW (Hz) for a section within an error bound.

    Attributes
    ----------
    gbw_hz : float
        Smallest typical GBW for which the corrected (re-solved, snapped)
        design meets the bound, also when the op-amp's actual GBW is off by
        ± ``gbw_spread``; ``inf`` when none up to the search's top does.
    uncorrected_gbw_hz : float
        Smallest GBW for which the ideal-op-amp design, built as it is,
        meets the bound.
    parasitic_poles_hz : tuple of float
        The corrected design's parasitic poles at ``gbw_hz``, Hz.
    error_pct : float
        The bound, percent (worst of the f0, Q and gain errors).
    gbw_spread : float
        The relative GBW spread the corrected design was required to bear.
    note : str
    """

    gbw_hz: float
    uncorrected_gbw_hz: float
    parasitic_poles_hz: tuple
    error_pct: float
    gbw_spread: float = 0.0
    note: str = ""


def required_gbw(section, topology, *, error_pct=1.0, parts=None, amplifier_gain=None,
                 gbw_spread=GBW_SPREAD, seed=0, rtol=0.02, coarse_budget=400):
    """Smallest GBW (Hz) for which a corrected design meets `error_pct`.

    Bisection in log GBW over [2·f0, 1e4·f0·max(Q, 1)] (Hz): at each GBW the
    section is re-solved and snapped with the single-pole model, and the
    result must meet the bound at that GBW and at GBW·(1 ± `gbw_spread`).
    Without the spread the search would return designs that lean on the
    op-amp's exact GBW (a GBW of a few f0 can be "corrected" on paper; the
    built filter then moves with every op-amp). The quick uncorrected figure
    is found the same way on the ideal design's snapped values. Both
    searches assume the error falls as GBW rises.

    Parameters
    ----------
    section : placer.targets.Section
    topology : Topology
    error_pct : float
        Bound on the worst of the f0, Q and gain errors, percent.
    parts : placer.spec.PartsSpec, optional
    amplifier_gain : float, optional
        DC open-loop gain, V/V (None: infinite, the integrator model).
    gbw_spread : float
        Relative GBW spread in [0, 1) the corrected design must bear
        (default :data:`GBW_SPREAD`).
    seed : int
    rtol : float
        Relative width of the GBW bracket at which the bisection stops.
    coarse_budget : int
        Coarse combinations per snap (smaller is faster, see
        :func:`placer.snap.snap`).

    Returns
    -------
    GBWRequirement

    Raises
    ------
    SpecError
        For a non-positive bound or gain, or a spread outside [0, 1).

    Examples
    --------
    >>> from placer.library import get_topology
    >>> from placer.targets import make_section
    >>> need = required_gbw(make_section("lowpass", 2 * math.pi * 10e3, 2.0),
    ...                     get_topology("sallen-key-lowpass-unity"), rtol=0.1)
    >>> 10e3 < need.gbw_hz < need.uncorrected_gbw_hz
    True
    """
    if not (math.isfinite(error_pct) and error_pct > 0):
        raise SpecError(f"error_pct = {error_pct!r} must be a positive percentage")
    if not (math.isfinite(gbw_spread) and 0 <= gbw_spread < 1):
        raise SpecError(f"gbw_spread = {gbw_spread!r} must be a fraction in [0, 1), e.g. 0.25")
    _check_model(AmplifierSpec(gain=amplifier_gain))
    f0 = section.omega0 / (2 * math.pi)
    low, high = 2 * f0, 1e4 * f0 * max(section.q or 1.0, 1.0)
    try:
        ideal = _ideal_placement(section, topology, parts, seed)
    except UnreachableTarget as reason:
        return GBWRequirement(math.inf, math.inf, (), error_pct, gbw_spread,
                              note=f"the topology cannot reach the section: {reason.reason}")
    if _worst_pct(ideal.errors) > error_pct:
        return GBWRequirement(
            math.inf, math.inf, (), error_pct, gbw_spread,
            note=f"even with ideal op-amps the snapped design misses by "
                 f"{_worst_pct(ideal.errors):.3g} %, more than the bound",
        )
    if topology.circuit.opamp_count == 0:
        return GBWRequirement(0.0, 0.0, (), error_pct, gbw_spread, note="the topology has no op-amp")
    corrected_at = {}

    def model(gbw):
        return AmplifierSpec(gbw=gbw, gain=amplifier_gain)

    def worst_at(gbw, values):
        dominant = DominantFunction.for_goal(
            network_function(apply_amplifier(topology.circuit, model(gbw))), ideal.goal)
        return _worst_pct(root_errors(dominant, values, ideal.goal))

    def corrected(gbw):
        if gbw not in corrected_at:
            amplifier = model(gbw)
            corrected_at[gbw] = _correct(section, topology, amplifier,
                                         apply_amplifier(topology.circuit, amplifier),
                                         ideal, parts, seed, coarse_budget)
        return corrected_at[gbw]

    def corrected_ok(gbw):
        candidate = corrected(gbw)
        if not candidate.reachable or candidate.error_pct > error_pct:
            return False
        edges = (gbw * (1 - gbw_spread), gbw * (1 + gbw_spread)) if gbw_spread else ()
        return all(worst_at(edge, candidate.snapped.values) <= error_pct for edge in edges)

    def uncorrected_ok(gbw):
        return worst_at(gbw, ideal.snapped.values) <= error_pct

    notes = []
    gbw = _bisect(corrected_ok, low, high, rtol)
    uncorrected = _bisect(uncorrected_ok, low, high, rtol)
    parasitic = ()
    if math.isfinite(gbw):
        parasitic = corrected(gbw).parasitic_poles_hz
        if gbw == low:
            notes.append(f"met already at the search's lowest GBW, 2·f0 = {format_value(low, 'Hz')}")
        if gbw_spread:
            notes.append(f"the corrected design holds for GBW within ±{100 * gbw_spread:.3g} %")
    else:
        notes.append(f"not met up to {format_value(high, 'Hz')}")
    if math.isfinite(gbw) and math.isfinite(uncorrected):
        notes.append(f"correcting for the op-amp lowers the GBW needed {uncorrected / gbw:.3g}-fold")
    return GBWRequirement(gbw, uncorrected, tuple(parasitic), error_pct, gbw_spread,
                          note="; ".join(notes))


def _bisect(ok, low, high, rtol):
    """Smallest x in [low, high] with ok(x), by bisection in log x (inf: none)."""
    if not ok(high):
        return math.inf
    if ok(low):
        return low
    while high / low > 1 + rtol:
        middle = math.sqrt(low * high)
        if ok(middle):
            high = middle
        else:
            low = middle
    return high
