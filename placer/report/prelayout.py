"""The pre-layout checks in words and plots: console lines, HTML sections, figures.

Everything here reads the ``prelayout`` object of a design's JSON
(:meth:`placer.evidence.prelayout.Prelayout.to_dict`), except the figures, which
take the arrays of :class:`placer.evidence.prelayout.Prelayout` itself.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
from matplotlib.figure import Figure

from ..units import format_value
from .loop_plots import loop_bode_figure
from .page import escape, paragraph, table

if TYPE_CHECKING:
    from numpy.typing import ArrayLike

    from ..analysis.return_ratio import OpampLoop
    from ..design import Design
    from ..evidence.prelayout import Prelayout
    from .page import Plots

__all__ = ["section_lines", "cascade_lines", "noise_figure", "swing_figure", "html_parts",
           "compensator_lines", "compensator_html"]

_DPI = 120


def _v(x: float | None) -> str:
    return "-" if x is None else format_value(x, "V")


def _hz(x: float | None) -> str:
    return "-" if x is None else format_value(x, "Hz", digits=4)


def _slew(x: float | None) -> str:
    return "-" if x is None else f"{x / 1e6:.3g} V/µs"


def _deg(x: float | None) -> str:
    return "-" if x is None else f"{x:.1f}°"


def _db(x: float | None) -> str:
    return "unbounded" if x is None else f"{x:.1f} dB"


def _density(x: float) -> str:
    return format_value(x, "V") + "/√Hz"


def _dominant(noise: dict, count: int = 3) -> str:
    return ", ".join(f"{d['source']} {100 * d['share']:.0f} %" for d in noise["dominant"][:count]
                     if d["share"] > 0) or "none"


def _low_frequency_density(noise: dict) -> float:
    return float(noise["density_v_per_rthz"][0])


def section_lines(prelayout: dict, index: int) -> list[str]:
    """Console lines for one section: noise, level, swing, slew, load, op-amp loops."""
    section = next((s for s in prelayout["sections"] if s["index"] == index), None)
    if section is None:
        return []
    noise, floor = section["noise"], prelayout["settings"]["min_load_ohm"]
    band = noise["band_hz"]
    lines = ["", f"  before layout (section {index} alone):",
             f"    noise {_v(noise['rms_v'])} rms at its output over {_hz(band[0])} – {_hz(band[1])}"
             f" (input-referred {_v(noise['input_referred_rms_v'])}; "
             f"{_density(_low_frequency_density(noise))} at {_hz(noise['frequency_hz'][0])}); "
             f"dominated by {_dominant(noise)}"]
    level = section.get("level")
    if level:
        chosen, failing = level["chosen"], level["nearest_failing"]
        text = (f"    impedance level ({level['mode']}): {_v(chosen['noise_v'])} rms at the cascade "
                f"output, least op-amp load {format_value(chosen['least_load_ohm'], 'ohm')}"
                if chosen["least_load_ohm"] is not None else
                f"    impedance level ({level['mode']}): {_v(chosen['noise_v'])} rms at the cascade output")
        if failing:
            text += (f"; one step {'up' if failing['factor'] > 1 else 'down'} (×{failing['factor']:.3g}): "
                     f"{_v(failing['noise_v'])}, fails: {failing['fails']}")
        lines.append(text)
    for w in section["swing"]:
        if w["opamp"]:
            lines.append(f"    {w['opamp']} output {w['node']}: {_v(w['peak_v'])} peak at {_hz(w['at_hz'])}"
                         + (f", clips at {_v(w['clips_at_input_v'])} input" if w["clips_at_input_v"] else "")
                         + (" — PAST THE SWING" if w["exceeds"] else ""))
    for n in section["slew"]:
        lines.append(f"    {n['opamp']} slew needed {_slew(n['need_v_per_s'])} (at {_hz(n['at_hz'])})"
                     + (" — ABOVE THE SLEW RATE" if n["short"] else ""))
    for load in section["loads"]:
        if load["below"]:
            lines.append(f"    {load['opamp']} drives {format_value(load['load_ohm'], 'ohm')} — BELOW "
                         f"min_load {format_value(floor, 'ohm')}")
    for loop in section["opamp_loops"]:
        lines.append(f"    {loop['opamp']} own loop: crossover {_hz(loop['crossover_hz'])}, phase margin "
                     f"{_deg(loop['phase_margin_deg'])}, gain margin {_db(loop['gain_margin_db'])}"
                     + (f" — BELOW {loop['margin_floor_deg']:g}°" if loop["low_margin"] else ""))
    return lines


def cascade_lines(prelayout: dict) -> list[str]:
    """Console lines for the whole cascade and the settings the checks used."""
    st, cascade = prelayout["settings"], prelayout["cascade"]
    noise, model = cascade["noise"], st["loop_model"]
    band = noise["band_hz"]
    lines = ["", "Before layout (whole cascade):",
             f"  output noise {_v(noise['rms_v'])} rms over {_hz(band[0])} – {_hz(band[1])} "
             f"({st['band_source']}), input-referred {_v(noise['input_referred_rms_v'])}, "
             f"at {st['temperature_k']:g} K ({st['temperature_source']})"
             + (f"; target {_v(st['target_v'])}" if st["target_v"] else ""),
             f"  dominant sources: {_dominant(noise, 5)}"]
    if st["noise_voltage_v_per_rthz"] is None and st["noise_current_a_per_rthz"] is None:
        lines.append("  (resistor noise only: the spec gives no op-amp noise_voltage or noise_current)")
    first = cascade["first_clip"]
    if first:
        lines.append(f"  for {_v(st['amplitude_v'])} peak in ({st['amplitude_source']}): "
                     + (f"{first['opamp']} ({first['node']}) clips first, at {_v(first['clips_at_input_v'])} "
                        "input" if first["clips_at_input_v"] else
                        f"the largest op-amp output is {first['opamp']} ({first['node']}), "
                        f"{_v(first['peak_v'])} peak at {_hz(first['at_hz'])} (no output_swing given)"))
    lines.append(f"  slew rate needed: {_slew(cascade['largest_slew_v_per_s'])} over the pass band "
                 f"{_hz(st['pass_band_hz'][0])} – {_hz(st['pass_band_hz'][1])}"
                 + (f" (op-amp: {_slew(st['slew_rate_v_per_s'])})" if st["slew_rate_v_per_s"] else ""))
    lines.append(f"  op-amp loops with {model['description']} ({model['source']})"
                 + (f", load {format_value(st['load_capacitance_f'], 'F')}" if st["load_capacitance_f"] else "")
                 + f": worst phase margin {_deg(cascade['worst_phase_margin_deg'])}"
                 + ("" if cascade["stable"] else "; UNSTABLE"))
    for flag in prelayout["flags"]:
        lines.append(f"  FLAG: {flag}")
    return lines


def _figure(width: float = 7.0, height: float = 4.2) -> Figure:
    return Figure(figsize=(width, height), dpi=_DPI, layout="constrained")


def noise_figure(prelayout: Prelayout, *, title: str | None = None) -> Figure:
    """Output noise density (V/√Hz) against frequency (Hz): each section alone and the cascade."""
    fig = _figure()
    ax = fig.add_subplot()
    for s in prelayout.sections:
        spectrum = s.noise.spectrum
        ax.loglog(spectrum.frequency_hz, spectrum.density * 1e9, linewidth=1.1,
                  label=f"section {s.index} alone")
    spectrum = prelayout.cascade_noise.spectrum
    ax.loglog(spectrum.frequency_hz, spectrum.density * 1e9, color="k", linewidth=1.8,
              label="cascade output")
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("output noise density (nV/√Hz)")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title(title or "Output noise density")
    return fig


def swing_figure(frequency_hz: ArrayLike, curves: Mapping[str, ArrayLike], *, swing_v: float | None,
                 title: str | None = None) -> Figure:
    """Peak voltage (V) of each op-amp output against frequency (Hz), with the swing limit."""
    fig = _figure()
    ax = fig.add_subplot()
    for label, values in curves.items():
        ax.semilogx(frequency_hz, values, linewidth=1.2, label=label)
    if swing_v:
        ax.axhline(swing_v, color="C3", linestyle="--", linewidth=1.0, label="output swing")
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("peak voltage (V)")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title(title or "Peak op-amp output voltage, full-scale input")
    return fig


def _swing_curves(design: Design, prelayout: Prelayout) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    from ..analysis.mna import numeric_system
    from ..analysis.return_ratio import output_pin

    low, high = prelayout.settings.analysis_hz
    frequency = np.geomspace(low, high, int(50 * math.log10(high / low)) + 1)
    system = numeric_system(design.circuit)
    omega = 2 * math.pi * frequency
    x = np.abs(np.linalg.solve(system.G[None] + 1j * omega[:, None, None] * system.C[None],
                               np.broadcast_to(system.b.astype(complex),
                                               (omega.size, system.b.size))[..., None])[..., 0])
    curves: dict[str, np.ndarray] = {}
    for e in design.circuit.elements:
        if e.kind == "opamp":
            pin = output_pin(design.circuit, e.name)
            curves[f"{e.name} ({pin})"] = prelayout.settings.amplitude_v * x[:, system.layout.node_index[pin]]
    return frequency, curves


def html_parts(design: Design, prelayout: Prelayout, data: dict[str, Any],
               plots: Plots) -> list[str]:
    """The report's "Before layout" sections: noise, level, swing and slew, op-amp loops."""
    st, cascade = data["settings"], data["cascade"]
    out = ["<h2>Before layout: noise</h2>",
           paragraph(f"Thermal noise 4kTR of every resistor at {st['temperature_k']:g} K "
                     f"({st['temperature_source']})"
                     + (", the op-amps' input voltage and current noise" if (
                         st["noise_voltage_v_per_rthz"] or st["noise_current_a_per_rthz"])
                        else " (no op-amp noise densities given: resistors only)")
                     + f", each carried to the output by the circuit and added in power; integrated "
                     f"over {_hz(st['band_hz'][0])} – {_hz(st['band_hz'][1])} ({st['band_source']})."),
           plots.block("noise-density", noise_figure(prelayout),
                       "Output noise density (nV/√Hz) against frequency (Hz): each section alone at "
                       "its own output, and the whole cascade at its output.")]
    rows = []
    for s in data["sections"]:
        n = s["noise"]
        rows.append([f"section {s['index']} alone", _v(n["rms_v"]), _v(n["input_referred_rms_v"]),
                     _dominant(n)])
    n = cascade["noise"]
    rows.append(["cascade", _v(n["rms_v"]), _v(n["input_referred_rms_v"]), _dominant(n, 5)])
    out.append(table(["circuit", "output noise (V rms)", "input-referred (V rms)",
                      "dominant sources (share of power)"], rows))
    out += _level_html(data)
    out += _swing_html(design, prelayout, data, plots)
    out += _loops_html(prelayout, data, plots)
    if data["flags"]:
        out.append("<h3>Flags</h3>")
        out.append("<ul>" + "".join(f"<li><strong>{escape(f)}</strong></li>" for f in data["flags"])
                   + "</ul>")
    return out


def _level_html(data: dict) -> list[str]:
    rows = []
    for s in data["sections"]:
        level = s.get("level")
        if not level:
            continue
        chosen, failing = level["chosen"], level["nearest_failing"]
        rows.append([s["index"], level["mode"], _v(chosen["noise_v"]),
                     "-" if chosen["least_load_ohm"] is None else format_value(chosen["least_load_ohm"], "ohm"),
                     "-" if not failing else f"×{failing['factor']:.3g}: {_v(failing['noise_v'])}",
                     "-" if not failing else failing["fails"]])
    if not rows:
        return []
    return ["<h3>Impedance level</h3>",
            paragraph("Scaling a section's resistors up and its capacitors down by one factor moves no "
                      "root; the level was chosen for noise (at the cascade output), within the part "
                      "ranges and the op-amp load limit. The nearest level that fails is one capacitor "
                      "step away."),
            table(["section", "chosen for", "noise at the cascade output", "least op-amp load",
                   "nearest failing level", "why it fails"], rows, numeric_from=6)]


def _swing_html(design: Design, prelayout: Prelayout, data: dict[str, Any],
                plots: Plots) -> list[str]:
    st = data["settings"]
    frequency, curves = _swing_curves(design, prelayout)
    out = ["<h2>Before layout: signal swing and slew</h2>",
           paragraph(f"For a {_v(st['amplitude_v'])} peak input ({st['amplitude_source']}) at every "
                     "frequency; the slew rate needed is 2π·f·V_peak at its largest over the pass band "
                     f"{_hz(st['pass_band_hz'][0])} – {_hz(st['pass_band_hz'][1])} (common practice).")]
    if curves:
        out.append(plots.block("swing", swing_figure(frequency, curves, swing_v=st["output_swing_v"]),
                               "Peak voltage (V) at each op-amp output against the input frequency "
                               "(Hz), for the full-scale input"
                               + (", and the output swing (dashed)." if st["output_swing_v"] else ".")))
    rows = []
    for s in data["sections"]:
        slews = {n["opamp"]: n for n in s["slew"]}
        loads = {x["opamp"]: x for x in s["loads"]}
        for w in s["swing"]:
            if not w["opamp"]:
                continue
            n, x = slews[w["opamp"]], loads.get(w["opamp"])   # every op-amp output has a slew need
            rows.append([w["opamp"], w["node"], s["index"], _v(w["peak_v"]), _hz(w["at_hz"]),
                         _v(w["clips_at_input_v"]) + (" (past the swing)" if w["exceeds"] else ""),
                         _slew(n["need_v_per_s"]) + (" (above the slew rate)" if n["short"] else ""),
                         format_value(x["load_ohm"], "ohm") + (" (below min_load)" if x["below"] else "")
                         if x and x["load_ohm"] is not None else "-"])
    if rows:
        out.append(table(["op-amp", "output node", "section", "peak", "at", "clips at input",
                          "slew needed", "load driven"], rows, numeric_from=3))
    return out


def _loops_html(prelayout: Prelayout, data: dict[str, Any], plots: Plots) -> list[str]:
    st, model = data["settings"], data["settings"]["loop_model"]
    out = ["<h2>Before layout: each op-amp's own loop</h2>",
           paragraph(f"Return ratio of every op-amp (Bode), with {model['description']} "
                     f"({model['source']})"
                     + (f" driving {format_value(st['load_capacitance_f'], 'F')}" if st["load_capacitance_f"] else "")
                     + "; phase margins below 45° are flagged (common practice).")]
    rows: list[list[object]] = []
    loops: list[OpampLoop] = []
    for s, checks in zip(data["sections"], prelayout.sections):
        for loop, obj in zip(s["opamp_loops"], checks.loops):
            loops.append(obj)
            rows.append([loop["opamp"], s["index"], _hz(loop["crossover_hz"]),
                         _deg(loop["phase_margin_deg"]) + (" (low)" if loop["low_margin"] else ""),
                         _db(loop["gain_margin_db"]), f"{loop['low_frequency_gain_db']:.1f} dB"])
    if rows:
        out.append(table(["op-amp", "section", "crossover", "phase margin", "gain margin",
                          "low-frequency loop gain"], rows, numeric_from=2))
        worst = min(loops, key=lambda x: x.phase_margin_deg if x.phase_margin_deg is not None else math.inf)
        out.append(plots.block("opamp-loop", _loop_figure(worst),
                               f"Loop gain of {worst.opamp}, the op-amp with the least phase margin: "
                               "magnitude (dB) and phase (degrees) against frequency (Hz)."))
    return out


def _loop_figure(loop: OpampLoop) -> Figure:
    return loop_bode_figure(loop.frequency_hz, loop.magnitude_db, loop.phase_deg,
                            crossover_hz=loop.crossover_hz, phase_margin_deg=loop.phase_margin_deg,
                            gain_margin_db=loop.gain_margin_db,
                            phase_crossover_hz=loop.phase_crossover_hz,
                            title=f"{loop.opamp}: its own loop")


def compensator_lines(data: dict) -> list[str]:
    """Console lines for the compensator op-amp's own loop (``placer loop``)."""
    block = data.get("opamp_loops")
    if not block:
        return []
    lines = [f"  compensator op-amp, with {block['model']} ({block['model_source']}):"]
    for loop in block["loops"]:
        lines.append(f"    {loop['opamp']} own loop: crossover {_hz(loop['crossover_hz'])}, phase margin "
                     f"{_deg(loop['phase_margin_deg'])}, gain margin {_db(loop['gain_margin_db'])}"
                     + (f" — BELOW {loop['margin_floor_deg']:g}°" if loop["low_margin"] else ""))
    return lines


def compensator_html(data: dict[str, Any], loops: tuple[OpampLoop, ...],
                     plots: Plots) -> list[str]:
    """The loop report's section on the compensator op-amp's own loop."""
    block = data.get("opamp_loops")
    if not block:
        return []
    rows = [[x["opamp"], _hz(x["crossover_hz"]), _deg(x["phase_margin_deg"])
             + (" (low)" if x["low_margin"] else ""), _db(x["gain_margin_db"])] for x in block["loops"]]
    out = ["<h2>The compensator op-amp's own loop</h2>",
           paragraph(f"Return ratio (Bode) with {block['model']} ({block['model_source']}); "
                     "phase margins below 45° are flagged (common practice)."),
           table(["op-amp", "crossover", "phase margin", "gain margin"], rows)]
    for loop in loops:
        out.append(plots.block(f"{loop.opamp}-loop", _loop_figure(loop),
                               f"Loop gain of {loop.opamp}: magnitude (dB) and phase (degrees) "
                               "against frequency (Hz)."))
    return out
