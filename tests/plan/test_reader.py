"""Reading plans: the sample plans load; every bad plan gets one finding naming where."""

import hashlib
from dataclasses import replace

import numpy as np
import pytest

from conftest import SAMPLES, run_cli, straight_wire_plan
from deviation.analysis import analyse
from deviation.errors import Problem
from deviation.plan import PlanError
from deviation.reader import read_plan


def findings_of(path):
    with pytest.raises(PlanError) as caught:
        read_plan(path)
    return [str(f) for f in caught.value.findings]


@pytest.mark.parametrize("name", ["cruising_sailboat", "camper_van", "survey_drone"])
def test_sample_plans_load(name):
    plan = read_plan(SAMPLES / name)
    assert plan.runs and plan.sensors and plan.state_names


def test_sailboat_reads_units_sizes_and_states():
    plan = read_plan(SAMPLES / "cruising_sailboat")
    windlass = next(r for r in plan.runs if r.name == "windlass feed")
    # 2/0 AWG: default spacing one insulated diameter, 13.5 mm (from memory).
    assert windlass.geometry.spacing_m == pytest.approx(0.0135)
    stern = next(r for r in plan.runs if r.name == "stern light")
    assert stern.geometry.lay_m == pytest.approx(0.025)            # "25 mm"
    assert plan.state_names == ("harbour", "night motoring", "anchoring")
    k = plan.state_names.index("anchoring")
    circuit = next(c for c in plan.circuits if c.name == "windlass")
    assert circuit.currents_a[k] == 85 and circuit.independent      # the sample's states.csv
    assert not circuit.reversing
    # Switching on its own, the windlass is no part of any state's own currents.
    assert plan.run_currents_a[plan.runs.index(windlass), k] == 0
    sensor = plan.sensor("autopilot sensor")
    assert sensor.used_in == ("night motoring",) and sensor.max_pitch_deg == 5


def test_imperial_plan_reads_feet_and_inch_spacing():
    plan = read_plan(SAMPLES / "camper_van")
    fan = next(r for r in plan.runs if r.name == "roof fan")
    assert fan.geometry.lay_m == pytest.approx(0.0254)             # "1 in"
    assert plan.sensors[0].position_m == pytest.approx([17.0 * 0.3048, 0.6 * 0.3048, 4.2 * 0.3048])


def good():
    return straight_wire_plan()


def test_text_in_a_current_cell(plan_dir):
    sheets = good()
    sheets["states"] = [["circuit", "on"], ["feed", "twelve"]]
    path = plan_dir(sheets)
    assert findings_of(path) == [f'{path}: states row 2, on: "twelve" is not a current in amperes']


def test_runs_without_states_need_numeric_current_a(plan_dir):
    sheets = good()
    del sheets["states"]
    sheets["runs"] = [["run", "route", "return", "current_a"],
                      ["a", "0,0,-1 > 1,0,-1", "none", "10"],
                      ["b", "0,0,-1 > 1,0,-1", "none", "twelve"]]
    path = plan_dir(sheets)
    assert findings_of(path) == [f'{path}: runs row 3, current_a: "twelve" is not a number of amperes']


def test_misspelt_circuit_gets_a_did_you_mean(plan_dir):
    sheets = good()
    sheets["states"] = [["circuit", "on"], ["bilge pump", 3]]
    sheets["runs"][1][1] = "bilge pmp"
    path = plan_dir(sheets)
    assert findings_of(path) == [f'{path}: runs row 2, circuits: circuit "bilge pmp" is not in the '
                                 'states sheet; did you mean "bilge pump"?',
                                 f'{path}: states row 2, circuit: circuit "bilge pump" is used by '
                                 'no run; did you mean "bilge pmp"?']


def test_misspelt_point_and_return_kind(plan_dir):
    sheets = good()
    sheets["points"] = [["point", "x", "y", "z"], ["battery", 0, 0, -1], ["helm", 1, 0, -1]]
    sheets["runs"][1][2] = "batery > helm"
    sheets["runs"][1][3] = "pairde"
    path = plan_dir(sheets)
    assert findings_of(path) == [
        f'{path}: runs row 2, route: "batery" is neither a point in the points sheet nor x, y, z; '
        'did you mean "battery"?',
        f'{path}: runs row 2, return: "pairde" is not a return kind; expected one of paired, '
        'twisted, separate, none; did you mean "paired"?']


def test_all_findings_are_reported_at_once(plan_dir):
    sheets = good()
    sheets["sensors"] = [["sensor", "at", "kind", "budget_deg", "reference_state"],
                         ["a", "nowhere", "magnetic compas", "-1", "harbur"]]
    path = plan_dir(sheets)
    found = findings_of(path)
    assert len(found) == 4
    assert all(f.startswith(f"{path}: sensors row 2, ") for f in found)
    assert any('did you mean "magnetic compass"' in f for f in found)


def test_missing_sheet_and_missing_column(plan_dir):
    sheets = good()
    del sheets["sensors"]
    sheets["runs"] = [["run", "circuits", "rout", "return"], ["a", "feed", "0,0,0 > 1,0,0", "none"]]
    path = plan_dir(sheets)
    assert findings_of(path) == [
        f'{path}: sensors: the sheet is missing',
        f'{path}: runs, route: the required column is missing; is "rout" meant to be it?']


def test_sensor_inside_a_conductor_names_sensor_and_run(plan_dir):
    sheets = good()
    sheets["runs"][1][2] = "-1, 0.002, 0 > 1, 0.002, 0"
    sheets["runs"][1][4] = "10 AWG"           # insulated diameter 4.3 mm -> radius 2.15 mm
    path = plan_dir(sheets)
    plan = read_plan(path)                    # reading does not route: the analysis finds it
    with pytest.raises(PlanError) as caught:
        analyse(plan)
    [finding] = caught.value.findings
    assert str(finding) == (
        f'{path}: sensors row 2, at: sensor "compass" lies inside run "long feed" (2.0 mm from a '
        "conductor's axis, radius 2.1 mm); move the sensor or the run")
    assert (finding.sheet, finding.row, finding.column, finding.kind) == (
        "sensors", 2, "at", Problem.INCONSISTENT)
    result = run_cli("check", path)
    assert result.exit_code == 2 and "Traceback" not in result.output
    assert 'sensor "compass" lies inside run "long feed"' in result.output


def test_a_what_if_that_moves_a_sensor_into_a_run_is_a_finding(plan_dir):
    # A plan changed in Python after reading is checked where it is analysed, not only on reading.
    plan = read_plan(plan_dir(good()))
    sensor = replace(plan.sensors[0], position_m=plan.runs[0].geometry.route_m[0])
    with pytest.raises(PlanError, match="lies inside run"):
        analyse(replace(plan, sensors=(sensor,)))


def test_paired_run_needs_spacing_or_size(plan_dir):
    sheets = good()
    sheets["runs"][1][3] = "paired"
    path = plan_dir(sheets)
    assert findings_of(path) == [f"{path}: runs row 2, spacing: a paired run needs a spacing or a "
                                 "size (e.g. 10 AWG) to place its return"]


def test_site_needs_a_place_or_a_field(plan_dir):
    sheets = good()
    sheets["site"] = [["setting", "value"], ["units", "m"]]
    path = plan_dir(sheets)
    assert findings_of(path) == [f"{path}: site: give latitude and longitude (for the WMM2025 "
                                 "field) or horizontal_field_ut (measured)"]


def test_date_outside_the_model_is_a_finding(plan_dir):
    sheets = good()
    sheets["site"] = [["setting", "value"], ["latitude", 50], ["longitude", 0], ["date", "2031-01-01"]]
    path = plan_dir(sheets)
    assert findings_of(path) == [f"{path}: site row 4, value: the date 2031-01-01 is after the span "
                                 "WMM-2025 is valid for (from 2025-01-01 up to 2030-01-01); give "
                                 "the site's field from a measurement (horizontal_field_ut) or a "
                                 "current model instead"]


@pytest.mark.parametrize("date, when", [("2024-12-31", "before"), ("2024.999", "before"),
                                        ("2030.001", "after")])
def test_a_date_just_outside_the_model_is_refused_without_contradiction(plan_dir, date, when):
    # 2024-12-31 is decimal year 2024.997; shown to two decimals it read "2025.00 is outside
    # 2025.0-2030.0". The message gives the date as written.
    sheets = good()
    sheets["site"] = [["setting", "value"], ["latitude", 50], ["longitude", 0], ["date", date]]
    path = plan_dir(sheets)
    [line] = findings_of(path)
    assert f"the date {date} is {when} the span WMM-2025 is valid for" in line
    assert "2025.00" not in line


@pytest.mark.parametrize("date", ["2025-01-01", "2029-12-31", "2030-01-01", "2025.0"])
def test_the_edges_of_the_model_are_inside(plan_dir, date):
    sheets = good()
    sheets["site"] = [["setting", "value"], ["latitude", 50], ["longitude", 0], ["date", date]]
    read_plan(plan_dir(sheets))


def test_names_and_columns_are_case_and_space_insensitive(plan_dir):
    sheets = good()
    sheets["runs"][0] = [" Run ", "CIRCUITS", "Route", "return", "size", "spacing", "lay",
                         "Return Route"]
    sheets["runs"][1][1] = " FEED "
    sheets["sensors"][0][3] = "budget deg"
    plan = read_plan(plan_dir(sheets))
    assert plan.run_currents_a[0, 0] == 10


def test_unknown_columns_are_kept_as_notes_not_errors(plan_dir):
    sheets = good()
    sheets["runs"][0].append("installer remarks")
    sheets["runs"][1].append("check with owner")
    assert read_plan(plan_dir(sheets)).runs[0].name == "long feed"


def test_reading_never_modifies_the_input():
    files = sorted((SAMPLES / "cruising_sailboat").iterdir())
    before = [hashlib.sha256(f.read_bytes()).hexdigest() for f in files]
    read_plan(SAMPLES / "cruising_sailboat")
    assert before == [hashlib.sha256(f.read_bytes()).hexdigest() for f in files]


def test_position_cells_accept_units(plan_dir):
    sheets = good()
    sheets["sensors"][1][1] = "10 cm, 0 in, 0.5 ft"
    plan = read_plan(plan_dir(sheets))
    assert np.allclose(plan.sensors[0].position_m, [0.1, 0.0, 0.1524])
