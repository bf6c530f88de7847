"""The library as a notebook user meets it: read, check, tables, what-ifs; layers kept apart."""

import dataclasses
import math
import subprocess
import sys
from pathlib import Path

import pytest

import deviation
from conftest import SAMPLES, straight_wire_plan

PACKAGE = Path(deviation.__file__).parent


def test_notebook_read_check_frame_filter_without_the_cli():
    # In a fresh interpreter: the whole job through the library, and the CLI never imported.
    code = (
        "import sys, deviation\n"
        f"plan = deviation.read_plan({str(SAMPLES / 'cruising_sailboat')!r})\n"
        "result = deviation.check(plan)\n"
        "table = result.to_frame()\n"
        "over = table[table.used & ~table.within_budget]\n"
        "print(sorted(set(over.sensor)), len(result.runs_frame()) > 0,\n"
        "      'deviation.cli' in sys.modules, 'click' in sys.modules)\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["['autopilot", "sensor',", "'helm", "compass']", "True",
                                  "False", "False"]


def test_import_deviation_is_light():
    out = subprocess.run([sys.executable, "-c", "import sys, deviation; "
                          "print('numpy' in sys.modules, 'pandas' in sys.modules)"],
                         capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]


def test_a_what_if_plan_is_routed_afresh(plan_dir):
    # Moving the run 10 m away with dataclasses.replace must give the far figure, not the old
    # routing: a long wire at 0.5 m, 10 A, is asin(4/20) = 11.54 deg; the 100 m segment at 10.5 m
    # gives mu0 I/(4 pi d) * 2 sin(theta), sin(theta) = 50/sqrt(50^2 + 10.5^2), on 20 uT
    # (Griffiths ch. 5, finite segment; NGA Pub. 226).
    plan = deviation.read_plan(plan_dir(straight_wire_plan()))
    near = deviation.check(plan).sensors[0].states[0].held
    run = plan.runs[0]
    moved = run.geometry.route_m + [0.0, 0.0, -10.0]
    what_if = dataclasses.replace(plan, runs=(dataclasses.replace(
        run, geometry=dataclasses.replace(run.geometry, route_m=moved)),))
    far = deviation.check(what_if).sensors[0].states[0].held
    assert near == pytest.approx(11.54, abs=0.005)
    b_ut = 0.1 * 10 / 10.5 * 2 * 50 / math.hypot(50, 10.5)
    assert far == pytest.approx(math.degrees(math.asin(b_ut / 20)), rel=1e-6)
    assert deviation.check(plan).sensors[0].states[0].held == near


def test_the_plan_is_frozen():
    plan = deviation.read_plan(SAMPLES / "camper_van")
    with pytest.raises(dataclasses.FrozenInstanceError):
        plan.runs = ()
    with pytest.raises(ValueError):
        plan.sensors[0].position_m[0] = 1.0          # read-only arrays
    with pytest.raises(ValueError):
        plan.runs[0].geometry.route_m[0, 0] = 1.0


def test_a_what_if_sensor_can_be_ranked_and_an_unknown_one_is_a_clear_error():
    plan = deviation.read_plan(SAMPLES / "cruising_sailboat")
    sensor = dataclasses.replace(plan.sensors[0], position_m=plan.sensors[0].position_m + 0.3)
    search = deviation.rank_spots(plan, sensor, [[1.0, 0.0, 2.0], [2.0, 0.0, 2.0]])
    assert len(search.spots) == 2 and search.current is not None
    with pytest.raises(deviation.UnknownSensorError, match='no sensor "mast" in the plan'):
        deviation.find_spots(plan, "mast", [0, 0, 0], [1, 1, 1])
    assert issubclass(deviation.PlanError, deviation.DeviationError)
    assert issubclass(deviation.UnknownSensorError, deviation.DeviationError)


def test_plan_from_tables_reports_located_findings():
    with pytest.raises(deviation.PlanError) as caught:
        deviation.plan_from_tables({
            "runs": [{"run": "a", "route": "0,0,0 > 1,0,0", "return": "pared", "current_a": 1}],
            "sensors": [{"sensor": "c", "at": "0,1,0", "kind": "magnetic compass",
                         "budget_deg": 1}],
            "site": [{"setting": "horizontal_field_ut", "value": 20}]})
    lines = [str(f) for f in caught.value.findings]
    assert lines == ['<tables>: runs row 2, return: "pared" is not a return kind; expected one of '
                     'paired, twisted, separate, none; did you mean "paired"?']


@pytest.mark.parametrize("name", ["cruising_sailboat", "camper_van", "survey_drone",
                                  "survey_boom"])
def test_to_tables_round_trips_through_plan_from_tables(name):
    plan = deviation.read_plan(SAMPLES / name)
    tables = plan.to_tables()
    assert set(tables) >= {"site", "runs", "sensors"}
    assert list(tables["sensors"].columns[:3]) == ["sensor", "at", "kind"]   # the workbook's
    again = deviation.plan_from_tables(tables, source="tables")
    first, second = deviation.check(plan, remedies=False), deviation.check(again, remedies=False)
    assert [s.sensor.budget for s in first.sensors] == [s.sensor.budget for s in second.sensors]
    assert [st.held for s in first.sensors for st in s.states] == \
        [st.held for s in second.sensors for st in s.states]


def test_a_what_if_that_leaves_a_run_inconsistent_is_a_located_plan_error():
    plan = deviation.read_plan(SAMPLES / "cruising_sailboat")
    run = plan.runs[2]                                   # the instrument feed, a separate return
    broken = dataclasses.replace(run, geometry=dataclasses.replace(
        run.geometry, return_kind="paired", return_route_m=None))
    with pytest.raises(deviation.PlanError) as caught:
        dataclasses.replace(plan, runs=plan.runs[:2] + (broken,) + plan.runs[3:])
    [finding] = caught.value.findings
    assert (finding.sheet, finding.row, finding.column) == ("runs", 4, "spacing")
    assert str(finding).endswith('run "instrument feed": a paired run needs a spacing of more '
                                 "than zero")
    sensor = dataclasses.replace(plan.sensors[0], reference_state="at sea")
    with pytest.raises(deviation.PlanError, match='"at sea" is not a state of the plan'):
        dataclasses.replace(plan, sensors=(sensor,) + plan.sensors[1:])


def test_plans_and_results_show_short_in_a_notebook():
    plan = deviation.read_plan(SAMPLES / "cruising_sailboat")
    assert repr(plan) == ("<Plan 'sample_installs/cruising_sailboat': 8 runs, 7 circuits, "
                          "3 states, 2 sensors, 1 equipment item>").replace(
        "sample_installs/cruising_sailboat", plan.source)
    assert "<table>" in plan._repr_html_() and "helm compass" in plan._repr_html_()
    result = deviation.check(plan, remedies=False)
    text = repr(result)
    assert text.startswith("<CheckResult") and "over budget" in text and len(text) < 300
    assert "helm compass over (1.20° of 1° in night motoring)" in text
    frame = result.verdict_frame()
    assert list(frame["sensor"]) == ["helm compass", "autopilot sensor"]
    assert frame.loc[0, "night motoring"] == result.sensors[0].state("night motoring").held
    assert "<table" in result._repr_html_()


def test_electronic_and_area_results_give_frames():
    plan = deviation.read_plan(SAMPLES / "survey_drone")
    [report] = deviation.electronic_figures(plan)
    states = report.to_frame()
    assert list(states["state"]) == list(plan.state_names)
    assert states["percent_of_total_field"].max() == pytest.approx(
        report.grade.fraction * 100)
    amps = report.per_ampere_frame()
    assert set(amps["circuit"]) == {c.name for c in plan.circuits}
    area = deviation.operating_area(plan).to_frame()
    assert len(area) == 3 and set(area["unit"]) == {"deg"}
    # H is weaker to the north, so a field fixed to the vehicle deviates it more there.
    north = area.loc[area["latitude_deg"].idxmax()]
    south = area.loc[area["latitude_deg"].idxmin()]
    assert north["horizontal_ut"] < south["horizontal_ut"] and north["held"] > south["held"]
