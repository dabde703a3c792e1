"""Engineering values: parsing and printing (selector.units).

Outside references: IEC 60062:2016 (letter-and-digit code and tolerance letters) [S]; SI prefixes
(BIPM SI Brochure, 9th ed., table 7) [S].
"""

from __future__ import annotations

import math

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from selector.errors import BadValueError
from selector.ranges import RANGES, check_count, check_range
from selector.units import (
    format_percent,
    format_value,
    iec60062_code,
    parse_tolerance,
    parse_value,
)

# text, quantity asked, expected SI value
PARSE_CASES = [
    ("330n", None, 330e-9),
    ("330 nF", "F", 330e-9),
    ("0.33uF", "F", 0.33e-6),
    ("0.33µF", "F", 0.33e-6),  # micro sign U+00B5
    ("0.33μF", "F", 0.33e-6),  # Greek mu U+03BC
    ("12mA", "A", 12e-3),
    ("2.2k", "ohm", 2.2e3),
    ("1.5kΩ", "ohm", 1.5e3),
    ("220 ohm", "ohm", 220.0),
    ("1e-6", None, 1e-6),
    ("1.23457e-05", None, 1.23457e-05),
    ("100nf", "F", 100e-9),
    ("305 VAC", "V", 305.0),
    ("50Hz", "Hz", 50.0),
    ("20 ms", "s", 20e-3),
    ("1M", "ohm", 1e6),
    ("1M", None, 1e6),
]

# IEC 60062:2016 clause 4 examples of the letter-and-digit code [S]
IEC60062_CASES = [
    ("R47", "ohm", 0.47),
    ("4R7", "ohm", 4.7),
    ("470R", "ohm", 470.0),
    ("4K7", "ohm", 4.7e3),
    ("2K2", "ohm", 2.2e3),
    ("2k2", "ohm", 2.2e3),
    ("4M7", "ohm", 4.7e6),
    ("4n7", "F", 4.7e-9),
    ("1u0", "F", 1.0e-6),
    ("0u33", "F", 0.33e-6),
    ("p47", "F", 0.47e-12),
]


@pytest.mark.parametrize(("text", "quantity", "expected"), PARSE_CASES + IEC60062_CASES)
def test_parse_value(text, quantity, expected):
    assert parse_value(text, quantity) == pytest.approx(expected, rel=1e-12)


def test_capital_m_is_milli_where_mega_cannot_occur():
    # documented rule (selector.units): no megafarad or megaampere parts exist in this trade
    assert parse_value("4M7", "F") == pytest.approx(4.7e-3)
    assert parse_value("12MA", "A") == pytest.approx(12e-3)
    assert parse_value("4M7", "ohm") == pytest.approx(4.7e6)
    assert parse_value("4m7", "ohm") == pytest.approx(4.7e-3)


@pytest.mark.parametrize(
    ("letter", "fraction"),
    # IEC 60062:2016 table 1, tolerance code letters [S]
    [
        ("B", 0.001),
        ("C", 0.0025),
        ("D", 0.005),
        ("F", 0.01),
        ("G", 0.02),
        ("J", 0.05),
        ("K", 0.10),
        ("M", 0.20),
    ],
)
def test_tolerance_letters(letter, fraction):
    assert parse_tolerance(letter) == pytest.approx(fraction)


@pytest.mark.parametrize(("text", "fraction"), [("5%", 0.05), ("±10 %", 0.10), ("1", 0.01)])
def test_tolerance_percent(text, fraction):
    assert parse_tolerance(text) == pytest.approx(fraction)


@pytest.mark.parametrize(
    ("text", "quantity", "fragment"),
    [
        ("abc", None, "'abc'"),
        ("", "F", "empty"),
        ("330nA", "F", "in A"),
        ("4R7", "F", "letter R marks ohms"),
        ("12 parsecs", None, "unknown unit"),
        ("1.2.3", None, "'1.2.3'"),
    ],
)
def test_bad_values_quote_the_text_and_show_an_example(text, quantity, fragment):
    with pytest.raises(BadValueError) as info:
        parse_value(text, quantity)
    message = str(info.value)
    assert fragment in message
    assert "e.g." in message or "like" in message or "R marks" in message


def test_bad_tolerance():
    with pytest.raises(BadValueError, match="tolerance"):
        parse_tolerance("Q")


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [
        (330e-9, "F", "330 nF"),
        (4.7e3, "ohm", "4.7 kΩ"),
        (12e-3, "A", "12 mA"),
        (45.4e3, "ohm", "45.4 kΩ"),
        (1e6, "ohm", "1 MΩ"),
        (0.0, "V", "0 V"),
        (230.0, "V", "230 V"),
    ],
)
def test_format_value(value, unit, text):
    assert format_value(value, unit) == text


def test_format_value_ascii():
    assert format_value(4.7e-6, "F", ascii=True) == "4.7 uF"
    assert format_value(4.7e3, "ohm", ascii=True) == "4.7 kohm"


@pytest.mark.parametrize(
    ("value", "unit", "code"),
    # IEC 60062:2016 clause 4 examples [S]
    [
        (0.47, "ohm", "R47"),
        (4.7, "ohm", "4R7"),
        (4.7e3, "ohm", "4k7"),
        (4.7e6, "ohm", "4M7"),
        (4.7e-9, "F", "4n7"),
        (330e-9, "F", "330n"),
    ],
)
def test_iec60062_code(value, unit, code):
    assert iec60062_code(value, unit) == code


_SI_VALUES = st.floats(min_value=1e-12, max_value=1e9, allow_nan=False, allow_infinity=False)


@given(_SI_VALUES, st.sampled_from(["F", "ohm", "V", "A", "W", "s", "J", "Hz"]))
def test_parse_of_format_round_trips(value, unit):
    # printing keeps 6 significant digits, so the round trip holds to that precision; values
    # outside the quantity's physical range are refused instead (selector.ranges)
    bounds = RANGES[unit]
    assume(bounds.low <= value <= bounds.high * 0.99)
    text = format_value(value, unit, digits=6)
    assert math.isclose(parse_value(text, unit), value, rel_tol=1e-5)


@given(
    st.floats(min_value=0.01, max_value=1e9, allow_nan=False, allow_infinity=False),
    st.sampled_from(["F", "ohm"]),
)
def test_iec60062_code_round_trips(value, unit):
    assume(value <= RANGES[unit].high * 0.99)  # above it parse_value refuses (selector.ranges)
    code = iec60062_code(value, unit)
    assert math.isclose(parse_value(code, unit), float(f"{value:.3g}"), rel_tol=1e-9)


@pytest.mark.parametrize(
    ("letter", "text"),
    [("B", "0.1 %"), ("C", "0.25 %"), ("D", "0.5 %"), ("F", "1 %"), ("G", "2 %"), ("J", "5 %"),
     ("K", "10 %"), ("M", "20 %")],
)  # fmt: skip
def test_format_percent_prints_the_iec60062_tolerances(letter, text):
    # IEC 60062 tolerance letters and their percentages [S] (DOMAIN.md table 5)
    assert format_percent(parse_tolerance(letter)) == text
    assert parse_tolerance(format_percent(parse_tolerance(letter))) == parse_tolerance(letter)


def test_format_percent_signs_and_digits():
    assert format_percent(0.496, signed=True) == "+49.6 %"
    assert format_percent(-0.012, signed=True) == "-1.2 %"
    assert format_percent(0.0, signed=True) == "0 %"
    assert format_percent(12.345) == "1230 %"  # three significant digits, no exponent
    assert format_percent(0.07999999999999989) == "8 %"  # binary noise rounded away
    assert format_percent(float("nan")) == "nan"


# --- the physical ranges (selector/ranges.py; issue 14) ---------------------------------------


@pytest.mark.parametrize(
    "text, quantity",
    [
        ("1e999", "A"),  # overflows to infinity
        ("1e999", None),
        ("-1e999", "V"),
        ("1e9F", "F"),  # a gigafarad
        ("1e-320", "F"),  # a denormal
        ("1e30", None),
        ("-5", "ohm"),  # a negative resistance is no part
        ("2e5", "V"),
    ],
)
def test_parse_value_refuses_non_finite_and_out_of_range(text, quantity):
    with pytest.raises(BadValueError, match="not a finite number|out of range|negative") as exc:
        parse_value(text, quantity)
    assert "\n" not in str(exc.value)


@pytest.mark.parametrize("value", [float("nan"), float("inf"), -float("inf")])
def test_parse_value_refuses_non_finite_floats(value):
    with pytest.raises(BadValueError, match="not a finite number"):
        parse_value(value, "F")


@pytest.mark.parametrize(
    "text", ["nan", "inf", "-inf", "-5", "-5%", "100", "100%", "200 %", "1e999"]
)
def test_parse_tolerance_refuses_nan_inf_negative_and_100_percent(text):
    with pytest.raises(BadValueError, match="tolerance"):
        parse_tolerance(text)


def test_parse_tolerance_keeps_the_iec60062_letters_and_percentages():
    # IEC 60062:2016 tolerance letters [S]
    assert parse_tolerance("M") == 0.2 and parse_tolerance("99.9%") == pytest.approx(0.999)
    assert parse_tolerance("0") == 0.0


def test_every_range_has_a_reason_and_ordered_bounds():
    for quantity, bounds in RANGES.items():
        assert bounds.reason and 0 <= bounds.low < bounds.high, quantity
    assert check_range(0.0, "F") == 0.0  # zero is allowed: callers needing > 0 say so


def test_check_count_refuses_huge_and_fractional_counts():
    assert check_count(12) == 12 and check_count(3.0) == 3
    for bad in (10**5000, 1e30, float("nan"), 2.5, -1):
        with pytest.raises(BadValueError):
            check_count(bad, "Qty")
