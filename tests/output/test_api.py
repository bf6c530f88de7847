"""The library as a notebook user meets it: read, check, tables, what-ifs; layers kept apart."""

import dataclasses
import json
import math
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

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


def test_json_and_terminal_show_the_same_figures():
    from deviation.cli import main

    runner = CliRunner()
    sample = str(SAMPLES / "cruising_sailboat")
    data = json.loads(runner.invoke(main, ["check", sample, "--json"]).output)
    text = runner.invoke(main, ["check", sample, "--width", "200"]).output
    for sensor in data["sensors"]:
        for state in sensor["states"]:
            figure = f"{state['held']:.2f}°"
            assert f"{state['state']}: {figure} of {sensor['budget']['value']:g}°" in text
            for total in state["totals"]:
                if total["deg"] is not None and total["deg"] < 180:
                    assert f"{total['figure']}: {total['deg']:.2f}°" in text.replace("\n", " ")
