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
The workflow from Python (the README's "From Python" has it as doctests)::

    spec = placer.load_spec("examples/adc-antialias.toml")   # or spec_from_dict({...})
    result = placer.design(spec)                              # a Design
    result.parts, result.sections[0].candidate.errors
    placer.compare(spec), placer.run_loop(spec.loop, parts=spec.parts)
    result.plot()                                             # a matplotlib Figure

Results show themselves in a notebook (``_repr_html_``, from
:mod:`placer.report.notebook`).
"""

import importlib
import sys
import types
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
    "compare": "compare", "comparison_to_dict": "compare", "rank_candidates": "compare",
    "analyse_noise": "analysis.noise", "noise_spectrum": "analysis.noise", "NoiseAnalysis": "analysis.noise",
    "opamp_loop": "analysis.return_ratio", "OpampLoop": "analysis.return_ratio",
    "choose_level": "place.level", "LevelRule": "place.level", "LevelChoice": "place.level",
    "check_design": "evidence.prelayout", "Prelayout": "evidence.prelayout",
    "DrawingSpec": "circuit.drawing", "Plan": "circuit.drawing", "automatic_plan": "circuit.drawing_auto",
    "plan_for": "circuit.drawing_auto", "circuit_svg": "report.schematic",
    # the workflow from Python and every result type it returns
    "spec_from_dict": "spec.reader", "run_loop": "spec.loop_table", "loop_to_dict": "spec.loop_table",
    "LoopSpec": "spec.loop_table", "LoopResult": "spec.loop_table",
    "LoopDesign": "loops.compensator", "LoopMonteCarlo": "loops.tolerance",
    "SectionDesign": "design", "PartChoice": "design", "design_to_dict": "report.data",
    "Comparison": "compare", "SectionComparison": "compare", "CandidateResult": "compare",
    "Evidence": "evidence.gather", "SectionEvidence": "evidence.gather",
    "MonteCarloResult": "evidence.tolerance_results", "CascadeMonteCarloResult": "evidence.tolerance_results",
    "Statistics": "evidence.tolerance_results",
    "Verification": "evidence.verify", "Margins": "evidence.verify",
    "Candidate": "place.placement",
}

__all__ = ["__version__", *_EXPORTS]


#: Exported functions named like the module that defines them (``placer.design``
#: the function, from the module ``placer.design``).
_SAME_NAME = frozenset(name for name, module in _EXPORTS.items() if name == module)


class _Package(types.ModuleType):
    """The package, whose functions ``design`` and ``compare`` stay functions.

    Importing the module ``placer.design`` sets the package's attribute
    ``design`` to that module; this keeps the function of that name instead.
    The modules themselves are ``sys.modules["placer.design"]`` and are what
    ``from placer.design import Design`` reads.
    """

    def __setattr__(self, name: str, value: Any) -> None:
        if name in _SAME_NAME and isinstance(value, types.ModuleType):
            value = getattr(value, name)
        super().__setattr__(name, value)


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'placer' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)


sys.modules[__name__].__class__ = _Package
