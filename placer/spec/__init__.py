"""Spec files: reading the tables of a spec into the types of the stages below.

The public names load their module on first use (so that the command line
answers fast); ``__all__`` lists them all.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
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
        parts_from_table,
        ToleranceSpec,
        AmplifierSpec,
        AMPLIFIER_PRESETS,
        load_spec,
        spec_from_dict,
        amplifier_from_table,
        NoiseSpec,
        SignalSpec,
        noise_from_table,
        signal_from_table,
    )
    from .target_table import (
        TARGET_KEYS,
        SECTION_KEYS,
        target_from_table,
        target_to_dict,
    )

#: Public name -> the module of this folder that defines it.
_EXPORTS = {
    "LoopSpec": "loop_table",
    "LoopResult": "loop_table",
    "loop_from_table": "loop_table",
    "run_loop": "loop_table",
    "loop_to_dict": "loop_table",
    "Spec": "reader",
    "PartsSpec": "reader",
    "parts_from_table": "reader",
    "ToleranceSpec": "reader",
    "AmplifierSpec": "reader",
    "AMPLIFIER_PRESETS": "reader",
    "load_spec": "reader",
    "spec_from_dict": "reader",
    "amplifier_from_table": "reader",
    "NoiseSpec": "reader",
    "SignalSpec": "reader",
    "noise_from_table": "reader",
    "signal_from_table": "reader",
    "TARGET_KEYS": "target_table",
    "SECTION_KEYS": "target_table",
    "target_from_table": "target_table",
    "target_to_dict": "target_table",
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
