"""Ranking candidate topologies for every section of a target.

For each section of a spec's target, every candidate topology (see
:func:`placer.design.candidate_topologies`) is placed as ``placer design``
places it (:func:`placer.design.place_candidate`: the same seed, the same
op-amp correction, the same stability check, so the same parts and the
same error) and, when it reaches the section,
measured on what a designer weighs when choosing a circuit:

* parts (resistors, capacitors, inductors) and op-amps;
* worst root/figure error after snapping, percent (gain included);
* value spread: largest/smallest value among the resistors and among the
  capacitors;
* the largest |S| of ω0 and of Q to any part, S = ∂ln y/∂ln x
  (:func:`placer.analysis.sensitivity.sensitivities` at the snapped values);
* the op-amp gain-bandwidth the stage needs, Hz (see :data:`GBW_METHODS`);
* Monte Carlo yield: the share of samples whose f0 and Q stay within the
  spec's windows around nominal, every part drawn within the spec's
  tolerance for its kind (:func:`placer.evidence.tolerance.monte_carlo`);
* before layout (:mod:`placer.evidence.prelayout`): the stage's integrated output
  noise over the noise band, and the least phase margin of its op-amps'
  own loops with the spec's op-amp model (or the default one).

Each candidate is placed at the impedance level the design would give it
(:func:`placer.evidence.prelayout.level_rules_for`).

Candidates are evaluated in worker processes, one candidate (section ×
topology) per task. Each candidate's solver and Monte Carlo seeds come
from ``(seed, section index, topology id)`` alone (:func:`candidate_seeds`)
and results are gathered in submission order, so one worker and many give
the same comparison.
"""

from __future__ import annotations

import math
import os
from dataclasses import asdict, dataclass, field
from collections.abc import Callable, Iterable, Mapping, Sequence
from typing import TYPE_CHECKING, Any, cast

import numpy as np

from .place.amplifier import AmplifiedCandidate, built_drift
from .design import candidate_topologies, check_part_names, place_candidate, real_amplifier
from .errors import PlacerError, SpecError
from .place.gbw import as_built_gbw, required_gbw, search_top_hz
from .place.opamp import AmplifierSpec, check_amplifier
from .place.placement import (PART_KINDS, Candidate, candidate_seeds, value_spread,
                              worst_error_quantity)
from .analysis.noise import analyse_noise
from .evidence.prelayout import checked_circuit, level_rules_for, settings_for
from .evidence.workers import results_as_completed, worker_pool
from .analysis.return_ratio import opamp_loops
from .target.sections import split_sections
from .evidence.tolerance import DEFAULT_WINDOWS, monte_carlo
from .units import finite_or_none, format_value

if TYPE_CHECKING:
    from .spec.reader import Spec
    from .target.targets import Section
    from .circuit.topology import Topology
    from .evidence.tolerance_results import MonteCarloResult
    from .place.level import LevelRule
    from .place.snap import SnapResult
    from .place.solve import Goal, Problem, RootErrors


__all__ = [
    "RANK_KEYS", "GBW_METHODS", "CandidateResult", "SectionComparison", "Comparison",
    "candidate_seeds", "rank_candidates", "compare", "comparison_to_dict",
    "GBW_SOURCES", "GBW_SOURCES_SHORT",
]

#: Ranking keys and what each orders by; unreachable candidates always come last.
RANK_KEYS = {
    "yield": "Monte Carlo yield (high first; yields within two standard errors of the best "
             "count as equal, and among those fewer op-amps, then fewer parts, come first), "
             "then error (low first), then parts (few first)",
    "error": "worst error after snapping (low first), then parts (few first)",
    "parts": "parts (few first), then error (low first)",
    "sensitivity": "largest |S| of ω0 or Q to any part (low first), then error (low first)",
}
#: Ways to state the gain-bandwidth a stage needs: "built" (default) the
#: single-pole op-amp model on the snapped design as compared; "rule" the
#: 100·f0·Q rule of thumb; "model" as "built", plus what a design re-solved
#: for the op-amp would need (seconds per candidate).
GBW_METHODS = ("built", "rule", "model")
#: Error bound (percent) the op-amp model's GBW requirement is computed for.
GBW_ERROR_PCT = 1.0
#: The rule-of-thumb factor: GBW >= GBW_FACTOR · f0 · Q.
GBW_FACTOR = 100.0

#: Where each GBW figure comes from, in words (the comparison report shows them).
GBW_SOURCES = {
    "practice": "common practice (no source): GBW >= 100·f0·Q for Sallen–Key and "
                "multiple-feedback stages",
    "thumb": "common practice for Sallen–Key and multiple-feedback stages, GBW >= 100·f0·Q, "
             "applied to a topology it was not stated for",
    "passive": "no op-amp",
    "built": f"op-amp model (single pole): the smallest GBW, and at "
             f"least 10·f0, at which the design with preferred values, as built, stays "
             f"within "
             f"{GBW_ERROR_PCT:g} % of the target",
}
#: The same, short, for the comparison table.
GBW_SOURCES_SHORT = {"practice": "100·f0·Q (common practice)", "thumb": "100·f0·Q (by extension)",
          "passive": "-", "built": "op-amp model", "model": "op-amp model"}


@dataclass(frozen=True)
class CandidateResult:
    """One topology measured for one section (plain data, picklable).

    Attributes
    ----------
    section : int
        Section index, from 1 in cascade order.
    topology, title : str
        Topology id (or the path of a user file that failed to load), title.
    reachable : bool
    reason : str
        Why not, when not reachable; the numbers are then None.
    parts, opamps : int
        Resistors, capacitors and inductors; op-amps.
    error_pct : float
        Worst root/figure error after snapping, percent, gain included.
    error_of : str
        What that worst error measures: "f0", "Q", "zero f0", "roots" or "gain".
    gain_error_db : float or None
        The gain's error, dB (None: the section sets no gain).
    yield_pct : float
        Monte Carlo samples inside every yield window around nominal, percent.
    spread : dict
        "resistor", "capacitor", "inductor" → largest/smallest value.
    max_sensitivity_w0, max_sensitivity_q : float
        Largest |S_x^ω0| and |S_x^Q| over the parts x (Q: None for first order).
    gbw_hz, gbw_source : float, str
        Op-amp GBW the stage needs, Hz (None: no op-amp, or never met), and
        where the figure comes from, in words.
    gbw_resolved_hz : float or None
        With the "model" method: the GBW a design re-solved for the op-amp
        needs (:func:`placer.place.gbw.required_gbw`), Hz; None otherwise, or
        when no GBW up to the search's top does.
    notes : tuple of str
        What of the spec's ``[parts]`` the topology has no part for.
    gain : float
        Achieved signed pass-band gain, V/V (negative: inverting).
    rejection_db : float or None
        Notch sections: the rejection (pass-band gain over |H|, dB) at the
        target's zero frequency that 99 % of the Monte Carlo builds reach.
    noise_rms_v : float or None
        The stage alone: integrated output noise over the noise band, V rms.
    worst_phase_margin_deg : float or None
        The least phase margin of the stage's op-amps' own loops (None: no op-amp).
    gbw_drift_pct : float or None
        The snapped design built with single-pole op-amps of the rule of
        thumb's GBW, 100·f0·Q (and the spec's DC gain, if any): the larger
        of its f0 and Q shifts from the ideal-op-amp figures, percent (None:
        no op-amp). What following the rule would cost; Q enhancement shows
        here: at the same GBW a Tow–Thomas stage moves more than an
        Åkerberg–Mossberg one.
    values : dict
        Part symbol → snapped value, SI units.
    """

    section: int
    topology: str
    title: str = ""
    reachable: bool = False
    reason: str = ""
    parts: int | None = None
    opamps: int | None = None
    error_pct: float | None = None
    error_of: str = ""
    gain_error_db: float | None = None
    yield_pct: float | None = None
    spread: dict[str, float] = field(default_factory=dict)
    max_sensitivity_w0: float | None = None
    max_sensitivity_q: float | None = None
    gbw_hz: float | None = None
    gbw_source: str = ""
    gain: float | None = None
    values: dict[str, float] = field(default_factory=dict)
    rejection_db: float | None = None
    gbw_drift_pct: float | None = None
    noise_rms_v: float | None = None
    worst_phase_margin_deg: float | None = None
    gbw_resolved_hz: float | None = None
    notes: tuple[str, ...] = ()

    @property
    def max_sensitivity(self) -> float:
        """The larger of the ω0 and Q figures (inf when unknown)."""
        known = [_finite(x) for x in (self.max_sensitivity_w0, self.max_sensitivity_q)
                 if x is not None]
        return max(known) if known else math.inf


@dataclass(frozen=True)
class SectionComparison:
    """The ranked candidates of one section."""

    index: int
    section: Section
    candidates: tuple[CandidateResult, ...]   # in rank order

    @property
    def reachable(self) -> bool:
        """True when at least one candidate reaches the section."""
        return any(c.reachable for c in self.candidates)

    @property
    def best(self) -> CandidateResult | None:
        """The first-ranked reachable candidate, or None."""
        return self.candidates[0] if self.reachable else None


@dataclass(frozen=True)
class Comparison:
    """Every section's ranking, with the settings that produced it."""

    spec: Spec
    rank_by: str
    samples: int
    seed: int
    gbw: str
    sections: tuple[SectionComparison, ...]

    # report/ sits above this module in the layering: the notebook view is
    # imported on use (see placer.report.notebook), so no plotting loads before.
    def _repr_html_(self) -> str:
        """The notebook view: tables and plots (inline SVG), self-contained."""
        from .report.notebook import comparison_html

        return comparison_html(self)

    def plot(self, **options: Any) -> Any:
        """The main figure of one section (``section=``, default 1): yield and error of each candidate, a matplotlib Figure (see :func:`placer.report.notebook.plot`)."""
        from .report.notebook import comparison_figure

        return comparison_figure(self, **options)


def _finite(x: float | None) -> float:
    return x if x is not None and math.isfinite(x) else math.inf


def _rank_key(rank_by: str) -> Callable[[CandidateResult], tuple[Any, ...]]:
    if rank_by == "yield":
        return lambda c: (-(c.yield_pct if c.yield_pct is not None else -1.0),
                          _finite(c.error_pct), c.parts, c.topology)
    if rank_by == "error":
        return lambda c: (_finite(c.error_pct), c.parts, c.topology)
    if rank_by == "parts":
        return lambda c: (c.parts, _finite(c.error_pct), c.topology)
    return lambda c: (c.max_sensitivity, _finite(c.error_pct), c.topology)


def _check_choice(value: object, valid: Sequence[str], name: str) -> None:
    if value not in valid:
        raise SpecError(f"{name} must be one of {{{', '.join(repr(v) for v in valid)}}}, "
                        f"not {value!r}")


def rank_candidates(candidates: Iterable[CandidateResult], rank_by: str = "yield", *,
                    samples: int | None = None) -> tuple[CandidateResult, ...]:
    """Candidates in rank order; unreachable ones last, in the order given.

    Parameters
    ----------
    candidates : iterable of CandidateResult
    rank_by : {"yield", "error", "parts", "sensitivity"}
        See :data:`RANK_KEYS`; the topology id breaks remaining ties.
    samples : int, optional
        Monte Carlo samples behind each yield. With it, ranking by yield
        treats yields as equal when they are within two standard errors of
        a difference, 2·√(2·p·(1 − p)/samples), of the best one left (p
        that best yield): a 62.7 % against a 62.4 % from 2,000 builds is no
        evidence, and the simpler stage should win. Without it, yields are
        compared as numbers.

    Returns
    -------
    tuple of CandidateResult

    Examples
    --------
    >>> a = CandidateResult(1, "biquad", reachable=True, parts=8, opamps=3, error_pct=0.02,
    ...                     yield_pct=62.7)
    >>> b = CandidateResult(1, "single", reachable=True, parts=4, opamps=1, error_pct=0.03,
    ...                     yield_pct=62.4)
    >>> [c.topology for c in rank_candidates([a, b])]
    ['biquad', 'single']
    >>> [c.topology for c in rank_candidates([a, b], samples=2000)]
    ['single', 'biquad']
    """
    _check_choice(rank_by, tuple(RANK_KEYS), "rank_by")
    given = list(candidates)
    reachable = sorted((c for c in given if c.reachable), key=_rank_key(rank_by))
    if rank_by == "yield" and samples:
        reachable = _yield_ties(reachable, samples)
    return tuple(reachable) + tuple(c for c in given if not c.reachable)


def _yield_ties(ranked: Sequence[CandidateResult], samples: int) -> list[CandidateResult]:
    """Regroup yield-ranked candidates: statistical ties go to the simpler stage."""
    out: list[CandidateResult] = []
    rest = list(ranked)
    while rest:
        leader = rest[0]
        p = (leader.yield_pct if leader.yield_pct is not None else 0.0) / 100.0
        p = min(max(p, 0.5 / samples), 1.0 - 0.5 / samples)
        band = 100.0 * 2.0 * math.sqrt(2.0 * p * (1.0 - p) / samples)
        tied = [c for c in rest if c.yield_pct is not None and leader.yield_pct is not None
                and leader.yield_pct - c.yield_pct <= band]
        if not tied:
            tied = [leader]
        out.extend(sorted(tied, key=lambda c: (c.opamps, c.parts, _finite(c.error_pct), c.topology)))
        rest = [c for c in rest if c not in tied]
    return out


# -- one candidate (runs in a worker) -----------------------------------------

@dataclass(frozen=True)
class _Task:
    spec: Spec
    index: int
    section: Section
    topology: Topology
    samples: int
    seed: int
    gbw: str
    level: LevelRule | None = None        # the section's


def _prelayout_figures(spec: Spec, topology: Topology,
                       values: Mapping[str, float]) -> tuple[float, float | None]:
    """(integrated output noise V rms, least op-amp phase margin °) of one stage as snapped."""
    settings = settings_for(spec)
    circuit = topology.circuit.with_values(values)
    noise = analyse_noise(circuit, settings.band_hz, temperature=settings.temperature_k,
                          noise_voltage=settings.noise_voltage,
                          noise_current=settings.noise_current).rms_v
    if not topology.opamp_count:
        return noise, None
    loops = opamp_loops(checked_circuit(circuit, settings.loop_model, settings.load_capacitance_f))
    margins = [loop.phase_margin_deg for loop in loops if loop.phase_margin_deg is not None]
    return noise, (min(margins) if margins else None)


@dataclass(frozen=True)
class _GBWFigure:
    """The GBW a candidate needs: Hz (None: passive or never met), where from, re-solved Hz."""

    gbw_hz: float | None
    source: str
    resolved_hz: float | None = None


# A candidate that reached its section has its problem, preferred values and
# errors (they are None only on an unreachable one): these read them so.

def _problem(candidate: Candidate) -> Problem:
    return cast("Problem", candidate.problem)


def _snapped(candidate: Candidate) -> SnapResult:
    return cast("SnapResult", candidate.snapped)


def _errors(candidate: Candidate) -> RootErrors:
    return cast("RootErrors", candidate.errors)


def _ideal_design(candidate: Candidate) -> tuple[dict[str, float], float]:
    """(values, worst error %) of the candidate's ideal-op-amp design, as snapped.

    With a real op-amp model the design compared is corrected for it; the
    GBW figures still describe the ideal-op-amp design (what it needs as
    built, what the rule of thumb costs it), so they mean the same with
    and without ``[amplifier]``.
    """
    if isinstance(candidate, AmplifiedCandidate):
        return (cast("SnapResult", candidate.ideal_snapped).values,
                cast("RootErrors", candidate.ideal_errors).worst_error_with_gain_pct)
    return _snapped(candidate).values, candidate.error_pct


def _gbw_needed(section: Section, topology: Topology, spec: Spec, method: str,
                candidate: Candidate, seed: int) -> _GBWFigure:
    """The :class:`_GBWFigure` of one reachable candidate (`seed`: its solver's)."""
    if topology.opamp_count == 0:
        return _GBWFigure(None, GBW_SOURCES["passive"])
    if method in ("built", "model"):
        # The ideal-op-amp design as snapped: what it needs as built.
        source = GBW_SOURCES["built"]
        values, error_pct = _ideal_design(candidate)
        if error_pct > GBW_ERROR_PCT:
            return _GBWFigure(None, source + f"; its error with ideal op-amps, {error_pct:.3g} %, "
                                             f"is already past the bound")
        figure = as_built_gbw(topology, values, _problem(candidate).goal,
                              error_pct=GBW_ERROR_PCT, amplifier_gain=spec.amplifier.gain)
        if not math.isfinite(figure):
            goal = _problem(candidate).goal
            assert goal.omega0 is not None      # a section's goal carries its ω0
            top = search_top_hz(goal.omega0 / (2 * math.pi), goal.q)
            source += f"; not met up to {format_value(top, 'Hz')}"
        resolved = None
        if method == "model":
            need = required_gbw(section, topology, error_pct=GBW_ERROR_PCT, parts=spec.parts,
                                amplifier_gain=spec.amplifier.gain, seed=seed)
            if math.isfinite(need.gbw_hz):
                resolved = float(need.gbw_hz)
                source += (f"; re-solved for the op-amp, "
                           f"{format_value(need.gbw_hz, 'Hz')} would do")
            elif need.note:
                source += f"; re-solved for the op-amp: {need.note}"
        return _GBWFigure(figure if math.isfinite(figure) else None, source, resolved)
    kind = "practice" if topology.gbw_rule else "thumb"   # the topology file's gbw_rule
    source = GBW_SOURCES[kind]
    if section.q is None:
        source += "; Q taken as 1 for a first-order stage"
    return _GBWFigure(_rule_gbw(section), source)


def _rule_gbw(section: Section) -> float:
    """The rule of thumb's GBW, Hz: GBW_FACTOR·f0·Q (Q taken as 1 for first order)."""
    return GBW_FACTOR * section.f0_hz * (section.q if section.q is not None else 1.0)


def _drift_at(topology: Topology, values: Mapping[str, float], goal: Goal, gbw_hz: float | None,
              gain: float | None) -> float | None:
    """Larger |f0| or |Q| shift (%) of the design built with op-amps of `gbw_hz`, or None."""
    if gbw_hz is None or not math.isfinite(gbw_hz):
        return None
    try:
        built = built_drift(topology, values, goal, AmplifierSpec(gbw=gbw_hz, gain=gain))
    except (PlacerError, ArithmeticError, ValueError, np.linalg.LinAlgError):
        return None        # a figure the table can leave out, not a reason to drop the candidate
    shifts = [abs(x) for x in (built.f0_shift_pct, built.q_shift_pct)
              if x is not None and math.isfinite(x)]
    return max(shifts) if shifts else None


def _largest(per_part: Mapping[str, float] | None, symbols: Iterable[str]) -> float | None:
    if per_part is None:
        return None
    numbers = [abs(per_part[s]) for s in symbols if s in per_part and math.isfinite(per_part[s])]
    return max(numbers) if numbers else None


def _evaluate(task: _Task) -> CandidateResult:
    """Measure one candidate; a plain :class:`CandidateResult` comes back."""
    topology, spec = task.topology, task.spec
    solver_seed, sampler_seed = candidate_seeds(task.seed, task.index, topology.id)
    notes: tuple[str, ...] = ()
    try:
        candidate = place_candidate(task.section, topology, index=task.index, parts=spec.parts,
                                    amplifier=real_amplifier(spec), seed=task.seed,
                                    level=task.level)
        notes = candidate.notes
        if not candidate.reachable:
            return CandidateResult(task.index, topology.id, topology.title, reason=candidate.reason,
                                   notes=notes)
        nf = _problem(candidate).nf
        values = _snapped(candidate).values
        kinds = {s: topology.kind_of(s) for s in nf.symbols}
        tolerances = {s: spec.tolerance.tolerances[k] for s, k in kinds.items()
                      if k in spec.tolerance.tolerances}
        windows = dict(spec.tolerance.windows)
        if nf.order < 2:
            windows.pop("q", None)
        reject_hz = task.section.zero_f0_hz       # a notch's zero; None for the other kinds
        if reject_hz is None:
            windows.pop("rejection_db", None)
        result = monte_carlo(nf, values, tolerances, samples=task.samples,
                             distribution=spec.tolerance.distribution, seed=sampler_seed,
                             windows=windows, reject_hz=reject_hz)
        target_yield = _target_yield(task.section, result, spec.tolerance.windows)
        # monte_carlo's sensitivities are sensitivities(nf, values) at these nominal values
        sens = result.sensitivities
        parts = [s for s, k in kinds.items() if k in PART_KINDS]
        gbw = _gbw_needed(task.section, topology, spec, task.gbw, candidate, solver_seed)
        rule_hz = _rule_gbw(task.section) if topology.opamp_count else None
        drift = _drift_at(topology, _ideal_design(candidate)[0], _problem(candidate).goal, rule_hz,
                          spec.amplifier.gain)
        noise_v, margin = _prelayout_figures(spec, topology, _ideal_design(candidate)[0])
    except SpecError as error:
        return CandidateResult(task.index, topology.id, topology.title, reason=f"bad input: {error}",
                               notes=notes)
    errors = _errors(candidate)
    return CandidateResult(
        section=task.index, topology=topology.id, title=topology.title, reachable=True,
        parts=topology.part_count, opamps=topology.opamp_count,
        error_pct=float(candidate.error_pct),
        error_of=worst_error_quantity(errors),
        gain_error_db=None if errors.gain_db is None else float(errors.gain_db),
        yield_pct=100.0 * target_yield,
        spread=value_spread(topology, values),
        max_sensitivity_w0=_largest(sens.omega0, parts), max_sensitivity_q=_largest(sens.q, parts),
        gbw_hz=gbw.gbw_hz, gbw_source=gbw.source, gbw_resolved_hz=gbw.resolved_hz,
        gain=float(errors.gain),
        values={k: float(v) for k, v in values.items()},
        rejection_db=(None if result.rejection_db is None
                      else float(result.statistics["rejection_db"].p01)),
        gbw_drift_pct=drift, noise_rms_v=noise_v, worst_phase_margin_deg=margin,
        notes=tuple(notes),
    )


#: Gain window (dB) of the yield when the windows give none (the spec's default has one).
DEFAULT_GAIN_WINDOW_DB = DEFAULT_WINDOWS["gain_db"]


def _target_yield(section: Section, result: MonteCarloResult,
                  windows: Mapping[str, float]) -> float:
    """Fraction of builds whose f0, Q and gain lie within the windows of the target.

    A notch's rejection at the target zero frequency counts too when the
    spec sets a rejection window.

    Measured against the section's target (not the candidate's own nominal),
    so a candidate that misses the target — a fixed gain of −6 dB, a Q it
    cannot set — does not earn yield. The gain window defaults to
    ±DEFAULT_GAIN_WINDOW_DB dB; the magnitude is compared (the sign of an
    inverting stage does not count against it).
    """
    passed = np.ones(np.shape(result.f0_hz), dtype=bool)
    if "f0" in windows:
        passed &= np.abs(result.f0_hz / section.f0_hz - 1) <= windows["f0"]
    if "q" in windows and section.q is not None and result.q is not None:
        passed &= np.abs(result.q / section.q - 1) <= windows["q"]
    if "rejection_db" in windows and result.rejection_db is not None:
        passed &= result.rejection_db >= windows["rejection_db"]
    gain_window = windows.get("gain_db", DEFAULT_GAIN_WINDOW_DB)
    gain_db = 20 * np.log10(np.maximum(np.abs(result.gain), 1e-300))
    passed &= np.abs(gain_db - section.gain_db) <= gain_window
    return float(np.mean(passed))


def _run(tasks: list[_Task], workers: int,
         progress: Callable[[int, int, str], None] | None) -> list[CandidateResult]:
    """Evaluate tasks in-process or in a process pool; results in task order."""
    total = len(tasks)
    results: list[CandidateResult | None] = [None] * total
    if workers == 1 or total <= 1:
        for i, task in enumerate(tasks):
            results[i] = _evaluate(task)
            if progress:
                progress(i + 1, total, task.topology.id)
        return cast("list[CandidateResult]", results)     # every slot is filled
    # A Ctrl-C is seen between candidates (every POLL_SECONDS while waiting)
    # and ends the workers at once (worker_pool terminates them).
    with worker_pool(min(workers, total)) as pool:
        pending = {pool.apply_async(_evaluate, (task,)): i for i, task in enumerate(tasks)}
        for done, future in enumerate(results_as_completed(pending), start=1):
            i = pending[future]
            results[i] = future.get()
            if progress:
                progress(done, total, tasks[i].topology.id)
    return cast("list[CandidateResult]", results)         # every slot is filled


def compare(spec: Spec, *, rank_by: str = "yield", samples: int | None = None,
            workers: int | None = None, seed: int | None = None,
            progress: Callable[[int, int, str], None] | None = None,
            gbw: str = "built") -> Comparison:
    """Rank every candidate topology for every section of a spec's target.

    Parameters
    ----------
    spec : placer.spec.reader.Spec
    rank_by : {"yield", "error", "parts", "sensitivity"}
        Ranking key, see :data:`RANK_KEYS` (by yield, statistical ties go
        to the simpler stage: :func:`rank_candidates` with `samples`).
    samples : int, optional
        Monte Carlo samples per candidate (default: the spec's).
    workers : int, optional
        Worker processes (default: ``os.cpu_count()``); 1 runs in-process.
        The result does not depend on it.
    seed : int, optional
        Seed of every solve and Monte Carlo (default: the spec's), >= 0.
    progress : callable, optional
        ``progress(done, total, topology_id)`` after each candidate.
    gbw : {"built", "rule", "model"}
        "built" (default): the finite-GBW op-amp model on each candidate's
        snapped design, the smallest GBW that keeps it within
        GBW_ERROR_PCT of the target as built (:func:`placer.place.gbw.as_built_gbw`).
        "rule": GBW >= 100·f0·Q (f0 in Hz), common practice for Sallen–Key
        and multiple-feedback stages, a labelled rule of thumb for other
        active ones. "model": "built", and also what a design re-solved for
        the op-amp would need (:func:`placer.place.gbw.required_gbw`; seconds per
        candidate).

    Returns
    -------
    Comparison

    Raises
    ------
    SpecError
        No target, a bad option, or a candidate list that names an unknown
        topology. A user topology file that fails to load, or a candidate
        whose parts settings do not fit it, is listed with its reason.
    """
    if spec.target is None:
        raise SpecError(f"{spec.path}: comparing topologies needs a [target] table")
    _check_choice(rank_by, tuple(RANK_KEYS), "rank_by")
    _check_choice(gbw, GBW_METHODS, "gbw")
    samples = spec.tolerance.samples if samples is None else samples
    seed = spec.tolerance.seed if seed is None else seed
    workers = (os.cpu_count() or 1) if workers is None else workers
    for name, value, low in (("samples", samples, 1), ("seed", seed, 0), ("workers", workers, 1)):
        if not isinstance(value, int) or isinstance(value, bool) or value < low:
            raise SpecError(f"{name} must be a whole number >= {low}, not {value!r}")
    sections = split_sections(spec.target, ordering=spec.ordering, gain=spec.gain_distribution)
    amplifier = real_amplifier(spec)
    if amplifier is not None:
        for index, section in enumerate(sections, start=1):
            check_amplifier(amplifier, section, index=index)
    tasks: list[_Task] = []
    failed: list[list[CandidateResult]] = []
    levels = level_rules_for(spec, sections)
    plans = [candidate_topologies(section, spec) for section in sections]
    check_part_names(spec, [t for plan in plans for t in plan.topologies])
    for index, (section, plan) in enumerate(zip(sections, plans), start=1):
        for topology in sorted(plan.topologies, key=lambda t: t.id):
            tasks.append(_Task(spec, index, section, topology, samples, seed, gbw,
                               levels[index - 1]))
        failed.append([CandidateResult(index, path, reason=message)
                       for path, message in sorted(plan.load_errors.items())])
    results = _run(tasks, workers, progress)
    ranked: list[SectionComparison] = []
    for index, section in enumerate(sections, start=1):
        own = [r for r in results if r.section == index] + failed[index - 1]
        ranked.append(SectionComparison(index, section, rank_candidates(own, rank_by,
                                                                        samples=samples)))
    return Comparison(spec=spec, rank_by=rank_by, samples=samples, seed=seed, gbw=gbw,
                      sections=tuple(ranked))


# -- output ------------------------------------------------------------------

def _clean(x: Any) -> Any:
    """JSON-safe: non-finite floats become None."""
    if isinstance(x, float):
        return finite_or_none(x)
    if isinstance(x, dict):
        return {k: _clean(v) for k, v in x.items()}
    return x


def _candidate_dict(candidate: CandidateResult, rank: int | None) -> Any:
    out = {"rank": rank, **asdict(candidate)}
    if candidate.reachable:
        del out["reason"]
    out["inverting"] = None if candidate.gain is None else candidate.gain < 0
    return _clean(out)


def comparison_to_dict(comparison: Comparison) -> dict[str, Any]:
    """A comparison as JSON-ready data (SI units, frequencies in Hz).

    Returns
    -------
    dict
        ``sections`` (each with ``index``, ``target`` {kind, order, f0_hz,
        q, gain_db}, ``reachable`` and ``candidates`` in rank order), a flat
        ``candidates`` list (every section's, each section in rank order,
        with a ``section`` index), ``rank_by``, ``rank_key``, ``samples``,
        ``seed``, ``gbw``, ``windows`` and ``tolerances``.
    """
    sections: list[dict[str, Any]] = []
    flat: list[Any] = []
    for s in comparison.sections:
        items = [_candidate_dict(c, rank if c.reachable else None)
                 for rank, c in enumerate(s.candidates, start=1)]
        sec = s.section
        sections.append({
            "index": s.index, "reachable": s.reachable, "candidates": items,
            "target": _clean({"kind": sec.kind, "order": sec.order, "f0_hz": float(sec.f0_hz),
                              "q": None if sec.q is None else float(sec.q),
                              "gain_db": float(sec.gain_db)}),
        })
        flat.extend(items)
    spec = comparison.spec
    return {
        "spec": spec.path, "title": spec.title, "rank_by": comparison.rank_by,
        "rank_key": RANK_KEYS[comparison.rank_by], "samples": comparison.samples,
        "seed": comparison.seed, "gbw": comparison.gbw,
        "distribution": spec.tolerance.distribution,
        "windows": dict(spec.tolerance.windows), "tolerances": dict(spec.tolerance.tolerances),
        "sections": sections, "candidates": flat,
    }
