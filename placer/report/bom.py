"""Bill of materials: parts grouped by kind, value and series, as CSV."""

from __future__ import annotations

import csv
import io

from ..eseries import usual_tolerance
from ..circuit.elements import KIND_UNITS
from ..units import format_value

__all__ = ["bom_rows", "bom_csv"]



def bom_rows(parts, *, tolerances=None, opamps=()):
    """Rows of a bill of materials, one per (kind, value, series).

    Parameters
    ----------
    parts : iterable of PartChoice
    tolerances : mapping, optional
        Kind → tolerance fraction (default: the series' usual tolerance).
    opamps : iterable of (designator, description)
        Op-amps to list (they carry no value).

    Returns
    -------
    list of dict
        Keys: ``references``, ``value``, ``value_si``, ``series``,
        ``tolerance``, ``kind``, ``quantity``.
    """
    tolerances = dict(tolerances or {})
    groups = {}
    for part in parts:
        key = (part.kind, round(part.value, 15), part.series)
        groups.setdefault(key, []).append(part)
    rows = []
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
        })
    return rows


def bom_csv(rows):
    """The rows as CSV text with a header line."""
    buffer = io.StringIO()
    fields = ["references", "value", "value_si", "series", "tolerance", "kind", "quantity"]
    writer = csv.DictWriter(buffer, fieldnames=fields, lineterminator="\n")
    writer.writeheader()
    for row in rows:
        writer.writerow(row)
    return buffer.getvalue()
