"""Console text of a topology comparison."""

from __future__ import annotations

import math

from ..compare import _SHORT, _SOURCES, RANK_KEYS
from ..units import format_value
from .console import fmt_rejection, table, windows_text

__all__ = ["comparison_text"]


def _number(x, digits=3):
    return "-" if x is None or not math.isfinite(x) else f"{x:.{digits}g}"


def _short_source(source):
    for key, text in _SOURCES.items():
        if source.startswith(text):
            return _SHORT[key]
    return _SHORT["model"] if source else "-"


def comparison_text(comparison):
    """One console table per section, then the unreachable ones with reasons."""
    spec = comparison.spec
    windows = windows_text(spec.tolerance.windows)
    tolerances = ", ".join(f"{k} {100 * v:g} %" for k, v in spec.tolerance.tolerances.items())
    lines = [f"Compare: {spec.title} — ranked by {comparison.rank_by}: {RANK_KEYS[comparison.rank_by]}",
             f"  yield: {comparison.samples} Monte Carlo samples per candidate "
             f"({spec.tolerance.distribution}; {tolerances}) inside {windows} of the TARGET"
             + ("" if "gain_db" in spec.tolerance.windows else ", gain ±0.5 dB")
             + f"; seed {comparison.seed}; one standard error of a yield is at most "
             f"±{100 * math.sqrt(0.25 / comparison.samples):.1f} %"]
    headers = ["rank", "topology", "parts", "op-amps", "error (%)", "yield (%)",
               "R spread", "C spread", "max|S ω0|", "max|S Q|",
               "GBW needed (Hz)", "GBW from", "drift at 100·f0·Q (%)"]
    sources = set()
    for s in comparison.sections:
        sec = s.section
        lines.append("")
        lines.append(f"Section {s.index}: {sec.kind}, order {sec.order}, f0 "
                     f"{format_value(sec.f0_hz, 'Hz', digits=4)}"
                     + (f", Q {sec.q:.4g}" if sec.q is not None else "")
                     + f", gain {sec.gain_db + 0.0:+.3f} dB".replace("-0.000 ", "+0.000 "))
        rows = []
        notch = any(c.rejection_db is not None for c in s.candidates)
        for rank, c in enumerate((c for c in s.candidates if c.reachable), start=1):
            sources.add(c.gbw_source)
            rows.append([rank, c.topology, c.parts, c.opamps, f"{c.error_pct:.3f}",
                         f"{c.yield_pct:.1f}", _number(c.spread.get("resistor")),
                         _number(c.spread.get("capacitor")), _number(c.max_sensitivity_w0),
                         _number(c.max_sensitivity_q),
                         "-" if c.gbw_hz is None else format_value(c.gbw_hz, "Hz"),
                         _short_source(c.gbw_source), _number(c.gbw_drift_pct)]
                        + ([fmt_rejection(c.rejection_db).removesuffix(" dB")] if notch else []))
        shown = headers + (["rejection (dB)"] if notch else [])
        lines.append(table(shown, rows) if rows else "  no candidate reaches this section")
        unreachable = [c for c in s.candidates if not c.reachable]
        if unreachable:
            lines.append("  cannot reach it:")
            lines.extend(f"    {c.topology}: {c.reason}" for c in unreachable)
    lines += ["", "Columns:",
              "  error: worst root (f0, Q) or gain error after snapping; yield: Monte Carlo builds "
              "inside the windows above",
              "  R spread, C spread: largest/smallest value of that kind; max|S ω0|, max|S Q|: the "
              "largest part sensitivity (% per %)",
              "  GBW needed: '-' for a passive stage, or for a design that misses the bound "
              "with ideal op-amps already, or at every GBW up to 1e4·f0·Q (the JSON says which)",
              "  drift at 100·f0·Q: the larger f0 or Q shift of the snapped design built with "
              "single-pole op-amps of the rule of thumb's GBW"]
    if any(c.rejection_db is not None for s in comparison.sections for c in s.candidates):
        lines.append("  rejection: what 99 % of the builds still take off the target's zero "
                     "frequency (pass-band gain over |H| there)")
    # one line per method; a candidate's own detail (why "-") is in the JSON
    notes = sorted({x.split("; ")[0] for x in sources if x and x != _SOURCES["passive"]})
    if notes:
        lines += ["", "GBW needed:"] + [f"  {note}" for note in notes]
    return "\n".join(lines)
