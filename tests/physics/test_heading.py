"""Deviation from a vessel-fixed disturbance: signs, exact maxima, heel, reference states."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from deviation.physics import heading as hd
from deviation.physics.field import segment_field

HEADINGS = np.linspace(0, 360, 36001)


def test_current_forward_below_compass_pulls_east_on_north_heading():
    # Right-hand rule (derivation, Griffiths ch. 5): current flowing forward in a cable directly
    # below the compass makes a field to starboard; heading north, that is easterly deviation.
    b = segment_field([[-50, 0, -0.3]], [[50, 0, -0.3]], [10.0], [[0, 0, 0]])[0]
    assert b[1] < 0                                            # to starboard (y is port)
    assert hd.deviation_deg(b, 20e-6, 0.0) > 0                 # east
    assert hd.deviation_deg(b, 20e-6, 180.0) < 0               # south: west


def test_reversed_current_flips_deviation():
    # Exactly, reversing the disturbance is turning the vessel half round: delta(-b, psi) =
    # delta(b, psi + 180) (derivation); to first order in |b|/H it flips the sign (NGA Pub. 226).
    b = np.array([1e-6, -2e-6, 0.5e-6])
    psi = HEADINGS[::100]
    np.testing.assert_allclose(hd.deviation_deg(-b, 20e-6, psi),
                               hd.deviation_deg(b, 20e-6, psi + 180), atol=1e-12)
    small = b / 100
    np.testing.assert_allclose(hd.deviation_deg(-small, 20e-6, psi),
                               -hd.deviation_deg(small, 20e-6, psi), atol=2e-4)


def test_4ut_on_20ut_gives_11p54_degrees():
    # asin(|b|/H), b = 4 uT, H = 20 uT -> 11.54 deg (derived; NGA Pub. 226, semicircular deviation).
    b = np.array([0.0, 4.0, 0.0])
    assert hd.max_deviation_deg(b, 20.0) == pytest.approx(11.54, abs=0.005)
    sampled = np.abs(hd.deviation_deg(b, 20.0, HEADINGS)).max()
    assert hd.max_deviation_deg(b, 20.0) == pytest.approx(sampled, abs=1e-6)


def test_semicircular_b_and_c_are_p_and_q_over_h():
    # NGA Pub. 226, semicircular deviation: delta ~ B sin(psi) + C cos(psi), B = P/H, C = Q/H.
    p_forward, q_starboard, h = 0.02, -0.015, 20.0
    b = np.array([p_forward, -q_starboard, 0.0])
    coeff_b, coeff_c = hd.semicircular_coefficients_deg(b, h)
    assert coeff_b == pytest.approx(math.degrees(p_forward / h))
    assert coeff_c == pytest.approx(math.degrees(q_starboard / h))
    psi = np.radians(HEADINGS)
    first_order = coeff_b * np.sin(psi) + coeff_c * np.cos(psi)
    # Second order in |b|/H = 1.25e-3: within 1e-3 deg.
    assert np.abs(hd.deviation_deg(b, h, HEADINGS) - first_order).max() < 1e-3


@pytest.mark.parametrize("true, variation, magnetic, deviation, compass", [
    (152, -5, 157, -7, 164),      # worked row: Magnetic = Compass + Deviation, True = Magnetic + Variation (Bowditch, American Practical Navigator, ch. on compass error)
    (98, -10, 108, 4, 104),       # worked row, same rules (Bowditch)
])
def test_heading_conversions_worked_rows(true, variation, magnetic, deviation, compass):
    assert hd.magnetic_from_true(true, variation) == magnetic
    assert hd.compass_from_magnetic(magnetic, deviation) == compass
    assert hd.magnetic_from_compass(compass, deviation) == magnetic
    assert hd.true_from_magnetic(magnetic, variation) == true


def test_heeling_error_largest_north_south_zero_east_west():
    # Heeling error (NGA Pub. 226, chapter on heeling error): a vertical vessel field heeled gives deviation largest
    # on north and south headings and none on east and west.
    b = np.array([0.0, 0.0, -2.0])                 # vessel field straight down
    on = {psi: float(hd.deviation_deg(b, 20.0, psi, heel_deg=15.0)) for psi in (0, 90, 180, 270)}
    assert abs(on[90]) < 1e-12 and abs(on[270]) < 1e-12
    assert abs(on[0]) == pytest.approx(abs(on[180]))
    assert abs(on[0]) == pytest.approx(math.degrees(math.atan2(2 * math.sin(math.radians(15)), 20)))


def test_heeled_maximum_is_exact_over_the_heel_range():
    b = np.array([0.3, 1.0, 3.0])
    exact = hd.max_heeled_deviation_deg(b, 20.0, 20.0)
    sampled = max(hd.max_deviation_deg(b, 20.0, h) for h in np.linspace(-20, 20, 40001))
    assert exact == pytest.approx(sampled, abs=1e-8)
    assert exact >= hd.max_deviation_deg(b, 20.0)


def test_overwhelmed_sensor_is_reported_not_given_a_number():
    b = np.array([25.0, 0.0, 0.0])
    assert hd.is_overwhelmed(b, 20.0)
    assert hd.max_deviation_deg(b, 20.0) == 180.0


def test_change_from_reference_matches_dense_sampling():
    b_state, b_reference = np.array([1.0, 2.0, 0.5]), np.array([-0.5, 0.3, 2.0])
    dense = np.abs(hd.deviation_deg(b_state, 20.0, HEADINGS)
                   - hd.deviation_deg(b_reference, 20.0, HEADINGS)).max()
    assert hd.max_change_deg(b_state, b_reference, 20.0) == pytest.approx(dense, abs=1e-6)
    assert hd.max_change_deg(b_state, b_state, 20.0) == 0.0


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(-8, 8), min_size=6, max_size=6))
def test_change_never_below_dense_sampling(values):
    b_state, b_reference = np.array(values[:3]), np.array(values[3:])
    dense = np.abs(((hd.deviation_deg(b_state, 20.0, HEADINGS[::10])
                     - hd.deviation_deg(b_reference, 20.0, HEADINGS[::10])) + 180) % 360 - 180).max()
    assert hd.max_change_deg(b_state, b_reference, 20.0) >= dense - 1e-9


def test_fraction_of_total_field():
    assert hd.fraction_of_total_field(np.array([3.0, 4.0, 0.0]), 50.0) == pytest.approx(0.1)


def test_change_finds_the_higher_of_two_lobes():
    # Regression (found by hypothesis): the best 5-degree sample sat on the lower lobe.
    b_state, b_reference = np.array([7.0, 0.125, 0.0]), np.array([0.25, 0.0, 0.0])
    dense = np.abs(hd.deviation_deg(b_state, 20.0, HEADINGS)
                   - hd.deviation_deg(b_reference, 20.0, HEADINGS)).max()
    assert hd.max_change_deg(b_state, b_reference, 20.0) == pytest.approx(dense, abs=1e-6)
