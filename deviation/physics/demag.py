r"""Demagnetising factors of ellipsoids, cylinders and rectangular prisms, and Maxwell's hollow
sphere, on arrays.

A body of susceptibility chi in a uniform field H0 takes, along a principal axis, the mean
magnetisation M = chi H0 / (1 + N chi). For an ellipsoid N is the exact (uniform) demagnetising
factor for every chi; for a cylinder or a prism the factors here are the *magnetometric* ones of a
uniformly magnetised body (chi = 0), which :mod:`deviation.physics.induced` uses as a proven lower
bound on the moment at any chi (see there). The three factors of a body add up to 1.

Elliptic integrals are Carlson's symmetric forms R_F and R_D, computed by duplication in NumPy
(no SciPy at run time).
"""

from __future__ import annotations

import numpy as np

#: Relative accuracy the duplication loops aim at (Carlson 1995 stopping rule with r = 1e-16
#: gives a relative error below r in R_F and R_D).
_CARLSON_R = 1e-16
_MAX_DUPLICATIONS = 80


def carlson_rf(x, y, z):
    r"""Carlson's symmetric elliptic integral of the first kind, R_F(x, y, z).

    Parameters
    ----------
    x, y, z : array_like, >= 0, at most one zero
        Broadcast together.

    Returns
    -------
    array
        :math:`R_F = \tfrac12\int_0^\infty [(t+x)(t+y)(t+z)]^{-1/2}\,dt`.

    Notes
    -----
    Duplication :math:`\lambda = \sqrt{x}\sqrt{y} + \sqrt{y}\sqrt{z} + \sqrt{z}\sqrt{x}`,
    :math:`x \to (x+\lambda)/4` (each argument) until :math:`4^{-m} Q < |A_m|` with
    :math:`Q = (3r)^{-1/6}\max|A_0 - x|`, then the fifth-order series
    :math:`(1 - E_2/10 + E_3/14 + E_2^2/24 - 3E_2E_3/44)/\sqrt{A_m}`; relative error below r.

    References
    ----------
    B. C. Carlson, "Numerical computation of real or complex elliptic integrals", Numerical
    Algorithms 10 (1995) 13-26, algorithm for R_F. NIST DLMF section 19.36(i).
    """
    x0, y0, z0 = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (x, y, z)))
    a0 = (x0 + y0 + z0) / 3.0
    q = (3.0 * _CARLSON_R) ** (-1.0 / 6.0) * np.maximum.reduce(
        [np.abs(a0 - x0), np.abs(a0 - y0), np.abs(a0 - z0)])
    x, y, z, a, scale = _duplicate(x0, y0, z0, a0, q)
    big_x = scale * (a0 - x0) / a
    big_y = scale * (a0 - y0) / a
    big_z = -(big_x + big_y)
    e2 = big_x * big_y - big_z ** 2
    e3 = big_x * big_y * big_z
    return (1.0 - e2 / 10.0 + e3 / 14.0 + e2 ** 2 / 24.0 - 3.0 * e2 * e3 / 44.0) / np.sqrt(a)


def _duplicate(x, y, z, a, q, weight_z=False):
    r"""Carlson's duplication until 4^-m Q < |A_m| everywhere; with ``weight_z`` also the sum
    of 4^-m / (sqrt(z_m) (z_m + lambda_m)) that R_D needs."""
    scale = 1.0
    total = np.zeros_like(a)
    for _ in range(_MAX_DUPLICATIONS):
        if np.all(scale * q < np.abs(a)):
            break
        sx, sy, sz = np.sqrt(x), np.sqrt(y), np.sqrt(z)
        lam = sx * sy + sy * sz + sz * sx
        if weight_z:
            total = total + scale / (sz * (z + lam))
        x, y, z, a = (x + lam) / 4.0, (y + lam) / 4.0, (z + lam) / 4.0, (a + lam) / 4.0
        scale /= 4.0
    if weight_z:
        return x, y, z, a, scale, total
    return x, y, z, a, scale


def carlson_rd(x, y, z):
    r"""Carlson's symmetric elliptic integral of the second kind, R_D(x, y, z).

    Parameters
    ----------
    x, y : array_like, >= 0, at most one zero
    z : array_like, > 0

    Returns
    -------
    array
        :math:`R_D = \tfrac32\int_0^\infty [(t+x)(t+y)]^{-1/2}(t+z)^{-3/2}\,dt`.

    Notes
    -----
    The same duplication as :func:`carlson_rf`, accumulating
    :math:`3\sum_m 4^{-m}/(\sqrt{z_m}(z_m+\lambda_m))`, stopped when
    :math:`4^{-m}Q < |A_m|`, :math:`A_0 = (x+y+3z)/5`, :math:`Q = (r/4)^{-1/6}\max|A_0 - x|`;
    then :math:`4^{-m}A_m^{-3/2}(1 - 3E_2/14 + E_3/6 + 9E_2^2/88 - 3E_4/22 - 9E_2E_3/52 +
    3E_5/26)` with :math:`X = 4^{-m}(A_0-x)/A_m`, :math:`Y` likewise, :math:`Z = -(X+Y)/3`,
    :math:`E_2 = XY - 6Z^2`, :math:`E_3 = (3XY - 8Z^2)Z`, :math:`E_4 = 3(XY - Z^2)Z^2`,
    :math:`E_5 = XYZ^3`.

    References
    ----------
    B. C. Carlson, "Numerical computation of real or complex elliptic integrals", Numerical
    Algorithms 10 (1995) 13-26, algorithm for R_D. NIST DLMF section 19.36(i).
    """
    x0, y0, z0 = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (x, y, z)))
    a0 = (x0 + y0 + 3.0 * z0) / 5.0
    q = (_CARLSON_R / 4.0) ** (-1.0 / 6.0) * np.maximum.reduce(
        [np.abs(a0 - x0), np.abs(a0 - y0), np.abs(a0 - z0)])
    x, y, z, a, scale, total = _duplicate(x0, y0, z0, a0, q, weight_z=True)
    big_x = scale * (a0 - x0) / a
    big_y = scale * (a0 - y0) / a
    big_z = -(big_x + big_y) / 3.0
    xy = big_x * big_y
    e2 = xy - 6.0 * big_z ** 2
    e3 = (3.0 * xy - 8.0 * big_z ** 2) * big_z
    e4 = 3.0 * (xy - big_z ** 2) * big_z ** 2
    e5 = xy * big_z ** 3
    series = (1.0 - 3.0 * e2 / 14.0 + e3 / 6.0 + 9.0 * e2 ** 2 / 88.0 - 3.0 * e4 / 22.0
              - 9.0 * e2 * e3 / 52.0 + 3.0 * e5 / 26.0)
    return scale * a ** -1.5 * series + 3.0 * total


def _positive(name, value):
    v = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(v)) or np.any(v <= 0.0):
        raise ValueError(f"{name} must be positive and finite, got {v.tolist()}")
    return v


def ellipsoid_factors(semi_axes_m):
    r"""Demagnetising factors of a general ellipsoid along its three principal axes.

    Parameters
    ----------
    semi_axes_m : (..., 3) array [m]
        Semi-axes a, b, c (any order, all positive).

    Returns
    -------
    (..., 3) array
        :math:`N_a, N_b, N_c`, in the order of the semi-axes; they add up to 1.

    Notes
    -----
    Inside an ellipsoid magnetised uniformly the demagnetising field is uniform, so a uniform
    field magnetises it uniformly for any susceptibility (Poisson; Maxwell, *Treatise* §437).
    Along the semi-axis a,

    .. math:: N_a = \frac{abc}{2}\int_0^\infty \frac{ds}{(a^2+s)\sqrt{(a^2+s)(b^2+s)(c^2+s)}}
              = \frac{abc}{3} R_D(b^2, c^2, a^2),

    Osborn's and Stoner's elliptic integrals written as Carlson's R_D (the axes are scaled by
    the largest one first; the factors depend only on the ratios).

    References
    ----------
    J. A. Osborn, "Demagnetizing factors of the general ellipsoid", Phys. Rev. 67, 351 (1945).
    E. C. Stoner, "The demagnetizing factors for ellipsoids", Phil. Mag. 36, 803 (1945).
    NIST DLMF section 19.33 (triaxial ellipsoids, the integrals as R_D).
    """
    axes = _positive("semi_axes_m", semi_axes_m)
    axes = axes / np.max(axes, axis=-1, keepdims=True)
    sq = axes ** 2
    a, b, c = sq[..., 0], sq[..., 1], sq[..., 2]
    volume = np.prod(axes, axis=-1) / 3.0
    return np.stack([volume * carlson_rd(b, c, a), volume * carlson_rd(c, a, b),
                     volume * carlson_rd(a, b, c)], axis=-1)


def _ellipk_ellipe(m):
    r"""Complete elliptic integrals K(m), E(m) of parameter m = k^2 < 1, via Carlson
    (DLMF 19.25.1: K = R_F(0, 1-m, 1), E = R_F - m R_D(0, 1-m, 1)/3)."""
    m = np.asarray(m, dtype=float)
    rf = carlson_rf(0.0, 1.0 - m, 1.0)
    return rf, rf - m * carlson_rd(0.0, 1.0 - m, 1.0) / 3.0


def cylinder_factors(length_m, diameter_m):
    r"""Magnetometric demagnetising factors of a uniformly magnetised solid circular cylinder.

    Parameters
    ----------
    length_m, diameter_m : array_like [m]
        Broadcast together.

    Returns
    -------
    axial, transverse : arrays
        :math:`N_z` along the axis and :math:`N_x = N_y = (1 - N_z)/2` across it.

    Notes
    -----
    With :math:`\gamma = L/D` and :math:`m = k^2 = 1/(1+\gamma^2)`,

    .. math:: N_z = 1 + \frac{4}{3\pi\gamma}\Bigl[1 - \frac{(1-\gamma^2)E(m) +
              \gamma^2 K(m)}{k}\Bigr],

    the exact volume-averaged factor of a uniform magnetisation (chi = 0), which Chen, Brug &
    Goldfarb computed from inductance formulas; it equals
    :math:`(2/L)\int_0^\infty J_1(kR)^2(1 - e^{-kL})k^{-2}dk`, the interaction of the two
    charged end discs. It tends to :math:`4/(3\pi\gamma)` for a long rod and to 1 for a thin disc.
    The three factors of a uniform magnetisation add up to 1.

    References
    ----------
    D.-X. Chen, J. A. Brug and R. B. Goldfarb, "Demagnetizing factors for cylinders", IEEE
    Trans. Magn. 27(4), 3601-3619 (1991). R. I. Joseph, "Ballistic demagnetizing factor in
    uniformly magnetized cylinders", J. Appl. Phys. 37, 4639 (1966).
    """
    length = _positive("length_m", length_m)
    diameter = _positive("diameter_m", diameter_m)
    gamma = length / diameter
    m = 1.0 / (1.0 + gamma ** 2)
    k_int, e_int = _ellipk_ellipe(m)
    axial = 1.0 + 4.0 / (3.0 * np.pi * gamma) * (
        1.0 - ((1.0 - gamma ** 2) * e_int + gamma ** 2 * k_int) / np.sqrt(m))
    return axial, (1.0 - axial) / 2.0


def _prism_factor_along_c(a, b, c):
    r"""Aharoni's D_z for half-sides a, b (across) and c (along); see prism_factors."""
    r = np.sqrt(a * a + b * b + c * c)
    r_ab, r_bc, r_ac = np.sqrt(a * a + b * b), np.sqrt(b * b + c * c), np.sqrt(a * a + c * c)
    abc = a * b * c
    # ln((r - x)/(r + x)) = -2 atanh(x/r), free of cancellation for thin or long prisms.
    value = (-(b * b - c * c) / (b * c) * np.arctanh(a / r)
             - (a * a - c * c) / (a * c) * np.arctanh(b / r)
             + b / c * np.arctanh(a / r_ab)
             + a / c * np.arctanh(b / r_ab)
             - c / a * np.arctanh(b / r_bc)
             - c / b * np.arctanh(a / r_ac)
             + 2.0 * np.arctan(a * b / (c * r))
             + (a ** 3 + b ** 3 - 2.0 * c ** 3) / (3.0 * abc)
             + (a * a + b * b - 2.0 * c * c) / (3.0 * abc) * r
             + c / (a * b) * (r_ac + r_bc)
             - (r_ab ** 3 + r_bc ** 3 + r_ac ** 3) / (3.0 * abc))
    return value / np.pi


def prism_factors(sides_m):
    r"""Magnetometric demagnetising factors of a uniformly magnetised rectangular prism.

    Parameters
    ----------
    sides_m : (..., 3) array [m]
        Full side lengths along the prism's x, y, z.

    Returns
    -------
    (..., 3) array
        :math:`D_x, D_y, D_z`, adding up to 1.

    Notes
    -----
    Aharoni's closed form for a prism :math:`2a \times 2b \times 2c`, field along c:

    .. math::
       \pi D_z = \frac{b^2-c^2}{2bc}\ln\frac{r-a}{r+a} + \frac{a^2-c^2}{2ac}\ln\frac{r-b}{r+b}
       + \frac{b}{2c}\ln\frac{r_{ab}+a}{r_{ab}-a} + \frac{a}{2c}\ln\frac{r_{ab}+b}{r_{ab}-b}
       + \frac{c}{2a}\ln\frac{r_{bc}-b}{r_{bc}+b} + \frac{c}{2b}\ln\frac{r_{ac}-a}{r_{ac}+a}
       + 2\arctan\frac{ab}{cr} + \frac{a^3+b^3-2c^3}{3abc} + \frac{a^2+b^2-2c^2}{3abc}\,r
       + \frac{c}{ab}(r_{ac}+r_{bc}) - \frac{r_{ab}^3+r_{bc}^3+r_{ca}^3}{3abc},

    :math:`r = \sqrt{a^2+b^2+c^2}`, :math:`r_{ab} = \sqrt{a^2+b^2}` and so on; the logarithms
    are evaluated as inverse hyperbolic tangents. The other two factors follow by permuting the
    sides (the form is symmetric in a and b).

    References
    ----------
    A. Aharoni, "Demagnetizing factors for rectangular ferromagnetic prisms", J. Appl. Phys.
    83(6), 3432-3434 (1998), eq. (1).
    """
    sides = _positive("sides_m", sides_m)
    half = sides / (2.0 * np.max(sides, axis=-1, keepdims=True))
    x, y, z = half[..., 0], half[..., 1], half[..., 2]
    return np.stack([_prism_factor_along_c(y, z, x), _prism_factor_along_c(z, x, y),
                     _prism_factor_along_c(x, y, z)], axis=-1)


def hollow_sphere_polarisability_m3(outer_radius_m, wall_m, relative_permeability):
    r"""Induced moment per unit field of a hollow sphere of permeability mu_r [m^3].

    Parameters
    ----------
    outer_radius_m, wall_m : array_like [m]
        Outer radius a2 and wall thickness a2 - a1 (0 < wall <= radius; wall = radius is solid).
    relative_permeability : array_like
        mu_r >= 1; ``inf`` is allowed (the limit).

    Returns
    -------
    array [m^3]
        :math:`\alpha` with :math:`m = \alpha H_0`.

    Notes
    -----
    With :math:`q = (a_1/a_2)^3`,

    .. math:: \frac{m}{4\pi a_2^3 H_0} = \frac{(\mu-1)(2\mu+1)(1-q)}{(2\mu+1)(\mu+2) -
              2(\mu-1)^2 q},

    written here with every factor divided by :math:`\mu^2` so that :math:`\mu = \infty` gives
    the solid sphere's :math:`4\pi a_2^3`. For a thin wall t and large :math:`\mu` the ratio to
    the solid sphere is about :math:`\mu t/(\mu t + 1.5 a_2)`.

    References
    ----------
    J. C. Maxwell, *A Treatise on Electricity and Magnetism*, 3rd ed. (1891), vol. 2,
    §§431-433 (a hollow spherical shell in a uniform field).
    """
    outer = _positive("outer_radius_m", outer_radius_m)
    wall = _positive("wall_m", wall_m)
    if np.any(wall > outer):
        raise ValueError("the wall of a hollow sphere cannot be thicker than its radius")
    mu = np.asarray(relative_permeability, dtype=float)
    if np.any(~(mu >= 1.0)):
        raise ValueError(f"relative permeability must be at least 1, got {mu.tolist()}")
    inv = np.where(np.isinf(mu), 0.0, 1.0 / mu)
    q = (1.0 - wall / outer) ** 3
    numerator = (1.0 - inv) * (2.0 + inv) * (1.0 - q)
    denominator = (2.0 + inv) * (1.0 + 2.0 * inv) - 2.0 * (1.0 - inv) ** 2 * q
    return 4.0 * np.pi * outer ** 3 * numerator / denominator
