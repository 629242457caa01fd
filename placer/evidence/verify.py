"""Checks of a design with python-control: deviation from a target, margins.

A design's response is compared with its target's over a band (worst
magnitude and phase deviation), with the step and frequency figures of
both from :mod:`placer.evidence.figures`; a loop gain's margins come from
python-control with every crossover considered.

Conventions: frequencies are in hertz at this module's surface (fields
ending ``_hz``) and rad/s inside; phases are in degrees.

Examples
--------
>>> import control
>>> target = Response.from_sections([control.tf([1.0], [1.0, 2**0.5, 1.0])])
>>> design = Response.from_sections([control.tf([1.0], [1.0, 1.42, 1.0])])
>>> worst = verify(design, target).deviation   # at ω = 1 rad/s: 20·log10(1.42/√2)
>>> round(worst.magnitude_db, 4), round(worst.magnitude_at_hz * 2 * 3.141592653589793, 6)
(0.0355, 1.0)

References
----------
python-control, ``stability_margins`` (gain and phase margins).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import control
import numpy as np

from ..errors import SpecError
from ..analysis.response import Response
from .figures import Figures, frequency_figures, step_figures

__all__ = [
    "Deviation",
    "Verification",
    "Margins",
    "deviation",
    "verify",
    "margins",
]

_TWO_PI = 2 * math.pi


# -- comparison -------------------------------------------------------------

@dataclass(frozen=True)
class Deviation:
    """Worst deviation of a design's response from a target's over a band.

    Attributes
    ----------
    magnitude_db : float
        Largest |20 log10|H_design| − 20 log10|H_target||, dB.
    magnitude_at_hz : float
    phase_deg : float
        Largest |phase difference|, degrees, modulo 360° (after removing
        a 180° inversion when ``inverted``).
    phase_at_hz : float
    inverted : bool
        The design inverts relative to the target (H_design/H_target < 0
        at the target's band peak).
    band_hz : tuple of float
    floor_db : float
        Points where the target is more than this below its band peak are
        not compared (deep stop band, transmission zeros).
    """

    magnitude_db: float
    magnitude_at_hz: float
    phase_deg: float
    phase_at_hz: float
    inverted: bool
    band_hz: tuple
    floor_db: float


def _default_band(target: Response) -> tuple[float, float]:
    reference = target.reference_hz
    return (0.1 * reference, 10.0 * reference)


def _check_band(band_hz: Any) -> tuple[float, float]:
    try:
        low, high = (float(x) for x in band_hz)
    except (TypeError, ValueError):
        raise SpecError(f"band_hz must be (low, high) in Hz, not {band_hz!r}") from None
    if not (0 < low < high < math.inf):
        raise SpecError(f"band_hz must satisfy 0 < low < high (Hz), not {band_hz!r}")
    return low, high


def deviation(design: Response, target: Response, band_hz: tuple[float, float] | None = None, *,
              floor_db: float = 60.0, points: int = 4001) -> Deviation:
    """Worst magnitude (dB) and phase (°) deviation over a band.

    Parameters
    ----------
    design, target : Response
    band_hz : (float, float), optional
        Band in Hz; default 0.1× to 10× the target's reference frequency
        (geometric mean of its pole magnitudes).
    floor_db : float, optional
        Skip points where the target is more than `floor_db` below its
        peak in the band.
    points : int, optional
        Log-spaced grid points over the band.

    Returns
    -------
    Deviation

    Examples
    --------
    >>> import control
    >>> t = Response.from_sections([control.tf([1.0], [1.0, 1.0])])
    >>> d = Response.from_sections([control.tf([-1.0], [1.0, 1.0])])
    >>> dev = deviation(d, t)
    >>> dev.inverted, round(dev.magnitude_db, 12), round(dev.phase_deg, 9)
    (True, 0.0, 0.0)
    """
    low, high = _check_band(_default_band(target) if band_hz is None else band_hz)
    omega = np.geomspace(low, high, points) * _TWO_PI
    h_target = target.evaluate(omega)
    h_design = design.evaluate(omega)
    with np.errstate(divide="ignore", invalid="ignore"):
        target_db = 20 * np.log10(np.abs(h_target))
        design_db = 20 * np.log10(np.abs(h_design))
        ratio = h_design / h_target
    reference = int(np.argmax(target_db))
    inverted = bool(ratio[reference].real < 0)
    if inverted:
        ratio = -ratio
    compared = target_db >= target_db[reference] - floor_db
    magnitude = np.where(compared, np.abs(design_db - target_db), -np.inf)
    phase = np.where(compared, np.abs(np.degrees(np.angle(ratio))), -np.inf)
    i, j = int(np.argmax(magnitude)), int(np.argmax(phase))
    return Deviation(float(magnitude[i]), float(omega[i] / _TWO_PI), float(phase[j]),
                     float(omega[j] / _TWO_PI), inverted, (low, high), float(floor_db))


def _figures(response: Response) -> Figures:
    return Figures(step_figures(response), frequency_figures(response))


@dataclass(frozen=True, eq=False)
class Verification:
    """Target, snapped design and (optionally) continuous design, compared.

    Attributes
    ----------
    target, design : Figures
    continuous : Figures or None
    deviation : Deviation
        Snapped design against the target.
    continuous_deviation : Deviation or None
        Continuous design against the target: what solving left over.
    snapping_deviation : Deviation or None
        Snapped against continuous: the cost of preferred values.
    band_hz : tuple of float
    """

    target: Figures
    design: Figures
    continuous: Figures | None
    deviation: Deviation
    continuous_deviation: Deviation | None
    snapping_deviation: Deviation | None
    band_hz: tuple


def _as_response(value: object, what: str) -> Response:
    if not isinstance(value, Response):
        raise SpecError(
            f"{what} must be a placer.analysis.response.Response (Response.from_sections or "
            f"Response.from_zpk), not {type(value).__name__}"
        )
    return value


def verify(design: Response, target: Response, *, band_hz: tuple[float, float] | None = None,
           continuous: Response | None = None) -> Verification:
    """Compare a snapped design (and its continuous values) with a target.

    Parameters
    ----------
    design, target : Response
    band_hz : (float, float), optional
        Comparison band in Hz; default 0.1× to 10× the target's reference
        frequency (see :func:`deviation`).
    continuous : Response, optional
        The design with its continuous (unsnapped) part values.

    Returns
    -------
    Verification

    Examples
    --------
    >>> import control
    >>> target = Response.from_zpk([], [-1 + 1j, -1 - 1j], 2.0)
    >>> design = Response.from_zpk([], [-1.01 + 1j, -1.01 - 1j], 2.0201)
    >>> v = verify(design, target)
    >>> v.deviation.magnitude_db < 0.1, v.target.frequency.kind
    (True, 'lowpass')
    """
    design = _as_response(design, "design")
    target = _as_response(target, "target")
    band = _check_band(_default_band(target) if band_hz is None else band_hz)
    result_continuous: Figures | None = None
    continuous_deviation: Deviation | None = None
    snapping: Deviation | None = None
    if continuous is not None:
        continuous = _as_response(continuous, "continuous")
        result_continuous = _figures(continuous)
        continuous_deviation = deviation(continuous, target, band)
        snapping = deviation(design, continuous, band)
    return Verification(_figures(target), _figures(design), result_continuous,
                        deviation(design, target, band), continuous_deviation, snapping, band)


# -- loop margins -----------------------------------------------------------

@dataclass(frozen=True)
class Margins:
    """Gain and phase margins of a loop gain L(s) (negative feedback).

    Attributes
    ----------
    gain_margin_db : float or None
        The phase crossover with the smallest |margin| in dB; None when the
        phase never crosses −180°.
    phase_margin_deg : float or None
        The smallest phase margin over all gain crossovers; None when
        |L| never crosses 1.
    crossover_hz : float or None
        Gain crossover of the reported phase margin.
    phase_crossover_hz : float or None
        Phase crossover of the reported gain margin.
    stable : bool
        From the closed-loop poles (roots of 1 + L), not from the margins.
    closed_loop_poles : tuple of complex
    notes : tuple of str
    """

    gain_margin_db: float | None
    phase_margin_deg: float | None
    crossover_hz: float | None
    phase_crossover_hz: float | None
    stable: bool
    closed_loop_poles: tuple
    notes: tuple


def margins(loop: Any) -> Margins:
    """Margins of a loop gain, every crossover considered.

    Parameters
    ----------
    loop : control.TransferFunction, control.StateSpace or Response
        The loop gain L(s); the closed loop is L/(1 + L).

    Returns
    -------
    Margins

    Examples
    --------
    >>> import control
    >>> m = margins(control.tf([10 * 2**0.5], [0.1, 1.0, 0.0]))   # k/(s(1 + s/10))
    >>> round(m.phase_margin_deg, 9), round(m.crossover_hz * 2 * 3.141592653589793, 9)
    (45.0, 10.0)
    >>> m.gain_margin_db is None, m.notes[0]
    (True, 'no phase crossover: the phase never reaches -180°, so the gain margin is unbounded')
    """
    if isinstance(loop, Response):
        loop = loop.state_space()
    if not isinstance(loop, (control.TransferFunction, control.StateSpace)):
        raise SpecError(
            f"loop must be a control.TransferFunction, StateSpace or Response, "
            f"not {type(loop).__name__}"
        )
    if not loop.issiso():
        raise SpecError("loop must be SISO (one input, one output)")
    gm, pm, _, wpc, wgc, _ = (np.atleast_1d(np.asarray(x, float)) for x in
                              control.stability_margins(loop, returnall=True))
    notes: list[str] = []
    phase_margin: float | None
    crossover: float | None
    gain_margin: float | None
    phase_crossover: float | None
    keep = np.isfinite(pm) & np.isfinite(wgc)
    pm, wgc = pm[keep], wgc[keep]
    if pm.size:
        i = int(np.argmin(pm))
        phase_margin, crossover = float(pm[i]), float(wgc[i] / _TWO_PI)
        if pm.size > 1:
            notes.append(f"{pm.size} gain crossovers; the smallest phase margin is reported")
    else:
        phase_margin = crossover = None
        notes.append("no gain crossover: |L| never crosses 1, so the phase margin is undefined")
    keep = np.isfinite(gm) & (gm > 0) & np.isfinite(wpc)
    gm, wpc = gm[keep], wpc[keep]
    if gm.size:
        gm_db = 20 * np.log10(gm)
        i = int(np.argmin(np.abs(gm_db)))
        gain_margin, phase_crossover = float(gm_db[i]), float(wpc[i] / _TWO_PI)
        if gm.size > 1:
            notes.append(f"{gm.size} phase crossovers; the gain margin nearest 0 dB is reported")
    else:
        gain_margin = phase_crossover = None
        notes.append("no phase crossover: the phase never reaches -180°, "
                     "so the gain margin is unbounded")
    poles = np.asarray(control.feedback(loop, 1).poles(), complex)
    stable = bool(np.all(poles.real < -1e-12 * np.maximum(np.abs(poles), 1e-300)))
    if not stable:
        notes.append("closed loop not stable: a pole of 1 + L lies on or right of the jω axis")
    return Margins(gain_margin, phase_margin, crossover, phase_crossover, stable,
                   tuple(complex(p) for p in poles), tuple(notes))
