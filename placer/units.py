"""Engineering notation in and out: "4k7", "2.2n", "10 kHz", "-3 dB".

Strings from files and users are read by a small hand-written reader (two
regular expressions and a table of units); nothing here calls ``eval``,
``sympify`` or ``parse_expr``.

Reading rules
-------------
A quantity is an optional sign (``+``, ``-`` or the minus sign ``−``), a
number, optional whitespace, then an optional SI prefix and an optional unit.

* Numbers: ``4.7``, ``.5``, ``1e-9``, or the infix (BS 1852) form in which
  the prefix stands for the decimal point: ``4k7``, ``2n2``, ``1M5``, and
  ``1R5`` (1.5 Ω; ``R`` alone as in ``100R`` also means ohm).
* Prefixes: ``f p n u µ μ m k K M G T`` and ``meg`` (= ``M``). ``m`` is
  always milli and ``M`` always mega.
* Units: ``ohm`` (``Ω``, ``ohm``, ``ohms``, ``R``), ``F``, ``H``, ``Hz``,
  ``V``, ``A``, ``s``, ``rad/s`` (these take prefixes), and ``dB``, ``%``,
  ``deg`` (``°``) (these do not).
* Farad or femto: a capital ``F`` is the farad, a lowercase ``f`` is the
  femto prefix. So ``"1 F"`` is one farad and ``"1f"`` or ``"1 f"`` is
  1e-15 with no unit; ``"1 fF"`` is a femtofarad.
* ``%`` returns a fraction: ``"5%"`` reads as 0.05. ``dB`` and ``deg`` are
  returned as written (``"-3 dB"`` is -3.0, ``"60 deg"`` is 60.0).
"""

import math
import numbers
import re
from dataclasses import dataclass
from typing import NoReturn, SupportsFloat

from placer.errors import SpecError

__all__ = [
    "UNITS",
    "Quantity",
    "parse_quantity",
    "parse_value",
    "format_value",
    "format_percent",
    "format_db",
    "finite_or_none",
    "plural",
]

#: The normalised unit names that :func:`parse_quantity` returns.
UNITS = ("", "ohm", "F", "H", "Hz", "V", "A", "s", "dB", "%", "deg", "rad/s")

ACCEPTED_FORMS = "4k7, 4.7k, 2.2n, 2n2, 1e-9, 10 kHz, -3 dB, 5%"

# Prefix -> power of ten (BIPM SI Brochure, 9th edition, table 7).
_PREFIX_EXPONENTS = {
    "f": -15, "p": -12, "n": -9, "u": -6, "\u00b5": -6, "\u03bc": -6,
    "m": -3, "k": 3, "K": 3, "M": 6, "meg": 6, "G": 9, "T": 12,
}
# Longest first, so that "meg" is tried before "m".
_PREFIXES_BY_LENGTH = sorted(_PREFIX_EXPONENTS, key=len, reverse=True)

_UNIT_ALIASES = {
    "\u03a9": "ohm", "\u2126": "ohm", "ohm": "ohm", "ohms": "ohm",
    "Ohm": "ohm", "Ohms": "ohm", "R": "ohm",
    "F": "F", "H": "H", "Hz": "Hz", "V": "V", "A": "A", "s": "s",
    "rad/s": "rad/s",
    "dB": "dB", "db": "dB", "%": "%",
    "deg": "deg", "\u00b0": "deg", "degree": "deg", "degrees": "deg",
}
_PREFIXABLE = frozenset({"ohm", "F", "H", "Hz", "V", "A", "s", "rad/s"})
# Unit spellings allowed after a prefix; "kR" is not a way to write kilo-ohm.
_PREFIXED_ALIASES = frozenset(
    alias for alias, unit in _UNIT_ALIASES.items()
    if unit in _PREFIXABLE and alias != "R"
)

_SIGN = r"(?P<sign>[+\-\u2212]?)"
_DECIMAL = re.compile(
    _SIGN
    + r"(?:(?P<int>[0-9]+)(?:\.(?P<frac>[0-9]*))?|\.(?P<frac2>[0-9]+))"
    + r"(?:[eE](?P<exp>[+\-]?[0-9]+))?"
)
_INFIX = re.compile(
    _SIGN + r"(?P<int>[0-9]+)(?P<mark>meg|[fpnu\u00b5\u03bcmkKMGTR])(?P<frac>[0-9]+)"
)

# Output spellings: micro as the micro sign, ohm as the capital omega.
_OUTPUT_PREFIXES = {
    -15: "f", -12: "p", -9: "n", -6: "\u00b5", -3: "m",
    0: "", 3: "k", 6: "M", 9: "G", 12: "T",
}
_UNIT_SYMBOLS = {"ohm": "\u03a9", "deg": "\u00b0"}


@dataclass(frozen=True)
class Quantity:
    """A number with its unit, as read from engineering notation.

    Parameters
    ----------
    value : float
        The value in SI units (a fraction for ``%``; dB and degrees as
        written).
    unit : str
        One of :data:`UNITS`; ``""`` when the text named no unit.
    """

    value: float
    unit: str


def _fail(field: str, text: str, detail: str = "") -> NoReturn:
    shown = text if len(text) <= 60 else text[:57] + "..."
    why = f" ({detail})" if detail else ""
    raise SpecError(
        f"{field}: cannot read {shown!r} as a number{why}; "
        f"accepted forms: {ACCEPTED_FORMS}"
    )


def _read_suffix(suffix: str) -> tuple[int, str] | None:
    """Split the text after the number into (power of ten, unit), or None."""
    if suffix == "":
        return 0, ""
    if suffix in _UNIT_ALIASES:
        return 0, _UNIT_ALIASES[suffix]
    if suffix in _PREFIX_EXPONENTS:
        return _PREFIX_EXPONENTS[suffix], ""
    for prefix in _PREFIXES_BY_LENGTH:
        rest = suffix[len(prefix):]
        if suffix.startswith(prefix) and rest in _PREFIXED_ALIASES:
            return _PREFIX_EXPONENTS[prefix], _UNIT_ALIASES[rest]
    return None


def _from_number(number: numbers.Real, field: str) -> Quantity:
    if isinstance(number, bool) or not math.isfinite(number):
        raise SpecError(
            f"{field}: {number!r} is not a finite number; "
            f"accepted forms: {ACCEPTED_FORMS}"
        )
    return Quantity(float(number), "")


def parse_quantity(text: object, *, field: str = "value") -> Quantity:
    """Read engineering notation into a value and a unit.

    Parameters
    ----------
    text : str or real number
        For example ``"4k7"``, ``"2.2 nF"``, ``"10 kHz"``, ``"-3 dB"``,
        ``"5%"``. Numbers are taken as they are, with unit ``""``. See the
        module docstring for the full rules (``F`` is farad, ``f`` femto).
    field : str, optional
        Name of the field being read, used in error messages.

    Returns
    -------
    Quantity
        Value in SI units (frequencies in hertz) and a unit from
        :data:`UNITS`. Percent is returned as a fraction.

    Raises
    ------
    SpecError
        If the text is empty, not a finite number, or names an unknown unit.

    Examples
    --------
    >>> parse_quantity("4k7")
    Quantity(value=4700.0, unit='')
    >>> parse_quantity("2.2 nF")
    Quantity(value=2.2e-09, unit='F')
    >>> parse_quantity("1.5MHz")
    Quantity(value=1500000.0, unit='Hz')
    >>> parse_quantity("5%")
    Quantity(value=0.05, unit='%')
    >>> parse_quantity("1 F"), parse_quantity("1f")
    (Quantity(value=1.0, unit='F'), Quantity(value=1e-15, unit=''))
    >>> parse_quantity("4k7k", field="R1")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: R1: cannot read '4k7k' as a number (unknown unit or prefix 'k'); accepted forms: 4k7, 4.7k, 2.2n, 2n2, 1e-9, 10 kHz, -3 dB, 5%
    """
    if isinstance(text, numbers.Real):
        return _from_number(text, field)
    if not isinstance(text, str):
        raise SpecError(
            f"{field}: expected a number or a string such as '4k7', "
            f"not {type(text).__name__}"
        )
    stripped = text.strip()
    if not stripped:
        _fail(field, text, "empty")

    match = _INFIX.match(stripped)
    if match:
        mark = match["mark"]
        integer, fraction, exponent = match["int"], match["frac"], 0
        suffix = stripped[match.end():].strip()
        if suffix == "":
            unit = ""
        elif suffix in _PREFIXED_ALIASES:
            unit = _UNIT_ALIASES[suffix]
        else:
            _fail(field, text, f"unknown unit or prefix {suffix!r}")
        if mark == "R":
            if unit not in ("", "ohm"):
                _fail(field, text, f"'R' marks ohms, but the unit is {suffix!r}")
            power, unit = 0, "ohm"
        else:
            power = _PREFIX_EXPONENTS[mark]
    else:
        match = _DECIMAL.match(stripped)
        if not match:
            _fail(field, text)
        integer = match["int"] or "0"
        fraction = match["frac"] or match["frac2"] or ""
        exponent_text = match["exp"] or "0"
        # Python caps int() at 4300 digits; anything this long overflows anyway.
        if len(exponent_text.lstrip("+-")) > 6:
            _fail(field, text, "out of range")
        exponent = int(exponent_text)
        suffix = stripped[match.end():].strip()
        read = _read_suffix(suffix)
        if read is None:
            _fail(field, text, f"unknown unit or prefix {suffix!r}")
        power, unit = read
        if match["exp"] and power:
            _fail(field, text, "an exponent and a prefix together")

    if unit == "%":
        power -= 2
    # One decimal string, converted once, so "2.2n" gives exactly 2.2e-09.
    sign = "-" if match["sign"] in ("-", "\u2212") else ""
    value = float(f"{sign}{integer}.{fraction}e{exponent + power}")
    if not math.isfinite(value):
        _fail(field, text, "out of range")
    if value == 0.0 and (integer + fraction).strip("0"):
        _fail(field, text, "out of range")
    return Quantity(value, unit)


def _normalise_unit(unit: object, field: str) -> str:
    if not isinstance(unit, str):
        raise SpecError(f"{field}: unit must be one of {UNITS}, not {unit!r}")
    if unit in UNITS:
        return unit
    if unit in _UNIT_ALIASES:
        return _UNIT_ALIASES[unit]
    raise SpecError(f"{field}: unit must be one of {UNITS}, not {unit!r}")


def parse_value(text: object, *, unit: str | None = None, field: str = "value") -> float:
    """Read engineering notation into a float, checking the unit.

    Parameters
    ----------
    text : str or real number
        As for :func:`parse_quantity`.
    unit : str, optional
        Expected unit (one of :data:`UNITS`, or a spelling such as ``"Ω"``).
        The text must carry this unit or none. A bare number is read as
        written: ``"5"`` with ``unit="%"`` is 5.0, while ``"5%"`` is 0.05.
    field : str, optional
        Name of the field being read, used in error messages.

    Returns
    -------
    float
        The value in SI units; percent as a fraction; dB as written.

    Raises
    ------
    SpecError
        If the text cannot be read, or carries a unit other than `unit`.

    Examples
    --------
    >>> parse_value("10 kHz", unit="Hz")
    10000.0
    >>> parse_value("-3 dB", unit="dB")
    -3.0
    >>> parse_value("4k7", unit="ohm")
    4700.0
    >>> parse_value("10 kHz", unit="F", field="C1")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: C1: '10 kHz' is in Hz, expected F (or no unit)
    """
    quantity = parse_quantity(text, field=field)
    if unit is not None:
        expected = _normalise_unit(unit, field)
        if quantity.unit not in ("", expected):
            raise SpecError(
                f"{field}: {text!r} is in {quantity.unit}, "
                f"expected {expected or 'no unit'} (or no unit)"
            )
    return quantity.value


def _significant(x: float, digits: int) -> tuple[str, int]:
    """Round |x| to `digits` significant digits: (digit string, exponent)."""
    mantissa, exponent = f"{abs(x):.{digits - 1}e}".split("e")
    return mantissa.replace(".", ""), int(exponent)


def _place_point(digit_string: str, integer_digits: int) -> str:
    """Write digits with `integer_digits` before the point, no trailing zeros."""
    if integer_digits <= 0:
        digit_string = "0" * (1 - integer_digits) + digit_string
        integer_digits = 1
    digit_string = digit_string.ljust(integer_digits, "0")
    whole, fraction = digit_string[:integer_digits], digit_string[integer_digits:]
    fraction = fraction.rstrip("0")
    return whole + ("." + fraction if fraction else "")


def format_value(x: float, unit: str = "", *, digits: int = 3) -> str:
    """Write a number in engineering notation with an SI prefix.

    Parameters
    ----------
    x : float
        Value in SI units (frequencies in hertz). For ``unit="%"`` a
        fraction (0.05 is written "5%").
    unit : str, optional
        A unit from :data:`UNITS` or a spelling of one (``"ohm"`` is shown
        as Ω, ``"deg"`` as °). dB, % and degrees take no prefix. Any other
        string is shown as given, after the prefix.
    digits : int, optional
        Significant digits (default 3); trailing zeros are dropped.

    Returns
    -------
    str
        For example ``"4.75 kΩ"``. Values beyond the prefixes f…T fall back
        to ``"1.5e-18 F"``. Every result reads back with
        :func:`parse_quantity` (for units in :data:`UNITS`).

    Examples
    --------
    >>> format_value(4750, "ohm")
    '4.75 kΩ'
    >>> format_value(22e-9, "F")
    '22 nF'
    >>> format_value(1130, "Hz")
    '1.13 kHz'
    >>> format_value(-3.0103, "dB")
    '-3.01 dB'
    >>> format_value(4700), format_value(0, "ohm"), format_value(2e-18, "F")
    ('4.7k', '0 Ω', '2e-18 F')
    """
    if isinstance(digits, bool) or not isinstance(digits, int) or not 1 <= digits <= 17:
        raise SpecError(f"digits must be an integer from 1 to 17, not {digits!r}")
    unit = _UNIT_ALIASES.get(unit, unit)
    symbol = _UNIT_SYMBOLS.get(unit, unit)
    prefixed = unit not in ("dB", "%", "deg")
    x = float(x)
    if unit == "%":
        x = x * 100.0
    space = " " if unit not in ("", "%", "deg") else ""
    if not math.isfinite(x):
        return f"{x}{space}{symbol}"
    if x == 0.0:
        return f"0{space}{symbol}"
    sign = "-" if x < 0 else ""
    digit_string, exponent = _significant(x, digits)
    if prefixed:
        power = (exponent // 3) * 3
        if power in _OUTPUT_PREFIXES:
            number = _place_point(digit_string, exponent - power + 1)
            prefix = _OUTPUT_PREFIXES[power]
            gap = "" if unit == "" else " "
            return f"{sign}{number}{gap}{prefix}{symbol}"
    elif -4 <= exponent < 6:
        return f"{sign}{_place_point(digit_string, exponent + 1)}{space}{symbol}"
    number = _place_point(digit_string, 1)
    return f"{sign}{number}e{exponent}{space}{symbol}"


def format_percent(fraction: float, *, digits: int = 3) -> str:
    """Write a fraction as a percentage.

    Examples
    --------
    >>> format_percent(0.05), format_percent(0.0125)
    ('5%', '1.25%')
    """
    return format_value(fraction, "%", digits=digits)


def format_db(x: float, *, digits: int = 3) -> str:
    """Write a level in decibels.

    Examples
    --------
    >>> format_db(-3.0103), format_db(-120)
    ('-3.01 dB', '-120 dB')
    """
    return format_value(x, "dB", digits=digits)


def finite_or_none(x: SupportsFloat | None) -> float | None:
    """A number as a float for data output, or None for None, inf and nan.

    JSON has no infinity or NaN; "no value" is written as null.

    >>> finite_or_none(2), finite_or_none(float("inf")), finite_or_none(None)
    (2.0, None, None)
    """
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def plural(count: int, noun: str, plural_form: str | None = None) -> str:
    """A count with its noun, singular for one: "1 pole", "2 poles", "0 zeros".

    Examples
    --------
    >>> plural(1, "zero"), plural(3, "pole"), plural(0, "op-amp")
    ('1 zero', '3 poles', '0 op-amps')
    >>> plural(2, "section", "sections in cascade")
    '2 sections in cascade'
    """
    return f"{count} {noun if count == 1 else (plural_form or noun + 's')}"
