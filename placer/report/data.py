"""Results as JSON-ready dicts (the schema of docs/architecture.md for circuits).

Every number is a float in SI units; frequencies people read are in hertz
(``f0_hz``), roots are ``[re, im]`` pairs in rad/s.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import TYPE_CHECKING, Any, cast

from ..place.amplifier import amplifier_summary
from ..place.placement import worst_error_quantity
from ..spec.target_table import target_to_dict
from ..units import finite_or_none

if TYPE_CHECKING:
    from ..design import Design
    from ..place.placement import Candidate
    from ..place.solve import Goal, RootErrors
    from ..target.targets import Section

__all__ = ["roots_to_list", "section_figures", "design_to_dict", "candidate_to_dict"]


def roots_to_list(roots: Iterable[complex]) -> list[list[float]]:
    """Complex roots (rad/s) as sorted ``[re, im]`` pairs."""
    items = sorted((complex(r) for r in roots), key=lambda r: (abs(r), r.imag))
    return [[float(r.real), float(r.imag)] for r in items]


def section_figures(errors: RootErrors, goal: Goal | None = None) -> dict[str, Any]:
    """f0 (Hz), Q, gain (dB) and notch zero f0 of one section, from its RootErrors.

    The figures are the ones :func:`placer.place.solve.root_errors` read
    off the section's function (the same gain reading the solver matched).
    """
    out: dict[str, Any] = {"f0_hz": None, "q": None, "gain_db": None, "zero_f0_hz": None}
    if errors.omega0 is not None:
        out["f0_hz"] = errors.omega0 / (2 * math.pi)
    elif goal is not None and goal.omega0:
        out["f0_hz"] = goal.omega0 / (2 * math.pi)
    if errors.q is not None:
        out["q"] = abs(errors.q)
    gain = errors.gain
    out["gain_db"] = 20 * math.log10(abs(gain)) if gain else None
    out["inverting"] = gain < 0
    if errors.zero_omega is not None:
        out["zero_f0_hz"] = errors.zero_omega / (2 * math.pi)
    return out


def _errors(errors: RootErrors) -> dict[str, float | None]:
    """The errors of one set of values, percent and dB (None: not defined)."""
    return {
        "f0_pct": finite_or_none(errors.f0_pct),
        "q_pct": finite_or_none(errors.q_pct),
        "zero_f0_pct": finite_or_none(errors.zero_f0_pct),
        "gain_db": finite_or_none(errors.gain_db),
        "worst_root_pct": finite_or_none(errors.worst_root_pct),
        "worst_pct": finite_or_none(errors.worst_root_error_pct),
    }


def _section_target(section: Section) -> dict[str, Any]:
    """The target figures and roots of one section."""
    return {
        "kind": section.kind,
        "order": section.order,
        "f0_hz": float(section.f0_hz),
        "q": None if section.q is None else float(section.q),
        "gain_db": float(section.gain_db),
        "zero_f0_hz": None if section.zero_f0_hz is None else float(section.zero_f0_hz),
        "poles": roots_to_list(section.poles),
        "zeros": roots_to_list(section.zeros),
    }


def candidate_to_dict(candidate: Candidate) -> dict[str, Any]:
    """One candidate of a section, reachable or with the reason it is not."""
    topology = candidate.topology
    errors = cast("RootErrors", candidate.errors)
    out: dict[str, Any] = {
        "topology": topology.id,
        "reachable": bool(candidate.reachable),
    }
    if candidate.reachable:
        out["error_pct"] = finite_or_none(candidate.error_pct)
        # what the worst error measures ("f0", "Q", "zero f0", "roots", "gain")
        out["error_of"] = worst_error_quantity(errors)
        out["gain_error_db"] = finite_or_none(errors.gain_db)
        out["parts"] = int(topology.part_count)
        out["opamps"] = int(topology.opamp_count)
        out["spread"] = {k: float(v) for k, v in candidate.spread.items()}
    else:
        out["reason"] = candidate.reason
    return out


def design_to_dict(design: Design, *, evidence: dict[str, Any] | None = None,
                   prelayout: dict[str, Any] | None = None) -> dict[str, Any]:
    """The whole design as a JSON-ready dict (``prelayout``: placer.evidence.prelayout's to_dict)."""
    target = design.target
    sections: list[dict[str, Any]] = []
    for s in design.sections:
        c = s.candidate
        errors = cast("RootErrors", c.errors)  # typed `object` in placer.place
        continuous_errors = cast("RootErrors", c.continuous_errors)
        achieved = section_figures(errors, s.goal)
        continuous = section_figures(continuous_errors, s.goal)
        achieved["poles"] = roots_to_list(errors.poles)
        achieved["zeros"] = roots_to_list(errors.zeros)
        entry: dict[str, Any] = {
            "index": s.index,
            "topology": s.topology.id,
            "title": s.topology.title,
            "target": _section_target(s.section),
            "achieved": achieved,
            "continuous": continuous,
            "error": _errors(errors),
            "continuous_error": _errors(continuous_errors),
            "parts": [
                {"name": p.name, "symbol": p.symbol, "kind": p.kind, "value": float(p.value),
                 "series": p.series, "continuous": float(p.continuous)}
                for p in s.parts
            ],
            "opamps": int(s.topology.opamp_count),
            "circuit": s.circuit.to_dict(),
            "candidates": [candidate_to_dict(k) for k in s.candidates],
            "notes": list(c.notes),
        }
        amplifier = amplifier_summary(s)
        if amplifier is not None:
            entry["amplifier"] = amplifier
        sections.append(entry)
    overall_gain = design.gain
    out = {
        "title": design.spec.title,
        "spec": design.spec.path,
        "target": target_to_dict(target, tuple(s.section for s in design.sections)),
        "sections": sections,
        "circuit": design.circuit.to_dict(),
        "achieved": {
            "poles": roots_to_list(design.poles),
            "parasitic_poles": roots_to_list(design.parasitic_poles),
            "zeros": roots_to_list(design.zeros),
            "parasitic_zeros": roots_to_list(design.parasitic_zeros),
            "gain_db": 20 * math.log10(abs(overall_gain)) if overall_gain else None,
            "inverting": overall_gain < 0,
            # where the gain was measured on the built cascade: the target's
            # reference (0 for DC, null for the high-frequency gain)
            "gain_at_hz": (None if math.isinf(target.reference_omega)
                           else target.reference_omega / (2 * math.pi)),
        },
        "units": {"frequency": "Hz", "roots": "rad/s", "values": "SI (ohm, farad, henry)"},
    }
    if evidence is not None:
        out["evidence"] = evidence
    if prelayout is not None:
        out["prelayout"] = prelayout
    return out
