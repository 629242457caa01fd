"""A topology comparison in words: console text and an HTML report."""

from __future__ import annotations

import math

from .. import __version__
from ..compare import GBW_SOURCES_SHORT, GBW_SOURCES, RANK_KEYS, SectionComparison
from ..design import candidate_topologies
from ..units import format_value
from .console import fmt_rejection, table, windows_text
from .page import (Plots, caution_block, escape, finish_report, paragraph, prepare_outputs,
                   spec_block)
from .page import table as html_table
from .plots import ranking_figure
from .schematic import candidate_schematic_html

__all__ = ["comparison_text", "write_comparison_report"]

_HEADERS = ["rank", "topology", "parts", "op-amps", "error (%)", "yield (%)",
            "R spread", "C spread", "max|S ω0|", "max|S Q|",
            "GBW needed (Hz)", "GBW from", "drift at 100·f0·Q (%)",
            "noise (µV rms)", "worst op-amp PM (°)"]

_LEGEND = [
    "error: worst root (f0, Q) or gain error after snapping; yield: Monte Carlo builds "
    "inside the windows above",
    "R spread, C spread: largest/smallest value of that kind; max|S ω0|, max|S Q|: the "
    "largest part sensitivity (% per %)",
    "GBW needed: '-' for a passive stage, or for a design that misses the bound "
    "with ideal op-amps already, or at every GBW up to 1e4·f0·Q (the JSON says which)",
    "drift at 100·f0·Q: the larger f0 or Q shift of the snapped design built with "
    "single-pole op-amps of the rule of thumb's GBW",
    "noise: the stage alone, integrated output noise over the noise band; worst op-amp PM: "
    "the least phase margin of its op-amps' own loops (return ratio, the spec's op-amp model "
    "or the default '10 MHz' preset; below 45° is low)",
]
_RESOLVED_HEADER = "GBW re-solved (Hz)"
#: What each GBW method puts in the "GBW needed" column, for the heading.
_METHOD_LINES = {
    "built": "GBW needed (--gbw built): the single-pole op-amp model on each ideal-op-amp "
             "design as snapped, the smallest GBW (at least 10·f0) that keeps it within 1 % "
             "of the target as built",
    "rule": "GBW needed (--gbw rule): the rule of thumb 100·f0·Q (f0 in Hz; Q taken as 1 "
            "for a first-order stage)",
    "model": "GBW needed (--gbw model): the op-amp model on each ideal-op-amp design as "
             "snapped, as with --gbw built; GBW re-solved: the smallest GBW at which a "
             "design re-solved and re-snapped for the op-amp stays within 1 % of the "
             "target, also with the GBW 25 % off (placer.place.gbw.required_gbw)",
}
_REJECTION_LEGEND = ("rejection: what 99 % of the builds still take off the target's zero "
                     "frequency (pass-band gain over |H| there)")


def _number(x, digits=3):
    return "-" if x is None or not math.isfinite(x) else f"{x:.{digits}g}"


def _short_source(source):
    for key, text in GBW_SOURCES.items():
        if source.startswith(text):
            return GBW_SOURCES_SHORT[key]
    return GBW_SOURCES_SHORT["model"] if source else "-"


def _heading(comparison):
    """The header lines: the ranking key, what the yield counts, the GBW method."""
    spec = comparison.spec
    windows = windows_text(spec.tolerance.windows)
    tolerances = ", ".join(f"{k} {100 * v:g} %" for k, v in spec.tolerance.tolerances.items())
    return (f"ranked by {comparison.rank_by}: {RANK_KEYS[comparison.rank_by]}",
            f"yield: {comparison.samples} Monte Carlo samples per candidate "
            f"({spec.tolerance.distribution}; {tolerances}) inside {windows} of the TARGET"
            + ("" if "gain_db" in spec.tolerance.windows else ", gain ±0.5 dB")
            + f"; seed {comparison.seed}; one standard error of a yield is at most "
            f"±{100 * math.sqrt(0.25 / comparison.samples):.1f} %",
            _METHOD_LINES.get(comparison.gbw, f"GBW needed (--gbw {comparison.gbw})"))


def _section_line(s):
    sec = s.section
    return (f"Section {s.index}: {sec.kind}, order {sec.order}, f0 "
            f"{format_value(sec.f0_hz, 'Hz', digits=4)}"
            + (f", Q {sec.q:.4g}" if sec.q is not None else "")
            + f", gain {sec.gain_db + 0.0:+.3f} dB".replace("-0.000 ", "+0.000 "))


def _rows(s: SectionComparison, gbw: str = "built") -> tuple[list[str], list[list]]:
    """(headers, rows) of one section's reachable candidates, in rank order.

    With the "model" GBW method a column gives the re-solved design's GBW.
    """
    notch = any(c.rejection_db is not None for c in s.candidates)
    resolved = gbw == "model"
    rows = []
    for rank, c in enumerate((c for c in s.candidates if c.reachable), start=1):
        rows.append([rank, c.topology, c.parts, c.opamps, f"{c.error_pct:.3f}",
                     f"{c.yield_pct:.1f}", _number(c.spread.get("resistor")),
                     _number(c.spread.get("capacitor")), _number(c.max_sensitivity_w0),
                     _number(c.max_sensitivity_q),
                     "-" if c.gbw_hz is None else format_value(c.gbw_hz, "Hz"),
                     _short_source(c.gbw_source), _number(c.gbw_drift_pct),
                     "-" if c.noise_rms_v is None else f"{1e6 * c.noise_rms_v:.3g}",
                     "-" if c.worst_phase_margin_deg is None else f"{c.worst_phase_margin_deg:.1f}"]
                    + (["-" if c.gbw_resolved_hz is None else format_value(c.gbw_resolved_hz, "Hz")]
                       if resolved else [])
                    + ([fmt_rejection(c.rejection_db).removesuffix(" dB")] if notch else []))
    headers = (_HEADERS + ([_RESOLVED_HEADER] if resolved else [])
               + (["rejection (dB)"] if notch else []))
    return headers, rows


def _notes_lines(s: SectionComparison) -> list[str]:
    """One line per candidate whose placement left out some of the spec's [parts]."""
    return [f"    {c.topology}: {note}" for c in s.candidates for note in c.notes]


def _notes(comparison):
    """The legend lines that apply, and one line per GBW method used."""
    legend = list(_LEGEND)
    if any(c.rejection_db is not None for s in comparison.sections for c in s.candidates):
        legend.append(_REJECTION_LEGEND)
    # one line per method; a candidate's own detail (why "-") is in the JSON
    sources = {c.gbw_source for s in comparison.sections for c in s.candidates if c.reachable}
    methods = sorted({x.split("; ")[0] for x in sources if x and x != GBW_SOURCES["passive"]})
    return legend, methods


def comparison_text(comparison):
    """One console table per section, then the unreachable ones with reasons."""
    ranked, counted, method = _heading(comparison)
    lines = [f"Compare: {comparison.spec.title} — {ranked}", f"  {counted}", f"  {method}"]
    for s in comparison.sections:
        lines += ["", _section_line(s)]
        headers, rows = _rows(s, comparison.gbw)
        lines.append(table(headers, rows) if rows else "  no candidate reaches this section")
        unreachable = [c for c in s.candidates if not c.reachable]
        if unreachable:
            lines.append("  cannot reach it:")
            lines.extend(f"    {c.topology}: {c.reason}" for c in unreachable)
        noted = _notes_lines(s)
        if noted:
            lines.append("  placed without some of [parts]:")
            lines.extend(noted)
    legend, methods = _notes(comparison)
    lines += ["", "Columns:"] + [f"  {line}" for line in legend]
    if methods:
        lines += ["", "GBW needed:"] + [f"  {method}" for method in methods]
    return "\n".join(lines)


def _candidate_schematics(comparison, s, resistor_style):
    """Each reachable candidate of a section drawn with its snapped values."""
    pool = {t.id: t for t in candidate_topologies(s.section, comparison.spec).topologies}
    out = []
    for rank, c in enumerate((c for c in s.candidates if c.reachable), start=1):
        if c.topology in pool:
            circuit = pool[c.topology].circuit.with_values(c.values)
            out.append(candidate_schematic_html(
                circuit, f"Rank {rank}: {c.topology}, with its preferred values",
                f"s{s.index}c{rank}-", resistor_style=resistor_style))
    return out


def write_comparison_report(comparison, *, html_path=None, plots_dir=None, inputs=(),
                            resistor_style="iec"):
    """Write the HTML report of a topology comparison, and its plots.

    One page: the spec, then per section the ranking table, a chart of each
    reachable candidate's yield and error, and the candidates that cannot
    reach the section with the reason; the column legend and the caution.

    Parameters
    ----------
    comparison : placer.compare.Comparison
    html_path : path, optional
        The HTML file (written atomically; it may not be an input).
    plots_dir : path, optional
        An existing folder for each chart as PNG and SVG
        (``section<N>-ranking``).
    inputs : sequence of path
        Files the outputs may not overwrite (the spec, user topologies).
    resistor_style : {"iec", "ieee"}
        Resistor symbol of the candidates' schematics.

    Returns
    -------
    placer.report.page.ReportFiles

    Raises
    ------
    SpecError
        When the plots folder does not exist or an output is an input.
    """
    spec = comparison.spec
    inputs = prepare_outputs(html_path, plots_dir, tuple(inputs) + (spec.path,))
    plots = Plots(plots_dir, inputs)
    ranked, counted, method = _heading(comparison)
    title = f"Topology comparison: {spec.title}"
    parts = [f"<h1>{escape(title)}</h1>",
             paragraph(f"Made by placer {__version__}. Frequencies in hertz; errors, yields, "
                       "drifts and spreads as labelled."),
             "<h2>What was asked for</h2>", spec_block(spec.path),
             "<h2>How the candidates are ranked</h2>", paragraph(ranked), paragraph(counted),
             paragraph(method)]
    for s in comparison.sections:
        parts.append(f"<h2>{escape(_section_line(s))}</h2>")
        headers, rows = _rows(s, comparison.gbw)
        if rows:
            parts.append(html_table(headers, rows, numeric_from=2))
            reachable = [c for c in s.candidates if c.reachable]
            parts.append(plots.block(
                f"section{s.index}-ranking",
                ranking_figure([c.topology for c in reachable], [c.yield_pct for c in reachable],
                               [c.error_pct for c in reachable],
                               title=f"Section {s.index}: yield and error, best first"),
                f"Section {s.index}: Monte Carlo yield (%) and worst error after snapping (%, "
                "log scale) of each candidate, in rank order."))
            if html_path is not None:
                parts += _candidate_schematics(comparison, s, resistor_style)
        else:
            parts.append(paragraph("No candidate reaches this section.", "note"))
        unreachable = [c for c in s.candidates if not c.reachable]
        if unreachable:
            parts.append(paragraph("Cannot reach it:"))
            parts.append("<ul>" + "".join(f"<li><code>{escape(c.topology)}</code>: "
                                          f"{escape(c.reason)}</li>" for c in unreachable)
                         + "</ul>")
        noted = [(c.topology, note) for c in s.candidates for note in c.notes]
        if noted:
            parts.append(paragraph("Placed without some of [parts]:"))
            parts.append("<ul>" + "".join(f"<li><code>{escape(t)}</code>: {escape(n)}</li>"
                                          for t, n in noted) + "</ul>")
    legend, methods = _notes(comparison)
    parts.append("<h2>The columns</h2>")
    parts.append("<ul>" + "".join(f"<li>{escape(line)}</li>" for line in legend) + "</ul>")
    if methods:
        parts.append("<h3>Where the GBW needed comes from</h3>")
        parts.append("<ul>" + "".join(f"<li>{escape(m)}</li>" for m in methods) + "</ul>")
    parts.append(caution_block())
    return finish_report(title, parts, html_path, plots, inputs)
