"""Loops: plants, compensators, the loop Monte Carlo."""

from .compensator import (
    COMPENSATOR_FAMILIES,
    MAX_BOOST_DEG,
    MIN_BOOST_DEG,
    LOW_GAIN_MARGIN_DB,
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
    GridLoop,
    GridMargins,
    LoopMonteCarlo,
    frequency_grid,
    grid_margins,
    loop_monte_carlo,
)

__all__ = [
    "COMPENSATOR_FAMILIES",
    "MAX_BOOST_DEG",
    "MIN_BOOST_DEG",
    "LOW_GAIN_MARGIN_DB",
    "KFactorPlacement",
    "LoopDesign",
    "check_compensator",
    "k_factor",
    "k_factor_placement",
    "design_compensator",
    "Plant",
    "plant_from_roots",
    "plant_from_coefficients",
    "buck_plant",
    "boost_plant",
    "plant_from_table",
    "check_keys",
    "PLANT_TYPES",
    "GridLoop",
    "GridMargins",
    "LoopMonteCarlo",
    "frequency_grid",
    "grid_margins",
    "loop_monte_carlo",
]
