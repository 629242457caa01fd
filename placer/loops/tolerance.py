"""A compensator loop for many part sets at once: margins and tolerance.

:func:`grid_margins` evaluates the loop gain L = sign·H·G of a
compensator H and a plant G on a frequency grid for many part sets in one
pass (coefficients by :meth:`placer.analysis.network.NetworkFunction.coefficients`,
no Python loop over sets) and reads each set's crossover, phase and gain
margins and closed-loop stability. The snapping search of
:func:`placer.loops.compensator.design_compensator` judges candidate part sets with it,
and :func:`loop_monte_carlo` the tolerance spread of a designed loop:
every toleranced part drawn independently (uniform within ±tolerance, or
Gaussian with σ = tolerance/3), the yield counting the stable samples that
keep a phase-margin floor.

Examples
--------
>>> from placer.loops.compensator import design_compensator
>>> from placer.loops.plants import buck_plant
>>> plant = buck_plant(12.0, 10e-6, 100e-6, 0.02, 1.0, 1.0)
>>> design = design_compensator(plant, 20e3, 60.0, compensator="type3")
>>> result = loop_monte_carlo(design, samples=200, seed=1)
>>> result.samples, result.margin_floor_deg
(200, 50.0)
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, NamedTuple, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..eseries import usual_tolerance
from ..errors import SpecError
from ..analysis.network import NetworkFunction, batched_roots, polynomial_values
from .plants import Plant
from ..evidence.tolerance import DISTRIBUTIONS
from ..evidence.workers import (PARALLEL_MIN_SAMPLES, check_workers, results_in_order,
                                worker_pool, worker_ranges)

if TYPE_CHECKING:
    from .compensator import LoopDesign

__all__ = [
    "BLOCK", "GridLoop", "GridMargins", "LoopMonteCarlo", "frequency_grid", "grid_margins",
    "loop_monte_carlo",
]

_DECADES, _PER_DECADE, _CHUNK = 3, 200, 512
#: Part sets per in-process block of :func:`grid_margins` (a whole number of chunks).
BLOCK = 16 * _CHUNK


def _wrap(degrees: ArrayLike) -> NDArray[np.float64]:
    """Angles into [−180°, 180°), the convention of python-control's PM."""
    return np.remainder(np.asarray(degrees) + 180.0, 360.0) - 180.0


# -- the loop on a frequency grid, for many part sets at once ----------------

class GridLoop(NamedTuple):
    """A loop gain L(jω) = sign·H(jω)·G(jω) to evaluate on a grid.

    `network` is the compensator's H with its parts as symbols, `plant`
    the plant G, `omega` the grid (rad/s, see :func:`frequency_grid`).
    """

    network: NetworkFunction
    sign: float
    plant: Plant
    omega: np.ndarray


@dataclass(frozen=True)
class GridMargins:
    """Per part set: crossover (rad/s), PM (deg), GM (dB), NaN for none; stable."""

    crossover: np.ndarray
    phase_margin: np.ndarray
    gain_margin_db: np.ndarray
    stable: np.ndarray


def frequency_grid(crossover: float) -> NDArray[np.float64]:
    """The grid the margins are read on: crossover/1000 to 1000·crossover, rad/s.

    200 points a decade, log-spaced, *crossover* in rad/s.
    """
    return crossover * np.logspace(-_DECADES, _DECADES, 2 * _DECADES * _PER_DECADE + 1)


def _polyval(coefficients: ArrayLike, s: ArrayLike) -> NDArray[np.complex128]:
    """Horner on (degree+1, n) coefficients and (m,) points: (n, m)."""
    return polynomial_values(np.asarray(coefficients)[:, :, None], np.asarray(s)[None, :])


def _scaled(coefficients: NDArray[np.float64], scale: float) -> NDArray[np.float64]:
    """p(scale·x) from p(s): coefficient of s^j times scale^j."""
    powers = np.arange(coefficients.shape[0] - 1, -1, -1, dtype=float)
    return coefficients * (scale ** powers).reshape((-1,) + (1,) * (coefficients.ndim - 1))


def _polymul(batched: NDArray[np.float64], fixed: NDArray[np.float64]) -> NDArray[np.float64]:
    out = np.zeros((batched.shape[0] + fixed.size - 1, batched.shape[1]))
    for j, b in enumerate(fixed):
        out[j:j + batched.shape[0]] += b * batched
    return out


def _margins_on_grid(omega: NDArray[np.float64], loop: NDArray[np.complex128]
                     ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Crossover (rad/s), PM and GM of each row of `loop` (n, m), interpolated.

    Crossings are located between grid points (log-linear interpolation);
    per row the smallest PM and the GM nearest 0 dB are kept, the rules of
    :func:`placer.evidence.verify.margins`. NaN where a row has no crossing.
    """
    logw = np.log(omega)
    with np.errstate(divide="ignore"):
        magnitude = np.log(np.abs(loop))
    a, b = magnitude[:, :-1], magnitude[:, 1:]
    rows, cols = np.nonzero((a > 0) != (b > 0))
    t = a[rows, cols] / (a[rows, cols] - b[rows, cols])
    pa = np.degrees(np.angle(-loop[rows, cols]))
    pb = np.degrees(np.angle(-loop[rows, cols + 1]))
    pm = _wrap(pa + t * _wrap(pb - pa))
    crossover = np.exp(logw[cols] + t * (logw[cols + 1] - logw[cols]))
    crossover, phase_margin = _pick(loop.shape[0], rows, pm, pm, crossover)
    # Phase crossovers: Im L changes sign while Re L < 0 (the negative real axis).
    im, re = loop.imag, loop.real
    turn = ((im[:, :-1] > 0) != (im[:, 1:] > 0)) & (re[:, :-1] < 0) & (re[:, 1:] < 0)
    rows, cols = np.nonzero(turn)
    u = im[rows, cols] / (im[rows, cols] - im[rows, cols + 1])
    gm = -20 / math.log(10) * (a[rows, cols] + u * (b[rows, cols] - a[rows, cols]))
    _, gain_margin = _pick(loop.shape[0], rows, np.abs(gm), gm, gm)
    return crossover, phase_margin, gain_margin


def _pick(count: int, rows: NDArray[np.intp], rank: NDArray[np.float64], key: NDArray[np.float64],
          other: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Per row, (other, key) at the entry of lowest `rank`; NaN for rows with none."""
    out_other, out_key = np.full(count, np.nan), np.full(count, np.nan)
    if rows.size:
        order = np.lexsort((rank, rows))
        first = order[np.unique(rows[order], return_index=True)[1]]
        out_other[rows[first]], out_key[rows[first]] = other[first], key[first]
    return out_other, out_key


def _evaluate(grid_loop: GridLoop, values: Mapping[str, np.ndarray]) -> GridMargins:
    """GridMargins of a GridLoop for part values given as (n,) arrays."""
    nf, sign, plant, omega = grid_loop
    numerator, denominator = nf.coefficients(values)
    numerator = numerator.reshape(numerator.shape[0], -1)
    denominator = denominator.reshape(denominator.shape[0], -1)
    s = 1j * omega
    loop = sign * _polyval(numerator, s) / _polyval(denominator, s) * plant.response(omega)
    crossover, phase_margin, gain_margin = _margins_on_grid(omega, loop)
    # Closed-loop poles: roots of D_H·D_G + sign·N_H·N_G, in x = s/ωc for conditioning.
    scale = math.sqrt(omega[0] * omega[-1])
    plant_num, plant_den = (_scaled(np.atleast_1d(np.real(np.poly(r))), scale)
                            for r in (plant.zeros, plant.poles))
    char = _polymul(_scaled(denominator, scale), plant_den)
    extra = sign * plant.gain * _polymul(_scaled(numerator, scale), plant_num)
    char[char.shape[0] - extra.shape[0]:] += extra
    with np.errstate(invalid="ignore"):
        # A set whose polynomial is not finite has NaN roots: not stable.
        stable = np.all(batched_roots(char).real < 0, axis=1)
    return GridMargins(crossover, phase_margin, gain_margin, stable)


def _evaluate_chunks(loop: GridLoop, arrays: Mapping[str, np.ndarray]) -> GridMargins:
    """GridMargins of consecutive part sets, _CHUNK at a time from the first."""
    count = len(next(iter(arrays.values())))
    return _join([_evaluate(loop, {k: v[i:i + _CHUNK] for k, v in arrays.items()})
                  for i in range(0, count, _CHUNK)])


def _join(results: Sequence[GridMargins]) -> GridMargins:
    return GridMargins(*(np.concatenate([getattr(r, f) for r in results])
                         for f in ("crossover", "phase_margin", "gain_margin_db", "stable")))


def grid_margins(loop: GridLoop, arrays: Mapping[str, np.ndarray], *, workers: int | None = 1,
                 progress: Callable[[int, int], None] | None = None) -> GridMargins:
    """Crossover, margins and stability of `loop` for many part sets at once.

    Parameters
    ----------
    loop : GridLoop
    arrays : mapping of str to ndarray
        Every part symbol of ``loop.network`` → its values (SI), one per
        part set, all of one length.
    workers : int or None, optional
        Worker processes (None: every core), used from
        :data:`placer.evidence.workers.PARALLEL_MIN_SAMPLES` sets up.
    progress : callable, optional
        ``progress(done, total)`` after each block of sets.

    Returns
    -------
    GridMargins
        Per part set: the gain crossover (rad/s), phase margin (deg) and
        gain margin (dB), interpolated between grid points, with the rules of
        :func:`placer.evidence.verify.margins` (smallest PM, GM nearest 0 dB); NaN
        where the grid holds no crossing; stable when every closed-loop
        pole lies in the left half-plane. Evaluated in chunks of 512 sets,
        in blocks of :data:`BLOCK` sets in-process (a Ctrl-C stops between
        blocks) or in worker processes (ended at once on a Ctrl-C, see
        :func:`placer.evidence.workers.worker_pool`); the chunks are the
        same either way, and so are the results.
    """
    count = len(next(iter(arrays.values())))
    workers = check_workers(workers)
    parallel = workers > 1 and count >= PARALLEL_MIN_SAMPLES
    ranges = (worker_ranges(count, workers, _CHUNK) if parallel
              else [(a, min(a + BLOCK, count)) for a in range(0, count, BLOCK)])
    if progress is not None:
        progress(0, count)
    pieces = [{k: v[a:b] for k, v in arrays.items()} for a, b in ranges]
    results: list[GridMargins] = []
    if not parallel:
        for (_, stop), piece in zip(ranges, pieces):
            results.append(_evaluate_chunks(loop, piece))
            if progress is not None:
                progress(stop, count)
        return _join(results)
    with worker_pool(min(workers, len(ranges))) as pool:
        tasks = [pool.apply_async(_evaluate_chunks, (loop, piece)) for piece in pieces]
        for (_, stop), result in zip(ranges, results_in_order(tasks)):
            results.append(result)
            if progress is not None:
                progress(stop, count)
    return _join(results)


# -- Monte Carlo ---------------------------------------------------------------

@dataclass(frozen=True)
class LoopMonteCarlo:
    """Margins of the snapped loop over part tolerances (arrays per sample).

    Crossings are found on a grid from fc/1000 to 1000·fc (200 points a
    decade) by interpolation; NaN where a sample has none there.
    """

    samples: int
    seed: int
    distribution: str
    tolerances: dict[str, float]
    margin_floor_deg: float
    crossover_hz: np.ndarray = field(repr=False, compare=False)
    phase_margin_deg: np.ndarray = field(repr=False, compare=False)
    gain_margin_db: np.ndarray = field(repr=False, compare=False)
    stable: np.ndarray = field(repr=False, compare=False)

    @property
    def passed(self) -> NDArray[np.bool_]:
        """Samples that are stable with PM at or above the floor."""
        with np.errstate(invalid="ignore"):
            return self.stable & (self.phase_margin_deg >= self.margin_floor_deg)

    @property
    def yield_fraction(self) -> float:
        return float(np.mean(self.passed))

    def summary(self) -> dict[str, Any]:
        """Worst cases, spreads and yield, JSON-ready (None for no data)."""
        def stat(function: Callable[[np.ndarray], Any], array: np.ndarray) -> float | None:
            finite = array[np.isfinite(array)]
            return float(function(finite)) if finite.size else None
        return {
            "samples": self.samples, "seed": self.seed, "distribution": self.distribution,
            "tolerances": dict(self.tolerances), "margin_floor_deg": self.margin_floor_deg,
            "phase_margin_worst_deg": stat(np.min, self.phase_margin_deg),
            "phase_margin_median_deg": stat(np.median, self.phase_margin_deg),
            "gain_margin_worst_db": stat(np.min, self.gain_margin_db),
            "crossover_min_hz": stat(np.min, self.crossover_hz),
            "crossover_max_hz": stat(np.max, self.crossover_hz),
            "unstable_samples": int(np.sum(~self.stable)),
            "yield": self.yield_fraction,
        }


def loop_monte_carlo(design: LoopDesign, tolerances: Mapping[str, float] | float | None = None, *,
                     samples: int = 1000, seed: int = 0, distribution: str = "uniform",
                     margin_floor_deg: float | None = None, workers: int | None = 1,
                     progress: Callable[[int, int], None] | None = None) -> LoopMonteCarlo:
    """Tolerance Monte Carlo of a designed loop, vectorised over samples.

    Parameters
    ----------
    design : placer.loops.compensator.LoopDesign
    tolerances : mapping or float, optional
        Part symbol or kind ("resistor", "capacitor") → fraction (0.01 = 1 %),
        or one fraction for every part.
        Default: the usual tolerance of each part's series (E96 1 %, E12 10 %).
    samples, seed : int
    distribution : {"uniform", "gaussian"}
        Uniform within ±tolerance, or Gaussian with σ = tolerance/3.
    margin_floor_deg : float, optional
        Phase margin a sample must keep to count toward the yield; default
        the target minus 10°.
    workers : int or None, optional
        Worker processes (None: every core), used from
        :data:`placer.evidence.workers.PARALLEL_MIN_SAMPLES` samples up; the
        result does not depend on it.
    progress : callable, optional
        ``progress(done, samples)`` after each block of builds.

    Returns
    -------
    LoopMonteCarlo
    """
    if distribution not in DISTRIBUTIONS:
        raise SpecError(f"distribution must be one of {{'uniform', 'gaussian'}}, not {distribution!r}")
    # int and float are named beside the numbers ABCs for mypy, which does not count them.
    if isinstance(samples, bool) or not isinstance(samples, (int, numbers.Integral)) \
            or samples < 1:
        raise SpecError(f"samples must be a whole number of at least 1, not {samples!r}")
    kinds = {s: design.topology.kind_of(s) for s in design.roles.values()}
    chosen = {s: usual_tolerance(design.series[s]) for s in kinds}
    if isinstance(tolerances, (int, float, numbers.Real)) and not isinstance(tolerances, bool):
        tolerances = dict.fromkeys(kinds, tolerances)
    given: Mapping[str, Any] = dict(cast("Mapping[str, Any]", tolerances or {}))
    for key, value in given.items():
        targets = [s for s, k in kinds.items() if key in (s, k)]
        if not targets and key not in ("resistor", "capacitor", "inductor"):
            raise SpecError(f"tolerance given for {key!r}, which is neither a part nor a kind "
                            f"of this compensator (parts: {', '.join(kinds)})")
        if isinstance(value, bool) or not isinstance(value, numbers.Real) \
                or not 0 <= float(value) < 1:
            raise SpecError(f"tolerance of {key!r} must be a fraction from 0 to 1, not {value!r}")
        chosen.update({s: float(value) for s in targets})
    rng = np.random.default_rng(seed)
    arrays = {k: np.full(samples, v) for k, v in design.snapped.items()}
    for symbol, width in chosen.items():
        if distribution == "uniform":
            factor = 1.0 + width * rng.uniform(-1.0, 1.0, samples)
        else:
            factor = np.maximum(1.0 + width / 3.0 * rng.standard_normal(samples), 1e-6)
        arrays[symbol] = design.snapped[symbol] * factor
    if design.network is None:
        raise ValueError("this LoopDesign carries no network function")
    loop = GridLoop(design.network, design.sign, design.plant,
                    frequency_grid(design.placement.crossover))
    margins = grid_margins(loop, arrays, workers=workers, progress=progress)
    floor = (design.placement.phase_margin_deg - 10.0 if margin_floor_deg is None
             else float(margin_floor_deg))
    return LoopMonteCarlo(int(samples), seed, distribution, chosen, floor,
                          margins.crossover / (2 * math.pi), margins.phase_margin,
                          margins.gain_margin_db, margins.stable)
