"""A section circuit as a standalone SVG: each element, its value, its nodes.

A plain drawing: one labelled box per element in a chain, in the
circuit's own order, with the element's name, its value (engineering
notation) and the nodes it connects. It names every part of the circuit
and nothing else, so it is always true to the circuit, though it is no
wiring diagram.
"""

from __future__ import annotations

from html import escape

from ..circuit.elements import Circuit, Element
from ..units import format_value

__all__ = ["circuit_svg", "RESISTOR_STYLES"]

#: Resistor symbol conventions: a rectangle (IEC 60617) or a zigzag (ANSI).
RESISTOR_STYLES = ("iec", "ansi")

_UNIT = {"resistor": "ohm", "capacitor": "F", "inductor": "H", "vsource": "V", "isource": "A"}
_BOX_W, _BOX_H, _GAP, _PAD = 150, 62, 18, 10


def _value_text(element: Element) -> str:
    """The element's value as a person reads it, or '' for none."""
    if element.kind == "opamp":
        bits = []
        if element.gbw is not None:
            bits.append(f"GBW {format_value(element.gbw, 'Hz')}")
        if element.gain is not None:
            bits.append(f"A0 {element.gain:.3g}")
        return ", ".join(bits) or "ideal"
    if element.kind in ("vcvs", "vccs", "cccs", "ccvs"):
        return "" if element.gain is None else f"gain {element.gain:.4g}"
    if element.value is not None:
        return format_value(element.value, _UNIT.get(element.kind, ""))
    return element.symbol or ""


def circuit_svg(circuit: Circuit, *, title: str | None = None, show_values: bool = True,
                resistor_style: str = "iec") -> str:
    """A standalone SVG document listing a circuit's elements.

    Parameters
    ----------
    circuit : placer.circuit.elements.Circuit
    title : str, optional
        A heading above the drawing (default: the circuit's name).
    show_values : bool
        Print each element's value (ohm, farad, henry; an op-amp's GBW).
    resistor_style : {"iec", "ansi"}
        The resistor symbol's convention (kept for the full schematic's
        signature; the boxes here look the same for both).

    Returns
    -------
    str
        An SVG document (UTF-8 text, no external references).

    Raises
    ------
    ValueError
        For a `resistor_style` outside :data:`RESISTOR_STYLES`.

    Examples
    --------
    >>> c = Circuit((Element("R1", "resistor", ("vin", "vout"), value=4750.0),
    ...              Element("C1", "capacitor", ("vout", "gnd"), value=22e-9)))
    >>> svg = circuit_svg(c)
    >>> "R1" in svg and "4.75 kΩ" in svg and "22 nF" in svg
    True
    """
    if resistor_style not in RESISTOR_STYLES:
        raise ValueError(f"resistor_style must be one of {', '.join(RESISTOR_STYLES)}, "
                         f"not {resistor_style!r}")
    heading = title if title is not None else (circuit.name or "circuit")
    per_row = 4
    count = len(circuit.elements)
    rows = (count + per_row - 1) // per_row
    width = _PAD * 2 + per_row * _BOX_W + (per_row - 1) * _GAP
    top = 34
    height = top + rows * (_BOX_H + _GAP) + 22
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
           f'viewBox="0 0 {width} {height}" font-family="sans-serif" font-size="12">',
           f'<title>{escape(heading)}</title>',
           f'<rect width="{width}" height="{height}" fill="#fff"/>',
           f'<text x="{_PAD}" y="20" font-size="14" font-weight="bold">{escape(heading)}</text>']
    for i, element in enumerate(circuit.elements):
        x = _PAD + (i % per_row) * (_BOX_W + _GAP)
        y = top + (i // per_row) * (_BOX_H + _GAP)
        if i % per_row:
            out.append(f'<line x1="{x - _GAP}" y1="{y + _BOX_H / 2}" x2="{x}" '
                       f'y2="{y + _BOX_H / 2}" stroke="#888"/>')
        out.append(f'<g class="element" data-name="{escape(element.name)}">'
                   f'<rect x="{x}" y="{y}" width="{_BOX_W}" height="{_BOX_H}" rx="4" '
                   f'fill="#f4f7fb" stroke="#36c"/>'
                   f'<text x="{x + 8}" y="{y + 17}" font-weight="bold">{escape(element.name)}'
                   f'<tspan font-weight="normal" fill="#555"> {escape(element.kind)}</tspan></text>')
        if show_values:
            out.append(f'<text x="{x + 8}" y="{y + 35}">{escape(_value_text(element))}</text>')
        out.append(f'<text x="{x + 8}" y="{y + 53}" fill="#555">'
                   f'{escape(" – ".join(element.nodes))}</text></g>')
    out.append(f'<text x="{_PAD}" y="{height - 6}" fill="#555">in {escape(circuit.input)}, '
               f'out {escape(circuit.output)}, reference {escape(circuit.reference)}</text>')
    out.append("</svg>")
    return "\n".join(out)
