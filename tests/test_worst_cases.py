"""Where the plan is silent the worst case counts: switching, lies of pairs, attitude, residuals,
bounds. Each figure is checked against an oracle written here (magpylib fields, brute force over
choices, dense sampling of attitudes with our own rotation), never against the package itself."""

import itertools
import math

import numpy as np
import pytest

import deviation
from deviation import heading

MU0 = 4e-7 * math.pi
H_UT = 20.0
H = H_UT * 1e-6

magpylib = pytest.importorskip("magpylib")


def tables(runs, states, sensor=None, equipment=None):
    sensors = [{"sensor": "compass", "at": "0, 0, 0", "kind": "magnetic compass",
                "budget_deg": 1.0, **(sensor or {})}]
    out = {"site": [{"setting": "horizontal_field_ut", "value": H_UT},
                    {"setting": "vertical_field_ut", "value": 40}],
           "runs": runs, "states": states, "sensors": sensors}
    if equipment:
        out["equipment"] = equipment
    return out


def wire(name, circuit, start, end):
    return {"run": name, "circuits": circuit, "route": f"{start} > {end}", "return": "none"}


def b_wire(start, end, current, at=(0, 0, 0)):
    """magpylib: a straight single conductor."""
    line = magpylib.current.Polyline(current=current, vertices=[start, end])
    return line.getB(at)


def deviation_of(b_h_size):
    return math.degrees(math.asin(b_h_size / H))


# Loads that switch on their own -----------------------------------------------------------------

RUNS = [((-30, 0.4, -0.3), (30, 0.4, -0.3)), ((0.2, -30, -0.5), (0.2, 30, -0.5)),
        ((-0.3, -0.2, -40), (-0.3, -0.2, 40)), ((-25, -0.6, 0.2), (25, -0.6, 0.2))]
CIRCUITS = ["lights", "windlass", "pump", "radio"]
CURRENTS = [0.5, 6.0, -2.0, 3.0]


def switching_plan(switching, sensor=None):
    runs = [wire(f"run {i}", c, "{}, {}, {}".format(*a), "{}, {}, {}".format(*b))
            for i, (c, (a, b)) in enumerate(zip(CIRCUITS, RUNS))]
    currents = dict(zip(CIRCUITS, CURRENTS))
    states = [{"circuit": c, "at sea": currents[c], "switching": switching.get(c)}
              for c in CIRCUITS]
    return deviation.plan_from_tables(tables(runs, states, sensor))


def test_worst_switching_of_independent_loads_matches_brute_force_over_every_combination():
    switching = {"windlass": "independent", "pump": "independent reversing",
                 "radio": "independent"}
    result = deviation.check(switching_plan(switching), remedies=False)
    st = result.sensors[0].states[0]
    fields = [b_wire(a, b, 1.0) for a, b in RUNS]
    currents = CURRENTS
    choices = [[1], [0, 1], [-1, 0, 1], [0, 1]]          # lights always on with the state
    worst, worst_choice = 0.0, None
    for choice in itertools.product(*choices):
        b = sum(s * i * f for s, i, f in zip(choice, currents, fields))
        if math.hypot(b[0], b[1]) > worst:
            worst, worst_choice = math.hypot(b[0], b[1]), choice
    assert st.budget_used_deg == pytest.approx(deviation_of(worst), rel=1e-7)
    on = dict(st.switched_on)
    assert [on.get(c, 0) for c in CIRCUITS[1:]] == list(worst_choice[1:])


def test_switching_with_the_states_counts_only_the_stated_currents():
    result = deviation.check(switching_plan({}), remedies=False)
    b = sum(i * b_wire(a, c, 1.0) for i, (a, c) in zip(CURRENTS, RUNS))
    assert result.sensors[0].states[0].budget_used_deg == pytest.approx(
        deviation_of(math.hypot(b[0], b[1])), rel=1e-7)


def test_worst_switching_at_heel_and_pitch_against_dense_attitudes():
    switching = {"windlass": "independent", "radio": "independent"}
    plan = switching_plan(switching, {"max_heel_deg": 25, "max_pitch_deg": 12})
    st = deviation.check(plan, remedies=False).sensors[0].states[0]
    fields = [b_wire(a, b, 1.0) for a, b in RUNS]
    currents = CURRENTS
    heel, pitch = np.meshgrid(np.radians(np.linspace(-25, 25, 251)),
                              np.radians(np.linspace(-12, 12, 121)))
    worst = 0.0
    for windlass, radio in itertools.product((0, 1), (0, 1)):
        b = sum(s * i * f for s, i, f in zip((1, windlass, 1, radio), currents, fields))
        worst = max(worst, dense_attitude_max(b, heel, pitch))
    assert deviation_of(worst) <= st.budget_used_deg + 1e-9
    assert st.budget_used_deg == pytest.approx(deviation_of(worst), abs=2e-3)


def dense_attitude_max(b, heel, pitch):
    """Largest level horizontal size of a vessel vector over sampled heel and pitch, with our own
    rotation: forward-starboard-down, rolled by heel (starboard down +), pitched (bow up +)."""
    f, s, d = b[0], -b[1], -b[2]
    s1 = np.cos(heel) * s - np.sin(heel) * d
    d1 = np.sin(heel) * s + np.cos(heel) * d
    north = np.cos(pitch) * f + np.sin(pitch) * d1
    return float(np.hypot(north, s1).max())


# Attitude ---------------------------------------------------------------------------------------

def test_worst_heel_and_pitch_is_found_inside_the_range():
    # A field mostly forward with a smaller part down: pitching the bow down by atan(down/forward)
    # lays the whole field level, an attitude strictly inside the pitch range.
    runs = [wire("a", "c", "0.05, -30, -0.3", "0.05, 30, -0.3"),
            wire("b", "c", "-30, 0.6, 0", "30, 0.6, 0")]
    states = [{"circuit": "c", "on": 3.0}]
    plan = deviation.plan_from_tables(tables(runs, states, {"max_heel_deg": 10,
                                                            "max_pitch_deg": 40}))
    st = deviation.check(plan, remedies=False).sensors[0].states[0]
    b = np.array(st.field_t)
    heel, pitch = np.meshgrid(np.radians(np.linspace(-10, 10, 401)),
                              np.radians(np.linspace(-40, 40, 1601)))
    f, s, d = b[0], -b[1], -b[2]
    s1 = np.cos(heel) * s - np.sin(heel) * d
    d1 = np.sin(heel) * s + np.cos(heel) * d
    size = np.hypot(np.cos(pitch) * f + np.sin(pitch) * d1, s1)
    where = np.unravel_index(np.argmax(size), size.shape)
    assert 0 < where[0] < size.shape[0] - 1            # the sampled optimum is inside in pitch
    assert st.budget_used_deg >= deviation_of(size.max()) - 1e-12
    assert st.budget_used_deg == pytest.approx(deviation_of(size.max()), abs=1e-4)
    # Heel alone, or the ends of the ranges alone, give less: the test would catch either.
    ends = max(dense_attitude_max(b, np.radians(h), np.radians(p)) for h in (-10, 10)
               for p in (-40, 40))
    assert deviation_of(ends) < st.budget_used_deg - 0.01


def test_heel_starboard_down_turns_an_upward_field_east_on_north():
    # Heel positive with the starboard side down tips the vessel's "up" towards starboard, which
    # is east on a northerly heading: a vessel field pointing up gives easterly deviation
    # atan2(B sin(heel), H) (derivation from the frame definitions; compass practice: heeling
    # error is largest on north and south headings, NGA Pub. 226).
    b = np.array([0.0, 0.0, 2e-6])
    got = float(heading.deviation_deg(b, H, 0.0, 10.0))
    assert got == pytest.approx(math.degrees(math.atan2(2e-6 * math.sin(math.radians(10)), H)))
    assert got > 0
    assert float(heading.deviation_deg(b, H, 90.0, 10.0)) == pytest.approx(0.0, abs=1e-12)


# How a pair lies --------------------------------------------------------------------------------

def pair_deviation(angle_deg, current=10.0, s=0.005, d=0.3):
    """magpylib: a long closed pair below the sensor, its return turned by angle about the axis
    from port (0) towards above (90); asin(|B_h|/H)."""
    a = math.radians(angle_deg)
    dy, dz = s * math.cos(a), s * math.sin(a)
    loop = magpylib.current.Polyline(current=current, vertices=[
        (-50, 0, -d), (50, 0, -d), (50, dy, -d + dz), (-50, dy, -d + dz), (-50, 0, -d)])
    b = loop.getB((0, 0, 0))
    return deviation_of(math.hypot(b[0], b[1]))


def pair_plan(lie):
    runs = [{"run": "thruster", "circuits": "t", "route": "-50, 0, -0.3 > 50, 0, -0.3",
             "return": "paired", "spacing": "5 mm", "lie": lie}]
    return deviation.plan_from_tables(tables(runs, [{"circuit": "t", "on": 10.0}]))


def test_pair_one_above_the_other_counts_the_worse_of_above_and_below():
    st = deviation.check(pair_plan("one above the other"), remedies=False).sensors[0].states[0]
    assert st.budget_used_deg == pytest.approx(max(pair_deviation(90), pair_deviation(270)),
                                               rel=1e-7)
    # Two-wire line (Griffiths ch. 5, superposition): with the return 5 mm above the supply, on the
    # line to the sensor, |B| = mu0 I s / (2 pi r1 r2), r1 = 0.3 m, r2 = 0.295 m, horizontal.
    two_wire = MU0 * 10 * 0.005 / (2 * math.pi * 0.3 * 0.295)
    assert st.budget_used_deg == pytest.approx(deviation_of(two_wire), rel=1e-3)


def test_pair_side_by_side_leaves_the_field_nearly_vertical():
    st = deviation.check(pair_plan("side by side"), remedies=False).sensors[0].states[0]
    assert st.budget_used_deg == pytest.approx(max(pair_deviation(0), pair_deviation(180)),
                                               rel=1e-7)
    assert st.budget_used_deg < 0.1 * pair_deviation(90)


def test_pair_of_unknown_lie_counts_its_worst_turn_as_a_bound():
    st = deviation.check(pair_plan(None), remedies=False).sensors[0].states[0]
    worst = max(pair_deviation(a) for a in range(0, 360, 2))
    # Never less than the worst turn; at most the circumscribed octagon's 1/cos(pi/8) more.
    assert worst <= st.budget_used_deg <= worst / math.cos(math.pi / 8) + 1e-9
    assert st.runs[0].bound_t > 0


# The reference state ----------------------------------------------------------------------------

def reference_plan(equipment=None):
    runs = [wire("fore-aft", "lights", "-30, 0.3, -0.4", "30, 0.3, -0.4"),
            wire("athwart", "radar", "0.5, -30, -0.2", "0.5, 30, -0.2")]
    states = [{"circuit": "lights", "harbour": 6.0, "night": 6.0},
              {"circuit": "radar", "harbour": 0.0, "night": 9.0}]
    return deviation.plan_from_tables(tables(runs, states, {"reference_state": "harbour"},
                                             equipment))


def test_change_from_the_reference_is_the_deviation_of_the_residual_field():
    result = deviation.check(reference_plan(), remedies=False).sensors[0]
    reference = 6.0 * b_wire((-30, 0.3, -0.4), (30, 0.3, -0.4), 1.0)
    night = reference + 9.0 * b_wire((0.5, -30, -0.2), (0.5, 30, -0.2), 1.0)
    residual = night - reference
    expected = deviation_of(math.hypot(residual[0], residual[1]))
    assert result.state("night").budget_used_deg == pytest.approx(expected, rel=1e-7)
    # The other model, the change of deviation delta(b) - delta(b_ref) over headings, differs
    # here by more than the tolerance: the test tells the two apart.
    psi = np.radians(np.arange(0, 360, 0.05))

    def delta(b):
        north = b[0] * np.cos(psi) + b[1] * np.sin(psi)
        east = b[0] * np.sin(psi) - b[1] * np.cos(psi)
        return np.degrees(np.arctan2(east, H + north))

    difference = np.abs(delta(night) - delta(reference)).max()
    assert abs(difference - expected) > 0.02
    # In the reference state the runs are ranked by what the adjustment absorbs.
    ref = result.state("harbour")
    assert ref.runs[0].name == "fore-aft" and ref.runs[0].max_deviation_deg > 0.5
    assert result.adjustment_absorbs_deg == pytest.approx(
        deviation_of(math.hypot(reference[0], reference[1])), rel=1e-7)


def test_equipment_bound_with_a_reference_state_is_the_worst_over_its_direction():
    # A labelled item present only at night, 0.9 m away, labelled 0.6 m (standard): at most
    # 94.2 nT * (0.6/0.9)^3 in a direction unknown (IEC 60945; at least 1/r^3 beyond the label).
    items = [{"item": "radar display", "at": "0, 0.9, 0", "safe_distance": "0.6 m",
              "safe_distance_for": "standard", "states": "night"}]
    st = deviation.check(reference_plan(items), remedies=False).sensors[0].state("night")
    beta = H * math.sin(math.radians(5.4 / H_UT)) * (0.6 / 0.9) ** 3
    residual = 9.0 * b_wire((0.5, -30, -0.2), (0.5, 30, -0.2), 1.0)
    # Brute force: the item's field of size beta in 4000 directions, 720 headings.
    rng = np.random.default_rng(7)
    directions = rng.normal(size=(4000, 3))
    directions /= np.linalg.norm(directions, axis=1, keepdims=True)
    directions[0] = np.r_[residual[:2] / math.hypot(*residual[:2]), 0.0]
    fields = residual[None, :] + beta * directions
    psi = np.radians(np.arange(0, 360, 0.5))[:, None]
    north = fields[:, 0] * np.cos(psi) + fields[:, 1] * np.sin(psi)
    east = fields[:, 0] * np.sin(psi) - fields[:, 1] * np.cos(psi)
    brute = np.abs(np.degrees(np.arctan2(east, H + north))).max()
    assert brute <= st.budget_used_deg + 1e-9
    assert st.budget_used_deg == pytest.approx(brute, abs=2e-3)
    # Adding the bound in quadrature would come out short of the brute-force worst case.
    quadrature = deviation_of(math.hypot(math.hypot(*residual[:2]), beta))
    assert quadrature < brute - 0.05


def test_safe_distance_bound_falls_as_the_cube_of_distance():
    # IEC 60945 gives the deviation at the label; a magnet's field falls at least as 1/r^3, so
    # at twice the labelled distance the bound is an eighth (Griffiths ch. 6, dipole field).
    def bound_at(distance):
        items = [{"item": "speaker", "at": f"0, {distance}, 0", "safe_distance": "0.5 m",
                  "safe_distance_for": "steering"}]
        plan = deviation.plan_from_tables(tables([wire("w", "c", "-1, 5, 0", "1, 5, 0")],
                                                 [{"circuit": "c", "on": 0.0}], None, items))
        return deviation.check(plan, remedies=False).sensors[0].states[0].equipment_bound_t

    at_label = H * math.sin(math.radians(18.0 / H_UT))
    assert bound_at(0.5) == pytest.approx(at_label, rel=1e-12)
    assert bound_at(1.0) == pytest.approx(at_label / 8, rel=1e-12)


def test_magnet_of_unknown_orientation_counts_its_end_on_field():
    # A dipole m of unknown axis at r: the largest field over orientations is end-on,
    # 2 mu0 m / (4 pi r^3) (Griffiths ch. 5); magpylib over 2000 orientations stays below it.
    items = [{"item": "motor", "at": "0, 0.7, 0", "moment_am2": 0.4}]
    plan = deviation.plan_from_tables(tables([wire("w", "c", "-1, 5, 0", "1, 5, 0")],
                                             [{"circuit": "c", "on": 0.0}], None, items))
    st = deviation.check(plan, remedies=False).sensors[0].states[0]
    rng = np.random.default_rng(3)
    axes = rng.normal(size=(2000, 3))
    axes /= np.linalg.norm(axes, axis=1, keepdims=True)
    sampled = max(np.linalg.norm(magpylib.misc.Dipole(moment=0.4 * a, position=(0, 0.7, 0))
                                 .getB((0, 0, 0))) for a in axes)
    assert st.equipment_bound_t == pytest.approx(2 * 1e-7 * 0.4 / 0.7 ** 3, rel=1e-12)
    assert sampled <= st.equipment_bound_t and sampled > 0.99 * st.equipment_bound_t
    # "If every field lined up" includes the item's bound.
    assert st.magnitude_bound_deg == pytest.approx(deviation_of(st.equipment_bound_t), rel=1e-9)


# Twisted runs as made ---------------------------------------------------------------------------

def test_twisted_run_far_away_is_held_at_the_50db_floor_of_the_same_pair():
    # 20 lay lengths away a perfect helix is far weaker than measurement supports; the run counts
    # no weaker than 50 dB under the same pair untwisted in its worst lie (Moser & Spencer, IEEE
    # Trans. EMC 1968). The pair's worst lie is taken from magpylib loops turned about the axis.
    runs = [{"run": "twisted feed", "circuits": "c", "route": "-50, 0, -1 > 50, 0, -1",
             "return": "twisted", "spacing": "5 mm", "lay": "50 mm", "untwisted_ends": "0 m"}]
    plan = deviation.plan_from_tables(tables(runs, [{"circuit": "c", "on": 10.0}]))
    run = deviation.check(plan, remedies=False).sensors[0].states[0].runs[0]
    worst_pair = max(pair_deviation(a, d=1.0) for a in range(0, 360, 5))
    floor = deviation_of(10 ** (-50 / 20) * H * math.sin(math.radians(worst_pair)))
    assert run.max_deviation_deg >= floor * 0.999
    assert run.max_deviation_deg <= floor / math.cos(math.pi / 8) * 1.7


# States a sensor is used in ---------------------------------------------------------------------

def test_a_sensor_is_judged_only_in_the_states_it_is_used_in():
    runs = [wire("windlass feed", "windlass", "-30, 0.2, -0.3", "30, 0.2, -0.3")]
    states = [{"circuit": "windlass", "under way": 0.0, "anchoring": 80.0}]
    plan = deviation.plan_from_tables(tables(runs, states, {"used_in": "under way"}))
    result = deviation.check(plan)
    sensor = result.sensors[0]
    anchoring = sensor.state("anchoring")
    assert not anchoring.within_budget and not anchoring.used
    assert sensor.within_budget and result.within_budget
    assert anchoring.remedies == ()
    frame = result.to_frame()
    assert list(frame[frame.used].state) == ["under way"]


# Bad values in the new columns ------------------------------------------------------------------

def test_new_columns_get_located_findings_with_did_you_mean():
    runs = [{"run": "feed", "circuits": "pump", "route": "-1, 0, -0.5 > 1, 0, -0.5",
             "return": "paired", "spacing": "5 mm", "lie": "sid by side",
             "untwisted_ends": "0.1 m"}]
    states = [{"circuit": "pump", "under way": 3.0, "switching": "independant"}]
    sensor = {"used_in": "under wey", "max_pitch_deg": 95}
    with pytest.raises(deviation.PlanError) as caught:
        deviation.plan_from_tables(tables(runs, states, sensor))
    lines = sorted(str(f) for f in caught.value.findings)
    assert lines == sorted([
        '<tables>: runs row 2, lie: "sid by side" is not a way a pair lies; expected one of not '
        'known, side by side, one above the other; did you mean "side by side"?',
        '<tables>: runs row 2, untwisted_ends: untwisted ends are only used with return '
        '"twisted", not "paired"',
        '<tables>: states row 2, switching: "independant" is not a way of switching; expected one '
        'of with states, independent, independent reversing; did you mean "independent"?',
        '<tables>: sensors row 2, used_in: "under wey" is not a state; did you mean "under way"?',
        '<tables>: sensors row 2, max_pitch_deg: the pitch must be 0 to 90 degrees'])
