"""Masks: the pass- and stop-band requirements a filter must meet.

A :class:`Mask` says, for a low-, high-, band-pass or band-stop target,
how much the magnitude may vary over the pass band (``ripple_db``, the
largest minus the smallest level there) and how far below the pass band's
peak it must stay beyond the stop-band edges (``attenuation_db``). Both are
read relative to the response's own pass-band peak, so a build whose
overall gain is a little off (which a gain trim or the gain window of the
tolerance analysis covers) is judged on its shape.

A mask comes from the spec's ``[target]`` table: given as
``passband_edge`` and ``stopband_edge`` with ``ripple`` and
``attenuation``, or implied by the approximation (a Chebyshev I's ripple
up to its ripple edge, an elliptic's attenuation from its stop-band edge,
a band transform's edges mapped from the prototype's).
:func:`approximation_mask` builds it; :func:`headroom_design` gives the
design options that leave ``margin_db`` of headroom against it;
:func:`grid_figures` reads many responses against it at once.

Frequencies are in hertz here (a mask is what a person writes), levels in
dB.

References
----------
.. [1] A. B. Williams and F. J. Taylor, *Electronic Filter Design
   Handbook*, 4th ed., McGraw-Hill, 2006 (attenuation masks; the
   low-pass to band-pass and band-stop frequency mappings).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any, cast

import numpy as np
from numpy.typing import ArrayLike

from placer.target.approximations import HALF_POWER_LOSS_DB, frequency_at_loss, lowpass_prototype
from placer.errors import SpecError

__all__ = [
    "MASK_TOLERANCE_DB",
    "Mask",
    "MaskGrid",
    "MaskSamples",
    "approximation_mask",
    "headroom_design",
    "mask_bands",
    "band_points",
    "mask_grid",
    "grid_figures",
]

#: A margin this small below zero still meets the mask: the rounding of
#: evaluating a design that sits exactly on it.
MASK_TOLERANCE_DB = 1e-6
_POINTS = 1200          # grid points per band, half linear and half logarithmic
_FOCUS_POINTS = 61      # points around each focus frequency, ±3 %
_FAR = 1e5              # the "infinite" end of a band: this far past its finite edge


#: A band (low, high) in Hz; high is inf for the high-frequency end.
Band = tuple[float, float]


@dataclass(frozen=True)
class Mask:
    """Pass- and stop-band requirements, relative to the pass-band peak.

    Attributes
    ----------
    response : {"lowpass", "highpass", "bandpass", "bandstop"}
    passbands_hz, stopbands_hz : tuple of (float, float)
        Bands, Hz, low edge first; 0.0 is DC and ``inf`` the high-frequency
        limit. Empty when the mask sets no requirement there.
    ripple_db : float or None
        Largest allowed pass-band deviation (highest minus lowest level over
        the pass bands), dB.
    attenuation_db : float or None
        Least attenuation below the pass-band peak over the stop bands, dB.
    level_db : float
        The target's pass-band level (top of the ripple band), dB: where a
        plot draws the mask.
    margin_db : float
        The headroom the approximation was designed with (0: none).
    source : str
        Where the mask came from, for people.
    """

    response: str
    passbands_hz: tuple[Band, ...] = field(default=())
    stopbands_hz: tuple[Band, ...] = field(default=())
    ripple_db: float | None = None
    attenuation_db: float | None = None
    level_db: float = 0.0
    margin_db: float = 0.0
    source: str = "given"

    def to_dict(self) -> dict[str, Any]:
        """JSON shape: bands as [low, high] in Hz, null for the high-frequency limit."""
        def band(b: Band) -> list[float | None]:
            return [float(b[0]), None if math.isinf(b[1]) else float(b[1])]
        return {"response": self.response, "source": self.source,
                "passbands_hz": [band(b) for b in self.passbands_hz],
                "stopbands_hz": [band(b) for b in self.stopbands_hz],
                "ripple_db": self.ripple_db, "attenuation_db": self.attenuation_db,
                "level_db": float(self.level_db), "margin_db": float(self.margin_db)}

    def describe(self) -> str:
        """The mask in words: "pass band 0 Hz – 1 kHz within 0.5 dB; ..."."""
        words = []
        if self.ripple_db is not None:
            words.append("pass band " + " and ".join(_band_words(b) for b in self.passbands_hz)
                         + f" within {self.ripple_db:g} dB")
        if self.attenuation_db is not None:
            words.append("stop band " + " and ".join(_band_words(b) for b in self.stopbands_hz)
                         + f" at least {self.attenuation_db:g} dB down")
        return "; ".join(words)


def _hz_words(x: float) -> str:
    if math.isinf(x):
        return "∞"
    for scale, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, "")):
        if abs(x) >= scale or scale == 1.0:
            return f"{x / scale:.4g} {prefix}Hz"
    return f"{x:g} Hz"


def _band_words(band: Band) -> str:
    low, high = band
    if low == 0.0:
        return f"up to {_hz_words(high)}"
    if math.isinf(high):
        return f"from {_hz_words(low)}"
    return f"{_hz_words(low)} – {_hz_words(high)}"


# -- building a mask ------------------------------------------------------------

def _prototype_edge(approximation: str, order: int, loss_db: float, *,
                    ripple_db: float | None, attenuation_db: float | None,
                    bessel_norm: str, normalisation: str) -> float:
    """Where the designed prototype's loss reaches `loss_db`, rad/s on its own scale."""
    natural = lowpass_prototype(approximation, order, ripple_db=ripple_db,
                                attenuation_db=attenuation_db, bessel_norm=bessel_norm,
                                normalisation="natural")
    levels = dict(ripple_db=ripple_db, attenuation_db=attenuation_db)
    scale = 1.0
    if normalisation != "natural":
        named = {"cutoff": HALF_POWER_LOSS_DB, "passband_edge": ripple_db,
                 "stopband_edge": attenuation_db}[normalisation]
        # lowpass_prototype has checked that the level it is normalised to is given
        scale = frequency_at_loss(approximation, natural, cast(float, named), **levels)
    return frequency_at_loss(approximation, natural, loss_db, **levels) / scale


def _band_edges(center_hz: float, width_hz: float) -> Band:
    """Edges f1 < f2 with f1·f2 = center² and f2 − f1 = width [1]."""
    half = width_hz / 2.0
    root = math.hypot(half, center_hz)
    return (root - half, root + half)


def _bands(response: str, omega: float, frequency_hz: float | None, center_hz: float | None,
           bandwidth_hz: float | None, *, passing: bool) -> tuple[Band, ...]:
    """Map a prototype frequency (rad/s on its scale) to the bands it bounds, Hz.

    A low- or high-pass has its `frequency_hz`, a band its centre and width.
    """
    if response == "lowpass":
        edge = cast(float, frequency_hz) * omega
        return ((0.0, edge),) if passing else ((edge, math.inf),)
    if response == "highpass":
        edge = cast(float, frequency_hz) / omega
        return ((edge, math.inf),) if passing else ((0.0, edge),)
    if response == "bandpass":     # s → (s² + ω0²)/(B s): Ω ↦ edges Ω·B apart
        low, high = _band_edges(cast(float, center_hz), cast(float, bandwidth_hz) * omega)
        return ((low, high),) if passing else ((0.0, low), (high, math.inf))
    # band-stop: B s/(s² + ω0²)
    low, high = _band_edges(cast(float, center_hz), cast(float, bandwidth_hz) / omega)
    return ((0.0, low), (high, math.inf)) if passing else ((low, high),)


def approximation_mask(approximation: str, order: int, *, response: str,
                       ripple_db: float | None = None, attenuation_db: float | None = None,
                       normalisation: str = "cutoff", bessel_norm: str = "mag",
                       frequency_hz: float | None = None, center_hz: float | None = None,
                       bandwidth_hz: float | None = None, level_db: float = 0.0,
                       margin_db: float = 0.0,
                       given: tuple[float, float] | None = None) -> Mask | None:
    """The mask a target's table sets, given or implied by its approximation.

    Parameters
    ----------
    approximation, order, response, normalisation, bessel_norm
        As for :func:`placer.target.targets.design_target`.
    ripple_db, attenuation_db : float, optional
        The requirements, dB: a pass-band requirement when `ripple_db` is
        given, a stop-band one when `attenuation_db` is.
    frequency_hz, center_hz, bandwidth_hz : float, optional
        The target's frequency (low-/high-pass) or band (Hz).
    level_db : float
        The pass-band level, dB.
    margin_db : float
        Headroom the design will keep (recorded on the mask).
    given : (float, float), optional
        ``(passband_edge, stopband_edge)`` in Hz when the table gives both
        (a low- or high-pass mask); else the edges are where the nominal
        approximation's loss reaches `ripple_db` and `attenuation_db`.

    Returns
    -------
    Mask or None
        None when the table sets neither requirement (or for an allpass).

    Examples
    --------
    >>> m = approximation_mask("chebyshev1", 4, response="lowpass", ripple_db=1.0,
    ...                        frequency_hz=1000.0)
    >>> round(m.passbands_hz[0][1], 3), m.stopbands_hz, m.source
    (949.666, (), 'implied by the chebyshev1 approximation')
    """
    if response not in ("lowpass", "highpass", "bandpass", "bandstop") or \
            (ripple_db is None and attenuation_db is None):
        return None
    passbands: tuple[Band, ...] = ()
    stopbands: tuple[Band, ...] = ()
    if given is not None:
        passband_hz, stopband_hz = given
        if response == "lowpass":
            passbands, stopbands = ((0.0, passband_hz),), ((stopband_hz, math.inf),)
        else:
            passbands, stopbands = ((passband_hz, math.inf),), ((0.0, stopband_hz),)
        source = "given (passband_edge, stopband_edge)"
    else:
        options: dict[str, Any] = dict(ripple_db=ripple_db, attenuation_db=attenuation_db,
                       bessel_norm=bessel_norm, normalisation=normalisation)
        place = (frequency_hz, center_hz, bandwidth_hz)
        if ripple_db is not None:
            omega = _prototype_edge(approximation, order, ripple_db, **options)
            passbands = _bands(response, omega, *place, passing=True)
        if attenuation_db is not None:
            omega = _prototype_edge(approximation, order, attenuation_db, **options)
            stopbands = _bands(response, omega, *place, passing=False)
        source = f"implied by the {approximation} approximation"
    return Mask(response, passbands if ripple_db is not None else (),
                stopbands if attenuation_db is not None else (),
                None if ripple_db is None else float(ripple_db),
                None if attenuation_db is None else float(attenuation_db),
                float(level_db), float(margin_db), source)


def headroom_design(mask: Mask, margin_db: float) -> dict[str, Any]:
    """Design options that keep `margin_db` of headroom against a mask.

    The ripple shrinks and the attenuation grows by the margin, and the
    design is pinned where the mask is: at its pass-band edge (the loss
    there is the smaller ripple) when it has a pass-band requirement, else
    at its stop-band edge. Whether the order leaves room for both is for
    the caller to check on the designed target (:func:`grid_figures`).

    Returns
    -------
    dict
        Keyword arguments for :func:`placer.target.targets.design_target`:
        ``ripple_db``, ``attenuation_db``, ``normalisation`` and the
        frequency or band.

    Raises
    ------
    SpecError
        When the margin is not below the ripple.

    Examples
    --------
    >>> m = Mask("lowpass", ((0.0, 1e3),), ((2e3, math.inf),), 1.0, 40.0)
    >>> headroom_design(m, 0.25)["ripple_db"], headroom_design(m, 0.25)["frequency_hz"]
    (0.75, 1000.0)
    """
    ripple = None if mask.ripple_db is None else mask.ripple_db - margin_db
    attenuation = None if mask.attenuation_db is None else mask.attenuation_db + margin_db
    if ripple is not None and ripple <= 0:
        raise SpecError(f"margin = {margin_db:g} dB leaves no ripple to design with: it must "
                        f"be below ripple = {mask.ripple_db:g} dB")
    bands = mask.passbands_hz if ripple is not None else mask.stopbands_hz
    out = {"ripple_db": ripple, "attenuation_db": attenuation,
           "normalisation": "passband_edge" if ripple is not None else "stopband_edge"}
    low, high = _inner_edges(bands)
    if mask.response in ("lowpass", "highpass"):
        out["frequency_hz"] = high if low == 0.0 else low
    else:
        out["center_hz"], out["bandwidth_hz"] = math.sqrt(low * high), high - low
    return out


def _inner_edges(bands: tuple[Band, ...]) -> Band:
    """The finite edges of a band set: one band's own, or the two bands' facing ones."""
    if len(bands) == 1:
        return bands[0]
    (_, low), (high, _) = sorted(bands)
    return low, high


def _outside(bands: tuple[Band, ...]) -> tuple[Band, ...]:
    """The gaps between bands on [0, ∞): where a mask with no pass band finds the peak."""
    gaps, start = [], 0.0
    for low, high in sorted(bands):
        if low > start:
            gaps.append((start, low))
        start = high
    if not math.isinf(start):
        gaps.append((start, math.inf))
    return tuple(gaps)


# -- reading responses against a mask -------------------------------------------

@dataclass(frozen=True)
class MaskGrid:
    """Where a mask is read: frequencies (Hz) in the pass and stop bands.

    ``frequency_hz`` holds every point; ``passband``, ``stopband`` and
    ``outside`` are boolean selections of it (``outside``: the points
    beyond the stop bands, where a mask with no pass-band requirement finds
    the peak its attenuation is read from). A band's infinite end is read
    ``1e5`` times past its finite edge, a DC end at 0 Hz exactly.
    """

    frequency_hz: np.ndarray
    passband: np.ndarray
    stopband: np.ndarray
    outside: np.ndarray


def mask_bands(mask: Mask) -> tuple[tuple[str, Band], ...]:
    """``(kind, (low, high))`` for every band a mask is read on, Hz.

    `kind` is "pass", "stop" or "outside" (the gaps between stop bands,
    read only when the mask has no pass-band requirement, for the peak its
    attenuation is measured from).

    Examples
    --------
    >>> mask_bands(Mask("lowpass", (), ((2e3, math.inf),), None, 40.0))
    (('stop', (2000.0, inf)), ('outside', (0.0, 2000.0)))
    """
    outside = () if mask.passbands_hz else _outside(mask.stopbands_hz)
    return tuple([("pass", b) for b in mask.passbands_hz] + [("stop", b) for b in mask.stopbands_hz]
                 + [("outside", b) for b in outside])


def band_points(band: Band, focus_hz: Iterable[float] = ()) -> np.ndarray:
    """Sorted points (Hz) a mask reads one band on, with clusters at `focus_hz` inside it."""
    focus = np.asarray(list(focus_hz), float)
    low, high = band
    finite_high = low * _FAR if math.isinf(high) else high
    log_low = low if low > 0 else finite_high / _FAR
    # linear near the finite edges, where ripple crests and stop-band lobes crowd
    linear_high = 10.0 * low if math.isinf(high) else high
    points = [np.geomspace(log_low, finite_high, _POINTS // 2),
              np.linspace(low, linear_high, _POINTS // 2), np.array([low, finite_high])]
    points += [f * np.linspace(0.97, 1.03, _FOCUS_POINTS) for f in focus]
    every = np.concatenate(points)
    return np.unique(every[(every >= low) & (every <= finite_high)])


def mask_grid(mask: Mask, *, focus_hz: Iterable[float] = ()) -> MaskGrid:
    """The points a mask is read on, with dense clusters at `focus_hz`.

    Parameters
    ----------
    mask : Mask
    focus_hz : sequence of float
        Frequencies (Hz) to sample finely (±3 %, 61 points): a nominal
        design's ripple crests and stop-band lobes, which the builds of a
        Monte Carlo scatter around.

    Returns
    -------
    MaskGrid

    Examples
    --------
    >>> g = mask_grid(Mask("lowpass", ((0.0, 1e3),), ((2e3, math.inf),), 1.0, 40.0))
    >>> float(g.frequency_hz[g.passband].max()), float(g.frequency_hz[g.stopband].min())
    (1000.0, 2000.0)
    """
    pieces: list[np.ndarray] = []
    kinds: list[np.ndarray] = []
    for kind, band in mask_bands(mask):
        points = band_points(band, focus_hz)
        pieces.append(points)
        kinds.append(np.full(points.size, kind))
    frequency = np.concatenate(pieces) if pieces else np.array([], float)
    labels = np.concatenate(kinds) if kinds else np.array([], str)
    return MaskGrid(frequency, labels == "pass", labels == "stop", labels == "outside")


@dataclass(frozen=True)
class MaskSamples:
    """Figures of many responses against one mask (one entry per response).

    Attributes
    ----------
    passband_deviation_db, passband_margin_db : ndarray or None
        Highest minus lowest pass-band level, and the ripple allowed less
        it (≥ 0 meets), dB; None without a pass-band requirement.
    stopband_attenuation_db, stopband_margin_db : ndarray or None
        Pass-band peak less the highest stop-band level, and that less the
        attenuation required (≥ 0 meets), dB; None without a stop band.
    meets : ndarray of bool
        Both margins at or above −:data:`MASK_TOLERANCE_DB`.
    """

    passband_deviation_db: np.ndarray | None
    passband_margin_db: np.ndarray | None
    stopband_attenuation_db: np.ndarray | None
    stopband_margin_db: np.ndarray | None
    meets: np.ndarray


def grid_figures(mask: Mask, grid: MaskGrid, magnitude_db: ArrayLike) -> MaskSamples:
    """Read responses against a mask from their magnitudes on its grid.

    Parameters
    ----------
    mask : Mask
    grid : MaskGrid
    magnitude_db : array_like, shape (..., grid points)
        One response per leading index, dB.

    Returns
    -------
    MaskSamples
        Arrays of the leading shape. The attenuation is read below the
        pass-band peak; with no pass-band requirement, below the highest
        level outside the stop bands.

    Examples
    --------
    >>> m = Mask("lowpass", ((0.0, 1e3),), ((2e3, math.inf),), 1.0, 40.0)
    >>> g = mask_grid(m)
    >>> db = np.where(g.passband, -0.5 * (g.frequency_hz / 1e3), -45.0)
    >>> r = grid_figures(m, g, db)
    >>> float(r.passband_deviation_db), float(r.stopband_margin_db), bool(r.meets)
    (0.5, 5.0, True)
    """
    magnitude = np.asarray(magnitude_db, float)
    shape = magnitude.shape[:-1]
    meets = np.ones(shape, bool)
    deviation = pass_margin = attenuation = stop_margin = None
    peak = magnitude[..., grid.outside].max(axis=-1) if grid.outside.any() else \
        np.full(shape, mask.level_db)
    if mask.ripple_db is not None and grid.passband.any():
        passing = magnitude[..., grid.passband]
        peak = passing.max(axis=-1)
        deviation = peak - passing.min(axis=-1)
        pass_margin = mask.ripple_db - deviation
        meets &= pass_margin >= -MASK_TOLERANCE_DB
    if mask.attenuation_db is not None and grid.stopband.any():
        attenuation = peak - magnitude[..., grid.stopband].max(axis=-1)
        stop_margin = attenuation - mask.attenuation_db
        meets &= stop_margin >= -MASK_TOLERANCE_DB
    return MaskSamples(deviation, pass_margin, attenuation, stop_margin, meets)
