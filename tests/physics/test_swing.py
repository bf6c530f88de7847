"""The swing's coefficients, switch-on changes and Gauss's deflection, against published formulas,
independent formulas written here and magpylib."""

import math

import numpy as np
import pytest

from deviation.physics import heading
from deviation.physics.swing import (
    SwingFitError,
    change_tolerance_deg,
    curve_deg,
    deflection_from_moment_deg,
    deviation_on_compass_heading_deg,
    field_coefficients_deg,
    fit_coefficients,
    moment_from_deflection_am2,
    reading_change_deg,
)

MU0 = 4e-7 * math.pi
EIGHT = np.arange(0.0, 360.0, 45.0)          # N, NE, E, SE, S, SW, W, NW

# NGA, Handbook of Magnetic Compass Adjustment (formerly Pub. 226), art. 501, the worked
# deviation curve: deviations on the ship's compass headings N, NE, ... NW, east positive.
PUB226_DEVIATIONS = np.array([10.5, 20.0, 11.5, -1.2, -5.5, -8.0, -12.5, -6.8])


def handbook_eight_point(d):
    """The handbook's eight-point formulas for the approximate coefficients (Pub. 226 ch. V;
    Bowditch, American Practical Navigator, magnetic compass adjustment). A is the mean (Pub. 226
    art. 501); E = ((N + S) - (E + W))/4 as also defined in the McGraw-Hill Dictionary of
    Scientific and Technical Terms, "coefficient E"; B, C, D from memory of the same chapter."""
    n, ne, e, se, s, sw, w, nw = d
    return np.array([d.mean(), (e - w) / 2, (n - s) / 2, ((ne + sw) - (se + nw)) / 4,
                     ((n + s) - (e + w)) / 4])


def test_least_squares_on_eight_headings_gives_the_handbook_a_d_e_exactly():
    fit = fit_coefficients(EIGHT, PUB226_DEVIATIONS)
    a, b, c, d, e = handbook_eight_point(PUB226_DEVIATIONS)
    # Handbook formulas on the handbook's data: A = 8.0/8 = 1.0, D = 20/4 = 5.0, E = 6/4 = 1.5.
    assert (a, d, e) == pytest.approx((1.0, 5.0, 1.5))
    assert fit.coefficients_deg[[0, 3, 4]] == pytest.approx([a, d, e], abs=1e-12)
    # B and C: least squares also uses the quadrantal readings, the handbook only E-W and N-S;
    # on this curve they differ by less than a tenth of a degree (B 12.0, C 8.0 by the formulas).
    assert fit.coefficients_deg[1] == pytest.approx(b, abs=0.1)
    assert fit.coefficients_deg[2] == pytest.approx(c, abs=0.1)


def test_handbook_formulas_and_least_squares_agree_on_a_five_term_curve():
    known = np.array([1.0, 12.0, 8.0, 5.0, 1.5])        # Pub. 226 art. 501 coefficients
    readings = curve_deg(known, EIGHT)
    assert handbook_eight_point(readings) == pytest.approx(known, abs=1e-12)
    assert fit_coefficients(EIGHT, readings).coefficients_deg == pytest.approx(known, abs=1e-12)


def test_a_third_harmonic_moves_the_handbook_b_but_not_the_least_squares_b():
    # sin 3psi is orthogonal to sin psi on eight equal steps; E - W sees it (sin 270 - sin 810).
    readings = 2.0 * np.sin(np.radians(3 * EIGHT))
    assert fit_coefficients(EIGHT, readings).coefficients_deg[1] == pytest.approx(0.0, abs=1e-12)
    assert handbook_eight_point(readings)[1] == pytest.approx(-2.0)


def test_swing_fit_recovers_known_coefficients_from_noisy_readings():
    rng = np.random.default_rng(226)
    known = np.array([0.5, -3.2, 2.1, 0.8, -0.4])
    headings = np.arange(0.0, 360.0, 15.0)
    sigma = 0.2
    readings = curve_deg(known, headings) + rng.normal(0.0, sigma, headings.size)
    fit = fit_coefficients(headings, readings)
    assert np.all(np.abs(fit.coefficients_deg - known) < 3 * fit.standard_error_deg)
    # Least squares on n equal steps: var(A) = sigma^2/n, var(B..E) = 2 sigma^2/n (the columns
    # are orthogonal with sums of squares n and n/2; independent formula).
    n = headings.size
    expected = sigma * np.sqrt(np.array([1, 2, 2, 2, 2]) / n)
    assert fit.standard_error_deg == pytest.approx(expected, rel=0.35)
    assert fit.rms_residual_deg == pytest.approx(sigma, rel=0.35)


def test_five_headings_fit_exactly_and_four_are_refused():
    known = np.array([0.2, 1.0, -0.5, 0.3, 0.1])
    five = np.array([0.0, 70.0, 150.0, 220.0, 300.0])
    fit = fit_coefficients(five, curve_deg(known, five))
    assert fit.coefficients_deg == pytest.approx(known, abs=1e-9)
    assert fit.standard_error_deg is None and fit.max_residual_deg < 1e-9
    with pytest.raises(SwingFitError, match="4 distinct headings; at least 5"):
        fit_coefficients([0, 90, 180, 270, 0], [1, 2, 3, 4, 1])
    # Five distinct headings within 40 degrees fix the five numbers only loosely: refused.
    with pytest.raises(SwingFitError, match="bunch together"):
        fit_coefficients([0, 10, 20, 30, 40], [1, 2, 3, 4, 5])


def test_small_field_gives_b_p_over_h_and_c_q_over_h():
    # Pub. 226, semicircular deviation: B = P/H, C = Q/H in radians, P forward, Q starboard.
    h = 20e-6
    b = np.array([0.2e-6, -0.1e-6, 0.5e-6])           # forward 0.2, starboard 0.1 (y is port)
    p_over_h, q_over_h = math.degrees(0.2 / 20), math.degrees(0.1 / 20)
    for on in ("compass", "magnetic"):
        coefficients = field_coefficients_deg(b, h, on)
        assert coefficients[1] == pytest.approx(p_over_h, rel=1e-3)
        assert coefficients[2] == pytest.approx(q_over_h, rel=1e-3)
    assert heading.semicircular_coefficients_deg(b, h) == pytest.approx((p_over_h, q_over_h))


def test_vessel_field_on_compass_headings_has_no_a_d_e_even_when_large():
    # H sin(delta) = P sin(zeta') + Q cos(zeta') on compass headings: only odd harmonics.
    h, b = 20e-6, np.array([6e-6, 5e-6, 1e-6])
    on_compass = field_coefficients_deg(b, h, "compass")
    assert np.abs(on_compass[[0, 3, 4]]).max() < 1e-9
    # On magnetic headings the same field has a quadrantal part of second order (a wrong heading
    # convention would show here).
    assert np.abs(field_coefficients_deg(b, h, "magnetic")[[3, 4]]).max() > 0.5


def test_compass_heading_deviation_matches_atan2_at_the_same_ship_head():
    h, b = 20e-6, np.array([6e-6, -9e-6, 2e-6])
    magnetic = np.arange(0.0, 360.0, 7.5)
    delta = heading.deviation_deg(b, h, magnetic)
    compass = heading.compass_from_magnetic(magnetic, delta)     # Compass = Magnetic - Deviation
    assert deviation_on_compass_heading_deg(b, h, compass) == pytest.approx(delta, abs=1e-9)


def test_overwhelming_field_has_no_coefficients():
    assert field_coefficients_deg(np.array([25e-6, 0, 0]), 20e-6) is None


def test_forward_current_below_compass_heading_north_lowers_the_reading():
    # Right-hand rule, derived here: a forward current (+x) in a long cable d below the compass
    # gives B = mu0 I/(2 pi d) along x x z = -y, to starboard (y is port). Heading north,
    # starboard is east: easterly deviation atan(B/H), and Compass = Magnetic - Deviation, so
    # the reading falls by that much (the card turns clockwise seen from above).
    current, d, h = 10.0, 0.5, 20e-6
    size = MU0 * current / (2 * math.pi * d)
    direction = np.cross([1.0, 0.0, 0.0], [0.0, 0.0, 1.0])
    b = size * direction
    assert direction.tolist() == [0.0, -1.0, 0.0]
    assert reading_change_deg(np.zeros(3), b, h, 0.0) == pytest.approx(
        -math.degrees(math.atan2(size, h)), rel=1e-12)
    # Heading east, starboard is south: the field lies along H and the needle stays.
    assert reading_change_deg(np.zeros(3), b, h, 90.0) == pytest.approx(0.0, abs=1e-12)
    # Heading south, starboard is west: westerly deviation, the reading rises.
    assert reading_change_deg(np.zeros(3), b, h, 180.0) > 0


def test_reading_change_is_exact_from_a_disturbed_start():
    # The change is the difference of two exact deviations, not the size of the added field.
    h = 20e-6
    start, added = np.array([3e-6, 2e-6, 0.0]), np.array([0.0, -4e-6, 0.0])
    psi = 35.0
    expected = -(heading.deviation_deg(start + added, h, psi)
                 - heading.deviation_deg(start, h, psi))
    assert reading_change_deg(start, start + added, h, psi) == pytest.approx(expected, abs=1e-12)
    assert abs(expected - reading_change_deg(np.zeros(3), added, h, psi)) > 0.1


@pytest.mark.parametrize("position, factor", [("end-on", 2.0), ("broadside", 1.0)])
def test_gauss_deflection_moment_matches_magpylib_dipole(position, factor):
    # Gauss's deflection method (Encyclopaedia Britannica 11th ed., "Magnetism, Terrestrial"):
    # tan(delta) = mu0 m/(2 pi r^3 H) end-on, mu0 m/(4 pi r^3 H) broadside. Frame here: x north,
    # y east; H along +x; the moment east-west.
    magpylib = pytest.importorskip("magpylib")
    m, r, h = 0.5, 0.4, 20e-6
    place = (0.0, r, 0.0) if position == "end-on" else (r, 0.0, 0.0)
    b = magpylib.misc.Dipole(moment=(0.0, m, 0.0), position=place).getB((0.0, 0.0, 0.0))
    deflection = math.degrees(math.atan2(b[1], h + b[0]))
    assert abs(np.hypot(b[0], b[1])) == pytest.approx(factor * 1e-7 * m / r ** 3, rel=1e-9)
    assert moment_from_deflection_am2(deflection, r, h, position) == pytest.approx(m, rel=1e-9)
    assert deflection_from_moment_deg(m, r, h, position) == pytest.approx(abs(deflection),
                                                                          rel=1e-9)


def test_tolerance_is_the_larger_of_resolution_and_fraction():
    # 0.5 degree resolution and 25 % (common practice, no source): max(0.5, 0.25 |p|).
    assert change_tolerance_deg([1.0, -4.0, 0.0], 0.5, 0.25) == pytest.approx([0.5, 1.0, 0.5])
