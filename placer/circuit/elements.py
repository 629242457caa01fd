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
from collections.abc import Callable, Iterable, Mapping
from typing import TYPE_CHECKING, Any
from dataclasses import dataclass, field, replace

import networkx as nx

from ..errors import SpecError, TopologyError, brief
from ..schema import CIRCUIT_KEYS, ELEMENT_KEYS, LIMITS, check_type, unknown_key
from ..units import format_value, parse_value

if TYPE_CHECKING:
    from .drawing import DrawingSpec

__all__ = [
    "KINDS",
    "KIND_UNITS",
    "VALUE_LIMITS",
    "RESERVED_SYMBOLS",
    "NODE_COUNT",
    "SYMBOL_PATTERN",
    "Element",
    "Circuit",
    "circuit_from_dict",
    "check_symbol",
    "check_part_value",
    "read_settings",
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
SYMBOL_PATTERN = re.compile(r"[A-Za-z][A-Za-z0-9_]*")
#: Names a part symbol may not take: ``s`` is the Laplace variable. (The
#: analysis's own symbols start with ``_``, which no part symbol can.)
RESERVED_SYMBOLS = frozenset({"s"})

#: The one part-kind → unit table: the unit of each kind's value (a
#: controlled source's or op-amp's gain has none; a ccvs's is ohm).
KIND_UNITS = {
    "resistor": "ohm",
    "capacitor": "F",
    "inductor": "H",
    "vsource": "V",
    "isource": "A",
    "vcvs": "",
    "vccs": "",
    "cccs": "",
    "ccvs": "ohm",
    "opamp": "",
}
#: Sane bounds of a part value by kind, SI units: wider than any part one
#: can buy, narrow enough that the numerics stay finite (common practice,
#: no source).
VALUE_LIMITS = {
    "resistor": (1e-3, 1e12),
    "capacitor": (1e-15, 10.0),
    "inductor": (1e-12, 1e3),
}
#: A controlled source's gain is 0 or of magnitude within these; a source's
#: value within ±SOURCE_LIMIT.
GAIN_LIMITS = (1e-12, 1e12)
SOURCE_LIMIT = 1e6


def check_symbol(name: object, *, where: str = "symbol") -> str:
    """Return `name` if it is a safe symbol name, else raise SpecError.

    >>> check_symbol("s", where="element 'C1'")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: element 'C1': symbol 's' is reserved for the Laplace variable; choose another name
    """
    if not isinstance(name, str) or not SYMBOL_PATTERN.fullmatch(name):
        raise SpecError(
            f"{where}: {brief(name)} is not a valid symbol name; "
            "use a letter followed by letters, digits or '_' (for example 'R1')"
        )
    if name in RESERVED_SYMBOLS:
        raise SpecError(f"{where}: symbol {name!r} is reserved for the Laplace variable; "
                        "choose another name")
    return name


def _span(low: float, high: float, unit: str) -> str:
    return f"{format_value(low, unit)} to {format_value(high, unit)}"


def check_part_value(kind: str, value: float, where: str, *, role: str = "value") -> float:
    """Return `value` if it is a sane `role` for an element of `kind`, else raise.

    Parameters
    ----------
    kind : str
        One of :data:`KINDS`.
    value : float
        In SI units (see :data:`KIND_UNITS`).
    where : str
        File and element, for the message.
    role : {"value", "gain", "gbw"}
        Which number of the element.

    Raises
    ------
    SpecError
        A non-finite number, or one outside :data:`VALUE_LIMITS` (R, L, C),
        :data:`GAIN_LIMITS` (controlled sources: 0 allowed, either sign),
        ±:data:`SOURCE_LIMIT` (sources) or the op-amp limits of
        :data:`placer.schema.LIMITS`.

    Examples
    --------
    >>> check_part_value("capacitor", 1e300, "c.toml: element 'C1'")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: c.toml: element 'C1': a capacitor value of 1e+300 is outside 1 fF to 10 F
    """
    shown = f"{value:g}" if isinstance(value, float) else brief(value)
    if not math.isfinite(value):
        raise SpecError(f"{where}: {role} {shown} is not a finite number")
    if kind == "opamp":
        limit = LIMITS["opamp_gain" if role == "gain" else "opamp_gbw"]
        low, high, unit = limit.low, limit.high, "Hz" if role == "gbw" else ""
    elif kind in VALUE_LIMITS:
        (low, high), unit = VALUE_LIMITS[kind], KIND_UNITS[kind]
    elif kind in CONTROLLED_KINDS:
        low, high = GAIN_LIMITS
        if value == 0 or low <= abs(value) <= high:
            return value
        raise SpecError(f"{where}: a {kind} gain of {shown} must be 0 or of magnitude "
                        f"{low:g} to {high:g}")
    else:
        if abs(value) <= SOURCE_LIMIT:
            return value
        raise SpecError(f"{where}: a {kind} value of {shown} lies beyond ±{SOURCE_LIMIT:g} "
                        f"{KIND_UNITS[kind]}")
    if not low <= value <= high:
        article = "an" if kind[0] in "aeiou" else "a"
        raise SpecError(f"{where}: {article} {kind} {role} of {shown} is outside "
                        f"{_span(low, high, unit)}")
    return value


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
    nodes: tuple[str, ...]
    value: float | None = None
    symbol: str | None = None
    gain: float | None = None
    gbw: float | None = None
    control: str | None = None

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name:
            raise TopologyError(f"element name {brief(self.name)} must be a non-empty string")
        where = f"element {brief(self.name)}"
        if not isinstance(self.nodes, (list, tuple)):
            raise TopologyError(f"{where}: nodes must be a list of node names, "
                                f"not {brief(self.nodes)}")
        object.__setattr__(self, "nodes", tuple(self.nodes))
        if not isinstance(self.kind, str) or self.kind not in NODE_COUNT:
            raise TopologyError(
                f"{where}: unknown kind {brief(self.kind)}; accepted kinds: {', '.join(KINDS)}"
            )
        expected = NODE_COUNT[self.kind]
        if len(self.nodes) != expected:
            raise TopologyError(
                f"{where}: a {self.kind} connects {expected} nodes, "
                f"but {len(self.nodes)} were given ({list(self.nodes)})"
            )
        for node in self.nodes:
            if not isinstance(node, str) or not node:
                raise TopologyError(f"{where}: node names must be non-empty strings, "
                                    f"not {brief(node)}")
        if self.symbol is not None:
            check_symbol(self.symbol, where=where)
        for label in ("value", "gain", "gbw"):
            number = getattr(self, label)
            if number is not None and (isinstance(number, bool) or not isinstance(number, (int, float))):
                raise TopologyError(
                    f"{where}: {label} must be a number in SI units, not {brief(number)} "
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
            if not isinstance(self.control, str):
                raise TopologyError(f"{where}: 'control' must be the name of a vsource, "
                                    f"not {brief(self.control)}")
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
    def parameter(self) -> float | None:
        """The number of the principal parameter (value or gain), or None."""
        if self.kind in CONTROLLED_KINDS:
            return self.gain
        return self.value

    @property
    def is_symbolic(self) -> bool:
        """True when the principal parameter is a symbol without a number."""
        return self.symbol is not None and self.parameter is None

    def with_parameter(self, number: float) -> Element:
        """Return a copy whose principal parameter is `number`."""
        if self.kind in CONTROLLED_KINDS:
            return replace(self, gain=float(number))
        return replace(self, value=float(number))

    def to_dict(self) -> dict[str, Any]:
        """The element as a JSON-ready dict in the schema of docs/architecture.md."""
        out: dict[str, Any] = {"name": self.name, "kind": self.kind, "nodes": list(self.nodes)}
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

    elements: tuple[Element, ...]
    reference: str = "gnd"
    input: str = "vin"
    output: str = "vout"
    name: str = ""
    _graph: nx.MultiGraph | None = field(default=None, repr=False, compare=False)
    #: How the circuit is drawn (a placer.circuit.drawing.DrawingSpec from its topology file), or None.
    drawing: DrawingSpec | None = field(default=None, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "elements", tuple(self.elements))
        self.validate()

    # -- views -------------------------------------------------------------
    @property
    def graph(self) -> nx.MultiGraph:
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
    def nodes(self) -> list[str]:
        """Node names in order of first appearance (reference first)."""
        seen: dict[str, None] = {self.reference: None}
        for element in self.elements:
            for node in element.nodes:
                seen.setdefault(node, None)
        seen.setdefault(self.input, None)
        seen.setdefault(self.output, None)
        return list(seen)

    def element(self, name: str) -> Element:
        """The element called `name` (KeyError naming it if absent)."""
        for element in self.elements:
            if element.name == name:
                return element
        raise KeyError(f"circuit has no element {name!r}")

    @property
    def symbols(self) -> tuple[str, ...]:
        """Names of the symbolic parameters, in element order."""
        out: list[str] = []
        for element in self.elements:
            if element.symbol is not None and element.is_symbolic and element.symbol not in out:
                out.append(element.symbol)
        return tuple(out)

    @property
    def opamp_count(self) -> int:
        return sum(1 for e in self.elements if e.kind == "opamp")

    def with_values(self, values: Mapping[str, float]) -> Circuit:
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

    def to_dict(self) -> dict[str, Any]:
        """The circuit as a JSON-ready dict in the schema of docs/architecture.md."""
        return {
            "reference": self.reference,
            "input": self.input,
            "output": self.output,
            "elements": [e.to_dict() for e in self.elements],
        }

    # -- validation --------------------------------------------------------
    def validate(self) -> None:
        """Check the schema's rules; raise TopologyError naming the culprit."""
        where = f"circuit {brief(self.name)}: " if self.name else ""
        for label in ("reference", "input", "output"):
            node = getattr(self, label)
            if not isinstance(node, str) or not node:
                raise TopologyError(f"{where}the {label} node must be a non-empty string, "
                                    f"not {brief(node)}")
        names = set()
        for element in self.elements:
            if element.name in names:
                raise TopologyError(f"{where}element name {brief(element.name)} is used twice")
            names.add(element.name)
        if not self.elements:
            raise TopologyError(f"{where}the circuit has no elements")
        vsources = {e.name for e in self.elements if e.kind == "vsource"}
        for element in self.elements:
            if element.kind in ("cccs", "ccvs") and element.control not in vsources:
                raise TopologyError(
                    f"{where}element {brief(element.name)}: control {brief(element.control)} "
                    "is not the name of a vsource in the circuit"
                )
        for label, node in (("input", self.input), ("output", self.output)):
            if node == self.reference:
                raise TopologyError(
                    f"{where}{label} node {brief(node)} cannot be the reference node; "
                    "name a node other than the reference"
                )
        touched: dict[str, int] = {}
        for element in self.elements:
            for node in element.nodes:
                touched[node] = touched.get(node, 0) + 1
        for label, node in (("input", self.input), ("output", self.output)):
            if node not in touched:
                raise TopologyError(
                    f"{where}{label} node {brief(node)} is not connected to any element"
                )
        if self.reference not in touched:
            raise TopologyError(
                f"{where}reference node {brief(self.reference)} is not connected to any element"
            )
        # The input source and the output detector count as one terminal each.
        for node, count in touched.items():
            extra = (node == self.input) + (node == self.output) + (node == self.reference)
            if count + extra < 2:
                owner = next(e.name for e in self.elements if node in e.nodes)
                raise TopologyError(
                    f"{where}element {brief(owner)} connects node {brief(node)}, "
                    "which nothing else touches"
                )
        graph = nx.MultiGraph(self.graph)
        graph.add_edge(self.input, self.reference)  # the input source
        reachable = nx.node_connected_component(graph, self.reference)
        for node in self.nodes:
            if node not in reachable:
                raise TopologyError(
                    f"{where}node {brief(node)} has no path to the reference {brief(self.reference)}"
                )
        _check_source_loops(self, where)


def _branches(element: Element, reference: str) -> list[tuple[str, str]]:
    """Pairs of nodes the element joins for connectivity purposes."""
    n = element.nodes
    if element.kind == "opamp":
        return [(n[2], reference), (n[0], n[1])]
    if element.kind in ("vcvs", "vccs"):
        return [(n[0], n[1]), (n[2], n[3])]
    return [(n[0], n[1])]


def _check_source_loops(circuit: Circuit, where: str) -> None:
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
                f"{where}element {brief(data['element'])} shorts its own output: "
                f"both ends on node {brief(a)}"
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


def circuit_from_dict(data: Any, *, source: str = "circuit",
                      parse: Callable[..., float] | None = None) -> Circuit:
    """Build a Circuit from a dict in the schema (TOML or JSON shape).

    Parameters
    ----------
    data : mapping
        ``elements`` (list of tables) and optional ``reference``, ``input``,
        ``output`` (:data:`placer.schema.CIRCUIT_KEYS`; nothing else).
    source : str
        Name of the file or field, used in error messages.
    parse : callable, optional
        ``parse(text, unit=..., field=...) -> float`` for values given as
        strings (:func:`placer.units.parse_value`), called with the unit of
        the element's kind (:data:`KIND_UNITS`); numbers pass through.

    Raises
    ------
    SpecError
        For a malformed table, naming `source` and the element: an unknown
        key, a value of the wrong type, a value in another kind's unit, a
        value outside its kind's bounds (:func:`check_part_value`).
    """
    if not isinstance(data, dict):
        raise SpecError(f"{source}: a circuit must be a table with 'elements'")
    nodes = {}
    for key, value in data.items():
        if key not in CIRCUIT_KEYS:
            raise unknown_key(key, CIRCUIT_KEYS, source)
        if key != "elements":
            value = _node_name(value)
            check_type(value, CIRCUIT_KEYS[key].type, f"{source}: {key}",
                       CIRCUIT_KEYS[key].description)
            nodes[key] = value
    raw = data.get("elements")
    if not isinstance(raw, list) or not raw:
        raise SpecError(f"{source}: 'elements' must be a non-empty list of element tables")
    elements = [_element_from_dict(item, index, source, parse) for index, item in enumerate(raw)]
    try:
        return Circuit(
            tuple(elements),
            reference=nodes.get("reference", "gnd"),
            input=nodes.get("input", "vin"),
            output=nodes.get("output", "vout"),
        )
    except SpecError as error:
        raise type(error)(f"{source}: {error}") from None


def _element_from_dict(item: Any, index: int, source: str,
                       parse: Callable[..., float] | None) -> Element:
    """One element table: keys, types, values in the kind's unit and bounds."""
    label = f"{source}: element {index + 1}"
    if not isinstance(item, dict):
        raise SpecError(f"{label}: each element must be a table")
    name = item.get("name")
    if not isinstance(name, str) or not name:
        raise SpecError(f"{label}: 'name' is missing or not a string")
    label = f"{source}: element {brief(name)}"
    for key in item:
        if key not in ELEMENT_KEYS:
            raise unknown_key(key, ELEMENT_KEYS, label, noun="field")
    kind = item.get("kind")
    check_type(kind, "name", f"{label}: kind", ELEMENT_KEYS["kind"].description)
    assert isinstance(kind, str)  # for the type checker: check_type made sure
    nodes = item.get("nodes")
    if not isinstance(nodes, list):
        raise SpecError(f"{label}: 'nodes' must be a list of node names")
    for key in ("symbol", "control"):
        if key in item:
            check_type(item[key], "string", f"{label}: {key}")
    numbers = {}
    for key in ("value", "gain", "gbw"):
        if key in item:
            numbers[key] = _number(item[key], f"{label} {key}", parse,
                                   "Hz" if key == "gbw" else KIND_UNITS.get(kind))
    try:
        element = Element(
            name=name,
            kind=kind,
            nodes=tuple(_node_name(n) for n in nodes),
            symbol=item.get("symbol"),
            control=item.get("control"),
            **numbers,
        )
    except SpecError as error:
        raise type(error)(f"{source}: {error}") from None
    if "value" in numbers and kind in CONTROLLED_KINDS + ("opamp",):
        raise SpecError(f"{label}: a {kind} takes 'gain', not 'value'")
    if "gain" in numbers and kind not in CONTROLLED_KINDS + ("opamp",):
        raise SpecError(f"{label}: a {kind} takes 'value', not 'gain'")
    for key, number in numbers.items():
        check_part_value(kind, number, label, role=key)
    return element


def _node_name(raw: Any) -> Any:
    """Node names are strings; a whole number (``0``, ``1``) is read as one."""
    return str(raw) if isinstance(raw, int) and not isinstance(raw, bool) else raw


def _number(raw: Any, field_name: str, parse: Callable[..., float] | None,
            unit: str | None = None) -> float:
    if isinstance(raw, bool):
        raise SpecError(f"{field_name}: expected a number, not {raw!r}")
    if isinstance(raw, (int, float)):
        return parse_value(raw, field=field_name)  # rejects inf and nan
    if isinstance(raw, str) and parse is not None:
        return parse(raw, unit=unit or None, field=field_name)
    raise SpecError(f"{field_name}: expected a number or a string such as '10k', "
                    f"not {brief(raw)}")


def read_settings(circuit: Circuit, items: Iterable[str], *, option: str = "--set") -> dict:
    """Read ``PART=VALUE`` texts for a circuit's symbolic parts.

    Each value is read in the unit of its part's kind (``C1=10n`` or
    ``C1=10 nF``, not ``C1=10 kHz``) and must be a sane value for it
    (:func:`check_part_value`); a controlled source's gain must not be 0.

    Parameters
    ----------
    circuit : Circuit
    items : iterable of str
        ``"R1=10k"`` texts.
    option : str
        The option's name, for messages.

    Returns
    -------
    dict
        Symbol → value in SI units.

    Raises
    ------
    SpecError
        A text without ``=``, a name that is not a symbolic part, a value
        that cannot be read, is in another unit, or is out of bounds.

    Examples
    --------
    >>> rc = circuit_from_dict({"elements": [
    ...     {"name": "R1", "kind": "resistor", "nodes": ["vin", "vout"], "symbol": "R1"},
    ...     {"name": "C1", "kind": "capacitor", "nodes": ["vout", "gnd"], "symbol": "C1"}]})
    >>> read_settings(rc, ["R1=10k", "C1 = 1 nF"])
    {'R1': 10000.0, 'C1': 1e-09}
    >>> read_settings(rc, ["R1=-1k"])
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: --set R1: a resistor value of -1000 is outside 1 mΩ to 1 TΩ
    """
    kinds: dict[str, str] = {}
    for element in circuit.elements:
        if element.symbol is not None and element.is_symbolic:
            kinds.setdefault(element.symbol, element.kind)
    values = {}
    for item in items:
        if "=" not in item:
            raise SpecError(f"{option} {brief(item)}: expected PART=VALUE, for example R1=10k")
        name, text = (part.strip() for part in item.split("=", 1))
        if name not in kinds:
            raise SpecError(
                f"{option} {brief(name, quote=False)}: the circuit has no symbolic part "
                f"{brief(name)} (parts: {', '.join(kinds) or 'none'})"
            )
        kind = kinds[name]
        where = f"{option} {name}"
        value = parse_value(text, unit=KIND_UNITS[kind] or None, field=where)
        if kind in CONTROLLED_KINDS and value == 0:
            raise SpecError(f"{where}: a {kind} gain of 0 leaves the output without the input")
        values[name] = check_part_value(kind, value, where)
    return values
