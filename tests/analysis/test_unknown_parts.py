"""Parts of unknown direction through the whole chain: a pair's lie under current compensation,
bounds scaled by independent circuits, the fit's reference and offset, the sensor's axes, the
grade, the operating area, the model check and the total-field figures.

Oracles written here: magpylib line currents laid at every turn, the host's least-squares fit
in closed form, dipole fields over every orientation, textbook long-wire fields, pygeomag.
"""

import math

import numpy as np
import pytest

import deviation
from deviation.area import area_check
from deviation.electronic import electronic_report

magpylib = pytest.importorskip("magpylib")

H_UT, Z_UT = 20.0, 40.0
H, Z = H_UT * 1e-6, Z_UT * 1e-6
MU0_4PI = 1e-7                             # mu0 / (4 pi), pre-2019 exact value


def site(h_ut=H_UT, z_ut=Z_UT):
    return [{"setting": "horizontal_field_ut", "value": h_ut},
            {"setting": "vertical_field_ut", "value": z_ut}]


def check(tables):
    return deviation.check(deviation.plan_from_tables(tables), remedies=False)


def report_of(tables):
    [report] = electronic_report(check(tables))
    return report


def route_text(points):
    return " > ".join(", ".join(f"{v:g}" for v in p) for p in points)


def turned_pair_fields(route, spacing, turns, at=(0, 0, 0)):
    """(T, 3) [T/A] a straight pair's field per ampere with its return turned about the axis by
    each of ``turns`` [rad] from the left of travel towards above (magpylib, closed loops)."""
    route = np.asarray(route, float)
    d = (route[1] - route[0]) / np.linalg.norm(route[1] - route[0])
    left = np.cross([0, 0, 1.0], d)
    left /= np.linalg.norm(left)
    up = np.cross(d, left)
    sources = [magpylib.current.Polyline(current=1.0, vertices=np.vstack([
        route, (route + spacing * (math.cos(t) * left + math.sin(t) * up))[::-1], route[:1]]))
        for t in turns]
    return np.asarray(magpylib.getB(sources, np.asarray(at, float))).reshape(-1, 3)


def dipole(moment, position, at=(0.0, 0.0, 0.0)):
    """Point dipole, Griffiths eq. 5.89: mu0/(4 pi) (3 (m.r^) r^ - m) / r^3."""
    r = np.asarray(at, float) - np.asarray(position, float)
    d = np.linalg.norm(r)
    u = r / d
    return MU0_4PI * (3 * (np.asarray(moment) @ u) * u - np.asarray(moment)) / d ** 3


def level(b, heading_deg):
    """(..., 3) north, east, down of a vessel vector (x fwd, y port, z up) at each heading,
    level: forward-starboard-down, yawed clockwise by the heading (written here)."""
    psi = np.radians(heading_deg)
    f, s, d = b[..., 0], -b[..., 1], -b[..., 2]
    north, east = f * np.cos(psi) - s * np.sin(psi), f * np.sin(psi) + s * np.cos(psi)
    return np.stack([north, east, np.broadcast_to(d, north.shape)], axis=-1)


def sphere(n, seed=3):
    rng = np.random.default_rng(seed)
    v = rng.normal(size=(n, 3))
    return np.vstack([v / np.linalg.norm(v, axis=1, keepdims=True), np.eye(3), -np.eye(3)])


# Compensation over the lies the plan leaves open -------------------------------------------------

PAIRS = {"pair a": [[-3, 0, -0.05], [3, 0, -0.05]],        # fore-and-aft, 5 cm below
         "pair b": [[0.05, -3, -0.01], [0.05, 3, -0.01]]}  # athwartships, 5.1 cm forward


def two_pairs(measured, switching_b=""):
    runs = [{"run": name, "circuits": name, "route": route_text(r), "return": "paired",
             "spacing": "8 mm"} for name, r in PAIRS.items()]
    states = [{"circuit": "pair a", "off": 0, "a on": 20, "b on": 0, "both": 20},
              {"circuit": "pair b", "off": 0, "a on": 0, "b on": 20, "both": 20}]
    if switching_b:
        states = [{"circuit": "pair a", "off": 0, "a on": 20, "switching": ""},
                  {"circuit": "pair b", "off": 20, "a on": 20, "switching": switching_b}]
    return {"site": site(), "runs": runs, "states": states,
            "sensors": [{"sensor": "ecompass", "at": "0, 0, 0", "kind": "electronic compass",
                         "budget_deg": 2.0, "reference_state": "off",
                         "measured_currents": measured}]}


TURNS = np.radians(np.arange(0, 360, 15.0))


def _refit(samples_i, samples_b, channel, ref_i, ref_b):
    """The host's fit with a reference state, one channel (the total), in closed form:
    k = sum dm db / sum dm^2 with dm = m - m_ref, db = b - b_ref (least squares, Golub & Van
    Loan section 5.3, one unknown per component)."""
    dm = samples_i @ channel - ref_i @ channel
    db = samples_b - ref_b
    return (dm @ db) / (dm @ dm)


def test_compensation_counts_every_lie_the_fit_cannot_follow():
    # Two 20 A pairs of unknown lie 5 cm from an electronic compass, measured as one total:
    # whatever the lies, the host fits k to the real fields, and what it leaves depends on the
    # lies. Brute force over both lies (15 degree steps), the fit redone for each.
    report = report_of(two_pairs("total"))
    fields = {name: turned_pair_fields(r, 0.008, TURNS) for name, r in PAIRS.items()}
    currents = np.array([[0, 20, 0, 20], [0, 0, 20, 20.0]]).T          # (states, circuits)
    worst = 0.0
    for fa in fields["pair a"]:
        for fb in fields["pair b"]:
            per_amp = np.array([fa, fb])
            b = currents @ per_amp
            k = _refit(currents, b, np.ones(2), currents[0], b[0])
            residual = b - b[0] - np.outer((currents - currents[0]) @ np.ones(2), k)
            worst = max(worst, float(np.hypot(residual[:, 0], residual[:, 1]).max()))
    told = max(s.compensated_horizontal_t for s in report.states)
    assert worst <= told <= 1.1 * worst
    # Most of it comes from the lies, and the figure says so.
    a_on = next(s for s in report.states if s.state == "a on")
    assert a_on.compensated_bound_t > 0.8 * a_on.compensated_horizontal_t


def test_an_exact_fit_leaves_nothing_of_any_lie():
    # Each pair measured on its own channel: the fit learns each real field exactly, whatever
    # the lie, and nothing is left (the figure is what it was before lies were counted: zero).
    report = report_of(two_pairs("pair a; pair b"))
    for state in report.states:
        assert state.compensated_horizontal_t == pytest.approx(0.0, abs=1e-15)
        assert state.compensated_bound_t == pytest.approx(0.0, abs=1e-15)
        assert state.compensated_fraction == pytest.approx(0.0, abs=1e-12)


def test_compensation_with_an_independent_pair_counts_the_worst_switching_and_lie():
    # Pair b switches on its own: the host fits over both switchings of it in each state
    # (every sample weighing the same); brute force over lies, states and switchings.
    report = report_of(two_pairs("total", switching_b="independent"))
    fields = {name: turned_pair_fields(r, 0.008, TURNS) for name, r in PAIRS.items()}
    samples = np.array([[0, 0], [0, 20], [20, 0], [20, 20.0]])   # off, off+b, a on, a on+b
    worst = 0.0
    for fa in fields["pair a"]:
        for fb in fields["pair b"]:
            b = samples @ np.array([fa, fb])
            k = _refit(samples, b, np.ones(2), samples[0], b[0])
            residual = b - b[0] - np.outer(samples.sum(axis=1), k)
            worst = max(worst, float(np.hypot(residual[:, 0], residual[:, 1]).max()))
    told = max(s.compensated_horizontal_t for s in report.states)
    assert worst <= told <= 1.1 * worst


# Bounds scaled by independent circuits -----------------------------------------------------------

def windlass_plan(current, kind="paired", extra=None, reference=""):
    runs = [{"run": "windlass feed", "circuits": "windlass", "route": "-2, 0, -0.05 > 2, 0, -0.05",
             "return": kind, "spacing": "8 mm", **(extra or {})}]
    states = [{"circuit": "windlass", "harbour": current, "switching": "independent reversing"}]
    return {"site": site(), "runs": runs, "states": states,
            "sensors": [{"sensor": "compass", "at": "0, 0, 0", "kind": "magnetic compass",
                         "budget_deg": 1.0, "reference_state": reference}]}


def windlass_pair_worst_deg(current):
    """[deg] The windlass pair's largest deviation over its return's turns at 1° steps, by
    brute force with magpylib loops (the oracle; asin(|b_h|/H), NGA Pub. 226)."""
    turns = np.radians(np.arange(0, 360, 1.0))
    b = abs(current) * turned_pair_fields([[-2, 0, -0.05], [2, 0, -0.05]], 0.008, turns)
    return math.degrees(math.asin(np.hypot(b[:, 0], b[:, 1]).max() / H))


@pytest.mark.parametrize("reference", ["", "harbour"])
@pytest.mark.parametrize("current", [4.0, -4.0])
def test_a_pair_of_unknown_lie_on_an_independent_load_counts_its_worst_turn(current, reference):
    # The windlass switches on its own, either way round: its pair's lie counts at the current
    # it may carry, whatever its sign, and a compass adjusted with it off sees all of it.
    # Brute force over turns with the load on (magpylib).
    held = check(windlass_plan(current, reference=reference)).sensors[0].states[0].held
    worst = windlass_pair_worst_deg(current)
    assert worst <= held <= worst / math.cos(math.pi / 8) * 1.01


@pytest.mark.parametrize("current", [4.0, -4.0])
def test_a_pair_of_unknown_lie_counts_its_worst_turn_whatever_the_sign_of_its_current(current):
    # A circuit always on in its state (not switched on its own) may carry a negative current
    # (a charger feeding the battery): its pair's lie counts at the size of that current, never
    # less. Brute force over turns (magpylib); dropping abs() on the circuit's own current gives
    # a negative scale and a held figure below the worst turn.
    plan = windlass_plan(current)
    plan["states"][0]["switching"] = ""
    held = check(plan).sensors[0].states[0].held
    worst = windlass_pair_worst_deg(current)
    assert worst <= held <= worst / math.cos(math.pi / 8) * 1.01


@pytest.mark.parametrize("current", [40.0, -40.0])
def test_a_twisted_floor_on_an_independent_load_is_scaled_by_its_size(current):
    # A twisted run into its terminals, 1.5 m under the compass: the floor (50 dB under the
    # pair's worst lie, Moser & Spencer 1968) is all it counts, at |current| whatever its sign.
    plan = windlass_plan(current, "twisted", {"lay": "40 mm", "untwisted_ends": "0 m"})
    plan["runs"][0]["route"] = "-2, 0, -1.5 > 2, 0, -1.5"
    held = check(plan).sensors[0].states[0].held
    turns = np.radians(np.arange(0, 360, 2.0))
    b = turned_pair_fields([[-2, 0, -1.5], [2, 0, -1.5]], 0.008, turns)
    floor = 10 ** (-50 / 20) * 40.0 * np.hypot(b[:, 0], b[:, 1]).max()
    assert held >= math.degrees(math.asin(floor / H))


# The fit: reference, offset, channels -----------------------------------------------------------

def wires(states, measured, reference, equipment=None, axes=""):
    """Two 100 m wires laid forward: A 0.5 m below the sensor, B 0.5 m to starboard of it
    (long wires, mu0 I/(2 pi d): A gives -4e-7 y T/A, B +4e-7 z T/A)."""
    tables = {"site": site(), "states": states,
              "runs": [{"run": "wire a", "circuits": "feed a", "route": "-50, 0, -0.5 > 50, 0, -0.5",
                        "return": "none"},
                       {"run": "wire b", "circuits": "feed b", "route": "-50, -0.5, 0 > 50, -0.5, 0",
                        "return": "none"}],
              "sensors": [{"sensor": "s", "at": "0, 0, 0", "kind": "magnetometer",
                           "budget_deg": 5, "reference_state": reference,
                           "measured_currents": measured, "axes": axes}]}
    if equipment:
        tables["equipment"] = equipment
    return tables


U_A = np.array([0, -4e-7, 0]) * 50 / math.hypot(50, 0.5)   # finite 100 m wire, textbook
U_B = np.array([0, 0, 4e-7]) * 50 / math.hypot(50, 0.5)


def test_the_fit_subtracts_the_reference_state():
    # Calibrated in "cruise" with A on: the host fits the change from cruise,
    # k = sum dm db / sum dm^2 over the states (closed form, one channel); a fit of the raw
    # readings (the reference ignored) learns another k and leaves another residual.
    states = [{"circuit": "feed a", "cruise": 10, "both": 10, "b only": 0},
              {"circuit": "feed b", "cruise": 0, "both": 10, "b only": 10}]
    report = report_of(wires(states, "total", "cruise"))
    currents = np.array([[10, 0], [10, 10], [0, 10.0]])
    b = currents @ np.array([U_A, U_B])
    k = _refit(currents, b, np.ones(2), currents[0], b[0])
    np.testing.assert_allclose(report.compensation.coefficients_t_per_a[0], k, rtol=1e-9,
                               atol=1e-18)
    for state, i, field in zip(report.states, currents, b):
        residual = field - b[0] - (i.sum() - 10) * k
        assert state.compensated_horizontal_t == pytest.approx(
            math.hypot(residual[0], residual[1]), rel=1e-9, abs=1e-16)
    raw = (currents.sum(axis=1) @ b) / (currents.sum(axis=1) @ currents.sum(axis=1))
    assert np.linalg.norm(raw - k) > 0.1 * np.linalg.norm(k)


def test_what_is_left_counts_equipment_of_known_orientation():
    # A magnet present only in "b on", each wire measured alone: the host fits k_b to the change
    # in "b on", magnet included (k_b = u_b + M/10), so it cancels there; in "both" (A and B
    # on, magnet off) it is left as -M (by hand: residual = b - b_ref - k_a 10 - k_b 10).
    magnet = [{"item": "motor", "at": "0.25, 0.1, 0.0", "moment_am2": 0.2, "axis": "0, 1, 0",
               "states": "b on"}]
    states = [{"circuit": "feed a", "off": 0, "a on": 10, "b on": 0, "both": 10},
              {"circuit": "feed b", "off": 0, "a on": 0, "b on": 10, "both": 10}]
    tables = wires(states, "feed a; feed b", "off", magnet)
    tables["sensors"][0]["used_in"] = "off; a on; b on"
    report = report_of(tables)
    moment = dipole([0, 0.2, 0], [0.25, 0.1, 0.0])
    both = next(s for s in report.states if s.state == "both")
    assert both.compensated_horizontal_t == pytest.approx(math.hypot(*moment[:2]), rel=1e-9)
    b_on = next(s for s in report.states if s.state == "b on")
    assert b_on.compensated_horizontal_t == pytest.approx(0.0, abs=1e-15)


def test_sensor_axes_turn_vectors_into_the_sensor_frame_for_an_asymmetric_mounting():
    # Mounted "y+ z+": the sensor's x along vessel +y, its y along vessel +z, so its z (x cross
    # y) along vessel +x. A vessel vector (vx, vy, vz) reads (vy, vz, vx) in its axes; the
    # mounting is a cyclic turn, not its own transpose.
    states = [{"circuit": "feed a", "off": 0, "a on": 10, "b on": 0},
              {"circuit": "feed b", "off": 0, "a on": 0, "b on": 10}]
    report = report_of(wires(states, "feed a; feed b", "off", axes="y+ z+"))
    a = next(r for r in report.per_ampere if r.circuit == "feed a")
    np.testing.assert_allclose(a.vessel_t_per_a, U_A, rtol=1e-9, atol=1e-18)
    np.testing.assert_allclose(a.sensor_t_per_a, U_A[[1, 2, 0]], rtol=1e-9, atol=1e-18)
    comp = report.compensation
    for j in range(2):
        vessel = comp.coefficients_t_per_a[j]
        np.testing.assert_allclose(comp.sensor_coefficients_t_per_a[j], vessel[[1, 2, 0]],
                                   rtol=1e-12, atol=1e-20)
    np.testing.assert_allclose(comp.sensor_coefficients_t_per_a[1], U_B[[1, 2, 0]], rtol=1e-9,
                               atol=1e-18)


# The grade, the model check, the area ------------------------------------------------------------

def test_the_grade_takes_the_whole_vector_not_its_horizontal_part():
    # A long wire beside the sensor at its height, 5 cm to starboard: its field is vertical
    # (+z, right-hand rule), mu0 I/(2 pi d) = 40 uT at 10 A, 89 % of F = 44.7 uT, though
    # nothing of it is horizontal.
    tables = {"site": site(), "states": [{"circuit": "feed", "on": 10.0}],
              "runs": [{"run": "feed", "circuits": "feed", "route": "-50, -0.05, 0 > 50, -0.05, 0",
                        "return": "none"}],
              "sensors": [{"sensor": "s", "at": "0, 0, 0", "kind": "electronic compass",
                           "budget_deg": 5}]}
    report = report_of(tables)
    size = 2e-7 * 10 / 0.05 * 50 / math.hypot(50, 0.05)
    assert report.states[0].interference_t == pytest.approx(size, rel=1e-9)
    assert report.grade.fraction == pytest.approx(size / math.hypot(H, Z), rel=1e-9)


def test_the_inclination_check_counts_equipment_of_unknown_orientation():
    # A magnet of unknown orientation 0.25 m from a level magnetometer, nothing else: brute force
    # over its orientations (dipole, Griffiths eq. 5.89) and headings of the inclination of
    # F + C b (written here) against the model's; the figure must cover it.
    tables = {"site": site(), "states": [{"circuit": "feed", "on": 0.0}],
              "runs": [{"run": "feed", "circuits": "feed", "route": "-1, 5, 0 > 1, 5, 0",
                        "return": "none"}],
              "equipment": [{"item": "motor", "at": "0.25, 0, 0", "moment_am2": 0.3}],
              "sensors": [{"sensor": "s", "at": "0, 0, 0", "kind": "magnetometer",
                           "budget_deg": 5}]}
    state = report_of(tables).states[0]
    fields = np.array([dipole(0.3 * m, [0.25, 0, 0]) for m in sphere(2000)])
    n_e_d = level(fields[:, None, :], np.arange(0, 360, 2.0)[None, :])
    inclination = np.degrees(np.arctan2(Z + n_e_d[..., 2], np.hypot(H + n_e_d[..., 0],
                                                                     n_e_d[..., 1])))
    model = math.degrees(math.atan2(Z, H))
    worst = np.abs(inclination - model).max()
    assert worst > 1.0
    assert state.inclination_departure_deg >= worst


def test_each_place_of_the_area_takes_the_model_field_not_the_site_measurement():
    # The site gives a measured H; the other places take WMM2025's (pygeomag as the oracle).
    pygeomag = pytest.importorskip("pygeomag")
    model = pygeomag.GeoMag(coefficients_file="wmm/WMM_2025.COF")
    tables = {"site": [{"setting": "latitude", "value": 40.0},
                       {"setting": "longitude", "value": 20.0},
                       {"setting": "date", "value": 2027.0},
                       {"setting": "horizontal_field_ut", "value": 18.0},
                       {"setting": "vertical_field_ut", "value": 41.0},
                       {"setting": "place", "value": "0, 20", "note": "equator"},
                       {"setting": "place", "value": "70, 20", "note": "north"}],
              "states": [{"circuit": "feed", "on": 0.1}],
              "runs": [{"run": "feed", "circuits": "feed", "route": "-50, 0, -1 > 50, 0, -1",
                        "return": "none"}],
              "sensors": [{"sensor": "s", "at": "0, 0, 0", "kind": "magnetometer",
                           "budget_deg": 1}]}
    result = area_check(deviation.plan_from_tables(tables))
    assert result.places[0].site.horizontal_t == pytest.approx(18e-6)
    for place in result.places[1:]:
        ref = model.calculate(place.latitude_deg, place.longitude_deg, 0.0, 2027.0)
        assert place.site.horizontal_t == pytest.approx(ref.h * 1e-9, abs=1e-12)


# Total-field magnetometers ----------------------------------------------------------------------

def test_total_field_bounds_widen_both_ends_and_the_peak_to_peak_twice():
    # Near the magnetic equator (H 30 uT, Z 3 uT: H/F = 0.995) a magnet of unknown orientation
    # 0.3 m from a level scalar magnetometer. Brute force over its orientations (dipole) and
    # headings of |F + C b| - F (written here): the figures must hold the largest, the
    # smallest, and the largest heading peak to peak, which nears 2 (H/F) beta, beta its
    # end-on field: more than beta alone.
    tables = {"site": site(30.0, 3.0), "states": [{"circuit": "feed", "on": 0.0}],
              "runs": [{"run": "feed", "circuits": "feed", "route": "-1, 5, 0 > 1, 5, 0",
                        "return": "none"}],
              "equipment": [{"item": "motor", "at": "0.3, 0, 0", "moment_am2": 0.2}],
              "sensors": [{"sensor": "boom", "at": "0, 0, 0", "kind": "total-field magnetometer",
                           "budget_nt": 5}]}
    state = check(tables).sensors[0].states[0]
    h, z = 30e-6, 3e-6
    fields = np.array([dipole(0.2 * m, [0.3, 0, 0]) for m in sphere(3000)])
    n_e_d = level(fields[:, None, :], np.arange(0, 360, 1.0)[None, :])
    error = np.sqrt((h + n_e_d[..., 0]) ** 2 + n_e_d[..., 1] ** 2
                    + (z + n_e_d[..., 2]) ** 2) - math.hypot(h, z)
    beta = 2 * MU0_4PI * 0.2 / 0.3 ** 3
    peak_to_peak = (error.max(axis=1) - error.min(axis=1)).max()
    assert peak_to_peak > 1.5 * beta
    assert state.total_field_high_t >= error.max()
    assert state.total_field_low_t <= error.min()
    assert state.heading_peak_to_peak_t >= peak_to_peak


# A point's figure on its own ---------------------------------------------------------------------

def test_a_points_figure_does_not_depend_on_the_points_evaluated_with_it():
    # Twenty pairs of unknown lie and ten twisted runs give more turning generators than the
    # exact search takes (64 level, 24 with heel): the ones it takes are chosen point by point,
    # so the figure at a point is the same evaluated alone or among others (the spot search
    # relies on it: its brute force and its coarse-to-fine stages see different point sets).
    from deviation.analysis import parts_at
    from deviation.budget.figures import sensor_figures
    from deviation.sitefield import site_field

    runs = [{"run": f"pair {i}", "circuits": "c", "return": "paired", "spacing": "6 mm",
             "route": f"-1, {0.05 * i - 0.5:.2f}, -0.1 > 1, {0.05 * i - 0.5:.2f}, -0.1"}
            for i in range(20)]
    runs += [{"run": f"twist {i}", "circuits": "c", "return": "twisted", "spacing": "6 mm",
              "lay": "30 mm", "route": f"{0.1 * i - 0.5:.1f}, -1, 0.1 > {0.1 * i - 0.5:.1f}, 1, 0.1"}
             for i in range(10)]
    for heel in (0.0, 20.0):
        plan = deviation.plan_from_tables({
            "site": site(), "runs": runs, "states": [{"circuit": "c", "on": 1.0}],
            "sensors": [{"sensor": "s", "at": "0, 0, 0", "kind": "magnetometer",
                         "budget_deg": 5, "max_heel_deg": heel}]})
        [sensor] = plan.sensors
        earth = site_field(plan.site)
        alone = np.array([[0.02, 0.03, 0.0]])
        among = np.vstack([alone, [[0.45, -0.45, 0.0], [-0.3, 0.4, -0.05]]])
        held_alone = sensor_figures(plan, sensor, earth, parts_at(plan, alone), alone).held
        held_among = sensor_figures(plan, sensor, earth, parts_at(plan, among), among).held
        np.testing.assert_allclose(held_among[0], held_alone[0], rtol=0, atol=1e-12)
