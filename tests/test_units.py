"""Units at the edges: text with units -> SI, and SI -> display text and back."""
import math
import re

import pytest
from hypothesis import given, strategies as st

from helix.units import (FOOT, INCH, UnitError, format_gradient, format_length, format_level,
                         parse_angle, parse_gradient, parse_length, parse_speed, uses_imperial)


# -- the imperial units ------------------------------------------------------------

def test_foot_and_inch_are_the_international_values():
    # Source: international yard and pound agreement, 1959
    assert FOOT == 0.3048
    assert INCH == 0.0254
    assert parse_length("1 ft") == 0.3048
    assert parse_length("1 in") == 0.0254
    assert parse_length("12 in") == pytest.approx(parse_length("1 ft"), abs=1e-12)


# -- parse_length ------------------------------------------------------------------

@pytest.mark.parametrize("text, metres", [
    ("3.15 m", 3.15),
    ("3.15m", 3.15),
    ("315 cm", 3.15),
    ("3150 mm", 3.15),
    (".5 m", 0.5),
    ("1e3 mm", 1.0),
    ("10 ft", 10 * 0.3048),
    ("10 feet", 10 * 0.3048),
    ("6 in", 6 * 0.0254),
    ("6 inches", 6 * 0.0254),
    ("10'", 10 * 0.3048),
    ('6"', 6 * 0.0254),
    ("10 ft 6 in", 3.2004),
    ("10'-6\"", 3.2004),
    ("10' 6\"", 3.2004),
    ("10'6\"", 3.2004),
    ("-10'-6\"", -3.2004),   # a level below the datum keeps its sign on the inches too
    ("-2.5 m", -2.5),
    ("3", 3.0),              # a bare number is metres
    (" 3.15 ", 3.15),
    (3, 3.0),
    (2.5, 2.5),
])
def test_parse_length_accepts(text, metres):
    assert parse_length(text) == pytest.approx(metres, abs=1e-12)


@pytest.mark.parametrize("value", [
    "3 m 2 cm",        # metric units are not mixed
    "3 m 6 in",        # nor metric with imperial
    "6 in 10 ft",      # inches before feet is no recognised form
    "10 ft 6 in 2 in",
    "10 ft 6",         # the second number has no unit
    "10 6",
    "5 km",
    "3 furlongs",
    "3-",              # a hyphen only separates feet from inches
    "10 ft-",
    "",
    "   ",
    "nan",
    "inf",
    "nan m",
    "1e400 m",         # overflows to infinity
    float("nan"),
    float("inf"),
    float("-inf"),
    True,              # YAML reads 'yes' as True
    False,
    None,
    [3],
])
def test_parse_length_refuses(value):
    with pytest.raises(UnitError) as info:
        parse_length(value)
    assert "expected a length" in str(info.value)


def test_uses_imperial():
    assert uses_imperial("10'-6\"") and uses_imperial("8 in")
    assert not uses_imperial("3.15 m") and not uses_imperial(3.15) and not uses_imperial("3")


# -- parse_gradient ----------------------------------------------------------------

def test_one_in_twelve_is_8_33_percent_and_4_76_degrees():
    # Common practice, no single source
    assert math.degrees(math.atan(1 / 12)) == pytest.approx(4.76, abs=0.005)
    assert parse_gradient("1:12") == pytest.approx(1 / 12, rel=1e-12)
    assert parse_gradient("8.33%") == pytest.approx(1 / 12, abs=5e-5)
    assert parse_gradient("4.76 deg") == pytest.approx(1 / 12, abs=1e-4)  # 4.76 is rounded
    assert parse_gradient("4.76 deg") == pytest.approx(math.tan(math.radians(4.76)), rel=1e-12)


@pytest.mark.parametrize("text, ratio", [
    ("8.33%", 0.0833),
    ("8.33 %", 0.0833),
    ("15%", 0.15),
    ("1:10", 0.1),
    ("1 : 15", 1 / 15),
    ("4.76 deg", math.tan(math.radians(4.76))),
    ("4.76°", math.tan(math.radians(4.76))),
    ("0 deg", 0.0),
])
def test_parse_gradient_accepts(text, ratio):
    assert parse_gradient(text) == pytest.approx(ratio, rel=1e-12, abs=1e-15)


@pytest.mark.parametrize("value", [
    "0.0833", "10", 0.1, 10, True,    # bare numbers: 0.1, 10 % and 1:10 are all plausible
    "1:0", "1:-5", "2:12", "1:inf",
    "90 deg", "-90 deg",
    "nan%", "inf%", "1e400%",
    "", "steep",
])
def test_parse_gradient_refuses(value):
    with pytest.raises(UnitError) as info:
        parse_gradient(value)
    assert "expected a gradient" in str(info.value)


# -- parse_speed and parse_angle ---------------------------------------------------

def test_parse_speed():
    # Source: SI Brochure, 9th ed. (2019): kilo = 1000, hour = 3600 s
    assert parse_speed("15 km/h") == pytest.approx(15000 / 3600, rel=1e-12)
    assert parse_speed("15 KM/H") == pytest.approx(15000 / 3600, rel=1e-12)
    # Source: international yard and pound agreement, 1959 (mile = 1609.344 m)
    assert parse_speed("10 mph") == pytest.approx(10 * 1609.344 / 3600, rel=1e-12)
    assert parse_speed("4.2 m/s") == 4.2


@pytest.mark.parametrize("value", ["15", 15, "15 knots", "nan km/h", "1e400 mph", "", None])
def test_parse_speed_refuses(value):
    with pytest.raises(UnitError):
        parse_speed(value)


@pytest.mark.parametrize("value, radians", [
    ("90 deg", math.pi / 2),
    ("270°", 1.5 * math.pi),
    ("90", math.pi / 2),       # a bare number is degrees
    (270, 1.5 * math.pi),
    ("1.57 rad", 1.57),
    ("-45 degrees", -math.pi / 4),
])
def test_parse_angle(value, radians):
    assert parse_angle(value) == pytest.approx(radians, rel=1e-12)


@pytest.mark.parametrize("value", [True, "nan", "inf deg", float("inf"), "east", "90 grad", None])
def test_parse_angle_refuses(value):
    with pytest.raises(UnitError):
        parse_angle(value)


# -- formatting and round trips ----------------------------------------------------

def test_format_examples():
    assert format_length(3.15) == "3.150 m"
    assert format_length(3.2004, "imperial") == "10'-6\""
    assert format_length(0.0127, "imperial") == "0'-0.5\""
    assert format_length(-0.1016, "imperial") == "-0'-4\""
    assert format_level(3.15) == "+3.150"
    assert format_level(-0.1) == "-0.100"
    assert format_level(3.2004, "imperial") == "+10'-6\""
    assert format_gradient(1 / 12) == "8.33 %"
    assert format_gradient(1 / 12, "imperial") == "8.33 % (1:12.0)"
    assert format_gradient(0.0, "imperial") == "0.00 %"


_IMPERIAL_TEXT = re.compile(r"-?(\d+)'-(\d+(?:\.5)?)\"")


@given(st.floats(min_value=0.0, max_value=100.0, allow_nan=False))
def test_imperial_length_round_trip_within_a_quarter_inch(x):
    text = format_length(x, "imperial")
    m = _IMPERIAL_TEXT.fullmatch(text)
    assert m, text
    assert float(m.group(2)) < 12, text       # never 11'-12"
    assert abs(parse_length(text) - x) <= INCH / 4 + 1e-12


@given(st.floats(min_value=-30.0, max_value=100.0, allow_nan=False))
def test_level_round_trips(x):
    assert abs(parse_length(format_level(x)) - x) <= 0.0005 + 1e-12
    assert abs(parse_length(format_level(x, "imperial")) - x) <= INCH / 4 + 1e-12
    assert abs(parse_length(format_length(x)) - x) <= 0.005 + 1e-12


@given(st.floats(min_value=0.001, max_value=0.5, allow_nan=False))
def test_gradient_round_trips(g):
    assert abs(parse_gradient(format_gradient(g)) - g) <= 0.00005 + 1e-12
    pct, ratio = re.fullmatch(r"(.+ %) \((1:.+)\)", format_gradient(g, "imperial")).groups()
    assert abs(parse_gradient(pct) - g) <= 0.00005 + 1e-12
    n = 1 / g
    assert abs(1 / parse_gradient(ratio) - n) <= 0.05 + 1e-9
