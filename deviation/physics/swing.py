"""After installation: the compass swing, switch-on changes and Gauss's deflection, on arrays.

Pure functions, SI units inside, degrees at the edges; no files, no printing. Frames and signs as
in :mod:`deviation.physics.heading`: vessel frame x forward, y to port, z up; deviation east positive;
Magnetic = Compass + Deviation.

The approximate coefficients
----------------------------
A swing gives the deviation on several headings; the deviation curve is written as

    delta(psi) = A + B sin(psi) + C cos(psi) + D sin(2 psi) + E cos(2 psi)

(A constant, B and C semicircular, D and E quadrantal), psi the compass heading (the handbook's
choice) or the magnetic heading. Least squares over five or more headings gives the five
numbers; on the eight cardinal and quadrantal headings A, D and E are exactly the handbook's
eight-point formulas, and B and C are too whenever the curve has no higher odd harmonics (the
handbook takes B from east and west only, C from north and south only).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..constants import MU0
from . import heading

#: Names of the approximate coefficients, in the order the arrays here hold them.
COEFFICIENTS = ("A", "B", "C", "D", "E")

#: Fewest distinct headings that fix five coefficients.
MIN_HEADINGS = 5

#: Smallest ratio of the fit's singular values accepted: five headings spread over less than
#: about 80 degrees fall below it (the fit would multiply reading errors about a thousandfold).
BUNCHED_RATIO = 1e-3

#: Headings sampled when a predicted curve is fitted [count]: every 0.1 degree.
CURVE_SAMPLES = 3600


def wrap_deg(angle_deg):
    """An angle difference brought into [-180, 180) degrees."""
    return (np.asarray(angle_deg, dtype=float) + 180.0) % 360.0 - 180.0


def design_matrix(heading_deg) -> np.ndarray:
    """Columns 1, sin psi, cos psi, sin 2psi, cos 2psi of the coefficient fit, shape (n, 5)."""
    psi = np.radians(np.asarray(heading_deg, dtype=float))
    return np.stack([np.ones_like(psi), np.sin(psi), np.cos(psi), np.sin(2 * psi),
                     np.cos(2 * psi)], axis=-1)


def curve_deg(coefficients_deg, heading_deg) -> np.ndarray:
    """The deviation A + B sin psi + C cos psi + D sin 2psi + E cos 2psi [deg]."""
    return design_matrix(heading_deg) @ np.asarray(coefficients_deg, dtype=float)


@dataclass(frozen=True)
class CoefficientFit:
    """The five approximate coefficients fitted to a swing, with what the curve leaves.

    coefficients_deg : (5,) A, B, C, D, E [deg]
    standard_error_deg : (5,) or None, from the scatter about the curve (None with five headings,
        where the curve passes through every reading)
    residual_deg : (n,) reading minus curve [deg]
    """

    coefficients_deg: np.ndarray
    standard_error_deg: np.ndarray | None
    residual_deg: np.ndarray
    headings: int

    @property
    def rms_residual_deg(self) -> float:
        return float(np.sqrt(np.mean(self.residual_deg ** 2)))

    @property
    def max_residual_deg(self) -> float:
        return float(np.max(np.abs(self.residual_deg)))

    def as_dict(self) -> dict[str, float]:
        return {name: float(v) for name, v in zip(COEFFICIENTS, self.coefficients_deg)}


class SwingFitError(ValueError):
    """Headings that cannot fix the five coefficients (too few, or too few distinct ones)."""


def fit_coefficients(heading_deg, deviation_deg) -> CoefficientFit:
    """Least-squares fit of the approximate coefficients to a swing.

    Parameters
    ----------
    heading_deg : (n,) array [deg]
        Ship's head for each reading: compass heading (the handbook's convention) or magnetic.
    deviation_deg : (n,) array [deg]
        Deviation observed there, east positive.

    Returns
    -------
    CoefficientFit

    Raises
    ------
    SwingFitError
        With fewer than five distinct headings, or headings that leave a coefficient undetermined.

    Notes
    -----
    Minimises the sum of squared differences between the readings and
    :math:`A + B\\sin\\psi + C\\cos\\psi + D\\sin 2\\psi + E\\cos 2\\psi`. On n equally spaced
    headings the five columns are orthogonal, so each coefficient is a discrete Fourier
    coefficient; on the eight cardinal and quadrantal headings that gives A = mean,
    D = (NE - SE + SW - NW)/4 and E = (N - E + S - W)/4, the handbook's formulas. Its B and C use
    all eight readings where the handbook's (E - W)/2 and (N - S)/2 use two; the two agree for a
    curve of these five terms. Standard errors assume independent readings of equal scatter,
    estimated from the residuals with n - 5 degrees of freedom.

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (formerly Pub. 226), chapter V, estimation of
    approximate coefficients; N. Bowditch, *The American Practical Navigator* (NGA Pub. 9),
    chapter on magnetic compass adjustment.
    """
    psi = np.asarray(heading_deg, dtype=float).ravel()
    delta = np.asarray(deviation_deg, dtype=float).ravel()
    if psi.shape != delta.shape:
        raise SwingFitError(f"{psi.size} headings and {delta.size} deviations")
    distinct = np.unique(np.round(np.mod(psi, 360.0), 6)).size
    if distinct < MIN_HEADINGS:
        raise SwingFitError(f"{distinct} distinct heading{'s' if distinct != 1 else ''}; at least "
                            f"{MIN_HEADINGS} are needed to fix the five coefficients")
    x = design_matrix(psi)
    # Five distinct headings always fix the five numbers (a trigonometric polynomial of degree
    # two has at most four zeros), but headings bunched together fix them so loosely that
    # reading errors are multiplied hundreds of times: refuse them.
    singular = np.linalg.svd(x, compute_uv=False)
    if singular[-1] < BUNCHED_RATIO * singular[0]:
        raise SwingFitError("these headings bunch together and fix the five coefficients only "
                            "loosely; add headings spread round the card (e.g. the eight "
                            "cardinal and quadrantal ones)")
    coefficients, *_ = np.linalg.lstsq(x, delta, rcond=None)
    residual = delta - x @ coefficients
    error = None
    if psi.size > MIN_HEADINGS:
        variance = float(residual @ residual) / (psi.size - MIN_HEADINGS)
        error = np.sqrt(variance * np.diag(np.linalg.inv(x.T @ x)))
    return CoefficientFit(coefficients, error, residual, int(psi.size))


def deviation_on_compass_heading_deg(b_vessel, horizontal, compass_deg):
    """Deviation of a vessel-fixed field at a compass heading, level, exactly [deg].

    Parameters
    ----------
    b_vessel : (..., 3) array
        Disturbance in the vessel frame (x forward, y port, z up), unit of ``horizontal``.
    horizontal : float
        The Earth's horizontal field H.
    compass_deg : float or array [deg]

    Returns
    -------
    array [deg]; NaN on compass headings the needle cannot take (where |b_h| >= H)

    Notes
    -----
    The needle lies along H + b_h. With P the forward and Q the starboard part of b_h and
    :math:`\\zeta'` the compass heading, resolving across the needle gives
    :math:`H \\sin\\delta = P\\sin\\zeta' + Q\\cos\\zeta'`, so
    :math:`\\delta = \\arcsin((P\\sin\\zeta' + Q\\cos\\zeta')/H)`: on compass headings a
    vessel-fixed field gives only odd harmonics (no A, D or E), and B = P/H, C = Q/H to first
    order.

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (formerly Pub. 226), semicircular deviation.
    """
    b = np.asarray(b_vessel, dtype=float)
    forward, starboard = b[..., 0], -b[..., 1]
    zeta = np.radians(compass_deg)
    ratio = (forward * np.sin(zeta) + starboard * np.cos(zeta)) / horizontal
    with np.errstate(invalid="ignore"):
        return np.degrees(np.where(np.abs(ratio) <= 1.0, np.arcsin(np.clip(ratio, -1, 1)), np.nan))


def field_coefficients_deg(b_vessel, horizontal, on="compass", samples=CURVE_SAMPLES):
    """The approximate coefficients of the deviation curve a vessel-fixed field gives [deg].

    Parameters
    ----------
    b_vessel : (3,) array
        Disturbance in the vessel frame, unit of ``horizontal``.
    horizontal : float
    on : "compass" or "magnetic"
        The heading the curve is written against.
    samples : int
        Equally spaced headings the exact curve is sampled at.

    Returns
    -------
    (5,) array [deg], or None where |b_h| >= H (the needle can point anywhere)

    Notes
    -----
    The exact level curve (:func:`deviation_on_compass_heading_deg`, or
    :func:`deviation.physics.heading.deviation_deg` on magnetic headings) is sampled on a uniform
    grid and fitted by least squares: on a uniform grid that is the Fourier projection onto the
    five terms, the coefficients the curve really has to that order.
    """
    b = np.asarray(b_vessel, dtype=float)
    if heading.horizontal_disturbance(b) >= horizontal:
        return None
    grid = np.arange(samples) * (360.0 / samples)
    if on == "compass":
        delta = deviation_on_compass_heading_deg(b, horizontal, grid)
    elif on == "magnetic":
        delta = heading.deviation_deg(b, horizontal, grid)
    else:
        raise ValueError(f'on must be "compass" or "magnetic", not {on!r}')
    return fit_coefficients(grid, delta).coefficients_deg


def turning_coefficients_deg(matrix, fixed, horizontal, vertical, on="compass",
                             samples=CURVE_SAMPLES):
    r"""The approximate coefficients of the deviation curve of a disturbance that turns with the
    Earth's field, b = fixed + M F_v (steel items), level [deg].

    Parameters
    ----------
    matrix : (3, 3) array
        The steel's summed matrix (b = M F_v), vessel frame.
    fixed : (3,) array
        The vessel-fixed part, unit of ``horizontal``.
    horizontal, vertical : float
        H and Z (down positive).
    on : "compass" or "magnetic"
    samples : int

    Returns
    -------
    (5,) array [deg], or None where the needle may point anywhere

    Notes
    -----
    The exact curve on magnetic headings ψ is Smith's
    (:func:`deviation.physics.soft_iron.deviation_curve_deg`). On a compass heading ζ the
    magnetic heading is the fixed point ψ = ζ + δ(ψ), found by iterating, which converges
    while |dδ/dψ| < 1 (a needle that can take every compass heading); the curve is then fitted
    like a measured one (:func:`fit_coefficients`), so the coefficients compare like with like
    with a swing's.
    """
    from . import soft_iron

    grid = np.arange(samples) * (360.0 / samples)
    extreme = soft_iron.max_deviation_over_headings(matrix, fixed, horizontal, vertical)
    if bool(extreme.overwhelmed):
        return None

    def curve(psi):
        return soft_iron.deviation_curve_deg(matrix, fixed, horizontal, vertical, psi)

    if on == "magnetic":
        return fit_coefficients(grid, curve(grid)).coefficients_deg
    if on != "compass":
        raise ValueError(f'on must be "compass" or "magnetic", not {on!r}')
    psi = grid.copy()
    for _ in range(200):
        moved = grid + curve(psi)
        if np.max(np.abs(moved - psi)) < 1e-12:
            break
        psi = moved
    else:
        return None                            # the needle cannot take every compass heading
    return fit_coefficients(grid, curve(psi)).coefficients_deg


def reading_change_deg(b_before, b_after, horizontal, heading_deg):
    """Change of the compass reading when the field at the compass goes from one value to another,
    the vessel lying still on a magnetic heading [deg], positive when the reading rises.

    Parameters
    ----------
    b_before, b_after : (..., 3) arrays
        Disturbance in the vessel frame before and after, unit of ``horizontal``.
    horizontal : float
    heading_deg : float [deg]
        Magnetic heading the vessel lies on.

    Returns
    -------
    array [deg] in [-180, 180)

    Notes
    -----
    Compass = Magnetic - Deviation, and the magnetic heading does not change at the berth, so
    the reading changes by :math:`-(\\delta_{after} - \\delta_{before})`, with
    :math:`\\delta = \\operatorname{atan2}(b_E, H + b_N)` exact at that heading. A rising reading
    means the card turns anticlockwise seen from above (the card's north moves west).
    """
    before = heading.deviation_deg(b_before, horizontal, heading_deg)
    after = heading.deviation_deg(b_after, horizontal, heading_deg)
    return -wrap_deg(after - before)


#: Gauss's two positions: the factor k in tan(delta) = k mu0 m / (4 pi r^3 H).
GAUSS_POSITIONS = {"end-on": 2.0, "broadside": 1.0}


def moment_from_deflection_am2(deflection_deg, distance_m, horizontal_t, position="end-on"):
    """Magnetic moment of an item from the deflection it gives a compass needle [A m^2].

    Parameters
    ----------
    deflection_deg : float or array [deg]
        How far the needle moved when the item was brought up, its moment pointing east-west
        (across the needle's undisturbed direction). Its size counts; the sign is ignored.
    distance_m : float or array [m]
        From the needle's pivot to the item's centre.
    horizontal_t : float [T]
        The horizontal field where the needle is.
    position : "end-on" or "broadside"
        End-on: the needle lies on the item's magnetic axis (item due east or west of it);
        broadside: on the item's perpendicular bisector (item due north or south of it).

    Returns
    -------
    float or array [A m^2]

    Notes
    -----
    The item is taken as a point dipole, so the distance should be several times its size.
    End-on its field is :math:`\\mu_0 2m/(4\\pi r^3)` along the axis, broadside
    :math:`\\mu_0 m/(4\\pi r^3)`; across H it turns the needle by
    :math:`\\tan\\delta = \\mu_0 m/(2\\pi r^3 H)` end-on and :math:`\\mu_0 m/(4\\pi r^3 H)`
    broadside, so :math:`m = 2\\pi r^3 H \\tan\\delta/\\mu_0` and
    :math:`4\\pi r^3 H \\tan\\delta/\\mu_0`.

    References
    ----------
    C. F. Gauss, *Intensitas vis magneticae terrestris ad mensuram absolutam revocata* (1832),
    the deflection experiments; restated with the "end-on" and "broadside-on" positions in the
    *Encyclopaedia Britannica*, 11th ed. (1911), article "Magnetism, Terrestrial", deflection
    observations.
    """
    factor = _gauss_factor(position)
    tangent = np.tan(np.radians(np.abs(deflection_deg)))
    moment = 4 * np.pi * np.asarray(distance_m, dtype=float) ** 3 * horizontal_t * tangent / (
        factor * MU0)
    return float(moment) if np.ndim(moment) == 0 else moment


def deflection_from_moment_deg(moment_am2, distance_m, horizontal_t, position="end-on"):
    """The needle's deflection by a point dipole across H, end-on or broadside [deg]
    (the inverse of :func:`moment_from_deflection_am2`)."""
    factor = _gauss_factor(position)
    tangent = factor * MU0 * np.asarray(moment_am2, dtype=float) / (
        4 * np.pi * np.asarray(distance_m, dtype=float) ** 3 * horizontal_t)
    angle = np.degrees(np.arctan(tangent))
    return float(angle) if np.ndim(angle) == 0 else angle


def _gauss_factor(position):
    try:
        return GAUSS_POSITIONS[position]
    except KeyError:
        raise ValueError(f'position must be "end-on" or "broadside", not {position!r}') from None


def change_tolerance_deg(predicted_deg, resolution_deg, fraction):
    """How far an observed switch-on change may differ from the predicted one [deg]:
    the larger of the card's reading resolution and a fraction of the predicted change."""
    return np.maximum(resolution_deg, fraction * np.abs(np.asarray(predicted_deg, dtype=float)))
