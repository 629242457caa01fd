"""Magnitude, phase and step of a section: target against the built circuit.

The target's curves come from its section (poles, zeros and gain); the
built curves from the section's circuit as designed (values in, a real
op-amp model where the spec has one), analysed afresh through the MNA
pencil, so what the page draws is what the returned circuit does.
Frequencies are in hertz, times in seconds: these arrays are for a
person's eyes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy import signal

from ..circuit.elements import Circuit
from ..analysis.pencil import circuit_response, circuit_roots
from ..target.targets import Section

__all__ = ["SectionCurves", "section_curves", "step_from_roots", "FLOOR_DB"]

#: Magnitudes below this are drawn at it (a notch's null is -inf dB).
FLOOR_DB = -160.0
_POINTS = 241
_STEP_POINTS = 241


@dataclass(frozen=True)
class SectionCurves:
    """The curves of one section, target and built, on shared grids.

    Attributes
    ----------
    frequency_hz : ndarray
        Log-spaced, two decades either side of the section's f0.
    target_db, built_db : ndarray
        Magnitude, dB (floored at :data:`FLOOR_DB`).
    target_phase_deg, built_phase_deg : ndarray
        Unwrapped phase, degrees; the built one shifted by whole turns to
        start where the target's does (an inversion, 180°, stays).
    time_s : ndarray
        Uniform, to twelve time constants of the slowest target pole.
    target_step, built_step : ndarray
        Unit-step responses, V/V.
    """

    frequency_hz: NDArray[np.float64]
    target_db: NDArray[np.float64]
    built_db: NDArray[np.float64]
    target_phase_deg: NDArray[np.float64]
    built_phase_deg: NDArray[np.float64]
    time_s: NDArray[np.float64]
    target_step: NDArray[np.float64]
    built_step: NDArray[np.float64]

    def to_dict(self) -> dict:
        """JSON-ready lists (numbers rounded to 6 significant digits)."""
        return {name: [float(f"{x:.6g}") for x in getattr(self, name)]
                for name in self.__dataclass_fields__}


def _db(h: NDArray[np.complex128]) -> NDArray[np.float64]:
    with np.errstate(divide="ignore"):
        return np.maximum(20.0 * np.log10(np.abs(h)), FLOOR_DB)


def _phase(h: NDArray[np.complex128]) -> NDArray[np.float64]:
    return np.degrees(np.unwrap(np.angle(h)))


def step_from_roots(zeros: NDArray[np.complex128], poles: NDArray[np.complex128], k: float,
                    t: NDArray[np.float64]) -> NDArray[np.float64]:
    """Unit-step output of a stable system, from its modes (t in s).

    With A = V·Λ·V⁻¹ the state under a unit step is x(t) = (e^{At} − I)·A⁻¹B,
    so y(t) = Σ h_i·g_i·e^{λ_i t} − C·A⁻¹B + D with h = C·V, g = V⁻¹·A⁻¹B:
    one eigendecomposition instead of a matrix exponential per call.
    A nearly defective A (a repeated pole) goes to scipy's own step.

    Parameters
    ----------
    zeros, poles : ndarray of complex
        rad/s; conjugates in pairs, every pole in the left half-plane.
    k : float
        H(s) = k·Π(s − z)/Π(s − p).
    t : ndarray
        Times, s.

    Returns
    -------
    ndarray
        y(t), V/V.

    Examples
    --------
    >>> y = step_from_roots(np.array([]), np.array([-1.0 + 0j]), 1.0, np.array([0.0, 1.0]))
    >>> [round(float(v), 6) for v in y]
    [0.0, 0.632121]
    """
    numerator, denominator = signal.zpk2tf(np.asarray(zeros, complex), np.asarray(poles, complex), k)
    A, B, C, D = signal.tf2ss(np.real(numerator), np.real(denominator))
    if A.size == 0:
        return np.full(t.shape, float(D[0, 0]))
    w, V = np.linalg.eig(A)
    if np.linalg.cond(V) > 1e8:
        _, y = signal.step((np.real(numerator), np.real(denominator)), T=t)
        return np.asarray(y, float)
    settled = np.linalg.solve(A, B[:, 0])
    g = np.linalg.solve(V, settled)
    h = C[0] @ V
    modes = np.exp(np.outer(t, w)) @ (h * g)
    return np.real(modes) - float(C[0] @ settled) + float(D[0, 0])


def section_curves(section: Section, circuit: Circuit) -> SectionCurves:
    """The target section's curves beside its built circuit's.

    Parameters
    ----------
    section : placer.target.targets.Section
        The target (rad/s inside).
    circuit : placer.circuit.elements.Circuit
        The section as built, every part with its value.

    Returns
    -------
    SectionCurves

    Examples
    --------
    >>> from placer.circuit.elements import Element
    >>> from placer.target.targets import make_section
    >>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), value=1e3),
    ...               Element("C1", "capacitor", ("vout", "gnd"), value=1e-6)))
    >>> c = section_curves(make_section("lowpass", 1e3), rc)
    >>> bool(abs(c.built_db[-1] - c.target_db[-1]) < 1e-9)
    True
    """
    f0 = section.omega0 / (2 * math.pi)
    frequency = np.geomspace(f0 / 100.0, f0 * 100.0, _POINTS)
    omega = 2 * math.pi * frequency
    target = section.frequency_response(omega)
    built = circuit_response(circuit, omega)
    target_phase = _phase(target)
    built_phase = _phase(built)
    built_phase = built_phase + 360.0 * round((target_phase[0] - built_phase[0]) / 360.0)
    slowest = min(abs(p.real) for p in section.poles)
    t = np.linspace(0.0, 12.0 / slowest, _STEP_POINTS)
    target_step = step_from_roots(np.array(section.zeros, complex), np.array(section.poles, complex),
                        float(section.k), t)
    roots = circuit_roots(circuit)
    built_step = step_from_roots(roots.zeros, roots.poles, roots.gain, t)
    return SectionCurves(
        frequency_hz=frequency, target_db=_db(target), built_db=_db(built),
        target_phase_deg=target_phase, built_phase_deg=built_phase,
        time_s=t, target_step=target_step, built_step=built_step)
