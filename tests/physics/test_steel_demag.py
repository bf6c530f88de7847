"""Demagnetising factors (deviation.physics.demag) against closed forms, quadrature and magpylib."""

from __future__ import annotations

import magpylib as magpy
import numpy as np
import pytest
from scipy import integrate, special

from deviation.physics import demag

MU0 = 4e-7 * np.pi


def test_carlson_integrals_match_scipy():
    # Oracle: scipy.special.elliprf / elliprd (Carlson's integrals in SciPy), arguments over
    # twelve decades.
    rng = np.random.default_rng(1)
    x, y, z = 10 ** rng.uniform(-9, 3, (3, 2000))
    np.testing.assert_allclose(demag.carlson_rf(x, y, z), special.elliprf(x, y, z), rtol=2e-15)
    np.testing.assert_allclose(demag.carlson_rd(x, y, z), special.elliprd(x, y, z), rtol=2e-15)
    # one zero argument (complete integrals)
    np.testing.assert_allclose(demag.carlson_rf(0.0, y, z), special.elliprf(0.0, y, z), rtol=2e-15)
    np.testing.assert_allclose(demag.carlson_rd(0.0, y, z), special.elliprd(0.0, y, z), rtol=2e-15)


def test_sphere_factor_is_one_third():
    # Sphere: N = 1/3 on every axis (Maxwell, Treatise §437; any textbook).
    np.testing.assert_allclose(demag.ellipsoid_factors([2.0, 2.0, 2.0]), 1 / 3, rtol=1e-15)


@pytest.mark.parametrize("ratio", [1.001, 1.5, 3.0, 10.0, 100.0])
def test_prolate_spheroid_matches_osborn_closed_form(ratio):
    # Osborn (1945) / Stoner (1945), prolate spheroid of aspect m = c/a > 1, along c:
    # N = [m/sqrt(m^2-1) ln(m + sqrt(m^2-1)) - 1]/(m^2 - 1); across, (1 - N)/2
    # (also check-values.md, "Steel").
    m = ratio
    root = np.sqrt(m * m - 1)
    along = (m / root * np.log(m + root) - 1) / (m * m - 1)
    got = demag.ellipsoid_factors([0.3, 0.3, 0.3 * m])
    np.testing.assert_allclose(got, [(1 - along) / 2, (1 - along) / 2, along], rtol=1e-11)


@pytest.mark.parametrize("ratio", [1.001, 2.0, 10.0, 1000.0])
def test_oblate_spheroid_matches_osborn_closed_form(ratio):
    # Osborn (1945), oblate spheroid a = b = m c, along the short axis c:
    # N = m^2/(m^2-1) [1 - arcsin(e)/sqrt(m^2-1)], e = sqrt(m^2-1)/m (from memory, Osborn's
    # eq. for the oblate case; it tends to 1 for a disc and 1/3 for a sphere).
    m = ratio
    root = np.sqrt(m * m - 1)
    along = m * m / (m * m - 1) * (1 - np.arcsin(root / m) / root)
    got = demag.ellipsoid_factors([m, m, 1.0])
    np.testing.assert_allclose(got[2], along, rtol=1e-10)
    np.testing.assert_allclose(got[0], (1 - along) / 2, rtol=1e-10)


def test_general_ellipsoid_matches_quadrature_of_its_integral():
    # Oracle: scipy.integrate.quad of N_a = (abc/2) int_0^inf ds / ((a^2+s) sqrt(prod(a_i^2+s)))
    # (Osborn 1945, eq. for the general ellipsoid), for a triaxial ellipsoid.
    axes = np.array([3.0, 1.2, 0.4])
    want = []
    for i in range(3):
        def integrand(s, i=i):
            return 1 / ((axes[i] ** 2 + s) * np.sqrt(np.prod(axes ** 2 + s)))
        value = integrate.quad(integrand, 0, np.inf, epsabs=0, epsrel=1e-13, limit=500)[0]
        want.append(np.prod(axes) / 2 * value)
    got = demag.ellipsoid_factors(axes)
    np.testing.assert_allclose(got, want, rtol=1e-10)
    assert got.sum() == pytest.approx(1.0, abs=1e-14)


def _cylinder_by_hankel(gamma):
    # N_z = (2/L) int_0^inf J1(kR)^2 (1 - exp(-kL)) / k^2 dk: the interaction of the two charged
    # end discs (1/r = int J0(k rho) e^{-k|z|} dk; a disc's transform 2 pi R J1(kR)/k), R = 1/2.
    def f(k):
        return special.j1(k / 2) ** 2 * -np.expm1(-k * gamma) / k ** 2
    return 2 / gamma * integrate.quad(f, 0, np.inf, limit=4000, epsabs=1e-13)[0]


@pytest.mark.parametrize("gamma", [0.2, 0.5, 1.0, 2.0, 10.0])
def test_cylinder_axial_factor_matches_disc_interaction_quadrature(gamma):
    axial, transverse = demag.cylinder_factors(gamma, 1.0)
    assert axial == pytest.approx(_cylinder_by_hankel(gamma), rel=1e-7)
    assert axial + 2 * transverse == pytest.approx(1.0, abs=1e-14)


def test_cylinder_factor_limits():
    # Long rod: N_z -> 4/(3 pi gamma) (from the disc integral, int J1(x)^2/x^2 dx = 4/(3 pi));
    # thin disc: N_z -> 1 (infinite plate).
    axial, _ = demag.cylinder_factors(1e4, 1.0)
    assert axial == pytest.approx(4 / (3 * np.pi * 1e4), rel=1e-3)
    axial, _ = demag.cylinder_factors(1e-4, 1.0)
    assert axial == pytest.approx(1.0, abs=1e-3)


def test_prism_factors_cube_and_sum_rule():
    # Cube: 1/3 by symmetry and the sum rule D_x + D_y + D_z = 1 (Aharoni 1998).
    np.testing.assert_allclose(demag.prism_factors([0.7, 0.7, 0.7]), 1 / 3, rtol=1e-14)
    rng = np.random.default_rng(2)
    sides = 10 ** rng.uniform(-2, 2, (200, 3))
    np.testing.assert_allclose(demag.prism_factors(sides).sum(axis=-1), 1.0, atol=1e-9)


@pytest.mark.parametrize("sides", [(1.0, 2.0, 3.0), (1.0, 1.0, 0.05), (0.1, 0.2, 1.5)])
def test_prism_factors_match_magpylib_volume_average(sides):
    # Oracle: magpylib's uniformly magnetised Cuboid; the magnetometric factor is minus the
    # volume average of its internal H per unit M, taken by 28-point Gauss-Legendre per axis.
    sides = np.array(sides)
    x, w = np.polynomial.legendre.leggauss(28)
    grids = np.meshgrid(*[s / 2 * x for s in sides], indexing="ij")
    weights = np.einsum("i,j,k->ijk", *[s / 2 * w for s in sides]).reshape(-1)
    points = np.stack(grids, axis=-1).reshape(-1, 3)
    want = []
    for j in range(3):
        polarization = np.eye(3)[j]                    # J = mu0 M = 1 T
        h = magpy.magnet.Cuboid(dimension=sides, polarization=polarization).getH(points)
        want.append(-np.sum(weights * h[:, j]) / np.prod(sides) * MU0)
    np.testing.assert_allclose(demag.prism_factors(sides), want, atol=1e-4)


def test_prism_factor_is_not_the_ellipsoid_factor():
    # A 1:1:2 prism and the inscribed spheroid differ (guards a mix-up of the two formulas):
    # prolate spheroid of aspect 2 has N = 0.1736 along its axis (Osborn's closed form).
    assert demag.prism_factors([1, 1, 2])[2] == pytest.approx(0.1983, abs=1e-4)  # Aharoni eq. (1)
    assert demag.ellipsoid_factors([0.5, 0.5, 1.0])[2] == pytest.approx(0.17356, abs=1e-5)


def _shell_by_boundary_values(a1, a2, mu, h0=1.0):
    # The potential cos(theta) times: -A r (cavity), -B r + C/r^2 (wall), -H0 r + D/r^2
    # (outside); phi and mu d(phi)/dr continuous at a1 and a2; moment 4 pi D (Jackson ch. 5).
    matrix = np.array([
        [-a1, a1, -1 / a1 ** 2, 0],
        [-1, mu, 2 * mu / a1 ** 3, 0],
        [0, -a2, 1 / a2 ** 2, -1 / a2 ** 2],
        [0, -mu, -2 * mu / a2 ** 3, 2 / a2 ** 3],
    ])
    rhs = np.array([0, 0, -h0 * a2, -h0])
    return 4 * np.pi * np.linalg.solve(matrix, rhs)[3]


@pytest.mark.parametrize("wall,mu", [(0.003, 1000.0), (0.05, 200.0), (0.5, 50.0), (0.999, 300.0)])
def test_hollow_sphere_matches_boundary_value_solution(wall, mu):
    got = demag.hollow_sphere_polarisability_m3(1.0, wall, mu)
    assert got == pytest.approx(_shell_by_boundary_values(1 - wall, 1.0, mu), rel=1e-10)


def test_hollow_sphere_check_values():
    # check-values.md: at mu_r 1000 a wall of 0.3 % of the radius gives 0.67 of the solid's
    # moment (Maxwell, Treatise §433); solid: 4 pi a^3 (mu-1)/(mu+2) (Jackson ch. 5).
    solid = demag.hollow_sphere_polarisability_m3(1.0, 1.0, 1000.0)
    assert solid == pytest.approx(4 * np.pi * 999 / 1002, rel=1e-12)
    ratio = demag.hollow_sphere_polarisability_m3(1.0, 0.003, 1000.0) / solid
    assert ratio == pytest.approx(0.67, abs=0.005)
    assert demag.hollow_sphere_polarisability_m3(1.0, 0.003, np.inf) == pytest.approx(4 * np.pi)


def test_bad_sizes_are_refused():
    with pytest.raises(ValueError):
        demag.ellipsoid_factors([1.0, 0.0, 1.0])
    with pytest.raises(ValueError):
        demag.cylinder_factors(-1.0, 1.0)
    with pytest.raises(ValueError):
        demag.hollow_sphere_polarisability_m3(1.0, 2.0, 100.0)
    with pytest.raises(ValueError):
        demag.hollow_sphere_polarisability_m3(1.0, 0.1, 0.5)
