"""How a circuit is drawn, as data: the ``[drawing]`` table and its plan.

A topology file may say how its schematic is laid out (see
docs/topology-format.md): the signal path from the input, left to right
(series parts and op-amps), the parts drawn above or below the path between
two of its nodes, the shunt parts hanging down to the reference, and nodes
to mark. :func:`drawing_from_table` reads and checks such a table against the
circuit; :func:`resolve_plan` turns it into a :class:`Plan`, the structure
the report layer gives coordinates to; ``automatic_plan`` finds a plan
for any circuit that has no table (:mod:`placer.circuit.drawing_auto`), so no
circuit is ever undrawable.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

from .elements import Circuit, Element
from ..errors import SpecError

__all__ = [
    "PlanBuilder",
    "spans_cross",
    "leg_point",
    "DRAWING_KEYS",
    "DrawingSpec",
    "Point",
    "Step",
    "Branch",
    "Leg",
    "Plan",
    "drawing_from_table",
    "resolve_plan",
    "part_nodes",
    "circuit_parts",
]

#: Keys of the ``[drawing]`` table.
DRAWING_KEYS = ("path", "above", "below", "shunt", "taps", "above_inputs")
ABOVE, BELOW = 1, -1
_TWO_PORT = ("vcvs", "vccs")


@dataclass(frozen=True)
class DrawingSpec:
    """A topology's ``[drawing]`` table, read and checked.

    Attributes
    ----------
    path : tuple of str
        Series parts and op-amps from the input, left to right.
    above, below : tuple of str
        Parts drawn above or below the path, between two of its nodes (parts
        in a row through nodes nothing else touches form one branch).
    shunt : tuple of str
        Parts hanging down to the reference (several in a row form one leg).
    taps : tuple of str
        Nodes marked with their name (another output, for example).
    above_inputs : tuple of str
        Op-amps on the path whose other input is drawn above it (default below).
    """

    path: tuple = ()
    above: tuple = ()
    below: tuple = ()
    shunt: tuple = ()
    taps: tuple = ()
    above_inputs: tuple = ()

    def renamed(self, names: Mapping[str, str]) -> DrawingSpec:
        """A copy whose element names go through `names` (topology → board)."""
        def rename(items: tuple) -> tuple:
            return tuple(names.get(item, item) for item in items)

        return replace(self, path=rename(self.path), above=rename(self.above),
                       below=rename(self.below), shunt=rename(self.shunt),
                       above_inputs=rename(self.above_inputs))


@dataclass(frozen=True)
class Point:
    """A place on the path where wires meet: a node, or an op-amp's other input.

    `side` is +1 (above) or -1 (below) for an op-amp input, 0 for a node;
    `terminal` marks the output's end point when the output sits inside
    the path and is wired out to the right.
    """

    key: str
    node: str
    opamp: str = ""
    side: int = 0
    terminal: bool = False


@dataclass(frozen=True)
class Step:
    """One step of the path: a series part, or an op-amp from input to output."""

    part: str
    start: str
    end: str
    opamp: bool = False
    pin: int = 0            # the op-amp input on the path: 0 non-inverting, 1 inverting
    pin_point: str = ""     # key of the op-amp's other input


@dataclass(frozen=True)
class Branch:
    """Parts in a row above or below the path, between two points.

    ``nodes`` has one more entry than ``parts``: the node before each part,
    then the last node. No parts is a plain wire.
    """

    parts: tuple
    nodes: tuple
    start: str
    end: str
    side: int


@dataclass(frozen=True)
class Leg:
    """Parts hanging from a point (or a branch's inner node) to the reference.

    With `marker` set, the leg has no parts and ends in a terminal with that
    label instead of the reference (the output, or a tap).
    """

    parts: tuple
    nodes: tuple
    anchor: str             # point key, or "" for a branch's inner node
    branch: int = -1        # the branch index when hanging from its inner node
    index: int = 0          # the inner node's index in that branch's nodes
    side: int = BELOW
    marker: str = ""


@dataclass(frozen=True)
class Plan:
    """Where every part of a circuit goes, before coordinates."""

    points: tuple
    steps: tuple
    branches: tuple
    legs: tuple
    output: str             # key of the point that carries the output terminal


def circuit_parts(circuit: Circuit) -> dict:
    """Drawable parts: element name → element; a two-port's control side as ``NAME:ctrl``."""
    parts = {}
    for element in circuit.elements:
        parts[element.name] = element
        if element.kind in _TWO_PORT:
            parts[f"{element.name}:ctrl"] = element
    return parts


def part_nodes(element: Element, key: str) -> tuple:
    """The two nodes a drawable part joins (a two-port's output or control side)."""
    if element.kind in _TWO_PORT:
        return tuple(element.nodes[2:]) if key.endswith(":ctrl") else tuple(element.nodes[:2])
    return tuple(element.nodes)


# -- reading the table ---------------------------------------------------------------

def drawing_from_table(table: object, circuit: Circuit, *, source: str = "topology") -> DrawingSpec:
    """Read a ``[drawing]`` table and check it against `circuit`.

    Raises
    ------
    SpecError
        For an unknown key, an element or node the circuit lacks, an element
        left out or placed twice, a path that does not run from the input, or
        a part that cannot sit where the table puts it; the message names the
        element.
    """
    where = f"{source}: drawing"
    if not isinstance(table, dict):
        raise SpecError(f"{where}: must be a table with 'path' (and 'above', 'below', 'shunt')")
    unknown = sorted(set(table) - set(DRAWING_KEYS))
    if unknown:
        raise SpecError(f"{where}: unknown key {unknown[0]!r}; accepted: {', '.join(DRAWING_KEYS)}")
    lists = {}
    for key in DRAWING_KEYS:
        raw = table.get(key, [])
        if not isinstance(raw, list) or not all(isinstance(x, str) for x in raw):
            raise SpecError(f"{where}.{key}: must be a list of names")
        lists[key] = tuple(raw)
    spec = DrawingSpec(**lists)
    resolve_plan(circuit, spec, source=source)
    return spec


# -- a plan from a table -------------------------------------------------------------

def resolve_plan(circuit: Circuit, spec: DrawingSpec, *, source: str = "topology") -> Plan:
    """The plan a drawing table describes for `circuit`.

    Raises
    ------
    SpecError
        Naming the element (or node) the table gets wrong.
    """
    where = f"{source}: drawing"
    parts = circuit_parts(circuit)
    _check_names(circuit, spec, parts, where)
    builder = PlanBuilder(circuit, parts)
    _walk_path(builder, spec, where)
    hosted = _place_other_inputs(builder, spec, where)
    for side, names in ((ABOVE, spec.above), (BELOW, spec.below)):
        _add_branches(builder, names, side, where)
    _add_legs(builder, spec.shunt, where)
    for node in spec.taps:
        builder.add_marker(node, node, where=f"{where}.taps")
    del hosted
    return builder.finish()


def _check_names(circuit: Circuit, spec: DrawingSpec, parts: dict, where: str) -> None:
    placed: dict = {}
    for key in ("path", "above", "below", "shunt"):
        for name in getattr(spec, key):
            if name not in parts:
                raise SpecError(f"{where}.{key}: {name!r} is not an element of the circuit "
                                f"(elements: {', '.join(parts)})")
            if parts[name].kind == "opamp" and key != "path":
                raise SpecError(f"{where}.{key}: op-amp {name!r} must be on the path")
            if name in placed:
                raise SpecError(f"{where}: {name!r} is placed twice ({placed[name]} and {key})")
            placed[name] = key
    for name in parts:
        if name not in placed:
            raise SpecError(f"{where}: element {name!r} is not placed; list it in path, above, "
                            "below or shunt")
    nodes = set(circuit.nodes)
    for node in spec.taps:
        if node not in nodes:
            raise SpecError(f"{where}.taps: {node!r} is not a node of the circuit")
    for name in spec.above_inputs:
        if name not in spec.path or parts[name].kind != "opamp":
            raise SpecError(f"{where}.above_inputs: {name!r} is not an op-amp on the path")


def _walk_path(builder: PlanBuilder, spec: DrawingSpec, where: str) -> None:
    circuit = builder.circuit
    current = circuit.input
    builder.add_node(current)
    segments: dict = {}
    for name in spec.path:
        element = builder.parts[name]
        if element.kind == "opamp":
            inputs = element.nodes[:2]
            if current not in inputs:
                raise SpecError(f"{where}.path: op-amp {name!r} has no input on node {current!r}, "
                                "where the path has come to")
            pin = inputs.index(current)
            side = ABOVE if name in spec.above_inputs else 0
            following = element.nodes[2]
            builder.add_opamp_step(name, current, following, pin, side, where=f"{where}.path")
        else:
            ends = part_nodes(element, name)
            if element.kind in _TWO_PORT or current not in ends:
                raise SpecError(f"{where}.path: {name!r} does not start at node {current!r}, "
                                "where the path has come to")
            following = ends[1] if ends[0] == current else ends[0]
            pair = frozenset((current, following))
            if pair in segments:
                raise SpecError(f"{where}.path: {name!r} and {segments[pair]!r} would share the "
                                f"segment {current}–{following}; list one of them in above or below")
            segments[pair] = name
            if following == circuit.reference:
                raise SpecError(f"{where}.path: {name!r} goes to the reference; list it in shunt")
            builder.add_part_step(name, current, following, where=f"{where}.path")
        current = following


def _pin_side(element: Element, pin: int, spec: DrawingSpec, builder: PlanBuilder) -> int:
    """Below, unless the other input's parts are listed above."""
    other = element.nodes[1 - pin]
    for name in spec.above:
        if other in part_nodes(builder.parts[name], name):
            return ABOVE
    return BELOW


def _place_other_inputs(builder: PlanBuilder, spec: DrawingSpec, where: str) -> dict:
    hosted = {}
    for step in [s for s in builder.steps if s.opamp]:
        element = builder.parts[step.part]
        node = element.nodes[1 - step.pin]
        point = builder.point(step.pin_point)
        if not point.side:
            on_path = node in builder.node_points
            side = BELOW if on_path else _pin_side(element, step.pin, spec, builder)
            point = replace(point, side=side)
            builder.points = [point if p.key == point.key else p for p in builder.points]
        if node == builder.circuit.reference:
            if point.side == ABOVE:
                raise SpecError(f"{where}.above_inputs: the other input of {step.part!r} goes to "
                                "the reference and is drawn below")
            builder.add_leg((), (node,), step.pin_point)
        elif node in builder.node_points:
            builder.add_branch((), (node, node), step.pin_point, builder.node_points[node][0],
                               point.side)
        else:
            hosted[node] = step.pin_point
            builder.host(node, step.pin_point)
    return hosted


def _chains(builder: PlanBuilder, names: Sequence[str], where: str) -> list:
    """Group parts into rows between two drawn points (or a point and the reference)."""
    degree: dict = {}
    for name in names:
        for node in part_nodes(builder.parts[name], name):
            degree[node] = degree.get(node, 0) + 1
    ends = set(builder.node_points) | {builder.circuit.reference}
    left = list(names)
    chains = []
    while left:
        start_name = next((n for n in left if set(part_nodes(builder.parts[n], n)) & ends), None)
        if start_name is None:
            raise SpecError(f"{where}: {left[0]!r} does not reach a node drawn on the path")
        nodes = part_nodes(builder.parts[start_name], start_name)
        first = nodes[0] if nodes[0] in ends else nodes[1]
        chain, sequence, node, name = [], [first], first, start_name
        while True:
            left.remove(name)
            chain.append(name)
            pair = part_nodes(builder.parts[name], name)
            node = pair[1] if pair[0] == node else pair[0]
            sequence.append(node)
            if node in ends:
                break
            if degree.get(node, 0) != 2:
                raise SpecError(f"{where}: {name!r} ends at node {node!r}, which is neither on the "
                                "path nor joined to exactly one more part of the same list")
            found = next((n for n in left if node in part_nodes(builder.parts[n], n)), None)
            if found is None:
                raise SpecError(f"{where}: {chain[-1]!r} ends at node {node!r}, which is not on "
                                "the path")
            name = found
        chains.append((tuple(chain), tuple(sequence)))
    return chains


def _add_branches(builder: PlanBuilder, names: Sequence[str], side: int, where: str) -> None:
    key = "above" if side == ABOVE else "below"
    reference = builder.circuit.reference
    for chain, nodes in _chains(builder, names, f"{where}.{key}"):
        if reference in (nodes[0], nodes[-1]):
            raise SpecError(f"{where}.{key}: {chain[0] if nodes[0] == reference else chain[-1]!r} "
                            "goes to the reference; list it in shunt")
        start = _side_point(builder, nodes[0], side)
        end = _side_point(builder, nodes[-1], side)
        if start is None or end is None:
            raise SpecError(f"{where}.{key}: {chain[0]!r} ends at an op-amp input drawn on the "
                            "other side; list the op-amp in above_inputs or move the part")
        builder.add_branch(chain, nodes, start, end, side)


def _side_point(builder: PlanBuilder, node: str, side: int) -> str | None:
    for key in builder.node_points[node]:
        point = builder.point(key)
        if point.side in (0, side):
            return key
    return None


def _add_legs(builder: PlanBuilder, names: Sequence[str], where: str) -> None:
    reference = builder.circuit.reference
    inner = builder.inner_nodes()
    for node in inner:
        builder.node_points.setdefault(node, [])
    try:
        chains = _chains(builder, names, f"{where}.shunt")
    finally:
        for node in inner:
            if not builder.node_points[node]:
                del builder.node_points[node]
    for chain, nodes in chains:
        if nodes[-1] != reference:
            if nodes[0] == reference:
                chain, nodes = chain[::-1], nodes[::-1]
            else:
                raise SpecError(f"{where}.shunt: {chain[0]!r} does not reach the reference "
                                f"{reference!r}; list it in above or below")
        if nodes[0] in inner:
            branch, index = inner[nodes[0]]
            if builder.branches[branch].side == ABOVE:
                raise SpecError(f"{where}.shunt: {chain[0]!r} hangs from node {nodes[0]!r} of a "
                                "branch drawn above the path; draw that branch below")
            builder.legs.append(Leg(chain, nodes, "", branch=branch, index=index))
        elif not builder.node_points.get(nodes[0]):
            raise SpecError(f"{where}.shunt: {chain[0]!r} hangs from node {nodes[0]!r}, which is "
                            "not on the drawn path; a shunt part connects a path node to the "
                            f"reference {reference!r}")
        else:
            builder.add_leg(chain, nodes, leg_point(builder, nodes[0]))


def leg_point(builder: PlanBuilder, node: str) -> str:
    """The point on `node` a leg to the reference hangs from."""
    keys = builder.node_points[node]
    below = [k for k in keys if builder.point(k).side == BELOW]
    return below[0] if below else keys[0]


# -- the builder both kinds of plan use ---------------------------------------------------

class PlanBuilder:
    """Collects points, steps, branches and legs, then orders them into a Plan."""

    def __init__(self, circuit: Circuit, parts: dict) -> None:
        self.circuit, self.parts = circuit, parts
        self.points: list = []
        self.node_points: dict = {}
        self.steps: list = []
        self.branches: list = []
        self.legs: list = []

    def point(self, key: str) -> Point:
        return next(p for p in self.points if p.key == key)

    def add_node(self, node: str) -> str:
        key = node if node not in {p.key for p in self.points} else f"{node}#{len(self.points)}"
        self.points.append(Point(key, node))
        self.node_points.setdefault(node, []).append(key)
        return key

    def host(self, node: str, key: str) -> None:
        self.node_points.setdefault(node, []).append(key)

    def add_part_step(self, name: str, start: str, end: str, *, where: str) -> None:
        if end in self.node_points and any(self.point(k).side == 0 for k in self.node_points[end]):
            raise SpecError(f"{where}: {name!r} comes back to node {end!r}, already on the path; "
                            "list it in above or below")
        start_key = self.points[-1].key
        self.steps.append(Step(name, start_key, self.add_node(end)))

    def add_opamp_step(self, name: str, start: str, end: str, pin: int, side: int, *,
                       where: str) -> None:
        if end in self.node_points and any(self.point(k).side == 0 for k in self.node_points[end]):
            raise SpecError(f"{where}: the output of {name!r} is node {end!r}, already on the "
                            "path; draw a part ahead of it instead")
        start_key = self.points[-1].key
        pin_key = f"{name}.in"
        self.points.append(Point(pin_key, "", opamp=name, side=side))
        end_key = self.add_node(end)
        self.steps.append(Step(name, start_key, end_key, opamp=True, pin=pin, pin_point=pin_key))

    def add_branch(self, parts: tuple, nodes: tuple, start: str, end: str, side: int) -> None:
        order = {p.key: i for i, p in enumerate(self.points)}
        if order[start] > order[end]:
            parts, nodes, start, end = parts[::-1], nodes[::-1], end, start
        self.branches.append(Branch(tuple(parts), tuple(nodes), start, end, side))

    def add_leg(self, parts: tuple, nodes: tuple, anchor: str) -> None:
        self.legs.append(Leg(tuple(parts), tuple(nodes), anchor))

    def inner_nodes(self) -> dict[str, tuple[int, int]]:
        inner: dict[str, tuple[int, int]] = {}
        for index, branch in enumerate(self.branches):
            for position, node in enumerate(branch.nodes[1:-1], start=1):
                inner.setdefault(node, (index, position))
        return inner

    def add_marker(self, node: str, label: str, *, where: str) -> None:
        inner = self.inner_nodes()
        if node in self.node_points:
            keys = self.node_points[node]
            self.legs.append(Leg((), (node,), keys[0], side=_free_side(self, keys[0]),
                                 marker=label))
        elif node in inner:
            branch, index = inner[node]
            self.legs.append(Leg((), (node,), "", branch=branch, index=index,
                                 side=self.branches[branch].side, marker=label))
        else:
            raise SpecError(f"{where}: node {node!r} is not drawn on the path or a branch")

    def finish(self) -> Plan:
        output = self.circuit.output
        keys = self.node_points.get(output, [])
        last = self.points[-1]
        if last.node == output and last.side == 0:
            out_key = last.key
        else:
            out_key = _wire_output_out(self, keys[0] if keys else None)
        return Plan(tuple(self.points), tuple(self.steps), tuple(self.branches),
                    tuple(self.legs), out_key)


def _free_side(builder: PlanBuilder, key: str) -> int:
    point = builder.point(key)
    return point.side if point.side else BELOW


def spans_cross(a: tuple, b: tuple) -> bool:
    """True when two (start, end) spans overlap without one holding the other."""
    return a[0] < b[0] < a[1] < b[1] or b[0] < a[0] < b[1] < a[1]


def _wire_output_out(builder: PlanBuilder, key: str | None) -> str:
    """Wire an output inside the path out to the right, on a side it crosses nothing."""
    if key is None:  # pragma: no cover - the output always has a point
        raise SpecError(f"the output node {builder.circuit.output!r} is not drawn")
    order = {p.key: i for i, p in enumerate(builder.points)}
    end = len(builder.points)
    span = (order[key], end)
    point = builder.point(key)
    sides = [point.side] if point.side else [ABOVE, BELOW]
    for side in sides:
        spans = [(order[b.start], order[b.end]) for b in builder.branches if b.side == side]
        if not any(spans_cross(span, s) for s in spans):
            terminal = Point(f"{builder.circuit.output}#out", builder.circuit.output,
                             terminal=True)
            builder.points.append(terminal)
            builder.branches.append(Branch((), (point.node or builder.circuit.output,) * 2,
                                           key, terminal.key, side))
            return terminal.key
    builder.legs.append(Leg((), (builder.circuit.output,), key, side=_free_side(builder, key),
                            marker=builder.circuit.output))
    return key
