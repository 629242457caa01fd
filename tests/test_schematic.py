"""Schematic drawings: the drawing is the circuit, labels are readable.

The checks read the drawing back from schemdraw's own elements (each
element's end points, the wires, the junction dots), recover which element
ends are joined, and compare the resulting graph with the circuit's graph up
to a renaming of the nodes (networkx ``is_isomorphic`` with the element
names and pins as edge labels). Joins are read as the trade reads a
schematic: two ends at one point are joined, a dot joins the wires through
it, and wires that merely cross are not (common practice, no source; the
IEC 60617-2 junction convention, from memory). The reference is every ground
symbol together.
"""

from __future__ import annotations

import itertools
import math
import re
import xml.etree.ElementTree as ET

import networkx as nx
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from placer.circuit import Circuit, Element
from placer.drawing import DrawingSpec, automatic_plan, drawing_from_table
from placer.errors import SpecError
from placer.ladders import ladder_topology
from placer.library import library_topologies
from placer.report.schematic import (circuit_schematic, circuit_svg, drawn_geometry,
                                     label_boxes, symbol_boxes, topology_schematic)
from placer.topology import topology_from_text

_EPS = 1e-6
TOPOLOGIES = dict(sorted(library_topologies().items()))


# -- reading the drawing back ---------------------------------------------------------

def _key(point):
    return (round(point[0], 5), round(point[1], 5))


def _on_interior(point, segment):
    (x0, y0), (x1, y1) = segment
    x, y = point
    if abs(x0 - x1) < _EPS:
        return abs(x - x0) < _EPS and min(y0, y1) + _EPS < y < max(y0, y1) - _EPS
    if abs(y0 - y1) < _EPS:
        return abs(y - y0) < _EPS and min(x0, x1) + _EPS < x < max(x0, x1) - _EPS
    return False


def drawn_graph(geometry, reference="gnd"):
    """The circuit graph the drawing shows: nets joined by element edges."""
    union = nx.utils.UnionFind()
    for a, b in geometry.wires:
        union.union(_key(a), _key(b))
    for dot in geometry.dots:  # a dot joins every wire passing through it
        for wire in geometry.wires:
            if _on_interior(dot, wire):
                union.union(_key(dot), _key(wire[0]))
    grounds = [_key(g) for g in geometry.grounds]
    for g in grounds:
        union.union(g, ("reference",))
    graph = nx.MultiGraph()

    def net(point):
        return ("net", union[_key(point)])

    for key, (a, b) in geometry.parts.items():
        name = key.split(":")[0]
        graph.add_edge(net(a), net(b), label=name)
    for name, (plus, minus, out) in geometry.opamps.items():
        hub = ("opamp", name)
        for pin, point in (("+", plus), ("-", minus), ("out", out)):
            graph.add_edge(hub, net(point), label=f"{name}{pin}")
    for node, point in geometry.terminals.items():
        graph.add_edge(("terminal", node), net(point), label=f"terminal {node}")
    graph.add_edge(("terminal", "reference"), net((math.nan, math.nan)) if not grounds
                   else ("net", union[("reference",)]), label="terminal reference")
    return graph


def circuit_graph(circuit, terminals):
    """The circuit's own graph in the same shape (op-amp pins in schema order)."""
    graph = nx.MultiGraph()
    for element in circuit.elements:
        n = element.nodes
        if element.kind == "opamp":
            hub = ("opamp", element.name)
            for pin, node in zip(("+", "-", "out"), n):
                graph.add_edge(hub, ("node", node), label=f"{element.name}{pin}")
        elif element.kind in ("vcvs", "vccs"):
            graph.add_edge(("node", n[0]), ("node", n[1]), label=element.name)
            graph.add_edge(("node", n[2]), ("node", n[3]), label=element.name)
        else:
            graph.add_edge(("node", n[0]), ("node", n[1]), label=element.name)
    for node in terminals:
        graph.add_edge(("terminal", node), ("node", node), label=f"terminal {node}")
    graph.add_edge(("terminal", "reference"), ("node", circuit.reference),
                   label="terminal reference")
    return graph


def same_circuit(drawn, circuit, terminals):
    expected = circuit_graph(circuit, terminals)
    return nx.is_isomorphic(drawn, expected, edge_match=_labels_match)


def _labels_match(a, b):
    return sorted(d["label"] for d in a.values()) == sorted(d["label"] for d in b.values())


def crossings(geometry):
    """Points where two wires cross without either ending there."""
    count = 0
    for (a, b), (c, d) in itertools.combinations(geometry.wires, 2):
        h1, h2 = abs(a[1] - b[1]) < _EPS, abs(c[1] - d[1]) < _EPS
        if h1 == h2:
            continue
        (h, v) = ((a, b), (c, d)) if h1 else ((c, d), (a, b))
        x, y = v[0][0], h[0][1]
        if (min(h[0][0], h[1][0]) + _EPS < x < max(h[0][0], h[1][0]) - _EPS
                and min(v[0][1], v[1][1]) + _EPS < y < max(v[0][1], v[1][1]) - _EPS):
            count += 1
    return count


def ambiguous_touches(geometry):
    """Ends lying inside a wire with no dot there: they would look joined."""
    ends = [p for w in geometry.wires for p in w] + [p for ab in geometry.parts.values()
                                                    for p in ab]
    ends += [p for pins in geometry.opamps.values() for p in pins] + list(geometry.grounds)
    dots = {_key(d) for d in geometry.dots}
    return [p for p in ends for w in geometry.wires
            if _on_interior(p, w) and _key(p) not in dots]


def planar_with_terminals(circuit):
    """Whether the circuit has a crossing-free drawing with input and output outside.

    Each ground symbol may stand alone, so every connection to the reference
    is its own vertex; the input and the output are joined through one extra
    vertex (both on the outer face).
    """
    graph = nx.Graph()
    for k, element in enumerate(circuit.elements):
        hub = ("e", element.name)
        for i, node in enumerate(element.nodes):
            graph.add_edge(hub, node if node != circuit.reference else ("gnd", k, i))
    graph.add_edge(circuit.input, "outside")
    graph.add_edge("outside", circuit.output)
    return nx.check_planarity(graph)[0]


def check_drawing(schematic, circuit):
    geometry = drawn_geometry(schematic)
    terminals = list(geometry.terminals)
    assert same_circuit(drawn_graph(geometry), circuit, terminals), circuit.name
    assert not ambiguous_touches(geometry), circuit.name
    return geometry


def check_labels(schematic):
    boxes = label_boxes(schematic)
    for a, b in itertools.combinations(boxes, 2):
        assert not a.overlaps(b), (a, b)
    for label in boxes:
        for symbol in symbol_boxes(schematic):
            assert not label.overlaps(symbol), (label, symbol)
        for (x0, y0), (x1, y1) in schematic.layout.wires:
            wire = _wire_box(x0, y0, x1, y1)
            assert not label.overlaps(wire), (label, ((x0, y0), (x1, y1)))


def _wire_box(x0, y0, x1, y1):
    from placer.report.layout import Box
    return Box(min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1))
