"""Self-contained HTML reports of a filter design or a compensated loop.

One file per report: the styles are inline, every plot is an inline SVG
(text drawn as paths, so no font is needed), and nothing refers to a
network resource, so the page reads the same offline and in ten years.
With a plots folder each plot is also written as PNG and SVG files.

No report overwrites its inputs: the spec file (and any topology file the
design came from) is always among the paths an output may not be.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING, Any

import control
import numpy as np

from .. import __version__
from ..evidence.tolerance import MAX_REJECTION_DB
from ..circuit.elements import KIND_UNITS
from ..units import format_value, plural
from .console import (fmt_db, fmt_edges, fmt_gain, fmt_hz, fmt_pct, fmt_peak_at, fmt_q,
                      fmt_error, fmt_rejection, fmt_where, inverting_note, mask_lines, why_chosen, windows_text)
from .loop_plots import loop_bode_figure
from .page import (POWER_CAUTION, Plots, caution_block, escape, finish_report, number_or_dash,
                   paragraph, prepare_outputs, spec_block, table)
from .plots import bode_figure, histogram_figure, pole_zero_figure, step_figure
from .prelayout import compensator_html, html_parts
from .schematic import compensator_schematic, design_schematic_html, schematic_figure

if TYPE_CHECKING:
    from ..analysis.return_ratio import OpampLoop
    from ..design import Design
    from ..evidence.gather import Evidence, MaskVerdict
    from ..evidence.prelayout import Prelayout
    from ..loops.compensator import LoopDesign
    from ..spec.loop_table import LoopResult
    from ..target.mask import Mask
    from .page import ReportFiles
    from .plots import MaskRegion

    PathArg = str | os.PathLike[str]

__all__ = ["write_design_report", "write_loop_report"]



def _on_grid(grid: np.ndarray, frequency: Any, values: Any) -> np.ndarray:
    """`values` given on `frequency` (Hz), interpolated onto `grid` in log f; NaN outside."""
    frequency = np.asarray(frequency, float)
    return np.interp(np.log(grid), np.log(frequency), np.asarray(values, float),
                     left=np.nan, right=np.nan)


def _root_rows(label: str, roots: Iterable[Sequence[float]]) -> list[list[str]]:
    rows = []
    for re_, im in sorted(roots, key=lambda r: (math.hypot(*r), r[1])):
        rows.append([label, f"{re_:.6g}", f"{im:+.6g}", fmt_hz(math.hypot(re_, im) / (2 * math.pi)),
                     f"{math.hypot(re_, im) / (2 * abs(re_)):.4f}" if im and re_ else "-"])
    return rows


_ROOT_HEADERS = ["root", "real part (rad/s)", "imaginary part (rad/s)", "|root| / 2π (Hz)",
                 "Q of the pair"]


# -- the design report -----------------------------------------------------------

def write_design_report(design: Design, data: dict[str, Any], evidence: Evidence | None, *,
                        html_path: PathArg | None = None, plots_dir: PathArg | None = None,
                        inputs: Iterable[PathArg] = (), prelayout: Prelayout | None = None,
                        resistor_style: str = "iec", spec_text: str | None = None) -> ReportFiles:
    """Write the HTML report of a filter design, and its plots.

    Parameters
    ----------
    design : placer.design.Design
    data : dict
        :func:`placer.report.data.design_to_dict` of the design.
    evidence : placer.evidence.gather.Evidence or None
        Responses, sensitivities and Monte Carlo; None leaves those out.
    html_path : str or Path, optional
        The HTML file to write (one self-contained file).
    plots_dir : str or Path, optional
        An existing folder for each plot as PNG and SVG: ``pole-zero``,
        ``bode``, ``step``, ``section<i>-f0-histogram``,
        ``section<i>-q-histogram``.
    inputs : sequence of str
        The run's input files, never overwritten (the spec and the
        topology files are added to them).
    prelayout : placer.evidence.prelayout.Prelayout, optional
        The pre-layout checks (noise, swing and slew, op-amp loops); their
        sections follow the evidence.
    resistor_style : {"iec", "ieee"}
        Resistor symbol of the schematics (IEC 60617 or IEEE 315).
    spec_text : str, optional
        The spec file's text, shown instead of reading the file.

    Returns
    -------
    placer.report.page.ReportFiles
        With the page's text in ``html_text``.

    Raises
    ------
    SpecError
        When an output folder does not exist or an output is an input;
        raised before anything is computed or written.
    """
    spec_path = design.spec.path
    extra = [spec_path] + [s.topology.path for s in design.sections]
    checked = prepare_outputs(html_path, plots_dir, tuple(inputs) + tuple(extra))
    plots = Plots(plots_dir, checked)
    title = data.get("title") or "placer design"
    parts_count = sum(len(s["parts"]) for s in data["sections"])
    opamps = [e for e in data["circuit"]["elements"] if e["kind"] == "opamp"]
    parts: list[str] = [f"<h1>Design report: {escape(title)}</h1>",
             paragraph(f"{plural(len(data['sections']), 'filter section')} in cascade, "
                f"{plural(parts_count, 'passive part')} and {plural(len(opamps), 'op-amp')}. Made by placer {__version__}. Frequencies "
                "are in hertz; roots of the transfer function in rad/s."),
             "<h2>What was asked for</h2>", spec_block(spec_path, spec_text)]
    parts += _section_tables(data)
    parts += design_schematic_html(design, resistor_style=resistor_style)
    parts.append("<h2>Where the poles and zeros sit</h2>")
    parts.append(plots.block("pole-zero", pole_zero_figure(
        design.target.poles, design.target.zeros, design.poles, design.zeros),
        "The s-plane: poles are crosses, zeros circles; the target in large grey marks, the "
        "achieved design (preferred values) in smaller coloured marks."))
    roots = _root_rows("target pole", data["target"]["poles"]) + \
        _root_rows("target zero", data["target"]["zeros"]) + \
        _root_rows("achieved pole", data["achieved"]["poles"]) + \
        _root_rows("achieved zero", data["achieved"]["zeros"])
    parts.append(table(_ROOT_HEADERS, roots))
    if evidence is None:
        parts.append(paragraph("No responses, sensitivities or tolerance analysis were computed for "
                        "this report.", "note"))
    else:
        parts += _evidence_parts(evidence, plots)
    if prelayout is not None and data.get("prelayout"):
        parts += html_parts(design, prelayout, data["prelayout"], plots)
    parts += _parts_list(data, design)
    parts += _candidates(data)
    parts.append(caution_block())
    return finish_report(f"Design report: {title}", parts, html_path, plots, checked)


def _section_tables(data: dict[str, Any]) -> list[str]:
    out = ["<h2>Target and achieved, section by section</h2>",
           paragraph("“Continuous” is the exact solution before the parts take preferred values; "
              "“preferred values” is the built design. Errors are of the preferred-value design against the target.",
              "note")]
    for s in data["sections"]:
        t, a, c, e = s["target"], s["achieved"], s["continuous"], s["error"]
        out.append(f"<h3>Section {s['index']}: {escape(t['kind'])}, order {t['order']} — "
                   f"{escape(s['title'])} (<code>{escape(s['topology'])}</code>)"
                   f"{inverting_note(s['title'], a.get('inverting'))}</h3>")
        rows = [["f0 (Hz)", fmt_hz(t["f0_hz"]), fmt_hz(c["f0_hz"]), fmt_hz(a["f0_hz"]),
                 fmt_pct(e["f0_pct"])]]
        if t["q"] is not None:
            rows.append(["Q (dimensionless)", fmt_q(t["q"]), fmt_q(c["q"]), fmt_q(a["q"]),
                         fmt_pct(e["q_pct"])])
        if t["zero_f0_hz"] is not None:
            rows.append(["zero f0 (Hz)", fmt_hz(t["zero_f0_hz"]), fmt_hz(c["zero_f0_hz"]),
                         fmt_hz(a["zero_f0_hz"]), fmt_pct(e["zero_f0_pct"])])
        rows.append(["gain (dB)", fmt_gain(t["gain_db"]), fmt_gain(c["gain_db"]),
                     fmt_gain(a["gain_db"]), fmt_db(e["gain_db"])])
        out.append(table(["quantity", "target", "continuous", "preferred values", "error"], rows))
    achieved = data["achieved"]
    out.append(paragraph(f"Whole cascade: target gain {fmt_gain(data['target']['gain_db'])}, achieved "
                  f"{fmt_gain(achieved['gain_db'])} {fmt_where(achieved.get('gain_at_hz'))}"
                  f"{' (inverting)' if achieved.get('inverting') else ''}; "
                  f"{plural(len(achieved['poles']), 'pole')}"
                  + (f" (+{len(achieved['parasitic_poles'])} op-amp parasitic)"
                     if achieved.get("parasitic_poles") else "")
                  + f", {plural(len(achieved['zeros']), 'finite zero')}"
                  + (f" (+{len(achieved['parasitic_zeros'])} op-amp parasitic)"
                     if achieved.get("parasitic_zeros") else "") + "."))
    return out


def _evidence_parts(evidence: Evidence, plots: Plots) -> list[str]:
    v = evidence.verification
    grid = np.asarray(evidence.envelope["frequency_hz"], float)
    named = (("target", v.target), ("preferred values", v.design),
             ("continuous values", v.continuous))
    curves = {name: (_on_grid(grid, f.frequency.frequency_hz, f.frequency.magnitude_db),
                     _on_grid(grid, f.frequency.frequency_hz, f.frequency.phase_deg))
              for name, f in named if f is not None}
    inverted = (" The design inverts: its phase sits 180° from the target's."
                if v.deviation.inverted else "")
    verdict = evidence.mask
    out = ["<h2>Frequency response</h2>", plots.block("bode", bode_figure(
        grid, curves, envelope=(evidence.envelope["low_db"], evidence.envelope["high_db"]),
        reference="target", mask_regions=mask_regions(verdict.mask) if verdict else ()),
        f"Magnitude (dB) and phase (degrees) against frequency (Hz): the target, the design "
        f"with its continuous values and with preferred values, and the range of the "
        f"magnitude over Monte Carlo builds of the whole cascade (shaded); the middle panel "
        f"shows each less the target's magnitude.{inverted}"
        + (" Hatched: where the mask forbids the magnitude (drawn from the target's pass-band "
           "level; the verdict reads each response from its own pass-band peak)."
           if verdict else ""))]
    if verdict is not None:
        out += _mask_parts(verdict)
    rows: list[list[str]] = []
    steps: list[list[str]] = []
    for name, f in named:
        if f is None:
            continue
        q, s = f.frequency, f.step
        rows.append([name, q.kind, fmt_gain(q.gain_db), fmt_edges(q), fmt_gain(q.peak_db),
                     fmt_peak_at(q.peak_hz)])
        steps.append([name, "n/a" if s.overshoot_pct is None else f"{s.overshoot_pct:.2f} %",
                      "n/a" if s.rise_time_s is None else format_value(s.rise_time_s, "s"),
                      number_or_dash(s.settling_time_s, lambda x: format_value(x, "s")),
                      number_or_dash(s.final_value, lambda x: f"{x:.4g} V/V")])
    out.append(table(["response", "kind", "gain (dB)", "−3 dB below the peak (Hz)", "peak (dB)",
                       "peak at (Hz)"], rows, numeric_from=2))
    d = v.deviation
    out.append(paragraph(f"Worst deviation of the preferred-value design from the target between "
                  f"{fmt_hz(v.band_hz[0])} and {fmt_hz(v.band_hz[1])}: {d.magnitude_db:.3f} dB "
                  f"(at {fmt_hz(d.magnitude_at_hz)}) and {d.phase_deg:.2f}° of phase (at "
                  f"{fmt_hz(d.phase_at_hz)})"
                  + ("; the output is inverted." if d.inverted else ".")))
    out.append("<h2>Step response</h2>")
    out.append(plots.block("step", step_figure(
        {name: (f.step.time_s, f.step.output) for name, f in named if f is not None}),
        "Output for a 1 V input step against time: target, preferred values, continuous "
        "values." + (" The design inverts, so its step goes the other way." if inverted else "")))
    out.append(table(["response", "overshoot (%)", "rise time 10–90 %", "settling time (2 %)",
                       "final value"], steps))
    out += _monte_carlo_parts(evidence, plots)
    out += _sensitivity_parts(evidence)
    return out


def mask_regions(mask: Mask) -> list[MaskRegion]:
    """The forbidden boxes of a mask, for :func:`placer.report.plots.bode_figure`."""
    regions: list[MaskRegion] = []
    if mask.ripple_db is not None:
        regions += [(low, high, None, mask.level_db - mask.ripple_db)
                    for low, high in mask.passbands_hz]
    if mask.attenuation_db is not None:
        regions += [(low, high, mask.level_db - mask.attenuation_db, None)
                    for low, high in mask.stopbands_hz]
    return regions


def _mask_parts(verdict: MaskVerdict) -> list[str]:
    lines = mask_lines(verdict)
    rows = []
    for name, figures in (("target", verdict.target), ("preferred values", verdict.snapped),
                          ("continuous values", verdict.continuous)):
        if figures is None:
            continue
        rows.append([name, number_or_dash(figures.passband_deviation_db, lambda x: f"{x:.3f}"),
                     fmt_db(figures.passband_margin_db),
                     number_or_dash(figures.stopband_attenuation_db, lambda x: f"{x:.3f}"),
                     fmt_db(figures.stopband_margin_db), "meets" if figures.meets else "misses"])
    return ["<h3>Against the mask</h3>",
            paragraph(lines[0]),
            table(["response", "pass-band deviation (dB)", "margin", "least stop-band attenuation "
                   "(dB)", "margin", "verdict"], rows),
            paragraph(lines[-2].strip() + " " + lines[-1].strip(),
                      None if verdict.snapped.meets else "note")]


def _monte_carlo_parts(evidence: Evidence, plots: Plots) -> list[str]:
    out = ["<h2>Tolerance spread (Monte Carlo)</h2>",
           paragraph(f"Each section is rebuilt {evidence.samples} times with every part drawn "
              f"({evidence.distribution} distribution, seed {evidence.seed}) within its "
              "tolerance.")]
    for s in evidence.sections:
        mc = s.monte_carlo
        windows = mc.windows or {}
        tolerances = ", ".join(f"{s.designators.get(k, k)} ±{100 * t:g} %"
                               for k, t in s.tolerances.items()) or "none"
        out.append(f"<h3>Section {s.index}</h3>")
        out.append(paragraph(f"Tolerances: {tolerances}."))
        width = windows.get("f0")
        window = (mc.nominal_f0_hz * (1 - width), mc.nominal_f0_hz * (1 + width)) if width else None
        out.append(plots.block(f"section{s.index}-f0-histogram", histogram_figure(
            mc.f0_hz, mc.nominal_f0_hz, label="f0", unit="Hz", window=window,
            title=f"Section {s.index}: spread of f0"),
            f"Section {s.index}: f0 (Hz) over {mc.samples} builds, the nominal value (line)"
            + (f" and the ±{100 * width:g} % window (shaded)." if width else ".")))
        if mc.q is not None and mc.nominal_q is not None:
            width = windows.get("q")
            window = (mc.nominal_q * (1 - width), mc.nominal_q * (1 + width)) if width else None
            out.append(plots.block(f"section{s.index}-q-histogram", histogram_figure(
                mc.q, mc.nominal_q, label="Q", unit="", window=window,
                title=f"Section {s.index}: spread of Q"),
                f"Section {s.index}: Q over {mc.samples} builds, the nominal value (line)"
                + (f" and the ±{100 * width:g} % window (shaded)." if width else ".")))
        if mc.rejection_db is not None:
            least = windows.get("rejection_db")
            nominal = mc.nominal_rejection_db
            exact = nominal is not None and nominal >= MAX_REJECTION_DB
            out.append(plots.block(f"section{s.index}-rejection-histogram", histogram_figure(
                mc.rejection_db, None if exact else nominal, label="rejection", unit="dB",
                window=(least, None) if least else None,
                title=f"Section {s.index}: rejection at {fmt_hz(mc.reject_hz)}"),
                f"Section {s.index}: rejection at {fmt_hz(mc.reject_hz)} (dB below the pass band) "
                f"over {mc.samples} builds"
                + (", the nominal value (line)" if not exact else
                   " (the nominal design nulls it exactly)")
                + (f" and the {least:g} dB floor (shaded above)." if least else ".")))
        st = mc.statistics
        rows = [["f0 (Hz)", fmt_hz(mc.nominal_f0_hz), fmt_hz(st["f0_hz"].mean),
                 fmt_hz(st["f0_hz"].std),
                 f"{fmt_hz(st['f0_hz'].p01)} – {fmt_hz(st['f0_hz'].p99)}"]]
        if mc.nominal_q is not None and "q" in st:
            rows.append(["Q (dimensionless)", fmt_q(mc.nominal_q), fmt_q(st["q"].mean),
                         fmt_q(st["q"].std), f"{fmt_q(st['q'].p01)} – {fmt_q(st['q'].p99)}"])
        if "gain_db" in st:
            rows.append(["gain (dB)", fmt_gain(mc.nominal_gain_db), fmt_gain(st["gain_db"].mean),
                         f"{st['gain_db'].std:.3f} dB",
                         f"{fmt_gain(st['gain_db'].p01)} – {fmt_gain(st['gain_db'].p99)}"])
        if mc.rejection_db is not None:
            rej = st["rejection_db"]
            rows.append([f"rejection at {fmt_hz(mc.reject_hz)} (dB)",
                         fmt_rejection(mc.nominal_rejection_db), fmt_rejection(rej.mean),
                         f"{rej.std:.2f} dB", f"{fmt_rejection(rej.p01)} – {fmt_rejection(rej.p99)}"])
        out.append(table(["quantity", "nominal", "mean", "standard deviation",
                           "1 % – 99 % of builds"], rows))
        if mc.yield_fraction is not None:
            out.append(paragraph(f"Yield: {100 * mc.yield_fraction:.1f} % of builds fall inside every "
                          f"window around nominal ({windows_text(windows)})."))
    return out


def _sensitivity_parts(evidence: Evidence) -> list[str]:
    out = ["<h2>Sensitivity: how much each part moves each section</h2>",
           paragraph("Classical sensitivities S = (∂y/y)/(∂x/x): the percentage change of ω0, Q or the "
              "gain for a 1 % change of the part (dimensionless, % per %).",
              "note")]
    for s in evidence.sections:
        sens = s.sensitivities
        rows = [[s.designators.get(symbol, symbol), f"{sens.omega0[symbol]:+.3f}",
                 "-" if sens.q is None else f"{sens.q.get(symbol, 0.0):+.3f}",
                 f"{sens.gain.get(symbol, 0.0):+.3f}",
                 f"±{100 * s.tolerances[symbol]:g} %" if symbol in s.tolerances else "exact"]
                for symbol in sens.omega0]
        out.append(f"<h3>Section {s.index} ({escape(sens.method)})</h3>")
        out.append(table(["part", "S ω0 (%/%)", "S Q (%/%)", "S gain (%/%)", "tolerance"], rows))
    return out


def _parts_list(data: dict[str, Any], design: Design) -> list[str]:
    tolerances = dict(design.spec.tolerance.tolerances or {})
    rows = []
    for s in data["sections"]:
        for p in s["parts"]:
            unit = KIND_UNITS.get(p["kind"], "")
            tol = tolerances.get(p["kind"])
            rows.append([p["name"], s["index"], p["kind"], format_value(p["value"], unit),
                         p["series"] or "fixed", format_value(p["continuous"], unit, digits=4),
                         f"±{100 * tol:g} %" if tol else "-"])
    for e in data["circuit"]["elements"]:
        if e["kind"] == "opamp":
            model = ", ".join(x for x in (
                f"open-loop gain {20 * math.log10(e['gain']):.0f} dB" if e.get("gain") else "",
                f"GBW {format_value(e['gbw'], 'Hz')}" if e.get("gbw") else "") if x)
            rows.append([e["name"], "-", "op-amp", model or "ideal in the analysis", "-", "-", "-"])
    return ["<h2>Parts list</h2>",
            table(["designator", "section", "kind", "value", "series", "continuous value",
                    "tolerance"], rows, numeric_from=3)]


def _candidates(data: dict[str, Any]) -> list[str]:
    out = ["<h2>Topologies tried</h2>"]
    for s in data["sections"]:
        rows = [[c["topology"], "chosen" if c["topology"] == s["topology"] else "",
                 fmt_error(c["error_pct"], c.get("error_of"), c.get("gain_error_db"))
                 if c["reachable"] else "cannot reach",
                 c.get("parts", "-"), c.get("opamps", "-")] if c["reachable"]
                else [c["topology"], "", "cannot reach", "-", c.get("reason", "")]
                for c in s["candidates"]]
        out.append(f"<h3>Section {s['index']}</h3>")
        out.append(table(["topology", "", "worst error", "parts", "op-amps / reason"], rows,
                          numeric_from=2))
        why = why_chosen(s["candidates"])
        if why:
            out.append(paragraph(why.strip().capitalize()))
    return out


# -- the loop report -------------------------------------------------------------

def loop_frequency_response(transfer_function: Any, crossover_hz: float, *,
                            also_hz: Iterable[float | None] = (), per_decade: int = 200
                            ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Loop gain on a log grid around the crossover: Hz, dB, degrees (unwrapped).

    The grid spans three decades either side of `crossover_hz`, widened
    to a decade beyond every frequency in `also_hz`; the response comes
    from ``control.frequency_response``.
    """
    low, high = crossover_hz / 1e3, crossover_hz * 1e3
    for f in also_hz:
        if f:
            low, high = min(low, f / 10), max(high, f * 10)
    count = int(per_decade * math.log10(high / low)) + 1
    omega = 2 * math.pi * np.geomspace(low, high, count)
    response = control.frequency_response(transfer_function, omega)
    magnitude = np.ravel(np.abs(response.magnitude))
    with np.errstate(divide="ignore"):
        magnitude_db = 20 * np.log10(magnitude)
    phase_deg = np.degrees(np.unwrap(np.ravel(response.phase)))
    return np.ravel(response.omega) / (2 * math.pi), magnitude_db, phase_deg


def loop_components(design: LoopDesign, crossover_hz: float, *,
                    also_hz: Iterable[float | None] = ()) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """The plant G and the compensator Gc = sign·H (snapped parts) on the loop's grid.

    ``{"plant G": (dB, degrees), "compensator Gc": (dB, degrees)}``, on the
    grid of :func:`loop_frequency_response` with the same arguments.
    """
    network = design.network
    assert network is not None, "a designed loop carries its compensator's network function"
    compensator = design.sign * network.transfer_function(design.snapped)
    out: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    for label, tf in (("plant G", design.plant.transfer_function()),
                      ("compensator Gc", compensator)):
        _, magnitude, phase = loop_frequency_response(tf, crossover_hz, also_hz=also_hz)
        out[label] = (magnitude, phase)
    return out


def root_table(data: dict[str, Any]) -> str:
    """The compensator's zeros and poles as built, and a plant's RHP zero, in Hz."""
    comp = data["compensator"]
    rows = [["compensator zero", fmt_hz(f)] for f in comp.get("zeros_hz", [])]
    rows += [["compensator pole", "0 Hz (integrator)" if f == 0 else fmt_hz(f)]
             for f in comp.get("poles_hz", [])]
    plant = data["plant"]
    if plant.get("rhp_zero_hz"):
        rows.append(["plant right-half-plane zero", fmt_hz(plant["rhp_zero_hz"])])
        rows.append([f"crossover limit (1/{1 / plant['rhp_zero_fraction']:g} of the RHP zero, "
                     "common practice)", fmt_hz(plant["rhp_zero_limit_hz"])])
    return table(["root (preferred-value parts)", "frequency"], rows)


def _degrees(x: float) -> str:
    return f"{x:.2f}°"


def _gain_margin(x: float | None) -> str:
    return "unbounded (no phase crossover)" if x is None else number_or_dash(x, lambda v: f"{v:.2f} dB")


def _margin_row(label: str, m: dict[str, Any]) -> list[str]:
    return [label, fmt_hz(m.get("crossover_hz")), number_or_dash(m.get("phase_margin_deg"), _degrees),
            _gain_margin(m.get("gain_margin_db")), fmt_hz(m.get("phase_crossover_hz")),
            "-" if m.get("stable") is None else ("yes" if m["stable"] else "NO")]


def write_loop_report(result: LoopResult, data: dict[str, Any], *, html_path: PathArg | None = None,
                      plots_dir: PathArg | None = None, inputs: Sequence[PathArg] = (),
                      spec_path: PathArg | None = None, opamp_loops: tuple[OpampLoop, ...] = (),
                      resistor_style: str = "iec") -> ReportFiles:
    """Write the HTML report of a compensated loop, and its plots.

    Parameters
    ----------
    result : placer.loops.compensator.LoopResult
    data : dict
        :func:`placer.loops.compensator.loop_to_dict` of the result.
    html_path, plots_dir, inputs
        As for :func:`write_design_report`; the plots are ``loop-gain``
        and ``phase-margin-histogram``.
    spec_path : str, optional
        The spec file shown in the report (default: ``data["spec"]``,
        else the first of `inputs`).
    opamp_loops : tuple of placer.analysis.return_ratio.OpampLoop
        The compensator op-amp's own loop (``data["opamp_loops"]`` holds its figures).

    Returns
    -------
    placer.report.page.ReportFiles

    Raises
    ------
    SpecError
        When an output folder does not exist or an output is an input.
    """
    spec_path = spec_path or data.get("spec") or (inputs[0] if inputs else None)
    topology = result.design.topology
    checked = prepare_outputs(html_path, plots_dir, tuple(inputs) + (spec_path, topology.path))
    plots = Plots(plots_dir, checked)
    plant, k, mc = data["plant"], data["k_factor"], data.get("monte_carlo")
    title = f"Loop compensation report: {data['compensator']['family']} compensator"
    parts: list[str] = [f"<h1>{escape(title)}</h1>",
             paragraph(f"Made by placer {__version__}. Frequencies in hertz, angles in degrees, "
                "roots in rad/s."),
             "<h2>What was asked for</h2>", spec_block(spec_path),
             "<h2>The plant</h2>", paragraph(plant.get("description") or "(no description)"),
             paragraph(f"G(s) = k·Π(s − z)/Π(s − p) with k = {plant['gain']:.6g}."),
             table(_ROOT_HEADERS, _root_rows("pole", plant["poles"]) +
                    _root_rows("zero", plant["zeros"])),
             "<h2>The compensator</h2>",
             paragraph(f"{topology.title} (library topology {topology.id}), placed by Venable's K "
                "factor (H. D. Venable, “The K Factor”, Proc. Powercon 10, 1983)."),
             table(["quantity", "value"], [
                 ["K factor (dimensionless)", f"{k['k']:.4g}"],
                 ["phase boost needed / placed (degrees)",
                  f"{k['required_boost_deg']:.2f}° / {k['boost_deg']:.2f}°"],
                 ["plant phase at the crossover (degrees)", f"{k['plant_phase_deg']:.2f}°"],
                 ["plant gain at the crossover (dB)", fmt_gain(k["plant_gain_db"])],
                 ["compensator zero(s) (Hz)", fmt_hz(k["zero_hz"])],
                 ["compensator pole(s) (Hz)", fmt_hz(k["pole_hz"])],
                 ["integrator ωi (rad/s)", f"{k['integrator_rad_s']:.6g} rad/s"]])]
    if html_path is not None:
        parts.append(schematic_figure(compensator_schematic(result.design), "The compensator "
                                      "with its preferred values.", "compensator-",
                                      resistor_style=resistor_style))
    fc = data.get("crossover_hz") or data["target"]["crossover_hz"]
    also = (data.get("phase_crossover_hz"),)
    frequency, magnitude, phase = loop_frequency_response(
        result.design.loop_transfer_function(snapped=True), fc, also_hz=also)
    parts += ["<h2>Loop gain and margins</h2>", plots.block("loop-gain", loop_bode_figure(
        frequency, magnitude, phase, crossover_hz=data.get("crossover_hz"),
        phase_margin_deg=data.get("phase_margin_deg"), gain_margin_db=data.get("gain_margin_db"),
        phase_crossover_hz=data.get("phase_crossover_hz"),
        components=loop_components(result.design, fc, also_hz=also)),
        "Loop gain L = compensator Gc × plant G with preferred-value parts (solid), and the "
        "plant and the compensator alone (dashed): magnitude (dB) and phase (degrees) against "
        "frequency (Hz), the phase margin at the 0 dB crossover and the gain margin at the "
        "−180° crossing marked."),
        root_table(data),
        table(["loop", "crossover", "phase margin", "gain margin", "phase crossover",
                "closed loop stable"],
               [["target", fmt_hz(data["target"]["crossover_hz"]),
                 f"{data['target']['phase_margin_deg']:.2f}°", "-", "-", "-"],
                _margin_row("continuous values", data["continuous"]),
                _margin_row("preferred values", data)])]
    if mc:
        parts += _loop_monte_carlo_parts(result, data, mc, plots)
    parts += compensator_html(data, opamp_loops, plots)
    tolerances = mc["tolerances"] if mc else {}
    rows = [[p["name"], p["kind"], format_value(p["value"], KIND_UNITS.get(p["kind"], "")),
             p["series"] or "fixed",
             format_value(p["continuous"], KIND_UNITS.get(p["kind"], ""), digits=4),
             f"±{100 * tolerances[p['name']]:g} %" if p["name"] in tolerances else "-"]
            for p in data["parts"]]
    parts += ["<h2>Parts list</h2>",
              table(["designator", "kind", "value", "series", "continuous value", "tolerance"],
                     rows, numeric_from=2)]
    if data.get("notes"):
        parts.append("<h2>Notes</h2>")
        parts.append("<ul>" + "".join(f"<li>{escape(n)}</li>" for n in data["notes"]) + "</ul>")
    parts.append(caution_block(POWER_CAUTION))
    return finish_report(title, parts, html_path, plots, checked)


def _loop_monte_carlo_parts(result: LoopResult, data: dict[str, Any], mc: dict[str, Any],
                            plots: Plots) -> list[str]:
    floor = mc["margin_floor_deg"]
    rows = [["phase margin, worst (degrees)", number_or_dash(mc["phase_margin_worst_deg"], _degrees)],
            ["phase margin, median (degrees)", number_or_dash(mc["phase_margin_median_deg"], _degrees)],
            ["gain margin, worst (dB)", _gain_margin(mc["gain_margin_worst_db"])],
            ["crossover, lowest – highest (Hz)",
             f"{fmt_hz(mc['crossover_min_hz'])} – {fmt_hz(mc['crossover_max_hz'])}"],
            ["unstable builds", f"{mc['unstable_samples']} of {mc['samples']}"],
            [f"yield: stable with phase margin ≥ {floor:g}°", f"{100 * mc['yield']:.1f} %"]]
    tolerances = ", ".join(f"{k} ±{100 * v:g} %" for k, v in mc["tolerances"].items())
    out = ["<h2>Tolerance spread (Monte Carlo)</h2>",
           paragraph(f"{mc['samples']} builds, {mc['distribution']} distribution, seed {mc['seed']}; "
              f"tolerances: {tolerances}."),
           table(["quantity", "value"], rows)]
    samples = None if result.monte_carlo is None else result.monte_carlo.phase_margin_deg
    if samples is not None:
        out.append(plots.block("phase-margin-histogram", histogram_figure(
            samples, data.get("phase_margin_deg"), label="phase margin", unit="deg",
            window=(floor, None), title="Spread of the phase margin"),
            f"Phase margin (degrees) over {mc['samples']} builds, the nominal value (line) and "
            f"the region at or above the {floor:g}° floor (shaded)."))
    return out
