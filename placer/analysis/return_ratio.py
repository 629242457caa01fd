"""The loop gain around each op-amp of a circuit, by Bode's return ratio.

With the single-pole op-amp model of :mod:`placer.analysis.mna`, an op-amp is a
controlled source v_o = A(s)·(v+ − v−), A(s) = ωt/(s + ωt/A0). Its return
ratio T is found by breaking that dependence: the source's output is set
to an independent 1 V (its MNA row replaced by ``v_o = 1``), the circuit's
input is grounded, every other op-amp keeps its model, and the voltage
the source would then see between its inputs, v_d, comes back as
``T = −A(s)·v_d``. For an op-amp in negative feedback T ≈ A·β > 0 at low
frequency, 1 + T is the return difference, and the crossover (|T| = 1),
phase margin (180° + ∠T there, read in (−180°, 180°]) and gain margin
(−20·log|T| where ∠T crosses −180°) are those of the op-amp's own loop,
with every other loop of the circuit closed. :func:`return_ratio_coefficients`
gives T as a ratio of polynomials in s, for python-control or a root plot. A capacitive load at the op-amp's output pin
(:func:`with_load_capacitance`) with the model's output resistance adds
the pole that erodes the margin.

Examples
--------
>>> from placer.circuit.elements import Circuit, Element
>>> from placer.place.opamp import AmplifierSpec, apply_amplifier
>>> buffer = Circuit((Element("U1", "opamp", ("vin", "vout", "vout")),
...                   Element("RL", "resistor", ("vout", "gnd"), value=10e3)))
>>> built = apply_amplifier(buffer, AmplifierSpec(gbw=1e6))
>>> loop = opamp_loop(built, "U1")
>>> round(loop.crossover_hz / 1e6, 4), round(loop.phase_margin_deg, 2)
(1.0, 90.0)

References
----------
H. W. Bode, *Network Analysis and Feedback Amplifier Design*, Van
Nostrand, 1945, chapter 4 (return ratio and return difference).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import brentq

from ..circuit.elements import Circuit, Element
from ..errors import SpecError, TopologyError
from .mna import NumericSystem, numeric_system
from .pencil import circuit_poles, pencil_eigenvalues

__all__ = [
    "PHASE_MARGIN_FLOOR_DEG",
    "OpampLoop",
    "output_pin",
    "with_load_capacitance",
    "return_ratio",
    "return_ratio_coefficients",
    "phase_margin_of",
    "opamp_loop",
    "opamp_loops",
]

#: Phase margins below this are flagged (common practice, no source).
PHASE_MARGIN_FLOOR_DEG = 45.0
_POINTS_PER_DECADE = 40


@dataclass(frozen=True)
class OpampLoop:
    """One op-amp's own loop: crossover, margins and the response.

    Attributes
    ----------
    opamp : str
    crossover_hz : float or None
        Where |T| falls through 1 (the lowest-margin one when several; a
        crossover where |T| rises through 1 counts only when none falls);
        None when |T| never reaches 1.
    phase_margin_deg : float or None
        180° + ∠T at that crossover, in
        (−180°, 180°] (:func:`phase_margin_of`).
    gain_margin_db : float or None
        −20·log10|T| where ∠T crosses −180° beyond the crossover (the
        smallest); None: no such crossing (unbounded).
    phase_crossover_hz : float or None
    low_frequency_gain_db : float
        20·log10|T| at the lowest grid frequency.
    frequency_hz, magnitude_db, phase_deg : ndarray
        T on the grid (phase unwrapped from the low end), for plots.
    """

    opamp: str
    crossover_hz: float | None
    phase_margin_deg: float | None
    gain_margin_db: float | None
    phase_crossover_hz: float | None
    low_frequency_gain_db: float
    frequency_hz: NDArray[np.float64]
    magnitude_db: NDArray[np.float64]
    phase_deg: NDArray[np.float64]

    @property
    def low_margin(self) -> bool:
        """True when the phase margin is below :data:`PHASE_MARGIN_FLOOR_DEG`."""
        return self.phase_margin_deg is not None and self.phase_margin_deg < PHASE_MARGIN_FLOOR_DEG


def output_pin(circuit: Circuit, name: str) -> str:
    """The node an op-amp drives on the board (past its model's ``.ro``)."""
    element = circuit.element(name)
    out = element.nodes[2]
    if out == f"{name}.int":
        resistor = circuit.element(f"{name}.ro")
        return resistor.nodes[1] if resistor.nodes[0] == out else resistor.nodes[0]
    return out


def with_load_capacitance(circuit: Circuit, capacitance: float | None) -> Circuit:
    """Add a capacitor `capacitance` (F) from every op-amp's output pin to the reference.

    Parameters
    ----------
    circuit : Circuit
    capacitance : float or None
        Farad; None or 0 returns the circuit unchanged.

    Raises
    ------
    SpecError
        For a negative capacitance.
    """
    if not capacitance:
        return circuit
    if not (math.isfinite(capacitance) and capacitance > 0):
        raise SpecError(f"load_capacitance = {capacitance!r} F must be positive")
    extra = tuple(Element(f"{e.name}.cl", "capacitor", (output_pin(circuit, e.name), circuit.reference),
                          value=float(capacitance))
                  for e in circuit.elements if e.kind == "opamp")
    return replace(circuit, elements=circuit.elements + extra, _graph=None)


def _gain(element: Element, omega: NDArray[np.float64]) -> NDArray[np.complex128]:
    """A(jω) of the op-amp model (V/V)."""
    s = 1j * np.asarray(omega, float)
    if element.gbw is not None:
        omega_t = 2 * math.pi * element.gbw
        pole = omega_t / element.gain if element.gain is not None else 0.0
        return omega_t / (s + pole)
    if element.gain is not None:
        return np.full(s.shape, float(element.gain), dtype=complex)
    raise SpecError(
        f"op-amp {element.name!r} is ideal: its own loop needs an op-amp model "
        "(give [amplifier] gbw, or gain)")


@dataclass(frozen=True)
class _Broken:
    """The MNA system with one op-amp's dependence broken."""

    G: NDArray[np.float64]
    C: NDArray[np.float64]
    row: int
    plus: int | None
    minus: int | None
    element: Element


def _broken(system: NumericSystem, circuit: Circuit, name: str) -> _Broken:
    element = circuit.element(name)
    if element.kind != "opamp":
        raise TopologyError(f"element {name!r} is a {element.kind}, not an op-amp")
    _gain(element, np.ones(1))          # an ideal op-amp has no loop to measure: say so
    node = system.layout.node_index
    row = system.layout.branch_index[name]
    G, C = system.G.copy(), system.C.copy()
    G[row, :] = 0.0
    C[row, :] = 0.0
    G[row, node[element.nodes[2]]] = 1.0
    return _Broken(G, C, row, node.get(element.nodes[0]), node.get(element.nodes[1]), element)


def _returned(broken: _Broken, omega: NDArray[np.float64]) -> NDArray[np.complex128]:
    matrices = broken.G[None, :, :] + 1j * omega[:, None, None] * broken.C[None, :, :]
    rhs = np.zeros((omega.size, broken.G.shape[0], 1), dtype=complex)
    rhs[:, broken.row, 0] = 1.0
    try:
        x = np.linalg.solve(matrices, rhs)[..., 0]
    except np.linalg.LinAlgError:
        raise TopologyError(
            f"op-amp {broken.element.name!r}: the circuit with its loop broken is singular") from None
    v_plus = x[:, broken.plus] if broken.plus is not None else 0.0
    v_minus = x[:, broken.minus] if broken.minus is not None else 0.0
    return -_gain(broken.element, omega) * (v_plus - v_minus)


def return_ratio(circuit: Circuit, name: str, frequency_hz: ArrayLike) -> NDArray[np.complex128]:
    """Bode's return ratio T(j2πf) of op-amp `name` (dimensionless).

    Parameters
    ----------
    circuit : Circuit
        Every part with a number; the op-amp (and the others) modelled.
    name : str
    frequency_hz : array_like
        Hz.

    Returns
    -------
    ndarray of complex

    Raises
    ------
    SpecError
        When the op-amp is ideal (no GBW and no gain).
    """
    omega = 2 * math.pi * np.atleast_1d(np.asarray(frequency_hz, float))
    return _returned(_broken(numeric_system(circuit), circuit, name), omega)


def return_ratio_coefficients(circuit: Circuit, name: str) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """T(s) of op-amp `name` as numerator and denominator coefficients.

    The broken loop's v_d(s) = k·Π(s − z)/Π(s − p): its poles are the
    finite eigenvalues of the broken MNA pencil, its zeros those of the
    pencil bordered by the excitation (the row of the op-amp's output) and
    the differential read-out v+ − v−; k from one solve at a probe on the
    roots' own frequency scale. Times −A(s) of the op-amp model. Common
    factors (a mode the loop does not see) are not cancelled.

    Parameters
    ----------
    circuit : Circuit
        Numeric, op-amps modelled.
    name : str

    Returns
    -------
    numerator, denominator : ndarray
        Real coefficients in descending powers of s (s in rad/s), the
        order of ``control.tf(numerator, denominator)``.

    Raises
    ------
    SpecError
        When the op-amp is ideal (no GBW and no gain).
    """
    broken = _broken(numeric_system(circuit), circuit, name)
    size = broken.G.shape[0]
    poles = pencil_eigenvalues(-broken.G, broken.C)
    bordered_g = np.zeros((size + 1, size + 1))
    bordered_c = np.zeros((size + 1, size + 1))
    bordered_g[:size, :size], bordered_c[:size, :size] = broken.G, broken.C
    bordered_g[broken.row, size] = 1.0
    if broken.plus is not None:
        bordered_g[size, broken.plus] += 1.0
    if broken.minus is not None:
        bordered_g[size, broken.minus] -= 1.0
    zeros = pencil_eigenvalues(-bordered_g, bordered_c)
    magnitudes = np.abs(np.concatenate([poles, zeros]))
    magnitudes = magnitudes[magnitudes > 0]
    scale = float(np.exp(np.mean(np.log(magnitudes)))) if magnitudes.size else 1.0
    probe = scale * (0.3 + 1.1j)
    excitation = np.zeros(size, dtype=complex)
    excitation[broken.row] = 1.0
    x = np.linalg.solve(broken.G + probe * broken.C, excitation)
    v_d = ((x[broken.plus] if broken.plus is not None else 0.0)
           - (x[broken.minus] if broken.minus is not None else 0.0))
    k = v_d * np.prod(probe - poles) / np.prod(probe - zeros)
    element = broken.element
    numerator = -k * np.poly(zeros) if zeros.size else np.array([-k])
    denominator = np.poly(poles) if poles.size else np.array([1.0 + 0j])
    if element.gbw is not None:
        omega_t = 2 * math.pi * element.gbw
        numerator = omega_t * numerator
        denominator = np.polymul(denominator, [1.0, omega_t / element.gain if element.gain else 0.0])
    elif element.gain is not None:                    # _broken refused an ideal op-amp
        numerator = float(element.gain) * numerator
    return np.real(numerator).astype(float), np.real(denominator).astype(float)


def phase_margin_of(phase_deg: float) -> float:
    """180° + ∠T for ∠T in degrees, read in (−180°, 180°].

    A phase margin is the angle from −180° to T(jω_c) at a crossover, so it
    is defined up to whole turns; a loop's phase unwrapped on a grid can
    sit turns away (a return ratio that starts at 180° and gains 90° through
    a right-half-plane pole of the loop reads 449.8° where the margin is
    89.8°). python-control's ``stability_margins`` reads the same angle in
    [−180°, 180°); the two differ only at T(jω_c) = +1, read here as 180°
    (no phase lag at all), not −180°.

    Examples
    --------
    >>> phase_margin_of(-90.0), phase_margin_of(269.5), phase_margin_of(0.0), phase_margin_of(-200.0)
    (90.0, 89.5, 180.0, -20.0)
    """
    margin = (180.0 + float(phase_deg)) % 360.0
    return margin - 360.0 if margin > 180.0 else margin


def _grid(circuit: Circuit, element: Element) -> NDArray[np.float64]:
    marks = [abs(p) / (2 * math.pi) for p in circuit_poles(circuit) if abs(p) > 0]
    if element.gbw is not None:
        marks.append(element.gbw)
        if element.gain is not None:
            marks.append(element.gbw / element.gain)
    low, high = min(marks) / 100, max(marks) * 100
    count = int(_POINTS_PER_DECADE * math.log10(high / low)) + 1
    return np.geomspace(low, high, count)


def _refine(function: Callable[[float], float], low: float, high: float) -> float:
    """The root of `function` of log f between two grid points, Hz."""
    a, b = function(low), function(high)
    if a * b >= 0:   # a root on a grid point: the two evaluations round either way
        return float(low if abs(a) <= abs(b) else high)
    root = brentq(lambda u: function(math.exp(u)), math.log(low), math.log(high), xtol=1e-12)
    return math.exp(root)


def opamp_loop(circuit: Circuit, name: str, *,
               frequency_hz: ArrayLike | None = None) -> OpampLoop:
    """Crossover, phase and gain margins of op-amp `name`'s own loop.

    Parameters
    ----------
    circuit : Circuit
        Numeric, op-amps modelled (see :func:`placer.place.opamp.apply_amplifier`).
    name : str
    frequency_hz : array_like, optional
        The search grid, Hz (default: two decades beyond the circuit's
        poles and the op-amp's GBW and open-loop pole, 40 points a decade).

    Returns
    -------
    OpampLoop
    """
    broken = _broken(numeric_system(circuit), circuit, name)
    grid = (np.asarray(frequency_hz, float) if frequency_hz is not None
            else _grid(circuit, broken.element))

    def at(f: float) -> complex:
        return complex(_returned(broken, np.array([2 * math.pi * f]))[0])

    values = _returned(broken, 2 * math.pi * grid)
    magnitude = np.abs(values)
    phase = np.degrees(np.unwrap(np.angle(values)))
    phase -= 360.0 * math.ceil((phase[0] - 180.0) / 360.0)   # the low end in (−180, 180]

    def unwrapped(f: float) -> float:
        guess = float(np.interp(math.log(f), np.log(grid), phase))
        exact = math.degrees(np.angle(at(f)))
        return guess + (exact - guess + 180.0) % 360.0 - 180.0

    with np.errstate(divide="ignore"):
        level = np.log(np.maximum(magnitude, 1e-300))
    crossings: list[tuple[float, float]] = []
    falling: list[tuple[float, float]] = []
    above = level > 0
    for i in np.nonzero(above[:-1] != above[1:])[0]:
        f = _refine(lambda x: math.log(abs(at(x))), grid[i], grid[i + 1])
        crossings.append((phase_margin_of(math.degrees(np.angle(at(f)))), f))
        if above[i]:
            falling.append(crossings[-1])
    # A crossover where |T| rises through 1 is not the loop's own: an integrator's op-amp, fed
    # back through capacitors only, has T(0) = 0 and passes |T| = 1 on the way up at ∠T ≈ +90°
    # (−90° of "margin", a mHz artefact); with T(∞) = 0 a falling crossover always follows.
    pool = falling or crossings
    margin, crossover = min(pool) if pool else (None, None)
    turns = np.floor((phase + 180.0) / 360.0)
    gains = []
    for i in np.nonzero(np.diff(turns) != 0)[0]:
        target = 360.0 * max(turns[i], turns[i + 1]) - 180.0
        f = _refine(lambda x: unwrapped(x) - target, grid[i], grid[i + 1])
        if abs(at(f)) < 1.0:
            gains.append((-20 * math.log10(abs(at(f))), f))
    gain_margin, phase_crossover = min(gains) if gains else (None, None)
    with np.errstate(divide="ignore"):
        magnitude_db = 20 * np.log10(magnitude)
    return OpampLoop(opamp=name, crossover_hz=crossover, phase_margin_deg=margin,
                     gain_margin_db=gain_margin, phase_crossover_hz=phase_crossover,
                     low_frequency_gain_db=float(magnitude_db[0]), frequency_hz=grid,
                     magnitude_db=magnitude_db, phase_deg=phase)


def opamp_loops(circuit: Circuit) -> tuple[OpampLoop, ...]:
    """:func:`opamp_loop` for every op-amp of `circuit`, in element order."""
    return tuple(opamp_loop(circuit, e.name) for e in circuit.elements if e.kind == "opamp")
