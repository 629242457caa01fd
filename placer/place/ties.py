"""Parts tied by constraints: groups of parts whose values keep fixed ratios.

A topology's own constraints (``C2 = C1`` in an equal-component
Sallen–Key) and a spec's (``[parts] constraints``) say ``part =
factor·source``. :func:`tie_parts` joins them into groups, each with one
independent part the solver moves (or a number, when a part of the group
is fixed), and tells a constraint the others already imply from one that
contradicts them.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ..errors import SpecError, UnreachableTarget

if TYPE_CHECKING:
    from ..circuit.topology import Constraint, Topology

__all__ = ["Ties", "tie_parts"]


@dataclass(frozen=True)
class Ties:
    """Constraints resolved: what the solver moves, what follows, what is fixed.

    ``tied`` maps a dependent part to (independent part, factor);
    ``values`` holds every part with a number (given, or implied by a tie
    to a part with a number); ``independent`` the parts the solver moves,
    in the topology's order.
    """

    tied: dict[str, tuple[str, float]]
    values: dict[str, float]
    independent: tuple[str, ...]


def tie_parts(topology: Topology, constraints: Sequence[Constraint],
              fixed: Mapping[str, float]) -> Ties:
    """Resolve the topology's and the spec's constraints into :class:`Ties`.

    Constraints ``part = factor·source`` join parts into groups whose values
    keep fixed ratios (a union–find with the ratio to each group's root).
    A constraint the earlier ones already imply (``C1 = C2`` on a topology
    that ties ``C2 = C1``) is dropped; one that contradicts them, or a group
    holding two numbers whose ratio is not the tie's, cannot be met: a
    SpecError when only the spec's constraints and fixed parts are
    involved, UnreachableTarget when the topology's own ties or values are
    (another topology may take the spec's constraint). A group holding a
    number fixes every part of it.

    Parameters
    ----------
    topology : Topology
        Its ``constraints`` come first, then `constraints`.
    constraints : sequence of Constraint
        The spec's, each naming parts the topology has.
    fixed : mapping of str to float
        The spec's fixed parts (SI), each a part of the topology.

    Returns
    -------
    Ties

    Raises
    ------
    SpecError, UnreachableTarget
        As above.

    Examples
    --------
    The equal-component Sallen–Key ties C2 = C1 and R2 = R1; the spec's
    ``C1 = C2`` is the same tie:

    >>> from placer.circuit.library import get_topology
    >>> from placer.circuit.topology import parse_constraint
    >>> ties = tie_parts(get_topology("sallen-key-lowpass-equal"), [parse_constraint("C1 = C2")], {})
    >>> ties.tied["C2"], ties.tied["R2"]
    (('C1', 1.0), ('R1', 1.0))
    >>> tie_parts(get_topology("sallen-key-lowpass-equal"), [], {"C2": 1e-8}).values["C1"]
    1e-08
    """
    values = dict(topology.values)
    values.update({part: float(value) for part, value in fixed.items()})
    own = tuple(topology.constraints)
    parent: dict[str, tuple[str, float]] = {}

    def find(name: str) -> tuple[str, float]:
        factor = 1.0
        while name in parent:
            name, step = parent[name]
            factor *= step
        return name, factor

    def members(root: str) -> list[str]:
        return [n for n in topology.symbols if find(n)[0] == root]

    def fail(message: str, group: list[str]) -> None:
        owned = {n for c in own for n in (c.part, c.source)}
        if any(n in topology.values or n in owned for n in group):
            raise UnreachableTarget(f"{message} on topology {topology.id!r}")
        raise SpecError(message)

    for constraint in own + tuple(constraints):
        part_root, part_factor = find(constraint.part)
        source_root, source_factor = find(constraint.source)
        ratio = constraint.factor * source_factor / part_factor
        if part_root == source_root:
            if not math.isclose(ratio, 1.0, rel_tol=1e-9):
                fail(f"constraint '{constraint}' contradicts the other ties of "
                     f"{', '.join(members(part_root))}", members(part_root))
            continue
        parent[part_root] = (source_root, ratio)
    root_values: dict[str, tuple[float, str]] = {}
    for name, value in values.items():
        root, factor = find(name)
        implied = value / factor
        if root in root_values and not math.isclose(root_values[root][0], implied, rel_tol=1e-9):
            other = root_values[root][1]
            fail(f"the constraints tie {name} = {value:g} and {other} = {values[other]:g} "
                 f"in another ratio", members(root))
        root_values.setdefault(root, (implied, name))
    tied: dict[str, tuple[str, float]] = {}
    for name in topology.symbols:
        root, factor = find(name)
        if root in root_values:
            values.setdefault(name, root_values[root][0] * factor)
        elif name != root:
            tied[name] = (root, factor)
    independent = tuple(p for p in topology.free if p not in values and p not in tied)
    return Ties(tied=tied, values=values, independent=independent)

