"""Drawing plans for circuits without a ``[drawing]`` table.

:func:`automatic_plan` lays out any circuit: the path through the most
op-amps from the input (series parts along it), shunt parts hanging down to
the reference, op-amps after the node that drives their input, every other
part above or below the path, on the side where it crosses nothing when
there is one (branches are two-coloured by which ones would cross). What is
left (an op-amp off the path, a node joined to many parts) is drawn to the
right and wired to its nodes, so no circuit is ever undrawable.
:func:`plan_for` is the plan of any circuit: its table's when it fits.

Examples
--------
>>> from placer.circuit.elements import Circuit, Element
>>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), value=1e3),
...               Element("C1", "capacitor", ("vout", "gnd"), value=1e-9)))
>>> plan = automatic_plan(rc)
>>> [s.part for s in plan.steps], [leg.parts for leg in plan.legs]
(['R1'], [('C1',)])
"""

from __future__ import annotations

from dataclasses import replace

from .elements import Circuit, Element
from .drawing import (ABOVE, BELOW, DrawingSpec, Leg, Plan, Point, Step, PlanBuilder,
                      spans_cross, leg_point, circuit_parts, part_nodes, resolve_plan)
from ..errors import SpecError

__all__ = ["automatic_plan", "plan_for"]

_SEARCH_LIMIT = 20000


# -- a plan without a table -------------------------------------------------------------

def automatic_plan(circuit: Circuit) -> Plan:
    """A plan for any circuit: the longest path from the input, the rest around it.

    The path follows series parts and op-amps (input to output) from the
    input, preferring the path through most op-amps, then through the output,
    then the longest; shunt parts hang down to the reference; parts between
    two drawn nodes go above or below, on the side where they cross nothing
    when there is one. Whatever is left (an op-amp off the path, a node
    joined to many parts) is drawn to the right and wired to its nodes.
    """
    parts = circuit_parts(circuit)
    builder = PlanBuilder(circuit, parts)
    path = _longest_path(circuit, parts)
    builder.add_node(circuit.input)
    used = set()
    for name, start, end, pin in path:
        if pin is None:
            builder.add_part_step(name, start, end, where="drawing")
        else:
            builder.add_opamp_step(name, start, end, pin, 0, where="drawing")
        used.add(name)
    _place_remaining(builder, used)
    return builder.finish()


def _edges_from(circuit: Circuit, parts: dict, node: str) -> list:
    """(part, next node, op-amp input or None) for every way the path can go on."""
    out = []
    reference = circuit.reference
    for key, element in parts.items():
        if element.kind == "opamp":
            if node in element.nodes[:2] and element.nodes[2] != reference:
                out.append((key, element.nodes[2], element.nodes[:2].index(node)))
        elif element.kind in ("resistor", "capacitor", "inductor"):
            a, b = element.nodes
            if node in (a, b) and reference not in (a, b) and a != b:
                out.append((key, b if a == node else a, None))
    return out


def _longest_path(circuit: Circuit, parts: dict) -> list:
    best: list = []
    best_score: tuple = (-1,)
    budget = [_SEARCH_LIMIT]

    def score(path: list) -> tuple:
        nodes = [circuit.input] + [step[2] for step in path]
        opamps = sum(1 for step in path if step[3] is not None)
        return (opamps, circuit.output in nodes, nodes[-1] == circuit.output, len(nodes))

    def visit(node: str, path: list, seen: set) -> None:
        nonlocal best, best_score
        budget[0] -= 1
        current = score(path)
        if current > best_score:
            best, best_score = list(path), current
        if budget[0] <= 0:
            return
        for key, following, pin in _edges_from(circuit, parts, node):
            if following in seen or any(step[0] == key for step in path):
                continue
            path.append((key, node, following, pin))
            seen.add(following)
            visit(following, path, seen)
            seen.discard(following)
            path.pop()

    visit(circuit.input, [], {circuit.input})
    return best


def _place_remaining(builder: PlanBuilder, used: set) -> None:
    circuit, parts = builder.circuit, builder.parts
    reference = circuit.reference
    _place_opamp_inputs(builder)
    for key, element in parts.items():  # op-amps off the path: drawn to the right
        if element.kind == "opamp" and key not in used:
            _add_loose_opamp(builder, key, element)
            used.add(key)
    left = [k for k in parts if k not in used and parts[k].kind != "opamp"]
    while left:
        drawn = set(builder.node_points) | {reference}
        chains = _auto_chains(builder, left, drawn)
        if chains:
            for chain, nodes in chains:
                _add_auto_chain(builder, chain, nodes)
                for name in chain:
                    left.remove(name)
            continue
        if _add_tee(builder, left):
            continue
        # nothing reaches a drawn node through a row: draw the busiest node loose
        counts: dict = {}
        for name in left:
            for node in part_nodes(parts[name], name):
                if node not in drawn:
                    counts[node] = counts.get(node, 0) + 1
        builder.add_node(max(counts, key=lambda n: (counts[n], n)))
    _assign_sides(builder)


def _place_opamp_inputs(builder: PlanBuilder) -> None:
    reference = builder.circuit.reference
    for step in [s for s in builder.steps if s.opamp]:
        element = builder.parts[step.part]
        node = element.nodes[1 - step.pin]
        if node == reference:
            builder.add_leg((), (node,), step.pin_point)
        elif node in builder.node_points:
            builder.add_branch((), (node, node), step.pin_point, builder.node_points[node][0], 0)
        else:
            builder.host(node, step.pin_point)


def _add_loose_opamp(builder: PlanBuilder, key: str, element: Element) -> None:
    """An op-amp off the path: its own short path to the right, wired to its nodes."""
    reference = builder.circuit.reference
    pin = 0 if element.nodes[0] != reference else 1
    start = element.nodes[pin]
    start_key = builder.add_node(start)
    existing = [k for k in builder.node_points[start] if k != start_key]
    if existing:
        builder.add_branch((), (start, start), existing[0], start_key, 0)
    end = element.nodes[2]
    previous = list(builder.node_points.get(end, []))
    pin_key = f"{key}.in"
    builder.points.append(Point(pin_key, "", opamp=key))
    end_key = builder.add_node(end)
    builder.steps.append(Step(key, start_key, end_key, opamp=True, pin=pin, pin_point=pin_key))
    if previous:
        builder.add_branch((), (end, end), previous[0], end_key, 0)
    other = element.nodes[1 - pin]
    if other == reference:
        builder.add_leg((), (other,), pin_key)
    elif other in builder.node_points:
        builder.add_branch((), (other, other), pin_key, builder.node_points[other][0], 0)
    else:
        builder.host(other, pin_key)


def _auto_chains(builder: PlanBuilder, left: list, drawn: set) -> list:
    """Rows of parts from a drawn node through undrawn nodes of two parts each."""
    parts = builder.parts
    degree: dict = {}
    for name in left:
        for node in part_nodes(parts[name], name):
            degree[node] = degree.get(node, 0) + 1
    chains, taken = [], set()
    for first in left:
        if first in taken:
            continue
        pair = part_nodes(parts[first], first)
        if not set(pair) & drawn:
            continue
        start = pair[0] if pair[0] in drawn else pair[1]
        chain, nodes, node, name = [], [start], start, first
        while True:
            chain.append(name)
            a, b = part_nodes(parts[name], name)
            node = b if a == node else a
            nodes.append(node)
            if node in drawn or degree.get(node, 0) != 2:
                break
            name = next((n for n in left if n not in chain and n not in taken
                         and node in part_nodes(parts[n], n)), None)
            if name is None:
                break
        if nodes[-1] in drawn:
            chains.append((tuple(chain), tuple(nodes)))
            taken.update(chain)
    return chains


def _walk_out(builder: PlanBuilder, left: list, hub: str, first: str, drawn: set) -> tuple:
    """The row of parts from `hub` through `first` to a drawn node (or a dead end)."""
    parts = builder.parts
    name: str | None
    chain, nodes, node, name = [], [hub], hub, first
    while name is not None:
        chain.append(name)
        a, b = part_nodes(parts[name], name)
        node = b if a == node else a
        nodes.append(node)
        if node in drawn:
            break
        nexts = [n for n in left if n not in chain and node in part_nodes(parts[n], n)]
        name = nexts[0] if len(nexts) == 1 else None
    return tuple(chain), tuple(nodes)


def _add_tee(builder: PlanBuilder, left: list) -> bool:
    """A node whose rows reach two drawn nodes, and the reference: one branch with legs.

    The lower half of a twin-T is the example: C1 and C2 in a row between the
    input and the output, R3 from their junction down to the reference.
    """
    reference = builder.circuit.reference
    drawn = set(builder.node_points) | {reference}
    parts = builder.parts
    hubs = sorted({n for k in left for n in part_nodes(parts[k], k) if n not in drawn})
    for hub in hubs:
        rows = [_walk_out(builder, left, hub, k, drawn) for k in left
                if hub in part_nodes(parts[k], k)]
        ends = [nodes[-1] for _, nodes in rows]
        if any(end not in drawn for end in ends):
            continue
        across = [row for row in rows if row[1][-1] != reference]
        down = [row for row in rows if row[1][-1] == reference]
        if len(across) != 2 or not down:
            continue
        (chain_a, nodes_a), (chain_b, nodes_b) = across
        chain = chain_a[::-1] + chain_b
        nodes = nodes_a[::-1] + nodes_b[1:]
        start = builder.node_points[nodes[0]][0]
        end = builder.node_points[nodes[-1]][0]
        if start == end:
            continue
        builder.add_branch(chain, nodes, start, end, BELOW)
        number = len(builder.branches) - 1
        stored = builder.branches[number]
        position = stored.nodes.index(hub)
        for leg_chain, leg_nodes in down:
            builder.legs.append(Leg(leg_chain, leg_nodes, "", branch=number, index=position))
        for name in chain + tuple(k for row in down for k in row[0]):
            left.remove(name)
        return True
    return False


def _add_auto_chain(builder: PlanBuilder, chain: tuple, nodes: tuple) -> None:
    reference = builder.circuit.reference
    if nodes[0] == reference and nodes[-1] == reference:
        anchor = builder.add_node(reference)
        builder.add_leg(chain, nodes, anchor)
    elif reference in (nodes[0], nodes[-1]):
        if nodes[0] == reference:
            chain, nodes = chain[::-1], nodes[::-1]
        builder.add_leg(chain, nodes, leg_point(builder, nodes[0]))
    else:
        start = builder.node_points[nodes[0]][0]
        end = builder.node_points[nodes[-1]][0]
        if start == end:  # both ends on one point: give the second end a point of its own
            end = builder.add_node(nodes[-1])
        builder.add_branch(chain, nodes, start, end, 0)


def _assign_sides(builder: PlanBuilder) -> None:
    """Put each branch above or below so that none cross, where that can be done.

    Branches at one op-amp input share its side; an input with a leg is
    below. Each group of branches that cross one another is two-coloured;
    when a group cannot be, the branches go one by one to the side where
    they cross least.
    """
    order = {p.key: i for i, p in enumerate(builder.points)}
    branches = builder.branches
    spans = [(order[b.start], order[b.end]) for b in branches]
    union = _Union(len(branches))
    pins = {p.key for p in builder.points if p.opamp}
    by_pin: dict = {}
    for i, branch in enumerate(branches):
        for key in (branch.start, branch.end):
            if key in pins:
                by_pin.setdefault(key, []).append(i)
    for members in by_pin.values():
        for j in members[1:]:
            union.join(members[0], j)
    legged = {leg.anchor for leg in builder.legs}
    fixed = {union.find(m[0]): BELOW for key, m in by_pin.items() if key in legged}
    for leg in builder.legs:  # a branch with legs from its inner nodes is drawn below
        if leg.branch >= 0:
            fixed[union.find(leg.branch)] = BELOW
    clashes = [(i, j) for i in range(len(branches)) for j in range(i + 1, len(branches))
               if spans_cross(spans[i], spans[j])]
    sides = _two_colour(len(branches), union, clashes, fixed)
    if sides is None:
        sides = {}
        for i in sorted(range(len(branches)), key=lambda i: spans[i][0] - spans[i][1]):
            root = union.find(i)
            if root in fixed:
                sides[i] = fixed[root]
                continue
            cost = {side: sum(1 for j, s in sides.items() if s == side and
                              spans_cross(spans[i], spans[j])) for side in (ABOVE, BELOW)}
            sides[i] = ABOVE if cost[ABOVE] <= cost[BELOW] else BELOW
            fixed[root] = sides[i]
    builder.branches = [replace(b, side=sides[i]) for i, b in enumerate(branches)]
    pin_side = {key: sides[m[0]] for key, m in by_pin.items()}
    builder.points = [replace(p, side=pin_side.get(p.key, BELOW)) if p.opamp else p
                      for p in builder.points]


class _Union:
    """Union-find over branch indices."""

    def __init__(self, size: int) -> None:
        self.parent = list(range(size))

    def find(self, i: int) -> int:
        while self.parent[i] != i:
            self.parent[i] = self.parent[self.parent[i]]
            i = self.parent[i]
        return i

    def join(self, i: int, j: int) -> None:
        self.parent[self.find(i)] = self.find(j)


def _two_colour(count: int, union: _Union, clashes: list, fixed: dict) -> dict | None:
    """Sides for every branch with no two clashing ones on one side, or None."""
    graph: dict = {}
    for i, j in clashes:
        a, b = union.find(i), union.find(j)
        if a == b:
            return None
        graph.setdefault(a, set()).add(b)
        graph.setdefault(b, set()).add(a)
    colour: dict = {}
    roots = sorted({union.find(i) for i in range(count)}, key=lambda r: (r not in fixed, r))
    for root in roots:
        if root in colour:
            continue
        component, queue = {root: 0}, [root]
        while queue:
            node = queue.pop()
            for other in graph.get(node, ()):
                if other not in component:
                    component[other] = 1 - component[node]
                    queue.append(other)
                elif component[other] == component[node]:
                    return None
        flips = {fixed[r] * (1 if component[r] == 0 else -1) for r in component if r in fixed}
        if len(flips) > 1:
            return None
        first = flips.pop() if flips else ABOVE
        for node, parity in component.items():
            colour[node] = first if parity == 0 else -first
    return {i: colour[union.find(i)] for i in range(count)}


# -- the plan of a circuit ----------------------------------------------------------------

def plan_for(circuit: Circuit) -> Plan:
    """The circuit's plan: from its drawing table when it fits, else automatic.

    A circuit built from a topology carries the topology's table; an op-amp
    model's output resistance (``U1.ro`` on node ``U1.int``) joins the path
    right after its op-amp.
    """
    spec = getattr(circuit, "drawing", None)
    if spec is not None:
        spec = _with_output_resistors(circuit, spec)
        try:
            return resolve_plan(circuit, spec, source=circuit.name or "circuit")
        except SpecError:
            pass
    return automatic_plan(circuit)


def _with_output_resistors(circuit: Circuit, spec: DrawingSpec) -> DrawingSpec:
    names = {e.name for e in circuit.elements}
    path = []
    for name in spec.path:
        path.append(name)
        if f"{name}.ro" in names and f"{name}.ro" not in spec.path:
            path.append(f"{name}.ro")
    return replace(spec, path=tuple(path))
