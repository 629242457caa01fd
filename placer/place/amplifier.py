"""Real op-amps: apply a model, and design with it so the roots stay put.

A design solved with ideal op-amps (nullors) drifts when it is built: a
finite gain-bandwidth product enhances Q and pulls ω0 down, most for
high-Q, high-frequency stages. This module

* takes an op-amp model (:mod:`placer.place.opamp`: every op-amp gets the
  model's DC gain, GBW and output resistance);
* re-solves and re-snaps a section with the model in place, starting from
  the ideal-op-amp solution (:func:`place_section_with_amplifier`): the
  *dominant* roots of the now higher-order network function (those nearest
  the target, :class:`placer.analysis.dominant.DominantFunction`) are placed, the
  *parasitic* roots the model adds are left free;
* reports the drift the ideal design would have had beside the corrected
  design's, and the parasitic poles (:class:`Drift`,
  :func:`amplifier_summary`).

The smallest GBW for which a corrected design still meets an error bound
is :func:`placer.place.gbw.required_gbw`.

References
----------
R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*, Oxford
University Press, 2001, the chapters on active-filter non-idealities
(Q enhancement by finite GBW; from memory).
A. S. Sedra and K. C. Smith, *Microelectronic Circuits*, the filter chapter
on the effect of finite op-amp bandwidth (from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any, NamedTuple, cast

import numpy as np

from ..analysis.dominant import DominantFunction, nearest_root_set
from ..errors import UnreachableTarget
from .level import within
from ..analysis.network import network_function
from ..analysis.second_order import pair_figures
from .opamp import (
    GBW_SPREAD,
    apply_amplifier,
    check_amplifier,
    describe_amplifier,
    function_at_gbw,
)
from ..analysis.pencil import circuit_poles
from .placement import Candidate, IdealPlacement, place_ideal, problem_options, snap_weighs_gain
from .snap import COARSE_BUDGET, SnapResult, snap
from .solve import Goal, Problem, RootErrors, Solution, make_problem, root_errors, solve

if TYPE_CHECKING:
    from ..analysis.protocols import PartFunction
    from ..circuit.elements import Circuit
    from ..circuit.topology import Constraint, Topology
    from .level import LevelRule
    from .opamp import AmplifierSpec
    from ..spec.reader import PartsSpec
    from ..target.targets import Section

__all__ = [
    "Drift",
    "AmplifiedCandidate",
    "place_section_with_amplifier",
    "amplifier_summary",
    "built_drift",
    "correct_placement",
    "CorrectedPlacement",
    "gbw_spread_error",
    "robust_first",
    "ROBUST_STARTS",
    "ROBUST_SLACK",
]

#: Sobol starts of the re-solve with the op-amp modelled.
ROBUST_STARTS = 32
#: Error (fraction) a corrected design's snap may give up for robustness to
#: the GBW spread: small beside the percent the spread itself moves a design.
ROBUST_SLACK = 2e-3

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
    def worst_root_error_pct(self) -> float:
        """Worst of the f0 and Q drifts, percent (no gain in a drift)."""
        return max(abs(x) for x in (self.f0_pct, self.q_pct) if x is not None)


@dataclass(frozen=True)
class AmplifiedCandidate(Candidate):
    """One topology placed for one section with a real op-amp model.

    A :class:`placer.place.placement.Candidate` (it ranks and builds the same
    way); ``problem``, ``solution``, ``snapped`` and
    ``errors`` belong to the corrected design, evaluated with the model.

    Attributes
    ----------
    amplifier : AmplifierSpec
    circuit : Circuit
        The topology's circuit with the model applied (parts symbolic).
    ideal_snapped : placer.place.snap.SnapResult
        The design solved and snapped with ideal op-amps.
    ideal_errors : placer.place.solve.RootErrors
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

    # None only as the dataclass default: every AmplifiedCandidate is made with both
    amplifier: AmplifierSpec | None = None
    circuit: Circuit | None = None
    ideal_snapped: SnapResult | None = None   # None when the ideal placement failed (as ideal_errors)
    ideal_errors: RootErrors | None = None
    ideal_drift: Drift | None = None
    drift: Drift | None = None
    low_gbw_drift: Drift | None = None
    parasitic_poles: tuple[complex, ...] = ()
    note: str = ""

    @property
    def parasitic_poles_hz(self) -> tuple[float, ...]:
        """|p|/2π of each parasitic pole, Hz, smallest first."""
        return tuple(sorted(abs(p) / (2 * math.pi) for p in self.parasitic_poles))



def _drift(ideal_nf: PartFunction, modelled_nf: PartFunction, values: Mapping[str, float],
           goal: Goal) -> Drift:
    modelled = root_errors(modelled_nf, values, goal)
    ideal = root_errors(ideal_nf, values, goal)

    def shift(a: float | None, b: float | None) -> float | None:
        if a is None or b is None:
            return None
        return float(100 * ((1 + a / 100) / (1 + b / 100) - 1))

    def number(x: float | None) -> float | None:
        return None if x is None else float(x)

    return Drift(
        f0_pct=number(modelled.f0_pct), q_pct=number(modelled.q_pct),
        f0_shift_pct=shift(modelled.f0_pct, ideal.f0_pct),
        q_shift_pct=shift(modelled.q_pct, ideal.q_pct),
    )


def _pair_figures(poles: Sequence[complex] | np.ndarray, goal: Goal) -> tuple[float, float | None]:
    """ω0 (rad/s) and Q (None for one pole) of the poles nearest the goal's."""
    x = np.asarray(poles, dtype=complex)[None, :] / goal.omega_ref
    mask = nearest_root_set(x, np.asarray(goal.poles, dtype=complex) / goal.omega_ref)[0]
    chosen = np.asarray(poles, dtype=complex)[mask]
    if len(chosen) == 1:
        return abs(chosen[0]), None
    if len(chosen) != 2:
        return math.nan, math.nan
    return pair_figures(chosen[0], chosen[1])


def built_drift(topology: Topology, values: Mapping[str, float], goal: Goal,
                amplifier: AmplifierSpec) -> Drift:
    """Drift of a design built with a real op-amp, from numeric MNA poles.

    Parameters
    ----------
    topology : Topology
    values : mapping of str to float
        Part values (as solved or snapped with ideal op-amps).
    goal : placer.place.solve.Goal
        The section's goal; its poles pick the dominant pair.
    amplifier : AmplifierSpec
        The op-amp model every op-amp gets.

    Returns
    -------
    Drift
        ``f0_pct``, ``q_pct`` against the goal; ``f0_shift_pct``,
        ``q_shift_pct`` the op-amp's part (the same values with ideal
        op-amps as reference).

    Examples
    --------
    A Tow–Thomas biquad's Q rises with a GBW of 100·f0·Q (Q enhancement):

    >>> from placer.circuit.library import get_topology
    >>> from placer.place.opamp import AmplifierSpec
    >>> from placer.place.solve import goal_from_section
    >>> from placer.target.targets import make_section
    >>> section = make_section("lowpass", 2 * math.pi * 1e3, 5.0)
    >>> values = {"R1": 1e4, "R2": 5e4, "R3": 1e4, "R4": 1e4, "R5": 1e4, "R6": 1e4,
    ...           "C1": 1 / (2 * math.pi * 1e7), "C2": 1 / (2 * math.pi * 1e7)}
    >>> drift = built_drift(get_topology("tow-thomas-lowpass"), values,
    ...                     goal_from_section(section), AmplifierSpec(gbw=500e3))
    >>> round(drift.q_shift_pct, 1), round(drift.f0_shift_pct, 2)
    (4.3, -0.3)
    """
    return _drift_between(topology, values, goal, None, amplifier)


def _low_gbw_drift(topology: Topology, amplifier: AmplifierSpec, values: Mapping[str, float],
                   goal: Goal) -> Drift | None:
    """Drift of a design when the GBW is GBW_SPREAD low, from numeric MNA poles."""
    if amplifier.gbw is None:
        return None
    low = replace(amplifier, gbw=amplifier.gbw * (1 - GBW_SPREAD))
    return _drift_between(topology, values, goal, amplifier, low)


def _drift_between(topology: Topology, values: Mapping[str, float], goal: Goal,
                   reference: AmplifierSpec | None, amplifier: AmplifierSpec) -> Drift:
    """Drift with `amplifier` against the goal and against `reference` (None: ideal op-amps)."""
    def figures(model: AmplifierSpec | None) -> tuple[float, float | None]:
        circuit = topology.circuit if model is None else apply_amplifier(topology.circuit, model)
        return _pair_figures(circuit_poles(circuit.with_values(values)), goal)

    (omega_base, q_base), (omega, q) = figures(reference), figures(amplifier)

    def pct(a: float | None, b: float | None) -> float | None:
        return None if a is None or b is None else float(100 * (a / b - 1))

    return Drift(f0_pct=pct(omega, goal.omega0), q_pct=pct(q, goal.q),
                 f0_shift_pct=pct(omega, omega_base), q_shift_pct=pct(q, q_base))


def place_section_with_amplifier(section: Section, topology: Topology, amplifier: AmplifierSpec, *,
                                 parts: PartsSpec | None = None, seed: int = 0,
                                 coarse_budget: int = COARSE_BUDGET,
                                 ideal: IdealPlacement | None = None,
                                 level: LevelRule | None = None) -> AmplifiedCandidate:
    """Solve and snap one topology for one section with real op-amps.

    The section is first placed with ideal op-amps (as
    :func:`placer.design.place_section` does); then, with every op-amp
    modelled, the dominant poles (and zeros) are re-solved onto the target
    starting from the ideal solution, the parasitic roots left free, and
    the result is snapped to the preferred-value series.

    Parameters
    ----------
    section : placer.target.targets.Section
    topology : Topology
    amplifier : AmplifierSpec
        GBW in Hz, DC gain in V/V, output resistance in ohm.
    parts : placer.spec.reader.PartsSpec, optional
    seed : int
    coarse_budget : int
        Coarse-part combinations the snapper may enumerate (see
        :func:`placer.place.snap.snap`).
    ideal : placer.place.placement.IdealPlacement, optional
        The section already placed on the topology with ideal op-amps (by
        :func:`placer.place.placement.place_ideal` with the same `parts` and
        `seed`), for a caller that corrects one placement for many models;
        default: placed here.
    level : placer.place.level.LevelRule, optional
        The impedance level of the ideal placement (see
        :func:`placer.place.level.choose_level`).

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
    >>> from placer.circuit.library import get_topology
    >>> from placer.place.opamp import AmplifierSpec
    >>> from placer.target.targets import make_section
    >>> section = make_section("lowpass", 2 * math.pi * 10e3, 2.0)
    >>> c = place_section_with_amplifier(section, get_topology("sallen-key-lowpass-unity"),
    ...                                  AmplifierSpec(gbw=1e6), coarse_budget=200)
    >>> abs(c.drift.q_pct) < 1 < abs(c.ideal_drift.q_pct)
    True
    """
    check_amplifier(amplifier, section)
    modelled = apply_amplifier(topology.circuit, amplifier)
    if ideal is None:
        try:
            ideal = place_ideal(section, topology, parts=parts, seed=seed, level=level)
        except UnreachableTarget as reason:
            return AmplifiedCandidate(topology=topology, reachable=False, reason=reason.reason,
                                      amplifier=amplifier, circuit=modelled)
    return _correct(section, topology, amplifier, modelled, ideal, parts, seed, coarse_budget)


def _correct(section: Section, topology: Topology, amplifier: AmplifierSpec, modelled: Circuit,
             ideal: IdealPlacement, parts: PartsSpec | None, seed: int,
             coarse_budget: int) -> AmplifiedCandidate:
    goal = ideal.goal
    full = network_function(modelled)
    dominant = DominantFunction.for_goal(full, goal)
    ideal_drift = _drift(ideal.problem.nf, dominant, ideal.snapped.values, goal)
    common: dict[str, Any] = dict(topology=topology, amplifier=amplifier, circuit=modelled,
                  ideal_snapped=ideal.snapped, ideal_errors=ideal.errors, ideal_drift=ideal_drift)
    if modelled is topology.circuit:
        return AmplifiedCandidate(
            reachable=True, problem=ideal.problem, solution=ideal.solution, snapped=ideal.snapped,
            errors=ideal.errors, continuous_errors=ideal.continuous_errors,
            drift=ideal_drift, note="the topology has no op-amp: nothing to model", **common,
        )
    options = problem_options(topology, parts)
    prefer = None
    if amplifier.gbw is not None:
        prefer = gbw_spread_error(topology, goal, function_at_gbw(topology.circuit, amplifier),
                                  amplifier.gbw, ranges=options.ranges, fixed=options.fixed,
                                  constraints=options.constraints)
    try:
        corrected = correct_placement(
            ideal, topology, dominant, ranges=options.ranges, fixed=options.fixed,
            constraints=options.constraints, series=options.series, seed=seed,
            coarse_budget=coarse_budget, prefer=prefer)
    except UnreachableTarget as reason:
        return AmplifiedCandidate(
            reachable=False,
            reason=f"with the op-amp model ({describe_amplifier(amplifier)}): {reason.reason}", **common,
        )
    problem, solution, snapped = corrected.problem, corrected.solution, corrected.snapped
    return AmplifiedCandidate(
        reachable=True, problem=problem, solution=solution, snapped=snapped,
        errors=root_errors(dominant, snapped.values, goal),
        continuous_errors=root_errors(dominant, solution.values, goal),
        drift=_drift(ideal.problem.nf, dominant, snapped.values, goal),
        parasitic_poles=tuple(complex(p) for p in dominant.parasitic_poles(snapped.values)),
        low_gbw_drift=_low_gbw_drift(topology, amplifier, snapped.values, goal),
        **common,
    )


class CorrectedPlacement(NamedTuple):
    """A section re-solved and snapped with its op-amps modelled."""

    problem: Problem
    solution: Solution
    snapped: SnapResult


def correct_placement(ideal: IdealPlacement, topology: Topology, dominant: DominantFunction, *,
                      ranges: Mapping[str, tuple[float, float]] | None = None,
                      fixed: Mapping[str, float] | None = None,
                      constraints: Sequence[Constraint] = (),
                      series: Mapping[str, str] | None = None, seed: int = 0,
                      coarse_budget: int = COARSE_BUDGET,
                      prefer: Callable[[np.ndarray], np.ndarray] | None = None,
                      ) -> CorrectedPlacement:
    """Re-solve and snap a section's dominant roots, starting from its ideal placement.

    Parameters
    ----------
    ideal : placer.place.placement.IdealPlacement
        The ideal-op-amp placement (its solutions seed the re-solve).
    topology : Topology
    dominant : DominantFunction
        The modelled network function's dominant view, for the ideal goal.
    ranges, fixed, constraints, series
        As :func:`placer.place.placement.problem_options` gives them.
    seed : int
    coarse_budget : int
    prefer : callable, optional
        A score such as :func:`gbw_spread_error`'s: the re-solve's most
        robust exact solution seeds the snap, which may then give up to
        ROBUST_SLACK of error for it.

    Returns
    -------
    CorrectedPlacement
        ``problem``, ``solution`` and ``snapped``.

    Raises
    ------
    UnreachableTarget
        When the modelled function cannot reach the goal.
    """
    problem = within(make_problem(topology, ideal.goal, ranges=ranges, fixed=fixed,
                                  constraints=constraints, nf=dominant), ideal.window)
    # more starts than the ideal placement: the exact solutions differ a lot
    # in how they bear the GBW spread, and robust_first picks among them
    solution = solve(problem, seed=seed, initial=[ideal.solution.u, *ideal.solution.alternatives],
                     starts=ROBUST_STARTS)
    if prefer is None:
        return CorrectedPlacement(problem, solution, snap(
            problem, solution, series=series, coarse_budget=coarse_budget,
            with_gain=snap_weighs_gain(problem, solution)))
    solution = robust_first(problem, solution, prefer)
    snapped = snap(problem, solution, series=series, coarse_budget=coarse_budget, prefer=prefer,
                   spread_slack=ROBUST_SLACK, with_gain=snap_weighs_gain(problem, solution))
    return CorrectedPlacement(problem, solution, snapped)


def gbw_spread_error(topology: Topology, goal: Goal, family: Callable[[float], PartFunction], gbw: float, *,
                     ranges: Mapping[str, tuple[float, float]] | None = None,
                     fixed: Mapping[str, float] | None = None,
                     constraints: Sequence[Constraint] = (),
                     spread: float = GBW_SPREAD) -> Callable[[np.ndarray], np.ndarray]:
    """A score for :func:`placer.place.snap.snap`'s `prefer`: the error at GBW·(1 ± spread).

    Designs corrected for an op-amp differ a great deal in how far they move
    when the op-amp's GBW is not the typical one (for a unity-gain
    Sallen–Key at GBW = 20·f0, from 0.7 % to 10 % for a GBW 25 % low among
    equally exact solutions); this scores each column of log part values by
    the worse of its worst figure errors at the two edges, as a fraction.

    Parameters
    ----------
    topology : Topology
    goal : placer.place.solve.Goal
    family : callable
        GBW (Hz) → network function, from :func:`function_at_gbw`.
    gbw : float
        The typical GBW, Hz.
    ranges, fixed, constraints
        As the corrected problem was made with (the columns must match).
    spread : float
        Relative GBW spread, default :data:`GBW_SPREAD`.

    Returns
    -------
    callable
        ``U → ndarray`` of errors, one per column.
    """
    problems = [
        make_problem(topology, goal, ranges=ranges, fixed=fixed, constraints=constraints,
                     nf=DominantFunction.for_goal(family(edge), goal))
        for edge in (gbw * (1 - spread), gbw * (1 + spread))
    ]

    def score(U: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            return np.maximum(*(p.worst_error_matched(U) for p in problems))
    return score


def robust_first(problem: Problem, solution: Solution,
                 prefer: Callable[[np.ndarray], np.ndarray]) -> Solution:
    """The solution with the best-scoring of its on-target alternatives first.

    The snapper starts from ``solution.u``; starting it from the most
    GBW-robust exact solution lets it find robust preferred values nearby.
    """
    options = [solution.u] + [u for u in solution.alternatives if u is not solution.u]
    scores = np.asarray(prefer(np.array(options).T), dtype=float)
    scores = np.where(np.isnan(scores), np.inf, scores)
    best = options[int(np.argmin(scores))]
    if best is solution.u:
        return solution
    rest = tuple(u for u in options if u is not best)
    values = {k: float(np.asarray(v)) for k, v in problem.values(best).items()}
    return replace(solution, u=best, values=values, alternatives=(best,) + rest,
                   error=float(problem.worst_root_error(best)))


def amplifier_summary(candidate: object) -> dict[str, Any] | None:
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
    amplifier = cast("AmplifierSpec", candidate.amplifier)   # set on every AmplifiedCandidate

    def figures(drift: Drift | None) -> dict[str, float | None]:
        drift = cast(Drift, drift)   # a reachable AmplifiedCandidate has both drifts
        return {"f0_error_pct": drift.f0_pct, "q_error_pct": drift.q_pct,
                "f0_shift_pct": drift.f0_shift_pct, "q_shift_pct": drift.q_shift_pct}

    return {
        "amplifier": {"gbw_hz": amplifier.gbw, "gain": amplifier.gain,
                      "output_resistance_ohm": amplifier.output_resistance,
                      "preset": amplifier.preset},
        "ideal_design": figures(candidate.ideal_drift),
        "corrected_design": figures(candidate.drift),
        "corrected_design_at_low_gbw": None if candidate.low_gbw_drift is None else {
            # a low-GBW drift exists only for a model with a GBW
            "gbw_hz": cast(float, amplifier.gbw) * (1 - GBW_SPREAD), **figures(candidate.low_gbw_drift)},
        "parasitic_poles_hz": list(candidate.parasitic_poles_hz),
        "parasitic_poles": [[p.real, p.imag] for p in candidate.parasitic_poles],
        "note": candidate.note,
    }
