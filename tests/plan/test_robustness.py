"""Bad input, hostile files and numerical edge cases: one clear finding or a finite figure."""

import datetime as dt
import json
import math
import re
import time
import zipfile

import numpy as np
import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import SAMPLES, straight_wire_plan, write_plan
from conftest import run_cli as run
from deviation.analysis import analyse
from deviation.plan import PlanError
from deviation.reader import read_plan
from deviation.template import write_plan as write_plan_xlsx
from deviation.template import write_template


def one_finding(path):
    started = time.perf_counter()
    result = run("check", path)
    assert time.perf_counter() - started < 10
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    lines = result.output.strip().splitlines()
    return lines[:-1]


def template(tmp_path, name="plan.xlsx"):
    """The blank template filled in as its worked example: the examples' "e.g. " marks removed
    and the site's latitude and longitude given, so it reads as a valid plan."""
    path = tmp_path / name
    write_template(path)
    book = openpyxl.load_workbook(path)
    for sheet in book.worksheets:
        for cell in sheet["A"][1:]:
            if isinstance(cell.value, str) and cell.value.startswith("e.g. "):
                cell.value = cell.value[len("e.g. "):]
    book["site"]["B3"], book["site"]["B4"] = 50.8, -1.3
    book.save(path)
    return path


def rewrite_member(path, member, change):
    """Rewrite one member of a zip (an .xlsx) through ``change(text) -> text``."""
    with zipfile.ZipFile(path) as archive:
        contents = {i.filename: archive.read(i.filename) for i in archive.infolist()}
    contents[member] = change(contents[member].decode("utf-8")).encode("utf-8")
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, data in contents.items():
            archive.writestr(name, data)


def sheet_member(path, title):
    book = openpyxl.load_workbook(path)
    return f"xl/worksheets/sheet{book.sheetnames.index(title) + 1}.xml"


# Hostile files -----------------------------------------------------------------------------------

def test_xml_entity_expansion_is_refused(tmp_path):
    path = template(tmp_path)
    bomb = ('<?xml version="1.0" encoding="UTF-8"?><!DOCTYPE x [<!ENTITY a "aaaaaaaaaa">'
            + "".join(f'<!ENTITY {chr(98 + i)} "{("&" + chr(97 + i) + ";") * 10}">'
                      for i in range(8)) + "]>")
    rewrite_member(path, sheet_member(path, "runs"),
                   lambda text: bomb + re.sub(r"^<\?xml[^>]*\?>", "", text).replace(
                       "helm instruments", "&i;"))
    [line] = one_finding(path)
    assert line.startswith(f"{path}: cannot be read as an .xlsx workbook (")
    assert "Forbidden" in line                      # defusedxml's refusal


def test_zip_bomb_is_refused_before_reading(tmp_path):
    path = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("xl/worksheets/sheet1.xml", b"0" * 60_000_000)
    [line] = one_finding(path)
    assert "refused as unsafe" in line and "would unpack to 60 MB" in line


def test_a_file_that_is_not_a_workbook(tmp_path):
    path = tmp_path / "plan.xlsx"
    path.write_text("run,route\na,b\n")
    [line] = one_finding(path)
    assert line == (f"{path}: this is not an .xlsx workbook (not a zip archive); save it from the "
                    "spreadsheet as .xlsx, or give a folder of .csv sheets")


def test_wrong_kind_of_file(tmp_path):
    path = tmp_path / "plan.ods"
    path.write_bytes(b"PK\x03\x04")
    [line] = one_finding(path)
    assert "a plan is an .xlsx workbook or a folder of .csv sheets" in line


def test_empty_sheet(plan_dir):
    sheets = straight_wire_plan()
    sheets["runs"] = []
    path = plan_dir(sheets)
    assert one_finding(path) == [f"{path}: runs: the sheet is empty; it needs a header row"]


def test_merged_cells(tmp_path):
    path = template(tmp_path)
    book = openpyxl.load_workbook(path)
    book["runs"].merge_cells("A2:B2")
    book.save(path)
    lines = one_finding(path)
    assert f"{path}: runs row 2, run: merged cells (A2:B2) are not allowed in a plan; unmerge " \
           "them and fill each cell" in lines


def test_formula_without_a_saved_result(tmp_path):
    path = template(tmp_path)
    book = openpyxl.load_workbook(path)
    book["states"]["B2"] = "=1+1"
    book.save(path)
    assert one_finding(path) == [
        f"{path}: states row 2, harbour: cell B2 holds a formula (=1+1) with no saved result; "
        "open and save the workbook in the spreadsheet, or type the value"]


def test_formula_with_a_saved_result_uses_it(tmp_path):
    path = template(tmp_path)
    book = openpyxl.load_workbook(path)
    book["states"]["B2"] = "=1+1"
    book.save(path)
    rewrite_member(path, sheet_member(path, "states"),
                   lambda text: re.sub(r'(<c r="B2"[^>]*>)<f>1\+1</f><v\s*/?>(</v>)?',
                                       r"\1<f>1+1</f><v>2.5</v>", text))
    plan = read_plan(path)
    assert plan.run_currents_a[0, 0] == 2.5


def test_a_date_where_a_number_belongs(tmp_path):
    path = template(tmp_path)
    book = openpyxl.load_workbook(path)
    book["states"]["B2"] = dt.date(2027, 1, 5)
    book.save(path)
    assert one_finding(path) == [f"{path}: states row 2, harbour: the spreadsheet turned this cell "
                                 "into a date (2027-01-05); format the cell as text (or as a "
                                 "number) and type the value again"]


def test_huge_sheet_is_refused_quickly(plan_dir):
    sheets = straight_wire_plan()
    sheets["runs"] += [[f"r{i}", "feed", "0,1,0 > 1,1,0", "none"] for i in range(25_000)]
    path = plan_dir(sheets)
    assert one_finding(path) == [f"{path}: runs: 25001 rows is more than the 20000 a sheet may "
                                 "have; split the plan or delete the empty formatted rows"]


def test_absurd_twisted_run_is_refused_not_computed(plan_dir):
    sheets = straight_wire_plan(kind="twisted")
    sheets["runs"][1][2] = "0, 1, 0 > 9000, 1, 0"
    sheets["runs"][1][5], sheets["runs"][1][6] = "5 mm", "1 mm"
    path = plan_dir(sheets)
    assert one_finding(path) == [
        f"{path}: runs row 2, lay: a twisted run of 9000.0 m with a 1.0 mm lay needs "
        "216,000,006 segments, more than the 2,000,000 a run may have; check the lay and the route"]


def test_defusedxml_guards_openpyxl():
    import openpyxl.xml

    assert openpyxl.xml.DEFUSEDXML is True


# Fuzzing the reader ------------------------------------------------------------------------------

# NUL never occurs in a text file a spreadsheet writes (and Python 3.10's csv cannot write it).
cells = st.one_of(st.none(), st.text(st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"),
                                          max_size=12),
                  st.integers(-10**6, 10**6),
                  st.floats(allow_nan=True, allow_infinity=True),
                  st.sampled_from(["paired", "twisted", "separate", "none", "10 AWG", "1 m",
                                   "0, 0, 0", "a > b", "magnetic compass", "on", "feed", "2'6\"",
                                   "=1+1", "-", ">", ";", ",", "1e400"]))


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                                 HealthCheck.too_slow])
@given(st.dictionaries(st.sampled_from(["runs", "states", "sensors", "points", "equipment",
                                        "site", "spots"]),
                       st.lists(st.lists(cells, max_size=6), max_size=5), max_size=7),
       st.booleans())
def test_random_sheets_give_findings_or_a_plan_never_anything_else(tmp_path_factory, sheets, base):
    if base:                                        # mutate a valid plan rather than start empty
        plan = straight_wire_plan()
        plan.update({k: straight_wire_plan()[k][:1] + v for k, v in sheets.items()
                     if k in plan})
        sheets = plan
    folder = write_plan(tmp_path_factory.mktemp("fuzz"), sheets)
    try:
        plan = read_plan(folder)
    except PlanError as error:
        assert error.findings and all(str(f) for f in error.findings)
        return
    analysis = analyse(plan)                         # a plan that reads also computes
    for result in analysis.sensors:
        for state in result.states:
            assert math.isfinite(state.held)


plan_values = st.floats(-5, 5, allow_nan=False).map(lambda v: round(v, 3))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.tuples(plan_values, plan_values, plan_values, plan_values,
                          st.sampled_from(["paired", "twisted", "separate", "none"]),
                          st.floats(-50, 50, allow_nan=False).map(lambda v: round(v, 4))),
                min_size=1, max_size=4),
       st.floats(0.5, 5).map(lambda v: round(v, 4)), st.integers(0, 30))
def test_a_valid_plan_round_trips_through_the_writer_and_reader(tmp_path_factory, runs, budget,
                                                                heel):
    rows = [["run", "circuits", "route", "return", "return_route", "spacing", "lay", "size"]]
    states = [["circuit", "on", "off"]]
    for i, (x0, y0, x1, y1, kind, current) in enumerate(runs):
        route = f"{x0}, {y0}, -1 > {x1 + 6}, {y1}, -1.5"
        back = f"{x1 + 6}, {y1}, -2 > {x0}, {y0}, -2" if kind == "separate" else ""
        rows.append([f"run {i}", f"c{i}", route, kind, back, "6 mm", "30 mm", "12 AWG"])
        states.append([f"c{i}", current, 0])
    sheets = {"site": [["setting", "value"], ["latitude", 40], ["longitude", 10],
                       ["date", "2027-03-01"]],
              "runs": rows, "states": states,
              "sensors": [["sensor", "at", "kind", "budget_deg", "reference_state",
                           "max_heel_deg"], ["s", "0, 0, 3", "magnetic compass", budget, "off",
                                             heel]]}
    folder = write_plan(tmp_path_factory.mktemp("rt"), sheets)
    original = read_plan(folder)
    xlsx = folder / "copy.xlsx"
    write_plan_xlsx(original, xlsx)
    again = read_plan(xlsx)
    assert [r.name for r in again.runs] == [r.name for r in original.runs]
    for a, b in zip(original.runs, again.runs):
        assert a.geometry.return_kind == b.geometry.return_kind
        np.testing.assert_array_equal(a.geometry.route_m, b.geometry.route_m)
        assert a.geometry.spacing_m == b.geometry.spacing_m and a.geometry.lay_m == b.geometry.lay_m
    np.testing.assert_array_equal(original.run_currents_a, again.run_currents_a)
    assert original.state_names == again.state_names
    assert original.sensors[0].budget == again.sensors[0].budget
    np.testing.assert_array_equal(original.sensors[0].position_m, again.sensors[0].position_m)
    assert original.site.decimal_year == again.site.decimal_year


def test_sample_plans_round_trip_to_the_same_budget(tmp_path):
    for name in ("cruising_sailboat", "camper_van", "survey_drone"):
        original = analyse(read_plan(SAMPLES / name))
        path = tmp_path / f"{name}.xlsx"
        write_plan_xlsx(read_plan(SAMPLES / name), path)
        again = analyse(read_plan(path))
        for a, b in zip(original.sensors, again.sensors):
            for sa, sb in zip(a.states, b.states):
                assert sa.held == pytest.approx(sb.held, rel=1e-12, abs=1e-12)


# Numerical edge cases ----------------------------------------------------------------------------

def no_nan(result):
    assert "nan" not in result.output.lower()


def check_json(path):
    result = run("check", path, "--json")
    data = json.loads(result.output, parse_constant=lambda c: pytest.fail(f"{c} in JSON"))
    return result.exit_code, data


def test_sensor_on_a_waypoint_is_a_finding(plan_dir):
    sheets = straight_wire_plan()
    sheets["runs"][1][2] = "-1, 0, -1 > 0, 0, 0 > 1, 0, -1"
    path = plan_dir(sheets)
    [line] = one_finding(path)
    assert 'sensor "compass" lies inside run "long feed"' in line


def test_route_straight_through_the_sensor_is_a_finding(plan_dir):
    sheets = straight_wire_plan()
    sheets["runs"][1][2] = "-1, 0, 0 > 1, 0, 0"
    [line] = one_finding(plan_dir(sheets))
    assert "lies inside run" in line


def test_coincident_waypoints_and_a_route_aimed_at_the_sensor(plan_dir):
    sheets = straight_wire_plan()
    # Repeated waypoints, and a last stretch pointing straight at the sensor (its line passes
    # through it beyond the end: zero field from that stretch, not an error).
    sheets["runs"][1][2] = "-3, 0, -1 > -3, 0, -1 > 0, 0, -1 > 0, 0, -1 > 0, 0, -0.5"
    code, data = check_json(plan_dir(sheets))
    assert code in (0, 1)
    assert all(math.isfinite(v) for v in data["sensors"][0]["states"][0]["field_ut"])


def test_very_long_run_and_tiny_spacing_give_finite_small_figures(plan_dir):
    sheets = straight_wire_plan(kind="paired")
    sheets["runs"][1][2] = "-5000, 0, -0.5 > 5000, 0, -0.5"
    sheets["runs"][1][5] = "0.001 mm"
    code, data = check_json(plan_dir(sheets))
    assert code == 0
    # Two-wire line, 10 A, s = 1 um, d = 0.5 m: 0.2 uT * 10 * 1e-6 / 0.25 = 8e-6 uT (Griffiths
    # ch. 5, superposition). The pair's lie is not given, so the run counts its worst lie: the
    # field turned horizontal, within the octagon's 1/cos(pi/8) above it.
    import deviation

    run = deviation.check(deviation.read_plan(plan_dir(sheets))).sensors[0].states[0].runs[0]
    size = 20e-6 * math.sin(math.radians(run.max_deviation_deg))
    assert 8e-12 * (1 - 1e-3) <= size <= 8e-12 / math.cos(math.pi / 8)


def test_zero_current_and_thousands_of_amperes(plan_dir):
    code, data = check_json(plan_dir(straight_wire_plan(current=0), name="zero"))
    assert code == 0 and data["sensors"][0]["states"][0]["held"] == 0
    path = plan_dir(straight_wire_plan(current=5000, depth_m=0.1), name="huge")
    code, data = check_json(path)
    state = data["sensors"][0]["states"][0]
    assert code == 1 and state["overwhelmed"] is True and state["held"] == 180
    text = run("check", path)
    no_nan(text)
    assert "overwhelmed" in text.output and "can point anywhere" in text.output


def test_horizontal_field_near_zero(plan_dir):
    sheets = straight_wire_plan(h_ut=0.001, current=0.01, depth_m=1.0)
    path = plan_dir(sheets)
    code, data = check_json(path)
    assert data["site"]["zone"] == "blackout"
    text = run("check", path)
    no_nan(text)
    assert "blackout zone" in text.output


def test_polar_site_from_the_model(plan_dir):
    sheets = straight_wire_plan(current=1.0)
    sheets["site"] = [["setting", "value"], ["latitude", 86.0], ["longitude", 150.0],
                      ["date", "2026-06-01"]]
    result = run("check", plan_dir(sheets))
    no_nan(result)
    assert "blackout zone" in result.output
