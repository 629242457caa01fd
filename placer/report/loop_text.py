"""The ``placer loop`` result for a person and for JSON.

:func:`loop_data` assembles the JSON of a designed loop (the design and
its Monte Carlo by :func:`placer.spec.loop_table.loop_to_dict`, the
compensator op-amp's own loop); :func:`loop_text` turns that data into the
console text: the target, the K factor, the compensator's zeros and poles
(Hz), a boost's right-half-plane zero with the crossover limit it sets, the
margins before and after snapping, the parts, the Monte Carlo and notes.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from ..circuit.elements import KIND_UNITS
from ..units import format_value
from .console import table
from .prelayout import compensator_lines

if TYPE_CHECKING:
    from ..analysis.return_ratio import OpampLoop
    from ..place.opamp import AmplifierSpec
    from ..spec.loop_table import LoopResult

__all__ = ["LOOP_CAUTION", "loop_data", "loop_text"]

#: Printed after every loop result.
LOOP_CAUTION = ("Caution: power converters and anything connected to mains can hurt people.\n"
                "These values are a starting point: confirm the loop by simulation and on the bench,\n"
                "and follow the applicable safety standards and licensed practice.")

_MONTE_CARLO = {"samples": ("builds", ""), "phase_margin_worst_deg": ("worst phase margin", "°"),
                "phase_margin_median_deg": ("median phase margin", "°"),
                "gain_margin_worst_db": ("worst gain margin", " dB"),
                "crossover_min_hz": ("crossover from", " Hz"), "crossover_max_hz": ("to", " Hz"),
                "unstable_samples": ("unstable builds", ""),
                "margin_floor_deg": ("phase-margin floor", "°")}


def loop_data(result: LoopResult,
              amplifier: AmplifierSpec) -> tuple[dict[str, Any], tuple[OpampLoop, ...]]:
    """The JSON of a loop result and the compensator op-amp's own loops.

    Parameters
    ----------
    result : placer.spec.loop_table.LoopResult
    amplifier : placer.place.opamp.AmplifierSpec
        The spec's ``[amplifier]`` (the op-amp model of its own loop).

    Returns
    -------
    (dict, tuple)
        The data :func:`loop_text` reads (and ``--json`` writes), and the
        :class:`placer.analysis.return_ratio` loops for the HTML report.
    """
    from ..evidence.prelayout import DEFAULT_LOOP_PRESET, compensator_loops
    from ..evidence.prelayout import loop_to_dict as opamp_loop_dict
    from ..place.opamp import describe_amplifier
    from ..spec.loop_table import loop_to_dict

    data = loop_to_dict(result)
    loops, model, is_default = compensator_loops(result.design.circuit(snapped=True), amplifier)
    data["opamp_loops"] = {
        "model": describe_amplifier(model),
        "model_source": (f"default: the {DEFAULT_LOOP_PRESET!r} preset (the spec gives no GBW)"
                         if is_default else "spec"),
        "load_capacitance_f": amplifier.load_capacitance,
        "loops": [opamp_loop_dict(loop) for loop in loops],
    }
    for loop in loops:
        if loop.low_margin:
            data.setdefault("notes", []).append(
                f"compensator op-amp {loop.opamp}: its own phase margin "
                f"{loop.phase_margin_deg:.1f}° is below 45°")
    return data, tuple(loops)


def _hz(value: float | None, absent: str = "-") -> str:
    return format_value(value, "Hz", digits=4) if value else absent


def _margin_row(label: str, m: dict[str, Any]) -> list[str]:
    return [label, _hz(m.get("crossover_hz"), "none"),
            f"{m['phase_margin_deg']:.2f}°" if m.get("phase_margin_deg") is not None else "-",
            f"{m['gain_margin_db']:.2f} dB" if m.get("gain_margin_db") is not None else "none",
            _hz(m.get("phase_crossover_hz"))]


def _frequencies(values: list[float]) -> str:
    shown = ["0 Hz (integrator)" if v == 0 else _hz(v) for v in values]
    return ", ".join(shown) if shown else "none"


def root_lines(data: dict[str, Any]) -> list[str]:
    """The compensator's zeros and poles (Hz), placed and as built, and a plant's RHP zero."""
    comp, k = data["compensator"], data["k_factor"]
    double = " (double)" if comp["family"] == "type3" else ""
    lines = [f"  compensator zeros, placed: {_hz(k['zero_hz'])}{double}; as built: "
             f"{_frequencies(comp.get('zeros_hz', []))}",
             f"  compensator poles, placed: 0 Hz (integrator), {_hz(k['pole_hz'])}{double}; "
             f"as built: {_frequencies(comp.get('poles_hz', []))}"]
    plant = data["plant"]
    if plant.get("rhp_zero_hz"):
        lines.append(f"  plant right-half-plane zero {_hz(plant['rhp_zero_hz'])}: keep the "
                     f"crossover below {_hz(plant['rhp_zero_limit_hz'])} "
                     f"(1/{1 / plant['rhp_zero_fraction']:g} of it, common practice)")
    return lines


def _monte_carlo_line(mc: dict[str, Any]) -> str:
    parts = []
    for key, (label, unit) in _MONTE_CARLO.items():
        if key not in mc:
            continue
        value = mc[key]
        if value is None:
            shown = "unbounded (no phase crossover)" if key == "gain_margin_worst_db" else "none"
        elif unit == " Hz":
            shown = format_value(value, "Hz", digits=4)
        else:
            shown = (f"{value:.4g}" if isinstance(value, float) else str(value)) + unit
        parts.append(f"{label} {shown}")
    if mc.get("yield") is not None:
        parts.append(f"yield {100 * mc['yield']:.1f} % (phase margin at or above the floor)")
    return "Monte Carlo (" + mc.get("distribution", "") + "): " + ", ".join(parts)


def loop_text(data: dict[str, Any]) -> str:
    """The console text of a loop result (the data of :func:`loop_data`)."""
    target = data["target"]
    k = data["k_factor"]
    lines = [f"Loop: {data['plant'].get('description', 'plant')}",
             f"  target crossover {_hz(target['crossover_hz'])}, "
             f"phase margin {target['phase_margin_deg']:.1f}°; compensator "
             f"{data['compensator']['family']} ({data['compensator']['topology']})",
             f"  K factor {k['k']:.3g}, boost {k['boost_deg']:.1f}° (plant phase at crossover "
             f"{k['plant_phase_deg']:.1f}°, plant gain {k['plant_gain_db']:.2f} dB)"]
    lines += root_lines(data)
    lines.append(table(["loop", "crossover", "phase margin", "gain margin", "phase crossover"],
                       [_margin_row("continuous", data["continuous"]),
                        _margin_row("preferred values", data)]))
    rows = [[p["name"], p["kind"], format_value(p["value"], KIND_UNITS.get(p["kind"], "")),
             p["series"], format_value(p["continuous"], KIND_UNITS.get(p["kind"], ""), digits=4)]
            for p in data["parts"]]
    lines += ["", table(["part", "kind", "value", "series", "continuous value"], rows)]
    if data.get("monte_carlo"):
        lines += ["", _monte_carlo_line(data["monte_carlo"])]
    lines.extend(compensator_lines(data))
    lines += [f"  note: {note}" for note in data.get("notes", [])]
    return "\n".join(lines)
