"""Placing one section with ideal op-amps: the step every design shares.

A section is placed on a topology by solving the part values continuously
(:func:`placer.place.solve.solve`) and snapping them to the preferred-value
series (:func:`placer.place.snap.snap`), with the ranges, series, fixed parts
and constraints of a spec's ``[parts]`` table that apply to the topology.
:func:`placer.design.place_section` ranks such placements;
:func:`placer.place.amplifier.place_section_with_amplifier` starts its
op-amp-corrected placement from one. Both rank candidates by the figures
here: the worst error (:attr:`~placer.place.solve.RootErrors.worst_error_with_gain_pct`) and the spread of the part
values (:func:`value_spread`).

Both commands seed a candidate's solver and Monte Carlo from its identity
alone (:func:`candidate_seeds`), and both refuse a placement whose built
circuit has a natural frequency in the right half-plane
(:func:`require_stable`), so ``placer design`` and ``placer compare`` give
one candidate the same parts, the same error and the same verdict.
"""

from __future__ import annotations

import math
import zlib
from dataclasses import dataclass, replace
from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING, NamedTuple, cast

import numpy as np

from ..analysis.pencil import natural_frequencies
from .level import choose_level, within
from .snap import SnapResult, snap
from .solve import (Goal, Problem, RootErrors, Solution, goal_from_section, make_problem,
                    root_errors, solve)

if TYPE_CHECKING:
    from ..circuit.elements import Circuit
    from ..spec.reader import PartsSpec
    from ..circuit.topology import Constraint, Topology
    from ..target.targets import Section
    from .level import LevelRule

__all__ = [
    "PART_KINDS",
    "UNSTABLE_REASON",
    "Candidate",
    "CandidateSeeds",
    "candidate_seeds",
    "parts_notes",
    "right_half_plane_poles",
    "require_stable",
    "IdealPlacement",
    "problem_options",
    "ProblemOptions",
    "place_ideal",
    "value_spread",
    "worst_error_quantity",
    "snap_weighs_gain",
    "GAIN_WITHIN_REACH",
]

#: Element kinds that are bought as parts with a value (and snapped to a series).
PART_KINDS = ("resistor", "capacitor", "inductor")
#: Why a placement whose built circuit can grow without input is unreachable.
UNSTABLE_REASON = "unstable: poles in the right half-plane"
#: A natural frequency p counts as unstable when Re p > −this · |p|: in the
#: right half-plane, or on the jω axis within the pencil's round-off (an
#: oscillator, K = 3 in an equal-component Sallen–Key); a real design's
#: damping, 1/(2Q), lies far beyond it.
_AXIS_TOLERANCE = 1e-9


@dataclass(frozen=True)
class IdealPlacement:
    """One section placed on one topology with ideal op-amps.

    Attributes
    ----------
    goal : placer.place.solve.Goal
    problem : placer.place.solve.Problem
    solution : placer.place.solve.Solution
        The continuous values.
    snapped : placer.place.snap.SnapResult
        The preferred values.
    errors, continuous_errors : placer.place.solve.RootErrors
        The snapped and the continuous values' errors against the goal.
    """

    goal: Goal
    problem: Problem
    solution: Solution
    snapped: SnapResult
    errors: RootErrors
    continuous_errors: RootErrors
    window: tuple[np.ndarray, np.ndarray] | None = None   # the impedance level's snapping bounds (placer.place.level)


class ProblemOptions(NamedTuple):
    """The ``[parts]`` options that apply to one topology, as
    :func:`placer.place.solve.make_problem` and :func:`placer.place.snap.snap` take them."""

    ranges: dict[str, tuple[float, float]] | None   # kind -> (low, high)
    series: dict[str, str] | None                   # kind -> series name
    fixed: dict[str, float]                         # part -> value (SI)
    constraints: tuple[Constraint, ...]


def problem_options(topology: Topology, parts: PartsSpec | None) -> ProblemOptions:
    """The parts options that apply to one topology (see :func:`parts_notes`).

    Parameters
    ----------
    topology : Topology
    parts : placer.spec.reader.PartsSpec or None

    Returns
    -------
    ProblemOptions
        Fixed parts and constraints naming a symbol the topology does not
        have are left out. Without `parts`: ranges and series None, no
        fixed parts, no constraints.
    """
    if parts is None:
        return ProblemOptions(ranges=None, series=None, fixed={}, constraints=())
    fixed = {k: v for k, v in parts.fixed.items() if k in topology.symbols}
    constraints = tuple(
        c for c in parts.constraints if c.part in topology.symbols and c.source in topology.symbols
    )
    return ProblemOptions(ranges=dict(parts.ranges), series=dict(parts.series), fixed=fixed,
                          constraints=constraints)


def parts_notes(topology: Topology, parts: PartsSpec | None) -> tuple[str, ...]:
    """The spec's fixed parts and constraints a topology leaves out, in words.

    A ``[parts]`` fixed value or constraint applies to every candidate that
    has the parts it names; a candidate without them is placed without it
    (:func:`problem_options` drops it) and carries one of these notes, so a
    design that did not honour the constraint says so.

    Parameters
    ----------
    topology : Topology
    parts : placer.spec.reader.PartsSpec or None

    Returns
    -------
    tuple of str

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> from placer.spec.reader import PartsSpec
    >>> from placer.circuit.topology import parse_constraint
    >>> parts_notes(get_topology("rc-lowpass"), PartsSpec(constraints=(parse_constraint("C1 = C2"),)))
    ("constraint 'C1 = C2' left out: topology 'rc-lowpass' has no part C2",)
    """
    if parts is None:
        return ()
    notes = []
    for name in parts.fixed:
        if name not in topology.symbols:
            notes.append(f"fixed {name} left out: topology {topology.id!r} has no part {name}")
    for constraint in parts.constraints:
        lacking = [n for n in (constraint.part, constraint.source) if n not in topology.symbols]
        if lacking:
            notes.append(f"constraint '{constraint}' left out: topology {topology.id!r} has no "
                         f"part {' or '.join(lacking)}")
    return tuple(notes)


def place_ideal(section: Section, topology: Topology, *, parts: PartsSpec | None = None,
                seed: int = 0, level: LevelRule | None = None) -> IdealPlacement:
    """Solve and snap one topology for one section with ideal op-amps.

    Parameters
    ----------
    section : placer.target.targets.Section
    topology : Topology
    parts : placer.spec.reader.PartsSpec, optional
        Series, ranges, fixed parts and constraints.
    seed : int
        Seed of the multi-start solver.
    level : placer.place.level.LevelRule, optional
        The impedance level to give the continuous solution before it is
        snapped (:func:`placer.place.level.choose_level`); None keeps the solver's.

    Returns
    -------
    IdealPlacement

    Raises
    ------
    UnreachableTarget
        When the topology cannot reach the section.

    Examples
    --------
    >>> import math
    >>> from placer.circuit.library import get_topology
    >>> from placer.target.targets import make_section
    >>> placed = place_ideal(make_section("lowpass", 2 * math.pi * 10e3, 0.7071),
    ...                      get_topology("sallen-key-lowpass-unity"))
    >>> bool(placed.errors.worst_error_with_gain_pct < 1)
    True
    """
    goal = goal_from_section(section)
    options = problem_options(topology, parts)
    problem = make_problem(topology, goal, ranges=options.ranges, fixed=options.fixed,
                           constraints=options.constraints)
    solution = solve(problem, seed=seed)
    window: tuple[np.ndarray, np.ndarray] | None = None
    prefer: Callable[[np.ndarray], np.ndarray] | None = None
    if level is not None:   # impedance level: a separate step that moves no root
        leveled = choose_level(problem, solution, level)
        solution, window, prefer = leveled.solution, leveled.window, leveled.prefer
    snapped = snap(within(problem, window), solution, series=options.series, prefer=prefer,
                   with_gain=snap_weighs_gain(problem, solution))
    return IdealPlacement(
        goal=goal, problem=problem, solution=solution, snapped=snapped,
        errors=root_errors(problem.nf, snapped.values, goal),
        continuous_errors=root_errors(problem.nf, solution.values, goal), window=window,
    )


#: A gain the continuous solution misses by at most this (fraction) is one the
#: ranges, not the circuit, keep off target: the snap then weighs it too.
GAIN_WITHIN_REACH = 0.01


def snap_weighs_gain(problem: Problem, solution: Solution) -> bool:
    """Whether the snap weighs the gain beside the roots.

    When the continuous solution meets the gain too (or misses it only by
    what the value ranges allow, within :data:`GAIN_WITHIN_REACH`: a
    gain-setting divider at the end of its range), the figure reported,
    :attr:`~placer.place.solve.RootErrors.worst_error_with_gain_pct`, includes the gain, so the snap must weigh it:
    otherwise preferred values whose poles are a little closer but whose
    gain is percents off win, and the result rests on which starts the
    solver drew. A gain the poles set (equal-component Sallen–Key) misses
    by more and is reported, not weighed.
    """
    if solution.gain_matched or not problem.gain_adjustable:
        return bool(solution.gain_matched)
    return float(problem.worst_error_with_gain(solution.u)) <= GAIN_WITHIN_REACH


def worst_error_quantity(errors: RootErrors) -> str:
    """What sets the worst error with gain (:attr:`RootErrors.worst_error_with_gain_pct`): "f0", "Q", "zero f0", "roots" or "gain".

    Parameters
    ----------
    errors : placer.place.solve.RootErrors

    Returns
    -------
    str
    """
    figures = [(abs(x), name) for name, x in (("f0", errors.f0_pct), ("Q", errors.q_pct),
                                              ("zero f0", errors.zero_f0_pct)) if x is not None]
    worst, name = max(figures) if figures else (errors.worst_root_pct, "roots")
    if errors.gain_db is not None and 100 * abs(10 ** (errors.gain_db / 20) - 1) > worst:
        return "gain"
    return name


def value_spread(topology: Topology, values: Mapping[str, float]) -> dict[str, float]:
    """Largest/smallest value ratio among each kind of part.

    Parameters
    ----------
    topology : Topology
    values : mapping
        Part symbol → value (SI); parts the topology fixes count with
        their own value.

    Returns
    -------
    dict
        Kind (of :data:`PART_KINDS`) → ratio, for kinds with two or more parts.

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> value_spread(get_topology("sallen-key-lowpass-unity"),
    ...              {"R1": 10e3, "R2": 20e3, "C1": 1e-9, "C2": 4e-9})
    {'resistor': 2.0, 'capacitor': 4.0}
    """
    out: dict[str, float] = {}
    for kind in PART_KINDS:
        numbers = [values[e.symbol] for e in topology.circuit.elements
                   if e.kind == kind and e.symbol is not None and e.symbol in values]
        numbers += [e.value for e in topology.circuit.elements
                    if e.kind == kind and e.symbol is None and e.value]
        if len(numbers) >= 2:
            out[kind] = max(numbers) / min(numbers)
    return out


@dataclass(frozen=True)
class Candidate:
    """One topology tried for one section.

    ``notes`` says what of the spec's ``[parts]`` the placement left out
    (:func:`parts_notes`).
    """

    topology: Topology
    reachable: bool
    reason: str = ""
    problem: Problem | None = None        # None for an unreachable candidate (as the four below)
    solution: Solution | None = None
    snapped: SnapResult | None = None
    errors: RootErrors | None = None      # RootErrors of the snapped values
    continuous_errors: RootErrors | None = None
    notes: tuple[str, ...] = ()

    @property
    def error_pct(self) -> float:
        """Worst root/figure error after snapping, percent, gain included."""
        if not self.reachable:
            return math.inf
        return cast(RootErrors, self.errors).worst_error_with_gain_pct   # set when reachable

    @property
    def spread(self) -> dict[str, float]:
        if not self.reachable:
            return {}
        return value_spread(self.topology, cast(SnapResult, self.snapped).values)   # set when reachable


class CandidateSeeds(NamedTuple):
    """The seeds of one candidate: its solver's and its Monte Carlo's."""

    solver: int
    sampler: np.random.SeedSequence


def candidate_seeds(seed: int, section_index: int, topology_id: str) -> CandidateSeeds:
    """Solver seed and Monte Carlo seed of one candidate, from its identity.

    ``placer design`` and ``placer compare`` both place a candidate with
    the solver seed given here, so they give it the same parts; the result
    does not depend on which other candidates are tried, nor on the worker
    that runs it.

    Parameters
    ----------
    seed : int
        The run's seed, >= 0.
    section_index : int
        From 1, in cascade order.
    topology_id : str

    Returns
    -------
    CandidateSeeds
        ``solver`` (int) and ``sampler`` (numpy.random.SeedSequence), from
        ``SeedSequence([seed, section_index, crc32(topology_id)])``.

    Examples
    --------
    >>> a, _ = candidate_seeds(0, 1, "mfb-lowpass")
    >>> b, _ = candidate_seeds(0, 2, "mfb-lowpass")
    >>> a == candidate_seeds(0, 1, "mfb-lowpass").solver, a == b
    (True, False)
    """
    root = np.random.SeedSequence([int(seed), int(section_index),
                                   zlib.crc32(str(topology_id).encode("utf-8"))])
    solver, sampler = root.spawn(2)
    return CandidateSeeds(int(solver.generate_state(1)[0]), sampler)


def right_half_plane_poles(circuit: Circuit, values: Mapping[str, float] | None = None
                           ) -> tuple[complex, ...]:
    """The natural frequencies of a built circuit in the right half-plane, rad/s.

    Parameters
    ----------
    circuit : Circuit
        The circuit as built (with an op-amp model applied, if any).
    values : mapping of str to float, optional
        Numbers for the parts that carry a symbol.

    Returns
    -------
    tuple of complex
        Every natural frequency (:func:`placer.analysis.pencil.natural_frequencies`,
        none cancelled) with Re p > −1e-9·|p|: in the right half-plane or
        on the jω axis (within round-off); empty for a stable circuit.

    Examples
    --------
    An equal-component Sallen–Key low-pass has Q = 1/(3 − K), K = 1 + RB/RA:
    unstable from K = 3 on, where the poles reach the jω axis (common
    active-filter texts, from memory).

    >>> from placer.circuit.library import get_topology
    >>> circuit = get_topology("sallen-key-lowpass-equal").circuit
    >>> parts = {"R1": 10e3, "R2": 10e3, "C1": 10e-9, "C2": 10e-9, "RA": 10e3}
    >>> len(right_half_plane_poles(circuit, {**parts, "RB": 15e3}))
    0
    >>> len(right_half_plane_poles(circuit, {**parts, "RB": 25e3}))
    2
    """
    poles = natural_frequencies(circuit, values)
    return tuple(complex(p) for p in poles if p.real > -_AXIS_TOLERANCE * abs(p))


def require_stable(candidate: Candidate, circuit: Circuit) -> Candidate:
    """The candidate, or an unreachable one when its built circuit is unstable.

    Parameters
    ----------
    candidate : Candidate
        A placement; an unreachable one is returned as it is.
    circuit : Circuit
        Its circuit as built, parts symbolic (with ideal op-amps, or with
        the op-amp model the placement was corrected for).

    Returns
    -------
    Candidate
        The same candidate when every natural frequency of `circuit` at the
        snapped values lies in the left half-plane; otherwise a copy with
        ``reachable`` False and the reason :data:`UNSTABLE_REASON`, followed
        by where the poles are (a pole on the jω axis counts, and is said so).
    """
    if not candidate.reachable:
        return candidate
    unstable = right_half_plane_poles(circuit, cast(SnapResult, candidate.snapped).values)   # reachable
    if not unstable:
        return candidate
    shown = sorted({_pole_text(p) for p in unstable})
    axis = any(p.real <= _AXIS_TOLERANCE * abs(p) for p in unstable)
    return replace(candidate, reachable=False,
                   reason=f"{UNSTABLE_REASON} ({', '.join(shown)} rad/s"
                          + (", on or next to the jω axis" if axis else "") + ")")


def _pole_text(pole: complex) -> str:
    """A right-half-plane pole, or a conjugate pair, as '+6065 ± j1621'."""
    if abs(pole.imag) <= 1e-9 * abs(pole):
        return f"{pole.real:+.4g}"
    return f"{pole.real:+.4g} ± j{abs(pole.imag):.4g}"
