"""The loop-gain plot: a Bode plot of L(j2πf) with its margins marked.

Used for a compensated converter loop (``placer loop``) and for an op-amp's
own loop among the pre-layout checks. Built like the plots of
:mod:`placer.report.plots` (no pyplot; render with its ``figure_svg``,
``figure_png`` or ``save_figure``): frequencies in hertz, phases in degrees.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import MultipleLocator

from ..units import format_value
from .plots import magnitude_limits, new_figure

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from numpy.typing import ArrayLike

__all__ = ["loop_bode_figure"]


def _at(frequency: np.ndarray, values: np.ndarray, where: float) -> float:
    return float(np.interp(math.log(where), np.log(frequency), values))


def _component_phase(frequency: np.ndarray, phase: np.ndarray, at_hz: float | None) -> np.ndarray:
    """A plant's or compensator's phase on the branch where it reads (−270°, 90°] at `at_hz`."""
    if at_hz is None or not phase.size:
        return phase
    return phase - 360.0 * math.floor((_at(frequency, phase, at_hz) + 270.0) / 360.0)


def loop_bode_figure(frequency_hz: ArrayLike, magnitude_db: ArrayLike, phase_deg: ArrayLike, *,
                     crossover_hz: float | None, phase_margin_deg: float | None,
                     gain_margin_db: float | None, phase_crossover_hz: float | None,
                     title: str | None = None,
                     components: Mapping[str, tuple[Any, Any]] | None = None) -> Figure:
    """Loop gain with its margins marked.

    Parameters
    ----------
    frequency_hz, magnitude_db, phase_deg : array_like
        The loop gain L(j2πf): Hz, dB, degrees (unwrapped). The phase is
        shifted by whole turns so the mark at the crossover sits 0–360°
        below 0° (a stable loop's phase at crossover reads −180° + PM).
    crossover_hz, phase_margin_deg : float or None
        Gain crossover (|L| = 0 dB) and the phase margin there; None when
        |L| never crosses 0 dB.
    gain_margin_db, phase_crossover_hz : float or None
        Gain margin at the phase crossover (phase −180°); None when the
        phase never reaches −180°.
    title : str, optional
    components : mapping of str to (magnitude_db, phase_deg), optional
        The loop's factors on the same grid, e.g. ``{"plant G": ...,
        "compensator Gc": ...}``: drawn thinner and dashed beside |L| and
        ∠L, each phase on the branch where it reads (−270°, 90°] at the
        crossover, with a legend.

    Returns
    -------
    matplotlib.figure.Figure
        Magnitude above with the 0 dB line, phase below with the −180°
        line, the phase margin drawn as an arrow at the crossover and the
        gain margin as an arrow at the phase crossover, or a note saying
        there is none.
    """
    frequency = np.asarray(frequency_hz, float)
    magnitude = np.asarray(magnitude_db, float)
    phase = _shown_phase(frequency, np.asarray(phase_deg, float), crossover_hz, phase_crossover_hz)
    fig = new_figure(7.5, 6.0)
    magnitude_ax, phase_ax = fig.subplots(2, 1, sharex=True)
    magnitude_ax.semilogx(frequency, magnitude, color="C0", linewidth=1.5, label="loop gain L")
    phase_ax.semilogx(frequency, phase, color="C0", linewidth=1.5, label="loop gain L")
    drawn = _draw_components(magnitude_ax, phase_ax, frequency, components or {},
                             crossover_hz or phase_crossover_hz)
    magnitude_ax.axhline(0.0, color="0.3", linewidth=0.9, linestyle="--")
    phase_ax.axhline(-180.0, color="0.3", linewidth=0.9, linestyle="--")
    notes = [_mark_phase_margin(magnitude_ax, phase_ax, crossover_hz, phase_margin_deg),
             _mark_gain_margin(magnitude_ax, phase_ax, phase_crossover_hz, gain_margin_db)]
    _write_notes(magnitude_ax, [note for note in notes if note])
    _scale_axes(magnitude_ax, phase_ax, frequency, magnitude, phase, drawn)
    magnitude_ax.set_title(title or ("Loop gain L = Gc·G, plant G and compensator Gc, with the "
                                     "margins" if drawn else "Loop gain L(s) with its margins"))
    return fig


#: The double arrow that marks a margin.
_ARROW: dict[str, Any] = dict(arrowstyle="<->", color="C3", linewidth=1.5)


def _shown_phase(frequency: np.ndarray, phase: np.ndarray, crossover_hz: float | None,
                 phase_crossover_hz: float | None) -> np.ndarray:
    """L's phase shifted by whole turns: 0–360° below 0° at the crossover (else −180° at the
    phase crossover, else (−270°, 90°] at the low end)."""
    if crossover_hz is not None:
        shift = -360.0 * math.floor(_at(frequency, phase, crossover_hz) / 360.0 + 1.0)
    elif phase_crossover_hz is not None:
        shift = -360.0 * round((_at(frequency, phase, phase_crossover_hz) + 180.0) / 360.0)
    else:
        shift = -360.0 * math.floor((phase[0] + 270.0) / 360.0) if phase.size else 0.0
    return phase + shift


def _draw_components(magnitude_ax: Axes, phase_ax: Axes, frequency: np.ndarray,
                     components: Mapping[str, tuple[Any, Any]],
                     at_hz: float | None) -> list[tuple[np.ndarray, np.ndarray]]:
    """The loop's factors, thin and dashed; returns their (dB, degrees) as drawn."""
    drawn = []
    for (label, (comp_db, comp_deg)), colour in zip(components.items(), ("C2", "C1", "C5")):
        comp_db = np.asarray(comp_db, float)
        comp_deg = _component_phase(frequency, np.asarray(comp_deg, float), at_hz)
        magnitude_ax.semilogx(frequency, comp_db, color=colour, linewidth=1.0, linestyle="--",
                              label=label)
        phase_ax.semilogx(frequency, comp_deg, color=colour, linewidth=1.0, linestyle="--",
                          label=label)
        drawn.append((comp_db, comp_deg))
    return drawn


def _mark_phase_margin(magnitude_ax: Axes, phase_ax: Axes, crossover_hz: float | None,
                       phase_margin_deg: float | None) -> str | None:
    """The crossover line and the phase-margin arrow; else the note that there is none."""
    if crossover_hz is None or phase_margin_deg is None:
        return "no gain crossover: |L| never crosses 0 dB, the phase margin is undefined"
    for ax in (magnitude_ax, phase_ax):
        ax.axvline(crossover_hz, color="C3", linewidth=0.8, linestyle=":")
    at = -180.0 + phase_margin_deg
    phase_ax.annotate("", xy=(crossover_hz, at), xytext=(crossover_hz, -180.0),
                      arrowprops=dict(_ARROW))
    phase_ax.annotate(f"phase margin {phase_margin_deg:.1f}°\nat "
                      f"{format_value(crossover_hz, 'Hz', digits=4)}",
                      xy=(crossover_hz, (at - 180.0) / 2), xytext=(8, 0),
                      textcoords="offset points", color="C3", fontsize=9, va="center")
    return None


def _mark_gain_margin(magnitude_ax: Axes, phase_ax: Axes, phase_crossover_hz: float | None,
                      gain_margin_db: float | None) -> str | None:
    """The phase-crossover line and the gain-margin arrow; else the note that there is none."""
    if phase_crossover_hz is None or gain_margin_db is None:
        return "no phase crossover: the phase never reaches −180°, the gain margin is unbounded"
    for ax in (magnitude_ax, phase_ax):
        ax.axvline(phase_crossover_hz, color="C4", linewidth=0.8, linestyle=":")
    magnitude_ax.annotate("", xy=(phase_crossover_hz, -gain_margin_db),
                          xytext=(phase_crossover_hz, 0.0), arrowprops=dict(_ARROW, color="C4"))
    magnitude_ax.annotate(f"gain margin {gain_margin_db:.1f} dB\nat "
                          f"{format_value(phase_crossover_hz, 'Hz', digits=4)}",
                          xy=(phase_crossover_hz, -gain_margin_db / 2), xytext=(8, 0),
                          textcoords="offset points", color="C4", fontsize=9, va="center")
    return None


def _write_notes(ax: Axes, notes: list[str]) -> None:
    """The notes on a missing margin, boxed in the lower left of the magnitude axes."""
    if notes:
        ax.text(0.01, 0.03, "\n".join(notes), transform=ax.transAxes, fontsize=8, color="0.25",
                va="bottom", bbox=dict(facecolor="white", edgecolor="0.8", alpha=0.9))


def _scale_axes(magnitude_ax: Axes, phase_ax: Axes, frequency: np.ndarray, magnitude: np.ndarray,
                phase: np.ndarray, drawn: list[tuple[np.ndarray, np.ndarray]]) -> None:
    """Limits, phase ticks, labels, legend and grid of both axes."""
    limits = magnitude_limits([magnitude, np.array([0.0])] + [d for d, _ in drawn])
    if limits:
        magnitude_ax.set_ylim(*limits)
    if drawn:
        magnitude_ax.legend(loc="upper right", fontsize=8)
    finite = np.concatenate([phase] + [p for _, p in drawn])
    finite = finite[np.isfinite(finite)]
    if finite.size:
        low, high = min(finite.min(), -180.0), max(finite.max(), -180.0)
        phase_ax.set_ylim(low - 15.0, high + 15.0)
        phase_ax.yaxis.set_major_locator(MultipleLocator(90 if high - low > 270 else 45))
    magnitude_ax.set_ylabel("magnitude (dB)" if drawn else "loop gain |L| (dB)")
    phase_ax.set_ylabel("phase (degrees)" if drawn else "loop phase ∠L (degrees)")
    phase_ax.set_xlabel("frequency (Hz)")
    for ax in (magnitude_ax, phase_ax):
        ax.grid(True, which="major", color="0.85")
        ax.grid(True, which="minor", color="0.94")
    if frequency.size:
        magnitude_ax.set_xlim(frequency.min(), frequency.max())
