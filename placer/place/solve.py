"""Continuous placement: part values that put a topology's roots on target.

The free parts are solved in log space, u = ln(x), within their ranges, by
bounded least squares (scipy.optimize, 'trf') from several quasi-random
starts (Sobol points in the log box, seeded). The residuals compare the
topology's network function with the goal in a frequency-normalised form:

* denominator: the logarithms of the monic denominator's coefficients,
  scaled by the goal's reference frequency (for a second-order section
  these are 2·ln(ω0/ω0t) and ln((ω0/Q)/(ω0t/Qt)): ω0 and Q matched);
* numerator shape: its coefficients normalised to the largest, so zeros
  (a notch's, an all-pass's) are matched;
* gain: the logarithm of the pass-band gain magnitude, with a lower weight
  so that a topology whose gain is fixed (unity-gain Sallen–Key) still puts
  its poles exactly.

Parts tied by a constraint (``C1 = C2``, ``R2 = 4*R1``) are eliminated;
fixed parts keep their values. A target a topology cannot reach raises
:class:`~placer.errors.UnreachableTarget` with the reason in words.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any, cast

import numpy as np
from scipy.optimize import least_squares
from scipy.stats import qmc

from ..errors import SpecError, UnreachableTarget
from ..circuit.library import realises
from ..circuit.topology import Topology
from ..analysis.network import network_function
from ..analysis.second_order import first_order_omega, omega0_q, passband_gain, zero_pair_omega
from .least_squares import batched_least_squares
from .ties import tie_parts

if TYPE_CHECKING:
    from numpy.typing import ArrayLike

    from ..analysis.protocols import PartFunction
    from ..circuit.topology import Constraint
    from ..target.targets import Section

__all__ = [
    "Goal",
    "goal_from_section",
    "goal_from_roots",
    "Problem",
    "make_problem",
    "Solution",
    "solve",
    "RootErrors",
    "root_errors",
    "structural_reason",
    "figure_error",
]

GAIN_WEIGHT = 0.1
#: Residual floor of a denominator coefficient whose sign differs from the
#: goal's: larger than any log ratio within the value ranges (ln 1e20 ≈ 46),
#: so a solution with poles mirrored into the right half-plane (the same
#: |coefficients|) never ranks beside one on target.
WRONG_SIGN_RESIDUAL = 50.0


@dataclass(frozen=True)
class Goal:
    """What a topology must realise, normalised for the residuals.

    Attributes
    ----------
    denominator : ndarray
        Monic target denominator, highest power first, in s/ω_ref.
    numerator_shape : ndarray
        Target numerator in s/ω_ref, divided by its largest-magnitude coefficient.
    gain : float or None
        Target pass-band gain magnitude (None: not matched).
    gain_kind : str
        Where the gain is read: "dc", "hf" or "center".
    omega_ref : float
        Normalising frequency, rad/s.
    poles, zeros : tuple of complex
        The target roots, rad/s.
    omega0, q, zero_omega : float or None
        Section figures when the goal is one first- or second-order section.
    """

    denominator: np.ndarray
    numerator_shape: np.ndarray
    gain: float | None
    gain_kind: str
    omega_ref: float
    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]
    omega0: float | None = None
    q: float | None = None
    zero_omega: float | None = None
    kind: str = ""

    @property
    def order(self) -> int:
        return len(self.denominator) - 1


def _gain_kind(kind: str, zeros: Sequence[complex]) -> str:
    if kind == "highpass":
        return "hf"
    if kind == "bandpass":
        return "center"
    if kind in ("lowpass", "notch", "allpass"):
        return "dc"
    return "dc" if all(abs(z) > 0 for z in zeros) else "hf"


def goal_from_roots(poles: Iterable[complex], zeros: Iterable[complex] = (), gain: float | None = None,
                    *, kind: str = "", omega0: float | None = None, q: float | None = None,
                    zero_omega: float | None = None) -> Goal:
    """A goal from target poles and zeros (rad/s) and a gain magnitude."""
    poles = tuple(complex(p) for p in poles)
    zeros = tuple(complex(z) for z in zeros)
    if not poles:
        raise SpecError("a goal needs at least one pole")
    omega_ref = float(np.exp(np.mean(np.log([abs(p) for p in poles]))))
    denominator = np.real(np.poly(np.array(poles) / omega_ref))
    numerator = np.real(np.poly(np.array(zeros) / omega_ref)) if zeros else np.array([1.0])
    shape = numerator / numerator[np.argmax(np.abs(numerator))]
    return Goal(
        denominator=denominator,
        numerator_shape=shape,
        gain=None if gain is None else abs(float(gain)),
        gain_kind=_gain_kind(kind, zeros),
        omega_ref=omega_ref,
        poles=poles,
        zeros=zeros,
        omega0=omega0,
        q=q,
        zero_omega=zero_omega,
        kind=kind,
    )


def goal_from_section(section: Section) -> Goal:
    """A goal from a :class:`placer.target.targets.Section` (duck-typed)."""
    return goal_from_roots(
        section.poles,
        section.zeros,
        section.gain,
        kind=section.kind,
        omega0=section.omega0,
        q=section.q,
        zero_omega=getattr(section, "zero_omega", None),
    )


@dataclass(frozen=True)
class Problem:
    """A topology, its network function and a goal, ready to solve.

    ``independent`` are the parts the solver moves (free parts that no
    constraint ties to another); ``tied`` maps a dependent part to
    (source part, factor); ``fixed`` holds numbers for the other parts.
    """

    topology: Topology
    nf: PartFunction      # NetworkFunction, ScaledFunction or DominantFunction
    goal: Goal
    independent: tuple[str, ...]
    tied: dict[str, tuple[str, float]]
    fixed: dict[str, float]
    low: np.ndarray
    high: np.ndarray
    gain_adjustable: bool = True
    _scratch: dict[str, Any] = field(default_factory=dict, repr=False, compare=False)

    def values(self, u: ArrayLike) -> dict[str, Any]:
        """Part values from log values `u` (shape (n,) or (n, batch))."""
        u = np.asarray(u, dtype=float)
        out: dict[str, Any] = {name: np.exp(u[i]) for i, name in enumerate(self.independent)}
        for part, (source, factor) in self.tied.items():
            out[part] = out[source] * factor
        for part, value in self.fixed.items():
            out[part] = value
        return out

    def residuals(self, u: ArrayLike, *, with_gain: bool = True) -> np.ndarray:
        """Residual vector (or matrix, one column per sample) at `u`."""
        numerator, denominator = self.nf.coefficients(self.values(u))
        return residuals_from(numerator, denominator, self.goal, with_gain=with_gain and self.gain_adjustable)

    def worst_root_error(self, u: np.ndarray) -> np.ndarray:
        """Worst relative error of the roots' figures at `u` (per sample); the gain does not count."""
        numerator, denominator = self.nf.coefficients(self.values(u))
        return figure_error(numerator, denominator, self.goal, with_gain=False)

    def worst_error_with_gain(self, u: np.ndarray) -> np.ndarray:
        """:meth:`worst_root_error` with the gain's relative error too (when the goal sets a gain)."""
        numerator, denominator = self.nf.coefficients(self.values(u))
        return figure_error(numerator, denominator, self.goal, with_gain=True)

    def worst_error_matched(self, u: np.ndarray, *, with_gain: bool | None = None) -> np.ndarray:
        """The worst error the solver matches: with the gain when `with_gain`
        (default: when the gain is adjustable), else the roots' alone."""
        if with_gain is None:
            with_gain = self.gain_adjustable
        return self.worst_error_with_gain(u) if with_gain else self.worst_root_error(u)


def residuals_from(numerator: np.ndarray, denominator: np.ndarray, goal: Goal, *,
                   with_gain: bool = True) -> np.ndarray:
    """Residuals of numeric coefficients against a goal (vectorised)."""
    n = denominator.shape[0] - 1
    scale = goal.omega_ref ** np.arange(n, -1, -1).reshape((-1,) + (1,) * (denominator.ndim - 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        monic = denominator * scale / (denominator[:1] * scale[:1])
        rows = []
        target = goal.denominator
        if len(target) != n + 1:
            raise UnreachableTarget(
                f"the topology's denominator has order {n}, the goal needs order {len(target) - 1}"
            )
        for i in range(1, n + 1):
            rows.append(_coefficient_residual(monic[i], target[i]))
        m = numerator.shape[0] - 1
        if len(goal.numerator_shape) > 1 or m > 0:
            nscale = goal.omega_ref ** np.arange(m, -1, -1).reshape((-1,) + (1,) * (numerator.ndim - 1))
            scaled = numerator * nscale
            peak_index = np.argmax(np.abs(scaled), axis=0)
            peak = np.take_along_axis(scaled, peak_index[None, ...], axis=0)[0]
            shape = scaled / peak
            want = np.zeros(m + 1)
            t = goal.numerator_shape
            if len(t) <= m + 1:
                want[m + 1 - len(t):] = t
            else:
                raise UnreachableTarget(
                    f"the topology has {m} finite zeros or fewer, the goal needs {len(t) - 1}"
                )
            # the sign of a numerator is free (inverting stages)
            direct = shape - want.reshape((-1,) + (1,) * (numerator.ndim - 1))
            flipped = shape + want.reshape((-1,) + (1,) * (numerator.ndim - 1))
            use = np.sum(direct**2, axis=0) <= np.sum(flipped**2, axis=0)
            rows.extend(list(np.where(use, direct, flipped)))
        if with_gain and goal.gain is not None and goal.gain > 0:
            gain = np.abs(passband_gain(numerator, denominator, goal.gain_kind))
            rows.append(GAIN_WEIGHT * np.log(gain / goal.gain))
    out = np.array(rows)
    return np.where(np.isfinite(out), out, 1e3)


def _coefficient_residual(achieved: np.ndarray, wanted: float) -> np.ndarray:
    """ln(achieved/wanted) for a coefficient of the goal's sign, else a large negative residual.

    Matching |coefficients| alone would accept a denominator whose poles
    are mirrored into the right half-plane (an equal-component Sallen–Key
    with K > 3 has the |a1| of the stable K < 3 design). A coefficient of
    the wrong sign gets −(WRONG_SIGN_RESIDUAL + ln(1 + |ratio|)): its square
    falls as the coefficient shrinks towards zero, the way back to the
    goal's sign, and stays above that of any coefficient of the right sign.
    """
    if wanted == 0:
        return achieved
    ratio = achieved / wanted
    with np.errstate(divide="ignore", invalid="ignore"):
        right = np.log(np.abs(ratio))
        wrong = -(WRONG_SIGN_RESIDUAL + np.log1p(np.abs(ratio)))
    return np.where(ratio > 0, right, wrong)


def figure_error(numerator: np.ndarray, denominator: np.ndarray, goal: Goal, *,
                 with_gain: bool = True) -> np.ndarray:
    """Worst relative error of ω0, Q (and zero ω0, gain) — vectorised.

    For first- and second-order goals these are the section figures; for
    higher orders the worst relative error of the normalised denominator
    coefficients stands in (the report gives the root errors).
    """
    n = denominator.shape[0] - 1
    with np.errstate(divide="ignore", invalid="ignore"):
        if n == 2 and goal.q is not None:
            omega0, q = omega0_q(*denominator)
            errors = [np.abs(omega0 / goal.omega0 - 1), np.abs(q / goal.q - 1)]
        elif n == 1 and goal.omega0 is not None:
            errors = [np.abs(first_order_omega(*denominator) / goal.omega0 - 1)]
        else:
            errors = list(np.abs(np.expm1(residuals_from(numerator, denominator, goal, with_gain=False)[:n])))
        if goal.zero_omega and numerator.shape[0] == 3:
            b2, _, b0 = numerator
            errors.append(np.abs(zero_pair_omega(b2, b0) / goal.zero_omega - 1))
        if len(goal.numerator_shape) > 1 and not goal.zero_omega:
            shape_rows = residuals_from(numerator, denominator, goal, with_gain=False)[n:]
            errors.extend(list(np.abs(shape_rows)))
        if with_gain and goal.gain:
            gain = np.abs(passband_gain(numerator, denominator, goal.gain_kind))
            errors.append(np.abs(gain / goal.gain - 1))
    worst = np.max(np.array(errors), axis=0)
    return np.where(np.isfinite(worst), worst, np.inf)


def make_problem(topology: Topology, goal: Goal, *,
                 ranges: Mapping[str, tuple[float, float]] | None = None,
                 fixed: Mapping[str, float] | None = None,
                 constraints: Sequence[Constraint] | None = None,
                 nf: PartFunction | None = None) -> Problem:
    """Prepare a :class:`Problem`.

    Parameters
    ----------
    topology : Topology
    goal : Goal
    ranges : mapping, optional
        Element kind → (low, high) overriding the topology's ranges.
    fixed : mapping, optional
        Part → value (SI) to hold fixed; must lie in the part's range.
    constraints : sequence of Constraint, optional
        Added to the topology's own. A constraint the topology's own ties
        already imply is dropped; a constraint that ties a fixed part fixes
        its partner too (:func:`placer.ties.tie_parts`).

    Raises
    ------
    SpecError
        A fixed part or constraint naming a part the topology lacks, a
        fixed value outside its range, or constraints and fixed parts of
        the spec that contradict one another.
    UnreachableTarget
        When the topology's order or kind cannot fit the goal (checked
        before anything is evaluated), or the spec's constraints contradict
        the topology's own ties or values.
    """
    reason = structural_reason(topology, goal)
    if reason:
        raise UnreachableTarget(reason)
    if ranges:
        topology = topology.with_ranges(ranges)
    nf = nf or network_function(topology.circuit)
    fixed = dict(fixed or {})
    for part, value in fixed.items():
        if part not in topology.symbols:
            raise SpecError(
                f"fixed part {part!r} is not a part of topology {topology.id!r} "
                f"(parts: {', '.join(topology.symbols)})"
            )
        if part in topology.ranges:
            part_low, part_high = topology.ranges[part]
            if not (part_low <= value <= part_high):
                raise SpecError(
                    f"fixed part {part!r} = {value:g} lies outside its range "
                    f"[{part_low:g}, {part_high:g}]"
                )
    for constraint in tuple(constraints or ()):
        for name in (constraint.part, constraint.source):
            if name not in topology.symbols:
                raise SpecError(
                    f"constraint '{constraint}' names {name!r}, which topology "
                    f"{topology.id!r} lacks (parts: {', '.join(topology.symbols)})"
                )
    ties = tie_parts(topology, tuple(constraints or ()), fixed)
    tied, values, independent = ties.tied, ties.values, ties.independent
    low = np.log([topology.ranges[p][0] for p in independent]) if independent else np.zeros(0)
    high = np.log([topology.ranges[p][1] for p in independent]) if independent else np.zeros(0)
    # a tied part must stay within its own range: shrink the source's range
    for part, (source, factor) in tied.items():
        if part in topology.ranges and source in independent:
            i = independent.index(source)
            plow, phigh = topology.ranges[part]
            low[i] = max(low[i], math.log(plow / factor))
            high[i] = min(high[i], math.log(phigh / factor))
            if low[i] >= high[i]:
                raise SpecError(
                    f"constraint {part} = {factor:g}*{source} leaves no value inside both ranges"
                )
    problem = Problem(
        topology=topology, nf=nf, goal=goal, independent=independent, tied=tied,
        fixed=values, low=low, high=high,
    )
    return replace(problem, gain_adjustable=_gain_is_adjustable(problem))


def _gain_is_adjustable(problem: Problem) -> bool:
    """True when the pass-band gain moves with some independent part."""
    if problem.goal.gain is None or not problem.independent:
        return False
    centre = (problem.low + problem.high) / 2
    points = [centre, problem.low + 0.3 * (problem.high - problem.low)]
    gains: list[float] = []
    for u in points:
        for i in range(len(u) + 1):
            v = u.copy()
            if i < len(u):
                v[i] += 0.1
            numerator, denominator = problem.nf.coefficients(problem.values(v))
            gains.append(abs(float(passband_gain(numerator, denominator, problem.goal.gain_kind))))
    array = np.array(gains)
    return bool(np.ptp(np.log(array[array > 0])) > 1e-9) if np.any(array > 0) else False


@dataclass(frozen=True)
class Solution:
    """A continuous solution: part values and how well they meet the goal."""

    values: dict[str, float]   # every part symbol -> float (SI)
    error: float          # worst relative figure error
    u: np.ndarray         # log values of the independent parts
    alternatives: tuple[np.ndarray, ...] = ()   # other distinct solutions (u arrays), best first
    gain_matched: bool = False  # the pass-band gain is on target too


def solve(problem: Problem, *, starts: int = 12, seed: int = 0, tolerance: float = 1e-6,
          initial: Sequence[np.ndarray] = ()) -> Solution:
    """Continuous part values meeting the goal, multi-start in log space.

    Parameters
    ----------
    problem : Problem
    starts : int
        Number of Sobol starting points in the log box.
    seed : int
        Seed of the scrambled Sobol sequence (deterministic for a seed).
    tolerance : float
        Worst relative figure error accepted as "on target".
    initial : sequence of ndarray, optional
        Extra starting points (log values of the independent parts), tried
        before the Sobol points: for example the solution of the same
        topology with ideal op-amps, when re-solving with a real op-amp model.

    Returns
    -------
    Solution

    Raises
    ------
    UnreachableTarget
        With the reason in words when no start reaches the goal.
    """
    reason = structural_reason(problem.topology, problem.goal, problem)
    if reason:
        raise UnreachableTarget(reason)
    n = len(problem.independent)
    if n == 0:
        u = np.zeros(0)
        error = float(problem.worst_root_error(u))
        if error > tolerance:
            raise UnreachableTarget(
                f"topology {problem.topology.id!r} has no free part and misses the goal by {100 * error:.3g} %"
            )
        return Solution(values=_floats(problem.values(u)), error=error, u=u,
                        gain_matched=float(problem.worst_error_with_gain(u)) <= tolerance)
    sampler = qmc.Sobol(d=n, scramble=True, seed=seed)
    points = sampler.random(1 << max(1, math.ceil(math.log2(max(starts, 2)))))[:starts]
    margin = 1e-6 * (problem.high - problem.low)
    starts_u = np.clip(problem.low + points * (problem.high - problem.low),
                       problem.low + margin, problem.high - margin)
    if len(initial):
        given = np.clip(np.atleast_2d(np.asarray(initial, dtype=float)),
                        problem.low + margin, problem.high - margin)
        starts_u = np.vstack([given, starts_u])
    U = batched_least_squares(lambda V, _: problem.residuals(V), starts_u.T, problem.low, problem.high)
    gain_errors = problem.worst_error_matched(U)
    use_gain = problem.gain_adjustable and float(np.min(gain_errors)) <= max(tolerance, 1e-6)
    if not use_gain and problem.gain_adjustable:
        # the gain is tied to the poles here: place the poles exactly, report the gain
        def fun(V: np.ndarray) -> np.ndarray:
            return problem.residuals(V, with_gain=False)
        U = batched_least_squares(lambda V, _: fun(V), U, problem.low, problem.high)
    else:
        def fun(V: np.ndarray) -> np.ndarray:
            return problem.residuals(V, with_gain=use_gain)
    errors = problem.worst_error_matched(U, with_gain=use_gain)
    order = np.argsort(errors)
    if float(errors[order[0]]) > 1e-12:
        best = U[:, order[0]]
        result = least_squares(
            fun, np.clip(best, problem.low + margin, problem.high - margin),
            bounds=(problem.low, problem.high), method="trf", x_scale=np.ones(n),
            xtol=1e-14, ftol=1e-14, gtol=1e-14, max_nfev=50 * (n + 1),
        )
        if float(problem.worst_error_matched(result.x, with_gain=use_gain)) <= float(errors[order[0]]):
            U[:, order[0]] = result.x
    errors = problem.worst_root_error(U)
    gain_errors = problem.worst_error_matched(U)
    found = sorted(
        ((float(errors[i]), float(gain_errors[i]), _spread(problem, U[:, i]), U[:, i])
         for i in range(U.shape[1])),
        key=lambda item: (item[0] if item[0] > tolerance else 0.0,
                          item[1] if item[1] > tolerance else 0.0, item[2]),
    )
    best_error, best_with_gain, _, best_u = found[0]
    gain_matched = problem.gain_adjustable and best_with_gain <= max(tolerance, 1e-6)
    if best_error > max(tolerance, 1e-3):
        raise UnreachableTarget(_miss_reason(problem, best_u, best_error))
    distinct: list[np.ndarray] = []
    for error, _, _, u in found:
        if error <= max(tolerance, 10 * best_error, 1e-4) and all(np.max(np.abs(u - d)) > 0.05 for d in distinct):
            distinct.append(u)
    return Solution(
        values=_floats(problem.values(best_u)), error=best_error, u=best_u,
        alternatives=tuple(distinct), gain_matched=gain_matched,
    )


def _floats(values: Mapping[str, ArrayLike]) -> dict[str, float]:
    return {k: float(np.asarray(v)) for k, v in values.items()}


def _spread(problem: Problem, u: np.ndarray) -> float:
    """Log spread of the values within each part kind (smaller is nicer)."""
    values = problem.values(u)
    total = 0.0
    by_kind: dict[str, list[float]] = {}
    for name, value in values.items():
        by_kind.setdefault(problem.topology.kind_of(name), []).append(math.log(float(value)))
    for logs in by_kind.values():
        total += max(logs) - min(logs)
    return total


def _miss_reason(problem: Problem, u: np.ndarray, error: float) -> str:
    values = _floats(problem.values(u))
    numerator, denominator = problem.nf.coefficients(values)
    achieved = ""
    if denominator.shape[0] == 3:
        omega0, q = (float(x) for x in omega0_q(*denominator))
        if math.isfinite(omega0) and math.isfinite(q):
            achieved = f" (best reached: f0 {omega0 / (2 * math.pi):.4g} Hz, Q {q:.4g})"
    monic = np.asarray(denominator, float) / float(denominator[0])
    if np.any(monic[1:] <= 0):
        # a real polynomial with a coefficient of the wrong sign has a root in
        # the right half-plane (or on the jω axis): Stodola's necessary condition
        achieved += ("; its nearest design is unstable: poles in the right half-plane")
    return (
        f"topology {problem.topology.id!r} misses the goal by {100 * error:.3g} % within its "
        f"value ranges{achieved}; widen the ranges or choose another topology"
    )


def structural_reason(topology: Topology, goal: Goal, problem: Problem | None = None) -> str:
    """Why a topology cannot realise a goal, in words; "" when it might.

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> goal = goal_from_roots([complex(-1, 3), complex(-1, -3)], kind="lowpass", omega0=10**0.5, q=10**0.5 / 2)
    >>> "only real poles" in structural_reason(get_topology("rc-lowpass").__class__(
    ...     **{**get_topology("rc-lowpass").__dict__, "order": 2}), goal)
    True
    """
    kinds = {e.kind for e in topology.circuit.elements}
    order = goal.order
    if topology.order != order:
        return (
            f"topology {topology.id!r} is of order {topology.order}, the section needs order {order}"
        )
    if goal.kind and topology.response != "compensator" and not realises(topology, goal.kind):
        stage = (f"realises {', '.join(topology.notch_kinds)} sections only"
                 if topology.notch_kinds else f"is a {topology.response} stage")
        return f"topology {topology.id!r} {stage}, the section is {goal.kind}"
    complex_poles = any(abs(p.imag) > 1e-9 * abs(p) for p in goal.poles)
    active = kinds & {"opamp", "vcvs", "vccs", "cccs", "ccvs", "inductor"}
    if complex_poles and not active:
        q = goal.q if goal.q is not None else max(abs(p) / (-2 * p.real) for p in goal.poles)
        return (
            f"a passive RC network has only real poles, so Q <= 0.5; the section needs Q = {q:.3g}"
        )
    if goal.zeros and topology.response == "lowpass":
        return "a low-pass topology has no finite zeros; the section needs zeros"
    if problem is not None and goal.q is not None and topology.capacitor_ratio_per_q2:
        return _capacitor_ratio_reason(topology, problem, goal.q)
    return ""


def _capacitor_ratio_reason(topology: Topology, problem: Problem, q: float) -> str:
    """Why the capacitor ranges cannot give the ratio k·Q² the topology needs; "" when they can.

    `k` is the topology file's ``capacitor_ratio_per_q2`` (4 for the
    unity-gain Sallen–Key's C1/C2 >= 4Q^2).
    """
    c_parts = [p for p in problem.independent if topology.kind_of(p) == "capacitor"]
    if len(c_parts) != 2:
        return ""
    first, second = (problem.independent.index(p) for p in c_parts)
    ratio = max(math.exp(problem.high[first] - problem.low[second]),
                math.exp(problem.high[second] - problem.low[first]))
    # structural_reason calls this only when the topology sets the ratio
    per_q2 = cast(float, topology.capacitor_ratio_per_q2)
    need = per_q2 * q**2
    if ratio >= need:
        return ""
    return (
        f"topology {topology.id!r} needs {c_parts[0]}/{c_parts[1]} >= "
        f"{per_q2:g}Q^2 = {need:.3g}, "
        f"but the capacitor range allows at most {ratio:.3g}"
    )


@dataclass(frozen=True)
class RootErrors:
    """How far achieved roots and figures landed from the goal.

    ``omega0``, ``q`` and ``zero_omega`` are the achieved figures (rad/s;
    None where the function's order does not define them), read once here
    so that reports show them rather than compute them again.
    """

    f0_pct: float | None
    q_pct: float | None
    zero_f0_pct: float | None
    gain_db: float | None
    worst_root_pct: float
    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]
    gain: float
    omega0: float | None = None
    q: float | None = None
    zero_omega: float | None = None

    @property
    def worst_root_error_pct(self) -> float:
        """Worst of the f0, Q, zero-f0 and root errors, percent; the gain does not count."""
        figures = [abs(x) for x in (self.f0_pct, self.q_pct, self.zero_f0_pct) if x is not None]
        return max(figures) if figures else self.worst_root_pct

    @property
    def worst_error_with_gain_pct(self) -> float:
        """:attr:`worst_root_error_pct` and, when the gain is set, its error as a percentage of the magnitude."""
        worst = self.worst_root_error_pct
        if self.gain_db is not None:
            worst = max(worst, 100 * abs(10 ** (self.gain_db / 20) - 1))
        return worst


def root_errors(nf: Any, values: Mapping[str, Any], goal: Goal) -> RootErrors:
    """Achieved roots and their errors against the goal (percent, dB)."""
    numerator, denominator = nf.coefficients(values)
    numerator = np.asarray(numerator, float)
    denominator = np.asarray(denominator, float)
    poles = nf.poles(values)
    zeros = nf.zeros(values)
    gain = float(passband_gain(numerator, denominator, goal.gain_kind))
    f0_pct: float | None = None
    q_pct: float | None = None
    zero_pct: float | None = None
    omega0: float | None = None
    q: float | None = None
    zero_omega: float | None = None
    if denominator.shape[0] == 3:
        omega0, q = (float(x) for x in omega0_q(*denominator))
        # a figure the roots do not define (real poles either side of the
        # origin) is an infinite error, never a NaN that max() would skip
        if goal.omega0:
            f0_pct = 100 * (omega0 / goal.omega0 - 1) if math.isfinite(omega0) else math.inf
        if goal.q:
            q_pct = 100 * (q / goal.q - 1) if math.isfinite(q) else math.inf
    elif denominator.shape[0] == 2:
        omega0 = float(first_order_omega(*denominator))
        if goal.omega0:
            f0_pct = 100 * (omega0 / goal.omega0 - 1)
    if goal.zero_omega and numerator.shape[0] == 3 and numerator[0] != 0:
        zero_omega = float(zero_pair_omega(numerator[0], numerator[2]))
        zero_pct = 100 * (zero_omega / goal.zero_omega - 1)
    gain_db: float | None = None
    if goal.gain:
        gain_db = 20 * math.log10(abs(gain) / goal.gain) if gain else -math.inf
    worst = _worst_root_error(poles, goal.poles)
    if goal.zeros:
        worst = max(worst, _worst_root_error(zeros, goal.zeros))
    return RootErrors(
        f0_pct=f0_pct, q_pct=q_pct, zero_f0_pct=zero_pct, gain_db=gain_db,
        worst_root_pct=worst, poles=tuple(poles), zeros=tuple(zeros), gain=gain,
        omega0=omega0, q=q, zero_omega=zero_omega,
    )


def _worst_root_error(achieved: Iterable[complex], wanted: Iterable[complex]) -> float:
    """Largest |p − p_target| / |p_target| over a nearest-root matching, percent."""
    remaining = list(achieved)
    worst = 0.0
    for target in sorted(wanted, key=lambda r: (abs(r), r.imag)):
        if not remaining:
            return math.inf
        distances = [abs(a - target) for a in remaining]
        i = int(np.argmin(distances))
        scale = abs(target) if abs(target) > 0 else 1.0
        worst = max(worst, distances[i] / scale)
        remaining.pop(i)
    return 100 * worst
