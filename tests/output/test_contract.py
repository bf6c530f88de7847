"""One truth: the summary of a check (sensor, budget, held figure per state, verdict) is the same
in the terminal, the JSON, the xlsx and html reports and the library's table, on every sample
and on a plan whose only sensor is a total-field magnetometer (judged in nT, no degrees)."""

from __future__ import annotations

import json
import re

import openpyxl
import pytest

import deviation
from conftest import SAMPLES, HtmlTables, run_cli, write_plan

SAMPLE_NAMES = ["cruising_sailboat", "camper_van", "survey_drone", "survey_boom"]

#: The held figure as every output must read it: two decimals, the budget's unit (the
#: document's rule), in brackets for a state the sensor is not relied on in.
UNIT_TEXT = {"deg": "°", "nT": " nT"}


def total_field_only(folder):
    """A scalar survey magnetometer alone beside a feed; no budget_deg column at all."""
    return write_plan(folder, {
        "site": [["setting", "value"], ["horizontal_field_ut", 20], ["vertical_field_ut", 45]],
        "runs": [["run", "circuits", "route", "return"],
                 ["feed", "feed", "-5, 0.3, 0 > 5, 0.3, 0", "none"]],
        "states": [["circuit", "survey", "ferry"], ["feed", 2, 30]],
        "sensors": [["sensor", "at", "kind", "budget_nt", "used_in"],
                    ["stinger", "0, 0, 0", "total-field magnetometer", 5, "survey"]]})


def aircraft_in_watts(folder):
    """The aviation profile with loads in watts: a compass over a feed drawn through an
    inverter, the states' conditions stated, one state over 10° though within the budget."""
    return write_plan(folder, {
        "site": [["setting", "value"], ["horizontal_field_ut", 20], ["vertical_field_ut", 40],
                 ["profile", "aviation"]],
        "runs": [["run", "circuits", "route", "return"],
                 ["galley feed", "galley", "-3, 0, -0.5 > 3, 0, -0.5", "none"],
                 ["avionics", "avionics", "-2, 0.4, -0.3 > 2, 0.4, -0.3", "none"]],
        "states": [["circuit", "radios on", "radios off", "voltage", "supply", "efficiency"],
                   ["galley", "250 W", "", 28, "via inverter", "0.9"],
                   ["avionics", "84 W", "", "28 V", "", ""]],
        "conditions": [["state", "engines", "generator", "radios"],
                       ["radios on", "running", "charging", "on"],
                       ["radios off", "running", "charging", "off"]],
        "sensors": [["sensor", "at", "kind", "budget_deg"],
                    ["wet compass", "0, 0, 0", "magnetic compass", 15]]})


PLANS = {"total-field only": total_field_only, "aircraft in watts": aircraft_in_watts}


def expected_text(held, unit, used, status):
    if status == "overwhelmed":
        text = "overwhelmed"
    else:
        text = f"{held:.2f}{UNIT_TEXT[unit]}"
    return f"({text})" if not used else text


def from_json(data):
    out = {}
    for sensor in data["sensors"]:
        unit = sensor["budget"]["unit"]
        out[sensor["sensor"]] = (
            f"{sensor['budget']['value']:g}{UNIT_TEXT[unit]}",
            tuple(expected_text(s["held"], unit, s["used"], s["status"])
                  for s in sensor["states"]),
            sensor["verdict"])
    return out


def from_terminal(text, n_states):
    out = {}
    for line in text.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) == n_states + 3 and cells[0] not in ("sensor", "") and \
                re.fullmatch(r"[\d.]+ ?(°|nT)", cells[1]):
            out[cells[0]] = (cells[1], tuple(cells[2:-1]), cells[-1])
    return out


def from_html(page):
    parser = HtmlTables()
    parser.feed(page)
    # The summary table: the first headed sensor, budget, ... (page 1's tables come before it).
    summary = next(t for t in parser.tables if t and t[0][:2] == ["sensor", "budget"])
    return {row[0]: (row[1], tuple(row[2:-1]), row[-1]) for row in summary[1:]}


def _shown(value, number_format):
    """A cell as a spreadsheet shows it, from its number format (written out here)."""
    if isinstance(value, str):
        return value
    match = re.fullmatch(r'(?:"([^"]*)")?(General|0(?:\.(0+))?)(?:"([^"]*)")?', number_format)
    prefix, body, decimals, suffix = match.groups()
    shown = f"{value:g}" if body == "General" else f"{value:.{len(decimals or '')}f}"
    return f"{prefix or ''}{shown}{suffix or ''}"


def from_xlsx(path, n_states):
    sheet = openpyxl.load_workbook(path)["summary"]
    rows = list(sheet.iter_rows())
    header = next(i for i, row in enumerate(rows) if row[0].value == "sensor")
    out = {}
    for row in rows[header + 1:]:
        if row[0].value is None or row[1].value is None:       # the table has ended
            break
        cells = [_shown(c.value, c.number_format) for c in row[:n_states + 3]]
        out[cells[0]] = (cells[1], tuple(cells[2:-1]), cells[-1])
    return out


def from_frame(result):
    table = result.to_frame()
    out = {}
    for name, rows in table.groupby("sensor", sort=False):
        unit = rows["unit"].iloc[0]
        cells = tuple(expected_text(h, unit, u, s) for h, u, s in
                      zip(rows["held"], rows["used"], rows["status"]))
        over = [st for st, s in zip(rows["state"], rows["status"])
                if s in ("over", "overwhelmed")]
        verdict = "within budget" if not over else "over in " + ", ".join(over)
        out[name] = (f"{rows['budget'].iloc[0]:g}{UNIT_TEXT[unit]}", cells, verdict)
    return out


def exit_status(data):
    """0 within every budget and, in the aviation profile, every direction indicator within
    10° (14 CFR 23.1327); else 1."""
    aviation = data["aviation"]
    return 0 if data["within_budget"] and (aviation is None or aviation["within_limit"]) else 1


@pytest.mark.parametrize("name", SAMPLE_NAMES + list(PLANS))
def test_the_summary_is_the_same_in_every_output(name, tmp_path):
    plan_path = PLANS[name](tmp_path / "plan") if name in PLANS else SAMPLES / name
    plan = deviation.read_plan(plan_path)
    n_states = len(plan.state_names)
    result = deviation.check(plan)
    data = json.loads(run_cli("check", plan_path, "--json").output)
    truth = from_json(data)
    assert set(truth) == {s.name for s in plan.sensors}
    terminal = run_cli("check", plan_path, "--width", 200)
    assert terminal.exit_code == exit_status(data)
    assert from_terminal(terminal.output, n_states) == truth
    detail = run_cli("check", plan_path, "--width", 200, "--detail")
    assert from_terminal(detail.output, n_states) == truth
    for suffix in ("html", "xlsx"):
        assert run_cli("check", plan_path, "--report", tmp_path / f"r.{suffix}").exit_code == \
            terminal.exit_code
    assert from_html((tmp_path / "r.html").read_text(encoding="utf-8")) == truth
    assert from_xlsx(tmp_path / "r.xlsx", n_states) == truth
    assert from_frame(result) == truth
    # No output anywhere gives a total-field magnetometer a budget in degrees.
    for sensor in plan.sensors:
        if not sensor.budget.degrees:
            assert "180" not in truth[sensor.name][0]
            flat = terminal.output + detail.output
            assert not re.search(re.escape(sensor.name) + r"[^\n]*\b180(\.0+)?°", flat)


def _html_table(page, header):
    parser = HtmlTables()
    parser.feed(page)
    return next(t for t in parser.tables if t and t[0][:len(header)] == header)[1:]


def _terminal_rows(text, first):
    rows = []
    for line in text.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) > 2 and cells[0] == first:
            rows.append(cells)
    return rows


def test_the_aviation_verdicts_and_the_loads_read_the_same_in_every_output(tmp_path):
    plan_path = aircraft_in_watts(tmp_path / "plan")
    data = json.loads(run_cli("check", plan_path, "--json").output)
    # The truth: JSON's level figures against 10° and its load list (W as given, A worked out:
    # 250 W / (28 V x 0.9) + the PVWatts idle draw / 28 V; 84 W / 28 V = 3 A).
    aviation = [(v["state"], f"{v['level_deg']:.2f}°",
                 "within" if v["within"] else "OVER") for v in data["aviation"]["states"]]
    assert [a[2] for a in aviation] == ["OVER", "within"]
    loads = {c["circuit"]: [s["current_a"] for s in c["states"]] for c in data["loads"]}
    assert loads["avionics"] == [3.0, 0.0]
    terminal = run_cli("check", plan_path, "--width", 200)
    assert terminal.exit_code == 1 and data["within_budget"]
    shown = [(r[1], r[3], r[5]) for r in _terminal_rows(terminal.output, "wet compass")
             if len(r) == 6]
    assert shown == aviation
    assert run_cli("check", plan_path, "--report", tmp_path / "r.html").exit_code == 1
    assert run_cli("check", plan_path, "--report", tmp_path / "r.xlsx").exit_code == 1
    page = (tmp_path / "r.html").read_text(encoding="utf-8")
    rows = _html_table(page, ["sensor", "state", "conditions"])
    assert [(r[1], r[3], r[5]) for r in rows] == aviation
    book = openpyxl.load_workbook(tmp_path / "r.xlsx")
    sheet_rows = [[_shown(c.value, c.number_format) for c in row]
                  for row in book["aviation"].iter_rows() if row[0].value == "wet compass"]
    assert [(r[1], r[3], r[5]) for r in sheet_rows] == aviation
    # W and A side by side, the same figures on paper as in the JSON.
    html_loads = {r[0]: r for r in _html_table(page, ["circuit", "V", "supply"])}
    assert html_loads["avionics"][3:5] == ["84.0", "3.0"]
    assert html_loads["galley"][3] == "250"
    assert float(html_loads["galley"][4]) == pytest.approx(loads["galley"][0], abs=0.05)
    xlsx_loads = {row[0].value: [_shown(c.value, c.number_format) for c in row[:5]]
                  for row in book["loads"].iter_rows() if row[0].value in loads}
    assert xlsx_loads["avionics"][3:5] == ["84.0", "3.0"]


def test_the_total_field_only_plan_is_judged_in_nt(tmp_path):
    plan = deviation.read_plan(total_field_only(tmp_path / "plan"))
    result = deviation.check(plan)
    sensor = result.sensors[0]
    assert str(sensor.sensor.budget) == "5 nT"
    assert all(st.max_deviation_deg is None for st in sensor.states)   # no heading figures
    spots = deviation.rank_spots(plan, "stinger", [[0, 0, 0], [0, 0, 3]])
    assert spots.spots[0].held < spots.spots[1].held      # ranked in nT: farther is quieter
    assert spots.to_frame()["unit"].iloc[0] == "nT"
