"""placer: from pole-zero targets to a bill of materials.

An analog designer gives the roots a block must have (a filter
approximation, a compensation plan, explicit poles and zeros); placer
picks topologies that can realise them, solves and snaps part values to
IEC 60063 preferred values, and gives the evidence: achieved roots,
responses, tolerance spread, op-amp effects and loop margins.

The analysis underneath is modified nodal analysis (MNA): symbolic
network functions by fraction-free determinants in a polynomial ring,
and numeric poles, zeros and responses from the matrix pencil.
"""

__version__ = "0.1.0"

from .errors import NumericalWarning, PlacerError, SpecError, TopologyError, UnreachableTarget
from .units import format_value, parse_quantity, parse_value
from .eseries import SERIES_NAMES, nearest, neighbours, series_values, usual_tolerance
from .circuit import Circuit, Element, circuit_from_dict
from .topology import Topology, load_topology
from .library import find_topologies, get_topology, library_topologies, resolve_topology
from .network import (
    NetworkFunction,
    circuit_poles,
    circuit_response,
    circuit_zeros,
    network_function,
)
from .targets import Section, Target, split_sections, target_from_table
from .solve import goal_from_section, make_problem, solve
from .snap import snap
from .spec import Spec, load_spec
from .design import Design, design

__all__ = [
    "__version__",
    "NumericalWarning", "PlacerError", "SpecError", "TopologyError", "UnreachableTarget",
    "format_value", "parse_quantity", "parse_value",
    "SERIES_NAMES", "nearest", "neighbours", "series_values", "usual_tolerance",
    "Circuit", "Element", "circuit_from_dict",
    "Topology", "load_topology",
    "find_topologies", "get_topology", "library_topologies", "resolve_topology",
    "NetworkFunction", "circuit_poles", "circuit_response", "circuit_zeros", "network_function",
    "Section", "Target", "split_sections", "target_from_table",
    "goal_from_section", "make_problem", "solve", "snap",
    "Spec", "load_spec", "Design", "design",
]
