"""Placing one section with ideal op-amps: the step every design shares.

A section is placed on a topology by solving the part values continuously
(:func:`placer.place.solve.solve`) and snapping them to the preferred-value
series (:func:`placer.place.snap.snap`), with the ranges, series, fixed parts
and constraints of a spec's ``[parts]`` table that apply to the topology.
:func:`placer.design.place_section` ranks such placements;
:func:`placer.place.amplifier.place_section_with_amplifier` starts its
op-amp-corrected placement from one. Both rank candidates by the figures
here: the worst error (:func:`worst_error_pct`) and the spread of the part
values (:func:`value_spread`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .snap import snap
from .solve import goal_from_section, make_problem, root_errors, solve

__all__ = [
    "PART_KINDS",
    "Candidate",
    "IdealPlacement",
    "problem_options",
    "place_ideal",
    "value_spread",
    "worst_error_pct",
]

#: Element kinds that are bought as parts with a value (and snapped to a series).
PART_KINDS = ("resistor", "capacitor", "inductor")


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

    goal: object
    problem: object
    solution: object
    snapped: object
    errors: object
    continuous_errors: object


def problem_options(topology, parts):
    """The parts options that apply to one topology.

    Parameters
    ----------
    topology : Topology
    parts : placer.spec.reader.PartsSpec or None

    Returns
    -------
    tuple
        ``(ranges, series, fixed, constraints)`` as :func:`placer.place.solve.make_problem`
        and :func:`placer.place.snap.snap` take them: fixed parts and constraints
        naming a symbol the topology does not have are left out. Without
        `parts`: ``(None, None, {}, ())``.
    """
    if parts is None:
        return None, None, {}, ()
    fixed = {k: v for k, v in parts.fixed.items() if k in topology.symbols}
    constraints = tuple(
        c for c in parts.constraints if c.part in topology.symbols and c.source in topology.symbols
    )
    return dict(parts.ranges), dict(parts.series), fixed, constraints


def place_ideal(section, topology, *, parts=None, seed=0):
    """Solve and snap one topology for one section with ideal op-amps.

    Parameters
    ----------
    section : placer.target.targets.Section
    topology : Topology
    parts : placer.spec.reader.PartsSpec, optional
        Series, ranges, fixed parts and constraints.
    seed : int
        Seed of the multi-start solver.

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
    >>> bool(worst_error_pct(placed.errors) < 1)
    True
    """
    goal = goal_from_section(section)
    ranges, series, fixed, constraints = problem_options(topology, parts)
    problem = make_problem(topology, goal, ranges=ranges, fixed=fixed, constraints=constraints)
    solution = solve(problem, seed=seed)
    snapped = snap(problem, solution, series=series)
    return IdealPlacement(
        goal=goal, problem=problem, solution=solution, snapped=snapped,
        errors=root_errors(problem.nf, snapped.values, goal),
        continuous_errors=root_errors(problem.nf, solution.values, goal),
    )


def worst_error_pct(errors):
    """Worst root or figure error, percent, the gain's included.

    Parameters
    ----------
    errors : placer.place.solve.RootErrors

    Returns
    -------
    float
        The worst of :attr:`~placer.place.solve.RootErrors.worst_pct` and, when
        the gain is set, the gain error as a percentage of the magnitude.
    """
    worst = errors.worst_pct
    if errors.gain_db is not None:
        worst = max(worst, 100 * abs(10 ** (errors.gain_db / 20) - 1))
    return worst


def value_spread(topology, values):
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
    out = {}
    for kind in PART_KINDS:
        numbers = [values[e.symbol] for e in topology.circuit.elements
                   if e.kind == kind and e.symbol in values]
        numbers += [e.value for e in topology.circuit.elements
                    if e.kind == kind and e.symbol is None and e.value]
        if len(numbers) >= 2:
            out[kind] = max(numbers) / min(numbers)
    return out


@dataclass(frozen=True)
class Candidate:
    """One topology tried for one section."""

    topology: object
    reachable: bool
    reason: str = ""
    problem: object = None
    solution: object = None
    snapped: object = None
    errors: object = None          # RootErrors of the snapped values
    continuous_errors: object = None

    @property
    def error_pct(self):
        """Worst root/figure error after snapping, percent, gain included."""
        return worst_error_pct(self.errors) if self.reachable else math.inf

    @property
    def spread(self):
        return value_spread(self.topology, self.snapped.values) if self.reachable else {}
