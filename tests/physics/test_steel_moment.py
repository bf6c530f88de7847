"""Induced moments of steel items and their field matrices (deviation.physics.induced)."""

from __future__ import annotations

import magpylib as magpy
import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from deviation.physics import demag, induced, magnetised

MU0 = 4e-7 * np.pi


def test_sphere_polarisability_is_jacksons():
    # Permeable sphere: m = 4 pi a^3 (mu-1)/(mu+2) H0 (Jackson, 3rd ed., §5.11; check-values.md).
    band = induced.polarisability_band("sphere", [0.34], 200.0, 200.0)
    want = 4 * np.pi * 0.17 ** 3 * 199 / 202
    np.testing.assert_allclose(band.low_m3, want, rtol=1e-13)
    np.testing.assert_allclose(band.high_m3, want, rtol=1e-13)
    steel = induced.polarisability_band("sphere", [0.34], np.inf, np.inf)
    np.testing.assert_allclose(steel.high_m3, 3 * 4 / 3 * np.pi * 0.17 ** 3, rtol=1e-13)  # 3V


def test_ellipsoid_polarisability_is_v_over_n_for_steel():
    # Ellipsoid along a principal axis: M = chi H0/(1 + N chi) -> m = V H0/N (check-values.md).
    axes = np.array([0.5, 0.2, 0.1])
    band = induced.polarisability_band("ellipsoid", 2 * axes, np.inf, np.inf)
    volume = 4 / 3 * np.pi * np.prod(axes)
    np.testing.assert_allclose(band.high_m3, volume / demag.ellipsoid_factors(axes), rtol=1e-12)
    assert band.exact_shape


def _cell_solution(sides, mu, cells):
    """Independent numerical truth: the prism cut into uniform cuboid cells, each cell's
    magnetisation chi times the applied field plus every cell's field at its centre
    (collocation; magpylib's Cuboid for the cell fields), solved as one linear system."""
    chi = mu - 1
    counts = np.array(cells)
    size = np.asarray(sides) / counts
    grid = [(np.arange(n) + 0.5) * s - L / 2 for n, s, L in zip(counts, size, sides)]
    centres = np.stack(np.meshgrid(*grid, indexing="ij"), axis=-1).reshape(-1, 3)
    n = len(centres)
    coupling = np.zeros((3 * n, 3 * n))
    for j in range(3):
        for k, centre in enumerate(centres):
            h = magpy.magnet.Cuboid(dimension=size, polarization=np.eye(3)[j],
                                    position=centre).getH(centres) * MU0    # H per unit M
            coupling[j::3, 3 * k + j] = 0.0
            coupling[0::3, 3 * k + j] = h[:, 0]
            coupling[1::3, 3 * k + j] = h[:, 1]
            coupling[2::3, 3 * k + j] = h[:, 2]
    alpha = []
    for axis in range(3):
        applied = np.tile(np.eye(3)[axis], n)
        magnetisation = np.linalg.solve(np.eye(3 * n) - chi * coupling, chi * applied)
        alpha.append(magnetisation[axis::3].sum() * np.prod(size))
    return np.array(alpha)


@pytest.mark.slow
@pytest.mark.parametrize("sides,mu,cells", [((0.3, 0.3, 0.3), 1000.0, (6, 6, 6)),
                                            ((0.1, 0.1, 0.8), 500.0, (2, 2, 16))])
def test_box_band_holds_an_independent_numerical_solution(sides, mu, cells):
    # A cell-by-cell self-consistent solution (magpylib cuboid fields as the oracle) lies
    # inside the proven band; a wrong upper bound (inscribed instead of enclosing ellipsoid)
    # or the uniform trial taken as the answer would not hold it.
    band = induced.polarisability_band("box", sides, mu, mu)
    truth = _cell_solution(sides, mu, cells)
    assert np.all(truth >= band.low_m3 * (1 - 0.02))
    assert np.all(truth <= band.high_m3)
    # and the uniform-trial figure alone understates a steel cube (a flattering figure):
    if sides[0] == sides[2]:
        volume = np.prod(sides)
        trial = volume / (1 / (mu - 1) + 1 / 3)
        assert truth[0] > 1.1 * trial


def test_cube_band_holds_the_published_conductor_polarisability():
    # A perfectly conducting cube's polarisability is 3.6442 a^3 in units where a sphere's is
    # 3V (from memory: Mansfield, Douglas & Garboczi, Phys. Rev. E 64, 061401 (2001)); the
    # mu -> infinity limit of a soft-iron cube is the same problem.
    band = induced.polarisability_band("box", [1.0, 1.0, 1.0], np.inf, np.inf)
    assert np.all(band.low_m3 < 3.6442) and np.all(band.high_m3 > 3.6442)
    assert np.all(band.low_m3 == pytest.approx(3.0))       # uniform trial, N = 1/3


def test_band_grows_with_permeability_and_holds_inscribed_and_enclosing():
    low = induced.polarisability_band("cylinder", [1.0, 0.1], 100.0, 100.0)
    high = induced.polarisability_band("cylinder", [1.0, 0.1], 1000.0, 1000.0)
    assert np.all(high.low_m3 > low.low_m3) and np.all(high.high_m3 > low.high_m3)
    # the inscribed prolate spheroid (exact) is below the cylinder's low figure
    inscribed = induced.ellipsoid_polarisability_m3([0.05, 0.05, 0.5], 1000.0)
    assert np.all(high.low_m3 >= inscribed - 1e-15)
    # transverse of a long rod: about 2V (N = 1/2), never V/N_axial (a swapped factor)
    volume = np.pi * 0.05 ** 2
    assert high.low_m3[0] == pytest.approx(2 * volume, rel=0.1)
    assert high.high_m3[0] < 5 * volume


def test_hollow_items_sit_below_their_solid_upper_bound():
    solid = induced.polarisability_band("box", [1.0, 0.5, 0.5], 100.0, 1000.0)
    tank = induced.polarisability_band("hollow box", [1.0, 0.5, 0.5], 100.0, 1000.0, 0.003)
    np.testing.assert_allclose(tank.high_m3, solid.high_m3)
    assert np.all(tank.low_m3 < solid.low_m3)
    assert not tank.low_is_bound
    with pytest.raises(ValueError, match="wall"):
        induced.polarisability_band("hollow box", [1.0, 0.5, 0.5], 100.0, 1000.0)
    with pytest.raises(ValueError, match="no wall"):
        induced.polarisability_band("box", [1.0, 0.5, 0.5], 100.0, 1000.0, 0.003)


def test_field_matrix_of_a_box_matches_magpylib_in_a_rotated_frame():
    # Oracle: magpylib's Cuboid with the same orientation and the moment alpha F / mu0.
    rotation = Rotation.from_euler("zyx", [30, -20, 10], degrees=True)
    sides = np.array([0.6, 0.3, 0.2])
    alpha = np.array([0.05, 0.02, 0.01])
    centre = np.array([0.8, -0.3, -0.4])
    sensor = np.zeros(3)
    earth = np.array([20e-6, 3e-6, -40e-6])
    matrix = induced.field_matrix("box", sides, centre, sensor, alpha, rotation.as_matrix())
    moment_body = alpha * (rotation.inv().apply(earth) / MU0)
    polarization = MU0 * moment_body / np.prod(sides)
    want = magpy.magnet.Cuboid(dimension=sides, polarization=polarization, position=centre,
                               orientation=rotation).getB(sensor)
    np.testing.assert_allclose(matrix @ earth, want, rtol=1e-9, atol=1e-15)


def test_point_dipole_near_a_rod_is_not_the_extended_body():
    # A rod upright 0.5 m ahead and 0.25 m below (the check-values case): the point dipole's
    # horizontal field is 3.15 x the uniformly magnetised cylinder's (check-values.md: 5.64 vs
    # 1.79 uT); field_matrix uses the extended body unless asked for the dipole.
    alpha = np.array([2.0, 2.0, 30.0]) * np.pi * 0.05 ** 2
    kwargs = dict(centre_m=[0.5, 0.0, -0.25], sensor_m=[0.0, 0.0, 0.0], alpha_m3=alpha)
    extended = induced.field_matrix("rod", [1.0, 0.1], **kwargs)
    dipole = induced.field_matrix("rod", [1.0, 0.1], point_dipole=True, **kwargs)
    down = np.array([0.0, 0.0, -40e-6])
    ratio = np.hypot(*(dipole @ down)[:2]) / np.hypot(*(extended @ down)[:2])
    assert ratio == pytest.approx(5.64 / 1.79, rel=0.01)


def test_unknown_orientation_radius_holds_for_every_orientation():
    band = induced.polarisability_band("cylinder", [0.4, 0.05], 100.0, 2000.0)
    centre, sensor = np.array([2.0, 0.5, -1.0]), np.zeros(3)
    fixed, radius = induced.unknown_orientation_matrix(centre, sensor, band, 0.4)
    earth = np.array([18.0, -2.0, -45.0])
    kernel = magnetised.dipole_tensor(sensor - centre)
    rng = np.random.default_rng(7)
    worst = 0.0
    for rotation in Rotation.random(300, random_state=rng).as_matrix():
        alpha = rng.uniform(band.low_m3, band.high_m3)
        b = kernel @ rotation @ np.diag(alpha) @ rotation.T @ earth
        worst = max(worst, np.linalg.norm(b - fixed @ earth) / np.linalg.norm(earth))
    assert worst <= radius
    assert worst >= 0.5 * radius                 # and the radius is not a gross overstatement
    with pytest.raises(ValueError, match="orientation"):
        induced.unknown_orientation_matrix([0.5, 0, 0], sensor, band, 0.4)


def test_band_corners_are_the_box():
    band = induced.polarisability_band("box", [1, 2, 3], 50.0, 500.0)
    corners = induced.band_corners(band)
    assert corners.shape == (8, 3)
    assert {tuple(c) for c in corners} == {
        (x, y, z) for x in (band.low_m3[0], band.high_m3[0])
        for y in (band.low_m3[1], band.high_m3[1]) for z in (band.low_m3[2], band.high_m3[2])}


def test_bad_items_are_refused():
    with pytest.raises(ValueError, match="unknown shape"):
        induced.polarisability_band("torus", [1.0], 100.0, 200.0)
    with pytest.raises(ValueError, match="needs 2"):
        induced.polarisability_band("rod", [1.0], 100.0, 200.0)
    with pytest.raises(ValueError, match="below its low"):
        induced.polarisability_band("rod", [1.0, 0.1], 200.0, 100.0)
    with pytest.raises(ValueError, match="at least 1"):
        induced.polarisability_band("rod", [1.0, 0.1], 0.5, 100.0)
