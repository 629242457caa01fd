"""Step and frequency figures of one response, with python-control and scipy.

A response is held as a cascade of small sections
(:class:`placer.analysis.response.Response`), never as one high-order polynomial:
frequency responses are products of section responses, step responses
come from the series connection of the sections' state-space forms, and
poles are the sections' poles. :mod:`placer.evidence.verify` compares such
figures between a design and its target.

Conventions: frequencies are in hertz at this module's surface (fields
ending ``_hz``) and rad/s inside; "−3 dB" is half power,
10·log10(2) ≈ 3.0103 dB below the reference gain; phases are in degrees.

Examples
--------
>>> import control
>>> lowpass = Response.from_sections([control.tf([1.0], [1.0, 2**0.5, 1.0])])
>>> figures = frequency_figures(lowpass)
>>> round(figures.f3db_hz * 2 * 3.141592653589793, 6)
1.0
>>> round(step_figures(lowpass).overshoot_pct, 3)
4.321

References
----------
K. Ogata, *Modern Control Engineering*, 5th ed., Prentice Hall, 2010
(transient-response specifications: rise, peak and settling time,
overshoot).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.linalg
import scipy.optimize

from ..analysis.response import Response

__all__ = [
    "HALF_POWER_DB",
    "PEAK_TIE_DB",
    "StepFigures",
    "FrequencyFigures",
    "Figures",
    "step_figures",
    "frequency_figures",
]

#: The "−3 dB" level: half power, in dB.
HALF_POWER_DB = 10 * math.log10(2.0)
_TWO_PI = 2 * math.pi


# -- step -------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class StepFigures:
    """Figures of the unit-step response.

    Attributes
    ----------
    overshoot_pct : float or None
        Peak above the final value, % of the final value (≥ 0).
    rise_time_s : float or None
        10 % → 90 % of the final value, first crossings, interpolated;
        None when the step starts past 10 % of it (a notch's direct
        feed-through), with a note.
    settling_time_s : float or None
        Last time outside ±2 % of the final value (zero-DC responses:
        outside ±2 % of the peak around zero).
    final_value : float or None
        H(0) (0.0 for zero-DC responses).
    peak, peak_time_s : float or None
        Value and time of the largest |y|.
    zero_dc_gain : bool
        True for high-pass and band-pass responses: overshoot and rise time
        do not apply there (None), settling is relative to the peak.
    notes : tuple of str
    time_s, output : ndarray
        The grid (ends at 12/min|Re p|) and the response, for plots.
    """

    overshoot_pct: float | None
    rise_time_s: float | None
    settling_time_s: float | None
    final_value: float | None
    peak: float | None
    peak_time_s: float | None
    zero_dc_gain: bool
    notes: tuple
    time_s: np.ndarray = field(repr=False)
    output: np.ndarray = field(repr=False)


def _time_grid(poles: np.ndarray) -> np.ndarray:
    decay = np.abs(poles.real)
    end = 12.0 / decay.min()
    step = 0.01 / np.abs(poles).max()
    points = int(np.clip(math.ceil(end / step) + 1, 2001, 200_001))
    return np.linspace(0.0, end, points)


def _step_output(system: Any, t: np.ndarray) -> np.ndarray:
    """Exact unit-step output of a stable state-space system on a uniform grid.

    y(t) = C e^{At} v − C v + D with v = A⁻¹B. The products e^{A t_k} v are
    taken in blocks of about √N steps (one propagator per block), so the
    work is vectorised instead of a Python loop over the N time points
    (python-control's forced_response loops over them).
    """
    A, B, C, D = (np.atleast_2d(np.asarray(x, float)) for x in (system.A, system.B, system.C,
                                                                  system.D))
    v = np.linalg.solve(A, B[:, 0])
    dt = t[1] - t[0]
    width = int(math.ceil(math.sqrt(t.size)))
    step = scipy.linalg.expm(A * dt)
    block = np.empty((v.size, width))
    w = v
    for j in range(width):
        block[:, j] = w
        w = step @ w
    jump = scipy.linalg.expm(A * (dt * width))
    rows = []
    for _ in range(0, t.size, width):
        rows.append(C[0] @ block)
        block = jump @ block
    return np.concatenate(rows)[: t.size] - C[0] @ v + D[0, 0]


def _crossing(t: np.ndarray, y: np.ndarray, level: float) -> float | None:
    """First time where y reaches `level`, interpolated linearly."""
    above = np.nonzero(y >= level)[0]
    if not above.size:
        return None
    i = int(above[0])
    if i == 0:
        return float(t[0])
    return float(t[i - 1] + (level - y[i - 1]) * (t[i] - t[i - 1]) / (y[i] - y[i - 1]))


def _settling(t: np.ndarray, deviation: np.ndarray, band: float) -> float | None:
    outside = np.nonzero(deviation > band)[0]
    if not outside.size:
        return 0.0
    i = int(outside[-1])
    if i == t.size - 1:
        return None
    return float(t[i] + (deviation[i] - band) * (t[i + 1] - t[i]) / (deviation[i] - deviation[i + 1]))


def _refined_peak(t: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    i = int(np.argmax(y))
    if 0 < i < y.size - 1:
        y0, y1, y2 = y[i - 1], y[i], y[i + 1]
        curvature = y0 - 2 * y1 + y2
        if curvature < 0:
            shift = 0.5 * (y0 - y2) / curvature
            return float(y1 - 0.25 * (y0 - y2) * shift), float(t[i] + shift * (t[1] - t[0]))
    return float(y[i]), float(t[i])


def step_figures(response: Response) -> StepFigures:
    """Overshoot, 10–90 % rise, 2 % settling and final value of a step.

    The time grid is explicit and dense: from 0 to 12/min|Re p| (twelve
    time constants of the slowest pole), steps of at most 0.01/max|p|,
    2,001 to 200,001 points. Crossings are interpolated linearly, the peak
    parabolically. For responses with zero DC gain (high-pass, band-pass)
    the figures that apply are returned (peak, settling to 2 % of the peak
    around zero) and ``zero_dc_gain`` says so.

    Parameters
    ----------
    response : Response

    Returns
    -------
    StepFigures
        All times None, with a note, when the response is not stable.

    Examples
    --------
    >>> import control
    >>> r = Response.from_sections([control.tf([1.0], [1e-3, 1.0])])
    >>> round(step_figures(r).rise_time_s / 1e-3, 4)   # ln 9 · τ
    2.1972
    """
    poles = response.poles()
    notes: list[str] = []
    if poles.size and np.any(poles.real >= -1e-12 * np.maximum(np.abs(poles), 1e-300)):
        return StepFigures(None, None, None, None, None, None, False,
                           ("not stable: a pole lies on or right of the jω axis; "
                            "step figures do not apply",), np.array([]), np.array([]))
    if not poles.size:
        gain = response.dc_gain
        return StepFigures(0.0, 0.0, 0.0, gain, gain, 0.0, gain == 0,
                           ("no dynamics: the response is a constant gain",),
                           np.array([0.0]), np.array([gain]))
    t = _time_grid(poles)
    y = _step_output(response.state_space(), t)
    y0 = float(y[0])
    if abs(y0) > 0:
        notes.append(f"direct feed-through: the step starts at y(0+) = {y0:.6g}")
    final = response.dc_gain
    peak_index = int(np.argmax(np.abs(y)))
    sign = 1.0 if y[peak_index] >= 0 else -1.0
    peak, peak_time = _refined_peak(t, sign * y)
    peak *= sign
    if final == 0.0 or abs(final) < 0.1 * abs(peak):
        # an inverse-Chebyshev or elliptic high-pass keeps a small DC gain,
        # far below its peak: figures relative to it would be meaningless
        notes.append("zero DC gain (high-pass or band-pass): overshoot and rise time do not "
                     "apply; settling is to within 2 % of the peak around zero"
                     if final == 0.0 else
                     f"DC gain {final:.4g}, under a tenth of the step's peak (a high-pass "
                     "with a finite stop band): overshoot and rise time do not apply; settling "
                     "is to within 2 % of the peak around the final value")
        settling = _settling(t, np.abs(y - final), 0.02 * abs(peak))
        if settling is None:
            notes.append("not settled within the time grid")
        return StepFigures(None, None, settling, final, peak, peak_time, True, tuple(notes), t, y)
    normalised = y / final
    top, top_time = _refined_peak(t, normalised)
    overshoot = max(0.0, (top - 1.0) * 100.0)
    rise: float | None = None
    if y0 / final >= 0.1:
        # a notch (or a shelf) passes the step's edge straight through: the
        # output starts past 10 % of its final value, so nothing rises 10-90 %
        notes.append("the step starts past 10 % of its final value (y(0+)/H(0) = "
                     f"{y0 / final:.4g}): a 10-90 % rise time does not apply")
    else:
        start = _crossing(t, normalised, 0.1)
        end = _crossing(t, normalised, 0.9)
        rise = None if start is None or end is None else end - start
    settling = _settling(t, np.abs(normalised - 1.0), 0.02)
    if settling is None:
        notes.append("not settled within the time grid")
    return StepFigures(overshoot, rise, settling, final, top * final, top_time, False,
                       tuple(notes), t, y)


# -- frequency --------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class FrequencyFigures:
    """Figures of the magnitude response.

    Attributes
    ----------
    kind : str
        {"lowpass", "highpass", "bandpass", "bandstop", "flat", "integrating"}
        from the DC and high-frequency gains: an end counts as pass band
        when it lies within half power of the peak (so an elliptic
        low-pass, finite but far down at high frequency, is a low-pass).
    gain_db : float or None
        Reference gain: DC (lowpass, bandstop, flat), high frequency
        (highpass) or the peak (bandpass); None when integrating.
    f3db_hz : float or None
        Half-power frequency, 10·log10(2) dB below the pass-band peak
        ``peak_db`` (the level ``cutoff`` names; an even-order Chebyshev's
        DC gain sits a ripple below it): lowpass, the highest fall through
        the level; highpass, the lowest rise through it.
    band_low_hz, band_high_hz : float or None
        Half-power band edges, from the same level (bandpass: pass band;
        bandstop: stop band).
    peak_db, peak_hz : float
        Largest gain and where (0.0 Hz when the peak is at DC; None for
        ``peak_hz`` when it is at the high-frequency limit). Crests within
        :data:`PEAK_TIE_DB` of each other (an equiripple response's) are
        one peak, reported at DC or the high-frequency limit when that is
        one of them, else at the lowest frequency.
    notes : tuple of str
    frequency_hz, magnitude_db, phase_deg : ndarray
        The grid (unwrapped phase), for plots.
    """

    kind: str
    gain_db: float | None
    f3db_hz: float | None
    band_low_hz: float | None
    band_high_hz: float | None
    peak_db: float
    peak_hz: float | None
    notes: tuple
    frequency_hz: np.ndarray = field(repr=False)
    magnitude_db: np.ndarray = field(repr=False)
    phase_deg: np.ndarray = field(repr=False)

    @property
    def bandwidth_hz(self) -> float | None:
        """Half-power width of a band-pass's pass band or a band-stop's stop band, Hz."""
        if self.band_low_hz is None or self.band_high_hz is None:
            return None
        return self.band_high_hz - self.band_low_hz


def _frequency_grid(response: Response, per_decade: int = 200) -> np.ndarray:
    roots = np.concatenate([response.poles(), response.zeros()])
    magnitudes = np.abs(roots)
    magnitudes = magnitudes[magnitudes > 0]
    low, high = (magnitudes.min(), magnitudes.max()) if magnitudes.size else (1.0, 1.0)
    low, high = low / 100.0, high * 100.0
    points = max(2001, int(per_decade * math.log10(high / low)) + 1)
    return np.geomspace(low, high, points)


def _db_of(response: Response, omega: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 20 * np.log10(np.abs(response.evaluate(omega)))


def _crossings(response: Response, omega: np.ndarray, magnitude_db: np.ndarray,
               level: float) -> list[tuple[float, str]]:
    """Refined (ω, direction) where the magnitude passes `level` (brentq in ln ω)."""
    above = magnitude_db >= level
    out = []
    for i in np.nonzero(above[1:] != above[:-1])[0]:
        def f(u: float) -> float:
            return float(_db_of(response, np.exp(u))) - level
        a, b = math.log(omega[i]), math.log(omega[i + 1])
        fa, fb = f(a), f(b)
        if fa * fb < 0:
            u = scipy.optimize.brentq(f, a, b, xtol=1e-14, rtol=4 * np.finfo(float).eps)
        else:   # the level sits on a grid point, up to rounding
            u = a if abs(fa) <= abs(fb) else b
        out.append((math.exp(u), "up" if above[i + 1] else "down"))
    return out


#: Crests within this many dB of the highest are one peak (an equiripple
#: response's crests are equal up to rounding): the lowest-frequency one is
#: reported, so the location does not hang on the grid or on rounding.
PEAK_TIE_DB = 1e-6


def _peak(response: Response, omega: np.ndarray, magnitude_db: np.ndarray, dc: float,
          hf: float) -> tuple[float, float | None]:
    """(peak dB, peak Hz): DC is 0.0 Hz, the high-frequency limit None.

    Every interior crest of the grid is refined by a bounded search in
    ln ω; the ends count as candidates; among those within
    :data:`PEAK_TIE_DB` of the highest, DC or the high-frequency limit
    wins if it is one of them, else the lowest frequency.
    """
    candidates: list[tuple[float, float, float | None]] = []  # (ordering, dB, Hz as reported)
    if math.isfinite(dc) and dc != 0:
        candidates.append((0.0, 20 * math.log10(abs(dc)), 0.0))
    crests = np.nonzero((magnitude_db[1:-1] >= magnitude_db[:-2])
                        & (magnitude_db[1:-1] > magnitude_db[2:]))[0] + 1
    # a crest more than 3 dB under the grid's top cannot refine past it
    crests = crests[magnitude_db[crests] >= np.max(magnitude_db) - 3.0]
    crests = crests[np.argsort(-magnitude_db[crests], kind="stable")[:64]]
    for i in crests:
        found = scipy.optimize.minimize_scalar(
            lambda u: -float(_db_of(response, np.exp(u))),
            bounds=(math.log(omega[i - 1]), math.log(omega[i + 1])), method="bounded",
            options={"xatol": 1e-12})
        level, where = -float(found.fun), math.exp(found.x)
        if level < magnitude_db[i]:
            level, where = float(magnitude_db[i]), float(omega[i])
        candidates.append((where, level, where / _TWO_PI))
    if hf != 0:
        candidates.append((math.inf, 20 * math.log10(abs(hf)), None))
    if not candidates:
        i = int(np.argmax(magnitude_db))
        return float(magnitude_db[i]), float(omega[i] / _TWO_PI)
    top = max(level for _, level, _ in candidates)
    ties = [c for c in candidates if c[1] >= top - PEAK_TIE_DB]
    # an end among the ties wins: a flat pass band's rounding ripples are no peak
    ends = [c for c in ties if c[0] in (0.0, math.inf)]
    _, top_level, top_where = min(ends or ties)
    return float(top_level), top_where


def frequency_figures(response: Response) -> FrequencyFigures:
    """Reference gain, half-power edges and peak of the magnitude response.

    The grid spans 1/100 of the smallest to 100× the largest root
    magnitude, 200 points per decade; half-power crossings are refined with
    brentq and the peak with a bounded scalar search.

    Parameters
    ----------
    response : Response

    Returns
    -------
    FrequencyFigures

    Examples
    --------
    >>> import control
    >>> bp = Response.from_sections([control.tf([0.1, 0.0], [1.0, 0.1, 1.0])])
    >>> f = frequency_figures(bp)
    >>> f.kind, round(f.gain_db, 9), round(f.peak_hz * 2 * 3.141592653589793, 6)
    ('bandpass', 0.0, 1.0)
    """
    omega = _frequency_grid(response)
    h = response.evaluate(omega)
    with np.errstate(divide="ignore"):
        magnitude_db = 20 * np.log10(np.abs(h))
    phase_deg = np.degrees(np.unwrap(np.angle(h)))
    dc, hf = response.dc_gain, response.hf_gain
    notes: list[str] = []
    peak_db, peak_hz = _peak(response, omega, magnitude_db, dc, hf)
    if peak_hz is None:
        notes.append("the peak is at the high-frequency limit")

    f3db: float | None = None
    low: float | None = None
    high: float | None = None
    gain_db: float | None
    if math.isinf(dc):
        kind, gain_db = "integrating", None
        notes.append("a pole at the origin: no finite DC gain, no half-power edge")
    else:
        # An end is in the pass band when it lies within half power of the
        # peak: an elliptic or inverse-Chebyshev low-pass keeps a finite gain
        # at high frequency, far down in its stop band, and stays a low-pass.
        passes = [g != 0 and 20 * math.log10(abs(g)) >= peak_db - HALF_POWER_DB for g in (dc, hf)]
        kind = {(True, False): "lowpass", (False, True): "highpass",
                (False, False): "bandpass", (True, True): "flat"}[(passes[0], passes[1])]
        gain_db = peak_db if kind == "bandpass" else 20 * math.log10(abs(hf if kind == "highpass"
                                                                         else dc))
        # Half power below the pass-band peak, for every kind: where `cutoff`
        # puts it (an even-order Chebyshev's DC gain sits a ripple lower).
        found = _crossings(response, omega, magnitude_db, peak_db - HALF_POWER_DB)
        none: list[float | None] = [None]
        ups: list[float | None] = [w / _TWO_PI for w, direction in found if direction == "up"] or none
        downs: list[float | None] = [w / _TWO_PI for w, direction in found
                                     if direction == "down"] or none
        if kind == "lowpass":
            f3db = downs[-1]
        elif kind == "highpass":
            f3db = ups[0]
        elif kind == "bandpass":
            low, high = ups[0], downs[-1]
            notes.append("band-pass: the reference gain is the peak")
        elif found:
            kind, low, high = "bandstop", downs[0], ups[-1]
        else:
            notes.append("gain at both DC and high frequency, never 3 dB below: no edge")
    if f3db is None and kind in ("lowpass", "highpass"):
        notes.append("the response never passes the half-power level inside the grid")
    return FrequencyFigures(kind, gain_db, f3db, low, high, float(peak_db), peak_hz,
                            tuple(notes), omega / _TWO_PI, magnitude_db, phase_deg)


# -- both ---------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class Figures:
    """Step and frequency figures of one response."""

    step: StepFigures
    frequency: FrequencyFigures
