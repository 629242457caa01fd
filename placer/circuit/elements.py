"""Circuit elements and circuits, in the one schema placer uses everywhere.

A circuit is a list of elements plus three node names: the reference (0 V),
the input (driven by an ideal voltage source against the reference) and the
output (whose voltage is the response). The same schema appears in topology
files, in user circuit files and in the ``circuit`` field of result JSON.

Examples
--------
>>> r = Element("R1", "resistor", ("vin", "vout"), value=1e3)
>>> c = Element("C1", "capacitor", ("vout", "gnd"), value=1e-6)
>>> circuit = Circuit((r, c))
>>> sorted(circuit.nodes)
['gnd', 'vin', 'vout']
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field, replace

import networkx as nx

from ..errors import SpecError, TopologyError

__all__ = [
    "KINDS",
    "NODE_COUNT",
    "SYMBOL_PATTERN",
    "Element",
    "Circuit",
    "circuit_from_dict",
    "check_symbol",
]

#: Number of nodes each element kind connects, in schema order.
NODE_COUNT = {
    "resistor": 2,
    "capacitor": 2,
    "inductor": 2,
    "vsource": 2,
    "isource": 2,
    "vcvs": 4,
    "vccs": 4,
    "cccs": 2,
    "ccvs": 2,
    "opamp": 3,
}
KINDS = tuple(NODE_COUNT)
PASSIVE_KINDS = ("resistor", "capacitor", "inductor")
CONTROLLED_KINDS = ("vcvs", "vccs", "cccs", "ccvs")
SYMBOL_PATTERN = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")


def check_symbol(name, *, where="symbol"):
    """Return `name` if it is a safe symbol name, else raise SpecError."""
    if not isinstance(name, str) or not SYMBOL_PATTERN.match(name):
        raise SpecError(
            f"{where}: {name!r} is not a valid symbol name; "
            "use a letter followed by letters, digits or '_' (for example 'R1')"
        )
    return name


@dataclass(frozen=True)
class Element:
    """One circuit element.

    Parameters
    ----------
    name : str
        Unique name in the circuit.
    kind : str
        One of :data:`KINDS`.
    nodes : tuple of str
        Node names in the schema's order for the kind.
    value : float, optional
        Ohm, farad, henry, volt or ampere for two-terminal kinds.
    symbol : str, optional
        Symbolic name of the principal parameter (the value of R, L, C, or
        the gain of a controlled source) when it has no number yet.
    gain : float, optional
        Gain of a controlled source; DC open-loop gain (V/V) of an op-amp.
    gbw : float, optional
        Gain-bandwidth product of an op-amp in hertz.
    control : str, optional
        Name of the vsource whose current controls a cccs or ccvs.
    """

    name: str
    kind: str
    nodes: tuple
    value: float | None = None
    symbol: str | None = None
    gain: float | None = None
    gbw: float | None = None
    control: str | None = None

    def __post_init__(self):
        object.__setattr__(self, "nodes", tuple(self.nodes))
        where = f"element {self.name!r}"
        if not isinstance(self.name, str) or not self.name:
            raise TopologyError(f"element name {self.name!r} must be a non-empty string")
        if self.kind not in NODE_COUNT:
            raise TopologyError(
                f"{where}: unknown kind {self.kind!r}; accepted kinds: {', '.join(KINDS)}"
            )
        expected = NODE_COUNT[self.kind]
        if len(self.nodes) != expected:
            raise TopologyError(
                f"{where}: a {self.kind} connects {expected} nodes, "
                f"but {len(self.nodes)} were given ({list(self.nodes)})"
            )
        for node in self.nodes:
            if not isinstance(node, str) or not node:
                raise TopologyError(f"{where}: node names must be non-empty strings, not {node!r}")
        if self.symbol is not None:
            check_symbol(self.symbol, where=where)
        for label in ("value", "gain", "gbw"):
            number = getattr(self, label)
            if number is not None and (isinstance(number, bool) or not isinstance(number, (int, float))):
                raise TopologyError(
                    f"{where}: {label} must be a number in SI units, not {number!r} "
                    "(strings such as '10k' are read by circuit_from_dict)"
                )
        if self.kind in PASSIVE_KINDS:
            if self.value is None and self.symbol is None:
                raise TopologyError(
                    f"{where}: {'an' if self.kind[0] in 'aeiou' else 'a'} {self.kind} needs a value or a symbol"
                )
            if self.value is not None and not (math.isfinite(self.value) and self.value > 0):
                raise TopologyError(
                    f"{where}: {'an' if self.kind[0] in 'aeiou' else 'a'} {self.kind} value must be "
                    "a positive finite number, "
                    f"not {self.value!r}"
                )
        if self.kind in ("vsource", "isource") and self.value is None and self.symbol is None:
            object.__setattr__(self, "value", 0.0)
        if self.kind in CONTROLLED_KINDS and self.gain is None and self.symbol is None:
            raise TopologyError(f"{where}: a {self.kind} needs a gain or a symbol")
        if self.kind in ("cccs", "ccvs"):
            if not self.control:
                raise TopologyError(
                    f"{where}: a {self.kind} needs 'control', the name of a vsource"
                )
        elif self.control is not None:
            raise TopologyError(f"{where}: only cccs and ccvs take 'control'")
        if self.kind == "opamp":
            if self.gain is not None and not (math.isfinite(self.gain) and self.gain > 0):
                raise TopologyError(
                    f"{where}: op-amp DC gain must be a positive number (V/V), not {self.gain!r}"
                )
            if self.gbw is not None and not (math.isfinite(self.gbw) and self.gbw > 0):
                raise TopologyError(
                    f"{where}: op-amp gbw must be a positive frequency in Hz, not {self.gbw!r}"
                )
        elif self.gbw is not None:
            raise TopologyError(f"{where}: only op-amps take 'gbw'")

    @property
    def parameter(self):
        """The number of the principal parameter (value or gain), or None."""
        if self.kind in CONTROLLED_KINDS:
            return self.gain
        return self.value

    @property
    def is_symbolic(self):
        """True when the principal parameter is a symbol without a number."""
        return self.symbol is not None and self.parameter is None

    def with_parameter(self, number):
        """Return a copy whose principal parameter is `number`."""
        if self.kind in CONTROLLED_KINDS:
            return replace(self, gain=float(number))
        return replace(self, value=float(number))

    def to_dict(self):
        """The element as a JSON-ready dict in the DESIGN.md schema."""
        out = {"name": self.name, "kind": self.kind, "nodes": list(self.nodes)}
        if self.kind in CONTROLLED_KINDS:
            if self.gain is not None:
                out["gain"] = float(self.gain)
        elif self.kind == "opamp":
            if self.gain is not None:
                out["gain"] = float(self.gain)
            if self.gbw is not None:
                out["gbw"] = float(self.gbw)
        elif self.value is not None:
            out["value"] = float(self.value)
        if self.is_symbolic:
            out["symbol"] = self.symbol
        if self.control is not None:
            out["control"] = self.control
        return out


@dataclass(frozen=True)
class Circuit:
    """A validated circuit: elements and the reference, input, output nodes.

    Raises
    ------
    TopologyError
        When the circuit breaks a rule of the schema (see :meth:`validate`).
    """

    elements: tuple
    reference: str = "gnd"
    input: str = "vin"
    output: str = "vout"
    name: str = ""
    _graph: object = field(default=None, repr=False, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "elements", tuple(self.elements))
        self.validate()

    # -- views -------------------------------------------------------------
    @property
    def graph(self):
        """The circuit as a networkx MultiGraph: nodes, one edge per terminal pair.

        Every element adds edges between the nodes it joins electrically;
        an op-amp joins its output to the reference and its two inputs to
        each other (the nullator), a controlled source its output port and
        its control port separately. Edge data: ``element`` (name), ``kind``.
        """
        if self._graph is None:
            graph = nx.MultiGraph()
            graph.add_nodes_from(self.nodes)
            for element in self.elements:
                for a, b in _branches(element, self.reference):
                    graph.add_edge(a, b, element=element.name, kind=element.kind)
            object.__setattr__(self, "_graph", graph)
        return self._graph

    @property
    def nodes(self):
        """Node names in order of first appearance (reference first)."""
        seen = {self.reference: None}
        for element in self.elements:
            for node in element.nodes:
                seen.setdefault(node, None)
        seen.setdefault(self.input, None)
        seen.setdefault(self.output, None)
        return list(seen)

    def element(self, name):
        """The element called `name` (KeyError naming it if absent)."""
        for element in self.elements:
            if element.name == name:
                return element
        raise KeyError(f"circuit has no element {name!r}")

    @property
    def symbols(self):
        """Names of the symbolic parameters, in element order."""
        out = []
        for element in self.elements:
            if element.is_symbolic and element.symbol not in out:
                out.append(element.symbol)
        return tuple(out)

    @property
    def opamp_count(self):
        return sum(1 for e in self.elements if e.kind == "opamp")

    def with_values(self, values):
        """Return a copy with numbers for the symbols in `values`.

        Parameters
        ----------
        values : mapping of str to float
            Symbol name → number in SI units (ohm, farad, henry, V/V).
        """
        elements = []
        for element in self.elements:
            if element.symbol is not None and element.symbol in values:
                element = element.with_parameter(values[element.symbol])
            elements.append(element)
        return replace(self, elements=tuple(elements), _graph=None)

    def to_dict(self):
        """The circuit as a JSON-ready dict in the DESIGN.md schema."""
        return {
            "reference": self.reference,
            "input": self.input,
            "output": self.output,
            "elements": [e.to_dict() for e in self.elements],
        }

    # -- validation --------------------------------------------------------
    def validate(self):
        """Check the schema's rules; raise TopologyError naming the culprit."""
        where = f"circuit {self.name!r}: " if self.name else ""
        names = set()
        for element in self.elements:
            if element.name in names:
                raise TopologyError(f"{where}element name {element.name!r} is used twice")
            names.add(element.name)
        if not self.elements:
            raise TopologyError(f"{where}the circuit has no elements")
        vsources = {e.name for e in self.elements if e.kind == "vsource"}
        for element in self.elements:
            if element.kind in ("cccs", "ccvs") and element.control not in vsources:
                raise TopologyError(
                    f"{where}element {element.name!r}: control {element.control!r} "
                    "is not the name of a vsource in the circuit"
                )
        for label, node in (("input", self.input), ("output", self.output)):
            if node == self.reference:
                raise TopologyError(
                    f"{where}{label} node {node!r} cannot be the reference node; "
                    "name a node other than the reference"
                )
        touched = {}
        for element in self.elements:
            for node in element.nodes:
                touched[node] = touched.get(node, 0) + 1
        for label, node in (("input", self.input), ("output", self.output)):
            if node not in touched:
                raise TopologyError(
                    f"{where}{label} node {node!r} is not connected to any element"
                )
        if self.reference not in touched:
            raise TopologyError(
                f"{where}reference node {self.reference!r} is not connected to any element"
            )
        # The input source and the output detector count as one terminal each.
        for node, count in touched.items():
            extra = (node == self.input) + (node == self.output) + (node == self.reference)
            if count + extra < 2:
                owner = next(e.name for e in self.elements if node in e.nodes)
                raise TopologyError(
                    f"{where}element {owner!r} connects node {node!r}, "
                    "which nothing else touches"
                )
        graph = nx.MultiGraph(self.graph)
        graph.add_edge(self.input, self.reference)  # the input source
        reachable = nx.node_connected_component(graph, self.reference)
        for node in self.nodes:
            if node not in reachable:
                raise TopologyError(
                    f"{where}node {node!r} has no path to the reference {self.reference!r}"
                )
        _check_source_loops(self, where)


def _branches(element, reference):
    """Pairs of nodes the element joins for connectivity purposes."""
    n = element.nodes
    if element.kind == "opamp":
        return [(n[2], reference), (n[0], n[1])]
    if element.kind in ("vcvs", "vccs"):
        return [(n[0], n[1]), (n[2], n[3])]
    return [(n[0], n[1])]


def _check_source_loops(circuit, where):
    """Reject a loop made only of voltage-defining branches.

    Voltage sources, vcvs and ccvs outputs, op-amp outputs (to the
    reference) and the implicit input source each fix a branch voltage;
    a loop of them over-determines the node voltages.
    """
    graph = nx.MultiGraph()
    graph.add_edge(circuit.input, circuit.reference, element="the input source")
    for element in circuit.elements:
        n = element.nodes
        if element.kind in ("vsource", "vcvs", "ccvs"):
            graph.add_edge(n[0], n[1], element=element.name)
        elif element.kind == "opamp":
            graph.add_edge(n[2], circuit.reference, element=element.name)
    for a, b, key, data in graph.edges(keys=True, data=True):
        if a == b:
            raise TopologyError(
                f"{where}element {data['element']!r} shorts its own output: "
                f"both ends on node {a!r}"
            )
    forest = nx.Graph()
    for a, b, data in graph.edges(data=True):
        if forest.has_node(a) and forest.has_node(b) and nx.has_path(forest, a, b):
            path = nx.shortest_path(forest, a, b)
            members = [forest.edges[u, v]["element"] for u, v in zip(path, path[1:])]
            members.append(data["element"])
            raise TopologyError(
                f"{where}a loop of voltage sources or op-amp outputs: "
                + ", ".join(repr(m) for m in members)
            )
        forest.add_edge(a, b, element=data["element"])


def circuit_from_dict(data, *, source="circuit", parse=None):
    """Build a Circuit from a dict in the schema (TOML or JSON shape).

    Parameters
    ----------
    data : mapping
        ``elements`` (list of tables) and optional ``reference``, ``input``,
        ``output``.
    source : str
        Name of the file or field, used in error messages.
    parse : callable, optional
        ``parse(text, field=...) -> float`` for values given as strings
        (placer.units.parse_value); numbers pass through.

    Raises
    ------
    SpecError
        For a malformed table, naming `source` and the element.
    """
    if not isinstance(data, dict):
        raise SpecError(f"{source}: a circuit must be a table with 'elements'")
    raw = data.get("elements")
    if not isinstance(raw, list) or not raw:
        raise SpecError(f"{source}: 'elements' must be a non-empty list of element tables")
    allowed = {"name", "kind", "nodes", "value", "symbol", "gain", "gbw", "control"}
    elements = []
    for index, item in enumerate(raw):
        label = f"{source}: element {index + 1}"
        if not isinstance(item, dict):
            raise SpecError(f"{label}: each element must be a table")
        name = item.get("name")
        if not isinstance(name, str) or not name:
            raise SpecError(f"{label}: 'name' is missing or not a string")
        label = f"{source}: element {name!r}"
        unknown = sorted(set(item) - allowed)
        if unknown:
            raise SpecError(
                f"{label}: unknown field {unknown[0]!r}; accepted: {', '.join(sorted(allowed))}"
            )
        kind = item.get("kind")
        nodes = item.get("nodes")
        if not isinstance(nodes, list):
            raise SpecError(f"{label}: 'nodes' must be a list of node names")
        numbers = {}
        for key in ("value", "gain", "gbw"):
            if key in item:
                numbers[key] = _number(item[key], f"{label} {key}", parse)
        symbol = item.get("symbol")
        try:
            elements.append(
                Element(
                    name=name,
                    kind=kind,
                    nodes=tuple(str(n) if isinstance(n, (int,)) else n for n in nodes),
                    symbol=symbol,
                    control=item.get("control"),
                    **numbers,
                )
            )
        except SpecError as error:
            raise type(error)(f"{source}: {error}") from None
    try:
        return Circuit(
            tuple(elements),
            reference=str(data.get("reference", "gnd")),
            input=str(data.get("input", "vin")),
            output=str(data.get("output", "vout")),
        )
    except SpecError as error:
        raise type(error)(f"{source}: {error}") from None


def _number(raw, field_name, parse):
    if isinstance(raw, bool):
        raise SpecError(f"{field_name}: expected a number, not {raw!r}")
    if isinstance(raw, (int, float)):
        return float(raw)
    if isinstance(raw, str) and parse is not None:
        return parse(raw, field=field_name)
    raise SpecError(f"{field_name}: expected a number or a string such as '10k', not {raw!r}")
