"""IEC 60063 preferred values E3…E192: tables, ranges and snapping.

The tables are typed in from IEC 60063 rather than computed, because the
standard departs from the rounded geometric sequence: E24 has 2.7, 3.0, 3.3,
3.6, 3.9, 4.3, 4.7 and 8.2 where rounding 10**(i/24) gives 2.6, 2.9, 3.2,
3.5, 3.8, 4.2, 4.6 and 8.3, and E192 has 9.20 where rounding gives 9.19.
E12, E6 and E3 are every second value of the series above them, and so are
E96 (of E192) and E48 (of E96).

"Nearest" means nearest in ratio (on a logarithmic scale), the sense in
which the series is evenly spaced: between 1.0 and 1.1 the boundary is
sqrt(1.1) = 1.0488…, not 1.05. Ties go to the lower value.

A value within a relative 1e-9 of a series value counts as on the series,
so floating-point noise such as 4700.000000001 snaps to 4700 both ways.

References
----------
IEC 60063:2015, "Preferred number series for resistors and capacitors".
"""

import math
import numbers
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from placer.errors import SpecError

__all__ = [
    "SERIES_NAMES",
    "RELATIVE_TOLERANCE",
    "Neighbours",
    "check_series",
    "mantissas",
    "series_values",
    "nearest",
    "neighbours",
    "usual_tolerance",
    "nearest_values",
    "floor_values",
    "ceil_values",
]

SERIES_NAMES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")

#: Relative distance within which a value counts as on the series.
RELATIVE_TOLERANCE = 1e-9

# Mantissas as integers: tenths for E3…E24, hundredths for E48…E192.
_E3 = (10, 22, 47)
_E6 = (10, 15, 22, 33, 47, 68)
_E12 = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)
_E24 = (
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
    33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
)
_E48 = (
    100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169,
    178, 187, 196, 205, 215, 226, 237, 249, 261, 274, 287, 301,
    316, 332, 348, 365, 383, 402, 422, 442, 464, 487, 511, 536,
    562, 590, 619, 649, 681, 715, 750, 787, 825, 866, 909, 953,
)
_E96 = (
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130,
    133, 137, 140, 143, 147, 150, 154, 158, 162, 165, 169, 174,
    178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232,
    237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309,
    316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412,
    422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549,
    562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732,
    750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976,
)
_E192 = (
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114,
    115, 117, 118, 120, 121, 123, 124, 126, 127, 129, 130, 132,
    133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152,
    154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176,
    178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203,
    205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234,
    237, 240, 243, 246, 249, 252, 255, 258, 261, 264, 267, 271,
    274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309, 312,
    316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361,
    365, 370, 374, 379, 383, 388, 392, 397, 402, 407, 412, 417,
    422, 427, 432, 437, 442, 448, 453, 459, 464, 470, 475, 481,
    487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
    562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642,
    649, 657, 665, 673, 681, 690, 698, 706, 715, 723, 732, 741,
    750, 759, 768, 777, 787, 796, 806, 816, 825, 835, 845, 856,
    866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988,
)

# name -> (integer mantissas, the power of ten they are scaled by)
_TABLES = {
    "E3": (_E3, 1), "E6": (_E6, 1), "E12": (_E12, 1), "E24": (_E24, 1),
    "E48": (_E48, 2), "E96": (_E96, 2), "E192": (_E192, 2),
}

# Common practice, no single source: the tolerance each series is sold in.
# IEC 60063 ties E3 to tolerances wider than 20 %; 40 % is the usual figure.
_USUAL_TOLERANCE = {
    "E3": 0.40, "E6": 0.20, "E12": 0.10, "E24": 0.05,
    "E48": 0.02, "E96": 0.01, "E192": 0.005,
}

# Exact powers of ten: float(10**k) is correctly rounded, and exact to 1e22.
_POW10 = np.array([float(10**k) for k in range(309)])
_DECADE_LIMIT = 290


@dataclass(frozen=True)
class Neighbours:
    """The series values on either side of a value.

    Parameters
    ----------
    below : float
        Largest series value not above the value.
    above : float
        Smallest series value not below the value; equal to `below` when the
        value is on the series.
    """

    below: float
    above: float


def check_series(name: object, *, field: str = "series") -> str:
    """Return the canonical series name, or raise SpecError.

    Parameters
    ----------
    name : str
        One of {"E3", "E6", "E12", "E24", "E48", "E96", "E192"}, in either
        case.
    field : str, optional
        Name of the field being checked, used in the message.

    Examples
    --------
    >>> check_series("e96")
    'E96'
    >>> check_series("E7")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: series must be one of E3, E6, E12, E24, E48, E96, E192, not 'E7'
    """
    if isinstance(name, str) and name.strip().upper() in _TABLES:
        return name.strip().upper()
    raise SpecError(
        f"{field} must be one of {', '.join(SERIES_NAMES)}, not {name!r}"
    )


def mantissas(name: str) -> tuple[float, ...]:
    """The series values of one decade, from 1 up to (not including) 10.

    Examples
    --------
    >>> mantissas("E6")
    (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
    >>> len(mantissas("E192")), mantissas("E192")[185]
    (192, 9.2)
    """
    table, scale = _TABLES[check_series(name)]
    return tuple(n / 10**scale for n in table)


def usual_tolerance(name: str) -> float:
    """The part tolerance a series is usually sold in, as a fraction.

    E6 20 %, E12 10 %, E24 5 %, E48 2 %, E96 1 %, E192 0.5 %, and E3 40 %
    (IEC 60063 only says "wider than 20 %"). Common practice.

    Examples
    --------
    >>> usual_tolerance("E96")
    0.01
    """
    return _USUAL_TOLERANCE[check_series(name)]


def _scaled(integers: NDArray[np.int64], powers: ArrayLike) -> NDArray[np.float64]:
    """integers * 10**powers, correctly rounded when |powers| <= 22."""
    powers = np.asarray(powers)
    # One of the two factors is 1.0, so this is a single rounding.
    up = _POW10[np.clip(powers, 0, None)]
    down = _POW10[np.clip(-powers, 0, None)]
    return integers * up / down


def _extended(name: str) -> tuple[NDArray[np.int64], int, NDArray[np.float64]]:
    """One decade with a value on each side, as (integers, scale, floats)."""
    table, scale = _TABLES[check_series(name)]
    # Scale one step finer, so that the last value of the decade below fits.
    integers = np.array(
        [table[-1]] + [n * 10 for n in table] + [table[0] * 100, table[1] * 100],
        dtype=np.int64,
    )
    return integers, scale + 1, integers / 10 ** (scale + 1)


_EXTENDED = {name: _extended(name) for name in SERIES_NAMES}


def _positive_array(values: ArrayLike, field: str) -> NDArray[np.float64]:
    try:
        array = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise SpecError(f"{field} must be positive numbers, not {values!r}") from None
    if not np.all(np.isfinite(array) & (array > 0)):
        raise SpecError(f"{field} must be positive and finite, got {values!r}")
    if np.any(array < 10.0**-_DECADE_LIMIT) or np.any(array > 10.0**_DECADE_LIMIT):
        raise SpecError(
            f"{field} must lie within 1e-{_DECADE_LIMIT}…1e{_DECADE_LIMIT}, "
            f"got {values!r}"
        )
    return array


def _decompose(
    values: ArrayLike, name: str, field: str
) -> tuple[NDArray[np.float64], NDArray[np.int64], NDArray[np.float64]]:
    """Split values into (array, decade, approximate mantissa in [1, 10))."""
    array = _positive_array(values, field)
    decade = np.floor(np.log10(array)).astype(np.int64)
    # The extended table absorbs the error of log10 at decade boundaries.
    mantissa = np.where(
        decade >= 0,
        array / _POW10[np.clip(decade, 0, None)],
        array * _POW10[np.clip(-decade, 0, None)],
    )
    return array, decade, mantissa


def _floor(decade: NDArray[np.int64], mantissa: NDArray[np.float64],
           name: str) -> NDArray[np.float64]:
    integers, scale, table = _EXTENDED[name]
    index = np.searchsorted(table, mantissa * (1 + RELATIVE_TOLERANCE), "right") - 1
    return _scaled(integers[index], decade - scale)


def _ceil(decade: NDArray[np.int64], mantissa: NDArray[np.float64],
          name: str) -> NDArray[np.float64]:
    integers, scale, table = _EXTENDED[name]
    index = np.searchsorted(table, mantissa * (1 - RELATIVE_TOLERANCE), "left")
    return _scaled(integers[index], decade - scale)


def floor_values(values: ArrayLike, name: str, *, field: str = "values") -> NDArray[np.float64]:
    """Largest series value at or below each value (vectorised).

    Parameters
    ----------
    values : array_like of float
        Positive finite values, any shape.
    name : str
        Series name, see :func:`check_series`.
    field : str, optional
        Name used in error messages.

    Returns
    -------
    numpy.ndarray
        Same shape as `values`. A value within a relative 1e-9 above a series
        value maps to that value.

    Examples
    --------
    >>> floor_values([4800.0, 4700.0, 0.99], "E12").tolist()
    [4700.0, 4700.0, 0.82]
    """
    name = check_series(name)
    _, decade, mantissa = _decompose(values, name, field)
    return _floor(decade, mantissa, name)


def ceil_values(values: ArrayLike, name: str, *, field: str = "values") -> NDArray[np.float64]:
    """Smallest series value at or above each value (vectorised).

    Parameters and returns as for :func:`floor_values`.

    Examples
    --------
    >>> ceil_values([4800.0, 4700.0, 8.3e-9], "E12").tolist()
    [5600.0, 4700.0, 1e-08]
    """
    name = check_series(name)
    _, decade, mantissa = _decompose(values, name, field)
    return _ceil(decade, mantissa, name)


def nearest_values(values: ArrayLike, name: str, *, field: str = "values") -> NDArray[np.float64]:
    """Nearest series value (in ratio) to each value (vectorised).

    Parameters and returns as for :func:`floor_values`; ties go to the lower
    value.

    Examples
    --------
    >>> nearest_values([1.04e3, 1.05e3, 9.6e3], "E24").tolist()
    [1000.0, 1100.0, 10000.0]
    """
    name = check_series(name)
    array, decade, mantissa = _decompose(values, name, field)
    below = _floor(decade, mantissa, name)
    above = _ceil(decade, mantissa, name)
    # Compare ratios, x/below against above/x, without forming x**2.
    return np.where(array / below > above / array, above, below)


def _positive_scalar(value: object, field: str) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise SpecError(f"{field} must be a positive number, not {value!r}")
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise SpecError(f"{field} must be positive and finite, not {value!r}")
    return value


def nearest(value: float, name: str, *, field: str = "value") -> float:
    """The series value nearest (in ratio) to `value`.

    Examples
    --------
    >>> nearest(5000.0, "E12"), nearest(5200.0, "E12")
    (4700.0, 5600.0)
    """
    value = _positive_scalar(value, field)
    return float(nearest_values(np.array([value]), name, field=field)[0])


def neighbours(value: float, name: str, *, field: str = "value") -> Neighbours:
    """The series values just below and just above `value`.

    Examples
    --------
    >>> neighbours(5000.0, "E12")
    Neighbours(below=4700.0, above=5600.0)
    >>> neighbours(4.7e-9, "E6")
    Neighbours(below=4.7e-09, above=4.7e-09)
    """
    value = _positive_scalar(value, field)
    array = np.array([value])
    return Neighbours(
        float(floor_values(array, name, field=field)[0]),
        float(ceil_values(array, name, field=field)[0]),
    )


def series_values(name: str, low: float, high: float) -> NDArray[np.float64]:
    """All series values from `low` to `high` inclusive, across decades.

    Parameters
    ----------
    name : str
        Series name, see :func:`check_series`.
    low, high : float
        Positive bounds, ``low < high``; a value within a relative 1e-9 of a
        bound is included.

    Returns
    -------
    numpy.ndarray
        The values in ascending order.

    Raises
    ------
    SpecError
        If the bounds are not positive and increasing, or no value lies
        between them.

    Examples
    --------
    >>> series_values("E6", 1e3, 1e4).tolist()
    [1000.0, 1500.0, 2200.0, 3300.0, 4700.0, 6800.0, 10000.0]
    """
    name = check_series(name)
    low = _positive_scalar(low, "low")
    high = _positive_scalar(high, "high")
    if not low < high:
        raise SpecError(f"{name} range needs low < high, got low={low!r}, high={high!r}")
    _positive_array([low, high], "range")
    table, scale = _TABLES[name]
    first = math.floor(math.log10(low)) - 1
    last = math.floor(math.log10(high)) + 1
    decades = np.arange(first, last + 1)
    integers = np.array(table, dtype=np.int64)
    values = _scaled(integers[None, :], decades[:, None] - scale).ravel()
    keep = (values >= low * (1 - RELATIVE_TOLERANCE)) & (
        values <= high * (1 + RELATIVE_TOLERANCE)
    )
    if not np.any(keep):
        raise SpecError(f"no {name} value lies between {low!r} and {high!r}")
    return values[keep]
