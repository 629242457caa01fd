"""Results in a notebook: compact HTML and figures of a design, a comparison, a loop.

:func:`to_html` gives the fragment a notebook shows for a result (a
table or two and the plots as inline SVG, text drawn as paths), and
:func:`plot` the result's main figure as a :class:`matplotlib.figure.Figure`.
Every fragment is self-contained: styles are inline attributes, and there
is no script, no external style sheet, font, image or URL.

The result classes sit below ``report/`` in the layering (``design``,
``compare``, ``spec``, ``evidence``), so their ``_repr_html_`` and ``plot``
methods import this module inside the method: the one accepted upward
reference, lazy, so that importing a result's module loads no matplotlib.

Examples
--------
>>> from placer.evidence.tolerance import Statistics
>>> "<table" in statistics_table({"f0_hz": Statistics.of([1.0, 2.0, 3.0])})
True
"""

from __future__ import annotations

import html
import itertools
import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from typing import TYPE_CHECKING, Any, cast

import numpy as np

from ..units import format_value
from .loop_plots import loop_bode_figure
from .page import inline_svg
from .plots import bode_figure, figure_svg, histogram_figure, pole_zero_figure, ranking_figure

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from ..compare import Comparison
    from ..design import Design
    from ..evidence.tolerance_results import MonteCarloResult, Statistics
    from ..evidence.verify import Margins
    from ..spec.loop_table import LoopResult

__all__ = ["to_html", "plot", "design_html", "comparison_html", "loop_html",
           "monte_carlo_html", "statistics_table", "design_figure", "comparison_figure",
           "loop_figure", "monte_carlo_figure", "svg_fragment"]

_UNIT = {"resistor": "Ω", "capacitor": "F", "inductor": "H"}
_TABLE = 'style="border-collapse:collapse;margin:.4em 0;font-size:.9em"'
_CELL = 'style="border:1px solid #ccc;padding:.15em .5em;text-align:{align}"'
_HEAD = 'style="border:1px solid #ccc;padding:.15em .5em;background:#eef2f8;text-align:left"'
_FIGURE = 'style="max-width:42em;margin:.4em 0"'
#: Each inline SVG gets its own id prefix, so plots shown in one notebook never share an id.
_COUNTER = itertools.count(1)


def _e(text: object) -> str:
    return html.escape(str(text), quote=True)


def _table(headers: Iterable[object], rows: Iterable[Sequence[object]], *,
           numeric_from: int = 1) -> str:
    head = "".join(f"<th {_HEAD}>{_e(h)}</th>" for h in headers)
    body = "".join(
        "<tr>" + "".join(
            f"<td {_CELL.format(align='right' if i >= numeric_from else 'left')}>{_e(c)}</td>"
            for i, c in enumerate(row)) + "</tr>"
        for row in rows)
    return f"<table {_TABLE}><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _number(x: float | None, fmt: str = "{:.3g}", absent: str = "-") -> str:
    if x is None or not math.isfinite(float(x)):
        return absent
    return fmt.format(float(x))


def _hz(x: float | None) -> str:
    return "-" if x is None or not math.isfinite(float(x)) else format_value(float(x), "Hz", digits=4)


def svg_fragment(fig: Figure) -> str:
    """A figure as an ``<svg>`` element to sit inside HTML (unique ids, no namespaces)."""
    prefix = f"placer{next(_COUNTER)}-"
    return f"<div {_FIGURE}>{inline_svg(figure_svg(fig), prefix)}</div>"


def _wrap(title: str, parts: Iterable[str]) -> str:
    return ('<div class="placer-result" style="font-family:system-ui,sans-serif;line-height:1.35">'
            f"<div style=\"font-weight:bold;font-size:1.1em\">{_e(title)}</div>"
            + "".join(parts) + "</div>")


def _p(text: object) -> str:
    return f'<p style="margin:.3em 0">{_e(text)}</p>'


# -- a design --------------------------------------------------------------------

def _design_grid(design: Design, points: int = 400) -> np.ndarray:
    radii = [abs(r) for r in tuple(design.target.poles) + tuple(design.target.zeros) if abs(r) > 0]
    radii = radii or [2 * math.pi]
    low, high = min(radii) / (2 * math.pi) / 30, max(radii) / (2 * math.pi) * 30
    return np.geomspace(low, high, points)


def design_figure(design: Design, *, points: int = 400) -> Figure:
    """The design's Bode plot: the target and the built cascade with preferred values.

    The built curve is the cascade circuit's own response (MNA solve at
    every frequency, op-amp models and buffers included); the middle panel
    shows it less the target's magnitude.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from ..analysis.pencil import circuit_response
    from ..analysis.response import Response

    frequency = _design_grid(design, points)
    omega = 2 * math.pi * frequency
    zeros, poles, k = design.target.zpk()
    curves: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    for label, h in (("target", Response.from_zpk(zeros, poles, k).evaluate(omega)),
                     ("preferred values", circuit_response(design.circuit, omega))):
        with np.errstate(divide="ignore"):
            curves[label] = (20 * np.log10(np.abs(h)), np.degrees(np.unwrap(np.angle(h))))
    title = getattr(design.spec, "title", None) or "Frequency response"
    return bode_figure(frequency, curves, reference="target", title=title)


def _section_rows(design: Design) -> list[list[object]]:
    rows: list[list[object]] = []
    for s in design.sections:
        # Candidate.errors is typed `object` in placer.place: Any at this boundary
        section, errors = s.section, cast(Any, s.candidate.errors)
        rows.append([s.index, s.topology.id, section.kind, _hz(section.f0_hz),
                     _number(errors.f0_pct, "{:+.3f}"), _number(section.q, "{:.4f}"),
                     _number(errors.q_pct, "{:+.3f}"), _number(errors.worst_root_pct, "{:.3f}")])
    return rows


def design_html(design: Design, *, plots: bool = True) -> str:
    """The notebook view of a :class:`placer.design.Design`.

    A line of totals, each section's topology with its f0 and Q errors
    after snapping, the parts with their values, and (with `plots`) the
    Bode plot and the pole-zero map as inline SVG.
    """
    parts = list(design.parts)
    opamps = sum(1 for e in design.circuit.elements if e.kind == "opamp")
    title = getattr(design.spec, "title", None) or "design"
    out = [_p(f"{len(design.sections)} section(s), {len(parts)} passive part(s), {opamps} "
              f"op-amp(s); cascade gain {design.gain:+.4g} V/V at the target's reference "
              "frequency."),
           _table(["section", "topology", "kind", "target f0", "f0 error (%)", "target Q",
                   "Q error (%)", "worst root error (%)"], _section_rows(design), numeric_from=3)]
    by_section = {p.name: s.index for s in design.sections for p in s.parts}
    out.append(_table(["designator", "section", "kind", "value", "series"],
                      [[p.name, by_section[p.name], p.kind, format_value(p.value, _UNIT[p.kind]),
                        p.series or "given"] for p in parts], numeric_from=3))
    if plots:
        out.append(svg_fragment(design_figure(design)))
        out.append(svg_fragment(pole_zero_figure(design.target.poles, design.target.zeros,
                                                 design.poles, design.zeros)))
    return _wrap(f"Design: {title}", out)


# -- a comparison ----------------------------------------------------------------

def comparison_figure(comparison: Comparison, section: int = 1) -> Figure:
    """One section's ranking chart: each reachable candidate's yield and error.

    Parameters
    ----------
    comparison : placer.compare.Comparison
    section : int
        The section's index, from 1 in cascade order.

    Returns
    -------
    matplotlib.figure.Figure
    """
    chosen = [s for s in comparison.sections if s.index == section]
    if not chosen:
        from ..errors import SpecError

        raise SpecError(f"section = {section!r}: the comparison has sections "
                        f"{', '.join(str(s.index) for s in comparison.sections)}")
    # a reachable candidate carries every number (the casts below)
    reachable = [c for c in chosen[0].candidates if c.reachable]
    return ranking_figure([c.topology for c in reachable],
                          [cast(float, c.yield_pct) for c in reachable],
                          [cast(float, c.error_pct) for c in reachable],
                          title=f"Section {section}: yield and error, best first")


def comparison_html(comparison: Comparison, *, plots: bool = True) -> str:
    """The notebook view of a :class:`placer.compare.Comparison`: each section's ranking."""
    spec = comparison.spec
    out = [_p(f"Ranked by {comparison.rank_by}; {comparison.samples} Monte Carlo samples per "
              f"candidate, seed {comparison.seed}.")]
    for s in comparison.sections:
        section = s.section
        out.append(f'<div style="font-weight:bold;margin-top:.6em">Section {s.index}: '
                   f"{_e(section.kind)}, f0 {_e(_hz(section.f0_hz))}"
                   + (f", Q {section.q:.4g}" if section.q is not None else "") + "</div>")
        reachable = [c for c in s.candidates if c.reachable]
        rows = [[rank, c.topology, c.parts, c.opamps, _number(c.error_pct, "{:.3f}"),
                 _number(c.yield_pct, "{:.1f}"), _hz(c.gbw_hz)]
                for rank, c in enumerate(reachable, start=1)]
        if rows:
            out.append(_table(["rank", "topology", "parts", "op-amps", "error (%)", "yield (%)",
                               "GBW needed"], rows, numeric_from=2))
            if plots:
                out.append(svg_fragment(comparison_figure(comparison, s.index)))
        else:
            out.append(_p("No candidate reaches this section."))
        missed = [c for c in s.candidates if not c.reachable]
        if missed:
            out.append("<ul style=\"margin:.2em 0\">" + "".join(
                f"<li><code>{_e(c.topology)}</code>: {_e(c.reason)}</li>" for c in missed)
                + "</ul>")
    return _wrap(f"Topology comparison: {getattr(spec, 'title', '')}", out)


# -- a loop ----------------------------------------------------------------------

def loop_figure(result: LoopResult) -> Figure:
    """The compensated loop gain (preferred values) with its margins marked.

    Parameters
    ----------
    result : placer.spec.loop_table.LoopResult

    Returns
    -------
    matplotlib.figure.Figure
    """
    from .html import loop_frequency_response

    margins = result.design.snapped_margins
    crossover = margins.crossover_hz or result.design.placement.crossover_hz
    frequency, magnitude, phase = loop_frequency_response(
        result.design.loop_transfer_function(snapped=True), crossover,
        also_hz=(margins.phase_crossover_hz,))
    return loop_bode_figure(frequency, magnitude, phase, crossover_hz=margins.crossover_hz,
                            phase_margin_deg=margins.phase_margin_deg,
                            gain_margin_db=margins.gain_margin_db,
                            phase_crossover_hz=margins.phase_crossover_hz)


def _margin_row(label: str, m: Margins) -> list[str]:
    return [label, _hz(m.crossover_hz), _number(m.phase_margin_deg, "{:.2f}°"),
            _number(m.gain_margin_db, "{:.2f} dB", absent="unbounded"),
            "yes" if m.stable else "NO"]


def loop_html(result: LoopResult, *, plots: bool = True) -> str:
    """The notebook view of a :class:`placer.spec.loop_table.LoopResult`.

    Target against achieved margins (continuous and preferred values), the
    parts, the Monte Carlo summary when one was run, and the loop gain plot.
    """
    design = result.design
    placement = design.placement
    out = [_table(["loop", "crossover", "phase margin", "gain margin", "stable"], [
        ["target", _hz(placement.crossover_hz), f"{placement.phase_margin_deg:.2f}°", "-", "-"],
        _margin_row("continuous values", design.continuous_margins),
        _margin_row("preferred values", design.snapped_margins)])]
    kinds = {e.symbol: e.kind for e in design.topology.circuit.elements if e.symbol is not None}
    out.append(_table(["designator", "kind", "value", "series"], [
        [symbol, kinds.get(symbol, ""), format_value(value, _UNIT.get(kinds.get(symbol, ""), "")),
         design.series[symbol]] for symbol, value in design.snapped.items()
        if symbol in design.series], numeric_from=2))
    mc = result.monte_carlo
    if mc is not None:
        summary = mc.summary()
        out.append(_p(f"Monte Carlo, {summary['samples']} builds: worst phase margin "
                      f"{_number(summary['phase_margin_worst_deg'], '{:.2f}°')}, median "
                      f"{_number(summary['phase_margin_median_deg'], '{:.2f}°')}; "
                      f"{summary['unstable_samples']} unstable"
                      + (f"; yield {100 * summary['yield']:.1f} %" if summary["yield"] is not None
                         else "") + "."))
    if plots:
        out.append(svg_fragment(loop_figure(result)))
    return _wrap(f"Loop: {placement.family} compensator ({design.topology.id})", out)


# -- a Monte Carlo ---------------------------------------------------------------

_STATISTICS = {"f0_hz": ("f0", "Hz"), "q": ("Q", ""), "gain": ("gain", "V/V"),
               "gain_db": ("gain", "dB"), "rejection_db": ("rejection", "dB")}


def statistics_table(statistics: Mapping[str, Statistics]) -> str:
    """An HTML table of :class:`placer.evidence.tolerance.Statistics` by figure."""
    rows = []
    for key, st in statistics.items():
        label, unit = _STATISTICS.get(key, (key, ""))
        shown: Callable[[float], str] = (lambda x: format_value(x, "Hz", digits=4)) \
            if unit == "Hz" else (lambda x: f"{x:.4g}")
        rows.append([f"{label} ({unit})" if unit else label, shown(st.mean), f"{st.std:.3g}",
                     shown(st.p01), shown(st.p99)])
    return _table(["figure", "mean", "std", "1 %", "99 %"], rows)


def monte_carlo_figure(result: MonteCarloResult) -> Figure:
    """Histogram of f0 over the builds, the nominal line and the f0 window."""
    window = None
    if result.windows and "f0" in result.windows:
        w = result.windows["f0"]
        window = (result.nominal_f0_hz * (1 - w), result.nominal_f0_hz * (1 + w))
    return histogram_figure(result.f0_hz, result.nominal_f0_hz, label="f0", unit="Hz",
                            window=window)


def monte_carlo_html(result: MonteCarloResult, *, plots: bool = True) -> str:
    """The notebook view of a :class:`placer.evidence.tolerance.MonteCarloResult`."""
    out = [statistics_table(result.statistics)]
    if result.yield_fraction is not None:
        out.append(_p(f"Yield: {100 * result.yield_fraction:.1f} % of {result.samples} builds "
                      "inside every window."))
    if plots:
        out.append(svg_fragment(monte_carlo_figure(result)))
    return _wrap(f"Monte Carlo: {result.samples} builds ({result.distribution})", out)


# -- dispatch --------------------------------------------------------------------

def _kind(result: object) -> str:
    from ..compare import Comparison
    from ..design import Design
    from ..evidence.tolerance import MonteCarloResult
    from ..spec.loop_table import LoopResult

    for cls, name in ((Design, "design"), (Comparison, "comparison"), (LoopResult, "loop"),
                      (MonteCarloResult, "monte_carlo")):
        if isinstance(result, cls):
            return name
    from ..errors import SpecError

    raise SpecError(f"no notebook view for a {type(result).__name__}: give a Design, Comparison, "
                    "LoopResult or MonteCarloResult")


def to_html(result: Any, *, plots: bool = True) -> str:
    """The notebook HTML of a Design, Comparison, LoopResult or MonteCarloResult."""
    views: dict[str, Callable[..., str]] = {
        "design": design_html, "comparison": comparison_html, "loop": loop_html,
        "monte_carlo": monte_carlo_html}
    return views[_kind(result)](result, plots=plots)


def plot(result: Any, **options: Any) -> Figure:
    """The main figure of a result, as a matplotlib Figure.

    A Design: its Bode plot (target and built); a Comparison: one
    section's ranking (``section=``, default 1); a LoopResult: the loop
    gain with its margins; a MonteCarloResult: the f0 histogram.
    """
    figures: dict[str, Callable[..., Figure]] = {
        "design": design_figure, "comparison": comparison_figure, "loop": loop_figure,
        "monte_carlo": monte_carlo_figure}
    return figures[_kind(result)](result, **options)
