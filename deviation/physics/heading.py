"""Heading deviation caused by a vessel-fixed magnetic disturbance.

Frames: the disturbance ``b`` is given in the vessel frame (x forward, y to port, z up); the
Earth's field at the site is H (horizontal, towards magnetic north) and Z (down). Magnetic heading
psi is clockwise from magnetic north; heel is positive when the starboard side goes down.
Deviation is east positive: Magnetic = Compass + Deviation (standard navigation practice).

The compass (or a tilt-compensated sensor) stays level while the vessel heels, so the disturbance,
fixed to the vessel, is rotated into the level frame; the Earth's field is not.
"""

from __future__ import annotations

import numpy as np

_GOLDEN = (np.sqrt(5.0) - 1.0) / 2.0


def level_disturbance(b_vessel, heading_deg, heel_deg=0.0):
    """Disturbance in the level frame (north, east, down) for a heading and heel.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Disturbance in the vessel frame (x forward, y port, z up), any unit.
    heading_deg : float or array [deg]
        Magnetic heading, clockwise from magnetic north.
    heel_deg : float or array [deg]
        Heel, positive starboard side down.

    Returns
    -------
    (..., 3) array
        (north, east, down) components in the unit of ``b_vessel``.

    Notes
    -----
    The vessel vector is written forward-starboard-down, rolled by the heel about the forward
    axis, then yawed by the heading (the aerospace body-to-NED sequence with zero pitch).
    """
    b = np.asarray(b_vessel, dtype=float)
    forward, starboard, down = b[..., 0], -b[..., 1], -b[..., 2]
    heel = np.radians(heel_deg)
    psi = np.radians(heading_deg)
    starboard_level = np.cos(heel) * starboard - np.sin(heel) * down
    down_level = np.sin(heel) * starboard + np.cos(heel) * down
    north = np.cos(psi) * forward - np.sin(psi) * starboard_level
    east = np.sin(psi) * forward + np.cos(psi) * starboard_level
    return np.stack(np.broadcast_arrays(north, east, down_level), axis=-1)


def deviation_deg(b_vessel, horizontal, heading_deg, heel_deg=0.0):
    """Deviation at a magnetic heading, east positive.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Disturbance in the vessel frame, same unit as ``horizontal``.
    horizontal : float or array
        The Earth's horizontal field H (e.g. tesla).
    heading_deg, heel_deg : float or array [deg]

    Returns
    -------
    array [deg]
        :math:`\\delta = \\operatorname{atan2}(b_E, H + b_N)`, in (-180, 180].

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (Pub. 226), chapter on the theory of
    deviation: the needle lies along the resultant of the Earth's and the ship's horizontal fields.
    """
    level = level_disturbance(b_vessel, heading_deg, heel_deg)
    return np.degrees(np.arctan2(level[..., 1], horizontal + level[..., 0]))


def horizontal_disturbance(b_vessel, heel_deg=0.0):
    """Magnitude of the disturbance's level horizontal part; the same on every heading.

    Parameters
    ----------
    b_vessel : (..., 3) array
    heel_deg : float or array [deg]

    Returns
    -------
    array, in the unit of ``b_vessel``
    """
    b = np.asarray(b_vessel, dtype=float)
    heel = np.radians(heel_deg)
    starboard_level = -np.cos(heel) * b[..., 1] + np.sin(heel) * b[..., 2]
    return np.hypot(b[..., 0], starboard_level)


def max_deviation_deg(b_vessel, horizontal, heel_deg=0.0):
    """Largest |deviation| over all headings, exactly.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Disturbance in the vessel frame, same unit as ``horizontal``.
    horizontal : float or array
        The Earth's horizontal field H.
    heel_deg : float or array [deg]

    Returns
    -------
    array [deg]
        :math:`\\arcsin(|b_h|/H)`; 180 where :math:`|b_h| \\ge H`, where the sensor is overwhelmed
        and can point anywhere (see :func:`is_overwhelmed`).

    Notes
    -----
    As the heading turns, the horizontal disturbance turns with the vessel against the fixed
    Earth field; the angle between H and H + b_h is largest when b_h is perpendicular to the
    resultant, where its sine is :math:`|b_h|/H`.

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (Pub. 226), semicircular deviation.
    """
    ratio = horizontal_disturbance(b_vessel, heel_deg) / horizontal
    with np.errstate(invalid="ignore"):
        return np.where(ratio < 1.0, np.degrees(np.arcsin(np.minimum(ratio, 1.0))), 180.0)


def is_overwhelmed(b_vessel, horizontal, heel_deg=0.0):
    """True where the disturbance's horizontal part is at least H: the sensor can point anywhere."""
    return horizontal_disturbance(b_vessel, heel_deg) >= horizontal


def worst_heel_deg(b_vessel, max_heel_deg):
    """Heel in [-max_heel, +max_heel] at which the horizontal disturbance is largest.

    Parameters
    ----------
    b_vessel : (..., 3) array
    max_heel_deg : float [deg]

    Returns
    -------
    array [deg]

    Notes
    -----
    The athwartships level component is :math:`-b_y\\cos\\phi + b_z\\sin\\phi = R\\cos(\\phi -
    \\phi_0)`; its magnitude peaks at :math:`\\phi_0` or :math:`\\phi_0 \\pm \\pi`, else at an end
    of the interval. The candidates are compared exactly.
    """
    b = np.asarray(b_vessel, dtype=float)
    limit = abs(float(max_heel_deg))
    phase = np.degrees(np.arctan2(b[..., 2], -b[..., 1]))
    tried = [np.full(phase.shape, -limit), np.full(phase.shape, limit)]
    for shift in (0.0, 180.0, -180.0):
        tried.append(np.clip(phase + shift, -limit, limit))
    candidates = np.stack(tried, axis=-1)
    size = horizontal_disturbance(b[..., None, :], candidates)
    best = np.argmax(size, axis=-1)
    return np.take_along_axis(candidates, best[..., None], axis=-1)[..., 0]


def max_heeled_deviation_deg(b_vessel, horizontal, max_heel_deg):
    """Largest |deviation| over all headings and every heel within ±max_heel_deg, exactly."""
    return max_deviation_deg(b_vessel, horizontal, worst_heel_deg(b_vessel, max_heel_deg))


def _wrapped_change(b_state, b_reference, horizontal, heading_rad, heel_deg):
    heading = np.degrees(heading_rad)
    change = (deviation_deg(b_state[..., None, :], horizontal, heading, heel_deg)
              - deviation_deg(b_reference[..., None, :], horizontal, heading, heel_deg))
    return (change + 180.0) % 360.0 - 180.0


def max_change_deg(b_state, b_reference, horizontal, heel_deg=0.0, *, samples=72, iterations=40):
    """Largest |deviation change| between two states over all headings.

    A sensor adjusted in a reference state carries :math:`\\delta_s(\\psi) - \\delta_r(\\psi)`,
    not the absolute deviation.

    Parameters
    ----------
    b_state, b_reference : (..., 3) arrays
        Disturbances in the vessel frame, same unit as ``horizontal``.
    horizontal : float
        The Earth's horizontal field H.
    heel_deg : float or array [deg]
        Broadcast against the leading dimensions of the disturbances.
    samples : int
        Headings sampled before refining.
    iterations : int
        Golden-section steps refining the best sample (each shrinks the bracket by 0.618).

    Returns
    -------
    array [deg]
        180 where either state overwhelms the sensor.

    Notes
    -----
    The change is a smooth periodic function of heading with a few extrema; it is sampled every
    360/samples degrees (every 0.5 degree when a disturbance exceeds 0.8 H, where the peaks
    narrow), then the brackets of the three best local maxima are refined by golden-section
    search (to 1e-8 degree of heading with the defaults).
    """
    b_s = np.asarray(b_state, dtype=float)
    b_r = np.asarray(b_reference, dtype=float)
    heel = np.asarray(heel_deg, dtype=float)
    shape = np.broadcast_shapes(b_s.shape[:-1], b_r.shape[:-1], heel.shape)
    b_s = np.broadcast_to(b_s, shape + (3,))
    b_r = np.broadcast_to(b_r, shape + (3,))
    heel = np.broadcast_to(heel, shape)
    heel_deg = heel[..., None]                          # against the headings axis
    ratio = max(float(np.max(horizontal_disturbance(b_s, heel), initial=0.0)),
                float(np.max(horizontal_disturbance(b_r, heel), initial=0.0))) / horizontal
    if ratio > 0.8:                         # peaks narrow as |b_h| nears H: sample finer
        samples = max(samples, 720)
    step = 2 * np.pi / samples
    grid = np.arange(samples) * step
    sampled = np.abs(_wrapped_change(b_s, b_r, horizontal, grid, heel_deg))
    # Refine the three best local maxima of the samples: the change has a positive and a
    # negative lobe of similar height, and the best sample may sit on the lower one.
    peak = (sampled >= np.roll(sampled, 1, axis=-1)) & (sampled >= np.roll(sampled, -1, axis=-1))
    ranked = np.argsort(np.where(peak, -sampled, np.inf), axis=-1)[..., :3]
    centre = grid[ranked]                                       # (..., 3)
    low, high = centre - step, centre + step
    x1 = high - _GOLDEN * (high - low)
    x2 = low + _GOLDEN * (high - low)

    def value(heading_rad):
        return np.abs(_wrapped_change(b_s, b_r, horizontal, heading_rad, heel_deg))

    f1, f2 = value(x1), value(x2)
    for _ in range(iterations):
        right = f1 < f2                     # the maximum lies in [x1, high]
        low = np.where(right, x1, low)
        high = np.where(right, high, x2)
        x1, x2 = np.where(right, x2, high - _GOLDEN * (high - low)), \
            np.where(right, low + _GOLDEN * (high - low), x1)
        new = value(np.where(right, x2, x1))
        f1, f2 = np.where(right, f2, new), np.where(right, new, f1)
    best = np.maximum(np.maximum(f1, f2).max(axis=-1), sampled.max(axis=-1))
    overwhelmed = is_overwhelmed(b_s, horizontal, heel) | is_overwhelmed(b_r, horizontal, heel)
    return np.where(overwhelmed, 180.0, best)


def max_heeled_change_deg(b_state, b_reference, horizontal, max_heel_deg, *, heel_steps=9):
    """Largest |deviation change| over headings and heels in ±max_heel_deg.

    The heel is sampled at ``heel_steps`` evenly spaced values including both ends and level
    (the change varies slowly with heel; the absolute deviation's heel worst case is exact, see
    :func:`max_heeled_deviation_deg`).
    """
    limit = abs(float(max_heel_deg))
    heels = np.unique(np.concatenate([np.linspace(-limit, limit, heel_steps), [0.0]]))
    b_s = np.asarray(b_state, dtype=float)[..., None, :]
    b_r = np.asarray(b_reference, dtype=float)[..., None, :]
    return np.max(max_change_deg(b_s, b_r, horizontal, heels), axis=-1)


def fraction_of_total_field(b_vessel, total):
    """Size of the disturbance as a fraction of the Earth's total field F.

    Parameters
    ----------
    b_vessel : (..., 3) array
    total : float
        F, same unit.

    Returns
    -------
    array, dimensionless (multiply by 100 for percent)
    """
    return np.linalg.norm(np.asarray(b_vessel, dtype=float), axis=-1) / total


def semicircular_coefficients_deg(b_vessel, horizontal):
    """First-order semicircular coefficients B and C of a vessel-fixed field [deg].

    :math:`\\delta(\\psi) \\approx B\\sin\\psi + C\\cos\\psi` with :math:`B = P/H`, :math:`C = Q/H`,
    P the fore-and-aft part (forward positive) and Q the athwartships part (starboard positive).

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (Pub. 226), semicircular deviation.
    """
    b = np.asarray(b_vessel, dtype=float)
    return np.degrees(b[..., 0] / horizontal), np.degrees(-b[..., 1] / horizontal)


def magnetic_from_compass(compass_deg, deviation_deg_):
    """Magnetic = Compass + Deviation (east positive), in [0, 360)."""
    return np.mod(np.asarray(compass_deg) + deviation_deg_, 360.0)


def compass_from_magnetic(magnetic_deg, deviation_deg_):
    """Compass = Magnetic - Deviation (east positive), in [0, 360)."""
    return np.mod(np.asarray(magnetic_deg) - deviation_deg_, 360.0)


def true_from_magnetic(magnetic_deg, variation_deg):
    """True = Magnetic + Variation (declination, east positive), in [0, 360)."""
    return np.mod(np.asarray(magnetic_deg) + variation_deg, 360.0)


def magnetic_from_true(true_deg, variation_deg):
    """Magnetic = True - Variation (east positive), in [0, 360)."""
    return np.mod(np.asarray(true_deg) - variation_deg, 360.0)
