"""The worst case of a disturbance that turns with the Earth's field, over headings, attitude and
every open choice (deviation.physics.turning), against the test's own brute force.

The brute force here swings the vessel itself: scipy's rotations in the aerospace order (heading
about down, pitch about the new y, heel about the new x), the vessel's frame turned to ship's axes
by its own sign flip, every vertex of the zonotopes enumerated, headings on a fine grid. A
proven bound must never be below what the brute force reaches, and must be within the stated
tolerance (plus the sampling's own gap) of it.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from deviation.physics import soft_iron, turning

H, Z = 20.0, 40.0      # µT: the check values' field (check-values.md, "Steel")


def _swing(fixed, matrix, headings_deg, heel_deg=0.0, pitch_deg=0.0, beta=0.0):
    """Largest |deviation| [deg] over the given orientations, with a part of unknown direction
    beta counted at its worst (the tangent of its disc), by the test's own rotations."""
    psi, phi, theta = np.meshgrid(np.atleast_1d(headings_deg), np.atleast_1d(heel_deg),
                                  np.atleast_1d(pitch_deg), indexing="ij")
    rot = Rotation.from_euler("ZYX", np.stack([psi.ravel(), theta.ravel(), phi.ravel()], -1),
                              degrees=True).as_matrix()                  # body -> north-east-down
    flip = np.diag([1.0, -1.0, -1.0])                                     # x fwd, y port, z up
    earth = np.array([H, 0.0, Z])
    seen = np.einsum("rji,j->ri", rot, earth) @ flip                      # F in the vessel frame
    b_vessel = fixed + seen @ matrix.T
    b = np.einsum("rij,rj->ri", rot, b_vessel @ flip)
    north, east = H + b[:, 0], b[:, 1]
    size = np.hypot(north, east)
    return float(np.max(np.degrees(np.abs(np.arctan2(east, north))
                                   + np.arcsin(np.clip(beta / size, 0.0, 1.0)))))


def _brute(problem, headings, heel=0.0, pitch=0.0):
    best = 0.0
    n, m = problem.generators.shape[1], problem.matrix_generators.shape[1]
    for s in itertools.product([-1.0, 1.0], repeat=n):
        for t in itertools.product([-1.0, 1.0], repeat=m):
            fixed = (problem.centre[0] + np.array(s) @ problem.generators[0]
                     + np.array(t) @ problem.matrix_fixed[0])
            matrix = problem.matrix[0] + np.einsum("j,jab->ab", np.array(t),
                                                   problem.matrix_generators[0])
            best = max(best, _swing(fixed, matrix, headings, heel, pitch, problem.unknown[0]))
    return best


def _random_problem(rng, n=2, m=3, beta=0.2, coupled=False):
    return turning.Turning.of(rng.normal(0, 2, (1, 3)), rng.normal(0, 1, (1, n, 3)),
                              rng.normal(0, 0.03, (1, 3, 3)), rng.normal(0, 0.01, (1, m, 3, 3)),
                              [beta], rng.normal(0, 0.5, (1, m, 3)) if coupled else None)


def test_the_rotation_is_the_aerospace_order_with_the_vessel_frame_flipped():
    # The test's own scipy rotation against the module's: a vector in the vessel frame (x
    # forward, y port, z up) reaches north-east-down the same way.
    rng = np.random.default_rng(0)
    angles = rng.uniform(-60, 60, (20, 3))
    ours = turning.rotation(*np.radians(angles.T))
    theirs = Rotation.from_euler("ZYX", angles[:, [0, 2, 1]], degrees=True).as_matrix() \
        @ np.diag([1.0, -1.0, -1.0])
    assert np.allclose(ours, theirs, atol=1e-14)


def test_without_choices_the_worst_over_headings_is_the_exact_one():
    # soft_iron's exact worst (roots of a trigonometric polynomial, Boyd 2006) is the oracle;
    # the bound is above it and within the tolerance.
    rng = np.random.default_rng(1)
    for _ in range(6):
        matrix, fixed, beta = rng.normal(0, 0.02, (3, 3)), rng.normal(0, 2, 3), 0.3
        worst = turning.worst_deviation(turning.Turning.of(fixed[None], matrix=matrix[None],
                                                           unknown=[beta]), H, Z)
        exact = soft_iron.max_deviation_with_unknown_part(matrix, fixed, H, Z, beta).max_abs_deg
        assert exact - 1e-9 <= worst.bound_deg[0] <= exact + turning.TOLERANCE_DEG
        assert worst.found_deg[0] <= exact + 1e-9


@pytest.mark.parametrize("seed", [2, 3, 4])
def test_level_worst_over_switching_and_bands_holds_against_brute_force(seed):
    # Every vertex of both zonotopes, 0.05 degree headings: the level deviation's largest is
    # smooth, so a grid this fine reaches within 1e-4 degrees of it.
    problem = _random_problem(np.random.default_rng(seed), coupled=True)
    worst = turning.worst_deviation(problem, H, Z)
    brute = _brute(problem, np.arange(0.0, 360.0, 0.05))
    assert worst.bound_deg[0] >= brute - 1e-6
    assert worst.bound_deg[0] <= brute + turning.TOLERANCE_DEG + 1e-3


@pytest.mark.slow
@pytest.mark.parametrize("seed", [5, 6])
def test_attitude_worst_holds_against_brute_force(seed):
    problem = _random_problem(np.random.default_rng(seed))
    worst = turning.worst_deviation(problem, H, Z, 20.0, 10.0)
    brute = _brute(problem, np.arange(0.0, 360.0, 0.5), np.linspace(-20, 20, 41),
                   np.linspace(-10, 10, 21))
    assert worst.bound_deg[0] >= brute - 1e-6
    # The grid's own gap: half a step of 0.5 degrees in heading and 1 degree of heel.
    assert worst.bound_deg[0] <= brute + turning.TOLERANCE_DEG + 0.05


def test_a_sampled_maximum_would_understate_the_bound():
    # Mutation guard: eight headings (a naive swing) miss the worst; the bound does not.
    problem = _random_problem(np.random.default_rng(7), n=1, m=0)
    worst = turning.worst_deviation(problem, H, Z)
    eight = _brute(problem, np.arange(0.0, 360.0, 45.0))
    fine = _brute(problem, np.arange(0.0, 360.0, 0.05))
    assert eight < fine - 0.01
    assert worst.bound_deg[0] >= fine - 1e-6


def test_the_signs_found_reach_the_value_found():
    # The switching and band reported are real: that choice, swung, reaches the found value.
    problem = _random_problem(np.random.default_rng(8), n=3, m=3, beta=0.0)
    worst = turning.worst_deviation(problem, H, Z)
    reached = turning.deviation_at(problem, worst.signs, worst.matrix_signs, H, Z,
                                   worst.heading_deg[0])
    assert abs(abs(float(reached[0])) - worst.found_deg[0]) < 1e-9


def test_the_set_reaching_the_south_half_line_is_overwhelmed():
    # A fixed field of 1.5 H pointing aft: at heading 0 the needle's resultant points south.
    worst = turning.worst_deviation(turning.Turning.of([[-1.5 * H, 0.0, 0.0]]), H, Z)
    assert worst.bound_deg[0] == 180.0 and worst.overwhelmed[0]


def test_widest_angle_of_a_zonotope_against_its_dense_sampling():
    # The vertex walk and the support iteration against points filling the zonotope: the
    # sampled largest angle never exceeds the computed one and comes within 1e-3 rad of it.
    rng = np.random.default_rng(9)
    centre = np.array([[12.0, 3.0]])
    gens = rng.normal(0, 2, (1, 4, 2))
    beta = np.array([0.5])
    value, *_ = turning._widest_angle(centre, gens, beta)
    fast, *_ = turning._widest_fast(centre, gens, beta)
    t = rng.uniform(-1, 1, (200_000, 4))
    t[:50_000] = np.sign(t[:50_000])
    points = centre[0] + t @ gens[0]
    size = np.hypot(*points.T)
    sampled = np.max(np.abs(np.arctan2(points[:, 1], points[:, 0]))
                     + np.arcsin(np.clip(beta[0] / size, 0, 1)))
    assert sampled <= value[0] + 1e-12
    assert value[0] - sampled < 1e-3
    assert fast[0] == pytest.approx(value[0], abs=1e-12)


def test_the_quick_bound_is_exact_for_a_pure_quadrantal_item():
    # A steel sphere ahead, mu -> infinity: rods a = 2k, e = -k (Poisson; k = (a/r)^3, the
    # sphere's polarisability 3V over 4 pi r^3), so D = 1.5 k / lambda, lambda = 1 + k/2, and
    # over headings the deviation of a pure D reaches asin(D) (NGA Pub. 226, ch. III).
    k = (0.17 / 1.0) ** 3
    matrix = k * np.diag([2.0, -1.0, -1.0])
    problem = turning.Turning.of([[0.0, 0.0, 0.0]], matrix=matrix[None])
    split = turning.isotropic_split(problem, H, Z)
    bound = np.degrees(np.arcsin(split.turning[0] / (H * split.lam_low[0])))
    d = 1.5 * k / (1 + k / 2)
    assert bound == pytest.approx(np.degrees(np.arcsin(d)), rel=1e-12)
    worst = turning.worst_deviation(problem, H, Z)
    assert worst.bound_deg[0] >= bound - 1e-9


@pytest.mark.parametrize("heel, pitch", [(0.0, 0.0), (15.0, 5.0)])
def test_the_quick_bound_never_falls_below_the_exact_figure(heel, pitch):
    rng = np.random.default_rng(10)
    for _ in range(4):
        problem = _random_problem(rng, n=0, m=3, beta=0.0)
        split = turning.isotropic_split(problem, H, Z, heel, pitch)
        # The fixed part with the induced column: its worst horizontal size over attitude, by
        # the test's own grid of heel and pitch (an upper bound is needed: add a step's worth).
        fixed = problem.centre[0] + split.fixed_centre[0]
        quick_reach = []
        for corner in itertools.product([-1.0, 1.0], repeat=3):
            vec = fixed + np.array(corner) @ split.fixed_generators[0]
            quick_reach.append(np.linalg.norm(vec) if heel or pitch else np.hypot(*vec[:2]))
        reach = max(quick_reach) + split.turning[0]
        quick = np.degrees(np.arcsin(min(1.0, reach / (H * split.lam_low[0]))))
        exact = turning.worst_deviation(problem, H, Z, heel, pitch).found_deg[0]
        assert quick >= exact - 1e-9


def test_total_field_bounds_hold_against_brute_force():
    # A disturbance a few per cent of F, as near a magnetometer: the second-order remainder
    # R^2/(2(F - R)) is then small and the bounds tight.
    rng = np.random.default_rng(11)
    big = _random_problem(rng, n=2, m=3, beta=0.0)
    problem = turning.Turning.of(big.centre / 5, big.generators / 5, big.matrix / 5,
                                 big.matrix_generators / 5)
    worst = turning.worst_total_field_error(problem, H, Z, 10.0, 5.0)
    total = np.hypot(H, Z)
    errors = []
    psi = np.arange(0.0, 360.0, 1.0)
    for s in itertools.product([-1.0, 1.0], repeat=2):
        for t in itertools.product([-1.0, 1.0], repeat=3):
            fixed = problem.centre[0] + np.array(s) @ problem.generators[0]
            matrix = problem.matrix[0] + np.einsum("j,jab->ab", np.array(t),
                                                   problem.matrix_generators[0])
            for heel in np.linspace(-10, 10, 11):
                for pitch in np.linspace(-5, 5, 5):
                    b = soft_iron.level_disturbance(matrix, fixed, H, Z, psi, heel, pitch)
                    seen = np.sqrt((H + b[:, 0]) ** 2 + b[:, 1] ** 2 + (Z + b[:, 2]) ** 2)
                    errors.append(seen - total)
    errors = np.concatenate(errors)
    assert worst.high[0] >= errors.max() - 1e-9
    assert worst.low[0] <= errors.min() + 1e-9
    # Tight: within the tolerance, the remainder and the grid's gap (1 degree of heading
    # moves the error by at most |b| pi/180).
    gap = turning.TOLERANCE_OF_H * H + 0.02
    assert worst.high[0] - errors.max() < worst.remainder[0] + gap
    assert errors.min() - worst.low[0] < worst.remainder[0] + gap
