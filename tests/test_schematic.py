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

from placer.circuit.elements import Circuit, Element
from placer.circuit.drawing import DrawingSpec
from placer.errors import SpecError
from placer.circuit.ladders import ladder_topology
from placer.circuit.library import library_topologies
from placer.report.schematic import (circuit_schematic, circuit_svg, drawn_geometry,
                                     label_boxes, symbol_boxes, topology_schematic)
from placer.circuit.topology import topology_from_text

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


def _svg_texts(svg):
    """Every <text> element's content, its lines joined by a space."""
    root = ET.fromstring(svg)
    texts = []
    for node in root.iter("{http://www.w3.org/2000/svg}text"):
        spans = [t.text or "" for t in node.iter("{http://www.w3.org/2000/svg}tspan")]
        texts.append(" ".join(spans) if spans else (node.text or ""))
    return texts


def _rightmost(geometry):
    return max([p[0] for w in geometry.wires for p in w] +
               [p[0] for ab in geometry.parts.values() for p in ab])


# -- every bundled topology ----------------------------------------------------------

@pytest.mark.parametrize("topology_id", list(TOPOLOGIES))
def test_bundled_drawing_is_the_circuit(topology_id):
    topology = TOPOLOGIES[topology_id]
    schematic = topology_schematic(topology)
    geometry = check_drawing(schematic, topology.circuit)
    # No crossing wire where a crossing-free drawing with both terminals
    # outside exists (networkx planarity test); the KHN notch has none and
    # needs exactly one crossing (common practice, no source).
    if planar_with_terminals(topology.circuit):
        assert crossings(geometry) == 0
    else:
        assert topology_id == "khn-notch" and crossings(geometry) == 1
    check_labels(schematic)
    # input on the left of everything; output on the right (khn-highpass's
    # high-pass output sits between its integrators' loops and is marked there)
    inp = geometry.terminals[topology.circuit.input]
    assert inp[0] <= min(p[0] for w in geometry.wires for p in w) + _EPS
    out = geometry.terminals[topology.circuit.output]
    if topology_id != "khn-highpass":
        assert out[0] >= _rightmost(geometry) - _EPS
    assert out[0] > inp[0]


def test_every_bundled_file_carries_a_drawing_table():
    files = [t for t in TOPOLOGIES.values() if t.path]
    assert len(files) == 33
    for topology in files:
        assert topology.drawing is not None and topology.drawing.path, topology.id


def test_topology_labels_are_names_not_values():
    svg = circuit_svg(TOPOLOGIES["mfb-lowpass"].circuit, show_values=False)
    texts = _svg_texts(svg)
    for name in ("R1", "R2", "R3", "C1", "C2", "U1", "vin", "vout"):
        assert texts.count(name) == 1, name
    assert not any("Ω" in t or "F" in t.split()[-1] for t in texts if t)


@settings(max_examples=25, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(order=st.integers(1, 12), first=st.sampled_from(["shunt", "series"]),
       scale=st.floats(1e-9, 1e-3))
def test_random_ladders_are_drawn_as_their_circuit(order, first, scale):
    ladder = ladder_topology(order, first=first)
    values = {s: scale * (1 + k) for k, s in enumerate(ladder.free)}
    values.update(ladder.values)
    circuit = ladder.circuit.with_values(values)
    schematic = circuit_schematic(circuit)
    geometry = check_drawing(schematic, circuit)
    assert crossings(geometry) == 0
    check_labels(schematic)


def test_opamp_pins_land_on_schema_order():
    # the drawn non-inverting pin of U1 in the Sallen-Key stage is node n2
    # (schema order: non-inverting, inverting, output); swapping the pins in
    # the circuit must make the drawing differ from the original circuit.
    topology = TOPOLOGIES["sallen-key-lowpass-gain"]
    geometry = drawn_geometry(topology_schematic(topology))
    drawn = drawn_graph(geometry)
    swapped = Circuit(tuple(
        Element(e.name, e.kind, (e.nodes[1], e.nodes[0], e.nodes[2])) if e.kind == "opamp" else e
        for e in topology.circuit.elements))
    assert same_circuit(drawn, topology.circuit, list(geometry.terminals))
    assert not same_circuit(drawn, swapped, list(geometry.terminals))


def test_user_topology_without_table_is_drawn_automatically():
    text = _USER_TOPOLOGY
    topology = topology_from_text(text, source="user.toml")
    assert topology.drawing is None
    schematic = topology_schematic(topology)
    geometry = check_drawing(schematic, topology.circuit)
    assert crossings(geometry) == 0
    check_labels(schematic)


def test_modelled_opamp_and_its_output_resistance_are_drawn():
    from placer.place.opamp import AmplifierSpec, apply_amplifier

    topology = TOPOLOGIES["mfb-lowpass"]
    circuit = topology.circuit.with_values({"R1": 1e4, "R2": 1e4, "R3": 2e4, "C1": 1e-8,
                                            "C2": 1e-9})
    built = apply_amplifier(circuit, AmplifierSpec(gbw=1e6, gain=1e5, output_resistance=50.0))
    schematic = circuit_schematic(built)
    check_drawing(schematic, built)
    check_labels(schematic)
    texts = _svg_texts(circuit_svg(built))
    # 100 dB = 20·log10(1e5) (definition of the decibel)
    assert "U1 GBW 1 MHz A0 100 dB" in texts and "U1.ro 50 Ω" in texts


def test_resistor_styles_differ_and_bad_style_is_refused():
    circuit = TOPOLOGIES["rc-lowpass"].circuit.with_values({"R1": 1e3, "C1": 1e-9})
    iec, ieee = circuit_svg(circuit), circuit_svg(circuit, resistor_style="ieee")
    assert iec != ieee
    with pytest.raises(SpecError, match="resistor style"):
        circuit_svg(circuit, resistor_style="din")


def test_circuit_svg_signature_is_kept():
    import inspect

    signature = inspect.signature(circuit_svg)
    assert list(signature.parameters) == ["circuit", "title", "show_values", "resistor_style"]
    assert signature.parameters["resistor_style"].default == "iec"
    assert signature.parameters["show_values"].default is True


_USER_TOPOLOGY = '''
id = "user-bandpass"
title = "A user's band-pass without a drawing table"
response = "bandpass"
order = 2
[[elements]]
name = "R1"
kind = "resistor"
nodes = ["vin", "n1"]
symbol = "R1"
[[elements]]
name = "C1"
kind = "capacitor"
nodes = ["n1", "n2"]
symbol = "C1"
[[elements]]
name = "R2"
kind = "resistor"
nodes = ["n2", "gnd"]
symbol = "R2"
[[elements]]
name = "C2"
kind = "capacitor"
nodes = ["n1", "vout"]
symbol = "C2"
[[elements]]
name = "R3"
kind = "resistor"
nodes = ["n2", "vout"]
symbol = "R3"
[[elements]]
name = "U1"
kind = "opamp"
nodes = ["gnd", "n1", "vout"]
'''


# -- a design: values, cascade, reports, files ------------------------------------------

@pytest.fixture(scope="module")
def odd_design(tmp_path_factory):
    """A third-order Butterworth: a passive first-order section, a buffer, a biquad."""
    from placer.design import design
    from placer.spec.reader import load_spec

    folder = tmp_path_factory.mktemp("spec")
    path = folder / "odd.toml"
    path.write_text('title = "third order"\n[target]\nresponse = "lowpass"\n'
                    'approximation = "butterworth"\norder = 3\ncutoff = "2 kHz"\n'
                    '[candidates]\ntopologies = ["rc-lowpass", "sallen-key-lowpass-unity"]\n'
                    '[tolerance]\nsamples = 200\n', encoding="utf-8")
    return design(load_spec(path)), path


def test_design_schematics_are_the_circuits_with_every_value_once(odd_design):
    from placer.report.schematic import design_schematics, render_svg

    result, _ = odd_design
    drawings = design_schematics(result)
    assert set(drawings) == {"section1", "section2", "cascade"}
    for section in result.sections:
        schematic = drawings[f"section{section.index}"]
        check_drawing(schematic, section.circuit)
        check_labels(schematic)
    cascade = drawings["cascade"]
    geometry = check_drawing(cascade, result.circuit)  # the buffer is drawn
    assert crossings(geometry) == 0
    check_labels(cascade)
    assert len(geometry.opamps) == result.circuit.opamp_count == 2
    texts = _svg_texts(render_svg(cascade))
    units = {"resistor": "Ω", "capacitor": "F"}
    for part in result.parts:
        from placer.units import format_value
        label = f"{part.name} {format_value(part.value, {'resistor': 'ohm'}.get(part.kind, units[part.kind]))}"
        assert texts.count(label) == 1, label


def test_design_report_holds_inline_schematics_and_stays_self_contained(odd_design, tmp_path):
    from placer.report.data import design_to_dict
    from placer.report.html import write_design_report

    result, spec_path = odd_design
    out = tmp_path / "report.html"
    write_design_report(result, design_to_dict(result), None, html_path=out, inputs=(spec_path,))
    text = out.read_text(encoding="utf-8")
    assert text.count('<figure class="schematic">') == 3
    assert not re.findall(r"https?://", text)
    assert not re.findall(r"<(?:link|script|img|iframe)\b[^>]*(?:src|href)=", text, flags=re.I)
    assert "R1 " in text and "kΩ" in text


def test_cli_schematic_files_and_missing_folder(odd_design, tmp_path, capsys):
    from placer.cli import main

    _, spec_path = odd_design
    assert main(["design", str(spec_path), "--schematic", str(tmp_path / "missing"),
                 "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err == [f"error: --schematic: folder {str(tmp_path / 'missing')!r} does not exist"]
    svg = tmp_path / "mfb.svg"
    assert main(["topologies", "mfb-lowpass", "--schematic", str(svg),
                 "--resistor-style", "ieee"]) == 0
    assert svg.read_text(encoding="utf-8").startswith("<svg")
    assert main(["topologies", "mfb-lowpass", "--schematic", str(tmp_path / "no" / "x.svg")]) == 2


# -- bad drawing tables ------------------------------------------------------------------

_BASE = '''
id = "sk-demo"
title = "demo"
response = "lowpass"
order = 2
[[elements]]
name = "R1"
kind = "resistor"
nodes = ["vin", "n1"]
symbol = "R1"
[[elements]]
name = "R2"
kind = "resistor"
nodes = ["n1", "n2"]
symbol = "R2"
[[elements]]
name = "C1"
kind = "capacitor"
nodes = ["n1", "vout"]
symbol = "C1"
[[elements]]
name = "C2"
kind = "capacitor"
nodes = ["n2", "gnd"]
symbol = "C2"
[[elements]]
name = "C9"
kind = "capacitor"
nodes = ["vin", "n1"]
symbol = "C9"
[[elements]]
name = "U1"
kind = "opamp"
nodes = ["n2", "vout", "vout"]
[drawing]
'''


@pytest.mark.parametrize("table, message", [
    ('path = ["R1", "R2", "U1"]\nabove = ["C1", "C9", "RX"]\nshunt = ["C2"]', "'RX' is not an element"),
    ('path = ["R1", "R2", "U1"]\nabove = ["C1"]\nshunt = ["C2"]', "element 'C9' is not placed"),
    ('path = ["R1", "R2", "U1"]\nabove = ["C1", "C9", "R2"]\nshunt = ["C2"]', "'R2' is placed twice"),
    ('path = ["R1", "C9", "R2", "U1"]\nabove = ["C1"]\nshunt = ["C2"]',
     "'C9' and 'R1' would share the segment"),
    ('path = ["R2", "U1"]\nabove = ["C1", "C9", "R1"]\nshunt = ["C2"]', "'R2' does not start"),
    ('path = ["R1", "R2", "U1"]\nabove = ["C1", "C9"]\nshunt = ["C2"]\ntaps = ["n7"]',
     "'n7' is not a node"),
    ('path = ["R1", "R2", "U1"]\nabove = ["C1", "C9", "C2"]', "'C2' goes to the reference"),
    ('path = ["R1", "R2", "U1"]\nabove = ["C1", "C9"]\nshunt = ["C2"]\ncolour = "red"',
     "unknown key 'colour'"),
])
def test_bad_drawing_table_is_a_spec_error_naming_the_element(table, message):
    with pytest.raises(SpecError, match=re.escape(message)):
        topology_from_text(_BASE + table, source="demo.toml")


def test_good_drawing_table_is_read():
    topology = topology_from_text(_BASE + 'path = ["R1", "R2", "U1"]\nabove = ["C1", "C9"]\n'
                                  'shunt = ["C2"]', source="demo.toml")
    assert topology.drawing == DrawingSpec(path=("R1", "R2", "U1"), above=("C1", "C9"),
                                           shunt=("C2",))
    assert topology.circuit.drawing is topology.drawing
    schematic = topology_schematic(topology)
    check_drawing(schematic, topology.circuit)
