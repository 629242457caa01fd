"""Plants for loop design: pole-zero models and power-converter averages.

A plant is ``G(s) = k·Π(s − z)/Π(s − p)`` with poles and zeros in rad/s,
the form a loop-compensation plan starts from. The factored form is the
source of truth: responses are evaluated as products of factors, and the
python-control object is built from first- and second-order sections, so
no high-order polynomial is ever root-found.

The two converter models are the textbook small-signal, continuous
conduction mode, voltage-mode control-to-output transfer functions, with
the PWM modulator gain 1/V_ramp folded in.

Examples
--------
>>> plant = buck_plant(vin=12.0, inductance=10e-6, capacitance=100e-6,
...                    esr=0.02, load=1.0, ramp=1.0)
>>> round(plant.low_frequency_gain, 6)
12.0
>>> round(abs(plant.zeros[0]) / (2 * math.pi))   # ESR zero, Hz
79577

References
----------
R. W. Erickson and D. Maksimović, *Fundamentals of Power Electronics*,
2nd ed., Kluwer, 2001, ch. 8 (converter transfer functions).
"""

from __future__ import annotations

import difflib
import math
import warnings
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import control
import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..circuit.elements import check_part_value
from ..errors import NumericalWarning, SpecError, brief
from ..schema import LIMITS, PLANT_TABLES, check_limit, check_table, unknown_key
from ..units import format_value, parse_value

__all__ = [
    "Plant",
    "plant_from_roots",
    "plant_from_coefficients",
    "buck_plant",
    "boost_plant",
    "plant_from_table",
    "check_keys",
    "PLANT_TYPES",
]

#: Accepted values of ``type`` in a plant table.
PLANT_TYPES = ("roots", "coefficients", "buck", "boost")

_PAIR_RTOL = 1e-9


@dataclass(frozen=True)
class Plant:
    """A plant ``k·Π(s − z)/Π(s − p)``, roots in rad/s.

    Parameters
    ----------
    poles, zeros : tuple of complex
        Roots in rad/s; complex ones in conjugate pairs.
    gain : float
        The constant k (not the DC gain; see :attr:`low_frequency_gain`).
    description : str
        One line for people, for example "buck 12 V, 10 µH, 100 µF".
    """

    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]
    gain: float
    description: str = ""

    @property
    def order(self) -> int:
        """Number of poles."""
        return len(self.poles)

    @property
    def low_frequency_gain(self) -> float:
        """Gain with roots at the origin left out: k·Π(−z)/Π(−p), signed."""
        value = complex(self.gain)
        for z in self.zeros:
            if z != 0:
                value *= -z
        for p in self.poles:
            if p != 0:
                value /= -p
        return float(value.real)

    def response(self, omega: ArrayLike) -> NDArray[np.complex128]:
        """G(jω) as a complex array; `omega` in rad/s."""
        s = 1j * np.asarray(omega, dtype=float)
        value = np.full(s.shape, complex(self.gain))
        for z in self.zeros:
            value = value * (s - z)
        for p in self.poles:
            value = value / (s - p)
        return value

    def phase_deg(self, omega: ArrayLike) -> NDArray[np.float64]:
        """Phase of G(jω) in degrees, continuous from DC (not wrapped).

        Each factor is written as (1 − s/r), whose phase starts at 0 and
        moves by less than 180° along the jω axis, so the sum needs no
        unwrapping; a root at the origin adds ±90°, a negative
        :attr:`low_frequency_gain` −180°.
        """
        w = np.asarray(omega, dtype=float)
        phase = np.zeros(w.shape)
        for roots, sign in ((self.zeros, 1.0), (self.poles, -1.0)):
            for r in roots:
                if r == 0:
                    phase = phase + sign * 90.0
                else:
                    phase = phase + sign * np.degrees(np.angle(1 - 1j * w / r))
        if self.low_frequency_gain < 0:
            phase = phase - 180.0
        return phase

    def sections(self) -> list[tuple[NDArray[np.float64], NDArray[np.float64]]]:
        """First- and second-order factors ``(numerator, denominator)``.

        Returns
        -------
        list of (ndarray, ndarray)
            Monic polynomial pairs in s (highest power first); the gain is
            not included.
        """
        numerators = _factor_polynomials(self.zeros)
        denominators = _factor_polynomials(self.poles)
        count = max(len(numerators), len(denominators))
        numerators += [np.array([1.0])] * (count - len(numerators))
        denominators += [np.array([1.0])] * (count - len(denominators))
        return list(zip(numerators, denominators))

    def transfer_function(self) -> Any:
        """The plant as a python-control TransferFunction.

        Built as the series connection of the sections of :meth:`sections`,
        so no polynomial of the whole plant is ever factored.
        """
        system = control.tf([float(self.gain)], [1.0])
        for numerator, denominator in self.sections():
            system = system * control.tf(numerator, denominator)
        return system

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: poles and zeros as [re, im] pairs in rad/s, gain k."""
        return {
            "poles": [[float(r.real), float(r.imag)] for r in self.poles],
            "zeros": [[float(r.real), float(r.imag)] for r in self.zeros],
            "gain": float(self.gain),
            "description": self.description,
        }


def _factor_polynomials(roots: Iterable[complex]) -> list[NDArray[np.float64]]:
    """Monic real polynomials of degree 1 (real roots) or 2 (pairs)."""
    out: list[NDArray[np.float64]] = []
    for r in roots:
        if r.imag > 0:
            out.append(np.array([1.0, -2.0 * r.real, abs(r) ** 2]))
        elif r.imag == 0:
            out.append(np.array([1.0, -r.real]))
    return out


def _clean_roots(roots: Iterable[complex], what: str) -> tuple[complex, ...]:
    """Complex tuple with conjugate pairs made exact; SpecError if unpaired."""
    values: list[complex] = []
    for item in roots:
        r = complex(item)
        if not (math.isfinite(r.real) and math.isfinite(r.imag)):
            raise SpecError(f"{what}: {r!r} is not a finite number")
        values.append(r)
    unmatched = [r for r in values if r.imag != 0]
    paired: list[complex] = []
    while unmatched:
        r = unmatched.pop(0)
        scale = max(abs(r), 1e-300)
        partner = next((i for i, q in enumerate(unmatched)
                        if abs(q - r.conjugate()) <= 1e-6 * scale), None)
        if partner is None:
            raise SpecError(
                f"{what}: [{r.real:g}, {r.imag:g}] has no conjugate partner "
                f"[{r.real:g}, {-r.imag:g}]; a real plant lists both roots of a pair"
            )
        unmatched.pop(partner)
        upper = complex(r.real, abs(r.imag))
        paired += [upper, upper.conjugate()]
    real = sorted(r.real for r in values if r.imag == 0)
    return tuple(complex(x) for x in real) + tuple(paired)


def plant_from_roots(poles: Iterable[complex], zeros: Iterable[complex], gain: float, *,
                     description: str = "") -> Plant:
    """A plant from its poles, zeros (rad/s) and the constant k.

    Parameters
    ----------
    poles, zeros : sequence of complex
        Roots in rad/s; complex roots in conjugate pairs.
    gain : float
        k in ``k·Π(s − z)/Π(s − p)``; nonzero.

    Raises
    ------
    SpecError
        For an unpaired complex root, a non-finite value, zero gain, or more
        zeros than poles (an improper plant).

    Examples
    --------
    >>> plant = plant_from_roots([-1000.0], [], 1000.0)
    >>> plant.low_frequency_gain
    1.0
    """
    clean_poles = _clean_roots(poles, "plant poles")
    clean_zeros = _clean_roots(zeros, "plant zeros")
    k = float(gain)
    if not math.isfinite(k) or k == 0:
        raise SpecError(f"plant gain must be a nonzero finite number, not {k!r}")
    if len(clean_zeros) > len(clean_poles):
        raise SpecError(
            f"the plant has {len(clean_zeros)} zeros but only {len(clean_poles)} poles; "
            "a physical plant has no more zeros than poles"
        )
    return Plant(poles=clean_poles, zeros=clean_zeros, gain=k, description=description)


def plant_from_coefficients(numerator: ArrayLike, denominator: ArrayLike, *,
                            description: str = "") -> Plant:
    """A plant from N(s) and D(s) coefficients, highest power first.

    Orders above 8 lose accuracy in the root finder and warn
    (:class:`~placer.errors.NumericalWarning`).

    Examples
    --------
    >>> plant = plant_from_coefficients([2.0], [1.0, 3.0, 2.0])
    >>> sorted(p.real for p in plant.poles), plant.gain
    ([-2.0, -1.0], 2.0)
    """
    arrays: list[NDArray[np.float64]] = []
    for label, coefficients in (("numerator", numerator), ("denominator", denominator)):
        array = np.trim_zeros(np.asarray(coefficients, dtype=float), "f")
        if array.size == 0 or not np.all(np.isfinite(array)):
            raise SpecError(f"plant {label} must be a list of finite numbers, not all zero")
        arrays.append(array)
    num, den = arrays
    if den.size > 9:
        warnings.warn(
            f"a plant denominator of order {den.size - 1} in polynomial form "
            "loses accuracy in the root finder; give poles and zeros instead",
            NumericalWarning, stacklevel=2,
        )
    zeros = _real_pairs(np.roots(num))
    poles = _real_pairs(np.roots(den))
    return plant_from_roots(poles, zeros, float(num[0] / den[0]),
                            description=description)


def _real_pairs(roots: Iterable[complex]) -> list[complex]:
    """Roots of a real polynomial with their conjugate pairs made exact."""
    out: list[complex] = []
    for r in roots:
        if abs(r.imag) <= 1e-10 * max(abs(r), 1e-300):
            out.append(complex(r.real))
        else:
            out.append(complex(r))
    return out


def _positive(value: float, name: str, *, allow_zero: bool = False) -> float:
    x = float(value)
    if not math.isfinite(x) or x < 0 or (x == 0 and not allow_zero):
        accepted = "zero or positive" if allow_zero else "positive"
        raise SpecError(f"{name} must be a {accepted} finite number, not {x!r}")
    return x


def _second_order(a2: float, a1: float, a0: float) -> tuple[complex, complex]:
    """Roots of a2·s² + a1·s + a0 (a2, a1, a0 > 0), stable either way."""
    disc = a1 * a1 - 4 * a2 * a0
    if disc >= 0:
        q = -0.5 * (a1 + math.sqrt(disc))
        return (complex(q / a2), complex(a0 / q))
    root = complex(-a1 / (2 * a2), math.sqrt(-disc) / (2 * a2))
    return (root, root.conjugate())


def buck_plant(vin: float, inductance: float, capacitance: float, esr: float, load: float,
               ramp: float) -> Plant:
    """Voltage-mode buck control-to-output, CCM, averaged model.

    ``Gvd(s) = (Vin/Vramp)·(1 + s·r·C) / (1 + s(L/R + r·C) + s²·L·C·(1 + r/R))``
    with r the capacitor's ESR and R the load; it follows from the
    averaged circuit (Vin·d driving L into R ∥ (r + 1/sC)).

    Parameters
    ----------
    vin : float
        Input voltage, V.
    inductance, capacitance : float
        H and F.
    esr : float
        Output capacitor ESR, Ω (0 allowed: no ESR zero).
    load : float
        Load resistance, Ω.
    ramp : float
        Peak-to-peak PWM ramp, V (modulator gain 1/ramp).

    Returns
    -------
    Plant

    References
    ----------
    R. W. Erickson and D. Maksimović, *Fundamentals of Power Electronics*,
    2nd ed., 2001, ch. 8 (from memory).
    """
    vin = _positive(vin, "vin")
    L = _positive(inductance, "inductance")
    C = _positive(capacitance, "capacitance")
    r = _positive(esr, "esr", allow_zero=True)
    R = _positive(load, "load")
    ramp = _positive(ramp, "ramp")
    a2, a1 = L * C * (1 + r / R), L / R + r * C
    poles = _second_order(a2, a1, 1.0)
    zeros: tuple[complex, ...] = ()
    k = vin / ramp / a2
    if r > 0:
        zeros, k = (complex(-1.0 / (r * C)),), k * r * C
    description = (f"buck {format_value(vin, 'V')} in, L {format_value(L, 'H')}, "
                   f"C {format_value(C, 'F')}, ESR {format_value(r, 'ohm')}, "
                   f"load {format_value(R, 'ohm')}, ramp {format_value(ramp, 'V')}")
    return plant_from_roots(poles, zeros, k, description=description)


def boost_plant(vin: float, *, duty: float | None = None, vout: float | None = None,
                inductance: float, capacitance: float, esr: float, load: float,
                ramp: float) -> Plant:
    """Voltage-mode boost control-to-output, CCM, with its RHP zero.

    ``Gvd(s) = Vin/((1−D)²·Vramp) · (1 − s/ωz)(1 + s·r·C) / (1 + s/(Q·ω0) + s²/ω0²)``
    with ω0 = (1−D)/√(LC), Q = (1−D)·R·√(C/L) and the right-half-plane zero
    ωz = R(1−D)²/L. The ESR enters as its zero 1/(r·C) only, the usual
    approximation for r ≪ R. Give `duty` or `vout` (then D = 1 − Vin/Vout,
    lossless).

    Returns
    -------
    Plant

    Raises
    ------
    SpecError
        If neither or both of `duty`, `vout` are given, D is outside (0, 1),
        or Vout is not above Vin.

    References
    ----------
    R. W. Erickson and D. Maksimović, *Fundamentals of Power Electronics*,
    2nd ed., 2001, ch. 8 (from memory).

    Examples
    --------
    >>> plant = boost_plant(5.0, vout=10.0, inductance=10e-6, capacitance=100e-6,
    ...                     esr=0.0, load=10.0, ramp=1.0)
    >>> [round(z.real) for z in plant.zeros]         # R(1-D)^2/L, rad/s
    [250000]
    """
    vin = _positive(vin, "vin")
    if (duty is None) == (vout is None):
        raise SpecError("a boost plant needs exactly one of 'duty' or 'vout'")
    if vout is not None:
        vout = _positive(vout, "vout")
        if vout <= vin:
            raise SpecError(f"a boost steps up: vout ({vout:g} V) must exceed vin ({vin:g} V)")
        duty = 1.0 - vin / vout
    assert duty is not None  # exactly one of duty, vout: checked above
    duty = float(duty)
    if not 0 < duty < 1:
        raise SpecError(f"duty must lie strictly between 0 and 1, not {duty!r}")
    L = _positive(inductance, "inductance")
    C = _positive(capacitance, "capacitance")
    r = _positive(esr, "esr", allow_zero=True)
    R = _positive(load, "load")
    ramp = _positive(ramp, "ramp")
    off = 1.0 - duty
    # Denominator 1 + s·L/(R(1−D)²) + s²·LC/(1−D)².
    poles = _second_order(L * C / off**2, L / (R * off**2), 1.0)
    rhp = R * off**2 / L
    zeros = [complex(rhp)]
    # k from the low-frequency gain Vin/((1−D)²·Vramp).
    k = vin / (off**2 * ramp) * (off**2 / (L * C)) * (-1.0 / rhp)
    if r > 0:
        zeros.append(complex(-1.0 / (r * C)))
        k *= r * C
    description = (f"boost {format_value(vin, 'V')} in, duty {duty:.4g}, L {format_value(L, 'H')}, "
                   f"C {format_value(C, 'F')}, ESR {format_value(r, 'ohm')}, "
                   f"load {format_value(R, 'ohm')}, ramp {format_value(ramp, 'V')}")
    return plant_from_roots(poles, zeros, k, description=description)


# -- spec tables -------------------------------------------------------------

_KEYS = {kind: set(keys) for kind, keys in PLANT_TABLES.items()}
# Converter figures: the kind whose bounds apply (placer.circuit.elements.VALUE_LIMITS),
# or a LIMITS name; esr may also be 0.
_CONVERTER_BOUNDS = {"vin": "voltage", "vout": "voltage", "inductance": "inductor",
                     "capacitance": "capacitor", "esr": "resistor", "load": "resistor",
                     "ramp": "voltage"}
#: Largest size of a plant root, rad/s (the frequency bound, 10 GHz).
_ROOT_LIMIT = 2 * math.pi * LIMITS["frequency"].high


def check_keys(table: dict[str, Any], accepted: set[str], where: str) -> None:
    """SpecError for the first key of `table` not in `accepted`, with the nearest."""
    for key in table:
        if key not in accepted:
            raise unknown_key(key, tuple(sorted(accepted)), where)


def _read(table: dict[str, Any], key: str, where: str, unit: str | None = None) -> float:
    if key not in table:
        raise SpecError(f"{where}: missing key {key!r}")
    return parse_value(table[key], unit=unit, field=f"{where}.{key}")


def _bounded(key: str, value: float, where: str) -> float:
    """A converter figure within its bounds (esr may be 0, duty is checked later)."""
    bound = _CONVERTER_BOUNDS.get(key)
    if bound is None or (key == "esr" and value == 0):
        return value
    if bound in LIMITS:
        return check_limit(value, bound, f"{where}.{key}")
    return check_part_value(bound, value, f"{where}.{key}")


def _roots_of(raw: Sequence[Any], where: str, scale: float) -> list[complex]:
    roots: list[complex] = []
    for item in raw:
        if isinstance(item, list):
            re_, im_ = (parse_value(x, field=where) for x in item)
        else:
            re_, im_ = parse_value(item, field=where), 0.0
        root = complex(re_, im_)
        if abs(root) * scale > _ROOT_LIMIT:
            raise SpecError(f"{where}: a root {brief(item)} lies beyond "
                            f"{LIMITS['frequency'].high:g} Hz")
        roots.append(root)
    # Pairs are checked in the units the user typed, so the message shows their numbers.
    return [r * scale for r in _clean_roots(roots, where)]


def plant_from_table(table: Any, *, source: str = "plant") -> Plant:
    """Read a plant table of a spec file.

    Parameters
    ----------
    table : mapping
        ``type`` in :data:`PLANT_TYPES` and its keys:

        - ``roots``: ``poles``, ``zeros`` (numbers or ``[re, im]`` pairs),
          ``units`` {"Hz", "rad/s"} (default "Hz": a root r in Hz is the
          s-plane root 2π·r), and ``gain`` (k of k·Π(s−z)/Π(s−p), s in
          rad/s) or ``dc_gain`` (the low-frequency gain).
        - ``coefficients``: ``numerator``, ``denominator`` (s in rad/s,
          highest power first).
        - ``buck``: ``vin``, ``inductance``, ``capacitance``, ``esr``
          (optional, default 0), ``load``, ``ramp``.
        - ``boost``: those plus ``vout`` or ``duty``.
    source : str
        The file and table, used in messages (for example "buck.toml: loop.plant").

    Raises
    ------
    SpecError
        Naming the key and value at fault, with the nearest accepted key.

    Examples
    --------
    >>> plant = plant_from_table({"type": "roots", "poles": [-1000], "dc_gain": 10})
    >>> round(plant.poles[0].real, 3), round(plant.low_frequency_gain, 9)
    (-6283.185, 10.0)
    """
    if not isinstance(table, dict):
        raise SpecError(f"{source}: the plant must be a table with a 'type' key")
    kind = table.get("type")
    if not isinstance(kind, str) or kind not in PLANT_TYPES:
        text = str(kind)
        close = difflib.get_close_matches(text, PLANT_TYPES, n=1) if len(text) <= 100 else []
        hint = f"; did you mean {close[0]!r}?" if close else ""
        raise SpecError(
            f"{source}.type must be one of {', '.join(PLANT_TYPES)}, not {brief(kind)}{hint}"
        )
    check_table(table, "", source=source, label="", keys=PLANT_TABLES[kind])
    if kind == "roots":
        units = table.get("units", "Hz")
        if units not in ("Hz", "rad/s"):
            raise SpecError(f"{source}.units must be 'Hz' or 'rad/s', not {brief(units)}")
        scale = 2 * math.pi if units == "Hz" else 1.0
        poles = _roots_of(table.get("poles", []), f"{source}.poles", scale)
        zeros = _roots_of(table.get("zeros", []), f"{source}.zeros", scale)
        if ("gain" in table) == ("dc_gain" in table):
            raise SpecError(f"{source}: give exactly one of 'gain' (k) or 'dc_gain'")
        description = str(table.get("description", ""))
        if "gain" in table:
            return plant_from_roots(poles, zeros, _read(table, "gain", source),
                                    description=description)
        unit_plant = plant_from_roots(poles, zeros, 1.0)
        dc_gain = _read(table, "dc_gain", source)
        if dc_gain != 0:
            check_limit(abs(dc_gain), "plant_gain", f"{source}.dc_gain", shown=table["dc_gain"])
        k = dc_gain / unit_plant.low_frequency_gain
        return plant_from_roots(poles, zeros, k, description=description)
    if kind == "coefficients":
        coefficients = []
        for key in ("numerator", "denominator"):
            raw = table.get(key)
            if not isinstance(raw, list) or not raw:
                raise SpecError(f"{source}.{key} must be a non-empty list of numbers, "
                                f"not {brief(raw)}")
            coefficients.append([parse_value(x, field=f"{source}.{key}") for x in raw])
        return plant_from_coefficients(*coefficients,
                                       description=str(table.get("description", "")))
    values = {key: _bounded(key, _read(table, key, source, PLANT_TABLES[kind][key].unit or None),
                            source)
              for key in PLANT_TABLES[kind] if key in table and key != "type"}
    values.setdefault("esr", 0.0)
    for key in ("vin", "inductance", "capacitance", "load", "ramp"):
        if key not in values:
            raise SpecError(f"{source}: missing key {key!r} for a {kind} plant")
    try:
        if kind == "buck":
            return buck_plant(**values)
        return boost_plant(values.pop("vin"), **values)
    except SpecError as error:
        raise SpecError(f"{source}: {error}") from None
