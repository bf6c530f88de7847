"""After installation over a plan: the switch-on test against magpylib with a run laid elsewhere,
its read-back, the swing beside the plan, the state to swing in, Gauss's helper and refits."""

import csv
import json
import math

import numpy as np
import openpyxl
import pytest

from conftest import ROOT, SAMPLES, run_cli, straight_wire_plan, write_plan
from deviation import read_plan
from deviation.aftercare import (
    ReadingsError,
    deflection_item,
    read_swing,
    read_switch_on_results,
    reference_choices,
    refit,
    swing_comparison,
    switch_on_test,
)
from deviation.checking import check_plan
from deviation.physics.swing import curve_deg

MU0 = 4e-7 * math.pi
H_UT = 20.0
HEADING = 30.0

# Three circuits, each a closed loop (supply out, return on its own route back to the source),
# near a compass at the origin; currents in two states.
LOOPS = {
    "cabin lights": ("lights", 8.0,
                     [(-1.5, 0.3, -0.4), (1.5, 0.3, -0.4)],
                     [(1.5, 0.3, -0.4), (1.5, 1.5, -0.4), (-1.5, 1.5, -0.4), (-1.5, 0.3, -0.4)]),
    "pump feed": ("pump", 10.0,
                  [(0.4, -2.0, -0.5), (0.4, 2.0, -0.5)],
                  [(0.4, 2.0, -0.5), (1.6, 2.0, -0.5), (1.6, -2.0, -0.5), (0.4, -2.0, -0.5)]),
    "radio feed": ("radio", 6.0,
                   [(-0.5, -0.4, -1.0), (-0.5, -0.4, 1.0)],
                   [(-0.5, -0.4, 1.0), (-0.5, -1.5, 1.0), (-0.5, -1.5, -1.0), (-0.5, -0.4, -1.0)]),
}


def _route(points):
    return " > ".join(", ".join(f"{v:g}" for v in p) for p in points)


def loop_sheets():
    runs = [["run", "circuits", "route", "return", "return_route", "size"]]
    states = [["circuit", "berth", "underway"]]
    for name, (circuit, amps, route, back) in LOOPS.items():
        runs.append([name, circuit, _route(route), "separate", _route(back), "10 AWG"])
        states.append([circuit, 0 if circuit == "pump" else amps, amps])
    return {"site": [["setting", "value"], ["horizontal_field_ut", H_UT],
                     ["vertical_field_ut", 40]],
            "runs": runs, "states": states,
            "sensors": [["sensor", "at", "kind", "budget_deg", "reference_state"],
                        ["compass", "0, 0, 0", "magnetic compass", 5, ""]]}


def magpylib_field(loops, currents):
    """Field at the compass of the loops as laid, by magpylib's line currents [T]."""
    magpylib = pytest.importorskip("magpylib")
    total = np.zeros(3)
    for name, (route, back) in loops.items():
        if currents.get(name, 0.0):
            wire = magpylib.current.Polyline(current=currents[name], vertices=route + back[1:])
            total += wire.getB((0.0, 0.0, 0.0))
    return total


def deviation(b_t, psi=HEADING):
    # delta = atan2(b_E, H + b_N), b_N = b_x cos psi + b_y sin psi, b_E = b_x sin psi - b_y cos psi
    # for a vessel field (x forward, y port), level (NGA Pub. 226; written out independently).
    p = math.radians(psi)
    north = b_t[0] * math.cos(p) + b_t[1] * math.sin(p)
    east = b_t[0] * math.sin(p) - b_t[1] * math.cos(p)
    return math.degrees(math.atan2(east, H_UT * 1e-6 + north))



@pytest.fixture
def loop_plan(tmp_path):
    return write_plan(tmp_path / "loops", loop_sheets())


def test_switch_on_predictions_match_magpylib_loops(loop_plan):
    test = switch_on_test(read_plan(loop_plan), "compass", HEADING)
    laid = {name: (route, back) for name, (_, _, route, back) in LOOPS.items()}
    for row in test.rows[:3]:
        run = next(n for n, v in LOOPS.items() if v[0] == row.name)
        b = magpylib_field(laid, {run: LOOPS[run][1]})
        # Compass = Magnetic - Deviation with the heading fixed: the reading moves by -delta.
        assert row.predicted_change_deg == pytest.approx(-deviation(b), abs=1e-6)
        assert row.action == "switch on" and row.current_before_a == 0.0
    assert {r.name: r.current_on_test_a for r in test.rows[:3]} == {"lights": 8.0, "pump": 10.0,
                                                                     "radio": 6.0}
    # The state rows switch several circuits together: not the sum of the single changes.
    underway = next(r for r in test.rows if r.name == "underway")
    b_all = magpylib_field(laid, {n: v[1] for n, v in LOOPS.items()})
    assert underway.predicted_change_deg == pytest.approx(-deviation(b_all), abs=1e-6)
    assert all(abs(r.predicted_change_deg) > 1.0 for r in test.rows)


def test_switch_on_from_a_state_switches_its_circuits_off(loop_plan):
    test = switch_on_test(read_plan(loop_plan), "compass", HEADING, "berth")
    actions = {r.name: (r.action, r.current_before_a, r.current_on_test_a) for r in test.rows}
    assert actions["lights"] == ("switch off", 8.0, 0.0)
    assert actions["pump"][0] == "switch on"
    assert "berth" not in actions and actions["underway"][0] == "set as in the state"


def test_wire_below_compass_heading_north_reads_lower_card_turns_clockwise(plan_dir):
    # Right-hand rule (derivation): forward current below the compass, field to starboard;
    # heading north that is east, easterly deviation, the reading falls by atan(B/H).
    test = switch_on_test(read_plan(plan_dir(straight_wire_plan())), "compass", 0.0)
    row = test.rows[0]
    b = MU0 * 10.0 / (2 * math.pi * 0.5)               # long wire, 10 A at 0.5 m (textbook)
    assert row.predicted_change_deg == pytest.approx(-math.degrees(math.atan2(b, 20e-6)),
                                                     rel=1e-4)
    from deviation.render.aftercare import reading_words

    assert reading_words(row.predicted_change_deg, "magnetic compass") == (
        "reading falls 11.31° (card turns clockwise, seen from above)")
    assert reading_words(-row.predicted_change_deg, "electronic compass") == (
        "heading shown rises 11.31°")


def _fill(sheet_path, readings):
    """Write readings (name -> (before, after)) into the test sheet the command wrote."""
    book = openpyxl.load_workbook(sheet_path)
    sheet = book["switch-on test"]
    header = [c.value for c in sheet[1]]
    col = {name: header.index(name) + 1 for name in header}
    for r in range(2, sheet.max_row + 1):
        name = sheet.cell(r, col["circuit"]).value or sheet.cell(r, col["state"]).value
        if name in readings:
            before, after = readings[name]
            sheet.cell(r, col["reading before [°]"], before)
            sheet.cell(r, col["reading after [°]"], after)
    book.save(sheet_path)


def test_readings_of_a_run_laid_elsewhere_name_that_circuit(loop_plan, tmp_path):
    sheet = tmp_path / "test.xlsx"
    result = run_cli("test-sheet", loop_plan, "--sensor", "compass", "--heading", HEADING,
                     "--sheet", sheet)
    assert result.exit_code == 0, result.output
    # As installed: the pump's supply runs directly below the compass, not 0.4 m forward of it.
    # (Laid 0.4 m aft instead, its horizontal field at the compass would be the same and the
    # card could not tell.)
    laid = {name: (list(route), list(back)) for name, (_, _, route, back) in LOOPS.items()}
    route, back = laid["pump feed"]
    moved = [(x - 0.4, y, z) for x, y, z in route]
    laid["pump feed"] = (moved, [moved[1]] + back[1:3] + [moved[0]])
    iron_deg = -2.3            # the vessel's own deviation on this heading: the same every step
    magnetic = HEADING
    readings = {}
    for circuit, run in (("lights", "cabin lights"), ("pump", "pump feed"),
                         ("radio", "radio feed")):
        b = magpylib_field(laid, {run: LOOPS[run][1]})
        # Compass = Magnetic - Deviation; readings judged to a tenth of a degree.
        readings[circuit] = (round(magnetic - iron_deg, 1),
                             round(magnetic - iron_deg - deviation(b), 1))
    b_all = magpylib_field(laid, {n: v[1] for n, v in LOOPS.items()})
    readings["underway"] = (round(magnetic - iron_deg, 1),
                            round(magnetic - iron_deg - deviation(b_all), 1))
    _fill(sheet, readings)
    back_read = read_switch_on_results(read_plan(loop_plan), sheet)
    assert [r.name for r in back_read.suspects] == ["pump"]
    pump = back_read.suspects[0]
    assert pump.runs == ("pump feed",)
    assert abs(pump.difference_deg) > pump.tolerance_deg
    others = {r.name: r.status for r in back_read.rows}
    assert others["lights"] == others["radio"] == "agrees"
    assert others["berth"] == "not read"
    cli = run_cli("test-results", loop_plan, sheet, "--width", 160)
    assert cli.exit_code == 1, cli.output
    assert "pump (runs: pump feed)" in cli.output and "probable routing error" in cli.output
    data = json.loads(run_cli("test-results", loop_plan, sheet, "--json").output)
    assert data["probable_routing_errors"] == ["pump"]


def test_readings_as_planned_agree_and_exit_0(loop_plan, tmp_path):
    plan = read_plan(loop_plan)
    test = switch_on_test(plan, "compass", HEADING)
    path = tmp_path / "switch_on_test.csv"
    with open(path, "w", newline="") as f:
        out = csv.writer(f)
        out.writerow(["circuit", "reading before", "reading after"])
        for row in test.rows[:3]:
            out.writerow([row.name, 100.0, round(100.0 + row.predicted_change_deg, 1)])
    result = run_cli("test-results", loop_plan, path, "--heading", HEADING)
    assert result.exit_code == 0, result.output
    assert "every step read (3) agrees with the plan." in result.output


def test_a_measured_current_on_test_changes_the_prediction(loop_plan, tmp_path):
    plan = read_plan(loop_plan)
    path = tmp_path / "switch_on_test.csv"
    with open(path, "w", newline="") as f:
        csv.writer(f).writerows([["circuit", "current on test [A]", "observed change [°]"],
                                 ["lights", 4.0, 0.0]])
    row = read_switch_on_results(plan, path, heading_deg=HEADING).rows[0]
    laid = {name: (route, back) for name, (_, _, route, back) in LOOPS.items()}
    b = magpylib_field(laid, {"cabin lights": 4.0})
    assert row.current_on_test_a == 4.0
    assert row.predicted_change_deg == pytest.approx(-deviation(b), abs=1e-6)


def test_bad_cells_are_located_and_nothing_is_computed(loop_plan, tmp_path):
    path = tmp_path / "switch_on_test.csv"
    with open(path, "w", newline="") as f:
        csv.writer(f).writerows([["circuit", "reading before", "reading after"],
                                 ["lights", "abc", 101],
                                 ["pumps", 100, 101],
                                 ["radio", 100, ""],
                                 ["lights", 100, 400]])
    with pytest.raises(ReadingsError) as caught:
        read_switch_on_results(read_plan(loop_plan), path, heading_deg=HEADING)
    lines = [str(f) for f in caught.value.findings]
    assert lines == [
        f'{path}: switch_on_test.csv row 2, reading before: "abc" is not a heading in degrees '
        "(0 to 360)",
        f'{path}: switch_on_test.csv row 3, circuit: "pumps" is not a circuit of the plan; did '
        'you mean "pump"?',
        f"{path}: switch_on_test.csv row 4, reading after: both readings are needed (or the "
        "observed change)",
        f'{path}: switch_on_test.csv row 5, circuit: "lights" is listed twice']
    result = run_cli("test-results", loop_plan, path, "--heading", HEADING)
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    assert result.output.strip().splitlines()[-1] == (
        "Error: 4 problems in the readings; nothing was computed or written.")


def test_missing_heading_is_a_finding_not_a_traceback(loop_plan, tmp_path):
    path = tmp_path / "switch_on_test.csv"
    path.write_text("circuit,observed change\nlights,1.0\n")
    result = run_cli("test-results", loop_plan, path)
    assert result.exit_code == 2
    assert "the magnetic heading the vessel lay on is needed" in result.output


def test_readings_in_a_sheet_of_the_plan_itself(loop_plan):
    # The plan reader leaves a sheet it does not know alone; the read-back finds it there.
    plan = read_plan(loop_plan)
    row = switch_on_test(plan, "compass", HEADING).rows[1]
    (loop_plan / "switch_on_test.csv").write_text(
        f"circuit,observed change\n{row.name},{row.predicted_change_deg:.2f}\n")
    again = read_plan(loop_plan)
    assert [c.name for c in again.circuits] == [c.name for c in plan.circuits]
    result = run_cli("test-results", loop_plan, loop_plan, "--heading", HEADING)
    assert result.exit_code == 0, result.output
    assert "pump" in result.output and "agrees" in result.output


def test_test_sheet_html_has_blank_reading_cells(loop_plan, tmp_path):
    page = tmp_path / "test.html"
    assert run_cli("test-sheet", loop_plan, "--sensor", "compass", "--heading", 30,
                   "--sheet", page).exit_code == 0
    text = page.read_text()
    assert text.count("<td class='pen'></td>") == 3 * 5    # 3 circuits + 2 states, 3 columns
    assert "reading before [°]" in text and "ISO 10133" in text


# Swing -------------------------------------------------------------------------------------------

def _swing_csv(path, rows):
    with open(path, "w", newline="") as f:
        csv.writer(f).writerows([["state", "compass", "deviation"]] + rows)
    return path


def test_swing_fit_beside_the_plan_recovers_the_iron_and_the_wiring(loop_plan, tmp_path):
    plan = read_plan(loop_plan)
    check = check_plan(plan, remedies=False)
    result = check.sensors[0]
    h = 20e-6
    iron = np.array([0.4, 1.8, -1.2, 0.6, -0.3])    # the vessel's own curve, invented
    rng = np.random.default_rng(9)
    headings = np.arange(0.0, 360.0, 30.0)
    rows = []
    for state in ("berth", "underway"):
        b = np.asarray(result.state(state).field_t)
        # Exact wiring deviation on compass headings, H sin(delta) = P sin z + Q cos z (Pub. 226).
        wiring = np.degrees(np.arcsin((b[0] * np.sin(np.radians(headings))
                                       - b[1] * np.cos(np.radians(headings))) / h))
        observed = curve_deg(iron, headings) + wiring + rng.normal(0, 0.05, headings.size)
        rows += [[state, f"{c:03.0f}", f"{abs(d):.2f}{'E' if d >= 0 else 'W'}"]
                 for c, d in zip(headings, observed)]
    readings = read_swing(_swing_csv(tmp_path / "swing.csv", rows), plan)
    comparison = swing_comparison(plan, "compass", readings, adjusted_in=None)
    for st in comparison.states:
        # What the plan does not explain is the iron (plus the wiring's own higher harmonics,
        # which the five terms leave in the residual).
        assert st.unexplained_deg == pytest.approx(iron, abs=0.12)
    change = comparison.changes[0]
    assert (change.state, change.base) == ("underway", "berth")
    assert change.unexplained_deg == pytest.approx(np.zeros(5), abs=0.1)
    assert np.abs(change.predicted_deg[1:3]).max() > 1.0          # the wiring's change is real
    pictures = run_cli("swing", loop_plan, tmp_path / "swing.csv", "--sensor", "compass",
                       "--not-adjusted", "--plot", tmp_path / "swing.png", "--report",
                       tmp_path / "swing.html")
    assert pictures.exit_code == 0, pictures.output
    assert (tmp_path / "swing.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "<svg" in (tmp_path / "swing.html").read_text()          # the curves, as vectors
    assert run_cli("swing", loop_plan, tmp_path / "swing.csv", "--sensor", "compass", "--report",
                   tmp_path / "swing.xlsx").exit_code == 0
    assert openpyxl.load_workbook(tmp_path / "swing.xlsx").sheetnames[:2] == [
        "swing fit", "change between states"]
    out = run_cli("swing", loop_plan, tmp_path / "swing.csv", "--sensor", "compass",
                  "--not-adjusted", "--json")
    assert out.exit_code == 0, out.output
    data = json.loads(out.output)
    assert data["states"][0]["unexplained_deg"]["B"] == pytest.approx(iron[1], abs=0.12)


def test_swing_readings_with_magnetic_headings_and_bad_cells(loop_plan, tmp_path):
    plan = read_plan(loop_plan)
    path = tmp_path / "swing.csv"
    path.write_text("state,compass,magnetic,deviation\n"
                    "berth,000,002,2E\n"            # agrees: 0 + 2 = 2
                    "berth,045,050,3W\n"            # compass + deviation is 42, not 50
                    "dock,090,093,\n"               # no such state
                    "berth,north,,1E\n")            # not a heading
    with pytest.raises(ReadingsError) as caught:
        read_swing(path, plan)
    assert [(f.row, f.column) for f in caught.value.findings] == [
        (3, "deviation"), (4, "state"), (5, "compass")]
    assert "off by +8.00°" in str(caught.value.findings[0])
    few = tmp_path / "few.csv"
    few.write_text("state,compass,deviation\n" + "".join(f"berth,{c},1E\n" for c in (0, 90, 180)))
    with pytest.raises(ReadingsError, match="3 distinct compass headings; at least 5"):
        read_swing(few, plan)


# Which state to swing in -------------------------------------------------------------------------

def test_swinging_in_the_middle_state_keeps_the_smallest_residual(plan_dir):
    # One run at 0, 5 and 10 A: adjusted at 5 A, the others keep a 5 A residual either way;
    # adjusted at 0 or 10 A, the other end keeps 10 A. Long wire: B = mu0 I/(2 pi d) (textbook).
    sheets = straight_wire_plan(budget=20.0, states=[["circuit", "off", "half", "full"],
                                                     ["feed", 0, 5, 10]])
    choices = reference_choices(read_plan(plan_dir(sheets)))["compass"]
    assert [c.reference_state for c in choices] == ["half", "full", "off"]
    b5 = MU0 * 5 / (2 * math.pi * 0.5)
    assert choices[0].level_worst_deg == pytest.approx(math.degrees(math.asin(b5 / 20e-6)),
                                                       rel=1e-4)
    assert choices[1].level_worst_deg == pytest.approx(
        math.degrees(math.asin(2 * b5 / 20e-6)), rel=1e-4)
    assert choices[0].within_budget


def test_swing_state_cli_on_the_sample_exits_1_over_budget():
    result = run_cli("swing-state", SAMPLES / "cruising_sailboat", "--json")
    assert result.exit_code == 1
    data = json.loads(result.output)
    helm = data["sensors"][0]["choices"][0]
    assert helm["reference_state"] == "harbour" and helm["in_plan"]
    # The plan's reference state gives exactly what check holds (regression figure, test_cli).
    check = json.loads(run_cli("check", SAMPLES / "cruising_sailboat", "--json").output)
    held = max(s["held"] for s in check["sensors"][0]["states"] if s["used"])
    assert helm["worst_held"] == pytest.approx(held, abs=1e-4)


# Gauss's helper ----------------------------------------------------------------------------------

def test_deflection_row_reads_back_as_the_moment(plan_dir):
    # Gauss end-on: m = 2 pi r^3 H tan(delta)/mu0 (Britannica 11th ed., "Magnetism, Terrestrial").
    row = deflection_item("speaker", "0.3, 0.2, -0.1", 3.0, 0.5, 20e-6)
    expected = 2 * math.pi * 0.5 ** 3 * 20e-6 * math.tan(math.radians(3.0)) / MU0
    assert row["moment_am2"] == pytest.approx(expected, rel=2e-3)
    sheets = straight_wire_plan(current=0)
    sheets["equipment"] = [list(row), list(row.values())]
    item = read_plan(plan_dir(sheets)).equipment[0]
    assert item.moment_am2 == row["moment_am2"] and item.axis is None
    result = run_cli("deflection", "--angle", 3, "--distance", "50cm", "--position", "end-on",
                     "--field-ut", 20, "--item", "speaker", "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.output)["moment_am2"] == pytest.approx(expected, rel=1e-5)
    assert run_cli("deflection", "--angle", 3, "--distance", "50cm", "--position",
                   "end-on").exit_code == 2


# Refits ------------------------------------------------------------------------------------------

def test_refit_names_an_added_run_and_advises_a_swing(plan_dir):
    states = [["circuit", "off", "on"], ["feed", 0, 10]]
    old = read_plan(plan_dir(straight_wire_plan(reference="off", states=states), name="old"))
    extra = [["second feed", "feed", "-50, 0.3, -0.5 > 50, 0.3, -0.5", "none", "", "", "", ""]]
    new = read_plan(plan_dir(straight_wire_plan(reference="off", states=states,
                                                extra_runs=extra), name="new"))
    result = refit(old, new)
    on = next(s for s in result.states if s.state == "on")
    added = on.differences[0]
    assert (added.kind, added.name, added.how) == ("run", "second feed", ("added",))
    # Card change, brute force over headings every 0.05 degree with the atan2 deviation written
    # out here: the compass keeps the correctors set for "off" (no field), so it showed
    # delta(b1) and now delta(b1 + b2). Long wires: mu0 I/(2 pi r) (textbook).
    b1 = MU0 * 10 / (2 * math.pi * 0.5) * np.array([0.0, -1.0, 0.0])
    r2 = math.hypot(0.3, 0.5)
    b2 = MU0 * 10 / (2 * math.pi * r2) * np.cross([1.0, 0, 0], [0, -0.3, 0.5]) / r2
    curve = [deviation(b1 + b2, p) - deviation(b1, p) for p in np.arange(0.0, 360.0, 0.05)]
    assert on.card_change_deg == pytest.approx(max(abs(c) for c in curve), rel=2e-3)
    assert on.swing_advised and result.swing_advised
    off = next(s for s in result.states if s.state == "off")
    assert off.card_change_deg == pytest.approx(0.0, abs=1e-9) and not off.swing_advised
    assert not refit(old, new, threshold_deg=on.card_change_deg + 0.1).swing_advised


def test_refit_card_change_keeps_the_correctors_set_for_the_old_plan(plan_dir):
    # Adjusted at 4 A, the correctors cancel b1(4 A). The added run is on at 4 A too, so after
    # the refit the compass shows delta(b1(I) + b2(I) - b1(4 A)) where it showed
    # delta(b1(I) - b1(4 A)); in "low" itself the change is delta(b2(4 A)) (brute force over
    # headings with the atan2 deviation written out here; long wires mu0 I/(2 pi r), textbook).
    states = [["circuit", "low", "on"], ["feed", 4, 10]]
    old = read_plan(plan_dir(straight_wire_plan(reference="low", states=states), name="old"))
    extra = [["second feed", "feed", "-50, 0.3, -0.5 > 50, 0.3, -0.5", "none", "", "", "", ""]]
    new = read_plan(plan_dir(straight_wire_plan(reference="low", states=states,
                                                extra_runs=extra), name="new"))
    r2 = math.hypot(0.3, 0.5)

    def b1(amps):
        return MU0 * amps / (2 * math.pi * 0.5) * np.array([0.0, -1.0, 0.0])

    def b2(amps):
        return MU0 * amps / (2 * math.pi * r2) * np.cross([1.0, 0, 0], [0, -0.3, 0.5]) / r2

    psi = np.arange(0.0, 360.0, 0.05)
    result = {s.state: s for s in refit(old, new).states}
    for state, amps in (("low", 4), ("on", 10)):
        seen_old = b1(amps) - b1(4)
        seen_new = seen_old + b2(amps)
        worst = max(abs(deviation(seen_new, p) - deviation(seen_old, p)) for p in psi)
        assert result[state].card_change_deg == pytest.approx(worst, rel=1e-3)
    assert result["low"].card_change_deg > 1.0


def test_refit_tells_moved_runs_and_changed_currents(plan_dir):
    old = read_plan(plan_dir(straight_wire_plan(), name="old"))
    sheets = straight_wire_plan(current=12.0, depth_m=0.6)
    new = read_plan(plan_dir(sheets, name="new"))
    difference = refit(old, new).states[0].differences[0]
    assert difference.how == ("moved", "current changed")
    # 10 A at 0.5 m became 12 A at 0.6 m: the same 4 uT, so no change (textbook long wire).
    assert difference.size_deg == pytest.approx(0.0, abs=1e-3)


def test_refit_cli_exit_status(plan_dir):
    states = [["circuit", "off", "on"], ["feed", 0, 10]]
    old = plan_dir(straight_wire_plan(reference="off", states=states), name="old")
    extra = [["second feed", "feed", "-50, 0.3, -0.5 > 50, 0.3, -0.5", "none", "", "", "", ""]]
    new = plan_dir(straight_wire_plan(reference="off", states=states, extra_runs=extra),
                   name="new")
    assert run_cli("refit", old, old).exit_code == 0
    advised = run_cli("refit", old, new, "--width", 160)
    assert advised.exit_code == 1
    assert "second feed (added)" in advised.output and "A new swing is advised." in advised.output


def test_after_installation_doc_names_every_new_command():
    text = (ROOT / "docs" / "after-installation.md").read_text()
    for command in ("test-sheet", "test-results", "swing", "swing-state", "deflection", "refit"):
        assert f"deviation {command}" in text
