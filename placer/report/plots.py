"""Plots of a design, from plain arrays, and the canvas every plot is made on.

Every function takes NumPy arrays (or sequences) and returns a
:class:`matplotlib.figure.Figure` built without pyplot, so nothing here
touches matplotlib's global figure manager or needs a display; rendering
goes through the Agg (PNG) and SVG canvases. Frequencies on the axes are
in hertz, roots in rad/s (scaled to krad/s, Mrad/s … as the numbers
need), times in seconds with an SI prefix. The loop-gain plot with its
margins is in :mod:`placer.report.loop_plots`.

Examples
--------
>>> import numpy as np
>>> fig = pole_zero_figure([-1 + 1j, -1 - 1j], [], [-1.1 + 1j, -1.1 - 1j], [])
>>> figure_svg(fig).startswith("<?xml")
True
>>> figure_png(fig)[:4] == b"\\x89PNG"
True
"""

from __future__ import annotations

import io
import math
import os
from collections.abc import Iterable, Iterator, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import matplotlib
import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import MultipleLocator

from ..errors import SpecError
from ..units import format_value
from .files import check_output_path, write_bytes, write_text

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from numpy.typing import ArrayLike

#: A mask's forbidden box: (low Hz, high Hz, low dB or None, high dB or None).
MaskRegion = tuple[float, float, "float | None", "float | None"]

__all__ = [
    "pole_zero_figure",
    "bode_figure",
    "common_phase_branch",
    "step_figure",
    "histogram_figure",
    "ranking_figure",
    "engineering_scale",
    "new_figure",
    "magnitude_limits",
    "figure_svg",
    "figure_png",
    "save_figure",
]

_PREFIXES = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}
_TARGET: dict[str, Any] = {"color": "0.55"}
_ACHIEVED: dict[str, Any] = {"color": "C0"}
_COLOURS: tuple[dict[str, Any], ...] = (dict(color="C0", linewidth=1.4), dict(color="C3", linewidth=1.4, linestyle="--"),
            dict(color="C2", linewidth=1.2, linestyle="-."), dict(color="C4", linewidth=1.2))
_DPI = 120


def engineering_scale(largest: float) -> tuple[float, str]:
    """Factor and SI prefix that bring `largest` into [1, 1000).

    Parameters
    ----------
    largest : float
        The largest magnitude on the axis, in SI units.

    Returns
    -------
    (float, str)
        Divide the data by the factor and put the prefix before the unit.

    Examples
    --------
    >>> engineering_scale(0.0025), engineering_scale(29e3), engineering_scale(0.0)
    ((0.001, 'm'), (1000.0, 'k'), (1.0, ''))
    """
    largest = abs(float(largest))
    if not math.isfinite(largest) or largest == 0.0:
        return 1.0, ""
    power = int(math.floor(math.log10(largest) / 3.0)) * 3
    power = min(max(power, -15), 12)
    return 10.0 ** power, _PREFIXES[power]


def new_figure(width: float = 7.0, height: float = 4.5) -> Figure:
    """An empty figure of the given size (inches), constrained layout, no pyplot."""
    return Figure(figsize=(width, height), dpi=_DPI, layout="constrained")


def _curve_style(label: str, colours: Iterator[dict[str, Any]]) -> dict[str, Any]:
    """A wide grey line under the others for a target, else the next style."""
    if "target" in label.lower():
        return dict(color="0.6", linewidth=3.5, zorder=1.5)
    return next(colours, dict(color="C6", linewidth=1.2))


def _roots(values: ArrayLike | None) -> np.ndarray:
    return np.asarray(values if values is not None else [], dtype=complex).ravel()


def pole_zero_figure(target_poles: ArrayLike | None, target_zeros: ArrayLike | None,
                     achieved_poles: ArrayLike | None, achieved_zeros: ArrayLike | None, *,
                     title: str | None = None) -> Figure:
    """The s-plane: poles as crosses (x), zeros as circles (o).

    Parameters
    ----------
    target_poles, target_zeros, achieved_poles, achieved_zeros : array_like of complex
        Roots in rad/s. Target roots are drawn large and grey, achieved
        roots smaller and in colour, so both show where they coincide.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
        A repeated root carries its multiplicity in parentheses. One
        axes: σ (real part) across, jω (imaginary part) up, both in
        the same scaled rad/s unit and the same scale (equal aspect); the
        jω axis and the real axis drawn.
    """
    groups = {"target poles": _roots(target_poles), "target zeros": _roots(target_zeros),
              "achieved poles": _roots(achieved_poles), "achieved zeros": _roots(achieved_zeros)}
    every = np.concatenate(list(groups.values()))
    factor, prefix = engineering_scale(np.max(np.abs(every)) if every.size else 0.0)
    fig = new_figure(6.5, 5.5)
    ax = fig.subplots()
    ax.axhline(0.0, color="0.3", linewidth=0.8, zorder=1)
    ax.axvline(0.0, color="0.3", linewidth=0.8, zorder=1)
    styles: dict[str, dict[str, Any]] = {
        "target poles": dict(marker="x", markersize=13, markeredgewidth=1.4, **_TARGET),
        "target zeros": dict(marker="o", markersize=13, markeredgewidth=1.4,
                             markerfacecolor="none", **_TARGET),
        "achieved poles": dict(marker="x", markersize=8, markeredgewidth=2.0, **_ACHIEVED),
        "achieved zeros": dict(marker="o", markersize=8, markeredgewidth=2.0,
                               markerfacecolor="none", **_ACHIEVED),
    }
    for label, roots in groups.items():
        if roots.size:
            ax.plot(roots.real / factor, roots.imag / factor, linestyle="none", label=label,
                    zorder=2 if label.startswith("target") else 3, **styles[label])
    scale = float(np.max(np.abs(every))) if every.size else 1.0
    for kind in ("poles", "zeros"):
        achieved = groups[f"achieved {kind}"]
        for label in (f"achieved {kind}", f"target {kind}"):
            for root, count in _clusters(groups[label], 1e-4 * scale):
                if label.startswith("target") and achieved.size and \
                        np.min(np.abs(achieved - root)) <= 1e-2 * scale:
                    continue  # the achieved mark already carries the count
                if count > 1:
                    ax.annotate(f"({count})", (root.real / factor, root.imag / factor),
                                xytext=(7, 5), textcoords="offset points", fontsize=9,
                                color=styles[label]["color"])
    if not groups["target zeros"].size and not groups["achieved zeros"].size:
        ax.text(0.02, 0.02, "no finite zeros", transform=ax.transAxes, color="0.4", fontsize=9)
    span = np.max(np.abs(every)) / factor * 1.15 if every.size else 1.0
    left = min(np.min(every.real) / factor * 1.15 if every.size else -1.0, -0.1 * span)
    right = max(np.max(every.real) / factor * 1.15 if every.size else 0.0, 0.1 * span)
    # The corners as data, not fixed limits: equal aspect then widens the short side.
    ax.update_datalim([(left, -span), (right, span)])
    ax.set_aspect("equal", adjustable="datalim")
    ax.autoscale_view()
    ax.set_xlabel(f"σ, real part ({prefix}rad/s)")
    ax.set_ylabel(f"jω, imaginary part ({prefix}rad/s)")
    ax.set_title(title or "Poles (×) and zeros (○) in the s-plane")
    ax.grid(True, color="0.9")
    if every.size:
        fig.legend(loc="outside lower center", ncols=4, fontsize=9, frameon=False)
    return fig


def _clusters(roots: Iterable[complex], tolerance: float) -> list[tuple[complex, int]]:
    """Repeated roots: (representative root, multiplicity) for each place."""
    out: list[tuple[complex, int]] = []
    for root in roots:
        for k, (place, count) in enumerate(out):
            if abs(root - place) <= tolerance:
                out[k] = (place, count + 1)
                break
        else:
            out.append((root, 1))
    return out


def magnitude_limits(arrays: Iterable[ArrayLike]) -> tuple[float, float] | None:
    """Limits of a dB axis for the finite values: 120 dB below the top at most, padded."""
    values = np.concatenate([np.asarray(a, float)[np.isfinite(a)] for a in arrays])
    if not values.size:
        return None
    top = float(values.max())
    bottom = max(float(values.min()), top - 120.0)
    pad = max(0.05 * (top - bottom), 1.0)
    return bottom - pad, top + pad


def common_phase_branch(curves: dict, reference: str | None = None) -> dict:
    """Put every curve's unwrapped phase on the branch of one reference.

    Each curve was unwrapped from its own first point, so two curves that
    agree can sit whole turns apart (an inverting design's ±180° start is
    rounding's choice). The reference curve (the first when None) is
    shifted by whole turns so its phase lies in (−180°, 180°] where its
    magnitude peaks; every other curve by whole turns so that, at that
    same point, it lies in [−270°, 90°) of the reference: a design that
    agrees sits on it, one that inverts 180° below it, whichever way
    rounding started either.

    Parameters
    ----------
    curves : dict
        Label → ``(magnitude_db, phase_deg)`` on one grid (NaN: no data).
    reference : str, optional

    Returns
    -------
    dict
        The same labels, phases shifted by multiples of 360°.

    Examples
    --------
    >>> import numpy as np
    >>> got = common_phase_branch({"target": (np.zeros(2), np.array([-10.0, -170.0])),
    ...                            "a": (np.zeros(2), np.array([170.0, 10.0])),
    ...                            "b": (np.zeros(2), np.array([-190.2, -350.2]))}, "target")
    >>> [float(got[k][1][0]) for k in ("target", "a", "b")]
    [-10.0, -190.0, -190.2]
    """
    if not curves:
        return {}
    reference = next(iter(curves)) if reference is None else reference
    magnitude, phase = (np.asarray(a, float) for a in curves[reference])
    usable = np.isfinite(phase) & np.isfinite(magnitude)
    if not usable.any():
        return dict(curves)
    at = int(np.argmax(np.where(usable, magnitude, -np.inf)))
    base = phase + 360.0 * math.ceil((-180.0 - phase[at]) / 360.0 + 1e-12)
    out = {}
    for label, (mag, curve) in curves.items():
        curve = np.asarray(curve, float)
        if label == reference:
            out[label] = (mag, base)
            continue
        both = np.nonzero(np.isfinite(curve) & np.isfinite(base))[0]
        if not both.size:
            out[label] = (mag, curve)
            continue
        k = at if np.isfinite(curve[at]) else int(both[np.argmin(np.abs(both - at))])
        out[label] = (mag, curve + 360.0 * math.floor((90.0 - (curve[k] - base[k])) / 360.0))
    return out


def bode_figure(frequency_hz: ArrayLike, curves: Mapping[str, tuple[ArrayLike, ArrayLike]], *,
                envelope: tuple[ArrayLike, ArrayLike] | None = None, reference: str | None = None,
                title: str | None = None, mask_regions: Sequence[MaskRegion] = ()) -> Figure:
    """Magnitude (dB) and phase (degrees) against log frequency (Hz).

    Parameters
    ----------
    frequency_hz : array_like
        The common frequency grid, Hz.
    curves : dict
        Label → ``(magnitude_db, phase_deg)`` arrays on that grid, drawn
        in order (for example "target", "preferred values", "continuous
        values"); NaN where a curve has no data. A label containing
        "target" is drawn as a wide grey line under the others. The
        phases are drawn on one branch (:func:`common_phase_branch`, from
        `reference` or the first curve).
    envelope : (array_like, array_like), optional
        ``(low_db, high_db)`` on the grid: shaded as the Monte Carlo
        envelope of the magnitude.
    reference : str, optional
        A label of `curves`. With it a middle panel shows every other
        curve and the envelope minus that curve (dB), scaled to the band
        where the reference lies within 20 dB of its peak: the part of the
        plot where small differences matter.
    title : str, optional
    mask_regions : sequence of (float, float, float or None, float or None)
        Forbidden boxes of a mask on the magnitude axis: ``(low_hz,
        high_hz, low_db, high_db)``, None for a level without bound (the
        axis's edge); a band's 0 Hz or ``inf`` end runs to the plot's edge.

    Returns
    -------
    matplotlib.figure.Figure
        Axes sharing the frequency axis: magnitude, (difference), phase.
        The magnitude axis shows at most 120 dB below the highest point.
    """
    frequency = np.asarray(frequency_hz, float)
    if reference is not None and reference not in curves:
        raise SpecError(f"reference must be one of the curves {sorted(curves)}, not {reference!r}")
    rows = 3 if reference is not None else 2
    fig = new_figure(7.5, 7.5 if rows == 3 else 6.0)
    axes = fig.subplots(rows, 1, sharex=True, height_ratios=(3, 2, 2)[:rows] if rows == 3
                        else (3, 2))
    magnitude_ax, phase_ax = axes[0], axes[-1]
    shown: list[np.ndarray] = []
    colours = iter(_COLOURS)
    if envelope is not None:
        low, high = (np.asarray(a, float) for a in envelope)
        magnitude_ax.fill_between(frequency, low, high, color="C1", alpha=0.35, linewidth=0,
                                  label="Monte Carlo envelope")
        shown += [low, high]
    branched = common_phase_branch(dict(curves), reference)
    for label, (magnitude, phase) in branched.items():
        style = _curve_style(label, colours)
        magnitude_ax.semilogx(frequency, magnitude, label=label, **style)
        phase_ax.semilogx(frequency, phase, label=label, **style)
        shown.append(np.asarray(magnitude, float))
    if reference is not None:
        _difference_panel(axes[1], frequency, branched, reference, envelope)
    limits = magnitude_limits(shown + [np.array([level for box in mask_regions
                                                  for level in box[2:] if level is not None])])\
        if shown else None
    if limits:
        magnitude_ax.set_ylim(*limits)
    _draw_mask(magnitude_ax, frequency, mask_regions)
    magnitude_ax.set_ylabel("magnitude (dB)")
    phase_ax.set_ylabel("phase (degrees)")
    phase_ax.set_xlabel("frequency (Hz)")
    phases = [np.asarray(p, float) for _, p in branched.values()]
    finite = np.concatenate([p[np.isfinite(p)] for p in phases]) if phases else np.array([])
    if finite.size:
        spread = finite.max() - finite.min()
        phase_ax.yaxis.set_major_locator(MultipleLocator(90 if spread > 270 else 45))
    for ax in axes:
        ax.grid(True, which="major", color="0.85")
        ax.grid(True, which="minor", color="0.94")
    if frequency.size:
        magnitude_ax.set_xlim(frequency.min(), frequency.max())
    magnitude_ax.legend(loc="best", fontsize=9)   # the difference panel keeps the same styles
    magnitude_ax.set_title(title or "Frequency response")
    return fig


def _draw_mask(ax: Axes, frequency: np.ndarray, regions: Sequence[MaskRegion]) -> None:
    """Hatched boxes where a mask forbids the magnitude to go."""
    if not len(regions) or not frequency.size:
        return
    bottom, top = ax.get_ylim()
    for k, (low_hz, high_hz, low_db, high_db) in enumerate(regions):
        left = max(low_hz, float(frequency.min()))
        right = min(high_hz, float(frequency.max()))
        if right <= left:
            continue
        ax.fill_between([left, right], bottom if low_db is None else low_db,
                        top if high_db is None else high_db, facecolor="0.5", alpha=0.18,
                        hatch="//", edgecolor="0.35", linewidth=0.0,
                        label="mask (forbidden)" if k == 0 else None, zorder=0)
    ax.set_ylim(bottom, top)


def _difference_panel(ax: Axes, frequency: np.ndarray, curves: Mapping[str, tuple[Any, Any]],
                      reference: str, envelope: tuple[ArrayLike, ArrayLike] | None) -> None:
    """Curves and envelope minus the reference magnitude (dB)."""
    base = np.asarray(curves[reference][0], float)
    finite = np.isfinite(base)
    band = finite & (base >= (base[finite].max() - 20.0 if finite.any() else 0.0))
    values = [np.zeros(1)]
    if envelope is not None:
        low, high = (np.asarray(a, float) - base for a in envelope)
        ax.fill_between(frequency, low, high, color="C1", alpha=0.35, linewidth=0,
                        label="Monte Carlo envelope")
        values += [low[band], high[band]]
    colours = iter(_COLOURS)
    for label, (magnitude, _) in curves.items():
        style = _curve_style(label, colours)
        if label == reference:
            continue
        difference = np.asarray(magnitude, float) - base
        ax.semilogx(frequency, difference, label=label, **style)
        values.append(difference[band])
    ax.axhline(0.0, color="0.45", linewidth=0.8, zorder=1)
    every = np.concatenate(values)
    every = every[np.isfinite(every)]
    top = max(float(np.max(np.abs(every))) * 1.15, 0.05)
    ax.set_ylim(-top, top)
    ax.set_ylabel(f"difference from\n{reference} (dB)")


def step_figure(curves: Mapping[str, tuple[ArrayLike, ArrayLike]], *,
                title: str | None = None) -> Figure:
    """Unit-step responses against time (with an SI prefix on seconds).

    Parameters
    ----------
    curves : dict
        Label → ``(time_s, output)`` arrays (each curve its own grid). A
        label containing "target" is drawn as a wide grey line.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    ends = [float(np.max(t)) for t, _ in curves.values() if np.size(t)]
    factor, prefix = engineering_scale(max(ends) if ends else 0.0)
    fig = new_figure(7.5, 4.2)
    ax = fig.subplots()
    colours = iter(_COLOURS)
    for label, (time, output) in curves.items():
        style = _curve_style(label, colours)
        ax.plot(np.asarray(time, float) / factor, output, label=label, **style)
    ax.axhline(0.0, color="0.3", linewidth=0.6)
    ax.set_xlabel(f"time ({prefix}s)")
    ax.set_ylabel("output (V per 1 V input step)")
    if ends:
        ax.set_xlim(0.0, max(ends) / factor)
    ax.grid(True, color="0.9")
    ax.legend(loc="best", fontsize=9)
    ax.set_title(title or "Step response")
    return fig


def histogram_figure(samples: ArrayLike, nominal: float | None, *, label: str, unit: str = "",
                     window: tuple[float | None, float | None] | None = None,
                     title: str | None = None) -> Figure:
    """Histogram of Monte Carlo samples, nominal line and window shaded.

    Parameters
    ----------
    samples : array_like
        One value per build, SI units (NaN ignored).
    nominal : float or None
        The value with nominal parts: a solid vertical line.
    label : str
        What the samples are, for example "f0" or "Q".
    unit : str
        {"Hz", "deg", "dB", ""} or another unit from :mod:`placer.units`;
        Hz and other prefixable units get an SI prefix on the axis.
    window : (float or None, float or None), optional
        Absolute bounds of the acceptance window (same unit as the
        samples), shaded; None on one side for a one-sided window.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    values = np.asarray(samples, float).ravel()
    values = values[np.isfinite(values)]
    plain = unit in ("", "deg", "dB", "%")
    largest = max(np.max(np.abs(values)) if values.size else 0.0,
                  abs(nominal) if nominal is not None else 0.0)
    factor, prefix = (1.0, "") if plain else engineering_scale(largest)
    shown = {"deg": "degrees", "": ""}.get(unit, f"{prefix}{unit}")
    fig = new_figure(6.0, 3.8)
    ax = fig.subplots()
    if values.size:
        bins = int(np.clip(round(math.sqrt(values.size)), 10, 60))
        ax.hist(values / factor, bins=bins, color="C0", alpha=0.8, zorder=2,
                label=f"{values.size} builds")
        lo, hi = values.min() / factor, values.max() / factor
        pad = 0.15 * (hi - lo) if hi > lo else max(abs(lo) * 0.01, 1e-12)
        xs = [lo - pad, hi + pad]
        if window is not None:
            xs += [w / factor for w in window if w is not None]
        if nominal is not None:
            xs.append(nominal / factor)
        width = max(xs) - min(xs)
        ax.set_xlim(min(xs) - 0.05 * width, max(xs) + 0.05 * width)
    else:
        ax.text(0.5, 0.5, "no finite samples", transform=ax.transAxes, ha="center")
    if window is not None:
        ax.axvspan(*_window_span(ax, window, factor), color="C2", alpha=0.15, zorder=1,
                   label=_window_label(window, unit, values))
    if nominal is not None and math.isfinite(nominal):
        ax.axvline(nominal / factor, color="black", linewidth=1.5,
                   label=f"nominal {_format(nominal, unit)}")
    ax.set_xlabel(f"{label} ({shown})" if shown else label)
    ax.set_ylabel("builds")
    ax.grid(True, axis="y", color="0.9")
    ax.set_ylim(0.0, ax.get_ylim()[1] * 1.35)   # room for the legend above the bars
    ax.legend(loc="upper right", fontsize=8)
    ax.set_title(title or f"Monte Carlo spread of {label}")
    return fig


def ranking_figure(names: Sequence[str], yields_pct: Sequence[float],
                   errors_pct: Sequence[float], *, title: str | None = None) -> Figure:
    """Candidates side by side: Monte Carlo yield (%) and error after snapping (%).

    Parameters
    ----------
    names : sequence of str
        Topology ids, in rank order (best at the top).
    yields_pct, errors_pct : sequence of float
        Per candidate, percent.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    count = len(names)
    fig = new_figure(7.0, 1.2 + 0.42 * max(count, 1))
    ax_yield, ax_error = fig.subplots(1, 2, sharey=True, width_ratios=(3, 2))
    rows = np.arange(count)
    ax_yield.barh(rows, yields_pct, color="C0", zorder=2)
    for row, value in zip(rows, yields_pct):
        ax_yield.text(value, row, f" {value:.1f}", va="center", fontsize=8)
    ax_yield.set_yticks(rows, labels=list(names))
    ax_yield.invert_yaxis()
    ax_yield.set_xlim(0.0, 115.0)
    ax_yield.set_xlabel("Monte Carlo yield (%)")
    errors = np.maximum(np.asarray(errors_pct, float), 1e-4)
    ax_error.barh(rows, errors, color="C1", zorder=2)
    ax_error.set_xscale("log")
    ax_error.set_xlabel("error after snapping (%)")
    for ax in (ax_yield, ax_error):
        ax.grid(True, axis="x", color="0.9", zorder=0)
    fig.suptitle(title or "Candidates ranked")
    return fig


def _format(x: float, unit: str) -> str:
    """A value for a legend: engineering notation, plain for a bare number."""
    return f"{x:.4g}" if unit == "" else format_value(x, unit, digits=4)


def _window_span(ax: Axes, window: tuple[float | None, float | None],
                 factor: float) -> tuple[float, float]:
    """The window's ends in axis units; an open end runs to the axis edge."""
    left, right = ax.get_xlim()
    low, high = window
    return (left if low is None else low / factor), (right if high is None else high / factor)


def _window_label(window: tuple[float | None, float | None], unit: str,
                  values: np.ndarray) -> str:
    low, high = (None if w is None else _format(w, unit) for w in window)
    text = (f"window {low} – {high}" if low is not None and high is not None
            else f"window ≥ {low}" if low is not None else f"window ≤ {high}")
    if values.size:
        inside = np.ones(values.size, bool)
        if window[0] is not None:
            inside &= values >= window[0]
        if window[1] is not None:
            inside &= values <= window[1]
        text += f" ({100 * inside.mean():.1f} % inside)"
    return text


def figure_svg(fig: Figure) -> str:
    """The figure as an SVG document (text as paths, no date: reproducible).

    Returns
    -------
    str
    """
    buffer = io.StringIO()
    with matplotlib.rc_context({"svg.hashsalt": "placer", "svg.fonttype": "path"}):
        fig.savefig(buffer, format="svg",
                    metadata={"Date": None, "Creator": None, "Format": None, "Type": None})
    return buffer.getvalue()


def figure_png(fig: Figure, *, dpi: float = _DPI) -> bytes:
    """The figure as PNG bytes (Agg canvas).

    Returns
    -------
    bytes
    """
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
    return buffer.getvalue()


def save_figure(fig: Figure, folder: str | os.PathLike[str], stem: str, *,
                inputs: Sequence[str] = ()) -> tuple[Path, Path]:
    """Write ``<stem>.png`` and ``<stem>.svg`` into `folder`, atomically.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    folder : str or Path
        An existing folder.
    stem : str
        File name without suffix, for example "bode".
    inputs : sequence of str
        The run's input files; neither output may be one of them.

    Returns
    -------
    tuple of Path
        The PNG and SVG paths.

    Raises
    ------
    SpecError
        When the folder does not exist or an output path is an input.
    """
    where = Path(folder)
    png, svg = where / f"{stem}.png", where / f"{stem}.svg"
    for path in (png, svg):
        check_output_path(path, inputs=inputs, option="--plots")
    write_bytes(png, figure_png(fig), inputs=inputs, option="--plots")
    write_text(svg, figure_svg(fig), inputs=inputs, option="--plots")
    return png, svg
