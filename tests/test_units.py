"""Tests of placer.units: reading and writing engineering notation."""

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from placer.errors import SpecError
from placer.units import (
    UNITS,
    Quantity,
    format_db,
    format_percent,
    format_value,
    parse_quantity,
    parse_value,
)

# SI prefix factors: BIPM, The International System of Units (SI Brochure),
# 9th edition 2019, table 7. Infix forms ("4k7", "1R5"): BS 1852 / IEC 60062
# resistor code (from memory). The rest is common practice, no source.
READINGS = [
    ("4k7", 4700.0, ""),
    ("4.7k", 4700.0, ""),
    ("4K7", 4700.0, ""),
    ("2.2n", 2.2e-9, ""),
    ("2n2", 2.2e-9, ""),
    ("1e-9", 1e-9, ""),
    ("1E3", 1000.0, ""),
    ("10 kHz", 1e4, "Hz"),
    ("1.5MHz", 1.5e6, "Hz"),
    ("100 mV", 0.1, "V"),
    ("-3 dB", -3.0, "dB"),
    ("5%", 0.05, "%"),
    ("0.5 %", 0.005, "%"),
    ("60 deg", 60.0, "deg"),
    ("45°", 45.0, "deg"),
    ("1R5", 1.5, "ohm"),
    ("100R", 100.0, "ohm"),
    ("4k7Ω", 4700.0, "ohm"),
    ("4k7 ohm", 4700.0, "ohm"),
    ("10 kohm", 1e4, "ohm"),
    ("10kΩ", 1e4, "ohm"),
    ("10k\u2126", 1e4, "ohm"),  # U+2126 OHM SIGN, not the Greek letter
    ("1megohm", 1e6, "ohm"),
    ("2.2uF", 2.2e-6, "F"),
    ("2.2\u00b5F", 2.2e-6, "F"),  # MICRO SIGN
    ("2.2\u03bcF", 2.2e-6, "F"),  # GREEK SMALL LETTER MU
    ("100pF", 1e-10, "F"),
    ("1 mH", 1e-3, "H"),
    ("1 rad/s", 1.0, "rad/s"),
    ("2 krad/s", 2e3, "rad/s"),
    ("3 mA", 3e-3, "A"),
    ("10 us", 1e-5, "s"),
    ("1 G", 1e9, ""),
    ("1T", 1e12, ""),
    ("1meg", 1e6, ""),
    ("1 M", 1e6, ""),  # capital M is mega
    ("1 m", 1e-3, ""),  # lowercase m alone is milli
    ("1 F", 1.0, "F"),  # capital F after a number is the farad
    ("1f", 1e-15, ""),  # lowercase f with no unit is femto
    ("1 f", 1e-15, ""),
    ("1fF", 1e-15, "F"),
    ("  +7 V\t", 7.0, "V"),
    ("\u22125 V", -5.0, "V"),  # U+2212 MINUS SIGN
    ("-2n2", -2.2e-9, ""),
    (".5", 0.5, ""),
    ("0", 0.0, ""),
]


@pytest.mark.parametrize(("text", "value", "unit"), READINGS)
def test_parse_quantity_reads_accepted_forms(text, value, unit):
    quantity = parse_quantity(text)
    assert quantity.unit == unit
    # The value is built from one decimal string, so it is the nearest float.
    assert quantity.value == value


def test_parse_quantity_takes_numbers_as_they_are():
    assert parse_quantity(4700) == Quantity(4700.0, "")
    assert parse_quantity(2.5e-9) == Quantity(2.5e-9, "")
    assert isinstance(parse_quantity(3).value, float)


BAD_STRINGS = [
    "4k7k", "", "   ", "nan", "NaN", "inf", "-inf", "abc", "1e999", "1e-999",
    "1 k Hz", "4.7k7", "1 kR", "4k7%", "1 mdB", "--3", "1.2.3", "1 mhz",
    "e5", "1e", "4k7R", "1R5k", "1e3k", "10 furlong", "k4", "1 kdeg",
]


@pytest.mark.parametrize("text", BAD_STRINGS)
def test_parse_quantity_rejects_bad_strings_naming_field_and_text(text):
    with pytest.raises(SpecError) as caught:
        parse_quantity(text, field="R7.value")
    message = str(caught.value)
    assert message.startswith("R7.value: ")
    assert repr(text) in message
    assert "accepted forms: 4k7, 4.7k, 2.2n, 2n2, 1e-9" in message
    assert "\n" not in message


@pytest.mark.parametrize("number", [float("nan"), float("inf"), -float("inf"), True])
def test_parse_quantity_rejects_non_finite_numbers(number):
    with pytest.raises(SpecError, match=r"^gain: .*not a finite number"):
        parse_quantity(number, field="gain")


def test_parse_quantity_rejects_other_types():
    with pytest.raises(SpecError, match=r"^C1: expected a number .* not list"):
        parse_quantity([1], field="C1")


def test_parse_value_checks_the_unit():
    assert parse_value("10 kHz", unit="Hz") == 1e4
    assert parse_value("10k", unit="Hz") == 1e4  # no unit is accepted
    assert parse_value("4k7Ω", unit="Ω") == 4700.0  # unit given as a spelling
    assert parse_value("-3 dB", unit="dB") == -3.0  # dB stays in dB
    assert parse_value("5%", unit="%") == 0.05  # percent becomes a fraction
    assert parse_value("5", unit="%") == 5.0  # a bare number is as written
    assert parse_value(2.2e-9, unit="F") == 2.2e-9


def test_parse_value_unit_mismatch_names_field_text_and_unit():
    with pytest.raises(SpecError) as caught:
        parse_value("10 kHz", unit="F", field="C1")
    message = str(caught.value)
    assert message.startswith("C1: ")
    assert "'10 kHz'" in message
    assert "expected F" in message


def test_parse_value_rejects_unknown_expected_unit():
    with pytest.raises(SpecError, match=r"^f0: unit must be one of .* not 'furlong'"):
        parse_value("1k", unit="furlong", field="f0")


@pytest.mark.parametrize(
    ("x", "unit", "text"),
    [
        (4750, "ohm", "4.75 k\u03a9"),
        (22e-9, "F", "22 nF"),
        (1130, "Hz", "1.13 kHz"),
        (0, "ohm", "0 \u03a9"),
        (-0.0, "V", "0 V"),
        (-4750, "ohm", "-4.75 k\u03a9"),
        (100e-12, "F", "100 pF"),
        (2.2e-6, "F", "2.2 \u00b5F"),
        (999.6, "Hz", "1 kHz"),  # rounding carries into the next prefix
        (999.4, "Hz", "999 Hz"),
        (1e-15, "F", "1 fF"),
        (1e-16, "F", "1e-16 F"),  # below femto: scientific notation
        (2.5e15, "Hz", "2.5e15 Hz"),  # above tera
        (4700, "", "4.7k"),
        (1e-3, "", "1m"),
        (1.0, "rad/s", "1 rad/s"),
        (2e-3, "S", "2 mS"),  # a unit outside UNITS is shown as given
        (-3.0103, "dB", "-3.01 dB"),
        (1234.5, "dB", "1230 dB"),  # no prefix on dB
        (45.26, "deg", "45.3\u00b0"),
        (0.05, "%", "5%"),
        (float("inf"), "Hz", "inf Hz"),
    ],
)
def test_format_value(x, unit, text):
    assert format_value(x, unit) == text


def test_format_value_digits():
    assert format_value(4712.3, "ohm", digits=2) == "4.7 k\u03a9"
    assert format_value(4712.3, "ohm", digits=5) == "4.7123 k\u03a9"
    assert format_value(47500, "ohm", digits=1) == "50 k\u03a9"
    with pytest.raises(SpecError, match="digits must be an integer"):
        format_value(1.0, digits=0)


def test_format_helpers():
    assert format_percent(0.0125) == "1.25%"
    assert format_db(-120) == "-120 dB"


FORMAT_UNITS = [unit for unit in UNITS]


@settings(max_examples=500)
@given(
    magnitude=st.floats(min_value=-20, max_value=20),
    negative=st.booleans(),
    unit=st.sampled_from(FORMAT_UNITS),
)
def test_format_then_parse_round_trips_to_three_digits(magnitude, negative, unit):
    x = (-1 if negative else 1) * 10.0**magnitude
    quantity = parse_quantity(format_value(x, unit))
    assert quantity.unit == unit
    # Three significant digits: at most half a unit in the third digit.
    assert quantity.value == pytest.approx(x, rel=5e-3)


@settings(max_examples=300)
@given(st.floats(min_value=1e-15, max_value=1e12), st.sampled_from(["ohm", "F", "Hz"]))
def test_format_with_many_digits_is_nearly_exact(x, unit):
    assert parse_value(format_value(x, unit, digits=15)) == pytest.approx(x, rel=1e-14)


@settings(max_examples=1000)
@given(st.text())
def test_parse_raises_only_spec_error_on_arbitrary_text(text):
    try:
        quantity = parse_quantity(text, field="x")
    except SpecError as error:
        assert str(error).startswith("x: ")
    else:
        assert math.isfinite(quantity.value)
        assert quantity.unit in UNITS


ALPHABET = "0123456789.eE+-kKmMunpfGTRΩµ% HzFVAsdBg°/ohmrad"


@settings(max_examples=1000)
@given(st.text(alphabet=ALPHABET, max_size=12))
def test_parse_raises_only_spec_error_on_number_like_text(text):
    try:
        quantity = parse_quantity(text)
    except SpecError:
        pass
    else:
        assert math.isfinite(quantity.value)
        assert quantity.unit in UNITS
