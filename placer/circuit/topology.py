"""Topologies: a circuit with symbolic parts plus what a solver needs to know.

A topology file is TOML in placer's own format (docs/topology-format.md):
metadata at top level, the DESIGN.md element schema in ``[[elements]]``,
a part carrying ``symbol`` instead of ``value`` where the solver chooses it.

Examples
--------
>>> text = '''
... id = "rc-demo"
... title = "RC low-pass"
... response = "lowpass"
... order = 1
... [[elements]]
... name = "R1"
... kind = "resistor"
... nodes = ["vin", "vout"]
... symbol = "R1"
... [[elements]]
... name = "C1"
... kind = "capacitor"
... nodes = ["vout", "gnd"]
... symbol = "C1"
... '''
>>> topology = topology_from_text(text, source="demo")
>>> topology.free
('R1', 'C1')
>>> topology.kind_of("C1")
'capacitor'
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path

from .elements import Circuit, check_symbol, circuit_from_dict
from ..errors import SpecError, TopologyError
from ..units import parse_value

__all__ = [
    "RESPONSES",
    "DEFAULT_RANGES",
    "Constraint",
    "Topology",
    "parse_constraint",
    "topology_from_text",
    "topology_from_dict",
    "load_topology",
]

RESPONSES = ("lowpass", "highpass", "bandpass", "notch", "allpass", "compensator")

#: Default value range of a free part by element kind (SI units).
DEFAULT_RANGES = {
    "resistor": (1e3, 1e6),
    "capacitor": (100e-12, 10e-6),
    "inductor": (1e-6, 1.0),
    "vcvs": (1.0, 100.0),
    "vccs": (1e-6, 1.0),
    "cccs": (1.0, 100.0),
    "ccvs": (1.0, 1e6),
}

_UNITS = {"resistor": "ohm", "capacitor": "F", "inductor": "H"}
_CONSTRAINT = re.compile(
    r"^\s*([A-Za-z][A-Za-z0-9_]*)\s*=\s*(?:([0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)\s*\*\s*)?"
    r"([A-Za-z][A-Za-z0-9_]*)\s*$"
)
_ID = re.compile(r"^[a-z0-9][a-z0-9-]*$")


@dataclass(frozen=True)
class Constraint:
    """``part = factor * source``: one part tied to another."""

    part: str
    factor: float
    source: str

    def __str__(self):
        if self.factor == 1.0:
            return f"{self.part} = {self.source}"
        return f"{self.part} = {self.factor:g}*{self.source}"


def parse_constraint(text, *, where="constraints"):
    """Parse ``"C1 = C2"`` or ``"R2 = 4*R1"`` (no eval).

    >>> parse_constraint("R2 = 4*R1")
    Constraint(part='R2', factor=4.0, source='R1')
    """
    match = _CONSTRAINT.match(text) if isinstance(text, str) else None
    if not match:
        raise SpecError(
            f"{where}: cannot read constraint {text!r}; accepted forms: 'C1 = C2', 'R2 = 4*R1'"
        )
    part, factor, source = match.groups()
    factor = float(factor) if factor else 1.0
    if factor <= 0:
        raise SpecError(f"{where}: constraint {text!r} needs a positive factor")
    if part == source:
        raise SpecError(f"{where}: constraint {text!r} ties a part to itself")
    return Constraint(part, factor, source)


@dataclass(frozen=True)
class Topology:
    """A circuit with symbolic parts and its metadata.

    Attributes
    ----------
    id, title : str
    response : str
        One of :data:`RESPONSES`.
    order : int
        Denominator order with ideal op-amps.
    circuit : Circuit
        Parts the solver chooses carry a symbol and no value.
    free : tuple of str
        Symbols the solver may move.
    ranges : dict
        Symbol → (low, high) in SI units, for every free symbol.
    values : dict
        Symbol → number for symbols that are fixed by default.
    constraints : tuple of Constraint
    family : str
        Sub-kind for compensators (``type2``, ``pid`` …), else "".
    inverting : bool
        True when the pass-band gain is negative.
    """

    id: str
    title: str
    response: str
    order: int
    circuit: Circuit
    free: tuple
    ranges: dict = field(default_factory=dict)
    values: dict = field(default_factory=dict)
    constraints: tuple = ()
    family: str = ""
    inverting: bool = False
    description: str = ""
    formula: str = ""
    path: str = ""

    @property
    def symbols(self):
        """Every symbol of the circuit, in element order."""
        return self.circuit.symbols

    def kind_of(self, symbol):
        """Element kind that carries `symbol`."""
        for element in self.circuit.elements:
            if element.symbol == symbol:
                return element.kind
        raise KeyError(f"topology {self.id!r} has no part {symbol!r}")

    @property
    def part_count(self):
        """Resistors, capacitors and inductors in the circuit."""
        return sum(1 for e in self.circuit.elements if e.kind in _UNITS)

    @property
    def opamp_count(self):
        return self.circuit.opamp_count

    def with_ranges(self, by_kind):
        """Copy with the range of every free part of a kind replaced.

        Parameters
        ----------
        by_kind : mapping
            Element kind → (low, high), for example ``{"resistor": (1e3, 1e6)}``.
        """
        ranges = dict(self.ranges)
        for symbol in self.free:
            kind = self.kind_of(symbol)
            if kind in by_kind:
                ranges[symbol] = tuple(by_kind[kind])
        return replace(self, ranges=ranges)


def topology_from_text(text, *, source="topology"):
    """Parse topology TOML text; `source` names it in error messages."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise TopologyError(f"{source}: not valid TOML ({error})") from None
    return topology_from_dict(data, source=source)


def load_topology(path):
    """Read a topology file from any path.

    Raises
    ------
    SpecError
        If the file is missing, unreadable or malformed (the message names it).
    """
    path = Path(path)
    if not path.is_file():
        raise SpecError(f"topology file {str(path)!r} does not exist")
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as error:
        raise SpecError(f"topology file {str(path)!r} cannot be read ({error})") from None
    topology = topology_from_text(text, source=str(path))
    return replace(topology, path=str(path))


def topology_from_dict(data, *, source="topology"):
    """Build a Topology from parsed TOML (see :func:`topology_from_text`)."""
    allowed = {
        "id", "title", "response", "order", "family", "inverting", "reference",
        "input", "output", "free", "constraints", "description", "formula",
        "ranges", "values", "elements",
    }
    unknown = sorted(set(data) - allowed)
    if unknown:
        raise TopologyError(
            f"{source}: unknown key {unknown[0]!r}; accepted keys: {', '.join(sorted(allowed))}"
        )
    for key in ("id", "title", "response", "order", "elements"):
        if key not in data:
            raise TopologyError(f"{source}: missing required key {key!r}")
    topology_id = data["id"]
    if not isinstance(topology_id, str) or not _ID.match(topology_id):
        raise TopologyError(
            f"{source}: id {topology_id!r} must use lowercase letters, digits and '-'"
        )
    response = data["response"]
    if response not in RESPONSES:
        raise TopologyError(
            f"{source}: unknown response kind {response!r}; accepted: {', '.join(RESPONSES)}"
        )
    order = data["order"]
    if not isinstance(order, int) or isinstance(order, bool) or not 0 <= order <= 24:
        raise TopologyError(f"{source}: order must be an integer 0–24, not {order!r}")
    circuit = circuit_from_dict(data, source=source, parse=parse_value)
    circuit = replace(circuit, name=topology_id)
    symbols = circuit.symbols
    values = {}
    for symbol, raw in dict(data.get("values", {})).items():
        if symbol not in symbols:
            raise TopologyError(f"{source}: values: {symbol!r} is not a part of the topology")
        values[symbol] = _number(raw, f"{source}: values.{symbol}")
    free = data.get("free")
    if free is None:
        free = [s for s in symbols if s not in values]
    if not isinstance(free, list) or not all(isinstance(s, str) for s in free):
        raise TopologyError(f"{source}: 'free' must be a list of part symbols")
    for symbol in free:
        if symbol not in symbols:
            raise TopologyError(
                f"{source}: free part {symbol!r} is not a symbol of any element"
            )
    for symbol in symbols:
        if symbol not in free and symbol not in values:
            raise TopologyError(
                f"{source}: part {symbol!r} is neither free nor given a value in [values]"
            )
    kinds = {e.symbol: e.kind for e in circuit.elements if e.symbol}
    ranges = {}
    raw_ranges = dict(data.get("ranges", {}))
    for symbol in raw_ranges:
        if symbol not in symbols:
            raise TopologyError(f"{source}: ranges: {symbol!r} is not a part of the topology")
    for symbol in free:
        if symbol in raw_ranges:
            raw = raw_ranges[symbol]
            if not isinstance(raw, list) or len(raw) != 2:
                raise TopologyError(f"{source}: ranges.{symbol} must be [low, high]")
            low = _number(raw[0], f"{source}: ranges.{symbol}")
            high = _number(raw[1], f"{source}: ranges.{symbol}")
        elif kinds[symbol] in DEFAULT_RANGES:
            low, high = DEFAULT_RANGES[kinds[symbol]]
        else:
            raise TopologyError(
                f"{source}: free part {symbol!r} ({kinds[symbol]}) has no range; "
                f"give ranges.{symbol} = [low, high]"
            )
        if not (0 < low < high):
            raise TopologyError(
                f"{source}: ranges.{symbol} must satisfy 0 < low < high, not [{low}, {high}]"
            )
        ranges[symbol] = (low, high)
    constraints = []
    for text in data.get("constraints", []):
        constraint = parse_constraint(text, where=f"{source}: constraints")
        for name in (constraint.part, constraint.source):
            if name not in free:
                raise TopologyError(
                    f"{source}: constraint {text!r} names {name!r}, which is not a free part"
                )
        constraints.append(constraint)
    for key in ("title", "description", "formula", "family"):
        if key in data and not isinstance(data[key], str):
            raise TopologyError(f"{source}: {key!r} must be a string")
    return Topology(
        id=topology_id,
        title=data["title"],
        response=response,
        order=order,
        circuit=circuit,
        free=tuple(check_symbol(s) for s in free),
        ranges=ranges,
        values=values,
        constraints=tuple(constraints),
        family=data.get("family", ""),
        inverting=bool(data.get("inverting", False)),
        description=data.get("description", ""),
        formula=data.get("formula", ""),
        path="",
    )


def _number(raw, where):
    if isinstance(raw, bool):
        raise TopologyError(f"{where}: expected a number, not {raw!r}")
    if isinstance(raw, (int, float)):
        return float(raw)
    if isinstance(raw, str):
        return parse_value(raw, field=where)
    raise TopologyError(f"{where}: expected a number or a string such as '10k', not {raw!r}")
