"""Clearance distances against textbook formulas written here, and the twist model against its
source and against an ideal double helix computed with magpylib."""

import dataclasses
import math

import numpy as np
import pytest

from deviation.physics.clearance import (
    DEFAULT_CURRENTS_A,
    ClearanceRow,
    allowed_field_t,
    clearance_table,
    pair_clearance_m,
    pair_field_t,
    single_conductor_clearance_m,
    single_conductor_field_t,
    twist_attenuation,
    twisted_clearance_m,
    twisted_field_t,
)

MU0 = 4e-7 * math.pi   # pre-2019 exact value; CODATA 2018 differs by 5e-10 relative
H_T = 20e-6            # a mid-latitude horizontal field (common practice, no source)
SPACING_M = 5e-3
LAY_M = 0.05
ALLOWED_1DEG_T = H_T * math.sin(math.radians(1.0))   # NGA Pub. 226: worst deviation asin(b/H)


def two_wire_field_t(current_a, spacing_m, distance_m, orientation_rad):
    """|B| of two infinite wires along z, +I at +s/2 (cos t, sin t), -I opposite, at (d, 0, 0):
    each wire mu0 I/(2 pi r) around it (Griffiths ch. 5), summed as vectors."""
    total = np.zeros((np.size(orientation_rad), 3))
    for sign in (+1.0, -1.0):
        wire = sign * spacing_m / 2 * np.c_[np.cos(orientation_rad), np.sin(orientation_rad),
                                            np.zeros(np.size(orientation_rad))]
        r = np.array([distance_m, 0.0, 0.0]) - wire
        r2 = np.einsum("ij,ij->i", r, r)
        total += sign * MU0 * current_a / (2 * np.pi) * np.cross([0.0, 0.0, 1.0], r) / r2[:, None]
    return np.linalg.norm(total, axis=1)


def worst_deviation_deg(disturbance_t, horizontal_t, samples=2_000_001):
    """Largest deviation over every direction of a horizontal disturbance, from the definition
    delta = atan2(b_E, H + b_N) (NGA Pub. 226), by dense sampling."""
    phi = np.linspace(0.0, 2 * np.pi, samples)
    delta = np.arctan2(disturbance_t * np.sin(phi), horizontal_t + disturbance_t * np.cos(phi))
    return math.degrees(np.abs(delta).max())


# --- allowed field -------------------------------------------------------------------------------

def test_allowed_field_is_h_sin_budget():
    # NGA Pub. 226 (worst deviation asin(|b|/H)): 20 uT, 1 deg -> 20 uT sin 1 deg = 0.34905 uT.
    assert allowed_field_t(1.0, H_T) * 1e6 == pytest.approx(0.34905, abs=5e-6)


@pytest.mark.parametrize("budget_deg", [0.5, 5.0, 30.0, 60.0])
def test_allowed_field_gives_exactly_the_budget_at_the_worst_heading(budget_deg):
    # From the definition of deviation (NGA Pub. 226), sampled over every direction of b; with
    # tan in place of sin, 30 deg would come out as 35.26 deg.
    b = allowed_field_t(budget_deg, H_T)
    assert worst_deviation_deg(b, H_T) == pytest.approx(budget_deg, abs=1e-6)


def test_allowed_field_uses_sin_not_tan():
    # sin 30 deg = 1/2 exactly: 20 uT -> 10 uT (tan would give 11.547 uT).
    assert allowed_field_t(30.0, H_T) == pytest.approx(10e-6, rel=1e-12)


@pytest.mark.parametrize("budget_deg", [90.0, 120.0, 0.0, -1.0, float("nan")])
def test_budget_outside_0_to_90_degrees_is_refused(budget_deg):
    with pytest.raises(ValueError, match="more than 0 and less than 90 degrees"):
        allowed_field_t(budget_deg, H_T)


@pytest.mark.parametrize("horizontal_t", [0.0, -20e-6, float("inf")])
def test_horizontal_field_not_above_zero_is_refused(horizontal_t):
    with pytest.raises(ValueError, match="horizontal field must be more than zero"):
        allowed_field_t(1.0, horizontal_t)


# --- single conductor ----------------------------------------------------------------------------

def test_long_wire_field_matches_mu0_i_over_2pi_r():
    # Griffiths ch. 5, B = mu0 I/(2 pi r): 10 A at 0.5 m -> 4.000 uT.
    assert single_conductor_field_t(10.0, 0.5) * 1e6 == pytest.approx(4.000, rel=1e-12)


def test_single_conductor_clearance_inverts_mu0_i_over_2pi_r():
    # Griffiths ch. 5, r = mu0 I/(2 pi B): 10 A, 0.34905 uT -> 0.2 uT * 10 / 0.34905 = 5.730 m.
    # A 1/r^2 law, mu0 I/(2 pi r^2), would give sqrt(5.730) = 2.39 m instead.
    expected_m = MU0 * 10.0 / (2 * math.pi * ALLOWED_1DEG_T)
    got = single_conductor_clearance_m(10.0, ALLOWED_1DEG_T)
    assert got == pytest.approx(expected_m, rel=1e-12)
    assert got == pytest.approx(5.730, abs=5e-4)


def test_single_conductor_clearance_doubles_with_current():
    # B ~ 1/r (Griffiths ch. 5): twice the current, twice the distance (1/r^2 would give sqrt 2).
    one = single_conductor_clearance_m(7.0, ALLOWED_1DEG_T)
    assert single_conductor_clearance_m(14.0, ALLOWED_1DEG_T) == pytest.approx(2 * one, rel=1e-12)


# --- pair ----------------------------------------------------------------------------------------

def test_pair_field_matches_the_two_wire_check_value():
    # Two wires, opposite currents (Griffiths ch. 5): 10 A, s = 5 mm, d = 0.5 m -> 0.0400 uT,
    # to its printed rounding.
    assert pair_field_t(10.0, SPACING_M, 0.5) * 1e6 == pytest.approx(0.0400, abs=5e-5)


@pytest.mark.parametrize("current_a", [1.0, 10.0, 100.0, 500.0])
def test_pair_clearance_meets_the_allowed_field_at_the_worst_orientation(current_a):
    # Independent two-wire sum over 1441 orientations of the pair (0 included: the sensor in the
    # plane of the conductors). Taking the best orientation instead would put the sensor where
    # the worst one exceeds the allowed field.
    d = pair_clearance_m(current_a, SPACING_M, ALLOWED_1DEG_T)
    orientation = np.linspace(0.0, np.pi, 1441)
    field = two_wire_field_t(current_a, SPACING_M, d, orientation)
    assert field.max() <= ALLOWED_1DEG_T * (1 + 1e-12)
    assert field.max() == pytest.approx(ALLOWED_1DEG_T, rel=1e-9)
    assert field[0] == pytest.approx(ALLOWED_1DEG_T, rel=1e-9)
    # The best orientation (pair seen edge-on, theta = 90 deg) is well under it at 1 A.
    assert field[720] < field[0]


def test_pair_field_is_the_maximum_of_the_two_wire_sum_over_orientations():
    orientation = np.linspace(0.0, np.pi, 1441)
    for d in (0.004, 0.02, 0.3):
        assert pair_field_t(3.0, SPACING_M, d) == pytest.approx(
            two_wire_field_t(3.0, SPACING_M, d, orientation).max(), rel=1e-9)


def test_pair_clearance_approaches_the_line_dipole_far_away():
    # Far field mu0 I s/(2 pi d^2) (Griffiths ch. 5, two wires expanded): d_far = sqrt(mu0 I s /
    # (2 pi B)); the exact clearance is farther by d_far * (s/d)^2 / 8 to first order.
    for current_a in (100.0, 500.0, 1e4):
        d = pair_clearance_m(current_a, SPACING_M, ALLOWED_1DEG_T)
        d_far = math.sqrt(MU0 * current_a * SPACING_M / (2 * math.pi * ALLOWED_1DEG_T))
        assert d > d_far
        assert (d - d_far) / d_far == pytest.approx(SPACING_M**2 / (8 * d_far**2), rel=1e-3)


def test_pair_clearance_falls_as_the_square_root_of_current_far_away():
    # Line dipole B ~ I/d^2: 100 times the current, 10 times the distance (to (s/d)^2).
    ratio = (pair_clearance_m(1e4, SPACING_M, ALLOWED_1DEG_T)
             / pair_clearance_m(100.0, SPACING_M, ALLOWED_1DEG_T))
    assert ratio == pytest.approx(10.0, rel=1e-4)


# --- twisted pair --------------------------------------------------------------------------------

def test_twisted_pair_50db_below_pair_at_1p5_lay():
    # Moser & Spencer, IEEE Trans. EMC 1968: at 1.5 lay lengths the field is 50 dB below the
    # untwisted two-wire line.
    d = 1.5 * LAY_M
    ratio = twisted_field_t(10.0, SPACING_M, LAY_M, d) / pair_field_t(10.0, SPACING_M, d)
    assert 20 * math.log10(ratio) == pytest.approx(-50.0, abs=1e-9)
    allowed = pair_field_t(10.0, SPACING_M, d) * 10 ** (-50 / 20)
    assert twisted_clearance_m(10.0, SPACING_M, LAY_M, allowed) == pytest.approx(d, rel=1e-9)


@pytest.mark.parametrize("current_a", np.geomspace(0.01, 1e6, 41))
def test_twisted_clearance_never_nearer_than_the_50db_floor(current_a):
    # Moser & Spencer verified the fall only to 1.5 lay: nothing weaker than 50 dB below the pair
    # is assumed. Floor distance from the two-wire formula (Griffiths ch. 5) solved here.
    floor_m = math.sqrt(MU0 * current_a * SPACING_M / (2 * math.pi * ALLOWED_1DEG_T * 10**2.5)
                        + SPACING_M**2 / 4)
    got = twisted_clearance_m(current_a, SPACING_M, LAY_M, ALLOWED_1DEG_T)
    assert got >= floor_m * (1 - 1e-12)
    if floor_m >= 1.5 * LAY_M:   # beyond what was measured the floor is the answer
        assert got == pytest.approx(floor_m, rel=1e-12)
    assert got <= pair_clearance_m(current_a, SPACING_M, ALLOWED_1DEG_T)


def test_twist_attenuation_falls_as_exp_minus_2pi_d_over_p_within_1p5_lay():
    # The first harmonic of a field periodic along the axis with period p decays as
    # exp(-2 pi d/p) (separation of variables for Laplace's equation; from memory).
    d1, d2 = 0.9 * LAY_M, 1.3 * LAY_M
    ratio = twist_attenuation(d2, LAY_M) / twist_attenuation(d1, LAY_M)
    assert ratio == pytest.approx(math.exp(-2 * math.pi * 0.4), rel=1e-12)
    assert twist_attenuation(3.0 * LAY_M, LAY_M) == pytest.approx(10 ** (-2.5), rel=1e-12)
    assert twist_attenuation(0.1 * LAY_M, LAY_M) == 1.0


@pytest.mark.parametrize("current_a", [1.0, 30.0, 500.0, 1e4])
def test_twisted_clearance_is_where_the_modelled_field_meets_the_allowed(current_a):
    d = twisted_clearance_m(current_a, SPACING_M, LAY_M, ALLOWED_1DEG_T)
    assert twisted_field_t(current_a, SPACING_M, LAY_M, d) == pytest.approx(ALLOWED_1DEG_T,
                                                                            rel=1e-9)


def test_twisted_clearance_close_to_the_cable_is_the_pair_clearance():
    # Within about 0.58 lay the model is the untwisted pair itself: a loose allowed field (10 uT).
    allowed = 10e-6
    assert twisted_clearance_m(1.0, SPACING_M, LAY_M, allowed) == pytest.approx(
        pair_clearance_m(1.0, SPACING_M, allowed), rel=1e-12)


def _helix_field_max_t(spacing_m, lay_m, distance_m, lays=200, chords_per_lay=32):
    """Largest |B| of an ideal double helix, 1 A, closed far away, at distance_m from its axis,
    by magpylib's line currents. By the helix's screw symmetry the azimuth at z = 0 covers every
    position along the cable."""
    magpy = pytest.importorskip("magpylib")
    t = np.linspace(-lays / 2, lays / 2, lays * chords_per_lay + 1) * 2 * np.pi
    z = t / (2 * np.pi) * lay_m
    a = spacing_m / 2
    out = np.c_[a * np.cos(t), a * np.sin(t), z]
    back = np.c_[-a * np.cos(t), -a * np.sin(t), z]
    loop = np.vstack([out, back[::-1], out[:1]])
    source = magpy.current.Polyline(current=1.0, vertices=loop)
    phi = np.linspace(0.0, 2 * np.pi, 73)[:-1]
    points = np.c_[distance_m * np.cos(phi), distance_m * np.sin(phi), np.zeros_like(phi)]
    return np.linalg.norm(source.getB(points), axis=1).max()


def test_ideal_helix_agrees_with_the_50db_figure_at_1p5_lay():
    # Moser & Spencer 1968: 50 dB below the two-wire line at 1.5 lay; an ideal helix with
    # s/p = 0.1 by magpylib comes within 1 dB of it (49.6 dB).
    d = 1.5 * LAY_M
    ratio = _helix_field_max_t(SPACING_M, LAY_M, d) / pair_field_t(1.0, SPACING_M, d)
    assert 20 * math.log10(ratio) == pytest.approx(-50.0, abs=1.0)


@pytest.mark.parametrize("current_a", [1.0, 10.0, 100.0, 500.0])
def test_twisted_clearance_holds_for_an_ideal_double_helix(current_a):
    # At the twisted clearance an ideal helix (magpylib) is within the allowed field, but for the
    # 0.44 dB by which the source's 50 dB at 1.5 lay is below this helix's 49.56 dB (500 A lands
    # at 1.47 lay). A model with the exponential fitted to the field itself (not to the fraction
    # of the pair's field) would put 1 A at 24 mm, where the helix is 2.2 times the allowed field.
    d = twisted_clearance_m(current_a, SPACING_M, LAY_M, ALLOWED_1DEG_T)
    helix_t = current_a * _helix_field_max_t(SPACING_M, LAY_M, d)
    assert helix_t <= ALLOWED_1DEG_T * 10 ** (0.5 / 20)
    if d < 1.35 * LAY_M:   # well inside 1.5 lay the model is above the helix outright
        assert helix_t <= ALLOWED_1DEG_T


# --- table and edge cases ------------------------------------------------------------------------

def test_table_is_monotone_in_current():
    table = clearance_table(DEFAULT_CURRENTS_A, 1.0, H_T, SPACING_M, LAY_M)
    assert [row.current_a for row in table] == list(DEFAULT_CURRENTS_A)
    for column in ("single_m", "pair_m", "twisted_m"):
        values = [getattr(row, column) for row in table]
        assert all(b > a for a, b in zip(values, values[1:])), column


def test_table_rows_match_the_functions_and_order_single_pair_twisted():
    table = clearance_table([10.0, 500.0], 1.0, H_T, SPACING_M, LAY_M)
    assert table.allowed_t == pytest.approx(ALLOWED_1DEG_T, rel=1e-15)
    row = table[0]
    assert row == ClearanceRow(
        10.0, single_conductor_clearance_m(10.0, ALLOWED_1DEG_T),
        pair_clearance_m(10.0, SPACING_M, ALLOWED_1DEG_T),
        twisted_clearance_m(10.0, SPACING_M, LAY_M, ALLOWED_1DEG_T))
    for row in table:
        assert row.single_m > row.pair_m > row.twisted_m


def test_table_rows_are_frozen():
    row = clearance_table([1.0], 1.0, H_T, SPACING_M, LAY_M)[0]
    with pytest.raises(dataclasses.FrozenInstanceError):
        row.pair_m = 0.0


def test_table_to_frame_has_columns_with_units():
    pytest.importorskip("pandas")
    frame = clearance_table([1.0, 10.0], 1.0, H_T, SPACING_M, LAY_M).to_frame()
    assert list(frame.columns) == ["current_a", "single_m", "pair_m", "twisted_m"]
    assert frame["single_m"].iloc[1] == pytest.approx(5.730, abs=5e-4)   # Griffiths ch. 5


def test_zero_current_needs_no_clearance():
    assert single_conductor_clearance_m(0.0, ALLOWED_1DEG_T) == 0.0
    assert pair_clearance_m(0.0, SPACING_M, ALLOWED_1DEG_T) == 0.0
    assert twisted_clearance_m(0.0, SPACING_M, LAY_M, ALLOWED_1DEG_T) == 0.0
    row = clearance_table([0.0], 1.0, H_T, SPACING_M, LAY_M)[0]
    assert (row.single_m, row.pair_m, row.twisted_m) == (0.0, 0.0, 0.0)


def test_negative_current_gives_the_same_clearances():
    for function, args in ((single_conductor_clearance_m, ()), (pair_clearance_m, (SPACING_M,)),
                           (twisted_clearance_m, (SPACING_M, LAY_M))):
        assert function(-42.0, *args, ALLOWED_1DEG_T) == function(42.0, *args, ALLOWED_1DEG_T)


def test_array_of_currents_gives_the_same_as_one_at_a_time():
    currents = np.array([0.0, 1.0, 50.0, 1e4])
    together = twisted_clearance_m(currents, SPACING_M, LAY_M, ALLOWED_1DEG_T)
    alone = [twisted_clearance_m(i, SPACING_M, LAY_M, ALLOWED_1DEG_T) for i in currents]
    assert together == pytest.approx(alone, rel=1e-12)


@pytest.mark.parametrize("allowed_t", [0.0, -1e-7, float("nan")])
def test_allowed_field_not_above_zero_is_refused(allowed_t):
    with pytest.raises(ValueError, match="allowed field must be more than zero tesla"):
        single_conductor_clearance_m(10.0, allowed_t)
    with pytest.raises(ValueError, match="allowed field must be more than zero tesla"):
        twisted_clearance_m(10.0, SPACING_M, LAY_M, allowed_t)


@pytest.mark.parametrize("spacing_m", [0.0, -5e-3])
def test_spacing_not_above_zero_is_refused(spacing_m):
    with pytest.raises(ValueError, match="centre spacing must be more than zero"):
        pair_clearance_m(10.0, spacing_m, ALLOWED_1DEG_T)
    with pytest.raises(ValueError, match="centre spacing must be more than zero"):
        clearance_table([10.0], 1.0, H_T, spacing_m, LAY_M)


def test_lay_not_above_zero_is_refused():
    with pytest.raises(ValueError, match="lay length"):
        twisted_clearance_m(10.0, SPACING_M, 0.0, ALLOWED_1DEG_T)


def test_field_inside_the_pair_is_refused():
    with pytest.raises(ValueError, match="more than half the spacing"):
        pair_field_t(10.0, SPACING_M, SPACING_M / 2)
