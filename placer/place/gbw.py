"""How much op-amp GBW a section needs, with and without correction.

A design solved with ideal op-amps drifts when it is built with a finite
gain-bandwidth product; a design re-solved with the op-amp modelled
(:func:`placer.place.amplifier.place_section_with_amplifier`) does not, down to
a GBW of a few times f0 on paper. :func:`required_gbw` finds the smallest
GBW (Hz) at which each still meets an error bound; the corrected design
must also bear the op-amp's GBW spread (:data:`placer.place.amplifier.GBW_SPREAD`),
so the figure does not lean on the datasheet's typical GBW.
:func:`as_built_gbw` is the quick half: the smallest GBW at which one set
of part values, built as it is, stays within the bound.

References
----------
R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*, Oxford
University Press, 2001, the chapters on active-filter non-idealities
(Q enhancement by finite GBW; from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, cast

import numpy as np

from .amplifier import correct_placement, gbw_spread_error
from ..analysis.dominant import DominantFunction
from ..errors import SpecError, UnreachableTarget
from .opamp import GBW_SPREAD, AmplifierSpec, check_amplifier, function_at_gbw
from .placement import IdealPlacement, ProblemOptions, place_ideal, problem_options
from .solve import Goal, root_errors
from ..units import format_value

if TYPE_CHECKING:
    from ..analysis.protocols import PartFunction
    from ..circuit.topology import Constraint, Topology
    from ..spec.reader import PartsSpec
    from ..target.targets import Section

__all__ = [
    "GBWRequirement",
    "required_gbw",
    "as_built_gbw",
    "AS_BUILT_FLOOR",
    "search_top_hz",
]

#: The least GBW :func:`as_built_gbw` gives, in units of the section's f0.
AS_BUILT_FLOOR = 10.0


def search_top_hz(f0_hz: float, q: float | None) -> float:
    """The top of every GBW search, Hz: 1e4·f0·max(Q, 1) (Q None: first order)."""
    return 1e4 * f0_hz * max(q or 1.0, 1.0)


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
    parasitic_poles_hz: tuple[float, ...]
    error_pct: float
    gbw_spread: float = 0.0
    note: str = ""


def required_gbw(section: Section, topology: Topology, *, error_pct: float = 1.0,
                 parts: PartsSpec | None = None, amplifier_gain: float | None = None,
                 gbw_spread: float = GBW_SPREAD, seed: int = 0, rtol: float = 0.02,
                 coarse_budget: int = 400) -> GBWRequirement:
    """Smallest GBW (Hz) for which a corrected design meets `error_pct`.

    Bisection in log GBW over [2·f0, 1e4·f0·max(Q, 1)] (Hz): at each GBW the
    section is re-solved and snapped with the single-pole model, and the
    result must meet the bound at that GBW and at GBW·(1 ± `gbw_spread`).
    Without the spread the search would return designs that lean on the
    op-amp's exact GBW (a GBW of a few f0 can be "corrected" on paper; the
    built filter then moves with every op-amp). The quick uncorrected figure
    is found the same way on the ideal design's snapped values. Both
    searches assume the error falls as GBW rises.

    The steps: the ideal placement and its checks (:func:`_unmet_before_search`),
    the uncorrected figure (:func:`as_built_gbw`), the corrected search
    (:class:`_CorrectedSearch`, guided by :func:`_corrected_hint`) and the
    notes (:func:`_requirement_notes`).

    Parameters
    ----------
    section : placer.target.targets.Section
    topology : Topology
    error_pct : float
        Bound on the worst of the f0, Q and gain errors, percent.
    parts : placer.spec.reader.PartsSpec, optional
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
        :func:`placer.place.snap.snap`).

    Returns
    -------
    GBWRequirement

    Raises
    ------
    SpecError
        For a non-positive bound or gain, or a spread outside [0, 1).

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> from placer.target.targets import make_section
    >>> need = required_gbw(make_section("lowpass", 2 * math.pi * 10e3, 2.0),
    ...                     get_topology("sallen-key-lowpass-unity"), rtol=0.1)
    >>> 10e3 < need.gbw_hz < need.uncorrected_gbw_hz
    True
    """
    if not (math.isfinite(error_pct) and error_pct > 0):
        raise SpecError(f"error_pct = {error_pct!r} must be a positive percentage")
    if not (math.isfinite(gbw_spread) and 0 <= gbw_spread < 1):
        raise SpecError(f"gbw_spread = {gbw_spread!r} must be a fraction in [0, 1), e.g. 0.25")
    check_amplifier(AmplifierSpec(gain=amplifier_gain), section)
    f0 = section.omega0 / (2 * math.pi)
    low, high = 2 * f0, search_top_hz(f0, section.q)
    try:
        ideal = place_ideal(section, topology, parts=parts, seed=seed)
    except UnreachableTarget as reason:
        return GBWRequirement(math.inf, math.inf, (), error_pct, gbw_spread,
                              note=f"the topology cannot reach the section: {reason.reason}")
    unmet = _unmet_before_search(ideal, topology, error_pct, gbw_spread)
    if unmet is not None:
        return unmet
    function_at = function_at_gbw(topology.circuit, AmplifierSpec(gain=amplifier_gain))
    search = _CorrectedSearch(ideal, topology, function_at, problem_options(topology, parts),
                              gbw_spread, seed, coarse_budget)
    uncorrected = as_built_gbw(topology, ideal.snapped.values, ideal.goal, error_pct=error_pct,
                               amplifier_gain=amplifier_gain, rtol=rtol)
    hint = _corrected_hint(function_at, ideal, error_pct, gbw_spread, low, high)
    gbw = _guided_bisect(search.worst, error_pct, low, high, rtol, hint)
    corrected = search.corrected(gbw) if math.isfinite(gbw) else None
    parasitic = corrected.parasitic_poles_hz if corrected is not None else ()
    return GBWRequirement(gbw, uncorrected, tuple(parasitic), error_pct, gbw_spread,
                          note=_requirement_notes(gbw, uncorrected, low, high, gbw_spread))


def _unmet_before_search(ideal: IdealPlacement, topology: Topology, error_pct: float,
                         gbw_spread: float) -> GBWRequirement | None:
    """The requirement when no search is needed: the ideal design already misses
    the bound (no GBW helps), or there is no op-amp (none is needed); else None."""
    if ideal.errors.worst_error_with_gain_pct > error_pct:
        return GBWRequirement(
            math.inf, math.inf, (), error_pct, gbw_spread,
            note=f"even with ideal op-amps the snapped design misses by "
                 f"{ideal.errors.worst_error_with_gain_pct:.3g} %, more than the bound",
        )
    if topology.circuit.opamp_count == 0:
        return GBWRequirement(0.0, 0.0, (), error_pct, gbw_spread, note="the topology has no op-amp")
    return None


class _CorrectedSearch:
    """The corrected design at each GBW the search tries, re-solved once per GBW.

    The modelled circuit is derived once, at ωt = 1 rad/s, and scaled to
    each GBW (s·C and s/ωt are all that the GBW enters; exact, see
    :class:`placer.place.amplifier.ScaledFunction`). The search, where every
    step costs a re-solve and a re-snap, visits the midpoints plain
    bisection would, but decides one without a re-solve when a GBW already
    tried decides it (met at g: met above g; missed at g: missed below),
    and tries first the points a guess of the answer puts on either side of
    it (:func:`_guided_bisect`). Where the error does fall with the GBW this
    returns what plain bisection returns, with fewer re-solves; the answer
    is always a GBW tried and met, with a GBW tried and missed at most a
    factor 1 + `rtol` below it (or the bracket's bottom).
    """

    def __init__(self, ideal: IdealPlacement, topology: Topology,
                 function_at: Callable[[float], PartFunction], options: ProblemOptions, gbw_spread: float,
                 seed: int, coarse_budget: int) -> None:
        self.ideal, self.topology, self.function_at = ideal, topology, function_at
        self.options, self.gbw_spread = options, gbw_spread
        self.seed, self.coarse_budget = seed, coarse_budget
        self._done: dict[float, _Corrected | None] = {}

    def worst_at(self, gbw: float, values: Mapping[str, float]) -> float:
        """Worst error (percent, the gain's included) of `values` built with op-amps of `gbw`."""
        dominant = DominantFunction.for_goal(self.function_at(gbw), self.ideal.goal)
        return root_errors(dominant, values, self.ideal.goal).worst_error_with_gain_pct

    def corrected(self, gbw: float) -> _Corrected | None:
        """The design re-solved and snapped for `gbw` (None: unreachable there)."""
        if gbw not in self._done:
            options, prefer = self.options, None
            if self.gbw_spread:
                prefer = gbw_spread_error(self.topology, self.ideal.goal, self.function_at, gbw,
                                          ranges=options.ranges, fixed=options.fixed,
                                          constraints=options.constraints, spread=self.gbw_spread)
            self._done[gbw] = _correct(self.ideal, self.topology, self.function_at(gbw),
                                       options.ranges, options.series, options.fixed,
                                       options.constraints, self.seed, self.coarse_budget, prefer)
        return self._done[gbw]

    def worst(self, gbw: float) -> float:
        """Worst error (percent) of the design corrected at `gbw`, at it and its spread."""
        design = self.corrected(gbw)
        if design is None:
            return math.inf
        spread = self.gbw_spread
        edges = (gbw * (1 - spread), gbw * (1 + spread)) if spread else ()
        return max([design.error_pct] + [self.worst_at(edge, design.values) for edge in edges])


def _requirement_notes(gbw: float, uncorrected: float, low: float, high: float,
                       gbw_spread: float) -> str:
    """What the search found, in words."""
    notes = []
    if math.isfinite(gbw):
        if gbw == low:
            notes.append(f"met already at the search's lowest GBW, 2·f0 = {format_value(low, 'Hz')}")
        if gbw_spread:
            notes.append(f"the corrected design holds for GBW within ±{100 * gbw_spread:.3g} %")
    else:
        notes.append(f"not met up to {format_value(high, 'Hz')}")
    if math.isfinite(gbw) and math.isfinite(uncorrected):
        notes.append(f"correcting for the op-amp lowers the GBW needed {uncorrected / gbw:.3g}-fold")
    return "; ".join(notes)


def as_built_gbw(topology: Topology, values: Mapping[str, float], goal: Goal, *,
                 error_pct: float = 1.0, amplifier_gain: float | None = None,
                 rtol: float = 0.02) -> float:
    """Smallest GBW (Hz) at which a design, built as it is, meets `error_pct`.

    Bisection in log GBW over [10·f0, 1e4·f0·max(Q, 1)] (f0 of the goal,
    Hz) on the worst of the f0, Q (zero f0) and gain errors of the dominant
    roots against the goal, the part values held: what the design needs
    from its op-amps without being re-solved for them. Assumes the error
    falls as the GBW rises. Quick: one symbolic derivation of the modelled
    circuit, scaled to each GBW. The floor, 10·f0, is there because the
    dominant roots are not the whole story: below it the op-amp's own pole
    sits within a decade of the band and bends the response there whatever
    the roots do (common practice, no source).

    Parameters
    ----------
    topology : Topology
    values : mapping of str to float
        Every part symbol's value (SI), e.g. a snapped ideal-op-amp design.
    goal : placer.place.solve.Goal
    error_pct : float
        Bound, percent; the design's own error with ideal op-amps counts.
    amplifier_gain : float, optional
        DC open-loop gain, V/V (None: infinite).
    rtol : float
        Relative width of the bracket at which the bisection stops.

    Returns
    -------
    float
        Hz; 0 for a topology with no op-amp, inf when not met up to the
        search's top.

    Examples
    --------
    A unity-gain Sallen–Key for Q = 2 at 10 kHz needs far more than the
    100·f0·Q rule of thumb to stay within 1 % as built:

    >>> from placer.design import place_section
    >>> from placer.circuit.library import get_topology
    >>> from placer.target.targets import make_section
    >>> section = make_section("lowpass", 2 * math.pi * 10e3, 2.0)
    >>> c = place_section(section, get_topology("sallen-key-lowpass-unity"))
    >>> as_built_gbw(c.topology, c.snapped.values, c.problem.goal) > 100 * 10e3 * 2.0
    True
    """
    if not (math.isfinite(error_pct) and error_pct > 0):
        raise SpecError(f"error_pct = {error_pct!r} must be a positive percentage")
    if topology.circuit.opamp_count == 0:
        return 0.0
    f0 = cast(float, goal.omega0) / (2 * math.pi)   # every section's goal has an ω0
    low, high = AS_BUILT_FLOOR * f0, search_top_hz(f0, goal.q)
    function_at = function_at_gbw(topology.circuit, AmplifierSpec(gain=amplifier_gain))

    def ok(gbw: float) -> bool:
        dominant = DominantFunction.for_goal(function_at(gbw), goal)
        return root_errors(dominant, values, goal).worst_error_with_gain_pct <= error_pct

    return _bisect(ok, low, high, rtol)


# -- the searches ------------------------------------------------------------------

def _bisect(ok: Callable[[float], bool], low: float, high: float, rtol: float) -> float:
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


def _bisection_path(low: float, high: float, rtol: float, threshold: float) -> list[float]:
    """The midpoints :func:`_bisect` visits when ok(x) is x ≥ `threshold`."""
    points = []
    while high / low > 1 + rtol:
        middle = math.sqrt(low * high)
        points.append(middle)
        if middle >= threshold:
            high = middle
        else:
            low = middle
    return points


def _guided_bisect(worst: Callable[[float], float], bound: float, low: float, high: float,
                   rtol: float, hint: float) -> float:
    """The bisection of :func:`_bisect` on ``worst(x) <= bound``, with fewer calls.

    It walks the same path as :func:`_bisect` (the same endpoint checks,
    the same midpoints, the same answer) when ok is monotone, the premise
    of any bisection: a point tried and met decides every point above it,
    one tried and missed every point below. Instead of trying the next
    midpoint at once, it first tries the deepest point of the path a
    guess of the threshold predicts, on each side of the guess, as long
    as that point lies a safe distance from the guess; a right guess then
    decides many midpoints with two calls, a wrong one still narrows the
    bracket (and corrects the guess). The guess starts from `hint` and is
    replaced by a secant of log worst against log x through the tightest
    bracketing points once both sides are known.

    Returns the smallest point tried and met inside the final bracket,
    whose bottom is a point tried and missed (when ok is monotone, the
    bracket's top, as :func:`_bisect` returns), `low` when met there,
    ``inf`` when not met at `high`.
    """
    tried: dict[float, float] = {}

    def evaluate(x: float) -> bool:
        if x not in tried:
            tried[x] = worst(x)
        return tried[x] <= bound

    def known(x: float) -> bool | None:
        if x in tried:
            return tried[x] <= bound
        if any(p <= x and w <= bound for p, w in tried.items()):
            return True
        if any(p >= x and w > bound for p, w in tried.items()):
            return False
        return None

    def guess() -> tuple[float, float]:
        met = [p for p, w in tried.items() if w <= bound]
        missed = [p for p, w in tried.items() if w > bound]
        top = min(met) if met else None
        bottom = max(missed) if missed else None
        ratio = 1.2
        if top is not None and bottom is not None and 0 < tried[top] and math.isfinite(tried[bottom]):
            # log worst is close to linear in log x (the error goes as 1/GBW)
            ya, yb = math.log(bottom), math.log(top)
            fa, fb = math.log(tried[bottom] / bound), math.log(tried[top] / bound)
            y = ya + (yb - ya) * fa / (fa - fb) if fa > fb else 0.5 * (ya + yb)
            return math.exp(min(max(y, ya), yb)), max(1 + rtol / 2, (top / bottom) ** 0.1)
        if top is not None and tried[top] > 0:
            return top * min(tried[top] / bound, 1.0), ratio
        if bottom is not None and math.isfinite(tried[bottom]):
            return bottom * max(tried[bottom] / bound, 1.0), ratio
        return hint, ratio

    def decide(x: float, lo: float, hi: float) -> bool:
        while (verdict := known(x)) is None:
            centre, margin = guess()
            path = [p for p in _bisection_path(lo, hi, rtol, centre)
                    if p not in tried and abs(math.log(p / centre)) >= math.log(margin)]
            # the deepest point on each side of the guess, below and above
            above = [p for p in path if p >= centre]
            below = [p for p in path if p < centre]
            target = x
            if x >= centre and above:
                target = above[-1]
            elif x < centre and below:
                target = below[-1]
            evaluate(target)
        return verdict

    if not decide(high, low, high):
        return math.inf
    if decide(low, low, high):
        return low
    lo, hi = low, high
    while True:
        while hi / lo > 1 + rtol:
            middle = math.sqrt(lo * hi)
            if decide(middle, lo, hi):
                hi = middle
            else:
                lo = middle
        # The bracket's bottom must be a tried miss, as in _bisect, not one
        # inferred; if it is met after all (ok not monotone here), search on below it.
        if not evaluate(lo):
            break
        if lo == low:
            return low
        hi = lo
        lo = max([p for p, w in tried.items() if w > bound and p < hi], default=low)
        if lo == low and evaluate(low):
            return low
    met = [p for p, w in tried.items() if lo < p <= hi and w <= bound]
    return min(met) if met else hi


def _corrected_hint(function_at: Callable[[float], PartFunction], ideal: IdealPlacement, error_pct: float,
                    gbw_spread: float, low: float, high: float) -> float:
    """A guess (Hz) of the corrected search's answer, from the ideal design alone.

    A design corrected at a GBW g sits on target there (up to its snapping
    error) and drifts, as the GBW moves to g·(1 ± spread), about as the
    ideal design's figures drift between the same GBWs. The guess is the
    smallest g at which that drift, plus the ideal design's snapping
    error, meets the bound. It only steers :func:`_guided_bisect`, which
    checks every decision on corrected designs.
    """
    goal, values = ideal.goal, ideal.snapped.values
    floor = ideal.errors.worst_error_with_gain_pct
    if not gbw_spread:
        return low

    def figures(gbw: float) -> np.ndarray:
        errors = root_errors(DominantFunction.for_goal(function_at(gbw), goal), values, goal)
        named = [errors.f0_pct, errors.q_pct, errors.zero_f0_pct]
        if all(x is None for x in named):
            named = [errors.worst_root_pct]
        if errors.gain_db is not None:
            named.append(100 * (10 ** (errors.gain_db / 20) - 1))
        return np.array([0.0 if x is None else x for x in named], dtype=float)

    def drift_ok(gbw: float) -> bool:
        centre = figures(gbw)
        drift = max(float(np.max(np.abs(figures(edge) - centre)))
                    for edge in (gbw * (1 - gbw_spread), gbw * (1 + gbw_spread)))
        return floor + drift <= error_pct

    guess = _bisect(drift_ok, low, high, 0.005)
    return guess if math.isfinite(guess) else high


@dataclass(frozen=True)
class _Corrected:
    """A design re-solved and snapped for one GBW: its values and figures."""

    values: dict[str, float]
    error_pct: float
    parasitic_poles_hz: tuple[float, ...]


def _correct(ideal: IdealPlacement, topology: Topology, function: PartFunction,
             ranges: Mapping[str, tuple[float, float]] | None, series: Mapping[str, str] | None,
             fixed: Mapping[str, float], constraints: tuple[Constraint, ...], seed: int, coarse_budget: int,
             prefer: Callable[[np.ndarray], np.ndarray] | None = None) -> _Corrected | None:
    """The corrected design for one modelled function (None: unreachable).

    The steps of :func:`placer.place.amplifier.place_section_with_amplifier`
    (re-solve the dominant roots from the ideal solution, prefer the
    solutions that bear the GBW spread, snap), on a network function given
    rather than derived, and without the drift figures the GBW search does
    not read.
    """
    goal = ideal.goal
    dominant = DominantFunction.for_goal(function, goal)
    try:
        snapped = correct_placement(ideal, topology, dominant, ranges=ranges, fixed=fixed,
                                    constraints=constraints, series=series, seed=seed,
                                    coarse_budget=coarse_budget, prefer=prefer).snapped
    except UnreachableTarget:
        return None
    parasitic = dominant.parasitic_poles(snapped.values)
    return _Corrected(
        values=snapped.values,
        error_pct=root_errors(dominant, snapped.values, goal).worst_error_with_gain_pct,
        parasitic_poles_hz=tuple(sorted(float(abs(p)) / (2 * math.pi) for p in parasitic)),
    )
