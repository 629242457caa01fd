"""Placement: continuous solve, preferred-value snapping, op-amp models and correction, GBW.

The public names load their module on first use (so that the command line
answers fast); ``__all__`` lists them all.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .amplifier import (
        Drift,
        AmplifiedCandidate,
        place_section_with_amplifier,
        amplifier_summary,
        built_drift,
        correct_placement,
        CorrectedPlacement,
        gbw_spread_error,
        robust_first,
        ROBUST_STARTS,
        ROBUST_SLACK,
    )
    from .gbw import (
        GBWRequirement,
        required_gbw,
        as_built_gbw,
        AS_BUILT_FLOOR,
        search_top_hz,
    )
    from .least_squares import (
        batched_least_squares,
    )
    from .level import (
        LOAD_HEADROOM,
        DEFAULT_MIN_LOAD,
        LevelRule,
        LevelStep,
        LevelChoice,
        LevelResult,
        level_exponents,
        level_steps,
        choose_level,
        describe_level,
        level_rules,
        within,
    )
    from .opamp import (
        AMPLIFIER_PRESETS,
        AmplifierSpec,
        GBW_SPREAD,
        apply_amplifier,
        check_amplifier,
        describe_amplifier,
        function_at_gbw,
        ScaledFunction,
    )
    from .placement import (
        PART_KINDS,
        UNSTABLE_REASON,
        Candidate,
        CandidateSeeds,
        candidate_seeds,
        parts_notes,
        right_half_plane_poles,
        require_stable,
        IdealPlacement,
        problem_options,
        ProblemOptions,
        place_ideal,
        value_spread,
        worst_error_quantity,
        snap_weighs_gain,
        GAIN_WITHIN_REACH,
    )
    from .snap import (
        SnapResult,
        snap,
        round_each,
        default_series,
        COARSE_BUDGET,
        SPREAD_SLACK,
        ERROR_CEILING,
    )
    from .solve import (
        Goal,
        goal_from_section,
        goal_from_roots,
        Problem,
        make_problem,
        Solution,
        solve,
        RootErrors,
        root_errors,
        structural_reason,
        figure_error,
    )
    from .ties import (
        Ties,
        tie_parts,
    )

#: Public name -> the module of this folder that defines it.
_EXPORTS = {
    "Drift": "amplifier",
    "AmplifiedCandidate": "amplifier",
    "place_section_with_amplifier": "amplifier",
    "amplifier_summary": "amplifier",
    "built_drift": "amplifier",
    "correct_placement": "amplifier",
    "CorrectedPlacement": "amplifier",
    "gbw_spread_error": "amplifier",
    "robust_first": "amplifier",
    "ROBUST_STARTS": "amplifier",
    "ROBUST_SLACK": "amplifier",
    "GBWRequirement": "gbw",
    "required_gbw": "gbw",
    "as_built_gbw": "gbw",
    "AS_BUILT_FLOOR": "gbw",
    "search_top_hz": "gbw",
    "batched_least_squares": "least_squares",
    "LOAD_HEADROOM": "level",
    "DEFAULT_MIN_LOAD": "level",
    "LevelRule": "level",
    "LevelStep": "level",
    "LevelChoice": "level",
    "LevelResult": "level",
    "level_exponents": "level",
    "level_steps": "level",
    "choose_level": "level",
    "describe_level": "level",
    "level_rules": "level",
    "within": "level",
    "AMPLIFIER_PRESETS": "opamp",
    "AmplifierSpec": "opamp",
    "GBW_SPREAD": "opamp",
    "apply_amplifier": "opamp",
    "check_amplifier": "opamp",
    "describe_amplifier": "opamp",
    "function_at_gbw": "opamp",
    "ScaledFunction": "opamp",
    "PART_KINDS": "placement",
    "UNSTABLE_REASON": "placement",
    "Candidate": "placement",
    "CandidateSeeds": "placement",
    "candidate_seeds": "placement",
    "parts_notes": "placement",
    "right_half_plane_poles": "placement",
    "require_stable": "placement",
    "IdealPlacement": "placement",
    "problem_options": "placement",
    "ProblemOptions": "placement",
    "place_ideal": "placement",
    "value_spread": "placement",
    "worst_error_quantity": "placement",
    "snap_weighs_gain": "placement",
    "GAIN_WITHIN_REACH": "placement",
    "SnapResult": "snap",
    "snap": "snap",
    "round_each": "snap",
    "default_series": "snap",
    "COARSE_BUDGET": "snap",
    "SPREAD_SLACK": "snap",
    "ERROR_CEILING": "snap",
    "Goal": "solve",
    "goal_from_section": "solve",
    "goal_from_roots": "solve",
    "Problem": "solve",
    "make_problem": "solve",
    "Solution": "solve",
    "solve": "solve",
    "RootErrors": "solve",
    "root_errors": "solve",
    "structural_reason": "solve",
    "figure_error": "solve",
    "Ties": "ties",
    "tie_parts": "ties",
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
