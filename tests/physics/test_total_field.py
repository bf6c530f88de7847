"""Total-field worst switching at any count: the zonotope's vertices with degenerate generators
(every run fore and aft, collinear fields), against brute force over every switching."""

import itertools
import math

import numpy as np
import pytest

from conftest import write_plan
from deviation.analysis import analyse
from deviation.electronic import electronic_report
from deviation.physics.total_field import (
    all_switchings,
    error_over_switchings,
    heading_error_peak_to_peak,
    inclination_over_switchings,
    inclination_range_deg,
    total_field_error_range,
    vertex_switchings,
)
from deviation.reader import read_plan

H_T, Z_T = 20e-6, 45e-6          # a mid-latitude site (round figures, no source needed)
F_T = math.hypot(H_T, Z_T)
MU0 = 4e-7 * math.pi             # vacuum permeability, pre-2019 exact value


def fore_and_aft_fields(n, rng, scale=3e-7):
    """n circuits' fields with no forward part: what runs laid fore and aft make (their
    Biot-Savart field is perpendicular to the run)."""
    v = rng.normal(size=(n, 3)) * scale
    v[:, 0] = 0.0
    return v


def hull_vertices(points):
    """Vertices of the convex hull of ``points`` (M, 3), in whatever dimension they span
    (scipy's Qhull on the affine span; the two ends for a segment)."""
    spatial = pytest.importorskip("scipy.spatial")
    centred = points - points.mean(axis=0)
    _, s, vt = np.linalg.svd(centred, full_matrices=False)
    rank = int(np.sum(s > 1e-9 * s[0])) if s[0] > 0 else 0
    coords = centred @ vt[:rank].T
    if rank == 0:
        return points[:1]
    if rank == 1:
        return points[[np.argmin(coords[:, 0]), np.argmax(coords[:, 0])]]
    return points[spatial.ConvexHull(coords).vertices]


def assert_every_hull_vertex_listed(vectors, reversing):
    every = all_switchings(reversing) @ vectors
    listed = vertex_switchings(vectors, reversing) @ vectors
    scale = np.abs(vectors).sum()
    for vertex in hull_vertices(every):
        assert np.min(np.linalg.norm(listed - vertex, axis=1)) <= 1e-12 * scale


# Vertex enumeration ---------------------------------------------------------------------------

def test_every_vertex_of_a_fore_and_aft_zonotope_is_listed():
    # Oracle: Qhull's hull of every switching's field (2^13 points, in the plane of the fields).
    rng = np.random.default_rng(17)
    vectors = fore_and_aft_fields(13, rng)
    assert_every_hull_vertex_listed(vectors, np.zeros(13, dtype=bool))
    assert_every_hull_vertex_listed(vectors[:9], rng.random(9) < 0.4)


def test_every_vertex_with_collinear_parallel_and_zero_generators_is_listed():
    rng = np.random.default_rng(5)
    line = rng.normal(size=3)
    # All on one line, both senses, some reversing: the segment's two ends.
    collinear = np.outer(rng.normal(size=8), line) * 1e-7
    assert_every_hull_vertex_listed(collinear, rng.random(8) < 0.4)
    assert len(vertex_switchings(collinear, np.zeros(8, dtype=bool))) == 2
    # Mixed: a coplanar group, parallel and antiparallel pairs, a zero vector, general ones.
    mixed = rng.normal(size=(11, 3)) * 1e-7
    mixed[:5, 0] = 0.0
    mixed[5], mixed[7], mixed[9] = 2.5 * mixed[6], -mixed[8], 0.0
    assert_every_hull_vertex_listed(mixed, rng.random(11) < 0.3)


def test_general_position_gives_the_region_count_of_the_arrangement():
    # m planes through the origin in general position cut space into m(m - 1) + 2 regions
    # (Zaslavsky 1975, from memory; m = 3 gives the 8 octants), one vertex each.
    rng = np.random.default_rng(1)
    for m in (1, 2, 3, 7, 12):
        assert len(vertex_switchings(rng.normal(size=(m, 3)), np.zeros(m, dtype=bool))) \
            == m * (m - 1) + 2
    # Coplanar, m lines in the plane: a zonogon of 2m vertices.
    assert len(vertex_switchings(fore_and_aft_fields(13, rng), np.zeros(13, dtype=bool))) == 26


# The total-field error over switchings --------------------------------------------------------

@pytest.mark.parametrize("heel, pitch", [(0.0, 0.0), (20.0, 10.0)])
def test_fore_and_aft_13_circuits_error_against_brute_force(heel, pitch):
    # 13 independent circuits (3 reversing: 2^10 3^3 = 27 648 switchings, beyond the 4 096
    # tried one by one). Brute force: every switching scored with the exact range over headings
    # and attitudes (checked against a grid in tests/analysis/test_electronic.py).
    rng = np.random.default_rng(2024)
    vectors = fore_and_aft_fields(13, rng, scale=1e-6)
    reversing = np.zeros(13, dtype=bool)
    reversing[[2, 7, 11]] = True
    base = np.array([0.0, 2e-7, -1e-7])
    worst = error_over_switchings(base, vectors, reversing, H_T, Z_T, heel, pitch)
    assert not worst.exhaustive
    fields = base + all_switchings(reversing) @ vectors
    low, high = total_field_error_range(fields, H_T, Z_T, heel, pitch)
    # The largest error is exact (convex in b: a vertex holds it).
    assert worst.high == pytest.approx(high.max(), rel=1e-12)
    # The smallest is a bound that never flatters, short by at most R^2 / (2 (F - R)).
    largest = np.linalg.norm(fields, axis=1).max()
    assert worst.low <= low.min()
    assert low.min() - worst.low <= largest ** 2 / (2 * (F_T - largest))
    # The switchings named are real and reach the figures they stand behind.
    assert set(np.unique(worst.high_choice)) <= {-1, 0, 1}
    assert total_field_error_range(base + worst.high_choice @ vectors, H_T, Z_T, heel,
                                   pitch)[1] == pytest.approx(worst.high, rel=1e-12)
    if heel == 0.0:
        # Level peak to peak: an upper bound, within second order of the brute force.
        brute = heading_error_peak_to_peak(fields, H_T, Z_T).max()
        assert brute <= worst.peak_to_peak <= brute + largest ** 2 / F_T


def test_dropping_the_coplanar_circuits_falls_short_of_the_brute_force():
    # The fault this guards against: at each arrangement vertex the circuits lying in its plane
    # were left off (switched off), so with every run fore and aft only pairs of circuits were
    # ever on together. Written out here, it is well short of the brute force.
    rng = np.random.default_rng(2024)
    vectors = fore_and_aft_fields(13, rng, scale=1e-6)
    reversing = np.zeros(13, dtype=bool)
    fields = all_switchings(reversing) @ vectors
    brute = total_field_error_range(fields, H_T, Z_T)[1].max()
    pairs = []
    for i, j in itertools.combinations(range(13), 2):
        for a, c in itertools.product((0, 1), repeat=2):
            row = np.zeros(13, dtype=int)
            row[i], row[j] = a, c
            pairs.append(row)
    dropped = total_field_error_range(np.array(pairs) @ vectors, H_T, Z_T)[1].max()
    assert dropped < 0.8 * brute
    assert error_over_switchings(np.zeros(3), vectors, reversing, H_T,
                                 Z_T).high == pytest.approx(brute, rel=1e-12)


def test_collinear_generators_against_brute_force():
    # 14 circuits on one line (e.g. runs in one vertical plane through the sensor): the points
    # are a row along a segment, whose ends hold the largest error.
    rng = np.random.default_rng(8)
    direction = np.array([0.3, -0.5, 0.8])
    vectors = np.outer(rng.uniform(-1, 1, 14), direction) * 5e-7
    reversing = rng.random(14) < 0.25
    base = np.array([1e-7, 0.0, 3e-7])
    worst = error_over_switchings(base, vectors, reversing, H_T, Z_T, 15.0, 5.0)
    low, high = total_field_error_range(base + all_switchings(reversing) @ vectors, H_T, Z_T,
                                        15.0, 5.0)
    assert worst.high == pytest.approx(high.max(), rel=1e-12)
    assert worst.low <= low.min()


def test_low_end_inside_the_zonotope_is_bounded_not_taken_from_the_vertices():
    # The smallest |F + b| over headings, level, is sqrt((H - r)^2 + (Z + d)^2) (hand formula).
    # Along b = t u with u = (1, 0, u_z), r = t and d = -t u_z; its square
    # (H - t)^2 + (Z - t u_z)^2 is least at t* = (H + u_z Z) / (1 + u_z^2) (derivative). With
    # 13 equal circuits along u from t = 0.5 to 3.5 uT and t* = 2 uT, the least error is in the
    # middle of the row: the two ends (the vertices) alone would flatter it.
    t_star = 2e-6
    u_z = -H_T / Z_T + t_star * (1 + (H_T / Z_T) ** 2) / Z_T    # t* = 2 uT, to first order
    u = np.array([1.0, 0.0, u_z])
    vectors = np.repeat((3e-6 / 13 * u)[None, :], 13, axis=0)
    base = 0.5e-6 * u
    reversing = np.zeros(13, dtype=bool)
    fields = base + all_switchings(reversing) @ vectors
    r, d = np.hypot(fields[:, 0], fields[:, 1]), -fields[:, 2]
    brute_low = (np.hypot(H_T - r, Z_T + d) - F_T).min()
    ends = base + np.array([np.zeros(3), vectors.sum(axis=0)])
    ends_low = (np.hypot(H_T - np.hypot(ends[:, 0], ends[:, 1]), Z_T - ends[:, 2]) - F_T).min()
    assert ends_low > brute_low + 10e-9                  # the vertices alone: > 10 nT high
    worst = error_over_switchings(base, vectors, reversing, H_T, Z_T)
    assert worst.low <= brute_low                        # never flatters
    largest = np.linalg.norm(fields, axis=1).max()
    assert brute_low - worst.low <= largest ** 2 / (2 * (F_T - largest))


@pytest.mark.parametrize("heel, pitch", [(0.0, 0.0), (25.0, 10.0)])
def test_inclination_over_fore_and_aft_switchings_against_brute_force(heel, pitch):
    # Brute force over every switching with the exact inclination range (checked against a grid
    # in tests/analysis/test_electronic.py); every |b| < H, so the vertices hold both extremes.
    rng = np.random.default_rng(99)
    vectors = fore_and_aft_fields(13, rng, scale=1.5e-6)
    reversing = np.zeros(13, dtype=bool)
    reversing[[0, 5]] = True
    base = np.array([0.0, -1e-6, 5e-7])
    low_deg, high_deg, largest = inclination_over_switchings(base, vectors, reversing, H_T,
                                                             Z_T, heel, pitch)
    fields = base + all_switchings(reversing) @ vectors
    assert largest < H_T
    low, high = inclination_range_deg(fields, H_T, Z_T, heel, pitch)
    assert high_deg == pytest.approx(high.max(), abs=1e-9)
    assert low_deg == pytest.approx(low.min(), abs=1e-9)
    assert largest == pytest.approx(np.linalg.norm(fields, axis=1).max(), rel=1e-12)


def test_inclination_range_opens_fully_when_a_switching_can_reach_h():
    # |b| >= H: the horizontal part the sensor sees can vanish and no vertex argument holds;
    # the range given is all of [-90, 90] degrees.
    vectors = np.repeat(np.array([[0.0, 2e-6, 0.0]]), 13, axis=0)
    low, high, largest = inclination_over_switchings(np.zeros(3), vectors,
                                                     np.zeros(13, dtype=bool), H_T, Z_T)
    assert largest == pytest.approx(26e-6)
    assert (low, high) == (-90.0, 90.0)


def test_near_degenerate_generators_lose_nothing_beyond_rounding():
    # Fore-and-aft fields nudged out of their plane by 1e-13 of their size: the merged and swept
    # vertices still give the brute force's largest error to 1e-9.
    rng = np.random.default_rng(4)
    vectors = fore_and_aft_fields(13, rng, scale=1e-6)
    vectors[:, 0] = rng.normal(size=13) * 1e-19
    reversing = np.zeros(13, dtype=bool)
    fields = all_switchings(reversing) @ vectors
    brute = total_field_error_range(fields, H_T, Z_T, 10.0, 10.0)[1].max()
    high = error_over_switchings(np.zeros(3), vectors, reversing, H_T, Z_T, 10.0, 10.0).high
    assert high == pytest.approx(brute, rel=1e-9)


# Through a whole plan --------------------------------------------------------------------------

def fore_and_aft_plan(kind, budget_deg, budget_nt, n=13):
    """n single conductors laid fore and aft, 40 m long, each its own independent circuit,
    around a level sensor at the origin; two of them may reverse."""
    rng = np.random.default_rng(13)
    where = []
    for i in range(n):
        angle = 2 * math.pi * i / n + 0.2
        distance = rng.uniform(0.4, 1.2)
        where.append((distance * math.cos(angle), distance * math.sin(angle)))
    runs = [["run", "circuits", "route", "return"]]
    states = [["circuit", "cruise", "switching"]]
    currents = rng.uniform(0.5, 3.0, n)
    for i, (y, z) in enumerate(where):
        runs.append([f"run {i}", f"load {i}", f"-20, {y:.4f}, {z:.4f} > 20, {y:.4f}, {z:.4f}",
                     "none"])
        states.append([f"load {i}", f"{currents[i]:.3f}",
                       "independent reversing" if i in (3, 8) else "independent"])
    sheets = {
        "site": [["setting", "value"], ["horizontal_field_ut", H_T * 1e6],
                 ["vertical_field_ut", Z_T * 1e6]],
        "runs": runs,
        "states": states,
        "sensors": [["sensor", "at", "kind", "budget_deg", "budget_nt"],
                    ["sensor", "0, 0, 0", kind, budget_deg, budget_nt]],
    }
    # Long-wire fields at the origin (mu0 I / (2 pi d), right-hand rule, current along +x):
    # perpendicular to x, so every field lies in the y-z plane. The runs' finite length is
    # kept exactly with the finite-segment form (sin t2 - sin t1 = 2 * 20 / sqrt(20^2 + d^2)).
    vectors = []
    for (y, z), current in zip(where, currents):
        y, z, current = round(y, 4), round(z, 4), round(current, 3)
        d = math.hypot(y, z)
        size = MU0 * current / (4 * math.pi * d) * 2 * 20 / math.hypot(20, d)
        vectors.append(size * np.array([0.0, z, -y]) / d)     # x-hat cross (0, -y, -z) / d
    reversing = np.array([i in (3, 8) for i in range(n)])
    return sheets, np.array(vectors), reversing


def level_brute_force(vectors, reversing):
    """Every switching's level error range by hand: |F + b| over headings runs between
    sqrt((H -+ r)^2 + (Z + d)^2), r = |b_h|, d = -b_z."""
    fields = all_switchings(reversing) @ vectors
    r, d = np.hypot(fields[:, 0], fields[:, 1]), -fields[:, 2]
    return (np.hypot(H_T - r, Z_T + d) - F_T, np.hypot(H_T + r, Z_T + d) - F_T, fields)


def test_fore_and_aft_plan_total_field_figure_against_brute_force(tmp_path):
    sheets, vectors, reversing = fore_and_aft_plan("total-field magnetometer", "", 50)
    low, high, fields = level_brute_force(vectors, reversing)
    assert len(fields) > 4096
    state = analyse(read_plan(write_plan(tmp_path / "plan", sheets))).sensors[0].states[0]
    assert state.total_field_high_t == pytest.approx(high.max(), rel=1e-6)
    largest = np.linalg.norm(fields, axis=1).max()
    assert state.total_field_low_t <= low.min() * (1 - 1e-6)
    assert low.min() - state.total_field_low_t <= largest ** 2 / (2 * (F_T - largest))
    assert state.total_field_error_t >= max(high.max(), -low.min()) * (1 - 1e-6)


def test_fore_and_aft_plan_model_departures_against_brute_force(tmp_path):
    sheets, vectors, reversing = fore_and_aft_plan("magnetometer", 5, "")
    low, high, fields = level_brute_force(vectors, reversing)
    analysis = analyse(read_plan(write_plan(tmp_path / "plan", sheets)))
    [report] = electronic_report(analysis)
    [state] = report.states
    largest = np.linalg.norm(fields, axis=1).max()
    brute = max(high.max(), -low.min())
    assert brute * (1 - 1e-6) <= state.field_departure_t
    assert state.field_departure_t <= brute + largest ** 2 / (2 * (F_T - largest))
    # Inclination, level, by hand: down part Z + d, horizontal size between |H - r| and H + r.
    r, d = np.hypot(fields[:, 0], fields[:, 1]), -fields[:, 2]
    model = math.degrees(math.atan2(Z_T, H_T))
    steepest = np.degrees(np.arctan2(Z_T + d, np.abs(H_T - r))).max()
    flattest = np.degrees(np.arctan2(Z_T + d, H_T + r)).min()
    assert state.inclination_departure_deg == pytest.approx(
        max(steepest - model, model - flattest), abs=1e-6)


def test_level_peak_to_peak_beyond_enumeration_is_an_upper_bound():
    # Peak to peak over a turn, level: sqrt((H + r)^2 + zeta^2) - sqrt((H - r)^2 + zeta^2),
    # zeta = Z + d (hand formula), largest where zeta = 0. Here a reversing vertical circuit
    # sweeps zeta through -s, 0, +s about zero: the middle switching (off), not a vertex,
    # holds the largest. An extreme field (the base cancels Z), but the figure must hold.
    s = 15e-6
    base, vectors = np.array([3e-6, 0.0, Z_T]), np.array([[0.0, 0.0, s]])
    reversing = np.array([True])
    fields = base + all_switchings(reversing) @ vectors
    r, zeta = np.hypot(fields[:, 0], fields[:, 1]), Z_T - fields[:, 2]
    brute = (np.hypot(H_T + r, zeta) - np.hypot(H_T - r, zeta)).max()
    assert brute == pytest.approx(2 * 3e-6)                      # zeta = 0: (H + r) - (H - r)
    vertices = base + vertex_switchings(vectors, reversing) @ vectors
    assert heading_error_peak_to_peak(vertices, H_T, Z_T).max() < 0.9 * brute
    worst = error_over_switchings(base, vectors, reversing, H_T, Z_T, most=1)
    assert not worst.exhaustive
    assert worst.peak_to_peak >= brute * (1 - 1e-12)
    assert worst.peak_to_peak == pytest.approx(brute, rel=1e-12)   # r and zeta at one switching
