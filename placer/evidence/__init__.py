"""Evidence for a design: verification, tolerance Monte Carlo.

The public names load their module on first use (so that the command line
answers fast); ``__all__`` lists them all.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .figures import (
        HALF_POWER_DB,
        PEAK_TIE_DB,
        StepFigures,
        FrequencyFigures,
        Figures,
        step_figures,
        frequency_figures,
    )
    from .gather import (
        SectionEvidence,
        Evidence,
        MaskFigures,
        MaskVerdict,
        gather_evidence,
        part_tolerances,
        check_mask,
        mask_verdict,
    )
    from .prelayout import (
        DEFAULT_LOOP_PRESET,
        DEFAULT_AMPLITUDE,
        PrelayoutSettings,
        NodeSwing,
        SlewNeed,
        OpampLoad,
        SectionChecks,
        Prelayout,
        default_band,
        settings_for,
        level_rules_for,
        loop_model,
        checked_circuit,
        check_design,
        compensator_loops,
        loop_to_dict,
    )
    from .tolerance import (
        DISTRIBUTIONS,
        WINDOW_KEYS,
        DEFAULT_WINDOWS,
        MAX_REJECTION_DB,
        MAX_SAMPLES,
        CHUNK,
        monte_carlo,
        cascade_monte_carlo,
        cascade_magnitude_blocks,
        MASK_BLOCK,
    )
    from .tolerance_results import (
        Statistics,
        MonteCarloResult,
        CascadeMonteCarloResult,
    )
    from .verify import (
        Deviation,
        Verification,
        Margins,
        deviation,
        verify,
        margins,
    )
    from .workers import (
        PARALLEL_MIN_SAMPLES,
        POLL_SECONDS,
        check_workers,
        worker_ranges,
        worker_pool,
        results_in_order,
        results_as_completed,
    )

#: Public name -> the module of this folder that defines it.
_EXPORTS = {
    "HALF_POWER_DB": "figures",
    "PEAK_TIE_DB": "figures",
    "StepFigures": "figures",
    "FrequencyFigures": "figures",
    "Figures": "figures",
    "step_figures": "figures",
    "frequency_figures": "figures",
    "SectionEvidence": "gather",
    "Evidence": "gather",
    "MaskFigures": "gather",
    "MaskVerdict": "gather",
    "gather_evidence": "gather",
    "part_tolerances": "gather",
    "check_mask": "gather",
    "mask_verdict": "gather",
    "DEFAULT_LOOP_PRESET": "prelayout",
    "DEFAULT_AMPLITUDE": "prelayout",
    "PrelayoutSettings": "prelayout",
    "NodeSwing": "prelayout",
    "SlewNeed": "prelayout",
    "OpampLoad": "prelayout",
    "SectionChecks": "prelayout",
    "Prelayout": "prelayout",
    "default_band": "prelayout",
    "settings_for": "prelayout",
    "level_rules_for": "prelayout",
    "loop_model": "prelayout",
    "checked_circuit": "prelayout",
    "check_design": "prelayout",
    "compensator_loops": "prelayout",
    "loop_to_dict": "prelayout",
    "DISTRIBUTIONS": "tolerance",
    "WINDOW_KEYS": "tolerance",
    "DEFAULT_WINDOWS": "tolerance",
    "MAX_REJECTION_DB": "tolerance",
    "MAX_SAMPLES": "tolerance",
    "CHUNK": "tolerance",
    "monte_carlo": "tolerance",
    "cascade_monte_carlo": "tolerance",
    "cascade_magnitude_blocks": "tolerance",
    "MASK_BLOCK": "tolerance",
    "Statistics": "tolerance_results",
    "MonteCarloResult": "tolerance_results",
    "CascadeMonteCarloResult": "tolerance_results",
    "Deviation": "verify",
    "Verification": "verify",
    "Margins": "verify",
    "deviation": "verify",
    "verify": "verify",
    "margins": "verify",
    "PARALLEL_MIN_SAMPLES": "workers",
    "POLL_SECONDS": "workers",
    "check_workers": "workers",
    "worker_ranges": "workers",
    "worker_pool": "workers",
    "results_in_order": "workers",
    "results_as_completed": "workers",
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
