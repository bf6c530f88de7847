"""Parts of a run that turn about its axis by an angle the plan does not give: a pair's lie and
each untwisted end of a twisted run. Their worst turn is a bound at every distance.

Oracles written here: magpylib line currents laid at every turn (the turned geometry built in
the test, by rotating the return about the run's axis), brute force over the turns, the
two-wire line's closed form, and support functions of explicit periodic curves.
"""

import math

import numpy as np
import pytest

import deviation
from deviation.budget.runs import _Turning, turn_cover, twisted_floor
from deviation.physics.routing import (
    RunGeometry,
    offset_polyline,
    route_run,
    turning_run,
    twisted_conductors,
)

magpylib = pytest.importorskip("magpylib")

H_UT = 20.0
H = H_UT * 1e-6
MU0 = 4e-7 * math.pi                       # vacuum permeability, pre-2019 exact value


def deviation_of(b_h):
    return math.degrees(math.asin(b_h / H))


def plan_of(runs, at, current=1.0, sensor=None):
    return deviation.plan_from_tables({
        "site": [{"setting": "horizontal_field_ut", "value": H_UT},
                 {"setting": "vertical_field_ut", "value": 40}],
        "runs": runs, "states": [{"circuit": "c", "on": current}],
        "sensors": [{"sensor": "m", "at": ", ".join(f"{v:.9g}" for v in at),
                     "kind": "magnetometer", "budget_deg": 90, **(sensor or {})}]})


def held_of(plan):
    return deviation.check(plan, remedies=False).sensors[0].states[0].held


def held_field(plan):
    """The held figure as the horizontal field it stands for, H sin(held) [T]."""
    return H * math.sin(math.radians(held_of(plan)))


def loop_fields(supplies, backs, current, at):
    """magpylib: (n, 3) fields at ``at`` of n closed circuits, supply and return both given
    source to load, closed through the load and the source."""
    sources = [magpylib.current.Polyline(current=current,
                                         vertices=np.vstack([s, b[::-1], s[:1]]))
               for s, b in zip(supplies, backs)]
    return np.asarray(magpylib.getB(sources, np.asarray(at, dtype=float))).reshape(-1, 3)


def rotate_about(points, origin, axis, angle):
    """Rodrigues' rotation of points about the line through origin along axis."""
    axis = np.asarray(axis, float) / np.linalg.norm(axis)
    v = np.asarray(points, float) - origin
    c, s = math.cos(angle), math.sin(angle)
    return origin + v * c + np.cross(axis, v) * s + np.outer(v @ axis, axis) * (1 - c)


def horizontal(b):
    return np.hypot(b[..., 0], b[..., 1])


# The geometry of a turn ------------------------------------------------------------------------

def test_a_turned_return_keeps_the_spacing_from_both_stretches_of_a_horizontal_corner():
    # Two horizontal stretches meeting at 60 degrees: for every turn the mitred return point lies
    # where the two stretches' offset lines meet, i.e. at the spacing from both (plane geometry,
    # written here: the offset of a line by s along a unit normal n_a).
    route = np.array([[0, 0, 0], [1.0, 0, 0], [1 + math.cos(math.pi / 3),
                                               math.sin(math.pi / 3), 0]])
    s = 0.01
    for angle in np.radians([0, 30, 75, 90, 160, 200, 300]):
        back = offset_polyline(route, s, math.degrees(angle))
        for i in range(2):
            d = route[i + 1] - route[i]
            d /= np.linalg.norm(d)
            for point in (back[i + 1], back[i]):
                rel = point - route[i]
                assert np.linalg.norm(rel - (rel @ d) * d) == pytest.approx(s, rel=1e-12)


def test_turning_parts_at_their_routed_turn_are_the_routed_segments():
    route = np.array([[0, 0, 0], [1.0, 0, 0], [1.0, 1.0, 0.2], [1.0, 1.0, 1.0], [2, 1, 1.0]])
    for run, turns in [(RunGeometry("p", route, "paired", spacing_m=0.01), [0.0]),
                       (RunGeometry("p", route, "paired", spacing_m=0.01,
                                    return_angle_deg=90.0), [math.pi / 2]),
                       (RunGeometry("t", route, "twisted", spacing_m=0.01, lay_m=0.05),
                        [0.0, 0.0])]:
        (start, end, sign), parts = turning_run(run)
        assert len(parts) == len(turns)
        pieces = [np.hstack([start, end, sign[:, None]])]
        for part, turn in zip(parts, turns):
            a, b = part.at(turn)
            pieces.append(np.hstack([a, b, part.sign[:, None]]))
        got = np.vstack(pieces)
        expected = np.hstack([*route_run(run)[:2], route_run(run)[2][:, None]])

        def rows(m):
            return m[np.lexsort(np.round(m, 12).T[::-1])]

        np.testing.assert_allclose(rows(got), rows(expected), atol=1e-15)


def test_a_turned_straight_pair_is_the_supply_and_a_rotated_return():
    # The part at turn a equals the test's own return: the route offset by s (cos a n + sin a v),
    # n the left normal z x d, v = d x n (here z), closed through load and source.
    route = np.array([[0, 0, 0.0], [2.0, 0, 0]])
    (start, end, sign), (part,) = turning_run(RunGeometry("p", route, "paired", spacing_m=0.02))
    for a in np.radians([0, 40, 130, 250]):
        back = route + 0.02 * np.array([0, math.cos(a), math.sin(a)])
        s, e = part.at(a)
        field = loop_fields([route], [back], 1.0, (0.7, 0.05, 0.03))[0]
        line = magpylib.current.Polyline
        mine = sum(np.asarray(line(current=g, vertices=[p, q]).getB((0.7, 0.05, 0.03)))
                   for p, q, g in zip(np.vstack([start, s]), np.vstack([end, e]),
                                      np.r_[sign, part.sign]))
        np.testing.assert_allclose(mine, field, rtol=1e-9, atol=1e-18)


# The cover of a turn ---------------------------------------------------------------------------

def _support_holds(curve, centre, generators, bound, directions):
    """Support functions: the convex hull of ``curve`` lies in centre + zonotope + ball iff in
    every direction d, max d.curve <= d.centre + sum |d.g| + bound (tested on many d)."""
    reach = curve @ directions.T                                           # (T, D)
    cover = (directions @ centre + np.abs(generators @ directions.T).sum(axis=0) + bound)
    return np.all(reach.max(axis=0) <= cover * (1 + 1e-12) + 1e-15)


def test_the_cover_holds_an_infinite_pair_close_in_where_four_turns_do_not():
    # Two-wire line (superposition of two infinite line currents, Griffiths ch. 5), observer
    # 1.5 spacings from the supply: B_x - i B_y = mu0 I/(2 pi) (1/(z - s e^{ia}) - 1/z), in the
    # plane across the line. On |Im a| < ln(rho/s) it is analytic with
    # |B| <= mu0 I/(2 pi) s e^{tau}/(rho (rho - s e^{tau})) (the test's own bound).
    s, rho, phase = 1.0, 1.5, 0.7
    z = rho * np.exp(1j * phase)

    def field(a):
        value = 2e-7 * (1 / (z - s * np.exp(1j * a)) - 1 / z)
        return np.stack([value.real, -value.imag, 0 * value.real], axis=-1)

    tau = np.array([0.5, 0.75, 0.9]) * math.log(rho / s)
    strip = 2e-7 * s * np.exp(tau) / (rho * (rho - s * np.exp(tau)))
    dense = field(np.linspace(0, 2 * np.pi, 20001))
    rng = np.random.default_rng(5)
    directions = rng.normal(size=(400, 3))
    directions /= np.linalg.norm(directions, axis=1, keepdims=True)
    for n in (16, 64, 256):
        samples = field(2 * np.pi * np.arange(n) / n)
        centre, generators, bound, remainder, _ = turn_cover(samples, tau, strip, 1)
        assert _support_holds(dense, centre, generators, bound, directions)
    assert remainder < 1e-6 * np.abs(dense).max()
    # Four turns and their octagon (the rule this replaces) miss the far side of the circle.
    four = field(np.arange(4) * np.pi / 2)
    u, w = (four[0] - four[2]) / 2, (four[1] - four[3]) / 2
    t = math.tan(math.pi / 8)
    octagon = np.array([t * (math.cos(j * math.pi / 4) * u + math.sin(j * math.pi / 4) * w)
                        for j in range(4)])
    delta = np.linalg.norm((four[0] + four[2] - four[1] - four[3]) / 4)
    assert not _support_holds(dense, four.mean(axis=0), octagon, delta, directions)


def test_the_strip_bound_holds_off_the_real_line():
    # A long straight pair, observer at 2 spacings: the part's field minus its field with the
    # return laid on the supply is, across the line, mu0 I/(2 pi) (1/(z - s e^{ia}) - 1/z) in
    # complex form (two-wire line). Its size on |Im a| = tau, found here on a fine grid of Re a,
    # must stay under the bound the cover uses.
    s = 0.01
    route = np.array([[-200.0, 0, 0], [200.0, 0, 0]])
    _, (part,) = turning_run(RunGeometry("p", route, "paired", spacing_m=s))
    at = np.array([[0.0, 2 * s * math.cos(0.4), 2 * s * math.sin(0.4)]])
    tau, strip = _Turning.of([part]).strip_bound(at)
    z = complex(at[0, 1], at[0, 2])
    for t, k in zip(tau[0, 0], strip[0, 0]):
        for sign in (1, -1):
            a = np.linspace(0, 2 * np.pi, 4001) + 1j * sign * t
            ux = 1 / (z - s * np.exp(1j * a)) - 1 / z        # B_y - i B_z, two components
            uy = 1 / (np.conj(z) - s * np.exp(-1j * a)) - 1 / np.conj(z)
            size = 2e-7 * np.sqrt((np.abs(ux) ** 2 + np.abs(uy) ** 2) / 2)
            assert size.max() <= k


# A pair of unknown lie, close in ----------------------------------------------------------------

def pair_worst(route, s, at, step_deg=0.5, current=1.0):
    """Brute force: the largest level horizontal field over the return's turns (magpylib)."""
    route = np.asarray(route, float)
    d = route[1] - route[0]
    d /= np.linalg.norm(d)
    n = np.cross([0, 0, 1.0], d)
    n /= np.linalg.norm(n)
    v = np.cross(d, n)
    turns = np.radians(np.arange(0, 360, step_deg))
    backs = [route + s * (math.cos(a) * n + math.sin(a) * v) for a in turns]
    return horizontal(loop_fields([route] * len(backs), backs, current, at)).max()


@pytest.mark.parametrize("spacings", [1.5, 2.0, 3.0, 5.0])
@pytest.mark.parametrize("around_deg", [20.0, 110.0, 245.0])
def test_unknown_lie_is_a_bound_close_to_the_pair(spacings, around_deg):
    # The sensor a few spacings from a 2 m pair's supply, at an angle about its axis: the held
    # figure is never under the worst turn of the return (magpylib, every 0.5 degrees), and at
    # most the octagon's 1/cos(pi/8) over it (tests/physics/test_turning.py docstring).
    s = 0.005
    r = spacings * s
    phi = math.radians(around_deg)
    at = (0.3, r * math.cos(phi), r * math.sin(phi))
    runs = [{"run": "pair", "circuits": "c", "route": "-1, 0, 0 > 1, 0, 0",
             "return": "paired", "spacing": "5 mm"}]
    held = held_field(plan_of(runs, at, current=0.1))
    worst = pair_worst([[-1, 0, 0], [1, 0, 0]], s, at, current=0.1)
    assert held >= worst
    assert held <= worst / math.cos(math.pi / 8) * 1.01


def test_unknown_lie_is_a_bound_at_a_corner():
    # Beside the corner of a pair that turns 90 degrees in the horizontal: the return turned by
    # a meets the offset lines of both stretches at corner + s cos(a) (n1 + n2) + s sin(a) z
    # (plane geometry; n1, n2 the left normals). Brute force over the turns with magpylib.
    s = 0.006
    route = np.array([[-1.0, 0, 0], [0, 0, 0], [0, 1.0, 0]])
    n1, n2 = np.array([0, 1.0, 0]), np.array([-1.0, 0, 0])
    at = (0.02, -0.01, 0.012)
    backs = []
    for a in np.radians(np.arange(0, 360, 0.5)):
        offset = s * math.cos(a)
        lift = s * math.sin(a) * np.array([0, 0, 1.0])
        backs.append(np.array([route[0] + offset * n1 + lift,
                               route[1] + offset * (n1 + n2) + lift,
                               route[2] + offset * n2 + lift]))
    worst = horizontal(loop_fields([route] * len(backs), backs, 0.1, at)).max()
    runs = [{"run": "pair", "circuits": "c", "route": "-1, 0, 0 > 0, 0, 0 > 0, 1, 0",
             "return": "paired", "spacing": "6 mm"}]
    held = held_field(plan_of(runs, at, current=0.1))
    # Not a straight pair: the curve of turns is no circle, and the cover is looser than the
    # octagon's 8 % (15 % here, measured).
    assert worst <= held <= worst * 1.2


# The untwisted ends of a twisted run -----------------------------------------------------------

def ends_worst(route, s, lay, end, current, at, step_deg=3.0):
    """Brute force over both ends' turns: each end's return (the vertices of the untwisted
    stretch, a spacing from the axis) rotated on its own about the run's axis (magpylib)."""
    route = np.asarray(route, float)
    supply, back = twisted_conductors(route, s, lay, end)
    axis = route[1] - route[0]
    length = np.linalg.norm(axis)
    along = (back - route[0]) @ axis / length
    radial = np.linalg.norm(back - route[0] - np.outer(along, axis / length), axis=1)
    lead = (along <= end + 1e-12) & (radial > 0.75 * s)
    tail = (along >= length - end - 1e-12) & (radial > 0.75 * s)
    laid = loop_fields([supply], [back], current, at)[0]
    moved = []
    for mask in (lead, tail):
        backs = []
        for t in np.radians(np.arange(0, 360, step_deg)):
            turned = back.copy()
            turned[mask] = rotate_about(back[mask], route[0], axis, t)
            backs.append(turned)
        moved.append(loop_fields([supply] * len(backs), backs, current, at) - laid)
    total = laid + moved[0][:, None, :] + moved[1][None, :, :]
    return horizontal(total).max(), float(horizontal(laid))


@pytest.mark.parametrize("at", [(0.1016, 1.0, 0.0), (0.0, 1.1016, 0.0), (0.03, 0.95, 0.02)])
def test_each_untwisted_end_counts_its_worst_turn(at):
    # A twisted feed out to a wingtip light (1 m along y, 3.5 mm spacing, 25 mm lay, the
    # documented 0.15 m ends), a magnetometer 4 in (0.1016 m) off its end. Laid one fixed way
    # the end's loop lies in the sensor's plane and its field is nearly vertical; turned, it
    # is not: the held figure is at least the worst over both ends' turns.
    runs = [{"run": "strobe feed", "circuits": "c", "route": "0, 0.3, 0 > 0, 1, 0",
             "return": "twisted", "spacing": "3.5 mm", "lay": "25 mm"}]
    held = held_field(plan_of(runs, at, current=0.3))
    worst, laid = ends_worst([[0, 0.3, 0], [0, 1, 0]], 0.0035, 0.025, 0.15, 0.3, at)
    assert held >= worst
    assert held <= worst * 1.2         # 1.01-1.11 measured
    if at[2] == 0.0:
        assert laid < 0.05 * held


# The floor of a twisted run --------------------------------------------------------------------

FLOOR = 10 ** (-50 / 20)       # Moser & Spencer, IEEE Trans. EMC 10(3), 1968: 50 dB


def _pair_worst_at_attitude(route, s, current, heel_deg, pitch_deg):
    """Worst over turns (magpylib, 1 degree) and attitudes (grid, heel then pitch as in
    tests/physics/test_worst_case.py) of the level horizontal field at the origin."""
    route = np.asarray(route, float)
    backs = [route + s * np.array([0, math.cos(a), math.sin(a)])
             for a in np.radians(np.arange(0, 360, 1.0))]
    b = loop_fields([route] * len(backs), backs, current, (0, 0, 0))
    frd = np.stack([b[:, 0], -b[:, 1], -b[:, 2]], axis=-1)
    best = 0.0
    for phi in np.radians(np.linspace(-heel_deg, heel_deg, 41)):
        for theta in np.radians(np.linspace(-pitch_deg, pitch_deg, 41)):
            roll = np.array([[1, 0, 0], [0, math.cos(phi), -math.sin(phi)],
                             [0, math.sin(phi), math.cos(phi)]])
            pitch = np.array([[math.cos(theta), 0, math.sin(theta)], [0, 1, 0],
                              [-math.sin(theta), 0, math.cos(theta)]])
            level = frd @ (pitch @ roll).T
            best = max(best, float(np.hypot(level[:, 0], level[:, 1]).max()))
    return best


@pytest.mark.parametrize("heel, pitch", [(0.0, 0.0), (25.0, 10.0)])
def test_a_twisted_run_is_held_no_weaker_than_the_floor_of_its_pair(heel, pitch):
    # 60 A, 10 mm spacing, 40 mm lay, 0.15 m under a compass, twisted into its terminals: a
    # perfect helix there is far below what measurement supports, so the run is held at 50 dB
    # under the same pair in its worst lie, in the figure the budget holds (horizontal, at the
    # worst attitude), here found by brute force over turns and attitudes.
    runs = [{"run": "feed", "circuits": "c", "route": "-1, 0, -0.15 > 1, 0, -0.15",
             "return": "twisted", "spacing": "10 mm", "lay": "40 mm", "untwisted_ends": "0 m"}]
    sensor = {"max_heel_deg": heel, "max_pitch_deg": pitch}
    held = held_field(plan_of(runs, (0, 0, 0), current=60.0, sensor=sensor))
    pair = _pair_worst_at_attitude([[-1, 0, -0.15], [1, 0, -0.15]], 0.01, 60.0, heel, pitch)
    assert held >= FLOOR * pair
    assert held <= FLOOR * pair * 1.15


def test_the_floor_compares_the_horizontal_figure_not_the_3d_size():
    # A twisted run whose own field is vertical counts nothing level: whatever its size, the
    # floor must add the whole 50 dB share of its pair's worst (the 3-D rule would add none).
    run = deviation.plan_from_tables({
        "site": [{"setting": "horizontal_field_ut", "value": H_UT}],
        "runs": [{"run": "feed", "circuits": "c", "route": "-1, 0, -0.15 > 1, 0, -0.15",
                  "return": "twisted", "spacing": "10 mm", "lay": "40 mm"}],
        "states": [{"circuit": "c", "on": 1.0}],
        "sensors": [{"sensor": "m", "at": "0, 0, 0", "kind": "magnetometer",
                     "budget_deg": 9}]}).runs[0]
    pair = pair_worst([[-1, 0, -0.15], [1, 0, -0.15]], 0.01, (0, 0, 0), step_deg=1.0)
    vertical = np.array([[[0.0, 0.0, 10 * FLOOR * pair]]])
    added = twisted_floor([run], np.zeros((1, 3)), vertical, np.zeros((1, 1, 8, 3)),
                          np.zeros((1, 1)))
    assert added[0, 0] >= FLOOR * pair
    assert added[0, 0] <= FLOOR * pair / math.cos(math.pi / 8) * 1.05


def test_the_remainder_factor_is_the_sum_of_every_alias_and_the_tail():
    # Written here from |a_n| <= K q^|n|: the DFT coefficient of harmonic n (|n| < N/2) carries
    # the aliases a_{n + jN}, j != 0, and the series stops below N/2, so
    # sup|e| / K = sum_{j != 0} q^{|jN|} + 2 sum_{n=1}^{N/2-1} sum_{j != 0} q^{|n + jN|}
    #              + 2 sum_{n >= N/2} q^n   (summed directly, far enough to converge).
    from deviation.budget.runs import _remainder_factor

    for n_turns in (16, 64):
        for tau in (0.05, 0.3, 1.0, 3.0):
            q = math.exp(-tau)
            js = [j for j in range(-400, 401) if j]
            direct = sum(q ** abs(j * n_turns) for j in js)
            direct += 2 * sum(q ** abs(n + j * n_turns) for n in range(1, n_turns // 2)
                              for j in js)
            direct += 2 * sum(q ** n for n in range(n_turns // 2, 20000))
            assert _remainder_factor(np.array(tau), n_turns) == pytest.approx(direct, rel=1e-9)


def test_the_circle_cover_holds_curves_whose_extremes_fall_between_its_samples():
    # Random trigonometric curves up to the seventh harmonic, the last one strong: the cover
    # (a shifted octagon and a bound) must hold every point of the dense curve, in every
    # direction (support functions); without the chord's second-order margin it does not.
    from deviation.budget.runs import _circle_cover, _sigma

    rng = np.random.default_rng(0)
    turns = np.linspace(0, 2 * np.pi, 8001)
    order = np.arange(1, 8)
    directions = rng.normal(size=(300, 3))
    directions /= np.linalg.norm(directions, axis=1, keepdims=True)
    for _ in range(60):
        weight = (0.6 ** np.arange(7))[:, None] * np.r_[np.ones(6), 3.0][:, None]
        u, w = rng.normal(size=(7, 3)) * weight, rng.normal(size=(7, 3)) * weight
        shift, octagon, bound = _circle_cover(u[None], w[None], _sigma(u, w)[None])
        curve = np.cos(np.outer(turns, order)) @ u + np.sin(np.outer(turns, order)) @ w
        assert _support_holds(curve, shift[0], octagon[0], bound[0], directions)


def _complex_field(part, at, turns, nodes=200):
    """(T, 3) the part's field minus its field with the return laid on the supply, at complex
    turns: Biot-Savart integrated along each segment by Gauss-Legendre quadrature in complex
    arithmetic (principal branch of the 3/2 power), written here."""
    lam, weights = np.polynomial.legendre.leggauss(nodes)
    lam, weights = (lam + 1) / 2, weights / 2
    c, s = np.cos(turns)[:, None], np.sin(turns)[:, None]                  # (T, 1)
    total = np.zeros((len(turns), 3), dtype=complex)
    for i in range(len(part)):
        for moved in (1.0, 0.0):
            a = part.base_start_m[i] + moved * (c * part.turn_start_m[i, 0]
                                                + s * part.turn_start_m[i, 1])   # (T, 3)
            b = part.base_end_m[i] + moved * (c * part.turn_end_m[i, 0]
                                              + s * part.turn_end_m[i, 1])
            r = np.asarray(at)[None, None] - (a[:, None] + lam[None, :, None]
                                              * (b - a)[:, None])             # (T, L, 3)
            q = (r * r).sum(axis=-1)
            integrand = np.cross((b - a)[:, None, :], r) / (q ** 1.5)[..., None]
            total += ((moved * 2 - 1) * part.sign[i]
                      * (weights[None, :, None] * integrand).sum(axis=1))
    return 1e-7 * total


@pytest.mark.parametrize("kind, route, at", [
    ("paired", [[0, 0, 0], [0.3, 0, 0]], (0.31, 0.015, 0.0)),          # beside its end
    ("paired", [[0, 0, 0], [0.3, 0, 0]], (0.33, 0.0, 0.0)),            # on its axis, beyond
    ("paired", [[0, 0, 0], [0.3, 0, 0], [0.3, 0.3, 0]], (0.32, -0.01, 0.01)),    # a corner
    ("twisted", [[0, 0, 0], [0.6, 0, 0]], (0.62, 0.01, 0.005))])       # an untwisted end
def test_the_strip_bound_holds_off_the_real_line_for_ends_and_corners(kind, route, at):
    geometry = RunGeometry("r", np.asarray(route, float), kind, spacing_m=0.01,
                           lay_m=0.04 if kind == "twisted" else None)
    _, parts = turning_run(geometry)
    for part in parts:
        tau, bound = _Turning.of([part]).strip_bound(np.asarray(at, float)[None])
        real = np.linspace(0, 2 * np.pi, 48, endpoint=False)
        for t, k in zip(tau[0, 0], bound[0, 0]):
            turns = np.r_[real + 1j * t, real - 1j * t]
            assert np.linalg.norm(_complex_field(part, at, turns), axis=-1).max() <= k


def test_a_routed_twisted_run_gives_the_turning_parts_it_routes_afresh_and_forgets_them():
    # Routing a twisted run keeps its untwisted ends' turning parts while its geometry lives,
    # so the budget does not make its helices a second time: the same arrays, to the bit, as
    # turning_run finding them afresh; and nothing kept once the geometry is gone.
    import gc
    from dataclasses import fields

    from deviation.physics import routing

    geometry = routing.RunGeometry("feed", np.array([[0.0, 0.0, 0.0], [1.2, 0.0, 0.0],
                                                     [1.2, 0.8, 0.3]]), "twisted",
                                   spacing_m=0.006, lay_m=0.05, radius_m=0.002,
                                   untwisted_end_m=0.15)
    routing.route_runs([geometry])
    kept = routing.turning_parts(geometry)
    assert routing._TWISTED_PARTS[id(geometry)][1] is kept
    afresh = routing.turning_run(geometry)[1]
    assert len(kept) == len(afresh) == 2                        # the lead and the tail
    for mine, theirs in zip(kept, afresh):
        for f in fields(mine):
            assert np.array_equal(getattr(mine, f.name), getattr(theirs, f.name))
    key = id(geometry)
    del geometry, kept
    gc.collect()
    assert key not in routing._TWISTED_PARTS
