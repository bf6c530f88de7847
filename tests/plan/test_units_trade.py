"""Lengths as the trade writes them, and the current a conductor size carries."""

import math

import pytest

from deviation.units import (
    UnitError,
    allowable_current_a,
    awg_diameter_mm,
    conductor_size,
    is_bare_number,
    parse_length,
)

# 1 in = 0.0254 m and 1 ft = 12 in exactly (international yard and pound agreement, 1959):
# 2 ft 6 in = 30 in = 0.762 m.
THIRTY_INCHES_M = 30 * 0.0254


@pytest.mark.parametrize("text", ["2'-6\"", "2' 6\"", "2'6\"", "2 ft 6 in"])
def test_two_feet_six_inches_is_0_762_m_however_the_trade_writes_it(text):
    assert parse_length(text) == pytest.approx(THIRTY_INCHES_M, rel=1e-12)
    assert parse_length(text) == pytest.approx(0.762, rel=1e-12)


def test_the_dash_after_the_foot_mark_separates_and_a_leading_minus_negates_the_whole():
    # A dash read as a minus on the inches would give 2 ft - 6 in = 18 in = 0.4572 m.
    assert parse_length("2'-6\"") == pytest.approx(0.762, rel=1e-12)
    # -2'-6" is -(30 in); with the dash read as a minus on the inches it would be -0.4572 m.
    assert parse_length("-2'-6\"") == pytest.approx(-0.762, rel=1e-12)
    assert parse_length("- 2' 6\"") == pytest.approx(-0.762, rel=1e-12)


@pytest.mark.parametrize("text, metres", [
    ("6\"", 6 * 0.0254), ("2'", 2 * 0.3048), ("-6\"", -6 * 0.0254), ("2 ft", 0.6096),
    ("2 ft.", 0.6096), ("18 in.", 18 * 0.0254), ("2'6", 0.762),              # inch mark left out
    ("6''", 6 * 0.0254),                                                      # two apostrophes
    ("2\u2019-6\u201d", 0.762), ("2\u2032 6\u2033", 0.762),                   # smart quotes, primes
    ("2 feet 6 inches", 0.762), ("2ft6in", 0.762),
])
def test_feet_and_inches_alone_and_in_other_marks(text, metres):
    # Exact conversions (1959 definition): 1 in = 0.0254 m, 1 ft = 0.3048 m.
    assert parse_length(text) == pytest.approx(metres, rel=1e-12)


@pytest.mark.parametrize("text, inches", [
    ("1/2\"", 0.5), ("6 1/2\"", 6.5), ("6-1/2\"", 6.5), ("2'-6 1/2\"", 30.5), ("3/8 in", 0.375),
])
def test_fractions_of_an_inch(text, inches):
    assert parse_length(text) == pytest.approx(inches * 0.0254, rel=1e-12)


@pytest.mark.parametrize("text", ["2'--6\"", "\"6", "2'-6\"-3", "1/0\"", "2'6\"6", "6\" 2'"])
def test_malformed_feet_and_inches_are_not_lengths(text):
    with pytest.raises(UnitError, match="is not a length"):
        parse_length(text)


def test_bare_numbers_are_told_from_lengths_with_units():
    assert is_bare_number("0.025") and is_bare_number(" 25 ") and is_bare_number(0.5)
    assert not is_bare_number("25 mm") and not is_bare_number("1\"") and not is_bare_number(True)


@pytest.mark.parametrize("size, amperes", [
    # 33 CFR 183.425 Table 5, 105 °C column (allowable amperage of conductors).
    ("18 AWG", 20), ("16 AWG", 25), ("14 AWG", 35), ("12 AWG", 45), ("10 AWG", 60), ("8 AWG", 80),
    ("6 AWG", 120), ("4 AWG", 160), ("2 AWG", 210), ("1/0 AWG", 285), ("2/0 AWG", 330),
    ("3/0 AWG", 385), ("4/0 AWG", 445),
])
def test_awg_sizes_carry_the_tabulated_current(size, amperes):
    assert allowable_current_a(conductor_size(size)[1]) == amperes


def test_metric_sizes_are_read_on_the_table_by_cross_section():
    # 2.5 mm² lies between 14 AWG (35 A) and 12 AWG (45 A) by area (ASTM B258 diameters);
    # independent log-log interpolation written here.
    a14, a12 = (math.pi / 4 * awg_diameter_mm(g) ** 2 for g in (14, 12))
    expected = 35 * (2.5 / a14) ** (math.log(45 / 35) / math.log(a12 / a14))
    assert allowable_current_a(conductor_size("2.5 mm2")[1]) == pytest.approx(expected, rel=1e-12)
    assert 35 < expected < 45


def test_sizes_beyond_the_table_follow_its_end_slope():
    # 24 AWG is thinner than the table's 18 AWG: along the 18-16 AWG slope, below 20 A.
    a18, a16, a24 = (math.pi / 4 * awg_diameter_mm(g) ** 2 for g in (18, 16, 24))
    expected = 20 * (a24 / a18) ** (math.log(25 / 20) / math.log(a16 / a18))
    assert allowable_current_a(conductor_size("24 AWG")[1]) == pytest.approx(expected, rel=1e-12)

