"""Console tables: every number labelled, with its unit."""

from __future__ import annotations

import math
import sys
import textwrap
from collections.abc import Iterable, Mapping, Sequence
from typing import IO, TYPE_CHECKING, Any

from ..design import ERROR_TIE_PCT
from ..evidence.tolerance import MAX_REJECTION_DB
from ..circuit.elements import KIND_UNITS
from ..units import format_value, plural
from .prelayout import cascade_lines, section_lines

if TYPE_CHECKING:
    from ..evidence.gather import Evidence, MaskFigures, MaskVerdict
    from ..evidence.figures import FrequencyFigures
    from ..target.mask import Mask
    from ..target.targets import Section, Target

__all__ = ["inverting_note", "table", "design_text", "target_text", "evidence_text", "Progress", "fmt_pct", "fmt_db",
           "mask_lines", "fmt_hz", "fmt_where", "fmt_edges", "fmt_peak_at", "fmt_gain", "fmt_seconds", "fmt_rejection", "windows_text",
           "WIDTH", "wrap_text", "why_chosen", "fmt_error"]

#: Console width the text is laid out for (``compare --wide`` goes past it).
WIDTH = 100



def windows_text(windows: Mapping[str, float]) -> str:
    """Yield windows in words: "f0 ±2 %, Q ±5 %, gain ±0.5 dB, rejection >= 40 dB"."""
    words: list[str] = []
    for key, width in windows.items():
        if key == "gain_db":
            words.append(f"gain ±{width:g} dB")
        elif key == "rejection_db":
            words.append(f"rejection >= {width:g} dB")
        else:
            words.append(f"{ {'q': 'Q'}.get(key, key)} ±{100 * width:g} %")
    return ", ".join(words)


def table(headers: Sequence[object], rows: Iterable[Sequence[object]], *, indent: str = "  ",
          width: int | None = None, wrap: int | None = None) -> str:
    """A plain-text table with columns sized to fit.

    With `width`, a table wider than that wraps the text of column `wrap`
    (default: the widest column) onto continuation lines so that it fits.
    """
    cells = [[str(h) for h in headers]] + [["" if c is None else str(c) for c in row] for row in rows]
    widths = [max(len(row[i]) for row in cells) for i in range(len(headers))]
    total = len(indent) + sum(widths) + 2 * (len(widths) - 1)
    if width is not None and total > width and widths:
        column = widths.index(max(widths)) if wrap is None else wrap
        widths[column] = max(8, widths[column] - (total - width))
        wrapped: list[list[str]] = []
        for row in cells:
            pieces = textwrap.wrap(row[column], widths[column], break_on_hyphens=False) or [""]
            for k, piece in enumerate(pieces):
                wrapped.append([(cell if k == 0 else "") if i != column else piece
                                for i, cell in enumerate(row)])
            if row is cells[0]:
                header_lines = len(pieces)
        cells = wrapped
        widths = [max(len(row[i]) for row in cells) for i in range(len(headers))]
    else:
        header_lines = 1
    lines = []
    for k, row in enumerate(cells):
        lines.append(indent + "  ".join(cell.ljust(w) for cell, w in zip(row, widths)).rstrip())
        if k == header_lines - 1:
            lines.append(indent + "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def wrap_text(text: str, width: int = WIDTH) -> str:
    """Lines longer than `width` wrapped at spaces, continued two columns further in.

    Tables are laid out to fit; this is for prose lines.
    """
    out: list[str] = []
    for line in text.split("\n"):
        if len(line) <= width:
            out.append(line)
            continue
        indent = line[:len(line) - len(line.lstrip())]
        out.extend(textwrap.wrap(line.strip(), width, initial_indent=indent,
                                 subsequent_indent=indent + "  ", break_on_hyphens=False,
                                 break_long_words=False))
    return "\n".join(out)


def fmt_error(error_pct: float | None, quantity: str | None,
              gain_error_db: float | None = None) -> str:
    """A worst error with what it measures: "0.324 % in Q", "+4.02 dB in gain"."""
    if error_pct is None or not math.isfinite(error_pct):
        return "-"
    if quantity == "gain" and gain_error_db is not None and math.isfinite(gain_error_db):
        return f"{gain_error_db + 0.0:+.2f} dB in gain"
    return f"{error_pct:.3f} % in {quantity}" if quantity else f"{error_pct:.3f} %"


def _size(c: Mapping[str, Any]) -> str:
    return f"{c['parts']} parts + {c['opamps']} op-amp{'s' if c['opamps'] != 1 else ''}"


def _spread(c: Mapping[str, Any]) -> float:
    return math.prod(c.get("spread", {}).values() or [1.0])


def why_chosen(candidates: Sequence[Mapping[str, Any]]) -> str | None:
    """One line on why the first reachable candidate beat a lower-error one, or None.

    `candidates`: the JSON dicts of a design section's candidates in rank
    order. Design ranks by error, but errors within ``ERROR_TIE_PCT``
    percentage points of the best count as equal; among those fewer parts
    and op-amps win, then the smaller value spread.
    """
    reachable = [c for c in candidates if c.get("reachable") and c.get("error_pct") is not None]
    if len(reachable) < 2:
        return None
    chosen = reachable[0]
    lowest = min(reachable, key=lambda c: c["error_pct"])
    if lowest is chosen or lowest["error_pct"] >= chosen["error_pct"]:
        return None
    size = (chosen["parts"] + chosen["opamps"], lowest["parts"] + lowest["opamps"])
    if size[0] < size[1]:
        reason = f"fewer parts ({_size(chosen)} against {_size(lowest)})"
    else:
        reason = (f"lower value spread (R ratio × C ratio {_spread(chosen):.3g} against "
                  f"{_spread(lowest):.3g})")
    return (f"  chosen over {lowest['topology']}, whose worst error is lower "
            f"({fmt_error(lowest['error_pct'], lowest.get('error_of'), lowest.get('gain_error_db'))}"
            f" against {chosen['error_pct']:.3f} %): errors within {ERROR_TIE_PCT:g} percentage "
            f"points count as equal, and this one has {reason}")


def fmt_pct(x: float | None, digits: int = 3) -> str:
    """A signed percentage, '-' when absent or not finite."""
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    return f"{x + 0.0:+.{digits}f} %".replace("-0.000 ", "+0.000 ")


def fmt_db(x: float | None) -> str:
    """A signed level in dB, '-' when absent or not finite."""
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    return f"{x + 0.0:+.3f} dB".replace("-0.000 ", "+0.000 ")


def fmt_rejection(x: float | None) -> str:
    """A notch's rejection in dB; the cap of an exact null as "null"."""
    if x is None or not math.isfinite(x):
        return "-"
    return "null" if x >= MAX_REJECTION_DB else f"{x:.1f} dB"


def fmt_gain(x: float | None) -> str:
    """A gain in dB with its sign, '-' when absent."""
    if x is None:
        return "-"
    return f"{x:+.3f} dB".replace("-0.000 ", "+0.000 ")


def fmt_hz(x: float | None) -> str:
    """A frequency in engineering notation, '-' when absent."""
    return "-" if x is None else format_value(x, "Hz", digits=4)


def fmt_where(frequency_hz: float | None) -> str:
    """Where a gain is read: "at DC", "at high frequency" (None) or "at 1 kHz"."""
    if frequency_hz is None:
        return "at high frequency"
    return "at DC" if frequency_hz == 0 else f"at {fmt_hz(frequency_hz)}"


def fmt_q(x: float | None) -> str:
    """A Q to four decimals, '-' when absent."""
    return "-" if x is None else f"{x:.4f}"


def target_text(target: Target, sections: Sequence[Section]) -> str:
    """The target's poles, zeros and sections as text."""
    lines = [f"Target: {target.response}" + (f", {target.approximation}" if target.approximation else "")
             + f", order {target.order}, gain {fmt_gain(target.gain_db)}"]
    rows: list[list[object]] = []
    for p in sorted(target.poles, key=lambda r: (abs(r), r.imag)):
        rows.append(["pole", f"{p.real:.6g}", f"{p.imag:+.6g}", fmt_hz(abs(p) / (2 * math.pi))])
    for z in sorted(target.zeros, key=lambda r: (abs(r), r.imag)):
        rows.append(["zero", f"{z.real:.6g}", f"{z.imag:+.6g}", fmt_hz(abs(z) / (2 * math.pi))])
    lines.append(table(["root", "re (rad/s)", "im (rad/s)", "|root| (Hz)"], rows))
    lines.append("")
    lines.append("Sections (cascade order):")
    rows = []
    for i, s in enumerate(sections, start=1):
        rows.append([i, s.kind, s.order, fmt_hz(s.f0_hz), fmt_q(s.q),
                     fmt_hz(s.zero_f0_hz) if s.zero_omega else "-", fmt_gain(s.gain_db)])
    lines.append(table(["#", "kind", "order", "f0", "Q", "zero f0", "gain"], rows))
    mask: Mask | None = getattr(target, "mask", None)
    if mask is not None:
        lines.append("")
        lines.append(f"Mask ({mask.source}): {mask.describe()}")
    return "\n".join(lines)


def inverting_note(title: str, inverting: object) -> str:
    """", inverting" after a section's title, unless the title already says so."""
    return ", inverting" if inverting and "inverting" not in str(title).lower() else ""


def design_text(data: Mapping[str, Any]) -> str:
    """A design (as its JSON dict) as console text."""
    lines = [f"Design: {data['title']}"]
    target = data["target"]
    lines.append(f"  target gain {target['gain_db']:+.3f} dB; {plural(len(data['sections']), 'section')}")
    for s in data["sections"]:
        t, a, e = s["target"], s["achieved"], s["error"]
        lines.append("")
        lines.append(f"Section {s['index']}: {t['kind']} order {t['order']} — topology {s['topology']}"
                     f" ({s['title']}){inverting_note(s['title'], a.get('inverting'))}")
        rows = [["f0", fmt_hz(t["f0_hz"]), fmt_hz(a["f0_hz"]), fmt_pct(e["f0_pct"]),
                 fmt_hz(s["continuous"]["f0_hz"])]]
        if t["q"] is not None:
            rows.append(["Q", fmt_q(t["q"]), fmt_q(a["q"]), fmt_pct(e["q_pct"]), fmt_q(s["continuous"]["q"])])
        if t["zero_f0_hz"] is not None:
            rows.append(["zero f0", fmt_hz(t["zero_f0_hz"]), fmt_hz(a["zero_f0_hz"]),
                         fmt_pct(e["zero_f0_pct"]), fmt_hz(s["continuous"]["zero_f0_hz"])])
        rows.append(["gain", fmt_gain(t["gain_db"]), fmt_gain(a["gain_db"]), fmt_db(e["gain_db"]),
                     fmt_gain(s["continuous"]["gain_db"])])
        lines.append(table(["quantity", "target", "achieved (preferred values)", "error",
                            "continuous"], rows))
        rows = []
        for p in s["parts"]:
            rows.append([p["name"], p["kind"], format_value(p["value"], KIND_UNITS[p["kind"]]),
                         p["series"] or "fixed", format_value(p["continuous"], KIND_UNITS[p["kind"]], digits=4)])
        lines.append("")
        lines.append(table(["part", "kind", "value", "series", "continuous value"], rows))
        lines.extend(f"  note: {note}" for note in s.get("notes", ()))
        if s.get("amplifier"):
            lines.append("")
            lines.extend(_amplifier_lines(s["amplifier"]))
        why = why_chosen(s["candidates"])
        if why:
            lines.append(why)
        others = [c for c in s["candidates"] if c["topology"] != s["topology"]]
        if others:
            lines.append("  other candidates, worst error: " + "; ".join(
                f"{c['topology']} {fmt_error(c['error_pct'], c.get('error_of'), c.get('gain_error_db'))}"
                if c["reachable"] else f"{c['topology']} (cannot: {c['reason']})"
                for c in others[:8]))
        if data.get("prelayout"):
            lines.extend(section_lines(data["prelayout"], s["index"]))
    achieved = data["achieved"]
    lines.append("")
    parasitic = len(achieved.get("parasitic_poles", ()))
    lines.append(f"Whole cascade: {plural(len(achieved['poles']), 'pole')}"
                 + (f" (+{parasitic} op-amp parasitic pole{'s' if parasitic > 1 else ''})"
                    if parasitic else "")
                 + f", {plural(len(achieved['zeros']), 'zero')}"
                 + (f" (+{len(achieved['parasitic_zeros'])} op-amp parasitic)"
                    if achieved.get("parasitic_zeros") else "") + ", "
                 f"gain {fmt_gain(achieved['gain_db'])} {fmt_where(achieved.get('gain_at_hz'))}"
                 f"{' (inverting)' if achieved['inverting'] else ''}")
    if data.get("prelayout"):
        lines.extend(cascade_lines(data["prelayout"]))
    return wrap_text("\n".join(lines))


def _amplifier_lines(amp: Mapping[str, Any]) -> list[str]:
    """The op-amp model's effect on one section: ideal vs corrected design."""
    model = amp["amplifier"]
    described = [f"GBW {format_value(model['gbw_hz'], 'Hz')}" if model.get("gbw_hz") else "infinite GBW"]
    if model.get("gain"):
        described.append(f"A0 {20 * math.log10(model['gain']):.0f} dB")
    if model.get("output_resistance_ohm"):
        described.append(f"Ro {format_value(model['output_resistance_ohm'], 'ohm')}")
    lines = [f"  with a real op-amp ({', '.join(described)}):"]
    rows = []
    for label, key in (("ideal-op-amp design, built", "ideal_design"),
                       ("corrected design", "corrected_design"),
                       ("corrected design, GBW 25 % low", "corrected_design_at_low_gbw")):
        figures = amp.get(key)
        if figures:
            rows.append([label, fmt_pct(figures["f0_error_pct"]), fmt_pct(figures["q_error_pct"])])
    lines.append(table(["design", "f0 error", "Q error"], rows, indent="    "))
    if amp.get("parasitic_poles_hz"):
        lines.append("    parasitic poles: " + ", ".join(fmt_hz(f) for f in amp["parasitic_poles_hz"]))
    if amp.get("note"):
        lines.append(f"    note: {amp['note']}")
    return lines


def evidence_text(evidence: Evidence) -> str:
    """A design's evidence as text: responses, then each section's spread."""
    v = evidence.verification
    lines = ["Evidence (python-control, on the designed circuit):"]
    rows: list[list[object]] = []
    steps: list[list[object]] = []
    for name, fig in (("target", v.target), ("preferred values", v.design),
                      ("continuous", v.continuous)):
        if fig is None:
            continue
        f, step = fig.frequency, fig.step
        rows.append([name, fmt_gain(f.gain_db), fmt_edges(f),
                     fmt_gain(f.peak_db), fmt_peak_at(f.peak_hz)])
        steps.append([name, "n/a" if step.overshoot_pct is None else f"{step.overshoot_pct:.2f} %",
                      fmt_seconds(step.rise_time_s, absent="n/a"),
                      fmt_seconds(step.settling_time_s)])
    lines.append(table(["frequency response", "gain", "-3 dB from the peak", "peak", "peak at"],
                       rows, width=WIDTH, wrap=2))
    lines.append("")
    lines.append(table(["step response", "overshoot", "rise 10-90 %", "settle 2 %"], steps))
    d = v.deviation
    nulls = [s.monte_carlo.reject_hz for s in evidence.sections if s.monte_carlo.reject_hz]
    at_null = any(abs(d.magnitude_at_hz / f - 1) < 0.1 for f in nulls)
    lines.append(f"  worst deviation from the target over {fmt_hz(v.band_hz[0])} – {fmt_hz(v.band_hz[1])}: "
                 f"{d.magnitude_db:.3f} dB (at {fmt_hz(d.magnitude_at_hz)}), "
                 f"{d.phase_deg:.2f}° phase (at {fmt_hz(d.phase_at_hz)})"
                 + (" — output inverted" if d.inverted else "")
                 + (" — at a notch's null, where moving the null a fraction of a per cent "
                    "reads as many dB; the rejection rows below give the quantity that matters"
                    if at_null else ""))
    if v.snapping_deviation is not None:
        lines.append(f"  cost of preferred values (against the continuous values): "
                     f"{v.snapping_deviation.magnitude_db:.3f} dB, {v.snapping_deviation.phase_deg:.2f}°")
    if evidence.mask is not None:
        lines.append("")
        lines.extend(mask_lines(evidence.mask))
    for s in evidence.sections:
        mc = s.monte_carlo
        lines.append("")
        lines.append(f"Section {s.index}: Monte Carlo, {mc.samples} builds ({mc.distribution}), "
                     + ", ".join(f"{s.designators.get(k, k)} ±{100 * t:g} %" for k, t in s.tolerances.items()))
        st = mc.statistics
        rows = [["f0", fmt_hz(mc.nominal_f0_hz), fmt_hz(st["f0_hz"].mean),
                 f"{100 * st['f0_hz'].std / mc.nominal_f0_hz:.3f} %",
                 f"{fmt_hz(st['f0_hz'].p01)} – {fmt_hz(st['f0_hz'].p99)}"]]
        if mc.nominal_q is not None and "q" in st:
            rows.append(["Q", f"{mc.nominal_q:.4f}", f"{st['q'].mean:.4f}",
                         f"{100 * st['q'].std / mc.nominal_q:.3f} %",
                         f"{st['q'].p01:.4f} – {st['q'].p99:.4f}"])
        if "gain_db" in st:
            rows.append(["gain", fmt_gain(mc.nominal_gain_db), fmt_gain(st["gain_db"].mean),
                         f"{st['gain_db'].std:.3f} dB",
                         f"{fmt_gain(st['gain_db'].p01)} – {fmt_gain(st['gain_db'].p99)}"])
        if mc.rejection_db is not None:
            rej = st["rejection_db"]
            rows.append([f"rejection at {fmt_hz(mc.reject_hz)}", fmt_rejection(mc.nominal_rejection_db),
                         fmt_rejection(rej.mean), f"{rej.std:.2f} dB",
                         f"{fmt_rejection(rej.p01)} – {fmt_rejection(rej.p99)}"])
        lines.append(table(["quantity", "nominal", "mean", "std dev", "1 % – 99 %"], rows))
        if mc.yield_fraction is not None and mc.windows is not None:  # a yield has its windows
            lines.append(f"  yield (builds within {windows_text(mc.windows)} of nominal): "
                         f"{100 * mc.yield_fraction:.1f} %")
        ranking = mc.ranking.get("f0", ())
        if ranking:
            lines.append("  f0 spread dominated by: " + ", ".join(
                f"{s.designators.get(p, p)} ({100 * mc.contributions['f0'][p]:.0f} %)" for p in ranking[:3]))
        sens = s.sensitivities
        rows = []
        for symbol in sens.omega0:
            rows.append([s.designators.get(symbol, symbol), f"{sens.omega0[symbol]:+.3f}",
                         "-" if sens.q is None else f"{sens.q[symbol]:+.3f}",
                         f"{sens.gain[symbol]:+.3f}"])
        lines.append(f"  sensitivities ({sens.method}):")
        lines.append(table(["part", "S w0", "S Q", "S gain"], rows, indent="    "))
    return wrap_text("\n".join(lines))


def _margin_words(figures: MaskFigures, mask: Mask) -> str:
    """ "meets" or "MISSES: stop band 0.135 dB short of 40 dB" for one response."""
    misses = []
    if figures.passband_margin_db is not None and not figures.meets and \
            figures.passband_margin_db < 0:
        misses.append(f"pass band varies {-figures.passband_margin_db:.3f} dB more than "
                      f"{mask.ripple_db:g} dB")
    if figures.stopband_margin_db is not None and not figures.meets and \
            figures.stopband_margin_db < 0:
        misses.append(f"stop band {-figures.stopband_margin_db:.3f} dB short of "
                      f"{mask.attenuation_db:g} dB")
    return "meets" if figures.meets else "MISSES: " + "; ".join(misses)


def mask_lines(verdict: MaskVerdict) -> list[str]:
    """The mask verdict as text: the mask, each response's margins, the Monte Carlo yield."""
    mask = verdict.mask
    lines = [f"Mask ({mask.source}"
             + (f"; designed with a {mask.margin_db:g} dB margin" if mask.margin_db else "")
             + f"): {mask.describe()}"]
    rows = []
    for name, figures in (("target", verdict.target), ("preferred values", verdict.snapped),
                          ("continuous", verdict.continuous)):
        if figures is None:
            continue
        rows.append([name,
                     "-" if figures.passband_deviation_db is None
                     else f"{figures.passband_deviation_db:.3f} dB",
                     fmt_db(figures.passband_margin_db),
                     "-" if figures.stopband_attenuation_db is None
                     else f"{figures.stopband_attenuation_db:.3f} dB",
                     fmt_db(figures.stopband_margin_db), _margin_words(figures, mask)])
    lines.append(table(["response", "pass-band deviation", "margin", "least stop-band attenuation",
                        "margin", "verdict"], rows, width=WIDTH, wrap=5))
    shares = [f"pass band alone {100 * verdict.passband_yield:.1f} %"
              if verdict.passband_yield is not None else "",
              f"stop band alone {100 * verdict.stopband_yield:.1f} %"
              if verdict.stopband_yield is not None else ""]
    lines.append(f"  Monte Carlo, {verdict.samples} builds of the whole cascade: "
                 f"{100 * verdict.yield_fraction:.1f} % meet the mask"
                 + (f" ({', '.join(x for x in shares if x)})" if any(shares) else ""))
    snapped = verdict.snapped
    if snapped.meets:
        lines.append("  The circuit with preferred values meets the mask.")
    else:
        lines.append("  The circuit with preferred values does not meet the mask: "
                     + _margin_words(snapped, mask).removeprefix("MISSES: ") + "."
                     + ("" if mask.margin_db else
                        " A design margin ([target] margin, in dB) leaves headroom for "
                        "preferred values and tolerances."))
    return lines


def fmt_seconds(x: float | None, *, absent: str = "-") -> str:
    """A time in engineering notation, `absent` when None."""
    return absent if x is None else format_value(x, "s")


def fmt_edges(figures: FrequencyFigures) -> str:
    """A response's half-power edges: one for a low-/high-pass, both and the width for a band."""
    if figures.band_low_hz is not None and figures.band_high_hz is not None:
        return (f"{fmt_hz(figures.band_low_hz)} – {fmt_hz(figures.band_high_hz)} "
                f"(BW {fmt_hz(figures.bandwidth_hz)})")
    return fmt_hz(figures.f3db_hz)


def fmt_peak_at(peak_hz: float | None) -> str:
    """Where a peak sits: "DC" (0 Hz), "high freq." (None: the high-frequency limit) or Hz."""
    if peak_hz is None:
        return "high freq."
    return "DC" if peak_hz == 0 else fmt_hz(peak_hz)


class Progress:
    """A one-line progress bar on a terminal; silent otherwise or when quiet."""

    def __init__(self, label: str, *, quiet: bool = False, stream: IO[str] | None = None) -> None:
        self.stream = stream or sys.stderr
        self.enabled = not quiet and hasattr(self.stream, "isatty") and self.stream.isatty()
        self.label = label
        self.shown = False

    def __call__(self, done: int, total: int, note: str = "") -> None:
        if not self.enabled or total <= 0:
            return
        width = 30
        filled = int(width * done / total)
        self.stream.write(f"\r{self.label} [{'#' * filled}{'.' * (width - filled)}] "
                          f"{done}/{total} {note[:30]:<30}")
        self.stream.flush()
        self.shown = True

    def close(self) -> None:
        if self.shown:
            self.stream.write("\r" + " " * 90 + "\r")
            self.stream.flush()
