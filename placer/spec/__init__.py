"""Spec files: reading the tables of a spec into the types of the stages below."""

from .loop_table import (
    LoopSpec,
    LoopResult,
    loop_from_table,
    run_loop,
    loop_to_dict,
)
from .reader import (
    Spec,
    PartsSpec,
    ToleranceSpec,
    AmplifierSpec,
    AMPLIFIER_PRESETS,
    load_spec,
    spec_from_dict,
    amplifier_from_table,
)
from .target_table import (
    TARGET_KEYS,
    SECTION_KEYS,
    target_from_table,
    target_to_dict,
)

__all__ = [
    "LoopSpec",
    "LoopResult",
    "loop_from_table",
    "run_loop",
    "loop_to_dict",
    "Spec",
    "PartsSpec",
    "ToleranceSpec",
    "AmplifierSpec",
    "AMPLIFIER_PRESETS",
    "load_spec",
    "spec_from_dict",
    "amplifier_from_table",
    "TARGET_KEYS",
    "SECTION_KEYS",
    "target_from_table",
    "target_to_dict",
]
