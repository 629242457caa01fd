"""Bill of materials: parts grouped by kind, value and series, as CSV."""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Mapping
from typing import TYPE_CHECKING, Any

from ..eseries import usual_tolerance
from ..circuit.elements import KIND_UNITS
from ..units import format_value
from ..place.opamp import describe_amplifier

if TYPE_CHECKING:
    from ..design import PartChoice
    from ..place.opamp import AmplifierSpec

__all__ = ["bom_rows", "bom_csv", "opamp_model_text", "BOM_FIELDS"]

#: The CSV columns, in order.
BOM_FIELDS: list[str] = ["references", "value", "value_si", "series", "tolerance", "kind", "quantity",
              "opamp_model"]



def opamp_model_text(amplifier: AmplifierSpec | None) -> str:
    """The op-amp model a design assumed, in words: "single-pole model: GBW 10 MHz, …" or "ideal"."""
    if amplifier is None or (amplifier.gbw is None and amplifier.gain is None):
        return "ideal (infinite gain and GBW)"
    return "single-pole model: " + describe_amplifier(amplifier)


def bom_rows(parts: Iterable[PartChoice], *, tolerances: Mapping[str, float] | None = None,
             opamps: Iterable[tuple[str, str]] = (),
             amplifier: AmplifierSpec | None = None) -> list[dict[str, Any]]:
    """Rows of a bill of materials, one per (kind, value, series).

    Parameters
    ----------
    parts : iterable of PartChoice
    tolerances : mapping, optional
        Kind → tolerance fraction (default: the series' usual tolerance).
    opamps : iterable of (designator, description)
        Op-amps to list (they carry no value).
    amplifier : AmplifierSpec, optional
        The op-amp model the design assumed (None: ideal), for the op-amp
        row's ``opamp_model``.

    Returns
    -------
    list of dict
        Keys: ``references``, ``value``, ``value_si``, ``series``,
        ``tolerance``, ``kind``, ``quantity``, ``opamp_model`` (the op-amp
        model assumed, on op-amp rows; empty on the others).
    """
    tolerances = dict(tolerances or {})
    groups: dict[tuple[str, float, str], list[PartChoice]] = {}
    for part in parts:
        key = (part.kind, round(part.value, 15), part.series)
        groups.setdefault(key, []).append(part)
    rows: list[dict[str, Any]] = []
    for (kind, value, series), members in sorted(groups.items(), key=lambda item: (item[0][0], item[0][1])):
        tolerance = tolerances.get(kind)
        if tolerance is None and series:
            tolerance = usual_tolerance(series)
        rows.append({
            "references": " ".join(p.name for p in members),
            "value": format_value(members[0].value, KIND_UNITS[kind]),
            "value_si": float(members[0].value),
            "series": series or "-",
            "tolerance": f"{100 * tolerance:g}%" if tolerance else "-",
            "kind": kind,
            "quantity": len(members),
            "opamp_model": "",
        })
    amplifiers = list(opamps)
    if amplifiers:
        rows.append({
            "references": " ".join(d for d, _ in amplifiers),
            "value": amplifiers[0][1],
            "value_si": "",
            "series": "-",
            "tolerance": "-",
            "kind": "opamp",
            "quantity": len(amplifiers),
            "opamp_model": opamp_model_text(amplifier),
        })
    return rows


def bom_csv(rows: Iterable[Mapping[str, Any]]) -> str:
    """The rows as CSV text with a header line."""
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=BOM_FIELDS, lineterminator="\n")
    writer.writeheader()
    for row in rows:
        writer.writerow(row)
    return buffer.getvalue()
