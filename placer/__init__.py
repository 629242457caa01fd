"""placer: from pole-zero targets to a bill of materials.

An analog designer gives the roots a block must have (a filter
approximation, a compensation plan, explicit poles and zeros); placer
picks topologies that can realise them, solves and snaps part values to
IEC 60063 preferred values, and gives the evidence: achieved roots,
responses, tolerance spread, op-amp effects and loop margins.

The analysis underneath is modified nodal analysis (MNA): symbolic
network functions by expansion into shared minors in a polynomial ring,
and numeric poles, zeros and responses from the matrix pencil.

The public names below load their module on first use, so that
``import placer`` (and the ``placer`` command's ``--help``) stays quick.
"""

import importlib
from typing import Any

__version__ = "0.1.0"

#: Public name → module that defines it.
_EXPORTS = {
    "PlacerError": "errors", "SpecError": "errors", "TopologyError": "errors",
    "UnreachableTarget": "errors", "NumericalWarning": "errors",
    "SymbolicSizeError": "errors",
    "parse_quantity": "units", "parse_value": "units", "format_value": "units",
    "SERIES_NAMES": "eseries", "series_values": "eseries", "nearest": "eseries",
    "neighbours": "eseries", "usual_tolerance": "eseries",
    "Element": "circuit.elements", "Circuit": "circuit.elements", "circuit_from_dict": "circuit.elements",
    "Topology": "circuit.topology", "load_topology": "circuit.topology",
    "library_topologies": "circuit.library", "get_topology": "circuit.library",
    "resolve_topology": "circuit.library", "find_topologies": "circuit.library",
    "load_analysable": "circuit.library", "SPEC_TABLES": "schema", "read_toml": "schema",
    "NetworkFunction": "analysis.network", "network_function": "analysis.network",
    "circuit_poles": "analysis.pencil", "circuit_zeros": "analysis.pencil", "circuit_response": "analysis.pencil",
    "circuit_roots": "analysis.pencil", "circuit_gain": "analysis.pencil",
    "Target": "target.targets", "Section": "target.targets", "make_section": "target.targets",
    "design_target": "target.targets", "target_from_roots": "target.targets",
    "split_sections": "target.sections", "target_from_table": "spec.target_table",
    "estimate_orders": "target.approximations",
    "goal_from_section": "place.solve", "make_problem": "place.solve", "solve": "place.solve",
    "snap": "place.snap", "round_each": "place.snap",
    "sensitivities": "analysis.sensitivity", "monte_carlo": "evidence.tolerance",
    "cascade_monte_carlo": "evidence.tolerance", "loop_monte_carlo": "loops.tolerance",
    "Response": "analysis.response", "verify": "evidence.verify", "margins": "evidence.verify",
    "Plant": "loops.plants", "buck_plant": "loops.plants", "boost_plant": "loops.plants",
    "design_compensator": "loops.compensator",
    "Spec": "spec.reader", "load_spec": "spec.reader",
    "apply_amplifier": "place.opamp", "AmplifierSpec": "place.opamp", "function_at_gbw": "place.opamp",
    "place_section_with_amplifier": "place.amplifier", "built_drift": "place.amplifier",
    "required_gbw": "place.gbw",
    "Design": "design", "design": "design", "place_section": "design",
    "gather_evidence": "evidence.gather",
    "Mask": "target.mask", "approximation_mask": "target.mask", "MaskVerdict": "evidence.gather",
    "MaskFigures": "evidence.gather", "check_mask": "evidence.gather", "mask_verdict": "evidence.gather",
    "realises": "circuit.library", "notch_kind": "target.targets", "cascade_gain": "design",
    "place_candidate": "design", "candidate_seeds": "place.placement",
    "right_half_plane_poles": "place.placement", "natural_frequencies": "analysis.pencil",
    "gather_evidence": "evidence.gather",
    "compare": "compare", "comparison_to_dict": "compare", "rank_candidates": "compare",
    "analyse_noise": "analysis.noise", "noise_spectrum": "analysis.noise", "NoiseAnalysis": "analysis.noise",
    "opamp_loop": "analysis.return_ratio", "OpampLoop": "analysis.return_ratio",
    "choose_level": "place.level", "LevelRule": "place.level", "LevelChoice": "place.level",
    "check_design": "evidence.prelayout", "Prelayout": "evidence.prelayout",
    "DrawingSpec": "circuit.drawing", "Plan": "circuit.drawing", "automatic_plan": "circuit.drawing_auto",
    "plan_for": "circuit.drawing_auto", "circuit_svg": "report.schematic",
}

__all__ = ["__version__", *_EXPORTS]


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'placer' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
