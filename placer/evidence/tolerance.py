"""Tolerance Monte Carlo of a network function.

The Monte Carlo draws every toleranced part independently, evaluates the
coefficient polynomials for all samples at once through
:meth:`NetworkFunction.coefficients` (no Python loop over samples) and
reads f0 (Hz), Q and the gain off them, the same figures
:mod:`placer.analysis.sensitivity` reads; the sensitivities at the nominal values
give each part's share of the spread. For a notch it also reads the
rejection at a fixed frequency (the interference the notch is there for):
how far below the pass band each build sits at that frequency, in dB.

Examples
--------
>>> from placer.circuit.elements import Circuit, Element
>>> from placer.analysis.network import network_function
>>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), symbol="R1"),
...               Element("C1", "capacitor", ("vout", "gnd"), symbol="C1")))
>>> nf = network_function(rc)
>>> result = monte_carlo(nf, {"R1": 1e3, "C1": 1e-6}, {"R1": 0.01, "C1": 0.05},
...                      samples=1000, seed=1)
>>> round(result.nominal_f0_hz, 2), result.ranking["f0"]
(159.15, ('C1', 'R1'))

References
----------
R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*,
Oxford University Press, 2001 (sensitivity chapter).
"""

from __future__ import annotations

import math
import numbers
import warnings
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from typing import TYPE_CHECKING, Any, NamedTuple, cast

import numpy as np
from numpy.typing import NDArray

from ..errors import NumericalWarning, SpecError
from ..analysis.network import NetworkFunction, polynomial_values

if TYPE_CHECKING:
    from ..analysis.protocols import PartFunction
    from ..analysis.sensitivity import FigureReference, Sensitivities
from .tolerance_results import CascadeMonteCarloResult, MonteCarloResult, Statistics
from .workers import (PARALLEL_MIN_SAMPLES, check_workers, results_in_order, worker_pool,
                      worker_ranges)
from ..analysis.sensitivity import (
    check_has_poles,
    coefficient_figures,
    is_real_number,
    nominal_values,
    figure_reference,
    sensitivities,
)

__all__ = [
    "DISTRIBUTIONS",
    "WINDOW_KEYS",
    "DEFAULT_WINDOWS",
    "MAX_REJECTION_DB",
    "MAX_SAMPLES",
    "CHUNK",
    "monte_carlo",
    "cascade_monte_carlo",
    "cascade_magnitude_blocks",
    "MASK_BLOCK",
]

#: Accepted values of ``distribution``.
DISTRIBUTIONS = ("uniform", "gaussian")
#: Accepted keys of ``windows``.
WINDOW_KEYS = ("f0", "q", "gain_db", "rejection_db")
#: The yield windows when a spec's [tolerance] gives none, one set for
#: ``design`` (around nominal) and ``compare`` (around the target): f0 and Q
#: relative (±2 %, ±5 %), the gain in dB (±0.5 dB).
DEFAULT_WINDOWS = {"f0": 0.02, "q": 0.05, "gain_db": 0.5}
#: Largest rejection reported, dB (an exact null would be infinite).
MAX_REJECTION_DB = 200.0
#: Upper limit on Monte Carlo samples; larger requests are capped.
MAX_SAMPLES = 1_000_000
#: Samples per chunk when a progress callback is given.
CHUNK = 2_000
#: Builds per block of :func:`cascade_magnitude_blocks` (bounds its memory).
MASK_BLOCK = 256

#: What ``seed`` accepts: numpy.random.default_rng's argument.
_Seed = int | np.random.SeedSequence | np.random.Generator | None
#: Per block: ω0, Q (None, first order), gain, rejection (None unless asked).
_BlockFigures = tuple[NDArray[Any], NDArray[Any] | None, NDArray[Any], NDArray[Any] | None]


# -- validation -------------------------------------------------------------

def _db(x: Any) -> NDArray[np.float64]:
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(x))


def _percent(fraction: float) -> str:
    return f"{fraction * 100:g} %"



def _check_tolerances(tolerances: object, names: Sequence[str],
                      allow_zero: bool) -> dict[str, float]:
    if is_real_number(tolerances):
        tolerances = {name: tolerances for name in names}
    if not isinstance(tolerances, Mapping):
        raise SpecError(
            f"tolerances must map part names to fractions (0.01 = 1 %), not {tolerances!r}"
        )
    out: dict[str, float] = {}
    for name, given in tolerances.items():
        if name not in names:
            raise SpecError(
                f"tolerance given for {name!r}, which is not a part of this network "
                f"(parts: {', '.join(names)})"
            )
        if not is_real_number(given):
            raise SpecError(f"tolerance of {name!r} must be a number (0.01 = 1 %), not {given!r}")
        tolerance = float(given)
        low_ok = tolerance >= 0 if allow_zero else tolerance > 0
        if not (math.isfinite(tolerance) and low_ok and tolerance < 1):
            shown = _percent(tolerance) if math.isfinite(tolerance) else repr(tolerance)
            raise SpecError(f"tolerance of {name!r} must be between 0 and 100 %, not {shown}")
        out[name] = tolerance
    return {name: out[name] for name in names if name in out}


def _check_samples(samples: object) -> int:
    if not (is_real_number(samples) and isinstance(samples, numbers.Integral)):
        raise SpecError(f"samples must be a whole number of at least 1, not {samples!r}")
    if int(samples) < 1:
        raise SpecError(f"samples must be at least 1, not {samples}")
    if int(samples) > MAX_SAMPLES:
        warnings.warn(
            f"{samples} Monte Carlo samples requested; capped at {MAX_SAMPLES:,}",
            NumericalWarning, stacklevel=3,
        )
        return MAX_SAMPLES
    return int(samples)


def _choices(options: Sequence[str]) -> str:
    return "{" + ", ".join(repr(o) for o in options) + "}"


def _check_windows(windows: object, order: int,
                   reject_hz: float | None) -> dict[str, float] | None:
    if windows is None:
        return None
    if not isinstance(windows, Mapping):
        raise SpecError(f"windows must map {set(WINDOW_KEYS)} to widths, not {windows!r}")
    out: dict[str, float] = {}
    for key, width in windows.items():
        if key not in WINDOW_KEYS:
            raise SpecError(f"window key must be one of {_choices(WINDOW_KEYS)}, not {key!r}")
        if key == "q" and order == 1:
            raise SpecError("window 'q' given, but a first-order network has no Q")
        if key == "rejection_db" and reject_hz is None:
            raise SpecError("window 'rejection_db' needs the frequency to read it at (reject_hz)")
        if not (is_real_number(width) and math.isfinite(width) and width > 0):
            raise SpecError(f"window {key!r} must be a positive number, not {width!r}")
        out[key] = float(width)
    return out


# -- Monte Carlo ------------------------------------------------------------

def _draw(rng: np.random.Generator, tolerances: Mapping[str, float], samples: int,
          distribution: str) -> NDArray[np.float64]:
    """Multipliers (parts, samples) around 1."""
    widths = np.array(list(tolerances.values()))[:, None]
    if distribution == "uniform":
        return 1.0 + widths * rng.uniform(-1.0, 1.0, size=(len(tolerances), samples))
    sigma = widths / 3.0
    multipliers = 1.0 + sigma * rng.standard_normal(size=(len(tolerances), samples))
    # A part cannot change sign; redraw the (astronomically rare) ones that would.
    bad = multipliers <= 0
    while bad.any():
        redraw = 1.0 + (sigma * rng.standard_normal(size=multipliers.shape))
        multipliers = np.where(bad, redraw, multipliers)
        bad = multipliers <= 0
    return multipliers


def _window_masks(windows: Mapping[str, float], f0: NDArray[Any], q: NDArray[Any] | None,
                  gain_db: NDArray[Any] | None, nominal_f0: float, nominal_q: float | None,
                  nominal_gain_db: float | None,
                  rejection_db: NDArray[Any] | None = None) -> dict[str, NDArray[np.bool_]]:
    masks: dict[str, NDArray[np.bool_]] = {}
    with np.errstate(divide="ignore", invalid="ignore"):
        if "f0" in windows:
            masks["f0"] = np.abs(f0 / nominal_f0 - 1.0) <= windows["f0"]
        if "q" in windows and q is not None:
            masks["q"] = np.abs(q / nominal_q - 1.0) <= windows["q"]
        if "gain_db" in windows and gain_db is not None and nominal_gain_db is not None:
            masks["gain_db"] = np.abs(gain_db - nominal_gain_db) <= windows["gain_db"]
        if "rejection_db" in windows and rejection_db is not None:
            masks["rejection_db"] = rejection_db >= windows["rejection_db"]
    return masks


def _check_reject_hz(reject_hz: float | None) -> float | None:
    if reject_hz is None:
        return None
    if not (is_real_number(reject_hz) and math.isfinite(reject_hz) and reject_hz > 0):
        raise SpecError(f"reject_hz must be a positive frequency in Hz, not {reject_hz!r}")
    return float(reject_hz)


def _rejection_db(numerator: NDArray[Any], denominator: NDArray[Any], gain: NDArray[Any],
                  omega: float) -> NDArray[np.float64]:
    """|gain| / |H(jω)| in dB per sample, capped at MAX_REJECTION_DB."""
    top = polynomial_values(numerator, 1j * omega)
    bottom = polynomial_values(denominator, 1j * omega)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.abs(gain) * np.abs(bottom) / np.abs(top)
        db = 20.0 * np.log10(ratio)
    return np.minimum(np.where(np.isnan(db), MAX_REJECTION_DB, db), MAX_REJECTION_DB)


def _contributions(sens: Sensitivities, tolerances: Mapping[str, float]
                   ) -> tuple[dict[str, dict[str, float]], dict[str, tuple[str, ...]]]:
    contributions: dict[str, dict[str, float]] = {}
    ranking: dict[str, tuple[str, ...]] = {}
    for key, per_part in (("f0", sens.omega0), ("q", sens.q), ("gain", sens.gain)):
        if per_part is None:
            continue
        variance = {name: (per_part[name] * tolerances[name]) ** 2 for name in tolerances}
        total = sum(variance.values())
        shares = {name: (v / total if total > 0 else 0.0) for name, v in variance.items()}
        contributions[key] = shares
        ranking[key] = tuple(sorted(shares, key=lambda n: (-shares[n], n)))
    return contributions, ranking


def _readonly(array: Any) -> NDArray[Any]:
    out = np.asarray(array)
    out.flags.writeable = False
    return out


def _evaluate_block(nf: PartFunction, nominal: Mapping[str, float],
                    multipliers: NDArray[np.float64], index: Mapping[str, int],
                    ref: FigureReference, reject_hz: float | None) -> tuple[NDArray[Any] | None, ...]:
    """(ω0, Q or None, gain, rejection dB or None) for consecutive samples.

    The columns are evaluated CHUNK at a time, from the first, so the
    arithmetic (and numpy's vectorised loops, whose last bits can depend on
    where a value falls in an array) is the same however the samples are
    split between processes, as long as each part starts at a multiple of
    CHUNK.
    """
    parts: list[_BlockFigures] = []
    for start in range(0, multipliers.shape[1], CHUNK):
        block = multipliers[:, start:start + CHUNK]
        count = block.shape[1]
        columns = {
            name: (nominal[name] * block[index[name]] if name in index
                   else np.full(count, nominal[name]))
            for name in nf.symbols
        }
        numerator, denominator = nf.coefficients(columns)
        omega0, q, gain = coefficient_figures(numerator, denominator, ref)
        rejection = None
        if reject_hz is not None:
            rejection = _rejection_db(numerator, denominator, gain, 2 * math.pi * reject_hz)
        parts.append((omega0, q, gain, rejection))

    def join(k: int) -> NDArray[Any] | None:
        if parts[0][k] is None:
            return None
        # A figure is None in every block or in none: the same network throughout.
        return np.concatenate([np.broadcast_to(cast("NDArray[Any]", p[k]), (len(p[0]),))
                               for p in parts])

    return join(0), join(1), join(2), join(3)


def _blocks(total: int, workers: int) -> list[tuple[int, int]]:
    """Column ranges handed out at once: CHUNK at a time in-process (a Ctrl-C
    stops between them, and progress is reported after each), or
    :func:`worker_ranges` for worker processes."""
    if workers > 1:
        return worker_ranges(total, workers, CHUNK)
    return [(start, min(start + CHUNK, total)) for start in range(0, total, CHUNK)]


def monte_carlo(nf: NetworkFunction | PartFunction, values: Mapping[str, float],
                tolerances: Mapping[str, float] | float, *, samples: int = 10_000,
                distribution: str = "uniform", seed: _Seed = 0,
                windows: Mapping[str, float] | None = None,
                progress: Callable[[int, int], None] | None = None, allow_zero: bool = False,
                reject_hz: float | None = None, workers: int | None = 1) -> MonteCarloResult:
    """Tolerance Monte Carlo of f0, Q and gain, vectorised over samples.

    Parameters
    ----------
    nf : NetworkFunction
    values : mapping of str to float
        Nominal value of every part symbol (SI units).
    tolerances : mapping of str to float, or float
        Part → tolerance as a fraction (0.01 = ±1 %); one float applies to
        every part. Parts absent are exact.
    samples : int, optional
        Number of samples, 1 … 1,000,000 (more is capped with a warning).
    distribution : {"uniform", "gaussian"}, optional
        "uniform": each part uniform within ±tolerance; "gaussian": normal
        with 3σ = tolerance, not truncated (a value that would come out
        ≤ 0 is redrawn, which matters only for tolerances above ~30 %).
    seed : int, numpy.random.SeedSequence or numpy.random.Generator, optional
    windows : mapping, optional
        Yield windows around nominal: {"f0": 0.02, "q": 0.05, "gain_db": 0.5}
        means f0 within ±2 %, Q within ±5 %, gain within ±0.5 dB;
        "rejection_db": 40 asks for at least 40 dB of rejection at
        `reject_hz`.
    progress : callable, optional
        ``progress(done, total)``, called after each chunk of 2,000 samples
        (in-process) or each worker's range. Samples are evaluated in such
        blocks either way, so a Ctrl-C stops between two of them; worker
        processes are then ended at once
        (:func:`placer.evidence.workers.worker_pool`).
    allow_zero : bool, optional
        Accept tolerances of exactly 0 (a check that samples equal nominal).
    reject_hz : float, optional
        Read each build's rejection at this frequency (Hz): its pass-band
        gain over |H| there, in dB. For a notch, the frequency it must
        remove (50 Hz hum), which the builds' nulls scatter around.
    workers : int, optional
        Worker processes (default 1, in-process; None: every core). Used
        from PARALLEL_MIN_SAMPLES samples up; the draws are made once, up
        front, so the result does not depend on it.

    Returns
    -------
    MonteCarloResult
        Figures: second order — f0 = ω0/2π, Q, gain of the network; first
        order — f0 of the pole and the gain; higher orders — f0 and Q of
        the dominant pole pair (see
        :func:`placer.analysis.sensitivity.sensitivities`) and the gain at the
        reference.

    Raises
    ------
    SpecError
        For a missing value, a tolerance outside (0, 100 %), samples < 1,
        an unknown distribution or window key.

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> from placer.analysis.network import network_function
    >>> nf = network_function(get_topology("rc-lowpass").circuit)
    >>> r = monte_carlo(nf, {"R1": 1e3, "C1": 1e-9}, {"R1": 0.01, "C1": 0.05},
    ...                 samples=20000, windows={"f0": 0.05})
    >>> round(r.yield_fraction, 2), r.contributions["f0"]["C1"] > 0.9
    (0.95, True)
    """
    check_has_poles(nf)
    nominal = nominal_values(nf, values)
    checked = _check_tolerances(tolerances, list(nf.symbols), allow_zero)
    samples = _check_samples(samples)
    if distribution not in DISTRIBUTIONS:
        raise SpecError(f"distribution must be one of {_choices(DISTRIBUTIONS)}, "
                        f"not {distribution!r}")
    reject_hz = _check_reject_hz(reject_hz)
    shape = _check_windows(windows, nf.order, reject_hz)
    workers = check_workers(workers)
    workers = workers if samples >= PARALLEL_MIN_SAMPLES else 1
    ref = figure_reference(nf, nominal)
    multipliers = _draw(np.random.default_rng(seed), checked, samples, distribution)
    # Column 0 is the nominal itself, so nominal and samples share one code path.
    multipliers = np.concatenate([np.ones((len(checked), 1)), multipliers], axis=1)
    index = {name: i for i, name in enumerate(checked)}  # row of each toleranced part
    figures = _evaluate_samples(nf, nominal, multipliers, index, ref, reject_hz, workers,
                                progress)
    return _result(nf, nominal, checked, distribution, shape, reject_hz, ref, figures)


class _Figures(NamedTuple):
    """Per build (column 0 the nominal): ω0, Q (None, first order), gain, rejection."""

    omega0: np.ndarray
    q: np.ndarray | None
    gain: np.ndarray
    rejection: np.ndarray | None


def _evaluate_samples(nf: PartFunction, nominal: dict[str, float], multipliers: np.ndarray,
                      index: dict[str, int], ref: FigureReference, reject_hz: float | None, workers: int,
                      progress: Callable[[int, int], None] | None) -> _Figures:
    """Figures of every column of `multipliers`, block by block (in-process or in workers).

    `index` maps a toleranced part to its row of `multipliers`.
    """
    total = multipliers.shape[1]
    samples = total - 1
    figures = _Figures(np.empty(total), np.empty(total) if nf.order >= 2 else None,
                       np.empty(total), np.empty(total) if reject_hz is not None else None)
    blocks = _blocks(total, workers)

    def store(block: tuple[int, int], found: tuple[NDArray[Any] | None, ...]) -> None:
        start, stop = block
        for array, values in zip(figures, found):
            if array is not None:
                array[start:stop] = values
        if progress is not None:
            progress(stop - 1, samples)

    if workers == 1 or len(blocks) == 1:
        for start, stop in blocks:
            store((start, stop), _evaluate_block(nf, nominal, multipliers[:, start:stop], index,
                                                 ref, reject_hz))
    else:
        with worker_pool(min(workers, len(blocks))) as pool:
            tasks = [pool.apply_async(_evaluate_block, (nf, nominal, multipliers[:, start:stop],
                                                        index, ref, reject_hz))
                     for start, stop in blocks]
            for block, found in zip(blocks, results_in_order(tasks)):
                store(block, found)
    if not (np.all(np.isfinite(figures.omega0)) and np.all(np.isfinite(figures.gain))):
        warnings.warn("some Monte Carlo samples gave non-finite figures (NaN or inf)",
                      NumericalWarning, stacklevel=3)
    return figures


def _result(nf: PartFunction, nominal: dict[str, float], tolerances: dict[str, float],
            distribution: str, windows: dict[str, float] | None, reject_hz: float | None,
            ref: FigureReference,
            figures: _Figures) -> MonteCarloResult:
    """Statistics, yield windows and variance shares of the evaluated builds."""
    samples = figures.gain.size - 1
    f0 = figures.omega0 / (2 * math.pi)
    nominal_f0, f0 = float(f0[0]), _readonly(f0[1:])
    nominal_gain, gain = float(figures.gain[0]), _readonly(figures.gain[1:])
    nominal_q = q = None
    if figures.q is not None:
        nominal_q, q = float(figures.q[0]), _readonly(figures.q[1:])
    statistics = {"f0_hz": Statistics.of(f0), "gain": Statistics.of(gain),
                  "gain_db": Statistics.of(_db(gain))}
    if q is not None:
        statistics["q"] = Statistics.of(q)
    nominal_rejection = rejection = None
    if figures.rejection is not None:
        nominal_rejection = float(figures.rejection[0])
        rejection = _readonly(figures.rejection[1:])
        statistics["rejection_db"] = Statistics.of(rejection)
    window_yield = yield_fraction = passed = None
    if windows is not None:
        masks = _window_masks(windows, f0, q, _db(gain), nominal_f0, nominal_q,
                              float(_db(nominal_gain)), rejection)
        window_yield = {key: float(mask.mean()) for key, mask in masks.items()}
        passed = _readonly(np.logical_and.reduce(list(masks.values())) if masks
                           else np.ones(samples, bool))
        yield_fraction = float(passed.mean())
    sens = sensitivities(nf, nominal)
    contributions, ranking = _contributions(sens, tolerances)
    return MonteCarloResult(
        samples=samples, distribution=distribution, tolerances=dict(tolerances),
        nominal_f0_hz=nominal_f0, nominal_q=nominal_q, nominal_gain=nominal_gain,
        gain_reference=ref.gain_label, f0_hz=f0, q=q, gain=gain, statistics=statistics,
        windows=windows, window_yield=window_yield, yield_fraction=yield_fraction,
        passed=passed, contributions=contributions, ranking=ranking, sensitivities=sens,
        reject_hz=reject_hz, nominal_rejection_db=nominal_rejection, rejection_db=rejection,
    )


def cascade_monte_carlo(sections: Iterable[Any], *, samples: int = 10_000,
                        distribution: str = "uniform", seed: _Seed = 0,
                        windows: Mapping[str, float] | None = None,
                        progress: Callable[[int, int], None] | None = None,
                        allow_zero: bool = False) -> CascadeMonteCarloResult:
    """Monte Carlo of a cascade, each section sampled independently.

    Parameters
    ----------
    sections : sequence of (NetworkFunction, values, tolerances)
    samples, distribution, windows, allow_zero
        As in :func:`monte_carlo`; the windows apply to every section.
    seed : int, SeedSequence or Generator, optional
        One generator; each section gets its own child stream
        (``Generator.spawn``), so sections are independent and the whole
        is reproducible.
    progress : callable, optional
        ``progress(done, total)`` over all sections' samples.

    Returns
    -------
    CascadeMonteCarloResult
        The overall gain is the product of the section gains, each read
        at its own section's reference (so, for staggered band-pass
        sections, not the cascade's gain at the band centre); its yield
        needs every section inside its "f0"/"q" windows and the overall
        gain inside "gain_db".

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> from placer.analysis.network import network_function
    >>> nf = network_function(get_topology("rc-lowpass").circuit)
    >>> part = (nf, {"R1": 1e3, "C1": 1e-9}, {"R1": 0.01, "C1": 0.01})
    >>> r = cascade_monte_carlo([part, part], samples=500)
    >>> len(r.sections), r.nominal_gain
    (2, 1.0)
    """
    sections = list(sections)
    if not sections:
        raise SpecError("a cascade needs at least one section")
    for i, section in enumerate(sections):
        if not (isinstance(section, (tuple, list)) and len(section) == 3):
            raise SpecError(
                f"cascade section {i} must be (network function, values, tolerances), "
                f"not {section!r}"
            )
    samples = _check_samples(samples)
    streams = np.random.default_rng(seed).spawn(len(sections))
    results: list[MonteCarloResult] = []
    for i, ((nf, values, tolerances), stream) in enumerate(zip(sections, streams)):
        def report(done: int, total: int, _offset: int = i * samples) -> None:
            assert progress is not None  # report is passed on only with a progress
            progress(_offset + done, len(sections) * samples)
        results.append(monte_carlo(nf, values, tolerances, samples=samples,
                                   distribution=distribution, seed=stream, windows=windows,
                                   progress=None if progress is None else report,
                                   allow_zero=allow_zero))
    gain = _readonly(np.prod([r.gain for r in results], axis=0))
    nominal_gain = float(np.prod([r.nominal_gain for r in results]))
    statistics = {"gain": Statistics.of(gain), "gain_db": Statistics.of(_db(gain))}
    yield_fraction = passed = None
    checked = results[0].windows
    if checked is not None:
        shape = {k: v for k, v in checked.items() if k != "gain_db"}
        masks = [m for r in results for m in _window_masks(
            shape, r.f0_hz, r.q, None, r.nominal_f0_hz, r.nominal_q, None).values()]
        if "gain_db" in checked:
            masks.append(np.abs(_db(gain) - _db(nominal_gain)) <= checked["gain_db"])
        passed = _readonly(np.logical_and.reduce(masks) if masks else np.ones(samples, bool))
        yield_fraction = float(passed.mean())
    return CascadeMonteCarloResult(tuple(results), gain, nominal_gain, statistics, checked,
                                   yield_fraction, passed)


def cascade_magnitude_blocks(sections: Sequence[Any], omega: Sequence[float], *, samples: int,
                             distribution: str = "uniform", seed: _Seed = 0,
                             block: int = MASK_BLOCK) -> Iterator[np.ndarray]:
    """|H(jω)| in dB of Monte Carlo builds of a whole cascade, block by block.

    Every section's toleranced parts are drawn once, up front, for all
    builds (each section from its own child stream of `seed`); then for
    each block of builds the sections' coefficient polynomials are
    evaluated for the whole block at once and multiplied into the
    cascade's response on the grid: no Python loop over builds or
    frequencies.

    Parameters
    ----------
    sections : sequence of (NetworkFunction, values, tolerances)
        Each section's function, nominal part values (SI) and tolerance
        fractions (parts absent are exact).
    omega : array_like
        Frequencies, rad/s.
    samples : int
        Builds (1 … 1,000,000).
    distribution : {"uniform", "gaussian"}
    seed : int, SeedSequence or Generator
    block : int
        Builds per yielded block.

    Yields
    ------
    ndarray, shape (builds in the block, len(omega))
        20·log10|H| of the builds, dB, in draw order.

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> from placer.analysis.network import network_function
    >>> nf = network_function(get_topology("rc-lowpass").circuit)
    >>> part = (nf, {"R1": 1e3, "C1": 1e-6}, {"R1": 0.01, "C1": 0.05})
    >>> blocks = list(cascade_magnitude_blocks([part, part], [0.0, 1e3], samples=600))
    >>> [b.shape for b in blocks][-1], bool(abs(blocks[0][0, 0]) < 1e-9)
    ((88, 2), True)
    """
    samples = _check_samples(samples)
    if distribution not in DISTRIBUTIONS:
        raise SpecError(f"distribution must be one of {_choices(DISTRIBUTIONS)}, "
                        f"not {distribution!r}")
    s = 1j * np.asarray(omega, float)
    streams = np.random.default_rng(seed).spawn(len(sections))
    drawn = []
    for (nf, values, tolerances), stream in zip(sections, streams):
        nominal = nominal_values(nf, values)
        tolerances = _check_tolerances(tolerances, list(nf.symbols), False)
        drawn.append((nf, nominal, tolerances,
                      _draw(stream, tolerances, samples, distribution)))
    for start in range(0, samples, block):
        stop = min(start + block, samples)
        total = np.ones((stop - start, s.size), complex)
        for nf, nominal, tolerances, multipliers in drawn:
            index = {name: i for i, name in enumerate(tolerances)}
            columns = {name: (nominal[name] * multipliers[index[name], start:stop]
                              if name in index else np.full(stop - start, nominal[name]))
                       for name in nf.symbols}
            numerator, denominator = nf.coefficients(columns)
            total *= (polynomial_values(numerator[:, :, None], s[None, :])
                      / polynomial_values(denominator[:, :, None], s[None, :]))
        yield _db(total)
