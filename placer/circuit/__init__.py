"""Circuits: elements and validation, topology files, the library, generated ladders.

The public names load their module on first use (so that the command line
answers fast); ``__all__`` lists them all.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .drawing import (
        PlanBuilder,
        spans_cross,
        leg_point,
        DRAWING_KEYS,
        DrawingSpec,
        Point,
        Step,
        Branch,
        Leg,
        Plan,
        drawing_from_table,
        resolve_plan,
        part_nodes,
        circuit_parts,
    )
    from .drawing_auto import (
        automatic_plan,
        plan_for,
    )
    from .elements import (
        KINDS,
        KIND_UNITS,
        VALUE_LIMITS,
        RESERVED_SYMBOLS,
        NODE_COUNT,
        SYMBOL_PATTERN,
        Element,
        Circuit,
        circuit_from_dict,
        check_symbol,
        check_part_value,
        read_settings,
    )
    from .ladders import (
        LADDER_ORDERS,
        GENERATED_ORDERS,
        ladder_topology,
        generated_topologies,
        butterworth_ladder_values,
        ladder_part_values,
    )
    from .library import (
        LIBRARY_DIR,
        library_topologies,
        get_topology,
        resolve_topology,
        load_folder,
        LoadedFolder,
        find_topologies,
        realises,
        Analysable,
        load_analysable,
    )
    from .topology import (
        RESPONSES,
        NOTCH_KINDS,
        DEFAULT_RANGES,
        Constraint,
        Topology,
        parse_constraint,
        topology_from_text,
        topology_from_dict,
        load_topology,
    )

#: Public name -> the module of this folder that defines it.
_EXPORTS = {
    "PlanBuilder": "drawing",
    "spans_cross": "drawing",
    "leg_point": "drawing",
    "DRAWING_KEYS": "drawing",
    "DrawingSpec": "drawing",
    "Point": "drawing",
    "Step": "drawing",
    "Branch": "drawing",
    "Leg": "drawing",
    "Plan": "drawing",
    "drawing_from_table": "drawing",
    "resolve_plan": "drawing",
    "part_nodes": "drawing",
    "circuit_parts": "drawing",
    "automatic_plan": "drawing_auto",
    "plan_for": "drawing_auto",
    "KINDS": "elements",
    "KIND_UNITS": "elements",
    "VALUE_LIMITS": "elements",
    "RESERVED_SYMBOLS": "elements",
    "NODE_COUNT": "elements",
    "SYMBOL_PATTERN": "elements",
    "Element": "elements",
    "Circuit": "elements",
    "circuit_from_dict": "elements",
    "check_symbol": "elements",
    "check_part_value": "elements",
    "read_settings": "elements",
    "LADDER_ORDERS": "ladders",
    "GENERATED_ORDERS": "ladders",
    "ladder_topology": "ladders",
    "generated_topologies": "ladders",
    "butterworth_ladder_values": "ladders",
    "ladder_part_values": "ladders",
    "LIBRARY_DIR": "library",
    "library_topologies": "library",
    "get_topology": "library",
    "resolve_topology": "library",
    "load_folder": "library",
    "LoadedFolder": "library",
    "find_topologies": "library",
    "realises": "library",
    "Analysable": "library",
    "load_analysable": "library",
    "RESPONSES": "topology",
    "NOTCH_KINDS": "topology",
    "DEFAULT_RANGES": "topology",
    "Constraint": "topology",
    "Topology": "topology",
    "parse_constraint": "topology",
    "topology_from_text": "topology",
    "topology_from_dict": "topology",
    "load_topology": "topology",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return list(__all__)
