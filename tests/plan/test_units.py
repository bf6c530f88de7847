"""Lengths with units and conductor sizes."""

import pytest

from deviation.units import UnitError, awg_diameter_mm, conductor_size, format_length, parse_length


@pytest.mark.parametrize("text, unit, metres", [
    ("1.2 m", "m", 1.2), ("35 cm", "m", 0.35), ("850 mm", "m", 0.85), ("4 ft", "m", 1.2192),
    ("18 in", "m", 0.4572), ("2'6\"", "m", 0.762), ("2 ft 6 in", "m", 0.762), ("-3'0\"", "m", -0.9144),
    ("2.5", "ft", 0.762), (12, "in", 0.3048), ("  7  mm ", "m", 0.007), ("1e3 mm", "m", 1.0),
])
def test_lengths_with_units(text, unit, metres):
    # Exact conversions: 1 ft = 0.3048 m, 1 in = 0.0254 m (international yard and pound, 1959).
    assert parse_length(text, unit) == pytest.approx(metres, rel=1e-12)


@pytest.mark.parametrize("text", ["twelve", "1.2 parsecs", "", "1,2", "nan", "inf m"])
def test_bad_lengths_say_what_was_expected(text):
    with pytest.raises(UnitError, match="length"):
        parse_length(text)


def test_awg_diameters_from_astm_b258():
    # ASTM B258: d = 0.127 mm x 92^((36 - n)/39); 10 AWG 2.59 mm, 4/0 AWG 11.68 mm.
    assert awg_diameter_mm(10) == pytest.approx(2.588, abs=5e-4)
    assert awg_diameter_mm(-3) == pytest.approx(11.684, abs=5e-4)


@pytest.mark.parametrize("text, outer_mm", [
    ("10 AWG", 4.3), ("2/0 AWG", 13.5), ("4/0 awg", 16.3), ("16 mm2", 8.0), ("2.5 mm²", 3.7),
])
def test_default_spacing_is_one_insulated_diameter(text, outer_mm):
    # Insulated diameters from memory (±15 %).
    assert conductor_size(text)[2] * 1000 == pytest.approx(outer_mm)


def test_insulated_diameters_are_consistent_with_the_bare_conductor():
    # Not the table against itself: every insulated diameter must exceed the bare conductor of
    # ASTM B258 (AWG formula) or of the area pi d^2/4 (metric), grow with the size, and leave an
    # insulation wall of a plausible thickness (0.3 to 3.6 mm over the solid-equivalent conductor,
    # which includes the looser lay of fine stranding: from memory, for single-core
    # cable of these sizes).
    from deviation.units import AWG_OUTER_DIAMETER_MM, METRIC_OUTER_DIAMETER_MM

    awg = sorted(AWG_OUTER_DIAMETER_MM.items(), reverse=True)        # 16 AWG first: growing
    metric = sorted(METRIC_OUTER_DIAMETER_MM.items())
    for rows, bare_of in ((awg, awg_diameter_mm), (metric, lambda a: 2 * (a / 3.141592653589793)
                                                   ** 0.5)):
        outers = [outer for _, outer in rows]
        assert outers == sorted(outers)
        for size, outer in rows:
            wall = (outer - bare_of(size)) / 2
            assert 0.3 <= wall <= 3.6, (size, wall)


def test_sizes_between_table_rows_are_interpolated():
    # 11 AWG lies between 12 AWG (3.8 mm) and 10 AWG (4.3 mm).
    assert 3.8 < conductor_size("11 AWG")[2] * 1000 < 4.3


def test_bad_size():
    with pytest.raises(UnitError, match="conductor size"):
        conductor_size("thick")


def test_lengths_shown_in_the_plans_unit_system():
    assert format_length(0.25, "m") == "250 mm"
    assert format_length(2.5, "m") == "2.50 m"
    assert format_length(0.3048, "ft") == "12.0 in"
    assert format_length(3.048, "ft") == "10.00 ft"


def test_small_and_zero_lengths_keep_their_digits():
    assert format_length(0.0, "m") == "0 mm"
    assert format_length(0.0043, "m") == "4.3 mm"
    assert format_length(0.0038, "ft") == "0.15 in"
