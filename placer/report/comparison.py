"""A topology comparison in words: console text and an HTML report."""

from __future__ import annotations

import math
import os
from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING, cast

from .. import __version__
from ..compare import (GBW_SOURCES_SHORT, GBW_SOURCES, DEFAULT_GAIN_WINDOW_DB, RANK_KEYS,
                       CandidateResult, Comparison, SectionComparison)
from ..design import candidate_topologies
from ..units import format_value
from .console import WIDTH, fmt_error, fmt_rejection, table, windows_text, wrap_text
from .page import (Plots, ReportFiles, caution_block, escape, finish_report, paragraph,
                   prepare_outputs, spec_block)
from .page import table as html_table
from .plots import ranking_figure
from .schematic import candidate_schematic_html

if TYPE_CHECKING:
    from ..spec.reader import Spec
    from ..target.targets import Section

__all__ = ["comparison_text", "write_comparison_report", "why_first"]

_HEADERS = ["rank", "topology", "parts", "op-amps", "worst error", "yield (%)",
            "R spread", "C spread", "max|S ω0|", "max|S Q|",
            "GBW needed", "GBW from", "GBW drift (%)",
            "noise (µV rms)", "op-amp PM (°)"]
#: Columns of the ranking table and of the two detail tables (indices into _HEADERS).
_RANKING = (0, 1, 2, 3, 4, 5)
_SPREAD = (0, 1, 6, 7, 8, 9, 13)
_OPAMP = (0, 1, 10, 11, 12, 14)

_LEGEND = [
    "worst error: the largest error with preferred values, and what it measures (f0 or Q in "
    "%, the gain in dB); yield: Monte Carlo builds inside the windows above",
    "R spread, C spread: largest/smallest value of that kind; max|S ω0|, max|S Q|: the "
    "largest part sensitivity (% per %)",
    "GBW needed: '-' for a passive stage, or for a design that misses the bound "
    "with ideal op-amps already, or at every GBW up to 1e4·f0·Q (the JSON says which)",
    "GBW drift: the larger f0 or Q shift of the design with preferred values built "
    "with single-pole op-amps of the common-practice GBW, 100·f0·Q",
    "noise: the stage alone, integrated output noise over the noise band; op-amp PM: "
    "the least phase margin of its op-amps' own loops (return ratio, the spec's op-amp model "
    "or the default '10 MHz' preset; below 45° is low)",
]
_RESOLVED_HEADER = "GBW re-solved (Hz)"
#: What each GBW method puts in the "GBW needed" column, for the heading.
_METHOD_LINES = {
    "built": "GBW needed (--gbw built): the single-pole op-amp model on each ideal-op-amp "
             "design with preferred values, the smallest GBW (at least 10·f0) that keeps it "
             "within 1 % of the target as built",
    "rule": "GBW needed (--gbw rule): the common practice 100·f0·Q (f0 in Hz; Q taken as 1 "
            "for a first-order stage)",
    "model": "GBW needed (--gbw model): the op-amp model on each ideal-op-amp design with "
             "preferred values, as with --gbw built; GBW re-solved: the smallest GBW at which a "
             "design solved again for the op-amp, with preferred values, stays within 1 % of "
             "the target, also with the GBW 25 % off",
}
_REJECTION_LEGEND = ("rejection: what 99 % of the builds still take off the target's zero "
                     "frequency (pass-band gain over |H| there)")


def _number(x: float | None, digits: int = 3) -> str:
    return "-" if x is None or not math.isfinite(x) else f"{x:.{digits}g}"


def _short_source(source: str) -> str:
    for key, text in GBW_SOURCES.items():
        if source.startswith(text):
            return GBW_SOURCES_SHORT[key]
    return GBW_SOURCES_SHORT["model"] if source else "-"


def _spec(comparison: Comparison) -> Spec:
    return comparison.spec


def _section(s: SectionComparison) -> Section:
    return s.section


def _candidates(s: SectionComparison) -> tuple[CandidateResult, ...]:
    return s.candidates


def _kinds_present(comparison: Comparison) -> set[str]:
    """The part kinds (resistor, capacitor, inductor) of the candidates the comparison lists."""
    kinds: set[str] = set()
    spec = _spec(comparison)
    for s in comparison.sections:
        names = {c.topology for c in _candidates(s)}
        for topology in candidate_topologies(_section(s), spec).topologies:
            if topology.id in names:
                kinds.update(e.kind for e in topology.circuit.elements)
    return kinds


def _heading(comparison: Comparison) -> tuple[str, str, str]:
    """The header lines: the ranking key, what the yield counts, the GBW method.

    The tolerances listed are those of the part kinds the candidates have
    (no "inductor 10 %" for a comparison of RC stages); all of them when no
    candidate's topology is known.
    """
    spec = _spec(comparison)
    windows = windows_text(spec.tolerance.windows)
    present = _kinds_present(comparison)
    tolerances = ", ".join(f"{k} {100 * v:g} %" for k, v in spec.tolerance.tolerances.items()
                           if k in present or not present)
    return (f"ranked by {comparison.rank_by}: {RANK_KEYS[comparison.rank_by]}",
            f"yield: {comparison.samples} Monte Carlo samples per candidate "
            f"({spec.tolerance.distribution}; {tolerances}) within {windows} of the target "
            "(design counts them around its own nominal)"
            + ("" if "gain_db" in spec.tolerance.windows
               else f", gain ±{DEFAULT_GAIN_WINDOW_DB:g} dB")
            + f"; seed {comparison.seed}; one standard error of a yield is at most "
            f"±{100 * math.sqrt(0.25 / comparison.samples):.1f} %",
            _METHOD_LINES.get(comparison.gbw, f"GBW needed (--gbw {comparison.gbw})"))


def _section_line(s: SectionComparison) -> str:
    sec = _section(s)
    return (f"Section {s.index}: {sec.kind}, order {sec.order}, f0 "
            f"{format_value(sec.f0_hz, 'Hz', digits=4)}"
            + (f", Q {sec.q:.4g}" if sec.q is not None else "")
            + f", gain {sec.gain_db + 0.0:+.3f} dB".replace("-0.000 ", "+0.000 "))


def _rows(s: SectionComparison, gbw: str = "built") -> tuple[list[str], list[list[object]]]:
    """(headers, rows) of one section's reachable candidates, in rank order.

    With the "model" GBW method a column gives the re-solved design's GBW.
    """
    notch = any(c.rejection_db is not None for c in _candidates(s))
    resolved = gbw == "model"
    rows: list[list[object]] = []
    for rank, c in enumerate((c for c in _candidates(s) if c.reachable), start=1):
        rows.append([rank, c.topology, c.parts, c.opamps,
                     fmt_error(c.error_pct, c.error_of, c.gain_error_db),
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


def _notes(comparison: Comparison) -> tuple[list[str], list[str]]:
    """The legend lines that apply, and one line per GBW method used."""
    legend = list(_LEGEND)
    if any(c.rejection_db is not None for s in comparison.sections for c in s.candidates):
        legend.append(_REJECTION_LEGEND)
    # one line per method; a candidate's own detail (why "-") is in the JSON
    sources = {c.gbw_source for s in comparison.sections for c in s.candidates if c.reachable}
    methods = sorted({x.split("; ")[0] for x in sources if x and x != GBW_SOURCES["passive"]})
    return legend, methods


def _columns(headers: Sequence[str], rows: Sequence[Sequence[object]],
             keep: tuple[int, ...]) -> tuple[list[str], list[list[object]]]:
    """The columns `keep` (indices into _HEADERS) of a table, with the optional ones that go there."""
    names = [_HEADERS[k] for k in keep]
    if keep is _RANKING and "rejection (dB)" in headers:
        names.append("rejection (dB)")
    if keep is _OPAMP and _RESOLVED_HEADER in headers:
        names.append(_RESOLVED_HEADER)
    index = [headers.index(name) for name in names]
    return names, [[row[k] for k in index] for row in rows]


def why_first(s: SectionComparison, rank_by: str) -> str | None:
    """One line on why rank 1 is not the lowest-error candidate, from the ranking key; or None."""
    reachable = [c for c in _candidates(s) if c.reachable and c.error_pct is not None]
    if len(reachable) < 2:
        return None
    first = reachable[0]
    # reachable candidates carry their numbers (None only when unreachable)
    lowest = min(reachable, key=lambda c: cast(float, c.error_pct))
    if lowest is first or cast(float, lowest.error_pct) >= cast(float, first.error_pct):
        return None
    if rank_by == "yield":
        if cast(float, first.yield_pct) > cast(float, lowest.yield_pct):
            reason = f"higher yield ({first.yield_pct:.1f} % against {lowest.yield_pct:.1f} %)"
        elif cast(int, first.opamps) < cast(int, lowest.opamps):
            reason = (f"a yield as good within two standard errors ({first.yield_pct:.1f} % "
                      f"against {lowest.yield_pct:.1f} %) with fewer op-amps ({first.opamps} "
                      f"against {lowest.opamps})")
        else:
            reason = (f"a yield as good within two standard errors ({first.yield_pct:.1f} % "
                      f"against {lowest.yield_pct:.1f} %) with fewer parts ({first.parts} "
                      f"against {lowest.parts})")
    elif rank_by == "parts":
        reason = f"fewer parts ({first.parts} against {lowest.parts})"
    elif rank_by == "sensitivity":
        reason = (f"lower sensitivity (largest |S| {first.max_sensitivity:.3g} against "
                  f"{lowest.max_sensitivity:.3g})")
    else:
        return None
    return (f"  rank 1 {first.topology} over {lowest.topology}, whose worst error is lower "
            f"({fmt_error(lowest.error_pct, lowest.error_of, lowest.gain_error_db)}): {reason}")


def comparison_text(comparison: Comparison, *, wide: bool = False) -> str:
    """Per section a ranking table and two detail tables, then the unreachable ones with reasons.

    Laid out for :data:`~placer.report.console.WIDTH` columns; `wide` puts
    every column of a candidate on one line instead.
    """
    ranked, counted, method = _heading(comparison)
    lines = [f"Compare: {_spec(comparison).title} — {ranked}", f"  {counted}", f"  {method}"]
    for s in comparison.sections:
        lines += ["", _section_line(s)]
        headers, rows = _rows(s, comparison.gbw)
        if not rows:
            lines.append("  no candidate reaches this section")
        elif wide:
            lines.append(table(headers, rows))
        else:
            lines.append(table(*_columns(headers, rows, _RANKING), width=WIDTH))
            why = why_first(s, comparison.rank_by)
            if why:
                lines.append(why)
            lines += ["", "  spread, sensitivity and noise:"]
            lines.append(table(*_columns(headers, rows, _SPREAD), width=WIDTH))
            if any(c.opamps for c in s.candidates if c.reachable):
                lines += ["", "  op-amps:"]
                lines.append(table(*_columns(headers, rows, _OPAMP), width=WIDTH, wrap=3))
        if rows and wide:
            why = why_first(s, comparison.rank_by)
            if why:
                lines.append(why)
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
    text = "\n".join(lines)
    return text if wide else wrap_text(text)


def _candidate_schematics(comparison: Comparison, s: SectionComparison,
                          resistor_style: str) -> list[str]:
    """Each reachable candidate of a section drawn with its preferred values."""
    pool = {t.id: t for t in candidate_topologies(_section(s), _spec(comparison)).topologies}
    out = []
    for rank, c in enumerate((c for c in s.candidates if c.reachable), start=1):
        if c.topology in pool:
            circuit = pool[c.topology].circuit.with_values(c.values)
            out.append(candidate_schematic_html(
                circuit, f"Rank {rank}: {c.topology}, with its preferred values",
                f"s{s.index}c{rank}-", resistor_style=resistor_style))
    return out


def write_comparison_report(comparison: Comparison, *,
                            html_path: str | os.PathLike[str] | None = None,
                            plots_dir: str | os.PathLike[str] | None = None,
                            inputs: Iterable[str | os.PathLike[str]] = (),
                            resistor_style: str = "iec") -> ReportFiles:
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
    spec = _spec(comparison)
    shown_inputs = prepare_outputs(html_path, plots_dir, tuple(inputs) + (spec.path,))
    plots = Plots(plots_dir, shown_inputs)
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
            why = why_first(s, comparison.rank_by)
            if why:
                parts.append(paragraph(why.strip().capitalize()))
            reachable = [c for c in s.candidates if c.reachable]
            parts.append(plots.block(
                f"section{s.index}-ranking",
                # a reachable candidate carries its yield and error
                ranking_figure([c.topology for c in reachable],
                               [cast(float, c.yield_pct) for c in reachable],
                               [cast(float, c.error_pct) for c in reachable],
                               title=f"Section {s.index}: yield and error, best first"),
                f"Section {s.index}: Monte Carlo yield (%) and worst error with preferred values "
                "(%, log scale) of each candidate, in rank order."))
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
    return finish_report(title, parts, html_path, plots, shown_inputs)
