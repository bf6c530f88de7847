"""The command line through click's CliRunner: exit status, exact error lines, JSON layout."""

import json
import subprocess
import sys

import pytest

from conftest import SAMPLES, straight_wire_plan
from conftest import run_cli as run
from deviation.cli import main


def test_check_over_budget_sample_exits_1_with_budget_culprit_and_cautions():
    result = run("check", SAMPLES / "cruising_sailboat", "--width", "120")
    assert result.exit_code == 1, result.output
    out = result.output
    # Regression figure of this sample, computed by this tool (the physics behind it is checked
    # against outside sources in test_field, test_heading and test_analysis).
    assert "night motoring: 1.20° of 1° — OVER" in out
    assert "instrument feed" in out
    assert "compass adjuster" in out and "ISO 10133" in out and "ABYC" in out
    assert "Traceback" not in out


def test_check_within_budget_exits_0(plan_dir):
    sheets = straight_wire_plan(current=0.1, budget=5.0, depth_m=2.0)
    result = run("check", plan_dir(sheets))
    assert result.exit_code == 0, result.output
    assert "within budget" in result.output


def test_bad_plan_exits_2_with_one_line_per_finding_and_no_traceback(plan_dir):
    sheets = straight_wire_plan()
    sheets["states"] = [["circuit", "on"], ["feed", "lots"]]
    path = plan_dir(sheets)
    result = run("check", path)
    assert result.exit_code == 2
    lines = result.output.strip().splitlines()
    assert lines == [f'{path}: states row 2, on: "lots" is not a current in amperes',
                     "Error: 1 problem in the plan; nothing was computed or written."]


def test_missing_plan_file_exits_2(tmp_path):
    result = run("check", tmp_path / "nothing.xlsx")
    assert result.exit_code == 2
    assert "no such file or folder" in result.output


def test_json_has_the_documented_layout_and_nothing_else():
    result = run("check", SAMPLES / "cruising_sailboat", "--json")
    assert result.exit_code == 1
    data = json.loads(result.output)                 # stdout is JSON only
    assert set(data["site"]) >= {"horizontal_ut", "vertical_ut", "total_ut", "declination_deg",
                                 "inclination_deg", "source", "zone"}
    assert data["within_budget"] is False
    sensor = data["sensors"][0]
    assert set(sensor) >= {"sensor", "kind", "position_m", "budget", "reference_state",
                           "states", "status", "over_in"}
    assert sensor["budget"] == {"value": 1.0, "unit": "deg"}
    state = sensor["states"][1]
    assert set(state) >= {"state", "field_ut", "max_deviation_deg", "change_from_reference_deg",
                          "heeled_max_deviation_deg", "held", "status", "within_budget", "runs",
                          "hints"}
    run_entry = state["runs"][0]
    assert set(run_entry) >= {"run", "current_a", "field_ut", "max_deviation_deg", "nearest_m"}
    assert run_entry["run"] == "instrument feed"
    assert state["hints"][0]["after"] < state["held"]
    # Runs sorted largest contribution first.
    shares = [r["share_of_budget"] for r in state["runs"]]
    assert shares == sorted(shares, reverse=True)


def test_site_command_gives_wmm2025_values():
    # WMM2025 report test values: 2025.0, 0 km, lat 80, lon 0 -> H 6523.2 nT, D 1.28 deg.
    result = run("site", "--lat", 80, "--lon", 0, "--date", "2025.0", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["horizontal_ut"] == pytest.approx(6.5232, abs=5e-5)
    assert data["declination_deg"] == pytest.approx(1.28, abs=0.005)
    assert data["zone"] == "ok"
    text = run("site", "--lat", 80, "--lon", 0, "--date", "2025-01-01")
    assert "declination" in text.output and text.exit_code == 0


def test_site_outside_model_exits_2():
    result = run("site", "--lat", 50, "--lon", 0, "--date", "2032-01-01")
    assert result.exit_code == 2
    assert "outside the validity" in result.output


def test_new_writes_a_blank_plan_whose_examples_are_not_read_and_never_overwrites(tmp_path):
    path = tmp_path / "boat.xlsx"
    assert run("new", path).exit_code == 0
    first = path.read_bytes()
    again = run("new", path)
    assert again.exit_code == 2
    assert "exists; choose another name or add --force" in again.output
    assert path.read_bytes() == first
    blank = run("check", path)
    assert blank.exit_code == 2
    assert (f"{path}: sensors: the plan has no sensors to check; its rows beginning with \"e.g.\" "
            "are the template's examples, which are not read") in blank.output
    assert run("new", path, "--force").exit_code == 0


def test_new_template_has_comments_and_drop_downs(tmp_path):
    import openpyxl

    path = tmp_path / "plan.xlsx"
    run("new", path, "--units", "ft")
    book = openpyxl.load_workbook(path)
    assert book.sheetnames == ["site", "points", "runs", "states", "sensors", "equipment", "spots",
                               "volumes", "conditions"]
    runs = book["runs"]
    assert [c.value for c in runs[1]][:4] == ["run", "circuits", "route", "return"]
    assert all(c.comment is not None for c in runs[1])
    lists = [dv.formula1 for dv in runs.data_validations.dataValidation]
    assert '"paired,twisted,separate,none"' in lists
    assert '"not known,side by side,one above the other"' in lists
    states = book["states"]
    assert '"with states,independent,independent reversing"' in [
        dv.formula1 for dv in states.data_validations.dataValidation]
    assert book["site"]["B2"].value == "ft"


def test_every_command_has_help():
    for name, command in main.commands.items():
        assert command.help, name
        assert run(name, "--help").exit_code == 0


def test_help_does_not_import_numpy():
    # Start-up stays quick: the CLI module imports no heavy library until a command runs.
    code = "import sys, deviation.cli; print('numpy' in sys.modules, 'rich' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]


def test_cli_reference_is_current():
    # docs/cli.md is generated from --help; regenerate with `python -m deviation.docs > docs/cli.md`.
    from conftest import ROOT
    from deviation.docs import cli_reference

    assert (ROOT / "docs" / "cli.md").read_text() == cli_reference()
