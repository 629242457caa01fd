"""Loops: plants, compensators, the loop Monte Carlo.

The public names load their module on first use (so that the command line
answers fast); ``__all__`` lists them all.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .compensator import (
        COMPENSATOR_FAMILIES,
        MAX_BOOST_DEG,
        MIN_BOOST_DEG,
        LOW_GAIN_MARGIN_DB,
        RHP_ZERO_FRACTION,
        DEFAULT_RANGES,
        rhp_zero_hz,
        rhp_zero_note,
        KFactorPlacement,
        LoopDesign,
        check_compensator,
        k_factor,
        k_factor_placement,
        design_compensator,
    )
    from .plants import (
        Plant,
        plant_from_roots,
        plant_from_coefficients,
        buck_plant,
        boost_plant,
        plant_from_table,
        check_keys,
        PLANT_TYPES,
    )
    from .tolerance import (
        BLOCK,
        GridLoop,
        GridMargins,
        LoopMonteCarlo,
        frequency_grid,
        grid_margins,
        loop_monte_carlo,
    )

#: Public name -> the module of this folder that defines it.
_EXPORTS = {
    "COMPENSATOR_FAMILIES": "compensator",
    "MAX_BOOST_DEG": "compensator",
    "MIN_BOOST_DEG": "compensator",
    "LOW_GAIN_MARGIN_DB": "compensator",
    "RHP_ZERO_FRACTION": "compensator",
    "DEFAULT_RANGES": "compensator",
    "rhp_zero_hz": "compensator",
    "rhp_zero_note": "compensator",
    "KFactorPlacement": "compensator",
    "LoopDesign": "compensator",
    "check_compensator": "compensator",
    "k_factor": "compensator",
    "k_factor_placement": "compensator",
    "design_compensator": "compensator",
    "Plant": "plants",
    "plant_from_roots": "plants",
    "plant_from_coefficients": "plants",
    "buck_plant": "plants",
    "boost_plant": "plants",
    "plant_from_table": "plants",
    "check_keys": "plants",
    "PLANT_TYPES": "plants",
    "BLOCK": "tolerance",
    "GridLoop": "tolerance",
    "GridMargins": "tolerance",
    "LoopMonteCarlo": "tolerance",
    "frequency_grid": "tolerance",
    "grid_margins": "tolerance",
    "loop_monte_carlo": "tolerance",
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
