"""Discrete placement: part values from IEC 60063 series, chosen together.

Rounding each part to its nearest preferred value on its own throws away
the freedom a topology has: a unity-gain Sallen–Key has four parts and two
figures to meet. The search here uses that freedom:

1. The *coarse* parts (the kind whose series has the fewest values per
   decade, usually the capacitors) are enumerated over their range — every
   combination, or a window around the continuous solutions when there are
   too many.
2. For every combination at once, the *fine* parts (usually resistors)
   are re-solved continuously (a batched Levenberg–Marquardt in log space),
   starting from the continuous solution scaled by the combination.
3. Each fine part is bent to both series neighbours of its solved value;
   every such candidate is evaluated (vectorised network-function
   evaluation) on the worst relative error of ω0 and Q (and of the gain
   when the topology can set it).
4. The best candidates are polished by a discrete local search that moves
   any part one series step at a time while that improves the error.

The last step trades a little error for value spread: among the polished
candidates whose error is within :data:`SPREAD_SLACK` of the best (never
past :data:`ERROR_CEILING` unless the best is), the one with the smallest
spread (largest/smallest value per part kind) wins. A filter whose
resistors run from 1 kΩ to 400 kΩ to save 0.03 % of f0 is a worse design:
the error is far below what 1 % parts scatter, the spread costs noise,
offset and layout. ``spread_slack=0`` gives the least error (ties within
1e-7 still go to the smaller spread).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import cast

import numpy as np

from ..errors import SpecError
from ..eseries import check_series, nearest, series_values
from .least_squares import batched_least_squares
from .solve import Problem, Solution, figure_error

__all__ = ["SnapResult", "snap", "round_each", "default_series", "COARSE_BUDGET",
           "SPREAD_SLACK", "ERROR_CEILING"]

#: Largest number of coarse-part combinations enumerated in full.
COARSE_BUDGET = 20000
#: Largest number of rounded candidates evaluated in one pass.
CANDIDATE_BUDGET = 400_000
#: Relative error the choice may give up, beyond the best, for a smaller spread.
SPREAD_SLACK = 5e-4
#: The slack never takes the error past this (unless the best error is past it).
ERROR_CEILING = 1e-3
#: Candidates polished by the local search: the best by error, and the
#: smallest-spread ones within the slack.
POOL_BY_ERROR, POOL_BY_SPREAD = 48, 16

#: Log series values inside each independent part's range; None for a part not snapped.
_Grids = list[np.ndarray | None]

_SERIES_KIND = {"resistor": "resistor", "capacitor": "capacitor", "inductor": "inductor"}


def default_series() -> dict[str, str]:
    """E96 resistors, E12 capacitors and E12 inductors (common practice)."""
    return {"resistor": "E96", "capacitor": "E12", "inductor": "E12"}


@dataclass(frozen=True)
class SnapResult:
    """Snapped part values and how well they meet the goal.

    Attributes
    ----------
    values : dict
        Every part symbol → chosen value (SI).
    continuous : dict
        The continuous solution the search started from.
    series : dict
        Part symbol → series name ("" for parts not snapped: gains, fixed parts).
    error : float
        Worst relative figure error of the snapped values.
    candidates : int
        How many discrete candidates were evaluated.
    """

    values: dict[str, float]
    continuous: dict[str, float]
    series: dict[str, str]
    error: float
    candidates: int


def _grids(problem: Problem, series: Mapping[str, str]) -> _Grids:
    """Series values inside each independent part's range (None: continuous)."""
    grids: _Grids = []
    for i, name in enumerate(problem.independent):
        kind = problem.topology.kind_of(name)
        if kind not in _SERIES_KIND or kind not in series:
            grids.append(None)
            continue
        name_of_series = check_series(series[kind], field=f"{kind}_series")
        low, high = math.exp(problem.low[i]), math.exp(problem.high[i])
        try:
            grid = series_values(name_of_series, low * (1 - 1e-12), high * (1 + 1e-12))
        except SpecError:
            raise SpecError(
                f"part {name!r}: no {name_of_series} value lies in its range "
                f"[{low:g}, {high:g}]; widen the range or choose a finer series"
            ) from None
        grids.append(np.log(np.asarray(grid, float)))
    return grids


def _per_decade(series_name: str) -> int:
    return len(series_values(series_name, 1.0, 9.999))


def snap(problem: Problem, solution: Solution, *, series: Mapping[str, str] | None = None,
         with_gain: bool | None = None, coarse_budget: int = COARSE_BUDGET,
         spread_slack: float = SPREAD_SLACK,
         prefer: Callable[[np.ndarray], np.ndarray] | None = None) -> SnapResult:
    """Choose series values for the free parts of a solved problem.

    Parameters
    ----------
    problem : placer.place.solve.Problem
    solution : placer.place.solve.Solution
        The continuous solution (its alternatives seed the search).
    series : mapping, optional
        Element kind → series name, e.g. ``{"resistor": "E96",
        "capacitor": "E12"}`` (default :func:`default_series`).
    with_gain : bool, optional
        Count the gain error in the objective (default: when the
        continuous solution met the gain).
    coarse_budget : int, optional
        Largest number of coarse-part combinations enumerated in full.
    spread_slack : float, optional
        Relative error (5e-4 = 0.05 %) the choice may give up, beyond the
        best found, for a smaller value spread; capped at ERROR_CEILING
        unless the best is past it. 0: the least error.
    prefer : callable, optional
        ``prefer(U)`` → a score per column of U (log values of the
        problem's independent parts, shape (n, B)), lower is better: what
        the slack buys instead of a small spread (which then breaks ties).
        For example a design's worst error when its op-amps' GBW is off.

    Returns
    -------
    SnapResult
    """
    series = dict(default_series() if series is None else series)
    if with_gain is None:
        with_gain = bool(solution.gain_matched)
    grids = _grids(problem, series)
    n = len(problem.independent)
    if n == 0:
        return SnapResult(dict(solution.values), dict(solution.values), {}, float(solution.error), 0)
    kinds = [problem.topology.kind_of(name) for name in problem.independent]
    snapped = [g is not None for g in grids]
    density = {
        kind: _per_decade(series[kind]) for kind in set(kinds) if kind in series and kind in _SERIES_KIND
    }
    coarse = _coarse_parts(kinds, snapped, density)
    fine = [i for i in range(n) if i not in coarse]

    def error_of(U: np.ndarray) -> np.ndarray:
        return problem.worst_error_matched(U, with_gain=with_gain)

    starts = [solution.u] + [u for u in solution.alternatives if u is not solution.u]
    if coarse:
        combos = _coarse_candidates(grids, coarse, starts, coarse_budget)   # (len(coarse), B)
        U = _scaled_blocks(problem, _bases(starts, combos, coarse, fine), coarse, fine, kinds)
        if fine:
            U = _solve_fine(problem, U, coarse, fine, with_gain)
    else:
        U = np.array(starts).T
    # bend every snapped fine part to both of its neighbours
    candidates = _rounded(U, grids, fine if coarse else list(range(n)), problem)
    errors = error_of(candidates)
    keep = _pool(candidates, errors, kinds, spread_slack, prefer)
    pool, trials = _local_search(candidates[:, keep], grids, error_of)
    errors = error_of(pool)
    spreads = _spreads(pool, kinds)
    # without the gain in the objective (a gain tied to the poles), the spread
    # must not be bought with gain either
    gain_errors = None if with_gain else problem.worst_error_with_gain(pool)
    scores = None if prefer is None else _scores(prefer, pool)
    best = pool[:, _choose(errors, spreads, spread_slack, gain_errors, scores)]
    values = _series_values(problem, best, grids, series, kinds)
    numerator, denominator = problem.nf.coefficients(values)
    return SnapResult(
        values=values, continuous=_nearest_continuous(problem, solution, best, with_gain),
        series=_part_series(problem, grids, series),
        error=float(figure_error(numerator, denominator, problem.goal, with_gain=with_gain)),
        candidates=int(candidates.shape[1] + trials),
    )


def _bases(starts: list[np.ndarray], combos: np.ndarray, coarse: list[int],
           fine: list[int]) -> list[tuple[np.ndarray, np.ndarray]]:
    """The continuous solutions each coarse combination's fine parts start from.

    ``(base, combos)`` pairs: the best solution for every combination; a
    second branch, the solution whose fine parts differ most; and per
    combination the solution whose coarse parts are in the most similar
    ratios (impedance scaling leaves the roots alone, so only the ratios
    matter): its fine parts start near the combination's own answer, where
    the first two may be too far off for the few iterations
    :func:`_solve_fine` allows.
    """
    solution_u = starts[0]
    bases = [(solution_u, combos)]
    if not (fine and len(starts) > 1):
        return bases
    other_index = 1 + max(range(len(starts) - 1), key=lambda k: float(
        np.max(np.abs(starts[k + 1][fine] - solution_u[fine]))))
    other: int | None = other_index
    if np.max(np.abs(starts[other_index][fine] - solution_u[fine])) > 0.05:
        bases.append((starts[other_index], combos))
    else:
        other = None
    S = np.array(starts).T                                  # (n, k)
    shape_c = combos - np.mean(combos, axis=0)
    shape_s = S[coarse] - np.mean(S[coarse], axis=0)
    distance = np.sum((shape_c[:, :, None] - shape_s[:, None, :]) ** 2, axis=0)
    nearest_start = np.argmin(distance, axis=1)
    fresh = (nearest_start != 0) & (nearest_start != other)
    if np.any(fresh):
        bases.append((S[:, nearest_start[fresh]], combos[:, fresh]))
    return bases


def _scaled_blocks(problem: Problem, bases: list[tuple[np.ndarray, np.ndarray]], coarse: list[int],
                   fine: list[int], kinds: list[str]) -> np.ndarray:
    """Start points: each base with its coarse parts set to the combinations and its
    fine parts moved by the same impedance scaling (capacitors up by e^c, resistors down)."""
    blocks = []
    for base, combos in bases:
        base = base if base.ndim == 2 else np.repeat(base[:, None], combos.shape[1], axis=1)
        shift = np.mean(combos - base[coarse], axis=0)
        block = base.copy()
        block[coarse] = combos
        for i in fine:
            sign = -1.0 if kinds[i] == "resistor" else (1.0 if kinds[i] == "inductor" else 0.0)
            block[i] = np.clip(base[i] + sign * shift, problem.low[i], problem.high[i])
        blocks.append(block)
    return np.concatenate(blocks, axis=1)


def _series_values(problem: Problem, best: np.ndarray, grids: _Grids, series: dict[str, str],
                   kinds: list[str]) -> dict[str, float]:
    """Every part's value for the chosen point: exact series values, ties applied."""
    values = {k: float(np.asarray(v)) for k, v in problem.values(best).items()}
    for i, name in enumerate(problem.independent):
        if grids[i] is not None:
            values[name] = float(nearest(values[name], series[kinds[i]]))  # exact series value
    for part, (source, factor) in problem.tied.items():
        values[part] = values[source] * factor
    return _snap_tied(problem, values, series)


def _nearest_continuous(problem: Problem, solution: Solution, best: np.ndarray,
                        with_gain: bool) -> dict[str, float]:
    """The continuous solution nearest the chosen values: it shows what snapping cost."""
    near = batched_least_squares(
        lambda V, _: problem.residuals(V, with_gain=with_gain), best[:, None],
        problem.low, problem.high, iterations=40,
    )[:, 0]
    if float(problem.worst_error_matched(near, with_gain=with_gain)) > max(solution.error, 1e-9) * 10:
        return dict(solution.values)
    return {k: float(np.asarray(v)) for k, v in problem.values(near).items()}


def _part_series(problem: Problem, grids: _Grids, series: dict[str, str]) -> dict[str, str]:
    """Part symbol → the series it was snapped to ("" for gains and fixed parts)."""
    part_series = {}
    for name in problem.topology.symbols:
        kind = problem.topology.kind_of(name)
        in_search = name in problem.independent and grids[problem.independent.index(name)] is not None
        tied = name in problem.tied and kind in series and kind in _SERIES_KIND
        part_series[name] = check_series(series[kind]) if (in_search or tied) else ""
    return part_series


def _coarse_parts(kinds: Sequence[str], snapped: Sequence[bool], density: Mapping[str, int]) -> list[int]:
    """Indices of the parts to enumerate: the sparsest series' kind."""
    eligible = [i for i, ok in enumerate(snapped) if ok]
    if not eligible:
        return []
    sparsest = min(density[kinds[i]] for i in eligible)
    chosen = [i for i in eligible if density[kinds[i]] == sparsest]
    if len(chosen) == len(eligible) and len(eligible) > 1:
        # one kind only (all resistors): enumerate the parts of smallest count
        reactive = [i for i in chosen if kinds[i] != "resistor"]
        chosen = reactive or chosen[: max(1, len(chosen) // 2)]
    return chosen


def _coarse_candidates(grids: _Grids, coarse: list[int], starts: Sequence[np.ndarray],
                       budget: int) -> np.ndarray:
    """Combinations of coarse-part values (log), shape (len(coarse), B)."""
    if not coarse:
        return np.zeros((0, 1))
    full = [cast(np.ndarray, grids[i]) for i in coarse]   # coarse parts are snapped: a grid each
    total = math.prod(len(g) for g in full)
    if total <= budget:
        mesh = np.meshgrid(*full, indexing="ij")
        return np.array([m.ravel() for m in mesh])
    # a window of series steps around each continuous solution
    steps = max(1, int((budget / max(1, len(starts))) ** (1 / len(coarse)) // 2))
    combos: set[tuple[int, ...]] = set()
    for u in starts:
        ranges = []
        for i, g in zip(coarse, full):
            centre = int(np.argmin(np.abs(g - u[i])))
            lo, hi = max(0, centre - steps), min(len(g), centre + steps + 1)
            ranges.append(range(lo, hi))
        for index in itertools.product(*ranges):
            combos.add(index)
    ordered = sorted(combos)
    return np.array([[full[k][idx[k]] for idx in ordered] for k in range(len(coarse))])


def _solve_fine(problem: Problem, U: np.ndarray, coarse: list[int], fine: list[int],
                with_gain: bool) -> np.ndarray:
    """Re-solve the fine parts for every column of U, coarse parts held."""
    Uc = U[coarse]

    def fun(Uf: np.ndarray, columns: np.ndarray) -> np.ndarray:
        full = np.empty((U.shape[0], Uf.shape[1]))
        full[coarse] = Uc[:, columns]
        full[fine] = Uf
        return problem.residuals(full, with_gain=with_gain)

    Uf = batched_least_squares(
        fun, U[fine], problem.low[fine], problem.high[fine], iterations=10,
        cost_tol=1e-20, prune_after=2, prune_cost=1e-3,
    )
    out = U.copy()
    out[fine] = Uf
    return out


def _neighbours(grid: np.ndarray, u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Series values (log) just below and at-or-above each of `u`."""
    index = np.clip(np.searchsorted(grid, u - 1e-12), 0, len(grid) - 1)
    above = grid[index]
    below = grid[np.clip(index - 1, 0, len(grid) - 1)]
    return np.where(np.abs(above - u) < 1e-9, above, below), above


def _rounded(U: np.ndarray, grids: _Grids, parts: list[int], problem: Problem) -> np.ndarray:
    """Every floor/ceil choice of the snapped `parts` for every column of U."""
    active = [i for i in parts if grids[i] is not None]
    if not active:
        return U
    reach = (-1, 0, 1, 2) if len(active) <= 3 else (0, 1)
    choices = list(itertools.product(reach, repeat=len(active)))
    budget = max(1, CANDIDATE_BUDGET // len(choices))
    if U.shape[1] > budget:
        # keep the columns whose continuous fine solution is best
        errors = problem.worst_error_matched(U)
        U = U[:, np.argsort(errors)[:budget]]
    lower: dict[int, np.ndarray] = {}
    upper: dict[int, np.ndarray] = {}
    for i in active:
        lower[i], upper[i] = _neighbours(cast(np.ndarray, grids[i]), U[i])   # active: a grid each
    columns = []
    for choice in choices:
        V = U.copy()
        for flag, i in zip(choice, active):
            g = cast(np.ndarray, grids[i])
            if flag in (0, 1):
                V[i] = upper[i] if flag else lower[i]
            else:
                base = lower[i] if flag < 0 else upper[i]
                index = np.clip(np.searchsorted(g, base - 1e-12) + (1 if flag > 0 else -1), 0, len(g) - 1)
                V[i] = g[index]
        columns.append(V)
    # parts with no series (gains) stay continuous
    return np.concatenate(columns, axis=1)


def _local_search(pool: np.ndarray, grids: _Grids, error_of: Callable[[np.ndarray], np.ndarray], *,
                  rounds: int = 30) -> tuple[np.ndarray, int]:
    """Move single parts one or two series steps while the error improves.

    Returns the improved pool and how many trial candidates were evaluated.
    """
    n = pool.shape[0]
    indices: list[np.ndarray | None] = []
    for i in range(n):
        grid = grids[i]
        if grid is None:
            indices.append(None)
        else:
            indices.append(np.clip(np.searchsorted(grid, pool[i] - 1e-9), 0, len(grid) - 1))
    current = error_of(pool)
    trials = 0
    for _ in range(rounds):
        improved = False
        for i in range(n):
            grid = grids[i]
            if grid is None:
                continue
            for step in (-1, 1, -2, 2):
                trial_index = cast(np.ndarray, indices[i]) + step   # set for every part with a grid
                valid = (trial_index >= 0) & (trial_index < len(grid))
                trial = pool.copy()
                trial[i] = grid[np.clip(trial_index, 0, len(grid) - 1)]
                errors = np.where(valid, error_of(trial), np.inf)
                trials += trial.shape[1]
                better = errors < current - 1e-12
                if np.any(better):
                    improved = True
                    pool = np.where(better[None, :], trial, pool)
                    current = np.where(better, errors, current)
                    indices[i] = np.where(better, trial_index, cast(np.ndarray, indices[i]))
        if not improved:
            break
    return pool, trials


def _spreads(U: np.ndarray, kinds: Sequence[str]) -> np.ndarray:
    """Sum over part kinds of the log spread (log largest/smallest), per column."""
    total = np.zeros(U.shape[1])
    for kind in set(kinds):
        rows = U[[i for i, k in enumerate(kinds) if k == kind]]
        total += rows.max(axis=0) - rows.min(axis=0)
    return total


def _allowed(best: float, spread_slack: float) -> float:
    """Largest error the spread (or a preference) may be bought with."""
    return max(best, min(best + spread_slack, max(ERROR_CEILING, spread_slack)))


def _scores(prefer: Callable[[np.ndarray], np.ndarray], U: np.ndarray) -> np.ndarray:
    """prefer(U) as a float array, NaN counted as the worst."""
    scores = np.asarray(prefer(U), dtype=float).reshape(-1)
    return np.where(np.isnan(scores), np.inf, scores)


def _pool(candidates: np.ndarray, errors: np.ndarray, kinds: Sequence[str], spread_slack: float,
          prefer: Callable[[np.ndarray], np.ndarray] | None = None) -> np.ndarray:
    """Columns to polish: the best by error, and the best spreads (or scores) in the slack."""
    count = errors.size
    keep = np.argpartition(errors, POOL_BY_ERROR)[:POOL_BY_ERROR] if count > POOL_BY_ERROR \
        else np.arange(count)
    if spread_slack <= 0:
        return keep
    inside = np.flatnonzero(errors <= _allowed(float(np.min(errors)), spread_slack))
    spreads = _spreads(candidates[:, inside], kinds)
    # several per spread level, so the search is not left with one shape only
    by_spread = inside[np.lexsort((errors[inside], np.round(spreads, 3)))][:POOL_BY_SPREAD]
    keep = np.union1d(keep, by_spread)
    if prefer is not None:
        scores = _scores(prefer, candidates[:, inside])
        by_score = inside[np.lexsort((errors[inside], np.round(scores, 6)))][:POOL_BY_SPREAD]
        keep = np.union1d(keep, by_score)
    return keep


def _choose(errors: np.ndarray, spreads: np.ndarray, spread_slack: float,
            gain_errors: np.ndarray | None = None, scores: np.ndarray | None = None) -> int:
    """Index of the chosen column: smallest spread (or score) within the slack, then least error.

    `gain_errors` (worst error with the gain counted, when the objective
    leaves it out) must stay within the slack of the least-error column's.
    `scores` (from `prefer`), when given, rank before the spread.
    """
    best = float(np.min(errors))
    limit = _allowed(best, spread_slack) if spread_slack > 0 else best
    inside = errors <= limit + 1e-7
    if gain_errors is not None:
        least = int(np.lexsort((spreads, np.round(errors, 7)))[0])
        inside &= gain_errors <= gain_errors[least] + max(spread_slack, 0.0) + 1e-7
    keys = (errors, np.round(spreads, 7)) + (() if scores is None else (np.round(scores, 6),))
    rank = np.lexsort(keys + (~inside,))
    return int(rank[0])


def _snap_tied(problem: Problem, values: Mapping[str, float],
               series: Mapping[str, str]) -> dict[str, float]:
    """Parts tied to another by a ratio other than 1 take their nearest series value."""
    out = dict(values)
    for part, (source, factor) in problem.tied.items():
        kind = problem.topology.kind_of(part)
        if factor != 1.0 and kind in series and kind in _SERIES_KIND:
            out[part] = float(nearest(out[source] * factor, series[kind]))
    return out


def round_each(problem: Problem, solution: Solution, *,
               series: Mapping[str, str] | None = None) -> SnapResult:
    """The naive baseline: every part rounded to its nearest series value alone."""
    series = dict(default_series() if series is None else series)
    values = dict(solution.values)
    for name in list(problem.independent) + list(problem.tied):
        kind = problem.topology.kind_of(name)
        if kind in series and kind in _SERIES_KIND:
            values[name] = float(nearest(values[name], series[kind]))
    numerator, denominator = problem.nf.coefficients(values)
    error = float(figure_error(numerator, denominator, problem.goal, with_gain=solution.gain_matched))
    return SnapResult(values=values, continuous=dict(solution.values),
                      series={}, error=error, candidates=1)
