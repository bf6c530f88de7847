"""Inputs that are hostile, absurd or garbled: each a located finding (exit status 2), never a hang,
a read of something that is not a sheet, a crash in a writer, or a figure that is not finite.

The cases and what the tool says are listed in docs/robustness.md ("Reading files", "Text that is
text", "Numbers within physics", "Tables given in Python", "Messages that say what is wrong").
"""

import csv
import datetime as dt
import io
import os
import re
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest

from conftest import SAMPLES, straight_wire_plan, write_plan
from conftest import run_cli as run
from deviation import sheets as sheets_module
from deviation.aftercare import ReadingsError, read_swing, read_switch_on_results
from deviation.errors import InputError, Problem
from deviation.plan import PlanError
from deviation.reader import plan_from_tables, read_plan
from deviation.sheets import Collector, read_bytes
from deviation.template import write_plan as write_plan_xlsx

POSIX = pytest.mark.skipif(os.name != "posix", reason="FIFOs and symbolic links as POSIX has them")


def findings_of(path):
    with pytest.raises(PlanError) as caught:
        read_plan(path)
    return list(caught.value.findings)


def lines_of(path):
    return [str(f) for f in findings_of(path)]


def refused(path, *args):
    """Run check on ``path``; it must exit 2 with findings and no traceback, quickly."""
    started = time.perf_counter()
    result = run("check", path, *args)
    assert time.perf_counter() - started < 20
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    return result.output


# Reads that are bounded (issue 19.2) -------------------------------------------------------------

@POSIX
def test_a_fifo_named_runs_csv_is_a_finding_not_a_hang(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    (folder / "runs.csv").unlink()
    os.mkfifo(folder / "runs.csv")
    # In a child with a deadline: a read that blocks would hang the test run itself.
    done = subprocess.run([sys.executable, "-m", "deviation.cli", "check", str(folder)],
                          capture_output=True, text=True, timeout=60)
    assert done.returncode == 2, done.stderr
    assert f"{folder}: runs: runs.csv is a named pipe (FIFO), not a file; a sheet must be a " \
           "file" in done.stderr


@POSIX
def test_a_fifo_named_plan_xlsx_is_a_finding_not_a_hang(tmp_path):
    path = tmp_path / "plan.xlsx"
    os.mkfifo(path)
    done = subprocess.run([sys.executable, "-m", "deviation.cli", "check", str(path)],
                          capture_output=True, text=True, timeout=60)
    assert done.returncode == 2, done.stderr
    assert "plan.xlsx is a named pipe (FIFO), not a file; a workbook must be a file" in done.stderr


@POSIX
def test_a_link_to_dev_zero_is_not_read(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    (folder / "runs.csv").unlink()
    (folder / "runs.csv").symlink_to("/dev/zero")
    [line] = lines_of(folder)
    assert line == (f"{folder}: runs: runs.csv is a link to a file outside the plan's folder; it "
                    "was not read (copy the sheet into the folder)")


@POSIX
def test_a_device_is_not_read_even_where_links_are_allowed():
    collector = Collector("x")
    assert read_bytes("/dev/zero", collector, "runs", 1000) is None
    assert collector.findings[0].message == "zero is a device, not a file; a sheet must be a file"


def test_a_folder_named_runs_csv_is_a_finding(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    (folder / "runs.csv").unlink()
    (folder / "runs.csv").mkdir()
    [finding] = findings_of(folder)
    assert str(finding) == f"{folder}: runs: runs.csv is a folder, not a file; a sheet must be a file"
    assert (finding.sheet, finding.kind) == ("runs", Problem.FILE)
    refused(folder)


@POSIX
def test_a_link_out_of_the_folder_is_refused_and_its_content_never_quoted(tmp_path):
    secret = tmp_path / "secret.txt"
    secret.write_text("root:x:0:0:not-for-the-report:/root:/bin/bash\n")
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    (folder / "runs.csv").unlink()
    (folder / "runs.csv").symlink_to(secret)
    output = refused(folder)
    assert "runs.csv is a link to a file outside the plan's folder; it was not read" in output
    assert "not-for-the-report" not in output and "/bin/bash" not in output


@POSIX
def test_a_link_within_the_folder_is_read(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    (folder / "runs.csv").rename(folder / "runs-v2.txt")
    (folder / "runs.csv").symlink_to("runs-v2.txt")
    assert read_plan(folder).runs[0].name == "long feed"


@POSIX
def test_a_broken_link_is_a_finding(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    (folder / "runs.csv").unlink()
    (folder / "runs.csv").symlink_to(folder / "gone.csv")
    [line] = lines_of(folder)
    assert line.endswith("runs: runs.csv is a link to nothing (its target is missing); not read")


def test_the_size_cap_holds_while_reading_whatever_the_file_system_says(tmp_path, monkeypatch):
    # A file whose reported size lies (procfs files report 0; a file can grow after the stat):
    # the cap is applied to the bytes read, not only to st_size.
    path = tmp_path / "runs.csv"
    path.write_bytes(b"x" * 5000)
    real_stat = os.stat

    def lying_stat(target, *args, **kwargs):
        result = real_stat(target, *args, **kwargs)
        return os.stat_result((result.st_mode, result.st_ino, result.st_dev, result.st_nlink,
                               result.st_uid, result.st_gid, 0, result.st_atime, result.st_mtime,
                               result.st_ctime))

    monkeypatch.setattr(sheets_module.os, "stat", lying_stat)
    read = []
    real_fdopen = os.fdopen

    class Counted(io.RawIOBase):
        def __init__(self, handle):
            self.handle = handle

        def read(self, size=-1):
            data = self.handle.read(size)
            read.append(len(data))
            return data

        def fileno(self):
            return self.handle.fileno()

        def close(self):
            self.handle.close()

    monkeypatch.setattr(sheets_module.os, "fdopen",
                        lambda *args, **kwargs: Counted(real_fdopen(*args, **kwargs)))
    collector = Collector("x")
    assert read_bytes(path, collector, "runs", 1000) is None
    assert sum(read) == 1001                     # reading stopped one byte past the cap
    assert collector.findings[0].message == "runs.csv is more than the 0 MB a sheet may be"
    assert collector.findings[0].kind == Problem.FILE
    collector = Collector("x")
    assert read_bytes(path, collector, "runs", 5000) == b"x" * 5000 and not collector.findings


def test_a_large_csv_sheet_is_refused_unread(tmp_path, monkeypatch):
    monkeypatch.setattr(sheets_module, "MAX_SHEET_BYTES", 1000)
    sheets = straight_wire_plan()
    sheets["runs"] += [[f"r{i}", "feed", "0,1,0 > 1,1,0", "none"] for i in range(100)]
    folder = write_plan(tmp_path / "p", sheets)
    [line] = lines_of(folder)
    assert re.fullmatch(rf"{re.escape(str(folder))}: runs: runs.csv is \d MB, more than the 0 MB "
                        "a sheet may be", line), line


@pytest.mark.parametrize("members, limit", [
    ({"xl/worksheets/sheet1.xml": 60_000_000},
     "one part (xl/worksheets/sheet1.xml) would be 60 MB, more than the 50 MB a sheet may be"),
    ({f"xl/worksheets/sheet{i}.xml": 40_000_000 for i in range(1, 4)},
     "more than the 100 MB a workbook may unpack to"),
    ({"xl/worksheets/sheet1.xml": 30_000_000},
     "times its packed size, more than the 200 times a saved workbook ever expands"),
])
def test_a_zip_bomb_is_refused_naming_the_limit_it_breaks(tmp_path, members, limit):
    # Each refusal names the limit that refuses it, and that limit is below the size refused
    # (it named 105 MB for a 63 MB bomb).
    path = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, size in members.items():
            archive.writestr(name, b"0" * size)
    output = refused(path)
    assert "refused as unsafe: " in output and limit in output
    unpacked = int(re.search(r"would unpack to (\d+) MB", output).group(1))
    named = re.search(r"more than the (\d+) (MB|times)", output)
    if named.group(2) == "MB":
        assert int(named.group(1)) < unpacked


def test_a_workbook_is_read_sheet_by_sheet_and_an_unrelated_sheet_is_never_parsed(tmp_path):
    # An unrelated sheet whose XML is not even XML: the plan still reads, since only the plan's
    # own sheets are parsed (bench/bench_workbook.py measures the time and memory this saves).
    path = tmp_path / "plan.xlsx"
    write_plan_xlsx(read_plan(SAMPLES / "cruising_sailboat"), path)
    book = openpyxl.load_workbook(path)
    book.create_sheet("log").append(["time", "volts"])
    book.save(path)
    member = f"xl/worksheets/sheet{openpyxl.load_workbook(path).sheetnames.index('log') + 1}.xml"
    _rewrite(path, member, lambda data: data[:200] + b"<not xml" + b"\x00" * 1000)
    plan = read_plan(path)
    assert [r.name for r in plan.runs] == [r.name for r in read_plan(SAMPLES / "cruising_sailboat").runs]


def _rewrite(path, member, change):
    with zipfile.ZipFile(path) as archive:
        contents = {i.filename: archive.read(i.filename) for i in archive.infolist()}
    contents[member] = change(contents[member])
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, data in contents.items():
            archive.writestr(name, data)


def test_a_sheet_claiming_a_huge_size_is_read_as_stored(tmp_path):
    # A dimension tag claiming A1:XFD1048576 must not make every row 16 384 cells wide.
    path = tmp_path / "plan.xlsx"
    write_plan_xlsx(read_plan(SAMPLES / "cruising_sailboat"), path)
    index = openpyxl.load_workbook(path).sheetnames.index("runs") + 1
    _rewrite(path, f"xl/worksheets/sheet{index}.xml",
             lambda data: re.sub(rb'<dimension ref="[^"]*"/>', b'<dimension ref="A1:XFD1048576"/>',
                                 data))
    started = time.perf_counter()
    assert read_plan(path).runs
    assert time.perf_counter() - started < 10


# Text that is text (issue 19.3) ------------------------------------------------------------------

CONTROLS = {"ESC": "\x1b]0;owned\x07", "BEL": "\x07", "NUL": "\x00", "DEL": "\x7f", "CSI": "\x9b",
            "RIGHT-TO-LEFT OVERRIDE": "\u202e"}


@pytest.mark.parametrize("name, characters", CONTROLS.items())
def test_a_control_character_in_a_name_is_a_located_finding(tmp_path, name, characters):
    sheets = straight_wire_plan()
    sheets["runs"][1][0] = f"long{characters}feed"
    folder = tmp_path / "p"
    folder.mkdir()
    for sheet, rows in sheets.items():                 # written as bytes: Python 3.10's csv
        text = "\n".join(",".join(f'"{c}"' for c in map(str, row)) for row in rows) + "\n"
        (folder / f"{sheet}.csv").write_bytes(text.encode("utf-8"))
    [finding] = findings_of(folder)
    assert (finding.sheet, finding.row, finding.column, finding.kind) == (
        "runs", 2, "run", Problem.CONTROL_CHARACTER)
    assert f"{name} (U+" in finding.message
    output = refused(folder)
    assert not any(c in output for c in "\x1b\x07\x00\x7f\x9b\u202e")


def test_control_characters_in_a_workbook_cell_are_found(tmp_path):
    # openpyxl writes no control character, so the cell is written as the XML escape a
    # spreadsheet uses for one (_x001B_), which openpyxl reads back as ESC.
    path = tmp_path / "plan.xlsx"
    write_plan_xlsx(read_plan(SAMPLES / "cruising_sailboat"), path)
    index = openpyxl.load_workbook(path).sheetnames.index("runs") + 1
    _rewrite(path, f"xl/worksheets/sheet{index}.xml",
             lambda data: data.replace(b"windlass feed", b"windlass_x001B_[31m feed", 1))
    lines = [str(f) for f in findings_of(path)]
    assert any("runs row 2, run: the cell holds a control character, ESC (U+001B)" in line
               for line in lines), lines


def test_a_control_character_in_a_header_and_in_a_note_is_found(tmp_path):
    tables = straight_wire_plan()
    tables["runs"] = [row[:] + [""] for row in tables["runs"]]
    tables["runs"][0][-1], tables["runs"][1][-1] = "note\x07", "ring\x07"
    with pytest.raises(PlanError) as caught:
        plan_from_tables(tables)
    assert [(f.row, f.kind) for f in caught.value.findings] == [
        (1, Problem.CONTROL_CHARACTER), (2, Problem.CONTROL_CHARACTER)]


def test_a_plan_with_control_characters_never_reaches_a_writer(tmp_path):
    # The writers crashed on ESC (IllegalCharacterError); now the plan is refused before them.
    sheets = straight_wire_plan()
    sheets["runs"][1][0] = "feed\x1b"
    folder = write_plan(tmp_path / "p", sheets)
    for args in (("check", folder, "--report", tmp_path / "r.xlsx"),
                 ("new", tmp_path / "copy.xlsx", "--from", folder),
                 ("test-sheet", folder, "--sensor", "compass", "--heading", 0, "--sheet",
                  tmp_path / "t.xlsx")):
        result = run(*args)
        assert result.exit_code == 2, (args, result.output)
        assert "control character, ESC (U+001B)" in result.output
    assert not list(tmp_path.glob("*.xlsx"))


def test_a_control_character_in_readings_is_a_finding(tmp_path):
    plan = read_plan(write_plan(tmp_path / "p", straight_wire_plan()))
    path = tmp_path / "swing.csv"
    path.write_bytes(b"compass,deviation\n0,1E\x1b[2J\n")
    with pytest.raises(ReadingsError) as caught:
        read_swing(path, plan)
    [finding] = caught.value.findings
    assert finding.kind == Problem.CONTROL_CHARACTER and finding.row == 2


# Numbers within physics (issue 19.4) -------------------------------------------------------------

def _with(change):
    sheets = straight_wire_plan()
    change(sheets)
    return sheets


ABSURD = {
    "a coordinate of 1e300": (
        lambda s: s["runs"][1].__setitem__(2, "-50, 0, -0.5 > 1e300, 0, -0.5"),
        'runs row 2, route: "1e300, 0, -0.5" lies 1e+300 m from the plan\'s origin, more than '
        "the 10 km a plan's points may lie"),
    "a coordinate 20 km out": (
        lambda s: s["sensors"][1].__setitem__(1, "20000, 0, 0"),
        'sensors row 2, at: "20000, 0, 0" lies 20000 m from the plan\'s origin'),
    "a point at 1e300": (
        lambda s: s.__setitem__("points", [["point", "x", "y", "z"], ["p", "1e300", 0, 0]]),
        'points row 2, x: "1e300" is 1e+300 m, more than the 10 km a point may lie from the '
        "plan's origin"),
    "a spacing of 1e300 mm": (
        lambda s: (s["runs"][1].__setitem__(3, "paired"), s["runs"][1].__setitem__(5, "1e300 mm")),
        'runs row 2, spacing: "1e300 mm" is 1e+297 m, more than the 10 km any length in a plan '
        "may be"),
    "a spacing longer than the run": (
        lambda s: (s["runs"][1].__setitem__(3, "paired"), s["runs"][1].__setitem__(5, "150 m")),
        "runs row 2, spacing: a spacing of 150.00 m is more than the run's whole length "
        "(100.00 m)"),
    "a current of 1e300 A": (
        lambda s: s["states"][1].__setitem__(1, "1e300"),
        "states row 2, on: 1e+300 A is more than the 100,000 A any plan has"),
    "a labelled safe distance of 1e30 m": (
        lambda s: s.__setitem__("equipment", [["item", "at", "safe_distance", "safe_distance_for"],
                                              ["speaker", "1, 0, 0", "1e30 m", "standard"]]),
        'equipment row 2, safe_distance: "1e30 m" is 1e+30 m, more than the 100 m a compass '
        "safe distance label gives"),
    "a moment of 1e300 A m2": (
        lambda s: s.__setitem__("equipment", [["item", "at", "moment_am2"],
                                              ["magnet", "1, 0, 0", "1e300"]]),
        "equipment row 2, moment_am2: 1e+300 A·m² is more than the 1,000,000 A·m² any plan has"),
    "untwisted ends longer than the run": (
        lambda s: (s["runs"][0].append("untwisted_ends"),
                   s["runs"][1].__setitem__(3, "twisted"), s["runs"][1].__setitem__(5, "6 mm"),
                   s["runs"][1].__setitem__(6, "30 mm"), s["runs"][1].append("120")),
        "runs row 2, untwisted_ends: untwisted ends of 120.00 m at each end take the whole run "
        "(100.00 m long), so none of it is twisted"),
    "a lay of 1e-300 mm": (
        lambda s: (s["runs"][1].__setitem__(3, "twisted"), s["runs"][1].__setitem__(5, "6 mm"),
                   s["runs"][1].__setitem__(6, "1e-300 mm")),
        "runs row 2, lay: a twisted run of 100.0 m with a 1e-300 mm lay needs 2.4e+306 segments, "
        "more than the 2,000,000 a run may have"),
    "infinity as a current": (
        lambda s: s["states"][1].__setitem__(1, "inf"),
        'states row 2, on: "inf" is not a current in amperes (not a finite number)'),
    "a heel of NaN": (
        lambda s: s["sensors"][1].__setitem__(5, "nan"),
        'sensors row 2, max_heel_deg: "nan" is not a number of degrees'),
}


@pytest.mark.parametrize("case", ABSURD)
def test_an_absurd_number_is_a_located_finding_with_sensible_digits(tmp_path, case):
    change, expected = ABSURD[case]
    folder = write_plan(tmp_path / "p", _with(change))
    lines = [line.split(": ", 1)[1] for line in lines_of(folder)]
    assert any(line.startswith(expected) for line in lines), lines
    output = refused(folder)
    assert not re.search(r"\d{13,}", output)                # never 31 digits of a float


def test_figures_at_the_edge_of_the_ranges_are_read(tmp_path):
    # 9.9 km out, 99 kA and a 99 m label are odd but possible figures; they are read.
    sheets = straight_wire_plan()
    sheets["points"] = [["point", "x", "y", "z"], ["far", "9900 m", 0, 0]]
    sheets["states"][1][1] = 99_000
    sheets["equipment"] = [["item", "at", "safe_distance", "safe_distance_for"],
                           ["radar", "far", "99 m", "steering"]]
    plan = read_plan(write_plan(tmp_path / "p", sheets))
    assert plan.points[0][1][0] == 9900.0 and plan.equipment[0].safe_distance_m == 99.0


# Tables given in Python (issue 19.6) -------------------------------------------------------------

@pytest.mark.parametrize("tables, message", [
    ({**straight_wire_plan(), "site": 42}, "site: a table is a DataFrame, a list of dicts or a "
                                           "list of rows (the header first), not an int"),
    (list(straight_wire_plan().items()), "the tables are a mapping of sheet name to table (a "
                                         "dict), not a list"),
    ({**straight_wire_plan(), "runs": "run,route"}, "runs: a table is a DataFrame, a list of "
                                                    "dicts or a list of rows (the header first), "
                                                    "not a str"),
    ({**straight_wire_plan(), "runs": [1, 2]}, "runs row 1: a row is a list of cells, not an int"),
])
def test_wrong_containers_are_plan_errors(tables, message):
    with pytest.raises(PlanError) as caught:
        plan_from_tables(tables)
    assert [f.message if f.sheet is None else f"{f.sheet}{'' if f.row is None else f' row {f.row}'}"
            f": {f.message}" for f in caught.value.findings] == [message]


@pytest.mark.parametrize("missing", [None, float("nan"), np.nan, pd.NA], ids=repr)
@pytest.mark.parametrize("container", ["list of rows", "list of dicts", "DataFrame"])
def test_a_missing_current_is_blank_in_every_kind_of_table(container, missing):
    # One rule (docs/robustness.md): None, NaN and pandas' NA are blank cells; a blank current
    # is 0 A (off), as in a spreadsheet.
    tables = straight_wire_plan(states=[["circuit", "on", "off"], ["feed", 10.0, missing]])
    rows = tables["states"]
    if container == "list of dicts":
        tables["states"] = [dict(zip(rows[0], r)) for r in rows[1:]]
    elif container == "DataFrame":
        tables["states"] = pd.DataFrame(rows[1:], columns=rows[0])
    plan = plan_from_tables(tables)
    assert plan.run_currents_a.tolist() == [[10.0, 0.0]]


@pytest.mark.parametrize("name", [float("nan"), pd.NA, "NaN", "nan", "None", "<NA>"], ids=repr)
def test_a_name_that_is_a_missing_value_is_refused(name):
    tables = straight_wire_plan()
    tables["runs"] = pd.DataFrame(tables["runs"][1:], columns=tables["runs"][0])
    tables["runs"].loc[0, "run"] = name
    with pytest.raises(PlanError) as caught:
        plan_from_tables(tables)
    [finding] = caught.value.findings
    assert (finding.sheet, finding.row, finding.column) == ("runs", 2, "run")
    assert finding.kind in (Problem.MISSING, Problem.NOT_A_VALUE)


@pytest.mark.parametrize("at", [(0, 0, 0), [0.0, 0.0, 0.0], np.zeros(3), ("0 m", "0 mm", "0 in")],
                         ids=["tuple", "list", "array", "texts with units"])
def test_a_point_may_be_a_tuple_or_an_array(at):
    tables = straight_wire_plan()
    tables["sensors"] = [{"sensor": "compass", "at": at, "kind": "magnetic compass",
                          "budget_deg": 1}]
    plan = plan_from_tables(tables)
    assert plan.sensors[0].position_m.tolist() == [0.0, 0.0, 0.0]
    # The same figure as the plan written as text (long wire, 0.5 m below).
    text = plan_from_tables(straight_wire_plan())
    assert plan.runs[0].geometry.route_m.tolist() == text.runs[0].geometry.route_m.tolist()


def test_a_route_may_be_a_list_of_points_and_an_axis_a_tuple():
    tables = straight_wire_plan()
    tables["runs"] = [{"run": "long feed", "circuits": "feed",
                       "route": [(-50, 0, -0.5), "0, 0, -0.5", np.array([50, 0, -0.5])],
                       "return": "none"}]
    tables["equipment"] = [{"item": "magnet", "at": (1, 0, 0), "moment_am2": 2.0,
                            "axis": (0, 0, 2)}]
    plan = plan_from_tables(tables)
    assert plan.runs[0].geometry.route_m.tolist() == [[-50, 0, -0.5], [0, 0, -0.5], [50, 0, -0.5]]
    assert plan.equipment[0].axis.tolist() == [0, 0, 1]


def test_a_point_of_two_coordinates_is_refused():
    tables = straight_wire_plan()
    tables["sensors"] = [{"sensor": "compass", "at": (0, 0), "kind": "magnetic compass",
                          "budget_deg": 1}]
    with pytest.raises(PlanError, match=r"sensors row 2, at: \(0, 0\) is not x, y, z: a position "
                                        "is three coordinates"):
        plan_from_tables(tables)


# The message that says what is wrong (issue 19.7) ------------------------------------------------

@pytest.mark.parametrize("where, value", [("states", "−12"), ("spacing", "−6 mm"),
                                          ("route", "−50, 0, −0.5 > 50, 0, -0.5")])
def test_the_unicode_minus_is_named(tmp_path, where, value):
    sheets = straight_wire_plan(kind="paired" if where == "spacing" else "none")
    if where == "states":
        sheets["states"][1][1] = value
    elif where == "spacing":
        sheets["runs"][1][5] = value
    else:
        sheets["runs"][1][2] = value
    [line] = lines_of(write_plan(tmp_path / "p", sheets))
    assert "has a minus sign (U+2212), which is not read as a minus; type the minus as \"-\"" in line


def test_a_comma_between_state_names_says_use_semicolons(tmp_path):
    sheets = straight_wire_plan(states=[["circuit", "harbour", "night"], ["feed", 1, 2]])
    sheets["sensors"][0].append("used_in")
    sheets["sensors"][1].append("harbour, night")
    [line] = lines_of(write_plan(tmp_path / "p", sheets))
    assert line.endswith('sensors row 2, used_in: "harbour, night" names states separated by ","; '
                         "use ; between states (harbour; night)")


def test_a_comma_between_circuit_names_says_use_semicolons(tmp_path):
    sheets = straight_wire_plan(states=[["circuit", "on"], ["feed", 1], ["pump", 2]])
    sheets["runs"][1][1] = "feed, pump"
    lines = lines_of(write_plan(tmp_path / "p", sheets))
    assert any(line.endswith('runs row 2, circuits: "feed, pump" names circuits separated by ","; '
                             "use ; between circuits (feed; pump)") for line in lines), lines


def test_a_renamed_sheet_is_suggested_in_a_folder_and_a_workbook(tmp_path):
    sheets = straight_wire_plan()
    sheets["cable runs"] = sheets.pop("runs")
    folder = write_plan(tmp_path / "p", sheets)
    assert lines_of(folder) == [f'{folder}: runs: the sheet is missing; found a file named "cable '
                                'runs.csv": did you mean runs.csv? (rename it)']
    path = tmp_path / "plan.xlsx"
    write_plan_xlsx(read_plan(SAMPLES / "cruising_sailboat"), path)
    book = openpyxl.load_workbook(path)
    book["runs"].title = "Cable runs"
    book.save(path)
    assert lines_of(path) == [f'{path}: runs: the sheet is missing; found a sheet named "Cable '
                              'runs": did you mean runs? (rename it)']


def test_a_cell_the_spreadsheet_turned_into_a_date_says_so(tmp_path):
    # A run named 1-2 typed into a spreadsheet becomes the 1st of February.
    path = tmp_path / "plan.xlsx"
    write_plan_xlsx(read_plan(SAMPLES / "cruising_sailboat"), path)
    book = openpyxl.load_workbook(path)
    book["runs"]["A2"] = dt.datetime(2027, 2, 1)
    book.save(path)
    [finding] = findings_of(path)
    assert (finding.sheet, finding.row, finding.column, finding.kind) == (
        "runs", 2, "run", Problem.SPREADSHEET_DATE)
    assert finding.message == ("the spreadsheet turned this cell into a date (2027-02-01); format "
                               "the cell as text (or as a number) and type the value again")


def test_a_date_in_a_note_or_an_unknown_column_is_only_text(tmp_path):
    path = tmp_path / "plan.xlsx"
    write_plan_xlsx(read_plan(SAMPLES / "cruising_sailboat"), path)
    book = openpyxl.load_workbook(path)
    sheet = book["runs"]
    sheet.cell(1, sheet.max_column + 1, "installed on")
    sheet.cell(2, sheet.max_column, dt.date(2026, 5, 1))
    book.save(path)
    assert read_plan(path).runs


def test_a_spreadsheet_error_value_is_named(tmp_path):
    sheets = straight_wire_plan()
    sheets["states"][1][1] = "#DIV/0!"
    [line] = lines_of(write_plan(tmp_path / "p", sheets))
    assert line.endswith("states row 2, on: the cell holds the spreadsheet error #DIV/0!: a "
                         "formula there failed; correct it, or type the value")


@pytest.mark.parametrize("sheet, header, rows", [
    ("equipment", ["item", "at", "moment_am2"], [["magnet", "1, 0, 0", 1], ["Magnet", "2, 0, 0", 1]]),
    ("spots", ["spot", "at"], [["shelf", "1, 0, 1"], ["shelf ", "2, 0, 1"]]),
])
def test_a_name_given_twice_is_refused_in_every_sheet(tmp_path, sheet, header, rows):
    sheets = straight_wire_plan()
    sheets[sheet] = [header] + rows
    [finding] = findings_of(write_plan(tmp_path / "p", sheets))
    assert (finding.sheet, finding.row, finding.kind) == (sheet, 3, Problem.DUPLICATE)
    assert finding.message.endswith("is named twice")


def test_a_site_setting_given_twice_is_refused(tmp_path):
    sheets = straight_wire_plan()
    sheets["site"].append(["horizontal_field_ut", 30])
    [line] = lines_of(write_plan(tmp_path / "p", sheets))
    assert line.endswith("site row 4, setting: horizontal_field_ut is given twice (rows 2 and 4); "
                         "keep one")


def test_two_files_for_one_sheet_are_refused(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    (folder / "Runs.csv").write_bytes((folder / "runs.csv").read_bytes())
    [line] = lines_of(folder)
    assert "two files are the runs sheet: Runs.csv and runs.csv; keep one" in line


def test_refit_of_plans_that_share_nothing_exits_2(tmp_path):
    result = run("refit", SAMPLES / "cruising_sailboat", SAMPLES / "camper_van")
    assert result.exit_code == 2, result.output
    assert "the two plans share no sensor and no state" in result.output
    assert "No new swing" not in result.output


def test_refit_of_plans_that_share_no_state_is_an_input_error(tmp_path):
    from deviation.aftercare import refit

    plan = read_plan(write_plan(tmp_path / "a", straight_wire_plan()))
    other = read_plan(write_plan(tmp_path / "b", straight_wire_plan(
        states=[["circuit", "night"], ["feed", 10]])))
    with pytest.raises(InputError) as caught:
        refit(plan, other)
    assert caught.value.kind == Problem.INCONSISTENT
    assert str(caught.value).startswith("the two plans share no state (states earlier: on, now: "
                                        "night)")


# Readings (switch-on and swing) through the same reader (issue 18.6) -----------------------------

def _loop_plan(tmp_path):
    sheets = straight_wire_plan(states=[["circuit", "off", "on"], ["feed", 0, 10]])
    return read_plan(write_plan(tmp_path / "plan", sheets))


def test_a_semicolon_readings_csv_with_decimal_commas_is_read(tmp_path):
    # It was read as one column.
    plan = _loop_plan(tmp_path)
    path = tmp_path / "readings.csv"
    path.write_text("circuit;reading before [°];reading after [°]\nfeed;30,0;31,5\n",
                    encoding="utf-8")
    results = read_switch_on_results(plan, path, heading_deg=30.0, start_state="off")
    assert results.rows[0].observed_change_deg == pytest.approx(1.5)
    swing = tmp_path / "swing.csv"
    swing.write_text("compass;deviation\n" + "".join(f"{h};{d}\n" for h, d in (
        (0, "1,5E"), (45, "2,0E"), (90, "1,0E"), (135, "0,5W"), (180, "1,5W"))), encoding="utf-8")
    readings = read_swing(swing, plan, state="on")
    assert readings.states["on"][3].tolist() == [1.5, 2.0, 1.0, -0.5, -1.5]


@POSIX
def test_a_readings_fifo_is_a_finding(tmp_path):
    plan = _loop_plan(tmp_path)
    path = tmp_path / "swing.csv"
    os.mkfifo(path)
    with pytest.raises(ReadingsError, match="swing.csv is a named pipe"):
        read_swing(path, plan, state="on")


@pytest.mark.parametrize("reading, message", [
    ("400", '"400" is not a heading in degrees (0 to 360)'),
    ("-5", '"-5" is not a heading in degrees (0 to 360)'),
    ("252", "a reading of 252° with the vessel on 90° magnetic is a deviation of -162.0°, more "
            "than the 90° a compass that can still be read shows"),
])
def test_a_reading_a_compass_cannot_show_is_a_finding(tmp_path, reading, message):
    plan = _loop_plan(tmp_path)
    path = tmp_path / "readings.csv"
    path.write_text(f"circuit,reading before,reading after\nfeed,90,{reading}\n")
    with pytest.raises(ReadingsError) as caught:
        read_switch_on_results(plan, path, heading_deg=90.0, start_state="off")
    [finding] = caught.value.findings
    assert finding.message.startswith(message) and (finding.row, finding.column) == (
        2, "reading after")


def test_a_swing_row_of_impossible_deviation_is_a_finding(tmp_path):
    plan = _loop_plan(tmp_path)
    path = tmp_path / "swing.csv"
    path.write_text("compass,magnetic\n0,2\n45,47\n90,270\n")
    with pytest.raises(ReadingsError) as caught:
        read_swing(path, plan, state="on")
    [finding] = caught.value.findings
    assert (finding.row, finding.kind) == (4, Problem.OUT_OF_RANGE)
    assert "are a deviation of +180.0°" in finding.message or "-180.0°" in finding.message


# Errors that carry the field they belong to (issue 18.7) -----------------------------------------

def test_a_settings_error_is_placed_by_its_field_not_by_its_words(tmp_path):
    # The unknown start state's message names the sensor; it still belongs to start_state.
    plan = _loop_plan(tmp_path)
    path = tmp_path / "readings.xlsx"
    book = openpyxl.Workbook()
    book.active.title = "switch-on test"
    book.active.append(["circuit", "observed change"])
    book.active.append(["feed", 1.0])
    settings = book.create_sheet("switch-on settings")
    for row in (["setting", "value"], ["sensor", "compass"], ["magnetic_heading", 90],
                ["start_state", "sensor check"]):
        settings.append(row)
    book.save(path)
    with pytest.raises(ReadingsError) as caught:
        read_switch_on_results(plan, path)
    [finding] = caught.value.findings
    assert (finding.sheet, finding.row, finding.column, finding.kind) == (
        "switch-on settings", 4, "value", Problem.UNKNOWN_NAME)


def test_a_plan_error_of_one_finding_carries_its_place():
    tables = straight_wire_plan()
    tables["states"][1][1] = "twelve"
    with pytest.raises(PlanError) as caught:
        plan_from_tables(tables)
    error = caught.value
    assert (error.sheet, error.row, error.column, error.kind) == (
        "states", 2, "on", Problem.NOT_A_VALUE)


def test_no_code_places_an_error_by_searching_its_words():
    root = Path(__file__).resolve().parents[2] / "deviation"
    for path in root.rglob("*.py"):
        text = path.read_text(encoding="utf-8")
        assert not re.search(r"""["'][^"']+["']\s+in\s+str\((error|exc|e|err)\)""", text), path
        assert "csv.reader" not in text or path.name == "sheets.py", path
        assert "load_workbook" not in text or path.name in ("sheets.py", "template.py"), path


def test_a_finding_never_quotes_the_control_character_it_reports():
    buffer = io.StringIO()
    sheets = straight_wire_plan()
    sheets["runs"][1][0] = "feed\x1b"
    with pytest.raises(PlanError) as caught:
        plan_from_tables(sheets)
    csv.writer(buffer).writerows([[f.message] for f in caught.value.findings])
    assert "\x1b" not in buffer.getvalue()


@POSIX
def test_a_loop_of_links_is_a_finding(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    (folder / "runs.csv").unlink()
    (folder / "runs.csv").symlink_to("runs.csv")
    [line] = lines_of(folder)
    assert line.endswith("runs: runs.csv is a link that cannot be followed (a loop of links); not "
                         "read")


def test_a_renamed_readings_sheet_is_suggested(tmp_path):
    plan = _loop_plan(tmp_path)
    path = tmp_path / "swing.xlsx"
    book = openpyxl.Workbook()
    book.active.title = "Swing 2026"
    book.create_sheet("notes")
    book.save(path)
    with pytest.raises(ReadingsError) as caught:
        read_swing(path, plan, state="on")
    assert caught.value.findings[0].message == (
        "no sheet 'swing' in the workbook (it has: Swing 2026, notes); found \"Swing 2026\": did "
        "you mean swing? (rename it)")


def test_a_cell_turned_into_a_time_says_so():
    tables = straight_wire_plan()
    tables["states"][1][1] = dt.time(10, 30)
    with pytest.raises(PlanError) as caught:
        plan_from_tables(tables)
    [finding] = caught.value.findings
    assert finding.message.startswith("the spreadsheet turned this cell into a time (10:30:00)")
