"""Plans as people save them: other separators, decimal commas, notes, other workbook kinds,
spacings and currents that cannot be right, outputs into folders that do not exist."""

import csv
import os
from pathlib import Path

import numpy as np
import pytest

from conftest import SAMPLES, straight_wire_plan, write_plan
from conftest import run_cli as run
from deviation import files
from deviation.analysis import analyse
from deviation.files import OutputError, check_output, write_atomically
from deviation.plan import PlanError
from deviation.reader import read_plan

BROKEN = Path(__file__).resolve().parents[1] / "data" / "broken"


def findings_of(path):
    with pytest.raises(PlanError) as caught:
        read_plan(path)
    return [str(f) for f in caught.value.findings]



def write_raw(folder, sheets):
    """Write {file name: text} as they are (separators and decimal commas by hand)."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in sheets.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def semicolon_plan(route, at="0, 0, 0", spacing="", size="10 AWG", current="10"):
    """A compass above one run, written as a spreadsheet set to a decimal comma saves it."""
    return {
        "site.csv": "setting;value\nhorizontal_field_ut;20\nvertical_field_ut;40\n",
        "runs.csv": f"run;circuits;route;return;size;spacing\nfeed;feed;{route};paired;{size};"
                    f"{spacing}\n",
        "states.csv": f"circuit;on\nfeed;{current}\n",
        "sensors.csv": f"sensor;at;kind;budget_deg\ncompass;{at};magnetic compass;1\n",
    }


# Separators and decimal commas --------------------------------------------------------------------

def test_a_semicolon_plan_with_decimal_commas_reads_to_the_same_figures_as_the_comma_plan():
    # The fixture is the sailboat sample saved with ";" and decimal commas (and a byte-order mark
    # and CRLF line ends, as a spreadsheet writes "CSV UTF-8"); the figures must be identical.
    comma = read_plan(SAMPLES / "cruising_sailboat")
    semicolon = read_plan(BROKEN / "semicolon_decimal_comma")
    assert [r.name for r in semicolon.runs] == [r.name for r in comma.runs]
    for a, b in zip(comma.runs, semicolon.runs):
        np.testing.assert_array_equal(a.geometry.route_m, b.geometry.route_m)
        if a.geometry.return_route_m is not None:
            np.testing.assert_array_equal(a.geometry.return_route_m, b.geometry.return_route_m)
        assert (a.geometry.spacing_m, a.geometry.lay_m) == (b.geometry.spacing_m, b.geometry.lay_m)
    np.testing.assert_array_equal(comma.run_currents_a, semicolon.run_currents_a)
    assert semicolon.run_currents_a[2, 0] == 1.5              # "1,5" A, instruments in harbour
    assert [s.budget.value for s in semicolon.sensors] == [s.budget.value for s in comma.sensors]
    assert semicolon.equipment[0].safe_distance_m == 0.9     # "0,9 m"
    np.testing.assert_array_equal(semicolon.equipment[0].position_m, [1.2, 0.45, 1.55])
    assert (semicolon.site.latitude_deg, semicolon.site.longitude_deg) == (43.29, 9.35)
    first, second = analyse(comma), analyse(semicolon)
    assert [[s.held for s in r.states] for r in second.sensors] == \
        [[s.held for s in r.states] for r in first.sensors]


def test_a_tab_separated_plan_reads_like_the_comma_plan(tmp_path):
    comma = write_plan(tmp_path / "comma", straight_wire_plan())
    tabbed = tmp_path / "tab"
    tabbed.mkdir()
    for file in comma.iterdir():
        rows = list(csv.reader(file.read_text().splitlines()))
        with open(tabbed / file.name, "w", newline="") as f:
            csv.writer(f, delimiter="\t", lineterminator="\n").writerows(rows)
    a, b = read_plan(comma), read_plan(tabbed)
    np.testing.assert_array_equal(a.runs[0].geometry.route_m, b.runs[0].geometry.route_m)
    np.testing.assert_array_equal(a.run_currents_a, b.run_currents_a)


def test_positions_in_a_semicolon_file_follow_the_documented_rule(tmp_path):
    # Commas with a space beside them separate coordinates, those between digits are decimal:
    # "1,2, 0,5, -0,3" is (1.2, 0.5, -0.3); exactly two commas are x,y,z: "4,0,-1" is (4, 0, -1).
    path = write_raw(tmp_path / "p", semicolon_plan("1,2, 0,5, -0,3 > 4,0,-1 > 9, 0, -1",
                                                    at="0,5, 0, 0,25"))
    plan = read_plan(path)
    np.testing.assert_array_equal(plan.runs[0].geometry.route_m,
                                  [[1.2, 0.5, -0.3], [4, 0, -1], [9, 0, -1]])
    np.testing.assert_array_equal(plan.sensors[0].position_m, [0.5, 0, 0.25])


def test_a_position_that_reads_two_ways_in_a_semicolon_file_gets_one_finding(tmp_path):
    path = write_raw(tmp_path / "p", semicolon_plan("1,2,0,5,0,3 > 4, 0, -1"))
    assert findings_of(path) == [
        f'{path}: runs row 2, route: "1,2,0,5,0,3 > 4, 0, -1" cannot be read as x, y, z: in a '
        'file separated by ";" a comma is either a decimal comma or separates coordinates; put a '
        "space after each comma between coordinates (1,2, 0,5, 0,3) or write decimal points "
        "(1.2, 0.5, 0.3)"]


def test_decimal_commas_in_numbers_with_units(tmp_path):
    path = write_raw(tmp_path / "p", semicolon_plan("0, 0, -1 > 9, 0, -1", spacing="1,5 cm",
                                                    size="2,5 mm2", current="2,25"))
    plan = read_plan(path)
    # 1.5 cm = 15 mm; 2.5 mm2 is 3.7 mm across (from memory, units.METRIC_OUTER_DIAMETER_MM).
    assert plan.runs[0].geometry.spacing_m == pytest.approx(0.015, rel=1e-12)
    assert plan.runs[0].size == "2.5 mm2"
    assert plan.runs[0].geometry.radius_m == pytest.approx(0.0037 / 2)
    assert plan.run_currents_a[0, 0] == 2.25


def test_a_decimal_comma_spacing_without_a_unit_is_read_as_mm_and_refused(tmp_path):
    # The mistake that prompted the check: "0,025" (meant as metres) in a metric plan.
    path = write_raw(tmp_path / "p", semicolon_plan("0, 0, -1 > 9, 0, -1", spacing="0,025",
                                                    size="8 AWG"))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "0.025" was read as 0.025 mm (bare numbers in spacing are '
        "mm in a metric plan); two conductors cannot be closer than their own diameter (6.6 mm "
        "for 8 AWG); write it with a unit, e.g. 25 mm"]


def test_notes_and_names_in_a_semicolon_file_keep_their_commas(tmp_path):
    sheets = semicolon_plan("0, 0, -1 > 9, 0, -1")
    sheets["runs.csv"] = sheets["runs.csv"].replace(";spacing\n", ";spacing;note\n").replace(
        "feed;feed;", "1,5;feed;").rstrip("\n") + ";1,5\n"
    sheets["states.csv"] = "circuit;at;note\nfeed;2,5;2,5\n"      # a state named "at"
    plan = read_plan(write_raw(tmp_path / "p", sheets))
    assert (plan.runs[0].name, plan.runs[0].note) == ("1,5", "1,5")
    assert plan.state_names == ("at",) and plan.run_currents_a[0, 0] == 2.5


def test_a_route_of_ten_thousand_waypoints_in_a_csv_is_read(tmp_path):
    # One cell of about 200 kB, beyond the csv module's default limit of 128 KiB (it was refused
    # with advice to save the file again, which could not help).
    sheets = straight_wire_plan()
    route = " > ".join(f"{x / 100:.2f}, 1, -0.5" for x in range(-5000, 5000))
    sheets["runs"][1][2] = route
    plan = read_plan(write_plan(tmp_path / "p", sheets))
    assert len(plan.runs[0].geometry.route_m) == 10_000


def test_a_comma_file_keeps_commas_in_numbers_as_an_error(tmp_path):
    # Only a ";" file has decimal commas; in a comma file "1,5" (quoted) is not a number.
    sheets = straight_wire_plan()
    sheets["states"] = [["circuit", "on"], ["feed", "1,5"]]
    path = write_plan(tmp_path / "p", sheets)
    assert findings_of(path) == [f'{path}: states row 2, on: "1,5" is not a current in amperes']


def test_a_header_of_one_column_says_which_separator_the_file_seems_to_use():
    path = BROKEN / "pipe_separated"
    assert findings_of(path) == [
        f'{path}: runs row 1: the header of runs.csv reads as one column '
        '"run|circuits|route|return|size"; the file seems to use "|" as separator; save it with '
        "commas, semicolons or tabs between cells"]


def test_a_header_quoted_as_one_cell_is_told_apart(tmp_path):
    sheets = straight_wire_plan()
    path = write_plan(tmp_path / "p", sheets)
    (path / "runs.csv").write_text('"run;route;return"\n"a;0,0,0 > 1,0,0;none"\n')
    assert findings_of(path) == [
        f'{path}: runs row 1: the header of runs.csv reads as one column "run;route;return"; the '
        'file seems to use ";" as separator, but the whole header is one quoted cell; save the '
        "sheet again from the spreadsheet as CSV"]


# Notes beside the states -------------------------------------------------------------------------

def test_notes_and_comments_columns_are_not_operating_states():
    # states.csv: circuit, harbour, Notes, at sea, COMMENTS, Comment; the notes hold text.
    plan = read_plan(BROKEN / "notes_columns")
    assert plan.state_names == ("harbour", "at sea")
    np.testing.assert_array_equal(plan.run_currents_a, [[10, 12], [0, 2.5]])


# Other kinds of workbook -------------------------------------------------------------------------

def test_an_ods_workbook_is_asked_to_be_saved_as_xlsx_or_csv():
    path = BROKEN / "plan.ods"
    assert findings_of(path) == [
        f"{path}: a plan is an .xlsx workbook or a folder of .csv sheets, not an .ods file; save it "
        "as .xlsx (Excel workbook) or as CSV sheets"]


@pytest.mark.parametrize("name", ["plan.xls", "plan.numbers", "Plan.ODS"])
def test_other_spreadsheet_files_are_asked_to_be_saved_as_xlsx_or_csv(tmp_path, name):
    path = tmp_path / name
    if name.endswith(".numbers"):
        path.mkdir()                                # older Numbers documents are folders
    else:
        path.write_bytes(b"\xd0\xcf\x11\xe0")       # the start of an old binary workbook
    suffix = Path(name).suffix
    assert findings_of(path) == [
        f"{path}: a plan is an .xlsx workbook or a folder of .csv sheets, not an {suffix} file; "
        "save it as .xlsx (Excel workbook) or as CSV sheets"]


# Spacings closer than the conductors, currents beyond the size -----------------------------------

def paired(spacing, size, units=None, current=10.0):
    sheets = straight_wire_plan(kind="paired", current=current)
    sheets["runs"][1][4], sheets["runs"][1][5] = size, spacing
    if units:
        sheets["site"].append(["units", units])
    return sheets


def test_a_bare_spacing_closer_than_the_conductor_says_how_it_was_read(plan_dir):
    # 8 AWG boat cable is 6.6 mm across (from memory, units.AWG_OUTER_DIAMETER_MM).
    path = plan_dir(paired("0.025", "8 AWG"))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "0.025" was read as 0.025 mm (bare numbers in spacing are '
        "mm in a metric plan); two conductors cannot be closer than their own diameter (6.6 mm "
        "for 8 AWG); write it with a unit, e.g. 25 mm"]


def test_a_spacing_with_a_unit_closer_than_the_conductor(plan_dir):
    # 3 mm is below 0.85 x 6.6 mm = 5.6 mm (the outer-diameter table is +-15 %).
    path = plan_dir(paired("3 mm", "8 AWG"))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "3 mm" was read as 3 mm; two conductors cannot be closer '
        "than their own diameter (6.6 mm for 8 AWG); give the centre-to-centre spacing"]


def test_a_spacing_within_the_tolerance_of_the_diameter_table_is_accepted(plan_dir):
    # 6 mm is 0.91 of 6.6 mm: inside the table's +-15 %, so a thin-wall cable is not refused.
    plan = read_plan(plan_dir(paired("6 mm", "8 AWG")))
    assert plan.runs[0].geometry.spacing_m == pytest.approx(0.006)


def test_a_bare_spacing_under_a_millimetre_is_refused_even_without_a_size(plan_dir):
    path = plan_dir(paired("0.5", ""))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "0.5" was read as 0.5 mm (bare numbers in spacing are mm in '
        "a metric plan); a spacing under 1 mm is less than the diameter of any insulated power "
        "conductor; write it with a unit, e.g. 12 mm"]


def test_a_small_spacing_with_a_unit_and_no_size_is_taken_as_meant(plan_dir):
    plan = read_plan(plan_dir(paired("0.5 mm", "")))
    assert plan.runs[0].geometry.spacing_m == pytest.approx(0.0005)


def test_an_imperial_plan_reads_bare_spacings_as_inches(plan_dir):
    # 0.02 in = 0.51 mm; 8 AWG is 6.6 mm = 0.26 in; 0.02 ft = 6.1 mm is no better, so no guess.
    path = plan_dir(paired("0.02", "8 AWG", units="ft"))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "0.02" was read as 0.02 in (bare numbers in spacing are '
        "inches in an imperial plan); two conductors cannot be closer than their own diameter "
        "(0.26 in for 8 AWG); write it with a unit, e.g. 0.5 in"]


def test_a_state_current_far_beyond_the_size_is_a_finding(plan_dir):
    # 8 AWG, 105 °C: 80 A (33 CFR 183.425 Table 5); 850 A is over 3 x 80 = 240 A.
    path = plan_dir(paired("", "8 AWG", current=850))
    assert findings_of(path) == [
        f"{path}: runs row 2, circuits: the run carries up to 850 A (circuits feed, from the states "
        "sheet), more than 3 times the 80 A that 8 AWG carries continuously (105 °C insulation, "
        "33 CFR 183.425 Table 5); check the current in amperes and the size"]


def test_the_current_check_uses_the_largest_magnitude_over_states_of_all_circuits(plan_dir):
    # Two circuits of -130 A each in one state: -260 A on 8 AWG, over 240 A; each alone is not.
    sheets = paired("", "8 AWG")
    sheets["runs"][1][1] = "feed; charger"
    sheets["states"] = [["circuit", "harbour", "charging"], ["feed", 5, -130],
                        ["charger", 0, -130]]
    path = plan_dir(sheets)
    assert findings_of(path) == [
        f"{path}: runs row 2, circuits: the run carries up to 260 A (circuits feed, charger, from "
        "the states sheet), more than 3 times the 80 A that 8 AWG carries continuously (105 °C "
        "insulation, 33 CFR 183.425 Table 5); check the current in amperes and the size"]
    sheets["states"][2][2] = -100                   # 230 A: within 3 x 80 A
    assert read_plan(plan_dir(sheets, name="within")).run_currents_a[0, 1] == -230


def test_a_run_current_far_beyond_a_metric_size_is_a_finding(plan_dir):
    # 2.5 mm2 read on the 105 °C table by cross-section: 39 A (between 14 AWG 35 A and 12 AWG 45 A).
    sheets = paired("", "2.5 mm2")
    del sheets["states"]
    sheets["runs"][0] = sheets["runs"][0][:1] + sheets["runs"][0][2:] + ["current_a"]
    sheets["runs"][1] = sheets["runs"][1][:1] + sheets["runs"][1][2:] + [-150]
    path = plan_dir(sheets)
    assert findings_of(path) == [
        f"{path}: runs row 2, current_a: the run carries 150 A, more than 3 times the 39 A that "
        "2.5 mm2 carries continuously (105 °C insulation, 33 CFR 183.425 Table 5); check the "
        "current in amperes and the size"]


def test_the_sample_windlass_is_within_its_size():
    # 85 A on 2/0 AWG (330 A at 105 °C, 33 CFR 183.425 Table 5): no finding.
    plan = read_plan(SAMPLES / "cruising_sailboat")
    assert max(float(abs(c.currents_a).max()) for c in plan.circuits if c.name == "windlass") == 85


# Outputs ----------------------------------------------------------------------------------------

def test_an_output_in_a_missing_folder_is_refused_before_any_work(tmp_path):
    target = tmp_path / "no" / "dir" / "report.html"
    with pytest.raises(OutputError) as caught:
        check_output(target, SAMPLES / "camper_van")
    assert str(caught.value) == (f"the folder {tmp_path / 'no' / 'dir'} does not exist; create it "
                                 "or write elsewhere")
    called = []
    with pytest.raises(OutputError) as caught:
        write_atomically(target, called.append)
    assert str(caught.value) == (f"the folder {tmp_path / 'no' / 'dir'} does not exist; create it "
                                 "or write elsewhere")
    assert called == [] and os.listdir(tmp_path) == []


def test_an_output_under_a_file_is_refused(tmp_path):
    (tmp_path / "notes.txt").write_text("")
    with pytest.raises(OutputError) as caught:
        check_output(tmp_path / "notes.txt" / "r.html", SAMPLES / "camper_van")
    assert str(caught.value) == f"{tmp_path / 'notes.txt'} is a file, not a folder; write elsewhere"


def test_the_commands_say_the_folder_does_not_exist(tmp_path):
    missing = tmp_path / "no" / "dir"
    result = run("check", SAMPLES / "camper_van", "--report", missing / "r.html")
    assert result.exit_code == 2 and "Traceback" not in result.output
    assert f"the folder {missing} does not exist; create it or write elsewhere" in result.output
    result = run("new", missing / "plan.xlsx")
    assert result.exit_code == 2
    assert f"the folder {missing} does not exist; create it or write elsewhere" in result.output


def test_an_output_that_is_a_link_to_the_plan_is_the_plan(tmp_path):
    plan = tmp_path / "plan.xlsx"
    assert run("new", plan).exit_code == 0
    link = tmp_path / "other" / "report.xlsx"
    link.parent.mkdir()
    link.symlink_to(plan)
    with pytest.raises(OutputError, match="is the input plan"):
        check_output(link, plan)


def test_on_a_case_insensitive_file_system_plan_xlsx_in_capitals_is_the_plan(tmp_path, monkeypatch):
    plan = tmp_path / "plan.xlsx"
    assert run("new", plan).exit_code == 0
    monkeypatch.setattr(files, "_case_insensitive", lambda folder: True)
    with pytest.raises(OutputError) as caught:
        check_output(tmp_path / "plan.XLSX", plan)
    assert str(caught.value) == f"{tmp_path / 'plan.XLSX'} is the input plan; write to another file"
    monkeypatch.setattr(files, "_case_insensitive", lambda folder: False)
    check_output(tmp_path / "plan.XLSX", plan)      # another file where case matters


def test_the_case_probe_matches_the_file_system(tmp_path):
    # Independent probe: does a file made in lower case answer to its upper-case name?
    (tmp_path / "probe").write_text("")
    expected = (tmp_path / "PROBE").exists()
    assert files._case_insensitive(tmp_path) is expected
    empty = tmp_path / "empty"
    empty.mkdir()
    assert files._case_insensitive(empty) is expected and os.listdir(empty) == []
