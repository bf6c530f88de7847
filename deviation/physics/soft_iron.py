r"""Deviation with soft iron: a disturbance that turns with the Earth's field.

A sensor near soft iron sees :math:`b = P + M F_v`, P the vessel-fixed part (cables, permanent
magnetism) and M the summed 3x3 matrix of the items (:func:`deviation.physics.induced.field_matrix`)
acting on the Earth's field F_v as seen in the vessel frame, which turns as the vessel turns.

Frames and signs as in :mod:`deviation.physics.heading`: vessel frame x forward, y port, z up;
the ship's axes of Poisson's equations are forward, starboard, down, :math:`S = \mathrm{diag}
(1, -1, -1)`, so :math:`P_s = S P` and the rods :math:`M_s = S M S`. A ship vector goes to the
level frame (north, east, down) by :math:`C = R_z(\psi) R_y(\theta) R_x(\phi)` (heel phi,
starboard down positive; pitch theta, bow up positive; magnetic heading psi). The sensor stays
level. Deviation is east positive: :math:`\delta = \operatorname{atan2}(b_E, H + b_N)`.

Everything over headings here is exact: the deviation is the angle of a vector whose components
are trigonometric polynomials of degree 2 in the heading, so its extremes lie at the real roots
of a trigonometric polynomial of degree 4, found as the eigenvalues of a companion matrix
(Boyd 2006). Over heel and pitch (and with a part of unknown direction) the maximum is found by
Lipschitz branch and bound with the bound stated and proven (Piyavskii; Shubert), never by
sampling alone.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Ship's axes (forward, starboard, down) from the vessel frame (x forward, y port, z up).
SHIP_FROM_VESSEL = np.diag([1.0, -1.0, -1.0])

#: Default tolerance of the branch and bound over attitude [deg]: the reported bound exceeds
#: the true maximum by at most this (a budget is read in tenths of a degree).
ATTITUDE_TOLERANCE_DEG = 1e-2


def rods(matrix_vessel):
    r"""Poisson's nine rods a..k from the vessel-frame matrix M: :math:`S M S`, ship's axes.

    Parameters
    ----------
    matrix_vessel : (..., 3, 3) array
        b = M F with both in the vessel frame (x forward, y port, z up).

    Returns
    -------
    (..., 3, 3) array
        ``[[a, b, c], [d, e, f], [g, h, k]]`` with X' = X + aX + bY + cZ + P, and so on, X
        forward, Y starboard, Z down.

    References
    ----------
    S. D. Poisson, "Mémoire sur la théorie du magnétisme en mouvement", Mém. Acad. Sci. 6
    (1825); J. C. Maxwell, *Treatise* vol. 2 §441; NGA Pub. 226, *Handbook of Magnetic Compass
    Adjustment*, ch. III.
    """
    m = np.asarray(matrix_vessel, dtype=float)
    return SHIP_FROM_VESSEL @ m @ SHIP_FROM_VESSEL


@dataclass(frozen=True)
class Coefficients:
    r"""Archibald Smith's exact coefficients from Poisson's rods (dimensionless fractions).

    ``lam`` :math:`\lambda = 1 + (a+e)/2`; ``a`` :math:`\mathfrak A = (d-b)/2\lambda`; ``b``
    :math:`\mathfrak B = (cZ + P)/\lambda H`; ``c`` :math:`\mathfrak C = (fZ + Q)/\lambda H`;
    ``d`` :math:`\mathfrak D = (a-e)/2\lambda`; ``e`` :math:`\mathfrak E = (b+d)/2\lambda`.
    ``b_induced`` and ``c_induced`` are the soft-iron parts cZ/(lambda H), fZ/(lambda H), which
    grow with Z/H. The heeling coefficient is :func:`heeling_coefficient`.
    """

    lam: np.ndarray
    a: np.ndarray
    b: np.ndarray
    c: np.ndarray
    d: np.ndarray
    e: np.ndarray
    b_induced: np.ndarray
    c_induced: np.ndarray

    def degrees(self):
        """The approximate coefficients A..E in degrees: the fractions read as radians (the
        handbook's small-angle reading)."""
        return {name: np.degrees(getattr(self, name)) for name in ("a", "b", "c", "d", "e")}


def coefficients(matrix_vessel, fixed_vessel, horizontal, vertical) -> Coefficients:
    r"""Smith's coefficients of a sensor from its summed soft-iron matrix and fixed field.

    Parameters
    ----------
    matrix_vessel : (..., 3, 3) array
        Summed M of the items (b = M F), vessel frame.
    fixed_vessel : (..., 3) array
        The vessel-fixed part P (permanent magnetism, cables), vessel frame, unit of H.
    horizontal, vertical : float
        The Earth's H and Z (down positive), same unit.

    Returns
    -------
    Coefficients

    Notes
    -----
    With the heading psi magnetic, level, the disturbance in the level frame is exactly

    .. math:: H + b_N = \lambda H(1 + \mathfrak B\cos\psi - \mathfrak C\sin\psi +
              \mathfrak D\cos 2\psi - \mathfrak E\sin 2\psi),\quad
              b_E = \lambda H(\mathfrak A + \mathfrak B\sin\psi + \mathfrak C\cos\psi +
              \mathfrak D\sin 2\psi + \mathfrak E\cos 2\psi),

    so :math:`\tan\delta = b_E/(H + b_N)` (Smith's exact formula; derived in docs/steel.md).

    References
    ----------
    NGA Pub. 226, *Handbook of Magnetic Compass Adjustment*, ch. III (the coefficients from
    Poisson's rods); Admiralty, *Manual of the Deviations of the Compass* (Archibald Smith's
    exact coefficients; from memory, edition not checked).
    """
    r = rods(matrix_vessel)
    p = SHIP_FROM_VESSEL @ np.asarray(fixed_vessel, dtype=float)[..., None]
    p = p[..., 0]
    a, b, c = r[..., 0, 0], r[..., 0, 1], r[..., 0, 2]
    d, e, f = r[..., 1, 0], r[..., 1, 1], r[..., 1, 2]
    lam = 1.0 + (a + e) / 2.0
    z_over_h = vertical / horizontal
    return Coefficients(
        lam=lam,
        a=(d - b) / (2.0 * lam),
        b=(c * z_over_h + p[..., 0] / horizontal) / lam,
        c=(f * z_over_h + p[..., 1] / horizontal) / lam,
        d=(a - e) / (2.0 * lam),
        e=(b + d) / (2.0 * lam),
        b_induced=c * z_over_h / lam,
        c_induced=f * z_over_h / lam,
    )


# Attitude -------------------------------------------------------------------------------------

def _rx(phi):
    c, s = np.cos(phi), np.sin(phi)
    one, zero = np.ones_like(c), np.zeros_like(c)
    return np.stack([np.stack([one, zero, zero], -1), np.stack([zero, c, -s], -1),
                     np.stack([zero, s, c], -1)], -2)


def _ry(theta):
    c, s = np.cos(theta), np.sin(theta)
    one, zero = np.ones_like(c), np.zeros_like(c)
    return np.stack([np.stack([c, zero, s], -1), np.stack([zero, one, zero], -1),
                     np.stack([-s, zero, c], -1)], -2)


def _rz(psi):
    c, s = np.cos(psi), np.sin(psi)
    one, zero = np.ones_like(c), np.zeros_like(c)
    return np.stack([np.stack([c, -s, zero], -1), np.stack([s, c, zero], -1),
                     np.stack([zero, zero, one], -1)], -2)


def _tilted(matrix_vessel, fixed_vessel, heel_rad, pitch_rad):
    """P' = W S P and M' = W S M S W^T with W = Ry(theta) Rx(phi): the disturbance in the
    level frame before the heading turns it."""
    w = _ry(np.asarray(pitch_rad, dtype=float)) @ _rx(np.asarray(heel_rad, dtype=float))
    m = w @ rods(matrix_vessel) @ np.swapaxes(w, -1, -2)
    p = (w @ (SHIP_FROM_VESSEL @ np.asarray(fixed_vessel, dtype=float)[..., None]))[..., 0]
    return m, p


def level_disturbance(matrix_vessel, fixed_vessel, horizontal, vertical, heading_deg,
                      heel_deg=0.0, pitch_deg=0.0):
    r"""The disturbance b = C(P + M C^T F) in the level frame (north, east, down).

    Parameters
    ----------
    matrix_vessel : (..., 3, 3) array
    fixed_vessel : (..., 3) array
    horizontal, vertical : float
        H and Z (down positive), the unit of the result.
    heading_deg, heel_deg, pitch_deg : float or array [deg]

    Returns
    -------
    (..., 3) array
    """
    m, p = _tilted(matrix_vessel, fixed_vessel, np.radians(heel_deg), np.radians(pitch_deg))
    rz = _rz(np.radians(np.asarray(heading_deg, dtype=float)))
    earth = np.array([horizontal, 0.0, vertical])
    seen = np.swapaxes(rz, -1, -2) @ earth                          # R_z^T F
    v = p + (m @ seen[..., None])[..., 0]
    return (rz @ v[..., None])[..., 0]


def deviation_curve_deg(matrix_vessel, fixed_vessel, horizontal, vertical, heading_deg,
                        heel_deg=0.0, pitch_deg=0.0):
    """Deviation at magnetic headings [deg], east positive, in (-180, 180]."""
    b = level_disturbance(matrix_vessel, fixed_vessel, horizontal, vertical, heading_deg,
                          heel_deg, pitch_deg)
    return np.degrees(np.arctan2(b[..., 1], horizontal + b[..., 0]))


# Trigonometric polynomials in the heading: coefficient arrays c_k, k = -n..n (last axis) ----

def _trig(constant, cos_part, sin_part):
    """Degree-1 trig polynomial c0 + a cos + b sin as complex coefficients (-1, 0, 1)."""
    c0, ca, cb = np.broadcast_arrays(*(np.asarray(v, dtype=complex) for v in
                                       (constant, cos_part, sin_part)))
    return np.stack([(ca + 1j * cb) / 2, c0, (ca - 1j * cb) / 2], axis=-1)


def _mul(p, q):
    n, m = p.shape[-1], q.shape[-1]
    shape = np.broadcast_shapes(p.shape[:-1], q.shape[:-1])
    out = np.zeros(shape + (n + m - 1,), dtype=complex)
    for i in range(n):
        out[..., i:i + m] += p[..., i:i + 1] * q
    return out


def _add(p, q):
    n, m = p.shape[-1], q.shape[-1]
    if n < m:
        p, q, n, m = q, p, m, n
    pad = (n - m) // 2
    shape = np.broadcast_shapes(p.shape[:-1], q.shape[:-1])
    out = np.broadcast_to(p, shape + (n,)).copy()
    out[..., pad:pad + m] += q
    return out


def _derivative(p):
    n = (p.shape[-1] - 1) // 2
    return p * (1j * np.arange(-n, n + 1))


def _evaluate(p, psi):
    n = (p.shape[-1] - 1) // 2
    k = np.arange(-n, n + 1)
    return np.real(np.sum(p[..., None, :] * np.exp(1j * k * psi[..., :, None]), axis=-1))


def _root_angles(p):
    """Angles of every root of z^n p(z) (real roots of the trig polynomial lie on |z| = 1).

    The companion matrix of the degree-2n polynomial (Boyd 2006); returns (..., 2n) angles,
    every root's angle whatever its modulus (an extra candidate only adds a point that is
    evaluated, never a value that is not attained).
    """
    coefficients = p[..., ::-1]                    # highest power first: c_n ... c_-n
    degree = coefficients.shape[-1] - 1
    scale = np.max(np.abs(coefficients), axis=-1, keepdims=True)
    scale = np.where(scale == 0.0, 1.0, scale)
    c = coefficients / scale
    lead = c[..., :1]
    usable = np.abs(lead[..., 0]) > 1e-13
    safe_lead = np.where(np.abs(lead) > 1e-13, lead, 1.0)
    companion = np.zeros(c.shape[:-1] + (degree, degree), dtype=complex)
    companion[..., 0, :] = -c[..., 1:] / safe_lead
    companion[..., np.arange(1, degree), np.arange(degree - 1)] = 1.0
    roots = np.linalg.eigvals(companion)
    angles = np.angle(roots)
    if not np.all(usable):
        # A vanishing top coefficient (a degenerate matrix): fall back to np.roots one by one.
        flat_c = c.reshape(-1, degree + 1)
        flat = angles.reshape(-1, degree)
        for i in np.flatnonzero(~usable.reshape(-1)):
            found = np.angle(np.roots(flat_c[i])) if np.any(flat_c[i] != 0) else np.zeros(0)
            flat[i] = np.concatenate([found, np.zeros(degree - found.size)])
        angles = flat.reshape(angles.shape)
    return angles


def _polish(p, angles, steps=3):
    """A few Newton steps on the real trig polynomial p at the given angles."""
    dp = _derivative(p)
    for _ in range(steps):
        value = _evaluate(p, angles)
        slope = _evaluate(dp, angles)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = np.where(np.abs(slope) > 0, value / slope, 0.0)
        angles = angles - np.clip(np.nan_to_num(step), -0.1, 0.1)
    return angles


def _north_east(m, p, horizontal, vertical):
    """Trig coefficients of H + b_N and b_E over the heading (degree 2), from the level
    frame's M' and P' (see :func:`level_disturbance`)."""
    # R_z^T F = (H cos, -H sin, Z); v = P' + M' (H cos, -H sin, Z), degree 1 per component.
    v = [_trig(p[..., i] + vertical * m[..., i, 2], horizontal * m[..., i, 0],
               -horizontal * m[..., i, 1]) for i in range(2)]
    cos, sin = _trig(0.0, 1.0, 0.0), _trig(0.0, 0.0, 1.0)
    north = _add(_add(_mul(cos, v[0]), -_mul(sin, v[1])), np.array([horizontal + 0j]))
    east = _add(_mul(sin, v[0]), _mul(cos, v[1]))
    return north, east


@dataclass(frozen=True)
class HeadingExtreme:
    """Largest |deviation| over all headings, with where it is reached.

    max_abs_deg : (...) [deg], 180 where the sensor is overwhelmed (it can point anywhere)
    heading_deg : (...) [deg], the magnetic heading reaching it
    overwhelmed : (...) bool
    """

    max_abs_deg: np.ndarray
    heading_deg: np.ndarray
    overwhelmed: np.ndarray


def max_deviation_over_headings(matrix_vessel, fixed_vessel, horizontal, vertical,
                                heel_deg=0.0, pitch_deg=0.0) -> HeadingExtreme:
    r"""Largest |deviation| over every heading, exactly, at a fixed heel and pitch.

    Parameters
    ----------
    matrix_vessel : (..., 3, 3) array
        Summed soft-iron matrix M, vessel frame.
    fixed_vessel : (..., 3) array
        Vessel-fixed part P, unit of H.
    horizontal, vertical : float
        H (> 0) and Z (down positive).
    heel_deg, pitch_deg : float or array [deg]

    Returns
    -------
    HeadingExtreme

    Notes
    -----
    With :math:`n(\psi) = H + b_N` and :math:`e(\psi) = b_E`, trigonometric polynomials of
    degree 2, :math:`\delta' = (e'n - en')/(n^2 + e^2)`; its numerator is a trigonometric
    polynomial of degree 4, whose real roots are the angles of the roots on the unit circle of
    the degree-8 polynomial :math:`z^4 q(z)`, taken as the eigenvalues of its companion matrix
    (Boyd 2006) and polished by Newton steps. :math:`|\delta|` is evaluated at every root's
    angle and the largest kept. The vector :math:`(n, e)` reaches the half-line of 180 degrees
    (or the origin) only where e = 0 and n <= 0: the four roots of e are checked for that, and
    there the figure is 180 (overwhelmed).

    References
    ----------
    J. P. Boyd, "Computing the zeros, maxima and inflection points of Chebyshev, Legendre and
    Fourier series: solving transcendental equations by spectral interpolation and polynomial
    rootfinding", J. Eng. Math. 56, 203-219 (2006).
    """
    m, p = _tilted(matrix_vessel, fixed_vessel, np.radians(heel_deg), np.radians(pitch_deg))
    north, east = _north_east(m, p, float(horizontal), float(vertical))
    numerator = _add(_mul(_derivative(east), north), -_mul(east, _derivative(north)))
    angles = _polish(numerator, _root_angles(numerator))
    angles = np.concatenate([angles, np.zeros(angles.shape[:-1] + (1,))], axis=-1)
    n_val, e_val = _evaluate(north, angles), _evaluate(east, angles)
    values = np.abs(np.degrees(np.arctan2(e_val, n_val)))
    best = np.argmax(values, axis=-1)
    value = np.take_along_axis(values, best[..., None], axis=-1)[..., 0]
    heading = np.take_along_axis(angles, best[..., None], axis=-1)[..., 0]
    # Overwhelmed: e = 0 where n <= 0.
    crossing = _polish(east, _root_angles(east))
    e_at = _evaluate(east, crossing)
    n_at = _evaluate(north, crossing)
    size = np.max(np.abs(north), axis=-1, keepdims=True) + np.max(np.abs(east), axis=-1,
                                                                   keepdims=True)
    flat_east = np.all(np.abs(east) <= 1e-15 * size, axis=-1)
    low_north = np.min(_evaluate(north, _polish(_derivative(north),
                                                _root_angles(_derivative(north)))), axis=-1)
    hit = np.any((np.abs(e_at) <= 1e-12 * size) & (n_at <= 0.0), axis=-1)
    hit |= flat_east & (low_north <= 0.0)
    value = np.where(hit, 180.0, value)
    return HeadingExtreme(value, np.mod(np.degrees(heading), 360.0), hit)


def max_deviation_with_unknown_part(matrix_vessel, fixed_vessel, horizontal, vertical,
                                    unknown_part, heel_deg=0.0, pitch_deg=0.0) -> HeadingExtreme:
    r"""Largest |deviation| over every heading and every vessel-fixed extra part of size at
    most beta, exactly, at a fixed heel and pitch.

    Parameters
    ----------
    matrix_vessel : (..., 3, 3) array
    fixed_vessel : (..., 3) array
    horizontal, vertical : float
    unknown_part : float
        beta >= 0, unit of H.
    heel_deg, pitch_deg : float or array [deg]

    Returns
    -------
    HeadingExtreme

    Notes
    -----
    At one heading the level horizontal part of a vessel-fixed e, :math:`|e| \le \beta`, can be
    any vector of the disc of radius beta (its direction is free), so the resultant
    :math:`u + e_h` fills the disc about :math:`u = (n, e) = (H + b_N, b_E)`; its largest angle
    from north is :math:`g = |\arg u| + \arcsin(\beta/|u|)`, on the tangent from the origin
    (180 if :math:`|u| \le \beta`). Because :math:`\max_e\max_\psi = \max_\psi\max_e`, the
    largest g over headings is the worst case over every fixed e, and it is reached: by the e
    whose horizontal part at the worst heading is perpendicular to the resultant.

    With :math:`s = n^2 + e^2`, :math:`A = e'n - en'`, :math:`D = nn' + ee'`, g is stationary
    where :math:`A\sqrt{s - \beta^2} = \pm\beta D`; squared,
    :math:`A^2(s - \beta^2) - \beta^2D^2 = 0`, a trigonometric polynomial of degree 12 whose
    real roots (companion matrix of degree 24, Boyd 2006) contain every stationary point; g is
    evaluated at every root's angle. The corner of :math:`|\arg u|` at e = 0 is a minimum,
    never the maximum. Where :math:`\min s \le \beta^2` or the resultant crosses south, 180.
    """
    beta = float(unknown_part)
    if beta < 0:
        raise ValueError("the size of a part of unknown direction cannot be negative")
    m, p = _tilted(matrix_vessel, fixed_vessel, np.radians(heel_deg), np.radians(pitch_deg))
    north, east = _north_east(m, p, float(horizontal), float(vertical))
    dn, de = _derivative(north), _derivative(east)
    a = _add(_mul(de, north), -_mul(east, dn))
    square = _add(_mul(north, north), _mul(east, east))
    d = _add(_mul(north, dn), _mul(east, de))
    condition = _add(_mul(_mul(a, a), _add(square, np.array([-beta ** 2 + 0j]))),
                     -beta ** 2 * _mul(d, d))
    angles = _polish(condition, _root_angles(condition))
    angles = np.concatenate([angles, np.zeros(angles.shape[:-1] + (1,))], axis=-1)
    n_val, e_val = _evaluate(north, angles), _evaluate(east, angles)
    size = np.hypot(n_val, e_val)
    with np.errstate(divide="ignore", invalid="ignore"):
        extra = np.arcsin(np.clip(beta / size, 0.0, 1.0))
    values = np.degrees(np.abs(np.arctan2(e_val, n_val)) + extra)
    best = np.argmax(values, axis=-1)
    value = np.take_along_axis(values, best[..., None], axis=-1)[..., 0]
    heading = np.take_along_axis(angles, best[..., None], axis=-1)[..., 0]
    plain = max_deviation_over_headings(matrix_vessel, fixed_vessel, horizontal, vertical,
                                        heel_deg, pitch_deg)
    ds = _derivative(square)
    lowest = np.min(_evaluate(square, np.concatenate(
        [_polish(ds, _root_angles(ds)), np.zeros(ds.shape[:-1] + (1,))], axis=-1)), axis=-1)
    hit = plain.overwhelmed | (lowest <= beta ** 2)
    return HeadingExtreme(np.where(hit, 180.0, value), np.mod(np.degrees(heading), 360.0), hit)


# Over attitude, and with a part of unknown direction: Lipschitz branch and bound --------------

#: Most cells the branch and bound may hold at once before it stops refining and reports the
#: (still proven, looser) bound it has.
_MAX_CELLS = 200_000


@dataclass(frozen=True)
class AttitudeBound:
    """Largest |deviation| over headings and attitudes, as a proven bound.

    bound_deg: the maximum is at most this (180 where the sensor may be overwhelmed);
    found_deg: a value reached at ``heading_deg``, ``heel_deg``, ``pitch_deg`` (so the true
    maximum lies in [found_deg, bound_deg]); tolerance_deg: what the search aimed at.
    """

    bound_deg: float
    found_deg: float
    heading_deg: float
    heel_deg: float
    pitch_deg: float
    tolerance_deg: float


def _branch_and_bound(evaluate, low, high, lipschitz, tolerance):
    """Maximise f over the box [low, high] (d dims) given |f(x) - f(y)| <= sum L_i |x_i - y_i|.

    Each cell's value at its centre plus L . half-widths bounds f on it (Piyavskii 1972,
    Shubert 1972, here with boxes). Cells whose bound is within ``tolerance`` of the best value
    found are closed; the others are halved across the dimension with the largest L_i x
    half-width. Returns (bound, best value, its point); the bound is proven.
    """
    low, high = np.asarray(low, dtype=float), np.asarray(high, dtype=float)
    lipschitz = np.asarray(lipschitz, dtype=float)
    centres = ((low + high) / 2.0)[None, :]
    half = ((high - low) / 2.0)[None, :]
    values, points = evaluate(centres)
    best_i = int(np.argmax(values))
    best, best_point = float(values[best_i]), points[best_i]
    closed_bound = -np.inf
    while True:
        upper = values + half @ lipschitz
        open_ = upper > best + tolerance
        if np.any(~open_):
            closed_bound = max(closed_bound, float(np.max(upper[~open_])))
        if not np.any(open_):
            return max(closed_bound, best), best, best_point
        centres, half, upper = centres[open_], half[open_], upper[open_]
        if centres.shape[0] * 2 > _MAX_CELLS:
            return max(closed_bound, float(np.max(upper)), best), best, best_point
        axis = np.argmax(half * lipschitz, axis=-1)
        step = np.zeros_like(half)
        step[np.arange(half.shape[0]), axis] = half[np.arange(half.shape[0]), axis] / 2.0
        half = half - step
        centres = np.concatenate([centres - step, centres + step])
        half = np.concatenate([half, half])
        values, points = evaluate(centres)
        i = int(np.argmax(values))
        if values[i] > best:
            best, best_point = float(values[i]), points[i]


def _sizes(matrix_vessel, fixed_vessel, horizontal, vertical):
    """|P| + ||M||_2 |F| (a bound on |b|) and |P| + 2 ||M||_2 |F| (on |db/d angle|)."""
    m_norm = float(np.linalg.norm(np.asarray(matrix_vessel, dtype=float), ord=2))
    p_norm = float(np.linalg.norm(np.asarray(fixed_vessel, dtype=float)))
    total = float(np.hypot(horizontal, vertical))
    return p_norm + m_norm * total, p_norm + 2.0 * m_norm * total


def max_deviation_over_attitude(matrix_vessel, fixed_vessel, horizontal, vertical,
                                max_heel_deg=0.0, max_pitch_deg=0.0, unknown_part=0.0, *,
                                tolerance_deg=ATTITUDE_TOLERANCE_DEG) -> AttitudeBound:
    r"""Largest |deviation| over every heading, heel and pitch, with an extra vessel-fixed part
    of unknown direction, as a proven bound.

    Parameters
    ----------
    matrix_vessel : (3, 3) array
    fixed_vessel : (3,) array
        In the unit of H.
    horizontal, vertical : float
    max_heel_deg, max_pitch_deg : float [deg]
        Every heel in [-max_heel, max_heel] and pitch in [-max_pitch, max_pitch] (at most 90).
    unknown_part : float
        beta >= 0, unit of H: a further vessel-fixed field of any direction and size <= beta.
    tolerance_deg : float

    Returns
    -------
    AttitudeBound

    Notes
    -----
    *The part of unknown direction.* At one heading and attitude the level horizontal part of a
    vessel-fixed e with :math:`|e| \le \beta` can be any vector of the disc of radius beta
    (e's direction is free), so the resultant u + e_h ranges over the disc about
    :math:`u = (H + b_N, b_E)`, whose largest angle from north is
    :math:`|\arg u| + \arcsin(\beta/|u|)`, at the tangent from the origin (180 if
    :math:`|u| \le \beta`). Since :math:`\max_e\max_\psi = \max_\psi\max_e`, maximising that
    over headings and attitudes gives the worst case over every fixed e exactly: it is reached
    by the e whose horizontal part, at the worst heading, is perpendicular to the resultant.

    *Lipschitz bound.* Every rotation derivative has norm 1, so each of psi, phi, theta moves
    b by at most :math:`K = |P| + 2\|M\|_2|F|` per radian; :math:`|u| \ge u_0 = H - |P| -
    \|M\|_2|F|`; the angle moves by at most :math:`|u'|/|u|` and the arcsine term by
    :math:`\beta|u'|/(|u|\sqrt{|u|^2-\beta^2})`. Hence the figure is Lipschitz in each angle
    with :math:`L = K(1 + \beta/\sqrt{u_0^2-\beta^2})/u_0` and a cell's value at its centre plus
    L times its half-widths bounds it there. With beta = 0 the heading is done exactly
    (:func:`max_deviation_over_headings`) and the search runs over heel and pitch only. Where
    :math:`u_0 \le \beta` nothing excludes an overwhelmed sensor and the bound is 180.

    References
    ----------
    S. A. Piyavskii, "An algorithm for finding the absolute extremum of a function", USSR
    Comput. Math. Math. Phys. 12(4), 57-67 (1972); B. O. Shubert, "A sequential method seeking
    the global maximum of a function", SIAM J. Numer. Anal. 9(3), 379-388 (1972).
    """
    beta = float(unknown_part)
    if beta < 0:
        raise ValueError("the size of a part of unknown direction cannot be negative")
    heel_max = np.radians(abs(float(max_heel_deg)))
    pitch_max = np.radians(abs(float(max_pitch_deg)))
    if heel_max > np.pi / 2 + 1e-12 or pitch_max > np.pi / 2 + 1e-12:
        raise ValueError("heel and pitch limits are at most 90 degrees")
    m = np.asarray(matrix_vessel, dtype=float).reshape(-1, 3, 3)
    p = np.broadcast_to(np.asarray(fixed_vessel, dtype=float), m.shape[:1] + (3,))
    sizes = [_sizes(mi, pi, horizontal, vertical) for mi, pi in zip(m, p)]
    size = max(s_[0] for s_ in sizes)
    slope = max(s_[1] for s_ in sizes)
    floor = float(horizontal) - size
    if floor <= beta:
        return AttitudeBound(180.0, float("nan"), float("nan"), float("nan"), float("nan"),
                             float(tolerance_deg))
    lipschitz = slope * (1.0 + beta / np.sqrt(floor ** 2 - beta ** 2)) / floor

    def evaluate(x):
        heel = np.degrees(x[:, 0])[:, None]
        pitch = np.degrees(x[:, 1])[:, None]
        if beta > 0:
            extreme = max_deviation_with_unknown_part(m, p, horizontal, vertical, beta, heel,
                                                      pitch)
        else:
            extreme = max_deviation_over_headings(m, p, horizontal, vertical, heel, pitch)
        which = np.argmax(extreme.max_abs_deg, axis=-1)
        rows = np.arange(x.shape[0])
        value = extreme.max_abs_deg[rows, which]
        heading = extreme.heading_deg[rows, which]
        return np.radians(value), np.stack([heading, x[:, 0], x[:, 1]], axis=-1)

    bound, best, point = _branch_and_bound(evaluate, [-heel_max, -pitch_max],
                                           [heel_max, pitch_max], np.full(2, lipschitz),
                                           np.radians(tolerance_deg))
    return AttitudeBound(float(np.degrees(bound)), float(np.degrees(best)), float(point[0]),
                         float(np.degrees(point[1])), float(np.degrees(point[2])),
                         float(tolerance_deg))


# The total field -------------------------------------------------------------------------------

def _total_squared(m, p, horizontal, vertical):
    """Trig coefficients (degree 2) of |F + b|^2 over the heading at a fixed attitude."""
    seen = [_trig(0.0, horizontal, 0.0), _trig(0.0, 0.0, -horizontal),
            _trig(vertical, 0.0, 0.0)]                           # R_z^T F
    v = [_trig(p[..., i] + vertical * m[..., i, 2], horizontal * m[..., i, 0],
               -horizontal * m[..., i, 1]) for i in range(3)]
    total = np.array([horizontal ** 2 + vertical ** 2 + 0j])
    for i in range(3):
        total = _add(total, _add(2.0 * _mul(seen[i], v[i]), _mul(v[i], v[i])))
    return total


def total_field_error_over_headings(matrix_vessel, fixed_vessel, horizontal, vertical,
                                    heel_deg=0.0, pitch_deg=0.0):
    r"""Smallest and largest total-field error :math:`|F + b(\psi)| - |F|` over every heading,
    exactly, at a fixed heel and pitch [unit of H].

    Notes
    -----
    :math:`|F + b|^2 = |F|^2 + 2(R_z^TF)\cdot v + |v|^2` with
    :math:`v = P' + M'R_z^TF` of degree 1 in the heading: a trigonometric polynomial of degree
    2, whose extremes lie at the real roots of its derivative (companion matrix, Boyd 2006).
    """
    m, p = _tilted(matrix_vessel, fixed_vessel, np.radians(heel_deg), np.radians(pitch_deg))
    square = _total_squared(m, p, float(horizontal), float(vertical))
    angles = _polish(_derivative(square), _root_angles(_derivative(square)))
    angles = np.concatenate([angles, np.zeros(angles.shape[:-1] + (1,))], axis=-1)
    total = float(np.hypot(horizontal, vertical))
    values = np.sqrt(np.maximum(_evaluate(square, angles), 0.0)) - total
    return values.min(axis=-1), values.max(axis=-1)


def total_field_error_over_attitude(matrix_vessel, fixed_vessel, horizontal, vertical,
                                    max_heel_deg=0.0, max_pitch_deg=0.0, *,
                                    tolerance=None):
    r"""Bounds on the smallest and largest total-field error over headings and attitudes.

    Returns
    -------
    low, high : float
        Every error lies in [low, high] (proven; each within ``tolerance`` of the extreme,
        default 1e-4 of H, about 2 nT at H = 20 uT).

    Notes
    -----
    Exact over the heading at each (heel, pitch); over heel and pitch a Lipschitz branch and
    bound, :math:`|F + b|` moving by at most :math:`|P| + 2\|M\|_2|F|` per radian of either.
    """
    tol = 1e-4 * float(horizontal) if tolerance is None else float(tolerance)
    heel_max = np.radians(abs(float(max_heel_deg)))
    pitch_max = np.radians(abs(float(max_pitch_deg)))
    _, slope = _sizes(matrix_vessel, fixed_vessel, horizontal, vertical)
    lows = [-heel_max, -pitch_max]
    highs = [heel_max, pitch_max]

    def extremes(x):
        low, high = total_field_error_over_headings(matrix_vessel, fixed_vessel, horizontal,
                                                    vertical, np.degrees(x[:, 0]),
                                                    np.degrees(x[:, 1]))
        return low, high

    if heel_max == 0 and pitch_max == 0:
        low, high = extremes(np.zeros((1, 2)))
        return float(low[0]), float(high[0])
    high_bound = _branch_and_bound(lambda x: (extremes(x)[1], x), lows, highs,
                                   np.full(2, slope), tol)[0]
    low_bound = -_branch_and_bound(lambda x: (-extremes(x)[0], x), lows, highs,
                                   np.full(2, slope), tol)[0]
    return low_bound, high_bound


def heeling_coefficient(matrix_vessel, fixed_vessel, horizontal, vertical):
    r"""J: the change of deviation per radian of heel (starboard down) on magnetic north.

    Returns
    -------
    float or array [rad/rad]
        Exact derivative :math:`d\delta/d\phi` at zero heel, heading north.

    Notes
    -----
    On north, heeled by phi, the Earth's field in ship's axes is :math:`(H, Z\sin\phi,
    Z\cos\phi)`; the level components are :math:`n = H + aH + bZ\sin\phi + cZ\cos\phi + P` and
    :math:`e = (dH + eZ\sin\phi + fZ\cos\phi + Q)\cos\phi - (gH + hZ\sin\phi + kZ\cos\phi +
    R)\sin\phi`, so at zero heel :math:`n' = bZ`, :math:`e' = (e-k)Z - gH - R` and
    :math:`J = (e'n - en')/(n^2 + e^2)`. To first order :math:`J \approx ((e-k)Z/H - g - R/H)`,
    the handbook's heeling coefficient (divided by lambda in its normalisation).

    References
    ----------
    NGA Pub. 226, *Handbook of Magnetic Compass Adjustment*, ch. III (heeling error; from
    memory for the exact normalisation).
    """
    r = rods(matrix_vessel)
    p = (SHIP_FROM_VESSEL @ np.asarray(fixed_vessel, dtype=float)[..., None])[..., 0]
    h, z = float(horizontal), float(vertical)
    n = h + r[..., 0, 0] * h + r[..., 0, 2] * z + p[..., 0]
    e = r[..., 1, 0] * h + r[..., 1, 2] * z + p[..., 1]
    dn = r[..., 0, 1] * z
    de = (r[..., 1, 1] - r[..., 2, 2]) * z - r[..., 2, 0] * h - p[..., 2]
    return (de * n - e * dn) / (n * n + e * e)
