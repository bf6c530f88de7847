"""One truth in every command: each command's headline table (the spots ranked, each
electronic sensor's verdict, the steps of the switch-on test, ...) reads the same in the
terminal, the html and xlsx reports and the JSON (and the library's frame where it has one), on
every sample.

The JSON is the reference: the expected cells are worked out here from ``--json`` with the
document's own rules of display (lengths in the plan's unit to LENGTH_DIGITS, held figures to two
decimals, changes signed), not taken from the document.
"""

from __future__ import annotations

import csv
import json
import re
import shutil

import openpyxl
import pytest

import deviation
from conftest import SAMPLES, HtmlTables, run_cli
from deviation.aftercare import refit, switch_on_test
from deviation.units import LENGTH_UNITS, parse_length

SAMPLE_NAMES = ["cruising_sailboat", "camper_van", "survey_drone", "survey_boom"]
#: Decimals of a length in each plan unit (about a millimetre or a tenth of an inch; the
#: document's rule, common practice, no source).
LENGTH_DIGITS = {"m": 3, "cm": 1, "mm": 0, "ft": 2, "in": 1}
#: A small box beside each sample's sensor, in the plan's units, and the grid step.
SPOT_REGIONS = {
    "cruising_sailboat": ("helm compass", "1.5,-0.05,1.9", "1.7,0.05,2.0", "5cm"),
    "camper_van": ("dash compass", "16.8,0.4,4.1", "17.2,0.8,4.3", "2in"),
    "survey_drone": ("mast magnetometer", "-50,-10,110", "-30,10,130", "1cm"),
    "survey_boom": ("fc compass", "-50,-10,140", "-30,10,160", "1cm"),
}


# Reading each output's tables --------------------------------------------------------------------

def terminal_tables(text):
    """Every ASCII table of a piped terminal: (header cells, rows of cells); wide enough that no
    cell wraps, a multi-line header joined column by column."""
    tables, lines = [], text.splitlines()
    i = 0
    while i < len(lines):
        if not lines[i].startswith("+-"):
            i += 1
            continue
        header_lines = []
        i += 1
        while i < len(lines) and lines[i].startswith("|"):
            header_lines.append([c.strip() for c in lines[i].strip().strip("|").split("|")])
            i += 1
        header = [" ".join(p for p in parts if p) for parts in zip(*header_lines)]
        rows = []
        i += 1                                       # the rule under the header
        while i < len(lines) and lines[i].startswith("|"):
            rows.append([c.strip() for c in lines[i].strip().strip("|").split("|")])
            i += 1
        tables.append((header, rows))
        i += 1
    return tables


def html_tables(page):
    parser = HtmlTables()
    parser.feed(page)
    return [(t[0], t[1:]) for t in parser.tables if t]


def shown(value, number_format):
    """A cell as a spreadsheet shows it, from its number format (worked out here)."""
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    sections = number_format.split(";")
    chosen = (sections[0] if value > 0 or len(sections) == 1 else
              sections[1] if value < 0 else sections[2] if len(sections) > 2 else sections[0])
    match = re.fullmatch(r'(?:"([^"]*)")?([+-]?)(General|0(?:\.(0+))?)(?:"([^"]*)")?', chosen)
    prefix, sign, body, decimals, suffix = match.groups()
    number = abs(value) if len(sections) > 1 else value
    text = f"{number:g}" if body == "General" else f"{number:.{len(decimals or '')}f}"
    return f"{prefix or ''}{sign}{text}{suffix or ''}"


def xlsx_table(path, header):
    """The first table in the workbook whose header row is ``header``: its rows as shown."""
    book = openpyxl.load_workbook(path)
    for sheet in book.worksheets:
        rows = list(sheet.iter_rows())
        for i, row in enumerate(rows):
            if [c.value for c in row[:len(header)]] == header:
                out = []
                for data in rows[i + 1:]:
                    cells = [shown(c.value, c.number_format) for c in data[:len(header)]]
                    if not any(cells):
                        break
                    out.append(cells)
                return out
    raise AssertionError(f"no table headed {header} in {path}")


def outputs(tmp_path, *command, plan):
    """The command's terminal, JSON, html and xlsx outputs: (exit code, tables, data, html
    tables, workbook path)."""
    terminal = run_cli(*command, "--width", 400)
    assert terminal.exit_code in (0, 1), terminal.output
    data = json.loads(run_cli(*command, "--json").output)
    for suffix in ("html", "xlsx"):
        written = run_cli(*command, "--report", tmp_path / f"out.{suffix}")
        assert written.exit_code == terminal.exit_code, written.output
    return (terminal.exit_code, terminal_tables(terminal.output), data,
            html_tables((tmp_path / "out.html").read_text(encoding="utf-8")),
            tmp_path / "out.xlsx")


def _project(header, rows, wanted):
    """The rows cut to the columns ``wanted`` (the terminal leaves out empty and pen columns)."""
    at = [header.index(c) for c in wanted]
    return [[row[i] for i in at] for row in rows]


def same_table(terminal, pages, workbook):
    """The terminal's first table, found whole in the html and the workbook (which may carry
    more columns: those left blank, or for a pen)."""
    header, rows = terminal[0]
    html_header, html_rows = next(t for t in pages if set(header) <= set(t[0]))
    assert _project(html_header, html_rows, header) == rows
    assert _project(html_header, xlsx_table(workbook, html_header), header) == rows
    return header, rows


def assert_same_everywhere(tmp_path, command, plan, expected, columns):
    """The headline table, the first the terminal prints, is the same in every output, and its
    ``columns`` (by heading) are what ``expected`` (from the JSON) says."""
    code, terminal, data, pages, workbook = outputs(tmp_path, *command, plan=plan)
    header, rows = same_table(terminal, pages, workbook)
    picked = _project(header, rows, columns)
    assert picked == expected(data), (picked, expected(data))
    return code, data


# The commands ------------------------------------------------------------------------------------

def _length(value_m, unit):
    digits = LENGTH_DIGITS[unit]
    text = f"{value_m / LENGTH_UNITS[unit]:.{digits}f}"
    return text[1:] if text.startswith("-") and float(text) == 0 else text


@pytest.mark.slow
@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_spot_ranks_the_same_everywhere(name, tmp_path):
    sensor, low, high, step = SPOT_REGIONS[name]
    folder = SAMPLES / name
    plan = deviation.read_plan(folder)
    unit = plan.site.units
    command = ("spot", folder, "--sensor", sensor, "--region", low, high, "--step", step,
               "--top", 5)

    def expected(data):
        return [[str(i), *(_length(v, unit) for v in s["position_m"]), f"{s['held']:.2f}",
                 s["worst_state"]] for i, s in enumerate(data["spots"], start=1)]

    budget_unit = plan.sensor(sensor).budget.unit
    code, data = assert_same_everywhere(
        tmp_path, command, plan, expected,
        ["#", f"x {unit}", f"y {unit}", f"z {unit}", f"held {budget_unit.label}",
         "worst state"])
    assert code == (0 if data["within_budget"] else 1)
    # The library's frame ranks the same spots with the same figures.
    frame = deviation.find_spots(plan, sensor, *(
        [float(v) * LENGTH_UNITS[unit] for v in corner.split(",")] for corner in (low, high)),
        parse_length(step, unit), top=5).to_frame()
    assert [f"{h:.2f}" for h in frame["held"]] == [f"{s['held']:.2f}" for s in data["spots"]]


def _electronic_expected(data):
    rows = []
    for s in data["sensors"]:
        used = [st for st in s["states"] if st["used"]] or s["states"]
        if s["kind"] == "total-field magnetometer":
            held = max(st["total_field_error_nt"] for st in used)
            within = all(st["within_budget"] for st in used)
            rows.append([s["sensor"], f"{held:.2f} nT", "within budget" if within
                         else "over budget"])
        else:
            grade = s["grade"]
            checks = all(st["model_check_ok"] for st in used)
            verdict = (grade["standing"] if checks or grade["standing"] == "over"
                       else "model check fails")
            rows.append([s["sensor"], f"{grade['held_deg']:.2f}°", verdict])
    return rows


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_electronic_verdicts_are_the_same_everywhere(name, tmp_path):
    folder = SAMPLES / name
    code, data = assert_same_everywhere(tmp_path, ("electronic", folder), None,
                                        _electronic_expected, ["sensor", "figure", "verdict"])
    assert code == (0 if all(r[2] in ("within", "within compensated", "within budget")
                             for r in _electronic_expected(data)) else 1)


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_per_ampere_rows_are_the_same_everywhere(name, tmp_path):
    folder = SAMPLES / name

    def expected(data):
        first = data["sensors"][0]["sensor"]
        return [[r["name"], f"{r['size_per_a']:.4f}"] for r in data["rows"]
                if r["sensor"] == first and r["row_kind"] == "circuit"]

    assert_same_everywhere(tmp_path, ("per-amp", folder), None, expected, ["circuit", "size"])


@pytest.mark.slow
@pytest.mark.parametrize("name", ["survey_drone", "cruising_sailboat"])
def test_area_places_are_the_same_everywhere(name, tmp_path):
    def expected(data):
        return [[p["place"], f"{p['horizontal']:.2f}", "within" if p["within_budget"] else "OVER"]
                for p in data["places"]]

    code, data = assert_same_everywhere(tmp_path, ("area", SAMPLES / name), None, expected,
                                        ["place", "H µT", "verdict"])
    assert code == (0 if data["within_budget_everywhere"] else 1)


def _signed(value):
    text = f"{value:+.2f}"
    return text[1:] if float(text) == 0 else text


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_the_switch_on_steps_are_the_same_everywhere(name, tmp_path):
    folder = SAMPLES / name
    plan = deviation.read_plan(folder)
    sensor = plan.sensors[0].name
    command = ("test-sheet", folder, "--sensor", sensor, "--heading", 90)

    def expected(data):
        return [[str(s["step"]), _signed(s["predicted_change_deg"])] for s in data["steps"]]

    terminal = run_cli(*command, "--width", 400)
    header, rows = terminal_tables(terminal.output)[0]
    data = json.loads(run_cli(*command, "--json").output)
    picked = [[row[header.index("step")], row[header.index("predicted change [°]")]]
              for row in rows]
    assert picked == expected(data)
    for suffix in ("html", "xlsx"):
        assert run_cli(*command, "--sheet", tmp_path / f"s.{suffix}").exit_code == 0
    html_header, html_rows = html_tables((tmp_path / "s.html").read_text(encoding="utf-8"))[0]
    column = html_header.index("predicted change [°]")
    assert [[r[0], r[column]] for r in html_rows] == expected(data)
    sheet = xlsx_table(tmp_path / "s.xlsx", html_header)
    assert [[r[0], r[column]] for r in sheet] == expected(data)
    # The library's own steps hold the same figures.
    test = switch_on_test(plan, sensor, 90.0)
    assert [_signed(r.predicted_change_deg) for r in test.rows] == [e[1] for e in
                                                                     expected(data)]


def _readings(plan, sensor, folder):
    """Switch-on results that read as planned, and a swing of the plan's own card."""
    test = switch_on_test(plan, sensor, 90.0)
    results = folder / "results.csv"
    with open(results, "w", newline="") as f:
        out = csv.writer(f)
        out.writerow(["circuit", "reading before", "reading after"])
        for row in test.rows[:3]:
            out.writerow([row.name, 100.0, round(100.0 + row.predicted_change_deg, 1)])
    card = deviation.deviation_cards(plan, sensor, 30.0)[0].states[0]
    swing = folder / "swing.csv"
    with open(swing, "w", newline="") as f:
        out = csv.writer(f)
        out.writerow(["state", "compass", "deviation"])
        # Compass = Magnetic - Deviation (east positive).
        for magnetic, deviation_deg in zip(card.headings_deg, card.deviation_deg):
            out.writerow([card.state, f"{(magnetic - deviation_deg) % 360:.1f}",
                          f"{abs(deviation_deg):.2f}{'E' if deviation_deg >= 0 else 'W'}"])
    return results, swing


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_read_back_and_swing_are_the_same_everywhere(name, tmp_path):
    folder = SAMPLES / name
    plan = deviation.read_plan(folder)
    sensor = plan.sensors[0].name
    results, swing = _readings(plan, sensor, tmp_path)

    def read_back(data):
        words = {"agrees": "agrees", "not read": "not read", "differs": "DIFFERS"}
        return [[str(r["row"]), _signed(r["predicted_change_deg"]),
                 words[r["status"]] + (": probable routing error" if r["status"] == "differs"
                                       and r["kind"] == "circuit" else "")]
                for r in data["rows"]]

    code, data = assert_same_everywhere(
        tmp_path, ("test-results", folder, results, "--sensor", sensor, "--heading", 90), plan,
        read_back, ["sheet row", "predicted °", "verdict"])
    assert code == (0 if data["agrees"] else 1)

    def coefficients(data):
        rows = []
        for st in data["states"]:
            rows.append([st["state"], "swing",
                         *(_signed(st["fitted_deg"][c]) for c in "ABCDE")])
        return rows

    tables = terminal_tables(run_cli("swing", folder, swing, "--sensor", sensor,
                                     "--width", 400).output)
    swing_data = json.loads(run_cli("swing", folder, swing, "--sensor", sensor,
                                    "--json").output)
    header, rows = tables[0]
    fitted = [[r[0], r[1], *r[2:7]] for r in rows if r[1] == "swing"]
    assert fitted == coefficients(swing_data)
    assert run_cli("swing", folder, swing, "--sensor", sensor, "--report",
                   tmp_path / "swing.html").exit_code == 0
    html_header, html_rows = html_tables((tmp_path / "swing.html").read_text(encoding="utf-8"))[0]
    assert [[r[0], r[1], *r[2:7]] for r in html_rows if r[1] == "swing"] == fitted


@pytest.mark.slow
@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_swing_state_ranks_the_same_everywhere(name, tmp_path):
    folder = SAMPLES / name

    def expected(data):
        first = data["sensors"][0]
        return [[str(i), c["reference_state"], c["worst_state"] or "—"]
                for i, c in enumerate(first["choices"], start=1)]

    def strip(rows):
        return [[r[0], r[1].replace("  (the plan's)", ""), r[2]] for r in rows]

    code, terminal, data, pages, workbook = outputs(tmp_path, "swing-state", folder, plan=None)
    header, rows = same_table(terminal, pages, workbook)
    picked = strip(_project(header, rows, ("#", "adjust and swing in", "in")))
    assert picked == expected(data)


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_refit_is_the_same_everywhere(name, tmp_path):
    new = tmp_path / "new"
    shutil.copytree(SAMPLES / name, new)
    states = (new / "states.csv").read_text(encoding="utf-8").splitlines()
    cells = states[1].split(",")
    cells[1] = str(float(cells[1] or 0) + 5)        # the first circuit draws 5 A more
    states[1] = ",".join(cells)
    (new / "states.csv").write_text("\n".join(states) + "\n", encoding="utf-8")

    def expected(data):
        return [[st["sensor"], f"{st['card_change_deg']:.2f}°",
                 "ADVISED" if st["swing_advised"] else "no"] for st in data["states"]]

    code, terminal, data, pages, workbook = outputs(tmp_path, "refit", SAMPLES / name, new,
                                                    plan=None)
    header, rows = same_table(terminal, pages, workbook)
    assert _project(header, rows, ("sensor", "card change", "new swing")) == expected(data)
    assert code == (1 if data["swing_advised"] else 0)
    frame = refit(deviation.read_plan(SAMPLES / name), deviation.read_plan(new)).to_frame()
    assert [f"{v:.2f}°" for v in frame["card_change_deg"]] == [e[1] for e in expected(data)]


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_at_80_columns_nothing_is_cut(name, tmp_path):
    """Every command at 80 columns: no line longer, no ellipsis, and every number of the
    headline table whole (a number cut across lines would leave a fragment in a cell)."""
    folder = SAMPLES / name
    plan = deviation.read_plan(folder)
    sensor = plan.sensors[0].name
    results, swing = _readings(plan, sensor, tmp_path)
    commands = [("check", folder, "--detail"), ("card", folder), ("electronic", folder),
                ("per-amp", folder), ("swing-state", folder),
                ("test-sheet", folder, "--sensor", sensor, "--heading", 90),
                ("test-results", folder, results, "--sensor", sensor, "--heading", 90),
                ("swing", folder, swing, "--sensor", sensor), ("refit", folder, folder)]
    for command in commands:
        result = run_cli(*command, "--width", 80)
        assert result.exit_code in (0, 1), (command, result.output)
        lines = result.output.splitlines()
        assert max(len(line.rstrip()) for line in lines) <= 80, command
        assert "…" not in result.output, command
        for _header, rows in terminal_tables(result.output):
            for row in rows:
                for text in row:
                    # A number's cell holds it whole: never a lone sign, point or unit.
                    assert not re.fullmatch(r"[-+.°%]|\d+\.", text), (command, row)
