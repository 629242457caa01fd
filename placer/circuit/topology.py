"""Topologies: a circuit with symbolic parts plus what a solver needs to know.

A topology file is TOML in placer's own format (docs/topology-format.md):
metadata at top level, the element schema of docs/architecture.md in ``[[elements]]``,
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

import math
import re
import tomllib
from collections.abc import Mapping, Sequence
from typing import Any, cast
from dataclasses import dataclass, field, replace
from pathlib import Path

from .elements import KIND_UNITS, Circuit, check_part_value, check_symbol, circuit_from_dict
from ..errors import SpecError, TopologyError, brief, brief_path
from ..schema import CIRCUIT_KEYS, TOPOLOGY_KEYS, check_type, read_toml, unknown_key
from .drawing import DrawingSpec, drawing_from_table
from ..units import parse_value

__all__ = [
    "RESPONSES",
    "NOTCH_KINDS",
    "DEFAULT_RANGES",
    "Constraint",
    "Topology",
    "parse_constraint",
    "topology_from_text",
    "topology_from_dict",
    "load_topology",
]

RESPONSES = ("lowpass", "highpass", "bandpass", "notch", "allpass", "compensator")
#: The notch sections a ``response = "notch"`` topology may realise (its
#: ``notch_kinds``; default the symmetric notch alone).
NOTCH_KINDS = ("notch", "lowpass-notch", "highpass-notch")

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

_PASSIVE = ("resistor", "capacitor", "inductor")
_CONSTRAINT = re.compile(
    r"^\s*([A-Za-z][A-Za-z0-9_]*)\s*=\s*(?:([0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)\s*\*\s*)?"
    r"([A-Za-z][A-Za-z0-9_]*)\s*$"
)
_ID = re.compile(r"[a-z0-9][a-z0-9-]*")


@dataclass(frozen=True)
class Constraint:
    """``part = factor * source``: one part tied to another."""

    part: str
    factor: float
    source: str

    def __str__(self) -> str:
        if self.factor == 1.0:
            return f"{self.part} = {self.source}"
        return f"{self.part} = {self.factor:g}*{self.source}"


def parse_constraint(text: object, *, where: str = "constraints") -> Constraint:
    """Parse ``"C1 = C2"`` or ``"R2 = 4*R1"`` (no eval).

    >>> parse_constraint("R2 = 4*R1")
    Constraint(part='R2', factor=4.0, source='R1')
    """
    match = _CONSTRAINT.match(text) if isinstance(text, str) else None
    if not match:
        raise SpecError(
            f"{where}: cannot read constraint {brief(text)}; accepted forms: 'C1 = C2', "
            "'R2 = 4*R1'"
        )
    part, factor, source = match.groups()
    factor = float(factor) if factor else 1.0
    if not (math.isfinite(factor) and 1e-6 <= factor <= 1e6):
        raise SpecError(f"{where}: constraint {brief(text)} needs a factor from 1e-06 to 1e+06")
    if part == source:
        raise SpecError(f"{where}: constraint {brief(text)} ties a part to itself")
    for name in (part, source):
        check_symbol(name, where=f"{where}: constraint {brief(text)}")
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
    notch_kinds : tuple of str
        For a notch topology, the notch sections it can realise (of
        :data:`NOTCH_KINDS`): ``("notch",)`` when its zeros can only sit at
        its pole frequency; empty for the other responses.
    capacitor_ratio_per_q2 : float or None
        k when the stage needs its two free capacitors k·Q² apart
        (C1/C2 ≥ 4Q² for a unity-gain Sallen–Key); None: no such need.
    gbw_rule : bool
        True when the rule GBW ≥ 100·f0·Q is stated for this kind of stage
        (Sallen–Key, multiple feedback): the comparison calls it common
        practice there, a rule of thumb elsewhere.
    """

    id: str
    title: str
    response: str
    order: int
    circuit: Circuit
    free: tuple[str, ...]
    ranges: dict[str, tuple[float, float]] = field(default_factory=dict)
    values: dict[str, float] = field(default_factory=dict)
    constraints: tuple[Constraint, ...] = ()
    family: str = ""
    inverting: bool = False
    description: str = ""
    formula: str = ""
    path: str = ""
    drawing: DrawingSpec | None = None   # from the file's [drawing] table
    notch_kinds: tuple[str, ...] = ()
    capacitor_ratio_per_q2: float | None = None
    gbw_rule: bool = False

    @property
    def symbols(self) -> tuple[str, ...]:
        """Every symbol of the circuit, in element order."""
        return self.circuit.symbols

    def kind_of(self, symbol: str) -> str:
        """Element kind that carries `symbol`."""
        for element in self.circuit.elements:
            if element.symbol == symbol:
                return element.kind
        raise KeyError(f"topology {self.id!r} has no part {symbol!r}")

    @property
    def part_count(self) -> int:
        """Resistors, capacitors and inductors in the circuit."""
        return sum(1 for e in self.circuit.elements if e.kind in _PASSIVE)

    @property
    def opamp_count(self) -> int:
        return self.circuit.opamp_count

    def with_ranges(self, by_kind: Mapping[str, tuple[float, float]]) -> Topology:
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
                ranges[symbol] = cast(tuple[float, float], tuple(by_kind[kind]))
        return replace(self, ranges=ranges)


def topology_from_text(text: str, *, source: str = "topology") -> Topology:
    """Parse topology TOML text; `source` names it in error messages."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise TopologyError(f"{source}: not valid TOML ({error})") from None
    except RecursionError:
        raise TopologyError(f"{source}: arrays or tables nested too deeply") from None
    return topology_from_dict(data, source=source)


def load_topology(path: str | Path) -> Topology:
    """Read a topology file from any path.

    Raises
    ------
    SpecError
        If the file is missing, unreadable or malformed (the message names it).
    """
    data = read_toml(path, what="topology file")
    topology = topology_from_dict(data, source=brief_path(path))
    return replace(topology, path=str(path))


def topology_from_dict(data: Any, *, source: str = "topology") -> Topology:
    """Build a Topology from parsed TOML (see :func:`topology_from_text`).

    Raises
    ------
    TopologyError
        An unknown key (the accepted ones listed), a value of the wrong
        type, a missing key, a part value or range in another kind's unit,
        out of bounds or not finite, a constraint on a part that is not free.
    """
    _check_keys(data, source)
    topology_id, response, order = _heading(data, source)
    circuit = circuit_from_dict({k: data[k] for k in CIRCUIT_KEYS if k in data},
                                source=source, parse=parse_value)
    circuit = replace(circuit, name=topology_id)
    symbols = circuit.symbols
    kinds = {e.symbol: e.kind for e in circuit.elements if e.symbol}
    values = _part_values(data, symbols, kinds, source)
    free = _free_parts(data, symbols, values, source)
    ranges = _ranges(data.get("ranges", {}), free, symbols, kinds, source)
    constraints = _constraints(data, free, source)
    for key in ("title", "description", "formula", "family"):
        if key in data and not isinstance(data[key], str):
            raise TopologyError(f"{source}: {key!r} must be a string")
    drawing = None
    if "drawing" in data:  # checked last: the circuit and its parts are sound by now
        drawing = drawing_from_table(data["drawing"], circuit, source=source)
        circuit = replace(circuit, drawing=drawing)
    notch_kinds = _notch_kinds(data, response, source)
    ratio = _capacitor_ratio(data, source)
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
        inverting=data.get("inverting", False),
        description=data.get("description", ""),
        formula=data.get("formula", ""),
        path="",
        drawing=drawing,
        notch_kinds=notch_kinds,
        capacitor_ratio_per_q2=ratio,
        gbw_rule=data.get("gbw_rule", False),
    )


def _check_keys(data: Any, source: str) -> None:
    """A table with known keys only, each of its type, the required ones present."""
    if not isinstance(data, dict):
        raise TopologyError(f"{source}: a topology must be a table")
    for key, value in data.items():
        if key not in TOPOLOGY_KEYS:
            raise TopologyError(str(unknown_key(key, TOPOLOGY_KEYS, source)))
        if key != "elements":
            try:
                check_type(value, TOPOLOGY_KEYS[key].type, f"{source}: {key}",
                           TOPOLOGY_KEYS[key].description)
            except SpecError as error:
                raise TopologyError(str(error)) from None
    for key in ("id", "title", "response", "order", "elements"):
        if key not in data:
            raise TopologyError(f"{source}: missing required key {key!r}")


def _heading(data: dict[str, Any], source: str) -> tuple[str, str, int]:
    """(id, response kind, order), each checked."""
    topology_id = data["id"]
    if not isinstance(topology_id, str) or not _ID.fullmatch(topology_id):
        raise TopologyError(
            f"{source}: id {brief(topology_id)} must use lowercase letters, digits and '-'"
        )
    response = data["response"]
    if response not in RESPONSES:
        raise TopologyError(
            f"{source}: unknown response kind {brief(response)}; accepted: {', '.join(RESPONSES)}"
        )
    order = data["order"]
    if not 0 <= order <= 24:
        raise TopologyError(f"{source}: order = {order!r} must be a whole number from 0 to 24")
    return topology_id, response, order


def _part_values(data: dict[str, Any], symbols: Sequence[str], kinds: Mapping[str, str],
                 source: str) -> dict[str, float]:
    """The ``[values]`` table: fixed parts, each a number in its kind's unit."""
    values: dict[str, float] = {}
    for symbol, raw in data.get("values", {}).items():
        if symbol not in symbols:
            raise TopologyError(f"{source}: values: {brief(symbol)} is not a part of the topology")
        values[symbol] = _part_number(raw, kinds[symbol], f"{source}: values.{symbol}")
    return values


def _free_parts(data: dict[str, Any], symbols: Sequence[str], values: Mapping[str, float],
                source: str) -> list[str]:
    """The ``free`` list (default: every part without a value); every part is one or the other."""
    free = data.get("free")
    if free is None:
        free = [s for s in symbols if s not in values]
    for symbol in free:
        if symbol not in symbols:
            raise TopologyError(
                f"{source}: free part {brief(symbol)} is not a symbol of any element"
            )
    for symbol in symbols:
        if symbol not in free and symbol not in values:
            raise TopologyError(
                f"{source}: part {symbol!r} is neither free nor given a value in [values]"
            )
    return free


def _constraints(data: dict[str, Any], free: Sequence[str], source: str) -> list[Constraint]:
    """The ``constraints`` list, parsed; each names free parts only."""
    constraints = []
    for text in data.get("constraints", []):
        constraint = parse_constraint(text, where=f"{source}: constraints")
        for name in (constraint.part, constraint.source):
            if name not in free:
                raise TopologyError(
                    f"{source}: constraint {brief(text)} names {name!r}, which is not a free part"
                )
        constraints.append(constraint)
    return constraints


def _capacitor_ratio(data: dict[str, Any], source: str) -> float | None:
    """The ``capacitor_ratio_per_q2`` key: a positive number, or None when absent."""
    ratio = data.get("capacitor_ratio_per_q2")
    if ratio is not None and not (isinstance(ratio, (int, float)) and not isinstance(ratio, bool)
                                  and math.isfinite(ratio) and ratio > 0):
        raise TopologyError(f"{source}: capacitor_ratio_per_q2 = {brief(ratio)} must be a "
                            f"positive number (4 for C1/C2 >= 4Q^2)")
    return None if ratio is None else float(ratio)


def _notch_kinds(data: dict[str, Any], response: str, source: str) -> tuple[str, ...]:
    """The ``notch_kinds`` key: which notch sections a notch topology realises."""
    if "notch_kinds" not in data:
        return ("notch",) if response == "notch" else ()
    raw = data["notch_kinds"]
    if response != "notch":
        raise TopologyError(f"{source}: notch_kinds applies to response = 'notch' only, "
                            f"not {response!r}")
    if not isinstance(raw, list) or not raw or not all(k in NOTCH_KINDS for k in raw):
        raise TopologyError(f"{source}: notch_kinds = {raw!r} must be a non-empty list of "
                            f"{', '.join(NOTCH_KINDS)}")
    return tuple(dict.fromkeys(raw))


def _ranges(raw_ranges: dict[str, Any], free: list[str], symbols: tuple[str, ...],
            kinds: dict[str, str], source: str) -> dict[str, tuple[float, float]]:
    """Symbol → (low, high) for every free part: given, or by kind."""
    for symbol in raw_ranges:
        if symbol not in symbols:
            raise TopologyError(f"{source}: ranges: {brief(symbol)} is not a part of the topology")
    ranges: dict[str, tuple[float, float]] = {}
    for symbol in free:
        if symbol in raw_ranges:
            where = f"{source}: ranges.{symbol}"
            low, high = (_part_number(x, kinds[symbol], where) for x in raw_ranges[symbol])
        elif kinds[symbol] in DEFAULT_RANGES:
            low, high = DEFAULT_RANGES[kinds[symbol]]
        else:
            raise TopologyError(
                f"{source}: free part {symbol!r} ({kinds[symbol]}) has no range; "
                f"give ranges.{symbol} = [low, high]"
            )
        if not (0 < low < high):
            raise TopologyError(
                f"{source}: ranges.{symbol} must satisfy 0 < low < high, not [{low:g}, {high:g}]"
            )
        ranges[symbol] = (low, high)
    return ranges


def _part_number(raw: Any, kind: str, where: str) -> float:
    """A part value or range end: finite, in the kind's unit, within its bounds."""
    try:
        value = parse_value(raw, unit=KIND_UNITS[kind] or None, field=where)
        return check_part_value(kind, value, where)
    except TopologyError:
        raise
    except SpecError as error:
        raise TopologyError(str(error)) from None
