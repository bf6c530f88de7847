"""Text that is text, on the way out: what a plan's names can do to a terminal, a spreadsheet
opening a CSV file, and an xlsx workbook.

Sources: ECMA-48 (control functions: ESC starts a sequence, BEL ends an OSC title, 0x9B is CSI);
Unicode Standard Annex #9 (the bidirectional overrides U+202A-U+202E and isolates
U+2066-U+2069); OWASP, "CSV Injection" (a cell starting with =, +, -, @, tab or carriage return
runs as a formula; prefix it with a single quote); XML 1.0 section 2.2 (the characters a document
may hold: no C0 control but tab, newline and carriage return).
"""

from __future__ import annotations

import csv
import io
import json
import re
from dataclasses import replace

import openpyxl
import pytest

import deviation
from conftest import SAMPLES, run_cli, straight_wire_plan, write_plan
from deviation.text import REPLACEMENT, csv_cell, json_text, terminal_text, xlsx_value

#: A name from someone else: retitles the window (OSC 0 ... BEL), erases the line (CSI 2K),
#: a NUL, a one-byte CSI (0x9B, ECMA-48 C1), and a right-to-left override.
HOSTILE = "wind\x1b]0;pwned\x07\x00lass\x1b[2K\x9b31m\u202eevil"


def test_terminal_text_shows_every_control_as_a_replacement_and_keeps_lines():
    assert terminal_text(HOSTILE) == ("wind\ufffd]0;pwned\ufffd\ufffdlass\ufffd[2K\ufffd31m"
                                      "\ufffdevil")
    assert terminal_text("a\tb\nc") == "a\tb\nc"          # tab and newline are layout
    assert terminal_text("\r") == REPLACEMENT              # a carriage return overwrites a line
    assert terminal_text("µT ±0.3° ≤ — café") == "µT ±0.3° ≤ — café"


def test_json_text_escapes_what_json_leaves_raw_and_parses_to_the_same_value():
    document = {"run": HOSTILE + "\u2028\x7f"}
    dumped = json.dumps(document, ensure_ascii=False)
    assert "\x9b" in dumped and "\u202e" in dumped         # RFC 8259 leaves these raw
    safe = json_text(dumped)
    assert not re.search("[\x00-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]", safe)
    assert json.loads(safe) == document


@pytest.mark.parametrize("cell, written", [
    ("=HYPERLINK(\"http://example.invalid\")", "'=HYPERLINK(\"http://example.invalid\")"),
    ("+1+cmd", "'+1+cmd"), ("-2+3", "'-2+3"), ("@SUM(A1:A2)", "'@SUM(A1:A2)"),
    ("\t=1", "'\t=1"), ("\r=1", "'\r=1"), ("\0x", "'\0x"),
    ("-1.25", "-1.25"), ("+3", "+3"), ("-1e-06", "-1e-06"),    # numbers stay numbers
    ("bilge pump", "bilge pump"), ("a=b", "a=b"), ("", ""),
    (-1.5, -1.5), (0, 0), (None, None),
])
def test_csv_cells_that_a_spreadsheet_would_run_get_a_quote(cell, written):
    # OWASP CSV Injection: prepend a single quote to a cell that starts with = + - @ tab or CR.
    assert csv_cell(cell) == written


def test_xlsx_values_lose_what_xml_cannot_hold():
    assert xlsx_value("a\x00b\x1bc\td\ne\rf") == "a\ufffdb\ufffdc\td\ne\rf"
    assert xlsx_value(2.5) == 2.5


# Through the renderers and the command line ------------------------------------------------------

def _hostile_plan():
    """The sailboat with a run and a state named by someone hostile (made in Python, past the
    reader, as a library user may)."""
    plan = deviation.read_plan(SAMPLES / "cruising_sailboat")
    states = tuple(HOSTILE if s == "anchoring" else s for s in plan.state_names)
    return replace(plan, runs=(replace(plan.runs[0], name=HOSTILE),) + plan.runs[1:],
                   state_names=states)


def test_a_hostile_name_reaches_the_terminal_only_as_text():
    from deviation.render.documents.check import check_document
    from deviation.render.terminal import Console, write_document

    document = check_document(deviation.check(_hostile_plan()), all_runs=True)
    out = io.StringIO()
    write_document(document, Console(file=out, force_terminal=True, width=200), detail=True)
    text = out.getvalue()
    assert "pwned" in text and "\ufffd]0;pwned" in text    # the name is shown, disarmed
    # The only escape sequences left are the console's own colours (CSI ... m).
    assert set(re.findall(r"\x1b(.)", text)) == {"["}
    assert set(re.findall(r"\x1b\[[0-9;]*(.)", text)) == {"m"}
    assert not re.search("[\x00\x07\x9b\u202e]", text)


def test_a_hostile_name_in_a_message_on_stderr_is_disarmed(tmp_path):
    plan = write_plan(tmp_path / "plan", straight_wire_plan())
    result = run_cli("check", plan, "--fixes-for", HOSTILE)
    assert result.exit_code == 2
    assert "pwned" in result.stderr
    assert not re.search("[\x00\x07\x1b\x9b\u202e]", result.stderr)


def test_xlsx_writers_take_names_xml_cannot_hold(tmp_path):
    # openpyxl raises IllegalCharacterError for these characters; every workbook writer cleans.
    from deviation.aftercare import switch_on_test
    from deviation.render.documents.aftercare import test_sheet_document
    from deviation.render.reports import write_report
    from deviation.template import write_plan as write_workbook

    plan = _hostile_plan()
    from deviation.render.documents.check import check_document

    write_report(check_document(deviation.check(plan), all_runs=True), tmp_path / "report.xlsx",
                 plan.source)
    write_report(test_sheet_document(switch_on_test(plan, "helm compass", 90.0)),
                 tmp_path / "sheet.xlsx", plan.source)
    write_workbook(plan, tmp_path / "plan.xlsx")
    for name in ("report.xlsx", "sheet.xlsx", "plan.xlsx"):
        cells = [v for sheet in openpyxl.load_workbook(tmp_path / name).worksheets
                 for row in sheet.iter_rows(values_only=True) for v in row if isinstance(v, str)]
        shown = [v for v in cells if "pwned" in v]
        assert shown, name                                 # the name reached the workbook
        assert all("\ufffd]0;pwned\ufffd\ufffdlass" in v for v in shown), name


def test_per_amp_csv_escapes_formulas_and_keeps_numbers(tmp_path):
    sheets = straight_wire_plan()
    sheets["runs"][1][1] = '=HYPERLINK("http://example.invalid","x")'
    sheets["runs"].append(["second", "-2+3", "-50, 0.2, -0.5 > 50, 0.2, -0.5", "none", "", "", "",
                           ""])
    sheets["states"] = [["circuit", "on"], ['=HYPERLINK("http://example.invalid","x")', 10],
                        ["-2+3", -4]]
    sheets["sensors"][1][2] = "electronic compass"
    plan = write_plan(tmp_path / "plan", sheets)
    target = tmp_path / "per-amp.csv"
    result = run_cli("per-amp", plan, "--csv", target)
    assert result.exit_code == 0, result.output
    rows = list(csv.DictReader(target.open(encoding="utf-8")))
    names = {row["name"] for row in rows}
    assert "'=HYPERLINK(\"http://example.invalid\",\"x\")" in names and "'-2+3" in names
    number = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")
    for row in rows:
        for key, value in row.items():
            if value[:1] in ("=", "+", "-", "@", "\t", "\r"):
                assert number.fullmatch(value), (key, value)      # only numbers start so
    assert any(row["vessel_y_per_a"].startswith("-") for row in rows)   # negative numbers kept
