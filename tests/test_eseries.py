"""Tests of placer.eseries: IEC 60063 preferred values."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from placer.errors import SpecError
from placer.eseries import (
    RELATIVE_TOLERANCE,
    SERIES_NAMES,
    Neighbours,
    ceil_values,
    check_series,
    floor_values,
    mantissas,
    nearest,
    nearest_values,
    neighbours,
    series_values,
    usual_tolerance,
)

SIZES = {"E3": 3, "E6": 6, "E12": 12, "E24": 24, "E48": 48, "E96": 96, "E192": 192}


@pytest.mark.parametrize("name", SERIES_NAMES)
def test_series_has_n_increasing_values_in_one_decade(name):
    values = mantissas(name)
    assert len(values) == SIZES[name]  # the number in the name: IEC 60063
    assert values[0] == 1.0
    assert all(a < b for a, b in zip(values, values[1:]))
    assert values[-1] < 10.0


def test_e24_values():
    # IEC 60063 E24 (from memory).
    assert mantissas("E24") == (
        1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
    )


def test_e24_departs_from_the_rounded_geometric_sequence_where_iec_does():
    # IEC 60063 E24 keeps historical values 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2
    # (from memory); rounding 10**(i/24) to two digits would give others.
    rounded = [round(10 ** (i / 24), 1) for i in range(24)]
    departures = {v for v, r in zip(mantissas("E24"), rounded) if v != r}
    assert departures == {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}


@pytest.mark.parametrize("name", ["E48", "E96", "E192"])
def test_three_digit_series_are_the_rounded_geometric_sequence_but_920(name):
    # IEC 60063: E48/E96/E192 are 10**(i/n) rounded to three digits, except
    # E192's 9.20 where rounding gives 9.19 (from memory).
    n = SIZES[name]
    rounded = [round(10 ** (i / n), 2) for i in range(n)]
    departures = [(v, r) for v, r in zip(mantissas(name), rounded) if v != r]
    assert departures == ([(9.2, 9.19)] if name == "E192" else [])


def test_e192_has_920_not_919():
    # IEC 60063 E192 (from memory).
    assert 9.2 in mantissas("E192")
    assert 9.19 not in mantissas("E192")


def test_e96_spot_values():
    # IEC 60063 E96 (from memory); 4.99, 49.9 and 1.02 are the familiar 1 %
    # resistor values (common practice).
    values = mantissas("E96")
    for value in (1.0, 1.02, 1.5, 2.49, 3.01, 4.99, 6.04, 8.06, 9.76):
        assert value in values
    assert 4.7 not in values  # E96 is not a superset of E24 (IEC 60063)


@pytest.mark.parametrize(
    ("coarse", "fine"),
    [("E3", "E6"), ("E6", "E12"), ("E12", "E24"), ("E48", "E96"), ("E96", "E192")],
)
def test_each_series_is_every_second_value_of_the_next(coarse, fine):
    # IEC 60063 subset structure (from memory).
    assert mantissas(coarse) == mantissas(fine)[::2]


def test_check_series():
    assert check_series("e96") == "E96"
    assert check_series(" E12 ") == "E12"
    for bad in ("E7", "", None, 96):
        with pytest.raises(SpecError) as caught:
            check_series(bad, field="parts.R1.series")
        message = str(caught.value)
        assert message.startswith("parts.R1.series must be one of E3, E6, E12")
        assert repr(bad) in message


def test_usual_tolerance():
    # Common practice, no single source (E3 40 %: IEC 60063 says > 20 %).
    expected = {"E3": 0.40, "E6": 0.20, "E12": 0.10, "E24": 0.05,
                "E48": 0.02, "E96": 0.01, "E192": 0.005}
    assert {name: usual_tolerance(name) for name in SERIES_NAMES} == expected


def test_series_values_spans_decades_inclusive():
    values = series_values("E6", 1e3, 1e5)
    assert values.tolist() == [
        1e3, 1.5e3, 2.2e3, 3.3e3, 4.7e3, 6.8e3,
        1e4, 1.5e4, 2.2e4, 3.3e4, 4.7e4, 6.8e4, 1e5,
    ]


def test_series_values_are_the_exact_decimal_floats():
    # Built by integer arithmetic, so each equals the literal of its value.
    assert series_values("E12", 1e-12, 1e-11).tolist() == [
        1e-12, 1.2e-12, 1.5e-12, 1.8e-12, 2.2e-12, 2.7e-12, 3.3e-12,
        3.9e-12, 4.7e-12, 5.6e-12, 6.8e-12, 8.2e-12, 1e-11,
    ]
    assert 4.99e3 in series_values("E96", 1e3, 1e4).tolist()


def test_series_values_tolerates_float_noise_at_the_bounds():
    values = series_values("E24", 4700 * (1 + 1e-12), 9100 * (1 - 1e-12))
    assert values[0] == 4700.0 and values[-1] == 9100.0


@pytest.mark.parametrize(
    ("low", "high", "words"),
    [(1e4, 1e3, "low < high"), (1e3, 1e3, "low < high"), (0.0, 1.0, "low"),
     (-1.0, 1.0, "low"), (1.0, float("inf"), "high"), (5.0, 6.0, "no E3 value")],
)
def test_series_values_rejects_bad_ranges(low, high, words):
    with pytest.raises(SpecError) as caught:
        series_values("E3", low, high)
    assert words in str(caught.value)


def test_nearest_is_nearest_in_ratio():
    # Between 1.0 and 1.1 the ratio midpoint is sqrt(1.1) = 1.0488.
    assert nearest(1.048, "E24") == 1.0
    assert nearest(1.049, "E24") == 1.1
    assert nearest(1.05, "E24") == 1.1  # linear midpoint, above ratio midpoint
    assert nearest(5000.0, "E12") == 4700.0
    assert nearest(9.6e-9, "E24") == 1e-8  # crosses into the next decade
    assert nearest(4.7e-9 * 1.01, "E12") == 4.7e-9


def test_neighbours():
    assert neighbours(5000.0, "E12") == Neighbours(4700.0, 5600.0)
    assert neighbours(9.9e3, "E24") == Neighbours(9100.0, 10000.0)
    assert neighbours(1000.0, "E6") == Neighbours(1000.0, 1000.0)
    assert neighbours(1000.0 * (1 + 1e-12), "E6") == Neighbours(1000.0, 1000.0)
    assert neighbours(0.95, "E3") == Neighbours(0.47, 1.0)


@pytest.mark.parametrize("bad", [0.0, -1.0, float("nan"), float("inf"), "4k7", True])
def test_scalar_functions_reject_bad_values_naming_the_field(bad):
    for function in (nearest, neighbours):
        with pytest.raises(SpecError) as caught:
            function(bad, "E12", field="C2")
        assert str(caught.value).startswith("C2 must be")
        assert repr(bad) in str(caught.value)


def test_vector_functions_reject_bad_values_naming_the_field():
    for function in (nearest_values, floor_values, ceil_values):
        with pytest.raises(SpecError, match=r"^R must be positive"):
            function(np.array([1.0, -2.0]), "E24", field="R")
        with pytest.raises(SpecError, match=r"^series must be one of"):
            function(np.array([1.0]), "E25")


def test_vector_functions_keep_shape():
    values = np.array([[1.04e3, 5e3], [9.6e3, 2.2e3]])
    assert nearest_values(values, "E24").tolist() == [[1e3, 5.1e3], [1e4, 2.2e3]]
    assert floor_values(values, "E12").tolist() == [[1e3, 4.7e3], [8.2e3, 2.2e3]]
    assert ceil_values(values, "E12").tolist() == [[1.2e3, 5.6e3], [1e4, 2.2e3]]


positive = st.floats(min_value=1e-14, max_value=1e12)


@settings(max_examples=200)
@given(
    values=arrays(np.float64, st.integers(1, 50), elements=positive),
    name=st.sampled_from(SERIES_NAMES),
)
def test_vector_snapping_agrees_with_the_listed_range(values, name):
    listed = series_values(name, 1e-15, 1e13)
    below = floor_values(values, name)
    above = ceil_values(values, name)
    near = nearest_values(values, name)
    tol = RELATIVE_TOLERANCE
    np.testing.assert_array_equal(
        below, listed[np.searchsorted(listed, values * (1 + tol), "right") - 1])
    np.testing.assert_array_equal(
        above, listed[np.searchsorted(listed, values * (1 - tol), "left")])
    assert np.all((near == below) | (near == above))
    # nearest in ratio: never farther (in log terms) than the other neighbour
    chosen = np.abs(np.log(near / values))
    other = np.abs(np.log(np.where(near == below, above, below) / values))
    assert np.all(chosen <= other + 1e-12)


@settings(max_examples=100)
@given(name=st.sampled_from(SERIES_NAMES), low=st.floats(1e-13, 1e10))
def test_series_values_are_fixed_points_of_snapping(name, low):
    values = series_values(name, low, low * 1000)
    for function in (nearest_values, floor_values, ceil_values):
        np.testing.assert_array_equal(function(values, name), values)
    np.testing.assert_array_equal(nearest_values(values * (1 + 1e-10), name), values)
