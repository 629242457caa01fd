"""Schematic drawings of circuits, topologies, cascades and compensators.

Each circuit is laid out from its topology's ``[drawing]`` table (or, for a
circuit without one, automatically: :mod:`placer.circuit.drawing`), given
coordinates (:mod:`placer.report.layout`) and drawn with schemdraw: SVG
through schemdraw's own SVG backend, so every label is a ``<text>``
element, and PNG through its matplotlib backend.

Symbols follow IEC 60617 by default (rectangular resistor); the
``resistor_style="ieee"`` option draws the zig-zag resistor of IEEE 315.
Capacitors, inductors (semicircular windings), op-amps and grounds are
drawn the same in both.

Examples
--------
>>> from placer.circuit.elements import Circuit, Element
>>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), value=8060.0),
...               Element("C1", "capacitor", ("vout", "gnd"), value=3.3e-9)))
>>> svg = circuit_svg(rc)
>>> svg.startswith("<svg") and "8.06 kΩ" in svg and "3.3 nF" in svg
True
"""

from __future__ import annotations

import html
import math
import os
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

import schemdraw
import schemdraw.elements as elm

from ..circuit.elements import KIND_UNITS, Circuit, Element
from ..circuit.drawing import BELOW, Branch, Plan, Point, Step
from ..circuit.drawing_auto import plan_for
from ..errors import SpecError
from ..units import format_value
from .files import check_output_path, write_bytes, write_text
from .layout import FONT_PT, Box, Layout, layout_plan

if TYPE_CHECKING:
    from ..circuit.topology import Topology
    from ..design import Design
    from ..loops.compensator import LoopDesign

Point2 = tuple[float, float]

__all__ = ["RESISTOR_STYLES", "Schematic", "circuit_svg", "circuit_schematic",
           "topology_schematic", "cascade_schematic", "render_svg", "render_png",
           "drawn_geometry", "DrawnGeometry", "write_schematic_files", "check_resistor_style",
           "schematic_figure", "check_schematic_folder"]

#: Resistor symbols: IEC 60617 (rectangle, the default) and IEEE 315 (zig-zag).
RESISTOR_STYLES = ("iec", "ieee")
_GAIN_WORDS = {"vcvs": "A", "vccs": "gm", "cccs": "β", "ccvs": "rm"}
_GAIN_UNITS = {"vcvs": "", "vccs": "S", "cccs": "", "ccvs": "ohm"}
_LINE_WIDTH = 1.5


@dataclass(frozen=True)
class Schematic:
    """A drawing ready to render: its geometry and a title."""

    layout: Layout
    title: str | None = None

    def _repr_svg_(self) -> str:
        """A notebook shows a schematic as its SVG (IEC resistors)."""
        return render_svg(self)


def check_resistor_style(style: str) -> str:
    """Return `style` if it is one of :data:`RESISTOR_STYLES`, else raise SpecError."""
    if style not in RESISTOR_STYLES:
        raise SpecError(f"resistor style must be one of {set(RESISTOR_STYLES)}, not {style!r}")
    return style


# -- labels ---------------------------------------------------------------------------

def _value_text(element: Element) -> str:
    if element.kind in _GAIN_WORDS:
        gain = element.gain
        if gain is None:
            return f"{_GAIN_WORDS[element.kind]} = {element.symbol}"
        return f"{_GAIN_WORDS[element.kind]} = {format_value(gain, _GAIN_UNITS[element.kind])}"
    if element.value is None:
        return element.symbol or ""
    return format_value(element.value, KIND_UNITS.get(element.kind, ""))


def opamp_model_text(element: Element) -> tuple[str, ...]:
    """The op-amp's model in words: ``("ideal",)`` or its GBW and DC gain."""
    lines = []
    if element.gbw is not None:
        lines.append(f"GBW {format_value(element.gbw, 'Hz')}")
    if element.gain is not None:
        lines.append(f"A0 {20 * math.log10(element.gain):.0f} dB")
    return tuple(lines) or ("ideal",)


def _labeller(elements: Sequence[Element], show_values: bool,
              fixed: Mapping[str, float] | None = None) -> Callable[[str], tuple[str, ...]]:
    parts = {e.name: e for e in elements}
    fixed = fixed or {}

    def lines(key: str) -> tuple[str, ...]:
        name = key.split(":")[0]
        element = parts[name]
        if key.endswith(":ctrl"):
            return (f"{name} sense",)
        if element.kind == "opamp":
            return (name,) + opamp_model_text(element) if show_values else (name,)
        if show_values:
            text = _value_text(element)
            if element.kind in ("cccs", "ccvs"):
                text += f" · i({element.control})"
            return (f"{name} {text}",) if text else (name,)
        words = [name]
        if element.symbol and element.symbol != name:
            words.append(f"({element.symbol})")
        if element.symbol is not None and element.symbol in fixed:
            words.append(format_value(fixed[element.symbol], KIND_UNITS.get(element.kind, "")))
        elif element.value is not None and element.kind in KIND_UNITS:
            words.append(format_value(element.value, KIND_UNITS[element.kind]))
        return (" ".join(words),)

    return lines


def _kinds(elements: Sequence[Element]) -> dict[str, str]:
    kinds = {}
    for element in elements:
        kinds[element.name] = element.kind
        if element.kind in ("vcvs", "vccs"):
            kinds[f"{element.name}:ctrl"] = "sense"
    return kinds


# -- building schematics ------------------------------------------------------------------

def circuit_schematic(circuit: Circuit, *, title: str | None = None, show_values: bool = True,
                      fixed: Mapping[str, float] | None = None) -> Schematic:
    """The geometry of one circuit's drawing (see :func:`circuit_svg`).

    Parameters
    ----------
    fixed : dict, optional
        Symbol → default value (SI) shown beside the symbol when
        `show_values` is False (a topology's ``values``).
    """
    plan = plan_for(circuit)
    layout = layout_plan(plan, _kinds(circuit.elements),
                         _labeller(circuit.elements, show_values, fixed))
    return Schematic(layout, title)


def topology_schematic(topology: Topology, *, title: str | None = None) -> Schematic:
    """A topology drawn with its part symbols instead of values."""
    heading = title if title is not None else f"{topology.id}: {topology.title}"
    return circuit_schematic(topology.circuit, title=heading, show_values=False,
                             fixed=dict(topology.values or {}))


def cascade_schematic(sections: Sequence[Circuit], buffers: Mapping[int, tuple[Element, ...]], *,
                      title: str | None = None,
                      show_values: bool = True) -> Schematic:
    """Sections side by side in order, each with its own parts, buffers between.

    Parameters
    ----------
    sections : list of Circuit
        The section circuits in cascade order.
    buffers : dict
        Section number (from 1) → the unity-gain buffer op-amp (an Element)
        drawn after that section.
    """
    pieces = []
    for number, circuit in enumerate(sections, start=1):
        layout = circuit_schematic(circuit, show_values=show_values).layout
        pieces.append(layout)
        if number in buffers and number < len(sections):
            pieces.append(_buffer_layout(buffers[number], show_values))
    joined = pieces[0]
    for piece in pieces[1:]:
        joined = _join(joined, piece)
    return Schematic(joined, title)


def _buffer_layout(elements: tuple[Element, ...], show_values: bool) -> Layout:
    """A buffer between sections: the follower (and its modelled output resistance)."""
    opamp = elements[0]
    pin = f"{opamp.name}.in"
    points = [Point(opamp.nodes[0], opamp.nodes[0]), Point(pin, "", opamp=opamp.name, side=BELOW),
              Point(opamp.nodes[2], opamp.nodes[2])]
    steps = [Step(opamp.name, opamp.nodes[0], opamp.nodes[2], opamp=True, pin=0, pin_point=pin)]
    for resistor in elements[1:]:  # the modelled output resistance, on to the buffer's output
        points.append(Point(resistor.nodes[1], resistor.nodes[1]))
        steps.append(Step(resistor.name, resistor.nodes[0], resistor.nodes[1]))
    wire = Branch((), (opamp.nodes[1],) * 2, pin, points[-1].key, BELOW)
    plan = Plan(tuple(points), tuple(steps), (wire,), (), points[-1].key)
    return layout_plan(plan, _kinds(elements), _labeller(elements, show_values))


def design_schematics(design: Design, *, show_values: bool = True) -> dict[str, Schematic]:
    """Every section of a design, and the whole cascade: file stem → Schematic.

    Stems are ``section1``, ``section2`` … and ``cascade``; the cascade is
    the sections in order with the buffers the design placed between them.
    """
    out = {}
    for section in design.sections:
        out[f"section{section.index}"] = circuit_schematic(
            section.circuit, show_values=show_values,
            title=f"Section {section.index}: {section.topology.id}")
    out["cascade"] = cascade_schematic([s.circuit for s in design.sections],
                                       cascade_buffers(design), show_values=show_values,
                                       title="The whole cascade, input to output")
    return out


def cascade_buffers(design: Design) -> dict[int, tuple[Element, ...]]:
    """Section number → the buffer (op-amp, and its output resistance) after it."""
    inside = {e.name for s in design.sections for e in s.circuit.elements}
    buffers = {}
    for element in design.circuit.elements:
        match = re.fullmatch(r"s(\d+)_out", element.nodes[0]) if element.kind == "opamp" else None
        if element.name in inside or match is None:
            continue
        extra = tuple(e for e in design.circuit.elements if e.name == f"{element.name}.ro")
        buffers[int(match.group(1))] = (element,) + extra
    return buffers


def compensator_schematic(loop_design: LoopDesign, *, show_values: bool = True) -> Schematic:
    """A loop compensator with its preferred values (``LoopDesign``)."""
    topology = loop_design.topology
    return circuit_schematic(loop_design.circuit(snapped=True), show_values=show_values,
                             title=f"Compensator: {topology.id}")


def _join(left: Layout, right: Layout) -> Layout:
    """`right` to the right of `left`, left's output wired to right's input."""
    def key(point: Point2) -> Point2:
        return (round(point[0], 6), round(point[1], 6))

    out = next(t for t in left.terminals if key(t.at) == key(left.output_at))
    kept = [lb for lb in left.labels if lb != out.label]
    edge = max([lb.box.x1 for lb in kept] + [p.body.x1 for p in left.parts]
               + [o.body.x1 for o in left.opamps] + [a[0] for w in left.wires for a in w])
    moved = right.shifted(edge + 0.8 - right.input_at[0], left.output_at[1] - right.input_at[1])
    inp = next(t for t in moved.terminals if key(t.at) == key(moved.input_at))
    wires = left.wires + moved.wires + ((left.output_at, moved.input_at),)
    terminals = tuple(t for t in left.terminals if t != out) + tuple(
        t for t in moved.terminals if t != inp)
    labels = tuple(kept) + tuple(lb for lb in moved.labels if lb != inp.label)
    return Layout(parts=left.parts + moved.parts, opamps=left.opamps + moved.opamps, wires=wires,
                  dots=left.dots + moved.dots, grounds=left.grounds + moved.grounds,
                  terminals=terminals, labels=labels, input_at=left.input_at,
                  output_at=moved.output_at)


# -- rendering --------------------------------------------------------------------------

def _symbol(kind: str, style: str) -> elm.Element:
    if kind == "resistor":
        return elm.ResistorIEC() if style == "iec" else elm.ResistorIEEE()
    return {"capacitor": elm.Capacitor, "inductor": elm.Inductor, "vsource": elm.SourceV,
            "isource": elm.SourceI, "vcvs": elm.SourceControlledV, "ccvs": elm.SourceControlledV,
            "vccs": elm.SourceControlledI, "cccs": elm.SourceControlledI,
            "sense": elm.Gap}[kind]()


def _drawing(schematic: Schematic, *, resistor_style: str, canvas: Literal["svg", "matplotlib"]
             ) -> tuple[schemdraw.Drawing, list[tuple[str, ...]]]:
    """A schemdraw Drawing of the schematic, and what each of its elements is."""
    check_resistor_style(resistor_style)
    layout = schematic.layout
    drawing = schemdraw.Drawing(canvas=canvas, show=False)
    drawing.config(fontsize=FONT_PT, font="sans-serif", lw=_LINE_WIDTH, margin=0.3)
    tags: list[tuple[str, ...]] = []

    def add(item: elm.Element, tag: tuple[str, ...]) -> None:
        drawing.add(item)
        tags.append(tag)

    for part in layout.parts:
        add(_symbol(part.kind, resistor_style).endpoints(part.start, part.end), ("part", part.key))
    for opamp in layout.opamps:
        symbol = elm.Opamp(leads=True).theta(0)
        if opamp.flipped:
            symbol = symbol.flip()
        add(symbol.anchor("in2").at(opamp.plus), ("opamp", opamp.name))
    for a, b in layout.wires:
        add(elm.Line().endpoints(a, b), ("wire",))
    for point in layout.dots:
        add(elm.Dot(radius=0.09).at(point), ("dot",))
    for point in layout.grounds:
        add(elm.Ground().at(point), ("ground",))
    for terminal in layout.terminals:
        add(elm.Dot(open=True, radius=0.11).at(terminal.at), ("terminal", terminal.node))
    for label in layout.labels:
        add(elm.Label().at(label.anchor).label("\n".join(label.lines), halign=label.halign,
                                                valign="center", fontsize=FONT_PT),
            ("label", label.owner))
    if schematic.title:
        box = layout.bbox
        add(elm.Label().at((box.x0, box.y1 + 0.6)).label(schematic.title, halign="left",
                                                          valign="center", fontsize=FONT_PT + 1),
            ("title",))
    return drawing, tags


def render_svg(schematic: Schematic, *, resistor_style: str = "iec") -> str:
    """The schematic as a standalone SVG document (labels as ``<text>``)."""
    drawing, _ = _drawing(schematic, resistor_style=resistor_style, canvas="svg")
    svg = drawing.get_imagedata("svg").decode("utf-8")
    label = html.escape(schematic.title or "schematic", quote=True)
    return svg.replace("<svg", f'<svg role="img" aria-label="{label}"', 1)


def render_png(schematic: Schematic, *, resistor_style: str = "iec", dpi: float = 110) -> bytes:
    """The schematic as PNG bytes (schemdraw's matplotlib backend)."""
    import matplotlib
    import matplotlib.pyplot as plt

    matplotlib.use("Agg")
    drawing, _ = _drawing(schematic, resistor_style=resistor_style, canvas="matplotlib")
    drawing.saveopts["dpi"] = dpi
    try:
        return drawing.get_imagedata("png")
    finally:
        plt.close("all")


def circuit_svg(circuit: Circuit, *, title: str | None = None, show_values: bool = True,
                resistor_style: str = "iec") -> str:
    """A standalone SVG schematic of one circuit, each part labelled.

    Parameters
    ----------
    circuit : Circuit
        For example a section's ``SectionDesign.circuit`` (designators as
        names, values in); a circuit from a topology is laid out by the
        topology's ``[drawing]`` table, any other automatically.
    title : str, optional
        A heading above the drawing.
    show_values : bool
        Label each part with its name and value (``R1 8.06 kΩ``) and each
        op-amp with its model; False shows names (and symbols) only.
    resistor_style : {"iec", "ieee"}
        IEC 60617 rectangle (default) or IEEE 315 zig-zag.

    Returns
    -------
    str
        An ``<svg>`` document.

    Raises
    ------
    SpecError
        For an unknown `resistor_style`.
    """
    check_resistor_style(resistor_style)
    return render_svg(circuit_schematic(circuit, title=title, show_values=show_values),
                      resistor_style=resistor_style)


# -- reading a drawing back --------------------------------------------------------------

@dataclass(frozen=True)
class DrawnGeometry:
    """What a schemdraw drawing holds, read from its elements' positions.

    ``parts`` maps a part key to its two end points, ``opamps`` an op-amp
    name to its (non-inverting, inverting, output) pins; ``wires`` are
    segments, ``dots`` junction dots, ``grounds`` the points ground symbols
    hang from, ``terminals`` node name → point, ``labels`` owner → text.
    """

    parts: dict[str, tuple[Point2, Point2]]
    opamps: dict[str, tuple[Point2, Point2, Point2]]
    wires: tuple[tuple[Point2, Point2], ...]
    dots: tuple[Point2, ...]
    grounds: tuple[Point2, ...]
    terminals: dict[str, Point2]
    labels: dict[str, str | Sequence[str]]


def drawn_geometry(schematic: Schematic, *, resistor_style: str = "iec") -> DrawnGeometry:
    """Draw the schematic with schemdraw and read every element's position back."""
    drawing, tags = _drawing(schematic, resistor_style=resistor_style, canvas="svg")
    parts: dict[str, tuple[Point2, Point2]] = {}
    opamps: dict[str, tuple[Point2, Point2, Point2]] = {}
    wires: list[tuple[Point2, Point2]] = []
    dots: list[Point2] = []
    grounds: list[Point2] = []
    terminals: dict[str, Point2] = {}
    labels: dict[str, str | Sequence[str]] = {}

    def xy(point: Any) -> Point2:
        return (float(point[0]), float(point[1]))

    for item, tag in zip(drawing.elements, tags):
        anchors = item.absanchors
        if tag[0] == "part":
            parts[tag[1]] = (xy(anchors["start"]), xy(anchors["end"]))
        elif tag[0] == "opamp":
            opamps[tag[1]] = (xy(anchors["in2"]), xy(anchors["in1"]), xy(anchors["out"]))
        elif tag[0] == "wire":
            wires.append((xy(anchors["start"]), xy(anchors["end"])))
        elif tag[0] == "dot":
            dots.append(xy(anchors["center"]))
        elif tag[0] == "ground":
            grounds.append(xy(anchors["start"]))
        elif tag[0] == "terminal":
            terminals[tag[1]] = xy(anchors["center"])
        elif tag[0] == "label":
            labels[tag[1]] = item._userlabels[0].label if item._userlabels else ""
    return DrawnGeometry(parts, opamps, tuple(wires), tuple(dots), tuple(grounds), terminals,
                         labels)


# -- files and pages ---------------------------------------------------------------------

def check_schematic_folder(folder: str | os.PathLike[str], *, option: str = "--schematic") -> Path:
    """The folder, or a SpecError when it does not exist."""
    path = Path(folder)
    if not path.is_dir():
        raise SpecError(f"{option}: folder {str(folder)!r} does not exist")
    return path


def write_schematic_files(schematics: Mapping[str, Schematic], folder: str | os.PathLike[str], *,
                          resistor_style: str = "iec", inputs: Sequence[str] = (),
                          option: str = "--schematic") -> tuple[Path, ...]:
    """Write each schematic as ``STEM.svg`` and ``STEM.png`` into `folder`.

    Parameters
    ----------
    schematics : dict
        File stem → Schematic.

    Returns
    -------
    tuple of Path
        The files written.
    """
    where = check_schematic_folder(folder, option=option)
    written = []
    for stem, schematic in schematics.items():
        svg_path, png_path = where / f"{stem}.svg", where / f"{stem}.png"
        for path in (svg_path, png_path):
            check_output_path(path, inputs=inputs, option=option)
        written.append(write_text(svg_path, render_svg(schematic, resistor_style=resistor_style),
                                  inputs=inputs, option=option))
        written.append(write_bytes(png_path, render_png(schematic, resistor_style=resistor_style),
                                   inputs=inputs, option=option))
    return tuple(written)


def schematic_figure(schematic: Schematic, caption: str, prefix: str, *,
                     resistor_style: str = "iec") -> str:
    """An HTML ``<figure>`` holding the schematic as inline SVG, and a caption."""
    svg = render_svg(schematic, resistor_style=resistor_style)
    svg = re.sub(r'\s+xmlns(:\w+)?="[^"]*"', "", svg)
    svg = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{prefix}{m.group(1)}"', svg)
    svg = re.sub(r'href="#([^"]+)"', lambda m: f'href="#{prefix}{m.group(1)}"', svg)
    return (f'<figure class="schematic">\n{svg}\n<figcaption>{html.escape(caption)}'
            "</figcaption>\n</figure>")


def design_schematic_html(design: Design, *, resistor_style: str = "iec") -> list[str]:
    """The report's schematics of a design: each section, then the cascade."""
    drawings = design_schematics(design)
    out = ["<h2>Schematics</h2>",
           f"<p class=\"note\">Each part with its designator and preferred value; op-amps with "
           f"their model. Symbols: {_STYLE_WORDS[resistor_style]}.</p>"]
    for stem, schematic in drawings.items():
        caption = (f"{schematic.title}: every part with its chosen value." if stem != "cascade"
                   else "The sections in cascade order, each with its own parts, and the "
                        "buffers placed between them.")
        out.append(schematic_figure(schematic, caption, f"{stem}-", resistor_style=resistor_style))
    return out


def candidate_schematic_html(circuit: Circuit, caption: str, prefix: str, *,
                             resistor_style: str = "iec") -> str:
    """One comparison candidate's schematic, folded under its caption."""
    figure = schematic_figure(circuit_schematic(circuit), caption, prefix,
                              resistor_style=resistor_style)
    return f"<details><summary>{html.escape(caption)}</summary>\n{figure}\n</details>"


_STYLE_WORDS = {"iec": "IEC 60617 (rectangular resistors)",
                "ieee": "IEEE 315 (zig-zag resistors)"}


def label_boxes(schematic: Schematic) -> tuple[Box, ...]:
    """Every label's box in the schematic (drawing units)."""
    return tuple(label.box for label in schematic.layout.labels)


def symbol_boxes(schematic: Schematic) -> tuple[Box, ...]:
    """The body of every part, op-amp, ground and terminal (drawing units)."""
    layout = schematic.layout
    boxes = [p.body for p in layout.parts] + [o.body for o in layout.opamps]
    boxes += [Box(x - 0.25, y - 0.64, x + 0.25, y) for x, y in layout.grounds]
    boxes += [Box(t.at[0] - 0.11, t.at[1] - 0.11, t.at[0] + 0.11, t.at[1] + 0.11)
              for t in layout.terminals]
    return tuple(boxes)


__all__ += ["label_boxes", "symbol_boxes", "opamp_model_text", "design_schematics",
            "cascade_buffers", "compensator_schematic", "design_schematic_html",
            "candidate_schematic_html"]
