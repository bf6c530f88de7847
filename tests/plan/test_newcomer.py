"""What a newcomer meets first: the template's example rows, findings that name one cause once,
and text that reads the same in every command (no placeholder figures, no markup, one unit)."""

import csv
import html
import math
import re

import openpyxl
import pytest

from conftest import SAMPLES, straight_wire_plan
from conftest import run_cli as run
from deviation import api
from deviation.aftercare import switch_on_test
from deviation.plan import PlanError
from deviation.reader import is_example_row, plan_from_tables, read_plan
from deviation.template import EXAMPLE_ROWS, write_template
from deviation.units import format_length

SAMPLE_NAMES = tuple(sorted(p.name for p in SAMPLES.iterdir() if p.is_dir()))



def flat(text):
    """Printed text with its line wrapping undone."""
    return " ".join(text.split())


def findings_of(path_or_tables):
    with pytest.raises(PlanError) as caught:
        if isinstance(path_or_tables, dict):
            plan_from_tables(path_or_tables, "plan")
        else:
            read_plan(path_or_tables)
    return [str(f) for f in caught.value.findings]


# The template's example rows ----------------------------------------------------------------------

def test_every_example_row_of_the_template_is_marked_and_the_site_has_no_example_values():
    for sheet, rows in EXAMPLE_ROWS.items():
        if sheet == "site":
            # Settings to fill in: only the unit has a value (a blank latitude is a finding,
            # never the template's 50.8).
            assert {r["setting"] for r in rows if r.get("value") is not None} == {"units"}
            continue
        first = next(iter(rows[0]))
        assert all(is_example_row([r[first]]) for r in rows), sheet


def test_example_marks_in_any_case_are_examples_and_names_merely_containing_eg_are_not():
    assert is_example_row(["e.g. battery", 1])
    assert is_example_row(["  E.G. battery"]) and is_example_row(["e. g. helm"])
    assert not is_example_row(["keg. lights"]) and not is_example_row(["battery e.g."])
    assert not is_example_row([None, "e.g. a note"]) and not is_example_row([])


def _fill_left_in_template(path):
    """The template with its examples left in and a small real plan added below them: a 100 m
    wire 0.5 m below a compass, 10 A in both of the template's states."""
    write_template(path)
    book = openpyxl.load_workbook(path)
    book["site"]["B6"] = 0                                    # altitude_m
    book["site"].append(["horizontal_field_ut", 20])
    book["site"].append(["vertical_field_ut", 40])
    book["runs"].append(["feed", "feed", "-50, 0, -0.5 > 50, 0, -0.5", "none"])
    book["states"].append(["feed", 10, 10])
    book["sensors"].append(["compass", "0, 0, 0", "magnetic compass", 1])
    book.save(path)


def test_a_template_with_its_examples_left_in_checks_only_the_real_rows_and_says_so(tmp_path):
    path = tmp_path / "plan.xlsx"
    _fill_left_in_template(path)
    plan = read_plan(path)
    # Rows of write_template: the examples sit right under each header.
    assert plan.skipped_examples == (("points", 2), ("points", 3), ("runs", 2), ("states", 2),
                                     ("states", 3), ("states", 4), ("sensors", 2),
                                     ("equipment", 2), ("spots", 2), ("volumes", 2),
                                     ("conditions", 2))
    assert [r.name for r in plan.runs] == ["feed"] and [s.name for s in plan.sensors] == [
        "compass"]
    assert [c.name for c in plan.circuits] == ["feed"] and not plan.points and not plan.equipment
    # Not counted: the same figure as the plan without them. A 100 m wire at 0.5 m: B = µ0 I /
    # (2π r) = 4 µT against H = 20 µT, the worst heading asin(4/20) (long-wire formula, textbook;
    # the 50 m half-lengths take 2.5e-5 of it).
    held = api.check(plan).sensors[0].states[0].held
    assert held == pytest.approx(math.degrees(math.asin(4.0 / 20.0)), rel=1e-4)
    result = run("check", path, "--width", 160)
    assert result.exit_code == 1, result.output
    assert ("The plan still has 11 example rows from the template (points row 2, points row 3, "
            "runs row 2, states row 2, states row 3, states row 4, sensors row 2, equipment row 2, "
            "spots row 2, volumes row 2, conditions row 2); they were not counted — delete "
            "them.") in flat(result.output)


def test_the_reports_carry_the_example_rows_line(tmp_path):
    path = tmp_path / "plan.xlsx"
    _fill_left_in_template(path)
    line = "The plan still has 11 example rows from the template (points row 2,"
    assert run("check", path, "--report", tmp_path / "r.html").exit_code == 1
    assert line in html.unescape((tmp_path / "r.html").read_text())
    assert run("check", path, "--report", tmp_path / "r.xlsx").exit_code == 1
    sheet = openpyxl.load_workbook(tmp_path / "r.xlsx")["summary"]
    assert any(str(c.value).startswith(line) for c in sheet["A"][:8])


def test_one_example_row_is_said_in_the_singular(plan_dir):
    sheets = straight_wire_plan()
    sheets["runs"].insert(1, ["e.g. helm instruments", "feed", "0, 0, -1 > 1, 0, -1", "none"])
    result = run("check", plan_dir(sheets), "--width", 160)
    assert ("The plan still has 1 example row from the template (runs row 2); it was not "
            "counted — delete it.") in flat(result.output)


def test_example_rows_are_skipped_in_every_sheet_of_a_csv_plan(plan_dir):
    plain = read_plan(plan_dir(straight_wire_plan(), "plain"))
    sheets = straight_wire_plan()
    # An example row in every sheet, each of which would be an error or change the figures.
    sheets["site"].insert(1, ["e.g. latitude", "north"])
    sheets["runs"].insert(1, ["e.g. big feed", "feed", "0, 0, -0.1 > 1, 0, -0.1", "none"])
    sheets["states"].insert(1, ["e.g. feed", 500])
    sheets["sensors"].insert(1, ["e.g. compass", "nowhere", "magnetic compass", 1])
    sheets["points"] = [["point", "x", "y", "z"], ["e.g. battery", "x", "y", "z"]]
    marked = read_plan(plan_dir(sheets, "marked"))
    assert marked.skipped_examples == (("site", 2), ("points", 2), ("runs", 2), ("states", 2),
                                       ("sensors", 2))
    a = api.check(plain).sensors[0].states[0].held
    b = api.check(marked).sensors[0].states[0].held
    assert a == b                                   # the same plan, read twice


def test_a_blank_template_says_its_sensors_are_only_examples(tmp_path):
    path = tmp_path / "blank.xlsx"
    write_template(path)
    assert findings_of(path) == [
        f"{path}: site: give latitude and longitude (for the WMM2025 field) or "
        "horizontal_field_ut (measured)",
        f'{path}: sensors: the plan has no sensors to check; its rows beginning with "e.g." are '
        "the template's examples, which are not read"]


# One cause, one finding ---------------------------------------------------------------------------

def _with_points(x_cell):
    sheets = straight_wire_plan()
    sheets["points"] = [["point", "x", "y", "z"], ["helm", x_cell, 0, 0],
                        ["feed end", 50, 0, -0.5]]
    sheets["sensors"][1][1] = "helm"
    sheets["runs"][1][2] = "-50, 0, -0.5 > feed end"
    return sheets


def test_a_bad_point_coordinate_is_reported_once_not_again_where_the_point_is_used():
    tables = _with_points("1,5")
    assert findings_of(tables) == [
        'plan: points row 2, x: "1,5" is not a length (e.g. 1.2 m, 35 cm, 850 mm, 4 ft, 18 in, '
        "2'6\")"]
    tables["volumes"] = [["volume", "kind", "from", "to"], ["shelf", "mount in", "helm", "2, 2, 2"]]
    tables["spots"] = [["spot", "at"], ["there", "helm"]]
    assert len(findings_of(tables)) == 1


def test_a_blank_point_coordinate_is_reported_once_too():
    assert findings_of(_with_points("")) == ["plan: points row 2, x: a length is needed"]


def test_a_route_through_a_bad_point_is_not_reported_again():
    tables = _with_points(0)
    tables["points"][2][3] = "low"                       # "feed end": z is not a length
    assert findings_of(tables) == [
        'plan: points row 3, z: "low" is not a length (e.g. 1.2 m, 35 cm, 850 mm, 4 ft, 18 in, '
        "2'6\")"]


def test_a_point_named_twice_after_a_bad_one_is_still_named_twice():
    tables = _with_points("x")
    tables["points"].append(["helm", 0, 0, 0])
    assert findings_of(tables)[1] == 'plan: points row 4, point: "helm" is named twice'


def test_a_circuit_renamed_in_the_states_sheet_is_reported_at_both_rows():
    tables = straight_wire_plan()
    tables["states"] = [["circuit", "on"], ["main feed", 10]]     # renamed from "feed"
    assert findings_of(tables) == [
        'plan: runs row 2, circuits: circuit "feed" is not in the states sheet; did you mean '
        '"main feed"?',
        'plan: states row 2, circuit: circuit "main feed" is used by no run; did you mean "feed"?']


def test_an_unused_circuit_is_not_a_finding_while_every_run_finds_its_circuits():
    tables = straight_wire_plan()
    tables["states"].append(["spare", 3])
    plan = plan_from_tables(tables)
    assert [c.name for c in plan.circuits] == ["feed", "spare"]


# Lengths as text ----------------------------------------------------------------------------------

@pytest.mark.parametrize("metres, unit, shown", [
    # The band follows the value as shown (common practice, no source): no "10.0 mm" beside
    # "10 mm", no "1000 mm" beside "1.00 m", one zero.
    (0.0, "m", "0 mm"), (4e-5, "m", "0 mm"), (-4e-5, "m", "0 mm"), (0.0043, "m", "4.3 mm"),
    (0.00996, "m", "10 mm"), (0.0101, "m", "10 mm"), (0.9996, "m", "1.00 m"),
    (0.25, "m", "250 mm"), (0.0, "ft", "0 in"), (1e-5, "in", "0 in"),
    (0.999 * 0.0254, "ft", "1.0 in"), (23.96 * 0.0254, "ft", "2.00 ft"),
    (0.0038, "ft", "0.15 in"), (0.3048, "ft", "12.0 in")])
def test_lengths_are_shown_in_one_style_whatever_the_rounding(metres, unit, shown):
    assert format_length(metres, unit) == shown


# Every command on every sample: no placeholder figure, no markup, one unit per position -----------

UNIT_BRACKETS = re.compile(r"\[(?:m|mm|cm|ft|in|°|µT|A|%|A·m²)\]")
TRIPLE = re.compile(r"\(([^(),]*),([^(),]*),([^(),]*)\)(\s*[A-Za-z]*)")
NUMBER = re.compile(r"\s*-?\d+(?:\.\d+)?\s*")
WITH_UNIT = re.compile(r"\s*-?\d+(?:\.\d+)?\s*(?:mm|cm|m|in|ft)\s*")


def assert_clean_text(text, where):
    """No placeholder figure, no Markdown or console markup, one unit per position."""
    assert "180.00" not in text and "18000" not in text, where
    assert "`" not in text, where
    bare = UNIT_BRACKETS.sub("", text)
    assert "[" not in bare and "]" not in bare, (where, re.findall(r".{30}\[.{30}", bare))
    for match in TRIPLE.finditer(text):
        coordinates = match.groups()[:3]
        if all(NUMBER.fullmatch(c) for c in coordinates):
            # Three bare numbers in brackets: a position, with its one unit after it.
            assert match.group(4).strip() in ("m", "cm", "mm", "in", "ft"), (where,
                                                                             match.group(0))
        else:
            # Not a position with a unit on each coordinate ("1.40 m, 200 mm, 2.10 m").
            assert not all(WITH_UNIT.fullmatch(c) for c in coordinates), (where, match.group(0))


def spot_rows(output):
    """The x, y, z cells of the spot table, and its header."""
    lines = output.splitlines()
    header = next(line for line in lines if re.match(r"\|\s*#\s*\|", line))
    cells = [[c.strip() for c in line.strip("|").split("|")] for line in lines
             if re.match(r"\|\s*\d+\s*\|", line)]
    names = [c.strip() for c in header.strip("|").split("|")]
    at = names.index(next(n for n in names if n.startswith("x ")))
    return names[at:at + 3], [c[at:at + 3] for c in cells]


SPOT_REGIONS = {  # a small box beside each sample's sensor, in the plan's units
    "cruising_sailboat": ("helm compass", "1.5,-0.05,1.9", "1.7,0.05,2.0", "5cm"),
    "camper_van": ("dash compass", "16.8,0.4,4.1", "17.2,0.8,4.3", "2in"),
    "survey_drone": ("mast magnetometer", "-50,-10,110", "-30,10,130", "1cm"),
    "survey_boom": ("fc compass", "-50,-10,140", "-30,10,160", "1cm"),
}


def _readings(plan, sensor, folder):
    """Switch-on results that read as planned, and a swing of the plan's own card."""
    test = switch_on_test(plan, sensor, 90.0)
    results = folder / "results.csv"
    with open(results, "w", newline="") as f:
        out = csv.writer(f)
        out.writerow(["circuit", "reading before", "reading after"])
        for row in test.rows[:3]:
            out.writerow([row.name, 100.0, round(100.0 + row.predicted_change_deg, 1)])
    card = api.deviation_cards(plan, sensor, 30.0)[0].states[0]
    swing = folder / "swing.csv"
    with open(swing, "w", newline="") as f:
        out = csv.writer(f)
        out.writerow(["state", "compass", "deviation"])
        # Compass = Magnetic - Deviation (east positive).
        for magnetic, deviation in zip(card.headings_deg, card.deviation_deg):
            out.writerow([card.state, f"{(magnetic - deviation) % 360:.1f}",
                          f"{abs(deviation):.2f}{'E' if deviation >= 0 else 'W'}"])
    return results, swing


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_every_command_on_every_sample_shows_clean_text(name, tmp_path):
    folder = SAMPLES / name
    plan = read_plan(folder)
    sensor, low, high, step = SPOT_REGIONS[name]
    site = plan.site
    results, swing = _readings(plan, sensor, tmp_path)
    copy = tmp_path / "copy.xlsx"
    commands = [
        ("check", folder, "--width", 160), ("check", folder, "--all-runs", "--width", 160),
        ("check", folder, "--report", tmp_path / "r.html"),
        ("check", folder, "--report", tmp_path / "r.xlsx"),
        ("card", folder, "--width", 160), ("swing-state", folder, "--width", 160),
        ("spot", folder, "--sensor", sensor, "--region", low, high, "--step", step,
         "--width", 160),
        ("test-sheet", folder, "--sensor", sensor, "--heading", 90, "--sheet",
         tmp_path / "sheet.xlsx", "--width", 160),
        ("test-results", folder, results, "--sensor", sensor, "--heading", 90, "--width", 160),
        ("swing", folder, swing, "--sensor", sensor, "--width", 160),
        ("new", copy, "--from", folder), ("refit", folder, copy, "--width", 160),
        ("deflection", "--angle", 3, "--distance", "50cm", "--position", "end-on", "--plan",
         folder),
        ("site", "--lat", site.latitude_deg, "--lon", site.longitude_deg, "--date",
         site.date_text),
        ("clearance", "--lat", site.latitude_deg, "--lon", site.longitude_deg, "--date",
         site.date_text, "--budget-deg", plan.sensor(sensor).budget.value, "--units",
         "ft" if plan.imperial else "m", "--width", 160),
    ]
    for command in commands:
        result = run(*command)
        assert result.exit_code in (0, 1), (command, result.output)
        assert_clean_text(result.output, command[0])
        if command[0] == "spot":
            names, rows = spot_rows(result.output)
            # One unit per position: in the header, the same for x, y and z.
            assert names == [f"{axis} {plan.site.units}" for axis in "xyz"]
            assert rows and all(NUMBER.fullmatch(c) for row in rows for c in row)
    page = html.unescape(re.sub(r"<[^>]+>", " ", (tmp_path / "r.html").read_text()))
    assert_clean_text(page, "html report")
    for workbook in (tmp_path / "r.xlsx", tmp_path / "sheet.xlsx", copy):
        book = openpyxl.load_workbook(workbook)
        for sheet in book.worksheets:
            for row in sheet.iter_rows(values_only=True):
                for value in row:
                    if isinstance(value, str):
                        assert_clean_text(value, f"{workbook.name} {sheet.title}")


def test_the_template_shows_no_markdown_in_its_cells_or_comments(tmp_path):
    path = tmp_path / "blank.xlsx"
    write_template(path)
    for sheet in openpyxl.load_workbook(path).worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                for text in (cell.value, cell.comment.text if cell.comment else None):
                    if isinstance(text, str):
                        assert "`" not in text, (sheet.title, cell.coordinate, text)


def _overwhelmed(plan_dir):
    # 400 A in one conductor 0.1 m below the compass: µ0 I / (2π r) = 800 µT against H = 20 µT,
    # 40 times the horizontal field (long-wire formula, textbook): the compass can point anywhere.
    sheets = straight_wire_plan(current=400.0, depth_m=0.1, reference="off",
                                states=[["circuit", "on", "off"], ["feed", 400, 0]])
    return plan_dir(sheets)


def test_an_overwhelmed_compass_shows_the_word_never_the_placeholder_figure(plan_dir, tmp_path):
    path = _overwhelmed(plan_dir)
    result = run("check", path, "--detail", "--width", 160)
    assert result.exit_code == 1
    row = next(line for line in result.output.splitlines() if line.startswith("|long feed"))
    # alone, residual, share of the budget
    assert [c.strip() for c in row.strip("|").split("|")][-3:] == ["overwhelmed", "overwhelmed",
                                                                  "—"]
    assert_clean_text(result.output, "check")
    assert run("check", path, "--report", tmp_path / "o.html").exit_code == 1
    page = html.unescape(re.sub(r"<[^>]+>", " ", (tmp_path / "o.html").read_text()))
    # The card itself may reach 180° at one heading: a real deviation, not the placeholder.
    assert_clean_text(page.split("Predicted deviation card")[0], "html report")
    assert run("check", path, "--report", tmp_path / "o.xlsx").exit_code == 1
    book = openpyxl.load_workbook(tmp_path / "o.xlsx")
    # No sheet but the card's holds a number of 180 or more (every figure that would be one is
    # the word); the card may show a real deviation of 180° at one heading.
    for sheet in book.worksheets:
        if sheet.title.startswith("card "):
            continue
        degree_columns = set()
        for row in sheet.iter_rows():
            titles = [c.value for c in row]
            if titles[0] == "run / item":                     # a budget table's header row
                degree_columns = {c.column for c in row if str(c.value).endswith("°")}
                continue
            if titles[0] == "sensor":                         # the summary: the state columns
                first, last = titles.index("budget") + 1, titles.index("verdict")
                degree_columns = {c.column for c in row[first:last]}
                continue
            for cell in row:
                if cell.column in degree_columns:
                    assert not (isinstance(cell.value, (int, float)) and cell.value >= 180), (
                        sheet.title, cell.coordinate, cell.value)
    summary = book["summary"]
    header = next(c.row for c in summary["A"] if c.value == "sensor")
    assert "overwhelmed" in [c.value for c in summary[header + 1]]


def test_names_with_brackets_are_shown_as_written(plan_dir):
    sheets = straight_wire_plan()
    sheets["runs"][1][0] = "[bold]feed[/bold]"
    sheets["sensors"][1][0] = "[red]compass"
    path = plan_dir(sheets)
    result = run("check", path, "--width", 160)
    assert "[bold]feed[/bold]" in result.output and "[red]compass" in result.output
    spot = run("spot", path, "--sensor", "[red]compass", "--region", "-0.1,-0.1,0", "0.1,0.1,0.1",
               "--step", "10cm", "--width", 160)
    assert spot.exit_code in (0, 1) and "Best spots for [red]compass" in spot.output
