r"""Fields of magnetised bodies outside them, as 3x3 tensors on arrays.

Each function returns, for points outside a body in the body's own frame (centred on the body,
the body's axes along x, y, z), the tensor T with H = T M: the field H [A/m] at the point of a
body uniformly magnetised with M [A/m]; outside, B = mu0 H. T is dimensionless. A point dipole
has m = M V.

- :func:`dipole_tensor`: a point dipole, exact far away and for a sphere.
- :func:`cuboid_tensor`: a rectangular prism, closed form (surface charges on the faces).
- :func:`cylinder_tensor`: a solid circular cylinder, a trapezoidal quadrature over the azimuth
  of closed-form line integrals, with a proven error bound (Trefethen & Weideman).

A point inside a body, or on its surface, is an error (ValueError), never a silent value.
"""

from __future__ import annotations

import numpy as np

#: Most azimuth nodes the cylinder quadrature uses; a point needing more lies within about
#: 1e-4 of a radius of the surface and is refused as on it.
MAX_AZIMUTH_NODES = 1 << 16

#: Default relative accuracy of the cylinder quadrature, against the dipole scale
#: |M| V / (4 pi r^3) at the point (r from the centre).
CYLINDER_RELATIVE_TOLERANCE = 1e-9


def _points(points_m):
    p = np.asarray(points_m, dtype=float)
    if p.shape[-1:] != (3,):
        raise ValueError(f"points must have shape (..., 3), got {p.shape}")
    return p


def dipole_tensor(points_m):
    r"""Field per unit moment of a point dipole at the origin, :math:`H = T m` [1/m^3].

    Parameters
    ----------
    points_m : (..., 3) array [m]
        Points relative to the dipole, not at it.

    Returns
    -------
    (..., 3, 3) array [1/m^3]
        :math:`T = (3\hat r\hat r^T - I)/(4\pi r^3)`.

    Notes
    -----
    Outside a uniformly magnetised sphere the field is exactly this, with m = M V.

    References
    ----------
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed., Wiley, 1999, eq. (5.56).
    """
    p = _points(points_m)
    r = np.linalg.norm(p, axis=-1)
    if np.any(r == 0.0):
        raise ValueError("the field of a point dipole is undefined at the dipole")
    unit = p / r[..., None]
    outer = 3.0 * unit[..., :, None] * unit[..., None, :] - np.eye(3)
    return outer / (4.0 * np.pi * r[..., None, None] ** 3)


def _rectangle(u_offsets, v_offsets, w):
    """Field (along u, v, w) of the unit surface charge on a rectangle in a plane w = const.

    ``u_offsets``, ``v_offsets``: (..., 2) point minus the rectangle's two edges; ``w``: point
    minus the plane. Returns (1/4pi) x integral of (r - r')/|r - r'|^3 over the rectangle.
    """
    uu = u_offsets[..., :, None]            # (..., 2, 1): i over u edges
    vv = v_offsets[..., None, :]            # (..., 1, 2): j over v edges
    ww = w[..., None, None]
    r = np.sqrt(uu * uu + vv * vv + ww * ww)
    sign = np.array([[1.0, -1.0], [-1.0, 1.0]])
    # w: sum s_ij atan(u v / (w r)); written sgn(w) atan2(u v, |w| r) so that a point in the
    # plane (w = 0) outside the rectangle gets 0 from every corner.
    h_w = np.sum(sign * np.sign(ww) * np.arctan2(uu * vv, np.abs(ww) * r), axis=(-2, -1))
    h_u = -np.sum(sign * _log_r_plus(vv, uu * uu + ww * ww, r, axis=-1), axis=(-2, -1))
    h_v = -np.sum(sign * _log_r_plus(uu, vv * vv + ww * ww, r, axis=-2), axis=(-2, -1))
    return h_u / (4 * np.pi), h_v / (4 * np.pi), h_w / (4 * np.pi)


def _log_r_plus(t, rest_sq, r, axis):
    """ln(t + r), r = sqrt(t^2 + rest_sq), without cancellation where t < 0.

    Where t < 0, ln(t + r) = ln(rest_sq) - ln(r - t). The ln(rest_sq) term is the same for both
    edges along ``axis``; where both edges have t < 0 the two cancel in the signed sum, so it is
    left out there (it may be -inf on the line through an edge, where the field is finite).
    """
    t_b, rest_b, r_b = np.broadcast_arrays(t, rest_sq, r)
    both_negative = np.all(t_b < 0, axis=axis, keepdims=True)
    with np.errstate(divide="ignore"):
        rest_log = np.where(both_negative, 0.0, np.log(np.where(both_negative, 1.0, rest_b)))
    return np.where(t_b >= 0, np.log(np.where(t_b >= 0, t_b + r_b, 1.0)),
                    rest_log - np.log(np.where(t_b >= 0, 1.0, r_b - t_b)))


def cuboid_tensor(points_m, sides_m):
    r"""Field tensor of a uniformly magnetised rectangular prism outside it, :math:`H = T M`.

    Parameters
    ----------
    points_m : (..., 3) array [m]
        Points in the prism's frame (centred, faces normal to x, y, z), outside the prism.
    sides_m : (3,) array [m]
        Full side lengths along x, y, z.

    Returns
    -------
    (..., 3, 3) array
        Dimensionless; column j is the field of the unit magnetisation along axis j.

    Raises
    ------
    ValueError
        A point inside the prism or on its surface.

    Notes
    -----
    The magnetisation M along w puts charge :math:`\pm M` on the two faces normal to w. A
    rectangle :math:`[u_1,u_2]\times[v_1,v_2]` of unit charge in the plane w = w_k gives at a
    point with offsets :math:`U_i = u - u_i`, :math:`V_j = v - v_j`, :math:`W = w - w_k`,
    :math:`R_{ij} = \sqrt{U_i^2 + V_j^2 + W^2}`, :math:`s_{ij} = (-1)^{i+j}`,

    .. math:: 4\pi H_w = \sum_{ij} s_{ij}\arctan\frac{U_iV_j}{WR_{ij}},\quad
              4\pi H_u = -\sum_{ij} s_{ij}\ln(V_j + R_{ij}),\quad
              4\pi H_v = -\sum_{ij} s_{ij}\ln(U_i + R_{ij}),

    summed over the two faces with their signs. Logarithms of a small :math:`t + R` are taken
    as :math:`\ln(\rho^2) - \ln(R - t)`, the form that stays accurate on the lines through the
    edges.

    References
    ----------
    The standard surface-charge model: G. Akoun and J.-P. Yonnet, "3D
    analytical calculation of the forces exerted between two cuboidal magnets", IEEE Trans.
    Magn. 20(5), 1962-1964 (1984); R. Engel-Herbert and T. Hesjedal, "Calculation of the
    magnetic stray field of a uniaxial magnetic domain", J. Appl. Phys. 97, 074504 (2005).
    """
    p = _points(points_m)
    sides = np.asarray(sides_m, dtype=float)
    if sides.shape != (3,) or not np.all(sides > 0) or not np.all(np.isfinite(sides)):
        raise ValueError(f"sides_m must be three positive lengths, got {sides.tolist()}")
    half = sides / 2.0
    inside = np.all(np.abs(p) <= half, axis=-1)
    if np.any(inside):
        raise ValueError("a point lies inside or on a magnetised prism; its field there is not "
                         "the exterior field")
    tensor = np.zeros(p.shape[:-1] + (3, 3))
    for w_axis in range(3):
        u_axis, v_axis = (w_axis + 1) % 3, (w_axis + 2) % 3
        u_off = p[..., u_axis, None] - np.array([-half[u_axis], half[u_axis]])
        v_off = p[..., v_axis, None] - np.array([-half[v_axis], half[v_axis]])
        column = np.zeros(p.shape[:-1] + (3,))
        for face, charge in ((half[w_axis], 1.0), (-half[w_axis], -1.0)):
            h_u, h_v, h_w = _rectangle(u_off, v_off, p[..., w_axis] - face)
            column[..., u_axis] += charge * h_u
            column[..., v_axis] += charge * h_v
            column[..., w_axis] += charge * h_w
        tensor[..., :, w_axis] = column
    return tensor


# The cylinder -------------------------------------------------------------------------------

def _line_integrals(dx, dy, u1, u2):
    """F and G of a vertical segment: its field per unit line charge is (dx F, dy F, G)/(4 pi).

    s^2 = dx^2 + dy^2; u1, u2 the point's heights above the segment's lower and upper ends.
    Works on complex arguments (the analytic continuation the error bound rests on).
    """
    s2 = dx * dx + dy * dy
    rho1 = np.sqrt(s2 + u1 * u1)
    rho2 = np.sqrt(s2 + u2 * u2)
    same_side = (u1 * u2) > 0
    diff_sq = u1 * u1 - u2 * u2
    with np.errstate(divide="ignore", invalid="ignore"):
        beyond = diff_sq / (rho1 * rho2 * (u1 * rho2 + u2 * rho1))
        within = (u1 / rho1 - u2 / rho2) / s2
    f = np.where(same_side, beyond, within)
    g = diff_sq / (rho1 * rho2 * (rho1 + rho2))
    return f, g


def _cylinder_nodes_needed(rho, radius, u1, u2, scale, tolerance):
    """Trapezoid nodes that bound the azimuth quadrature's error by ``tolerance`` (per point).

    Trefethen & Weideman (2014), Theorem 3.2: for a 2pi-periodic f analytic with |f| <= B in
    the strip |Im phi| < a, the N-point trapezoid rule errs by at most 4 pi B / (e^{aN} - 1).
    On Im phi = y, Re s^2 >= rho^2 + R^2 - 2 rho R cosh y = L(y) and |cos|, |sin| <= cosh y; the
    strip reaches the nearest singularity: s^2 = 0 for a point within the height of the
    cylinder (cosh a = (rho^2 + R^2)/(2 rho R)), else a branch point of sqrt(s^2 + u^2).
    """
    within = (u1 > 0) & (u2 < 0)
    u_min = np.minimum(np.abs(u1), np.abs(u2))
    with np.errstate(divide="ignore"):
        cosh_a = np.where(within, (rho ** 2 + radius ** 2) / (2 * rho * radius),
                          (rho ** 2 + radius ** 2 + u_min ** 2) / (2 * rho * radius))
    strip = np.where(rho == 0.0, np.inf, np.arccosh(np.maximum(cosh_a, 1.0)))
    best = np.full(rho.shape, np.inf)
    for fraction in (0.25, 0.5, 0.75, 0.9):
        y = np.where(np.isinf(strip), 2.0 * fraction * 4.0, fraction * strip)
        ch = np.cosh(y)
        low = rho ** 2 + radius ** 2 - 2 * rho * radius * ch       # L(y)
        m1 = np.sqrt(np.maximum(low + u1 ** 2, 0.0))
        m2 = np.sqrt(np.maximum(low + u2 ** 2, 0.0))
        with np.errstate(divide="ignore", invalid="ignore"):
            f_within = (np.abs(u1) / m1 + np.abs(u2) / m2) / low
            f_beyond = np.abs(u1 ** 2 - u2 ** 2) / (m1 * m2 * (np.abs(u1) * m2 + np.abs(u2) * m1))
            g_bound = 1.0 / m1 + 1.0 / m2
        f_bound = np.where(within, f_within, f_beyond)
        d_bound = 2.0 * (rho + radius * ch)              # |dx| + |dy|
        e_bound = d_bound * f_bound + g_bound            # |E|_1 of the line integral
        # Integrand: weight (cos, sin: each <= cosh y, two terms) times E, or phi-hat x E.
        integrand = 2.0 * ch * e_bound
        ok = np.isfinite(integrand) & (y > 0) & (low + np.minimum(u1 ** 2, u2 ** 2) > 0)
        ok &= ~within | (low > 0)
        # H = R/(4 pi) x integral, so the error is at most R B / (e^{yN} - 1) <= tol x scale.
        need = np.log1p(radius * integrand / np.maximum(tolerance * scale, 1e-300)) / y
        best = np.where(ok, np.minimum(best, np.ceil(need)), best)
    return best


def cylinder_tensor(points_m, length_m, diameter_m, *, rtol=CYLINDER_RELATIVE_TOLERANCE):
    r"""Field tensor of a uniformly magnetised solid cylinder outside it, :math:`H = T M`.

    Parameters
    ----------
    points_m : (..., 3) array [m]
        Points in the cylinder's frame (centred, axis along z), outside the cylinder.
    length_m, diameter_m : float [m]
    rtol : float
        Error bound of each entry, relative to the dipole scale :math:`V/(4\pi r^3)`.

    Returns
    -------
    (..., 3, 3) array
        Dimensionless; column j is the field of the unit magnetisation along axis j.

    Raises
    ------
    ValueError
        A point inside the cylinder, on it, or so close to it that the bound would need more
        than :data:`MAX_AZIMUTH_NODES` nodes.

    Notes
    -----
    A transverse magnetisation :math:`M_\perp` puts charge :math:`\sigma = M_\perp\cdot n` on
    the curved side and none on the ends; an axial one :math:`M_z` is the surface current
    :math:`K = M_z\hat\phi` on the side (Ampère's equivalent). Both reduce to the integral along
    a generator of the side, closed form: with :math:`d` the horizontal offset of the point from
    the generator at azimuth :math:`\phi`, :math:`s = |d|`, :math:`u_{1,2}` its heights above
    the lower and upper ends, :math:`\rho_k = \sqrt{s^2 + u_k^2}`,

    .. math:: \int \frac{r - r'}{|r - r'|^3}dz' = (d\,F, G),\quad
              F = \frac{1}{s^2}\Bigl(\frac{u_1}{\rho_1} - \frac{u_2}{\rho_2}\Bigr),\quad
              G = \frac{1}{\rho_2} - \frac{1}{\rho_1}

    (F written :math:`(u_1^2-u_2^2)/(\rho_1\rho_2(u_1\rho_2+u_2\rho_1))` beyond the ends).
    Then :math:`H = \frac{R}{4\pi}\int_0^{2\pi}[\sigma(\phi)E(\phi) + M_z\hat\phi\times
    E(\phi)]d\phi`, taken by the trapezoid rule, exponentially convergent for this periodic
    analytic integrand. The number of nodes comes from the theorem's bound with the strip and
    the integrand's bound worked out for each point (see ``_cylinder_nodes_needed``), so the
    error is proven below ``rtol`` times the dipole scale.

    References
    ----------
    L. N. Trefethen and J. A. C. Weideman, "The exponentially convergent trapezoidal rule",
    SIAM Review 56(3), 385-458 (2014), Theorem 3.2. J. D. Jackson, *Classical
    Electrodynamics*, 3rd ed., 1999, §5.9 (magnetic charge) and §5.8 (equivalent currents).
    """
    p = _points(points_m)
    length = float(length_m)
    radius = float(diameter_m) / 2.0
    if not (length > 0 and radius > 0 and np.isfinite(length) and np.isfinite(radius)):
        raise ValueError("a cylinder needs a positive length and diameter")
    flat = p.reshape(-1, 3)
    rho = np.hypot(flat[:, 0], flat[:, 1])
    u1 = flat[:, 2] + length / 2.0
    u2 = flat[:, 2] - length / 2.0
    if np.any((rho <= radius) & (u1 >= 0) & (u2 <= 0)):
        raise ValueError("a point lies inside or on a magnetised cylinder; its field there is "
                         "not the exterior field")
    volume = np.pi * radius ** 2 * length
    r_centre = np.linalg.norm(flat, axis=-1)
    scale = volume / (4 * np.pi * r_centre ** 3)
    needed = _cylinder_nodes_needed(rho, radius, u1, u2, scale, rtol)
    if np.any(~np.isfinite(needed) | (needed > MAX_AZIMUTH_NODES)):
        raise ValueError("a point lies too close to a magnetised cylinder's surface for its "
                         "field to be computed to the stated accuracy")
    nodes = np.maximum(8, 2 ** np.ceil(np.log2(np.maximum(needed, 1)))).astype(int)
    out = np.zeros((flat.shape[0], 3, 3))
    for n in np.unique(nodes):
        sel = nodes == n
        out[sel] = _cylinder_quadrature(flat[sel], radius, length, int(n))
    return out.reshape(p.shape[:-1] + (3, 3))


def _cylinder_quadrature(points, radius, length, n):
    phi = 2 * np.pi * np.arange(n) / n
    cos, sin = np.cos(phi), np.sin(phi)
    dx = points[:, 0, None] - radius * cos
    dy = points[:, 1, None] - radius * sin
    u1 = (points[:, 2] + length / 2.0)[:, None]
    u2 = (points[:, 2] - length / 2.0)[:, None]
    f, g = _line_integrals(dx, dy, u1, u2)
    e = np.stack([dx * f, dy * f, np.broadcast_to(g, dx.shape)], axis=-1)   # (P, n, 3)
    weight = radius / (4 * np.pi) * (2 * np.pi / n)
    tensor = np.empty((points.shape[0], 3, 3))
    tensor[:, :, 0] = weight * np.sum(cos[None, :, None] * e, axis=1)
    tensor[:, :, 1] = weight * np.sum(sin[None, :, None] * e, axis=1)
    phi_hat = np.stack([-sin, cos, np.zeros_like(phi)], axis=-1)             # (n, 3)
    tensor[:, :, 2] = weight * np.sum(np.cross(phi_hat[None], e), axis=1)
    return tensor


def _ellipsoid_lambda(points, sq):
    """Largest root lambda of sum x_k^2/(a_k^2 + lambda) = 1 for points outside the ellipsoid.

    f(lambda) = sum x_k^2/(a_k^2+lambda) - 1 is convex and decreasing for lambda > -min a^2,
    and f(0) > 0 outside; Newton's method from 0 then rises monotonically to the root.
    """
    lam = np.zeros(points.shape[:-1])
    x2 = points ** 2
    for _ in range(200):
        denom = sq + lam[..., None]
        f = np.sum(x2 / denom, axis=-1) - 1.0
        slope = -np.sum(x2 / denom ** 2, axis=-1)
        step = -f / slope
        lam = lam + step
        if np.all(np.abs(step) <= 1e-15 * (lam + np.max(sq))):
            break
    return lam


def ellipsoid_tensor(points_m, semi_axes_m):
    r"""Field tensor of a uniformly magnetised ellipsoid outside it, :math:`H = T M`, exactly.

    Parameters
    ----------
    points_m : (..., 3) array [m]
        Points in the ellipsoid's frame (centred, semi-axes along x, y, z), outside it.
    semi_axes_m : (3,) array [m]

    Returns
    -------
    (..., 3, 3) array
        Dimensionless.

    Notes
    -----
    Outside, the potential of the magnetisation is
    :math:`\phi = \sum_j M_j x_j D_j(\lambda)`, with
    :math:`D_j(\lambda) = \frac{abc}{2}\int_\lambda^\infty \frac{ds}{(a_j^2+s)\Delta(s)}
    = \frac{abc}{3}R_D(a_k^2+\lambda, a_l^2+\lambda, a_j^2+\lambda)`,
    :math:`\Delta(s) = \sqrt{(a^2+s)(b^2+s)(c^2+s)}` and :math:`\lambda` the ellipsoidal
    coordinate (largest root of :math:`\sum x_k^2/(a_k^2+\lambda) = 1`; on the surface
    :math:`D_j(0) = N_j`). Differentiating,

    .. math:: T_{ij} = -\delta_{ij}D_i(\lambda) + \frac{abc}{2}\,
              \frac{x_j}{(a_j^2+\lambda)\Delta(\lambda)}\,
              \frac{2x_i/(a_i^2+\lambda)}{\sum_k x_k^2/(a_k^2+\lambda)^2}.

    A uniformly magnetised ellipsoid is what a uniform field makes of a soft-iron ellipsoid,
    so with M from the exact demagnetising factors this field is exact at every distance.

    References
    ----------
    J. A. Osborn, Phys. Rev. 67, 351 (1945) (the potential of the ellipsoid); O. D. Kellogg,
    *Foundations of Potential Theory*, Springer, 1929, ch. VII §6 (the exterior potential of a
    homogeneous ellipsoid, from memory, section not checked); NIST DLMF §19.33.
    """
    from .demag import carlson_rd

    p = _points(points_m)
    axes = np.asarray(semi_axes_m, dtype=float)
    if axes.shape != (3,) or not np.all(axes > 0) or not np.all(np.isfinite(axes)):
        raise ValueError(f"semi_axes_m must be three positive lengths, got {axes.tolist()}")
    sq = axes ** 2
    if np.any(np.sum(p ** 2 / sq, axis=-1) <= 1.0):
        raise ValueError("a point lies inside or on a magnetised ellipsoid; its field there is "
                         "not the exterior field")
    lam = _ellipsoid_lambda(p, sq)
    shifted = sq + lam[..., None]                       # a_k^2 + lambda
    abc = np.prod(axes)
    d = np.stack([abc / 3.0 * carlson_rd(shifted[..., 1], shifted[..., 2], shifted[..., 0]),
                  abc / 3.0 * carlson_rd(shifted[..., 2], shifted[..., 0], shifted[..., 1]),
                  abc / 3.0 * carlson_rd(shifted[..., 0], shifted[..., 1], shifted[..., 2])],
                 axis=-1)
    delta = np.sqrt(np.prod(shifted, axis=-1))
    s2 = np.sum(p ** 2 / shifted ** 2, axis=-1)
    column = abc / 2.0 * p / (shifted * delta[..., None])          # depends on j
    row = 2.0 * p / shifted / s2[..., None]                          # depends on i
    tensor = row[..., :, None] * column[..., None, :]
    return tensor - d[..., :, None] * np.eye(3)
