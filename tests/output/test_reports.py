"""Deviation cards and reports: values match the formula; xlsx and html hold everything."""

import json
import math
import os

import openpyxl
import pytest

from conftest import SAMPLES, straight_wire_plan
from conftest import run_cli as run
from deviation import files


def _atan2_deviation(bx, by, h, heading_deg):
    # delta = atan2(b_E, H + b_N) with b_N = b_x cos(psi) + b_y sin(psi),
    # b_E = b_x sin(psi) - b_y cos(psi) for a vessel field (x forward, y port), level
    # (NGA Pub. 226; written out here independently of the package).
    psi = math.radians(heading_deg)
    north = bx * math.cos(psi) + by * math.sin(psi)
    east = bx * math.sin(psi) - by * math.cos(psi)
    return math.degrees(math.atan2(east, h + north))


def test_card_matches_the_deviation_formula_at_every_heading():
    # The sailboat's sensors are adjusted in "harbour": the card they steer by is the deviation
    # of the residual field b - b_ref that the correctors leave; the unadjusted one is beside it.
    # The correctors are set with the independent loads off (the bilge pump's float switch may
    # start it in harbour, but not while adjusting): b_ref is harbour's field without the runs
    # of the circuits switched on in its worst case (each such run carries that circuit alone).
    check = json.loads(run("check", SAMPLES / "cruising_sailboat", "--json").output)
    card = json.loads(run("card", SAMPLES / "cruising_sailboat", "--json", "--step", "5").output)
    h = check["site"]["horizontal_ut"]
    for sensor_check, sensor_card in zip(check["sensors"], card["sensors"]):
        reference = next(s for s in sensor_check["states"]
                         if s["state"] == sensor_check["reference_state"])
        switched = {c["circuit"] for c in reference["switched_on"]}
        rx, ry, _ = (sum(v) for v in zip(reference["field_ut"], *(
            [-x for x in r["field_ut"]] for r in reference["runs"] if r["run"] in switched)))
        for state_check, state_card in zip(sensor_check["states"], sensor_card["states"]):
            bx, by, _ = state_check["field_ut"]
            assert len(state_card["headings"]) == 72
            for row in state_card["headings"]:
                expected = _atan2_deviation(bx - rx, by - ry, h, row["heading_deg"])
                assert row["deviation_deg"] == pytest.approx(expected, abs=2e-4)
                assert row["unadjusted_deviation_deg"] == pytest.approx(
                    _atan2_deviation(bx, by, h, row["heading_deg"]), abs=2e-4)
                # Compass = Magnetic - Deviation (standard navigation practice), on the circle.
                steer = (row["heading_deg"] - expected) % 360
                assert (row["compass_deg"] - steer + 180) % 360 - 180 == pytest.approx(0,
                                                                                    abs=2e-4)


def test_card_of_an_adjusted_magnetometer_has_no_heading_to_steer(tmp_path):
    plot = tmp_path / "curves.png"
    result = run("card", SAMPLES / "survey_drone", "--json", "--plot", plot)
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    states = data["sensors"][0]["states"]
    # In its reference state an adjusted sensor reads no deviation from the wiring at all.
    assert all(row["deviation_deg"] == 0 for row in states[0]["headings"])
    assert any(abs(row["deviation_deg"]) > 0.1 for row in states[2]["headings"])
    assert all(row["compass_deg"] is None for row in states[2]["headings"])
    assert plot.read_bytes()[:4] == b"\x89PNG"


def test_card_table_in_the_terminal():
    result = run("card", SAMPLES / "camper_van", "--width", "140")
    assert result.exit_code == 0
    assert "000°" in result.output and "345°" in result.output and "steer" in result.output


def xlsx_text(path):
    book = openpyxl.load_workbook(path)
    cells = [str(c.value) for sheet in book.worksheets for row in sheet.iter_rows() for c in row
             if c.value is not None]
    return book, "\n".join(cells)


def test_xlsx_report_holds_every_sensor_state_run_and_caution(tmp_path):
    path = tmp_path / "report.xlsx"
    result = run("check", SAMPLES / "cruising_sailboat", "--report", path)
    assert result.exit_code == 1
    book, text = xlsx_text(path)
    assert book.sheetnames[0] == "summary"
    assert {"budget helm compass", "card helm compass", "findings", "site",
            "cautions"} <= set(book.sheetnames)
    for needle in ["helm compass", "autopilot sensor", "harbour", "night motoring", "anchoring",
                   "windlass feed", "instrument feed", "stern light", "compass adjuster",
                   "ISO 10133", "ISO 25862"]:
        assert needle in text, needle
    summary = book["summary"]
    header = next(c.row for c in summary["A"] if c.value == "sensor")
    assert summary.freeze_panes == f"A{header + 1}"          # the header stays in view


def test_plan_text_is_written_as_text_never_a_formula(plan_dir, tmp_path):
    sheets = straight_wire_plan()
    sheets["runs"][1][0] = "=HYPERLINK(\"http://example.invalid\")"
    path = tmp_path / "r.xlsx"
    assert run("check", plan_dir(sheets), "--report", path).exit_code == 1
    book = openpyxl.load_workbook(path)
    found = [c for sheet in book.worksheets for row in sheet.iter_rows() for c in row
             if isinstance(c.value, str) and c.value.startswith("=HYPERLINK")]
    assert found and all(c.data_type == "s" for c in found)


def test_html_report_is_self_contained_and_holds_the_tables(tmp_path):
    path = tmp_path / "report.html"
    assert run("check", SAMPLES / "camper_van", "--report", path).exit_code == 0     # the van is within budget while driving
    page = path.read_text(encoding="utf-8")
    # Page 1's drawing, the bars, the sensor's drawing and its card curves, as vectors.
    assert page.count("<svg") == 4
    assert "<link" not in page and 'src="http' not in page and "@import" not in page
    for needle in ["dash compass", "driving", "camping", "inverter loaded", "inverter feed",
                   "compass adjuster", "ABYC", "Predicted deviation card", "@page"]:
        assert needle in page, needle


def test_html_escapes_plan_text(plan_dir, tmp_path):
    sheets = straight_wire_plan()
    sheets["runs"][1][0] = "<script>alert(1)</script>"
    path = tmp_path / "r.html"
    run("check", plan_dir(sheets), "--report", path)
    page = path.read_text()
    assert "<script>" not in page and "&lt;script&gt;" in page


def test_report_is_never_written_onto_the_plan(tmp_path):
    plan = tmp_path / "plan.xlsx"
    assert run("new", plan, "--from", SAMPLES / "camper_van").exit_code == 0
    before = plan.read_bytes()
    result = run("check", plan, "--report", plan)
    assert result.exit_code == 2
    assert "is the input plan" in result.output
    assert plan.read_bytes() == before


def test_failed_write_leaves_no_file(tmp_path):
    target = tmp_path / "out.xlsx"

    def broken(temporary):
        with open(temporary, "w") as handle:
            handle.write("half")
        raise OSError("disk full")

    with pytest.raises(OSError):
        files.write_atomically(target, broken)
    assert os.listdir(tmp_path) == []


def test_unknown_report_kind_exits_2(tmp_path):
    result = run("check", SAMPLES / "camper_van", "--report", tmp_path / "r.txt")
    assert result.exit_code == 2
    assert "a report is FILE.xlsx, FILE.html or FILE.pdf" in result.output
