"""Circuits: elements and validation, topology files, the library, generated ladders."""

from .elements import (
    KINDS,
    NODE_COUNT,
    SYMBOL_PATTERN,
    Element,
    Circuit,
    circuit_from_dict,
    check_symbol,
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
    find_topologies,
)
from .topology import (
    RESPONSES,
    DEFAULT_RANGES,
    Constraint,
    Topology,
    parse_constraint,
    topology_from_text,
    topology_from_dict,
    load_topology,
)

__all__ = [
    "KINDS",
    "NODE_COUNT",
    "SYMBOL_PATTERN",
    "Element",
    "Circuit",
    "circuit_from_dict",
    "check_symbol",
    "LADDER_ORDERS",
    "GENERATED_ORDERS",
    "ladder_topology",
    "generated_topologies",
    "butterworth_ladder_values",
    "ladder_part_values",
    "LIBRARY_DIR",
    "library_topologies",
    "get_topology",
    "resolve_topology",
    "load_folder",
    "find_topologies",
    "RESPONSES",
    "DEFAULT_RANGES",
    "Constraint",
    "Topology",
    "parse_constraint",
    "topology_from_text",
    "topology_from_dict",
    "load_topology",
]
