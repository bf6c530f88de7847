"""Fields of magnetised bodies (deviation.physics.magnetised) against magpylib and limits."""

from __future__ import annotations

import magpylib as magpy
import numpy as np
import pytest

from deviation.physics import demag, magnetised

MU0 = 4e-7 * np.pi


def _outside_box(points, half, margin):
    return points[np.any(np.abs(points) > half + margin, axis=1)]


def test_dipole_tensor_matches_magpylib_dipole():
    # Oracle: magpylib.misc.Dipole, B = mu0 T m (magpylib takes the CODATA mu0, 1.3e-10 from
    # 4e-7 pi).
    rng = np.random.default_rng(3)
    points = rng.normal(size=(200, 3))
    for j in range(3):
        moment = np.eye(3)[j]
        want = magpy.misc.Dipole(moment=moment).getB(points)
        np.testing.assert_allclose(MU0 * magnetised.dipole_tensor(points)[:, :, j], want,
                                   rtol=1e-9, atol=1e-20)


def test_cuboid_tensor_matches_magpylib_cuboid_everywhere_outside():
    # Oracle: magpylib's uniformly magnetised Cuboid (J = mu0 M = 1 T, so B = T J outside),
    # at random points and on the planes of the faces and the lines through the edges.
    rng = np.random.default_rng(4)
    sides = np.array([1.0, 0.3, 0.2])
    half = sides / 2
    points = _outside_box(rng.uniform(-1.5, 1.5, (3000, 3)), half, 1e-6)
    special = np.array([
        [0.8, 0.15, 0.1], [0.8, 0.15, 0.0], [0.5, -0.4, 0.1], [0.7, -0.15, -0.1],
        [0.2, 0.15, 0.5], [0.0, 0.0, 0.1001], [0.5, 0.15, 0.3], [-2.0, 0.0, 0.0],
        [0.5, 0.15, -3.0], [0.5000001, 0.0, 0.0],
    ])
    points = np.vstack([points, special])
    tensor = magnetised.cuboid_tensor(points, sides)
    for j in range(3):
        want = magpy.magnet.Cuboid(dimension=sides, polarization=np.eye(3)[j]).getB(points)
        np.testing.assert_allclose(tensor[:, :, j], want, rtol=1e-9, atol=1e-12)


def test_cylinder_tensor_matches_magpylib_within_its_proven_bound():
    # Oracle: magpylib's uniformly magnetised Cylinder (Derby & Olbert; Caciagli et al.).
    rng = np.random.default_rng(5)
    length, diameter = 1.0, 0.1
    points = rng.uniform(-1.0, 1.0, (2000, 3))
    rho = np.hypot(points[:, 0], points[:, 1])
    points = points[(rho > diameter / 2 + 1e-4) | (np.abs(points[:, 2]) > length / 2 + 1e-4)]
    near = np.array([[0.0505, 0.0, 0.2], [0.0, 0.03, 0.5004], [0.0501, 0.0, 0.5001],
                     [0.2, 0.1, 0.0], [0.0, 0.0, 0.6], [0.0, 0.0, -3.0]])
    points = np.vstack([points, near])
    tensor = magnetised.cylinder_tensor(points, length, diameter)
    scale = np.pi * (diameter / 2) ** 2 * length / (4 * np.pi * np.linalg.norm(points, axis=1) ** 3)
    for j in range(3):
        want = magpy.magnet.Cylinder(dimension=(diameter, length),
                                     polarization=np.eye(3)[j]).getB(points)
        error = np.max(np.abs(tensor[:, :, j] - want), axis=1)
        # the bound is rtol = 1e-9 of the dipole scale; magpylib's own rounding adds ~1e-12
        assert np.all(error <= 1e-9 * scale + 1e-11)


def test_cylinder_quadrature_bound_is_honest_at_a_loose_tolerance():
    # Asked for 1e-3 of the dipole scale, the error against the 1e-12 answer stays within it,
    # while the quadrature uses few nodes: the bound is neither vacuous nor violated.
    rng = np.random.default_rng(6)
    points = rng.uniform(-0.4, 0.4, (500, 3)) + np.array([0.0, 0.0, 0.0])
    rho = np.hypot(points[:, 0], points[:, 1])
    points = points[(rho > 0.06) | (np.abs(points[:, 2]) > 0.26)]
    loose = magnetised.cylinder_tensor(points, 0.5, 0.1, rtol=1e-3)
    tight = magnetised.cylinder_tensor(points, 0.5, 0.1, rtol=1e-12)
    scale = np.pi * 0.05 ** 2 * 0.5 / (4 * np.pi * np.linalg.norm(points, axis=1) ** 3)
    assert np.all(np.max(np.abs(loose - tight), axis=(1, 2)) <= 1e-3 * scale)


@pytest.mark.parametrize("body", ["cuboid", "cylinder"])
def test_extended_body_tends_to_its_dipole_far_away(body):
    # Far field of a uniformly magnetised body = dipole m = M V, the error falling as 1/r^2
    # relative (the next multipole of a centred symmetric body is the octupole, 1/r^5).
    direction = np.array([0.3, -0.5, 0.8]) / np.linalg.norm([0.3, -0.5, 0.8])
    errors = []
    for r in (5.0, 10.0, 20.0):
        point = r * direction
        if body == "cuboid":
            volume = 0.6 * 0.2 * 0.1
            tensor = magnetised.cuboid_tensor(point, [0.6, 0.2, 0.1])
        else:
            volume = np.pi * 0.1 ** 2 * 0.6
            tensor = magnetised.cylinder_tensor(point, 0.6, 0.2)
        dipole = volume * magnetised.dipole_tensor(point)
        errors.append(np.max(np.abs(tensor - dipole)) / np.max(np.abs(dipole)))
    assert errors[0] < 1e-2
    assert errors[1] / errors[0] == pytest.approx(0.25, rel=0.05)
    assert errors[2] / errors[1] == pytest.approx(0.25, rel=0.05)


def test_rod_check_value_point_dipole_overstates_the_extended_field():
    # check-values.md: a 1 m x 0.1 m steel rod 0.5 m ahead and 0.25 m below a sensor, point
    # dipole 5.64 uT horizontal vs 1.79 uT as a uniformly magnetised cylinder of the same
    # moment (magpylib). Reproduced with the rod upright, magnetised by Z = 40 uT with the
    # moment of the inscribed prolate spheroid (mu_r -> infinity, m = V_s Z/(mu0 N_s)).
    length, diameter = 1.0, 0.1
    n_axial = demag.ellipsoid_factors([0.05, 0.05, 0.5])[2]
    moment = 4 / 3 * np.pi * 0.05 ** 2 * 0.5 / n_axial * -40e-6 / MU0     # along z, down
    sensor = np.array([-0.5, 0.0, 0.25])                                  # from the rod's centre
    b_dipole = MU0 * magnetised.dipole_tensor(sensor)[:, 2] * moment
    magnetisation = moment / (np.pi * 0.05 ** 2 * length)
    b_body = MU0 * magnetised.cylinder_tensor(sensor, length, diameter)[:, 2] * magnetisation
    assert np.hypot(*b_dipole[:2]) == pytest.approx(5.64e-6, abs=0.005e-6)
    assert np.hypot(*b_body[:2]) == pytest.approx(1.79e-6, abs=0.005e-6)
    oracle = magpy.magnet.Cylinder(dimension=(diameter, length),
                                   polarization=(0, 0, MU0 * magnetisation)).getB(sensor)
    np.testing.assert_allclose(b_body, oracle, rtol=1e-9, atol=1e-18)


def test_points_inside_or_on_a_body_are_refused():
    with pytest.raises(ValueError, match="inside or on"):
        magnetised.cuboid_tensor([0.5, 0.0, 0.0], [1.0, 1.0, 1.0])
    with pytest.raises(ValueError, match="inside or on"):
        magnetised.cylinder_tensor([0.05, 0.0, 0.1], 1.0, 0.1)
    with pytest.raises(ValueError):
        magnetised.cylinder_tensor([0.0500000001, 0.0, 0.1], 1.0, 0.1)
    with pytest.raises(ValueError):
        magnetised.dipole_tensor([0.0, 0.0, 0.0])


def test_ellipsoid_tensor_of_a_sphere_is_the_dipole():
    # Outside a uniformly magnetised sphere the field is exactly the dipole m = M V (Jackson
    # §5.10).
    rng = np.random.default_rng(9)
    points = rng.normal(size=(300, 3))
    points = points[np.linalg.norm(points, axis=1) > 0.51]
    volume = 4 / 3 * np.pi * 0.5 ** 3
    np.testing.assert_allclose(magnetised.ellipsoid_tensor(points, [0.5, 0.5, 0.5]),
                               volume * magnetised.dipole_tensor(points), atol=1e-14)


def test_ellipsoid_tensor_meets_the_jump_condition_at_its_surface():
    # Just outside the surface, H_out = H_in + (M . n) n with H_in = -N M (the normal component
    # of B continuous, the tangential H continuous; Jackson §5.9): T = -N + n n^T.
    axes = np.array([1.0, 0.4, 0.2])
    rng = np.random.default_rng(10)
    for _ in range(20):
        direction = rng.normal(size=3)
        surface = direction / np.sqrt(np.sum(direction ** 2 / axes ** 2))
        normal = surface / axes ** 2
        normal /= np.linalg.norm(normal)
        tensor = magnetised.ellipsoid_tensor(surface * (1 + 1e-10), axes)
        want = -np.diag(demag.ellipsoid_factors(axes)) + np.outer(normal, normal)
        np.testing.assert_allclose(tensor, want, atol=1e-7)


def test_ellipsoid_tensor_tends_to_the_dipole_far_away():
    axes = np.array([0.6, 0.2, 0.1])
    volume = 4 / 3 * np.pi * np.prod(axes)
    point = np.array([3.0, -4.0, 12.0])
    tensor = magnetised.ellipsoid_tensor(point, axes)
    dipole = volume * magnetised.dipole_tensor(point)
    assert np.max(np.abs(tensor - dipole)) / np.max(np.abs(dipole)) < 2e-3
    with pytest.raises(ValueError, match="inside or on"):
        magnetised.ellipsoid_tensor([0.1, 0.0, 0.0], axes)
