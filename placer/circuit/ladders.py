"""Doubly terminated LC ladders: a generated family of topologies.

A ladder low-pass of order n is a source resistance RS from the input, n
alternating shunt capacitors and series inductors, and a load RL at the
output. The file format holds one circuit per file; a family whose size
grows with the order is easier to build here, as :class:`placer.circuit.topology.Topology`
values made from :class:`placer.circuit.elements.Element` objects directly.
:func:`generated_topologies` is what the library lists (orders 2–7); any
order 1–12 is available from :func:`ladder_topology`.

Parts are named by their position k = 1 … n in the ladder, so the normalised
prototype values g_k of a filter table map one to one onto ``C1, L2, C3 …``
(shunt first) or ``L1, C2, L3 …`` (series first).

Examples
--------
>>> ladder = ladder_topology(3)
>>> ladder.id, ladder.order, ladder.free
('lc-ladder-lowpass-3', 3, ('C1', 'L2', 'C3'))
>>> ladder.circuit.element("L2").nodes
('n1', 'vout')
>>> [round(g, 4) for g in butterworth_ladder_values(3)]
[1.0, 2.0, 1.0]
>>> values = ladder_part_values(ladder, butterworth_ladder_values(3),
...                             cutoff=2 * 3.141592653589793 * 1e6, resistance=50.0)
>>> f"{values['L2'] * 1e6:.3f} uH"
'15.915 uH'

References
----------
G. L. Matthaei, L. Young and E. M. T. Jones, *Microwave Filters,
Impedance-Matching Networks, and Coupling Structures*, McGraw-Hill, 1964
(prototype tables and the Butterworth closed form).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from .elements import Circuit, Element
from ..errors import SpecError
from .topology import DEFAULT_RANGES, Topology

__all__ = [
    "LADDER_ORDERS",
    "GENERATED_ORDERS",
    "ladder_topology",
    "generated_topologies",
    "butterworth_ladder_values",
    "ladder_part_values",
]

#: Orders :func:`ladder_topology` builds.
LADDER_ORDERS = range(1, 13)
#: Orders the library lists (:func:`generated_topologies`).
GENERATED_ORDERS = range(2, 8)
#: Default terminations in ohm (fixed parts, not free).
DEFAULT_TERMINATION = 50.0

_RESPONSES = ("lowpass",)
_FIRST = ("shunt", "series")


def ladder_topology(order: int, *, response: str = "lowpass", first: str = "shunt") -> Topology:
    """A doubly terminated LC ladder low-pass of the given order.

    Parameters
    ----------
    order : int
        Number of reactive parts, 1 to 12.
    response : {"lowpass"}
        Only the low-pass ladder is built.
    first : {"shunt", "series"}
        Whether the element next to the source is a shunt capacitor (the
        minimum-inductor form) or a series inductor.

    Returns
    -------
    Topology
        Id ``lc-ladder-lowpass-N`` (shunt first) or
        ``lc-ladder-lowpass-N-series-first``. The inductors and capacitors
        are free; RS and RL are fixed at 50 ohm in ``values``. The DC gain is
        RL/(RS + RL), 1/2 for equal terminations.

    Raises
    ------
    SpecError
        For an order outside 1–12 or an unknown `response` or `first`.
    """
    if isinstance(order, bool) or not isinstance(order, int) or order not in LADDER_ORDERS:
        raise SpecError(
            f"ladder order must be an integer from {LADDER_ORDERS.start} to "
            f"{LADDER_ORDERS.stop - 1}, not {order!r}"
        )
    if response not in _RESPONSES:
        raise SpecError(f"ladder response must be one of {set(_RESPONSES)}, not {response!r}")
    if first not in _FIRST:
        raise SpecError(f"ladder 'first' must be one of {set(_FIRST)}, not {first!r}")

    shunt_positions = [k for k in range(1, order + 1) if _is_shunt(k, first)]
    series_count = order - len(shunt_positions)
    last_node = series_count + 1

    def node(index: int) -> str:
        return "vout" if index == last_node else f"n{index}"

    elements = [Element("RS", "resistor", ("vin", node(1)), symbol="RS")]
    current = 1
    for k in range(1, order + 1):
        if _is_shunt(k, first):
            elements.append(Element(f"C{k}", "capacitor", (node(current), "gnd"), symbol=f"C{k}"))
        else:
            elements.append(
                Element(f"L{k}", "inductor", (node(current), node(current + 1)), symbol=f"L{k}")
            )
            current += 1
    elements.append(Element("RL", "resistor", ("vout", "gnd"), symbol="RL"))

    topology_id = f"lc-ladder-lowpass-{order}"
    if first == "series":
        topology_id += "-series-first"
    circuit = Circuit(tuple(elements), name=topology_id)
    reactive = tuple(e.symbol for e in elements
                     if e.symbol is not None and e.kind in ("capacitor", "inductor"))
    form = "shunt capacitor" if first == "shunt" else "series inductor"
    return Topology(
        id=topology_id,
        title=f"Doubly terminated LC ladder low-pass, order {order} ({form} first)",
        response=response,
        order=order,
        circuit=circuit,
        free=reactive,
        ranges={s: DEFAULT_RANGES[circuit.element(s).kind] for s in reactive},
        values={"RS": DEFAULT_TERMINATION, "RL": DEFAULT_TERMINATION},
        family="ladder",
        description=(
            f"Source resistance RS, {order} alternating reactive parts starting with a "
            f"{form}, load RL. Passive, so every pole lies in the left half-plane; the "
            "DC gain is RL/(RS + RL)."
        ),
        formula=(
            "normalised to RS = RL = 1 ohm and w_c = 1 rad/s the Butterworth parts are "
            "g_k = 2*sin((2k - 1)*pi/(2n)); denormalise L = g*R/w_c, C = g/(R*w_c) "
            "(Matthaei, Young and Jones, Microwave Filters, Impedance-Matching Networks, "
            "and Coupling Structures, 1964, Butterworth prototype table — from memory)"
        ),
    )


def generated_topologies() -> tuple[Topology, ...]:
    """The ladders the library lists: shunt-first, orders 2–7."""
    return tuple(ladder_topology(order) for order in GENERATED_ORDERS)


def butterworth_ladder_values(order: int) -> tuple[float, ...]:
    """Normalised Butterworth prototype values g_1 … g_n.

    For RS = RL = 1 ohm and a cutoff (-3 dB) of 1 rad/s,
    g_k = 2 sin((2k − 1)π / (2n)); the same numbers serve the shunt-first
    and the series-first ladder (they are symmetric in k).

    Parameters
    ----------
    order : int
        1 to 12.

    Returns
    -------
    tuple of float
        g_1 … g_n (farad or henry in the normalised prototype).

    References
    ----------
    Matthaei, Young and Jones, *Microwave Filters, Impedance-Matching
    Networks, and Coupling Structures*, 1964, Butterworth prototype.
    """
    if isinstance(order, bool) or not isinstance(order, int) or order not in LADDER_ORDERS:
        raise SpecError(
            f"ladder order must be an integer from {LADDER_ORDERS.start} to "
            f"{LADDER_ORDERS.stop - 1}, not {order!r}"
        )
    return tuple(2.0 * math.sin((2 * k - 1) * math.pi / (2 * order)) for k in range(1, order + 1))


def ladder_part_values(topology: Topology, g_values: Sequence[float], *, cutoff: float = 1.0,
                       resistance: float = 1.0) -> dict[str, float]:
    """Denormalise prototype values onto a ladder topology's parts.

    Parameters
    ----------
    topology : Topology
        A ladder from :func:`ladder_topology`.
    g_values : sequence of float
        Normalised values g_1 … g_n (for example :func:`butterworth_ladder_values`).
    cutoff : float
        Cutoff angular frequency in rad/s (2π times the cutoff in hertz).
    resistance : float
        Termination resistance in ohm, used for both RS and RL.

    Returns
    -------
    dict
        Symbol → value in SI units for every part, RS and RL included:
        L_k = g_k R / ω_c, C_k = g_k / (R ω_c).
    """
    g_values = tuple(float(g) for g in g_values)
    if len(g_values) != topology.order:
        raise SpecError(
            f"ladder {topology.id!r} has {topology.order} reactive parts, "
            f"but {len(g_values)} g-values were given"
        )
    if not (cutoff > 0 and resistance > 0):
        raise SpecError(
            f"cutoff (rad/s) and resistance (ohm) must be positive, not {cutoff!r}, {resistance!r}"
        )
    values = {"RS": float(resistance), "RL": float(resistance)}
    for k, g in enumerate(g_values, start=1):
        if f"L{k}" in topology.symbols:
            values[f"L{k}"] = g * resistance / cutoff
        elif f"C{k}" in topology.symbols:
            values[f"C{k}"] = g / (resistance * cutoff)
        else:
            raise SpecError(f"topology {topology.id!r} has no ladder part at position {k}")
    return values


def _is_shunt(position: int, first: str) -> bool:
    """True when ladder position k (1-based) is a shunt capacitor."""
    odd = position % 2 == 1
    return odd if first == "shunt" else not odd
