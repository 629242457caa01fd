"""Evidence for a design: verification, tolerance Monte Carlo.

The public names load their module on first use (so that the command line
answers fast); ``__all__`` lists them all.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .gather import (
        SectionEvidence,
        Evidence,
        gather_evidence,
        part_tolerances,
    )
    from .tolerance import (
        DISTRIBUTIONS,
        WINDOW_KEYS,
        MAX_REJECTION_DB,
        MAX_SAMPLES,
        CHUNK,
        PARALLEL_MIN_SAMPLES,
        check_workers,
        worker_ranges,
        Statistics,
        MonteCarloResult,
        CascadeMonteCarloResult,
        monte_carlo,
        cascade_monte_carlo,
    )
    from .verify import (
        HALF_POWER_DB,
        StepFigures,
        FrequencyFigures,
        Figures,
        Deviation,
        Verification,
        Margins,
        step_figures,
        frequency_figures,
        deviation,
        verify,
        margins,
    )

#: Public name -> the module of this folder that defines it.
_EXPORTS = {
    "SectionEvidence": "gather",
    "Evidence": "gather",
    "gather_evidence": "gather",
    "part_tolerances": "gather",
    "DISTRIBUTIONS": "tolerance",
    "WINDOW_KEYS": "tolerance",
    "MAX_REJECTION_DB": "tolerance",
    "MAX_SAMPLES": "tolerance",
    "CHUNK": "tolerance",
    "PARALLEL_MIN_SAMPLES": "tolerance",
    "check_workers": "tolerance",
    "worker_ranges": "tolerance",
    "Statistics": "tolerance",
    "MonteCarloResult": "tolerance",
    "CascadeMonteCarloResult": "tolerance",
    "monte_carlo": "tolerance",
    "cascade_monte_carlo": "tolerance",
    "HALF_POWER_DB": "verify",
    "StepFigures": "verify",
    "FrequencyFigures": "verify",
    "Figures": "verify",
    "Deviation": "verify",
    "Verification": "verify",
    "Margins": "verify",
    "step_figures": "verify",
    "frequency_figures": "verify",
    "deviation": "verify",
    "verify": "verify",
    "margins": "verify",
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
