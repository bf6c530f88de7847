"""What a vessel-fixed disturbance does to a total-field (scalar) reading and to the field's
inclination, over every heading and every attitude within the heel and pitch limits, exactly.

Frames as in :mod:`deviation.physics.heading`: the disturbance ``b`` is in the vessel frame (x forward,
y port, z up); the Earth's field in the level frame is F = (H, 0, Z) (magnetic north, east,
down). The vessel turns and tilts, the Earth's field does not, so the sensor sees F + C b with C
the vessel-to-level rotation.

Everything here rests on one fact: as the heading turns freely, the disturbance's level
horizontal part turns through every direction while its level down component d stays put. So
what the sensor can see is fixed by the interval [d_lo, d_hi] that d sweeps as the vessel heels
and pitches, and |C b| = |b| always. Nothing is sampled.
"""

from __future__ import annotations

import itertools

import numpy as np


def _limits(max_heel_deg, max_pitch_deg):
    heel = np.radians(abs(float(max_heel_deg)))
    pitch = np.radians(abs(float(max_pitch_deg)))
    if heel > np.pi / 2 + 1e-12 or pitch > np.pi / 2 + 1e-12:
        raise ValueError("heel and pitch limits are at most 90 degrees")
    return heel, pitch


def _extremes_of_sinusoid(a, c, limit):
    """Smallest and largest of a sin(t) + c cos(t) over |t| <= limit (elementwise, exact).

    The critical points are t = atan2(a, c) + k pi; those inside the range and the two ends are
    the only candidates.
    """
    phase = np.arctan2(a, c)
    candidates = [np.full(np.shape(a), -limit), np.full(np.shape(a), limit)]
    candidates += [np.clip(phase + k * np.pi, -limit, limit) for k in (-2, -1, 0, 1, 2)]
    t = np.stack(np.broadcast_arrays(*candidates), axis=-1)
    value = a[..., None] * np.sin(t) + c[..., None] * np.cos(t)
    return value.min(axis=-1), value.max(axis=-1)


def down_range(b_vessel, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Smallest and largest level down component of a vessel-fixed vector over the attitudes.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Vector in the vessel frame, any unit.
    max_heel_deg, max_pitch_deg : float [deg]
        Every heel in [-max_heel, max_heel] and pitch in [-max_pitch, max_pitch] (at most 90).

    Returns
    -------
    d_lo, d_hi : (...) arrays, in the unit of ``b_vessel``

    Notes
    -----
    Written forward-starboard-down, f = b_x, s = -b_y, d = -b_z, heel phi rolls the down part
    to q = s sin(phi) + d cos(phi), and pitch theta gives the level down component
    -f sin(theta) + q cos(theta) (the aerospace body-to-level sequence, heading last; heading
    does not change it). q's range over the heel interval does not depend on the pitch, and for
    a pitch within +-90 degrees the down component grows with q (cos(theta) >= 0): the largest
    comes from q's largest, the smallest from q's smallest. Each step is a sinusoid over an
    interval, whose extremes lie at its ends or at its critical points, all of which are
    compared.

    References
    ----------
    D. H. Titterton and J. L. Weston, *Strapdown Inertial Navigation Technology*, 2nd ed., IET,
    2004, chapter 3 (direction cosine matrix from roll, pitch and yaw).
    """
    b = np.asarray(b_vessel, dtype=float)
    heel, pitch = _limits(max_heel_deg, max_pitch_deg)
    forward, starboard, down = b[..., 0], -b[..., 1], -b[..., 2]
    q_lo, q_hi = _extremes_of_sinusoid(starboard, down, heel)
    d_lo = _extremes_of_sinusoid(-forward, q_lo, pitch)[0]
    d_hi = _extremes_of_sinusoid(-forward, q_hi, pitch)[1]
    return d_lo, d_hi


def _error(g, size_sq, total):
    """|F + x| - |F| from g = F . x and |x|^2, without cancellation."""
    return (2.0 * g + size_sq) / (np.sqrt(np.maximum(total ** 2 + 2.0 * g + size_sq, 0.0)) + total)


def total_field_error_range(b_vessel, horizontal, vertical, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Smallest and largest total-field error |F + C b| - |F| over headings and attitudes.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Disturbance in the vessel frame, in the unit of ``horizontal``.
    horizontal, vertical : float
        The Earth's H and Z (positive down).
    max_heel_deg, max_pitch_deg : float [deg]

    Returns
    -------
    low, high : (...) arrays, in the unit of ``horizontal``

    Notes
    -----
    :math:`|F + Cb|^2 = F^2 + 2F\\cdot Cb + |b|^2` and :math:`|Cb| = |b|`, so the error grows with
    :math:`g = F \\cdot Cb`. With the heading free, at a level down component d the horizontal
    part :math:`\\sqrt{|b|^2 - d^2}` can point along or against H, so
    :math:`g \\in [-H\\sqrt{|b|^2-d^2} + Zd,\\; H\\sqrt{|b|^2-d^2} + Zd]`. The upper end is concave
    in d, largest at :math:`d^* = |b|Z/F` (b along F), the lower end convex, smallest at
    :math:`-|b|Z/F`; over the interval :func:`down_range` gives, each is reached at its optimum
    clipped to the interval. Exact, no sampling.
    """
    b = np.asarray(b_vessel, dtype=float)
    total = float(np.hypot(horizontal, vertical))
    size = np.linalg.norm(b, axis=-1)
    d_lo, d_hi = down_range(b, max_heel_deg, max_pitch_deg)
    d_up = np.clip(size * vertical / total, d_lo, d_hi)
    d_dn = np.clip(-size * vertical / total, d_lo, d_hi)
    g_high = horizontal * np.sqrt(np.maximum(size ** 2 - d_up ** 2, 0.0)) + vertical * d_up
    g_low = -horizontal * np.sqrt(np.maximum(size ** 2 - d_dn ** 2, 0.0)) + vertical * d_dn
    return _error(g_low, size ** 2, total), _error(g_high, size ** 2, total)


def heading_error_peak_to_peak(b_vessel, horizontal, vertical):
    """Peak-to-peak of the total-field error over a full turn of heading, level [unit of H].

    Notes
    -----
    Level, the down component is d = -b_z and the horizontal part r = |(b_x, b_y)| turns
    through every direction: the error runs between its values at g = Zd - Hr and g = Zd + Hr.
    To first order this is 2 H r / F, the heading effect survey operators quote.
    """
    b = np.asarray(b_vessel, dtype=float)
    total = float(np.hypot(horizontal, vertical))
    size_sq = np.sum(b * b, axis=-1)
    r = np.hypot(b[..., 0], b[..., 1])
    d = -b[..., 2]
    return (_error(vertical * d + horizontal * r, size_sq, total)
            - _error(vertical * d - horizontal * r, size_sq, total))


def inclination_range_deg(b_vessel, horizontal, vertical, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Smallest and largest inclination of F + C b over headings and attitudes [deg].

    Returns
    -------
    low, high : (...) arrays [deg], down positive

    Notes
    -----
    The sensor's field is P = F + x with x on the zone of the sphere of radius |b| whose down
    component lies in [d_lo, d_hi] (:func:`down_range`); every horizontal direction of x is
    reached by some heading. The inclination atan2(P_down, |P_h|) has, on the open zone, critical
    points only where the ray from the origin touches the sphere (in the meridian plane of F, at
    I +- asin(|b|/F)); on the zone's two edge circles, at fixed down component, it is extreme
    where |P_h| is, at H + r or |H - r|. Where the zone holds a point with P_h = 0 (|b| >= H) the
    inclination reaches +-90 degrees. All these candidates are compared: exact.
    """
    b = np.asarray(b_vessel, dtype=float)
    total = float(np.hypot(horizontal, vertical))
    size = np.linalg.norm(b, axis=-1)
    d_lo, d_hi = down_range(b, max_heel_deg, max_pitch_deg)
    downs, horizontals, valid = [], [], []
    for d in (d_lo, d_hi):
        r = np.sqrt(np.maximum(size ** 2 - d ** 2, 0.0))
        for h in (horizontal + r, np.abs(horizontal - r)):
            downs.append(vertical + d)
            horizontals.append(h)
            valid.append(np.ones_like(size, dtype=bool))
    inclination = np.arctan2(vertical, horizontal)
    inside = size < total
    reach = np.sqrt(np.maximum(total ** 2 - size ** 2, 0.0))
    delta = np.arcsin(np.clip(size / total, 0.0, 1.0))
    for angle in (inclination + delta, inclination - delta):
        p_north, p_down = reach * np.cos(angle), reach * np.sin(angle)
        d = p_down - vertical
        downs.append(p_down)
        horizontals.append(np.abs(p_north))
        valid.append(inside & (d >= d_lo) & (d <= d_hi))
    # P_h = 0 needs a horizontal part of size H: |d| <= sqrt(|b|^2 - H^2) within the zone.
    limit = np.sqrt(np.maximum(size ** 2 - horizontal ** 2, 0.0))
    for d in (np.clip(-limit, d_lo, d_hi), np.clip(limit, d_lo, d_hi)):
        downs.append(vertical + d)
        horizontals.append(np.zeros_like(size))
        valid.append((size >= horizontal) & (np.abs(d) <= limit))
    angle = np.degrees(np.arctan2(np.stack(np.broadcast_arrays(*downs), axis=-1),
                                  np.stack(np.broadcast_arrays(*horizontals), axis=-1)))
    ok = np.stack(np.broadcast_arrays(*valid), axis=-1)
    return (np.where(ok, angle, np.inf).min(axis=-1), np.where(ok, angle, -np.inf).max(axis=-1))


def first_order_range(vector, horizontal, vertical, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Smallest and largest F-hat . C v over headings and attitudes (a linear figure, e.g. the
    total-field change per ampere of a circuit's field per ampere v), exact; unit of ``v``."""
    v = np.asarray(vector, dtype=float)
    total = float(np.hypot(horizontal, vertical))
    size = np.linalg.norm(v, axis=-1)
    d_lo, d_hi = down_range(v, max_heel_deg, max_pitch_deg)
    d_up = np.clip(size * vertical / total, d_lo, d_hi)
    d_dn = np.clip(-size * vertical / total, d_lo, d_hi)
    high = horizontal * np.sqrt(np.maximum(size ** 2 - d_up ** 2, 0.0)) + vertical * d_up
    low = -horizontal * np.sqrt(np.maximum(size ** 2 - d_dn ** 2, 0.0)) + vertical * d_dn
    return low / total, high / total


# Switching of independent circuits ---------------------------------------------------------------

def all_switchings(reversing):
    """Every switching of n independent circuits, (M, n) int: 0/1, or -1/0/1 where reversing."""
    choices = [(-1, 0, 1) if r else (0, 1) for r in reversing]
    if not choices:
        return np.zeros((1, 0), dtype=int)
    return np.array(list(itertools.product(*choices)), dtype=int)


def count_switchings(reversing) -> int:
    return int(np.prod([3 if r else 2 for r in reversing], dtype=float)) if len(reversing) else 1


def sign_split_switchings(vectors, reversing):
    """Switchings that put every circuit on the side of some direction w: (M, n) int.

    Parameters
    ----------
    vectors : (n, 3) array
    reversing : (n,) bool

    Notes
    -----
    For a fixed direction w (the Earth's field direction seen in the vessel frame at one
    heading and attitude), the linear figure w . (base + sum s_i v_i) is largest with s_i on
    where w . v_i > 0 (reversed where w . v_i < 0 for a reversing circuit) and smallest with the
    opposite. The sign patterns of every w on the sphere are the vertices of the zonotope
    sum [0, 1] v_i: each arrangement vertex w = +-(v_i x v_j)/|v_i x v_j| fixes the others by
    their sign and leaves i, j free (four patterns), and the all-parallel case gives two more.
    Both w and -w are listed, so the list serves the largest and the smallest figure alike.
    Circuits lying in a vertex's plane (more than two coplanar) are left off there: a degenerate
    case where the list may miss a pattern (Edelsbrunner 1987).

    References
    ----------
    H. Edelsbrunner, *Algorithms in Combinatorial Geometry*, Springer, 1987 (zonotopes, their
    vertices and the dual arrangement of hyperplanes; from memory, no chapter given).
    """
    v = np.asarray(vectors, dtype=float)
    rev = np.asarray(reversing, dtype=bool)
    n = len(v)

    def choose(dots):
        on = dots > 0
        return np.where(rev, np.where(on, 1, np.where(dots < 0, -1, 0)), on.astype(int))

    rows = [np.zeros(n, dtype=int)]
    norms = np.linalg.norm(v, axis=-1)
    if n:
        along = v[int(np.argmax(norms))]
        for sign in (1.0, -1.0):
            rows.append(choose(sign * v @ along))
    for i, j in itertools.combinations(range(n), 2):
        w = np.cross(v[i], v[j])
        size = np.linalg.norm(w)
        if size == 0.0:
            continue
        for sign in (1.0, -1.0):
            base = choose(sign * (v @ (w / size)) * (np.abs(v @ (w / size)) > 1e-12 * norms))
            for a, c in itertools.product((0, 1), repeat=2):
                row = base.copy()
                row[i] = (2 * a - 1) if rev[i] else a
                row[j] = (2 * c - 1) if rev[j] else c
                rows.append(row)
    return np.unique(np.array(rows, dtype=int), axis=0)


def candidate_switchings(vectors, reversing, most):
    """All switchings when there are at most ``most``, else :func:`sign_split_switchings`.

    Returns
    -------
    choices : (M, n) int
    exhaustive : bool
        True when every switching was listed.
    """
    if count_switchings(reversing) <= most:
        return all_switchings(reversing), True
    return sign_split_switchings(vectors, reversing), False
