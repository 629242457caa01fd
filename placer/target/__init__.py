"""Targets: filter approximations, target roots, sections.

The public names load their module on first use (so that the command line
answers fast); ``__all__`` lists them all.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .approximations import (
        APPROXIMATIONS,
        BESSEL_NORMS,
        NORMALISATIONS,
        MIN_ORDER,
        MAX_ORDER,
        HALF_POWER_LOSS_DB,
        ZPK,
        Band,
        OrderEstimate,
        lowpass_prototype,
        frequency_at_loss,
        band_from_edges,
        scale_lowpass,
        lowpass_to_highpass,
        lowpass_to_bandpass,
        lowpass_to_bandstop,
        estimate_order,
        estimate_orders,
        suggest,
        check_choice,
        check_order,
    )
    from .sections import (
        ORDERINGS,
        GAIN_RULES,
        split_sections,
    )
    from .targets import (
        RESPONSES,
        SECTION_KINDS,
        ROOT_UNITS,
        ROOT_RTOL,
        Target,
        Section,
        TransferCoefficients,
        reference_omega_for,
        design_target,
        target_from_roots,
        make_section,
        target_from_sections,
    )

#: Public name -> the module of this folder that defines it.
_EXPORTS = {
    "APPROXIMATIONS": "approximations",
    "BESSEL_NORMS": "approximations",
    "NORMALISATIONS": "approximations",
    "MIN_ORDER": "approximations",
    "MAX_ORDER": "approximations",
    "HALF_POWER_LOSS_DB": "approximations",
    "ZPK": "approximations",
    "Band": "approximations",
    "OrderEstimate": "approximations",
    "lowpass_prototype": "approximations",
    "frequency_at_loss": "approximations",
    "band_from_edges": "approximations",
    "scale_lowpass": "approximations",
    "lowpass_to_highpass": "approximations",
    "lowpass_to_bandpass": "approximations",
    "lowpass_to_bandstop": "approximations",
    "estimate_order": "approximations",
    "estimate_orders": "approximations",
    "suggest": "approximations",
    "check_choice": "approximations",
    "check_order": "approximations",
    "ORDERINGS": "sections",
    "GAIN_RULES": "sections",
    "split_sections": "sections",
    "RESPONSES": "targets",
    "SECTION_KINDS": "targets",
    "ROOT_UNITS": "targets",
    "ROOT_RTOL": "targets",
    "Target": "targets",
    "Section": "targets",
    "TransferCoefficients": "targets",
    "reference_omega_for": "targets",
    "design_target": "targets",
    "target_from_roots": "targets",
    "make_section": "targets",
    "target_from_sections": "targets",
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
