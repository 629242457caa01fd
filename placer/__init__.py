"""placer: from pole-zero targets to a bill of materials.

An analog designer gives the roots a block must have (a filter
approximation, a compensation plan, explicit poles and zeros); placer
picks topologies that can realise them, solves and snaps part values to
IEC 60063 preferred values, and gives the evidence: achieved roots,
responses, tolerance spread, op-amp effects and loop margins.

The analysis underneath is modified nodal analysis (MNA): symbolic
network functions by fraction-free determinants in a polynomial ring,
and numeric poles, zeros and responses from the matrix pencil.

The public names below load their module on first use, so that
``import placer`` (and the ``placer`` command's ``--help``) stays quick.
"""

import importlib

__version__ = "0.1.0"

#: Public name → module that defines it.
_EXPORTS = {
    "PlacerError": "errors", "SpecError": "errors", "TopologyError": "errors",
    "UnreachableTarget": "errors", "NumericalWarning": "errors",
    "parse_quantity": "units", "parse_value": "units", "format_value": "units",
    "SERIES_NAMES": "eseries", "series_values": "eseries", "nearest": "eseries",
    "neighbours": "eseries", "usual_tolerance": "eseries",
    "Element": "circuit", "Circuit": "circuit", "circuit_from_dict": "circuit",
    "Topology": "topology", "load_topology": "topology",
    "library_topologies": "library", "get_topology": "library",
    "resolve_topology": "library", "find_topologies": "library",
    "load_analysable": "library", "SPEC_TABLES": "schema", "read_toml": "schema",
    "NetworkFunction": "network", "network_function": "network",
    "circuit_poles": "pencil", "circuit_zeros": "pencil", "circuit_response": "pencil",
    "circuit_roots": "pencil", "circuit_gain": "pencil",
    "Target": "targets", "Section": "targets", "make_section": "targets",
    "design_target": "targets", "target_from_roots": "targets",
    "split_sections": "sections", "target_from_table": "target_table",
    "estimate_orders": "approximations",
    "goal_from_section": "solve", "make_problem": "solve", "solve": "solve",
    "snap": "snap", "round_each": "snap",
    "sensitivities": "sensitivity", "monte_carlo": "tolerance",
    "cascade_monte_carlo": "tolerance", "loop_monte_carlo": "loop_tolerance",
    "Response": "response", "verify": "verify", "margins": "verify",
    "Plant": "plants", "buck_plant": "plants", "boost_plant": "plants",
    "design_compensator": "loop",
    "Spec": "spec", "load_spec": "spec",
    "apply_amplifier": "opamp", "AmplifierSpec": "opamp", "function_at_gbw": "opamp",
    "place_section_with_amplifier": "amplifier", "built_drift": "amplifier",
    "required_gbw": "gbw",
    "Design": "design", "design": "design", "place_section": "design",
    "gather_evidence": "evidence",
    "compare": "compare", "comparison_to_dict": "compare", "rank_candidates": "compare",
}

__all__ = ["__version__", *_EXPORTS]


def __getattr__(name):
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'placer' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(__all__)
