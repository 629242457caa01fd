"""Classical sensitivities of ω0, Q and gain to every part.

The classical normalised sensitivity of a figure y to a part x is

    S_x^y = (x / y) (∂y / ∂x) = ∂ ln|y| / ∂ ln|x|,

so a 1 % change of x moves y by about S_x^y %. For first- and
second-order networks it is taken symbolically from the network's ω0, Q
and gain expressions; for higher orders numerically, by central
differences in log space of the *dominant pole pair* (the complex pair
with the highest Q; with only real poles, the two slowest real poles taken
as a pair) and of the gain at the reference.

The figures are read off coefficient arrays of any shape (..., N), so the
tolerance Monte Carlo (:mod:`placer.evidence.tolerance`) reads them the same way
for all its samples at once.

Examples
--------
>>> from placer.circuit.elements import Circuit, Element
>>> from placer.analysis.network import network_function
>>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), symbol="R1"),
...               Element("C1", "capacitor", ("vout", "gnd"), symbol="C1")))
>>> nf = network_function(rc)
>>> sensitivities(nf, {"R1": 1e3, "C1": 1e-6}).omega0
{'R1': -1.0, 'C1': -1.0}

References
----------
R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*,
Oxford University Press, 2001 (sensitivity chapter).
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import sympy
from numpy.typing import NDArray

from ..errors import SpecError, TopologyError
from .network import NetworkFunction, polynomial_values
from .protocols import PartFunction
from .second_order import dominant_pair, omega0_q, passband_gain

__all__ = [
    "Sensitivities",
    "sensitivities",
    "FigureReference",
    "figure_reference",
    "coefficient_figures",
    "check_has_poles",
    "nominal_values",
    "is_real_number",
]

#: Log-space step of the numeric sensitivities.
_LOG_STEP = 1e-4


@dataclass(frozen=True)
class Sensitivities:
    """Normalised sensitivities S_x^y of ω0, Q and gain to each part.

    Attributes
    ----------
    omega0, gain : dict
        Part symbol → S_x^ω0, S_x^gain.
    q : dict or None
        Part symbol → S_x^Q; None for a first-order network.
    method : str
        "symbolic" (sympy derivatives) or "numeric" (central differences).
    figure : str
        What ω0 and Q describe: "first order", "second order" or
        "dominant pole pair".
    """

    omega0: dict[str, float]
    q: dict[str, float] | None
    gain: dict[str, float]
    method: str
    figure: str


# -- validation -------------------------------------------------------------

def check_has_poles(nf: PartFunction) -> None:
    """Raise TopologyError for a network of order 0 (no ω0, Q or sensitivities to read)."""
    if nf.order < 1:
        raise TopologyError("the network has no poles (order 0): no ω0, Q or sensitivities")


def is_real_number(x: object) -> bool:
    """True for a real number that is not a bool."""
    return isinstance(x, numbers.Real) and not isinstance(x, bool)


def nominal_values(nf: PartFunction, values: Mapping[str, Any]) -> dict[str, float]:
    """Every part symbol → its value as a float; SpecError for a missing or non-finite one."""
    out = {}
    for name in nf.symbols:
        if name not in values:
            raise SpecError(
                f"no value for part {name!r}; every part needs one (parts: {', '.join(nf.symbols)})"
            )
        if not (is_real_number(values[name]) and math.isfinite(values[name])):
            raise SpecError(f"value of {name!r} must be a finite number in SI units, "
                            f"not {values[name]!r}")
        out[name] = float(values[name])
    return out


# -- figures from coefficient arrays ----------------------------------------

@dataclass(frozen=True)
class FigureReference:
    """How figures are read for one network (fixed at the nominal values)."""

    order: int
    gain_kind: str
    omega_ref: float      # rad/s, scales the root finding; the reference frequency
    gain_label: str


def figure_reference(nf: PartFunction, nominal: Mapping[str, float]) -> FigureReference:
    """How the figures of `nf` are read (order, gain kind, reference frequency) at `nominal`."""
    numerator, denominator = nf.coefficients(nominal)
    order = denominator.shape[0] - 1
    omega_ref = float(abs(denominator[-1] / denominator[0]) ** (1.0 / order))
    if not (math.isfinite(omega_ref) and omega_ref > 0):
        omega_ref = 1.0
    kind = nf.gain_kind
    label = kind
    if kind == "hf" and numerator.shape[0] - 1 < order:
        kind = "reference"
        label = f"|H| at {omega_ref / (2 * math.pi):.6g} Hz"
    return FigureReference(order, kind, omega_ref, label)


def coefficient_figures(numerator: NDArray[Any], denominator: NDArray[Any],
                        ref: FigureReference) -> tuple[NDArray[Any], NDArray[Any] | None, NDArray[Any]]:
    """(ω0 rad/s, Q or None, gain) arrays from coefficient arrays (..., N)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if ref.order == 1:
            omega0, q = denominator[1] / denominator[0], None
        elif ref.order == 2:
            omega0, q = omega0_q(*denominator)
        else:
            omega0, q = dominant_pair(denominator, ref.omega_ref)
        gain = _gain(numerator, denominator, ref)
    return omega0, q, gain


def _gain(numerator: NDArray[Any], denominator: NDArray[Any], ref: FigureReference) -> NDArray[Any]:
    if ref.gain_kind in ("dc", "center", "hf"):
        return passband_gain(numerator, denominator, ref.gain_kind)
    s = 1j * ref.omega_ref
    return np.abs(polynomial_values(numerator, s) / polynomial_values(denominator, s))


# -- sensitivities ----------------------------------------------------------

def sensitivities(nf: PartFunction, values: Mapping[str, Any]) -> Sensitivities:
    """Normalised sensitivities of ω0, Q and gain to every part.

    Parameters
    ----------
    nf : NetworkFunction
    values : mapping of str to float
        Every part symbol → its value (SI units).

    Returns
    -------
    Sensitivities
        Symbolic for order 1 and 2 (ω0 and gain; Q for order 2), numeric
        (central differences in ln x, step 1e-4) of the dominant pole pair
        and the reference gain for higher orders.

    Raises
    ------
    SpecError
        If a part has no value, or a value is not a finite number.

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> from placer.analysis.network import network_function
    >>> nf = network_function(get_topology("rc-lowpass").circuit)
    >>> s = sensitivities(nf, {"R1": 1e3, "C1": 1e-9})
    >>> s.omega0["R1"], s.gain["R1"], s.q
    (-1.0, 0.0, None)
    """
    check_has_poles(nf)
    nominal = nominal_values(nf, values)
    if nf.order <= 2 and isinstance(nf, NetworkFunction):
        return _symbolic_sensitivities(nf, nominal)
    # a function with no symbolic figures (the dominant part of a circuit
    # whose op-amps are modelled) is read numerically, at its own order
    return _numeric_sensitivities(nf, nominal, figure_reference(nf, nominal))


def _symbolic_sensitivities(nf: NetworkFunction, nominal: Mapping[str, float]) -> Sensitivities:
    substitution = {nf.symbols[name]: value for name, value in nominal.items()}
    figures = {"omega0": nf.omega0, "gain": nf.gain}
    if nf.order == 2:
        figures["q"] = nf.q
    # omega0 and gain always, q for the second order
    out: dict[str, Any] = {"q": None}
    for key, expression in figures.items():
        expression = sympy.sympify(expression)
        if expression == 0:
            out[key] = {name: math.nan for name in nf.symbols}
            continue
        # x ∂ln y/∂x on the expanded logarithm: monomial figures give exact numbers.
        log_figure = sympy.expand_log(sympy.log(expression), force=True)
        per_part: dict[str, float] = {}
        for name, symbol in nf.symbols.items():
            derivative = sympy.diff(log_figure, symbol) * symbol
            if derivative == 0:
                per_part[name] = 0.0
            else:
                per_part[name] = float(complex(derivative.evalf(subs=substitution)).real)
        out[key] = per_part
    figure = "second order" if nf.order == 2 else "first order"
    return Sensitivities(out["omega0"], out["q"], out["gain"], "symbolic", figure)


def _numeric_sensitivities(nf: PartFunction, nominal: Mapping[str, float],
                           ref: FigureReference) -> Sensitivities:
    names = list(nf.symbols)
    # Columns: x·e^{+h} and x·e^{-h} for each part in turn.
    factors = np.ones((len(names), 2 * len(names)))
    for i in range(len(names)):
        factors[i, 2 * i] = math.exp(_LOG_STEP)
        factors[i, 2 * i + 1] = math.exp(-_LOG_STEP)
    columns = {name: nominal[name] * factors[i] for i, name in enumerate(names)}
    omega0, q, gain = coefficient_figures(*nf.coefficients(columns), ref)
    out: dict[str, Any] = {}
    out["q"] = None
    for key, figure in (("omega0", omega0), ("q", q), ("gain", gain)):
        if figure is None:      # first order: no Q
            continue
        with np.errstate(divide="ignore", invalid="ignore"):
            logs = np.log(np.abs(figure))
        slopes = (logs[0::2] - logs[1::2]) / (2 * _LOG_STEP)
        out[key] = {name: float(slopes[i]) if nominal[name] != 0 else 0.0
                    for i, name in enumerate(names)}
    described = {1: "first order", 2: "second order"}.get(ref.order, "dominant pole pair")
    return Sensitivities(out["omega0"], out["q"], out["gain"], "numeric", described)
