"""A tour of hostile files and absurd numbers, each given to the command line as a user would.

    python bench/tour_inputs.py            # every case, a table and the counts
    python bench/tour_inputs.py --quiet    # the counts only

Not a speed benchmark: it builds each case in a temporary folder (from the cruising sailboat
sample), runs `deviation check` (or `test-results`, `swing`) on it in a child process with a
60 s deadline, and reports the exit status, the time and the first line said. A case counts as
refused when the command exits 2 within the deadline, prints no traceback, and says where (the
file, and the sheet, row and column where there is one). docs/robustness.md quotes its counts.
"""

from __future__ import annotations

import argparse
import csv
import os
import shutil
import subprocess
import sys
import tempfile
import time
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_installs" / "cruising_sailboat"


def _copy(tmp: Path, name: str) -> Path:
    folder = tmp / name
    shutil.copytree(SAMPLE, folder)
    return folder


def _rows(folder: Path, sheet: str) -> list[list[str]]:
    with open(folder / f"{sheet}.csv", newline="", encoding="utf-8") as f:
        return list(csv.reader(f))


def _write(folder: Path, sheet: str, rows) -> None:
    data = "".join(",".join('"' + str(c).replace('"', '""') + '"' for c in row) + "\n"
                   for row in rows)
    (folder / f"{sheet}.csv").write_bytes(data.encode("utf-8"))


def _cell(folder, sheet, row, column, value):
    rows = _rows(folder, sheet)
    header = rows[0]
    if column not in header:
        header.append(column)
        for r in rows[1:]:
            r.append("")
    for r in rows:
        r.extend([""] * (len(header) - len(r)))
    rows[row][header.index(column)] = value
    _write(folder, sheet, rows)
    return folder


def _workbook(tmp: Path, name: str) -> Path:
    from deviation.reader import read_plan
    from deviation.template import write_plan

    path = tmp / f"{name}.xlsx"
    write_plan(read_plan(SAMPLE), path)
    return path


def _rewrite_member(path: Path, member_of_title: str, change) -> Path:
    import openpyxl

    index = openpyxl.load_workbook(path).sheetnames.index(member_of_title) + 1
    member = f"xl/worksheets/sheet{index}.xml"
    with zipfile.ZipFile(path) as archive:
        contents = {i.filename: archive.read(i.filename) for i in archive.infolist()}
    contents[member] = change(contents[member])
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, data in contents.items():
            archive.writestr(name, data)
    return path


def _zip(tmp: Path, name: str, members: dict) -> Path:
    path = tmp / f"{name}.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for member, size in members.items():
            archive.writestr(member, b"0" * size)
    return path


def _replace_sheet(tmp, name, make):
    folder = _copy(tmp, name)
    (folder / "runs.csv").unlink()
    make(folder / "runs.csv")
    return folder


# Hostile files: (name, builder(tmp) -> args for the command line)
HOSTILE = [
    ("a FIFO named runs.csv", lambda t: ["check", _replace_sheet(t, "fifo", os.mkfifo)]),
    ("runs.csv a link to /dev/zero",
     lambda t: ["check", _replace_sheet(t, "zero", lambda p: p.symlink_to("/dev/zero"))]),
    ("a folder named runs.csv", lambda t: ["check", _replace_sheet(t, "dir", Path.mkdir)]),
    ("runs.csv a link to /etc/passwd",
     lambda t: ["check", _replace_sheet(t, "passwd", lambda p: p.symlink_to("/etc/passwd"))]),
    ("runs.csv a link to nothing",
     lambda t: ["check", _replace_sheet(t, "broken", lambda p: p.symlink_to(p.parent / "x"))]),
    ("a FIFO named plan.xlsx", lambda t: (os.mkfifo(t / "plan.xlsx"), ["check", t / "plan.xlsx"])[1]),
    ("plan.xlsx a link to /dev/zero",
     lambda t: ((t / "zero.xlsx").symlink_to("/dev/zero"), ["check", t / "zero.xlsx"])[1]),
    ("a CSV sheet of 60 MB",
     lambda t: ["check", _replace_sheet(t, "big", lambda p: p.write_bytes(
         b"run,route,return\n" + b"a,0 0 0,none\n" * 5_000_000))]),
    ("a sheet of 25 000 rows",
     lambda t: ["check", _replace_sheet(t, "rows", lambda p: p.write_text(
         "run,circuits,route,return\n" + "r,autopilot,\"0,0,0 > 1,0,0\",none\n" * 25_000))]),
    ("a zip bomb: one 60 MB part",
     lambda t: ["check", _zip(t, "bomb1", {"xl/worksheets/sheet1.xml": 60_000_000})]),
    ("a zip bomb: 120 MB in parts of 40 MB",
     lambda t: ["check", _zip(t, "bomb2", {f"xl/worksheets/sheet{i}.xml": 40_000_000
                                            for i in (1, 2, 3)})]),
    ("a zip bomb: 30 MB from 30 kB",
     lambda t: ["check", _zip(t, "bomb3", {"xl/worksheets/sheet1.xml": 30_000_000})]),
    ("XML entity expansion in a sheet",
     lambda t: ["check", _rewrite_member(_workbook(t, "laughs"), "runs", lambda d: (
         b'<?xml version="1.0"?><!DOCTYPE x [<!ENTITY a "aaaaaaaaaa">'
         + b"".join(f'<!ENTITY {chr(98 + i)} "{("&" + chr(97 + i) + ";") * 10}">'.encode()
                    for i in range(8)) + b"]>" + d.split(b"?>", 1)[-1].replace(
             b"windlass feed", b"&i;", 1)))]),
    ("a text file named plan.xlsx",
     lambda t: ((t / "text.xlsx").write_text("run,route\n"), ["check", t / "text.xlsx"])[1]),
    ("ESC and BEL in a run name (a terminal title sequence)",
     lambda t: ["check", _cell(_copy(t, "esc"), "runs", 1, "run", "feed\x1b]0;owned\x07")]),
    ("NUL in a run name", lambda t: ["check", _cell(_copy(t, "nul"), "runs", 1, "run", "a\x00b")]),
    ("a C1 control (CSI) in a note",
     lambda t: ["check", _cell(_copy(t, "csi"), "runs", 1, "note", "\x9b2J")]),
    ("a right-to-left override in a circuit name",
     lambda t: ["check", _cell(_copy(t, "rlo"), "states", 1, "circuit", "wind\u202elass")]),
    ("ESC in a workbook cell (saved as _x001B_)",
     lambda t: ["check", _rewrite_member(_workbook(t, "escx"), "runs", lambda d: d.replace(
         b"windlass feed", b"windlass_x001B_[2J", 1))]),
    ("ESC in a swing readings file",
     lambda t: ["swing", SAMPLE, _text(t / "swing.csv", "compass,deviation,state\n"
                                      "0,1E\x1b[2J,harbour\n"), "--sensor", "helm compass"]),
    ("a FIFO named swing.csv",
     lambda t: (os.mkfifo(t / "swing.csv"), ["swing", SAMPLE, t / "swing.csv", "--sensor",
                                              "helm compass"])[1]),
]


def _text(path: Path, text: str) -> Path:
    path.write_bytes(text.encode("utf-8"))
    return path


def _site(value_by_setting):
    def change(folder):
        rows = [r for r in _rows(folder, "site") if r and r[0] not in value_by_setting]
        rows += [[k, v, ""] for k, v in value_by_setting.items()]
        _write(folder, "site", rows)
        return folder
    return change


def _plan(name, change):
    return lambda t: ["check", change(_copy(t, name))]


# Absurd numbers: each one cell of the sample made absurd.
ABSURD = [
    ("a waypoint at x = 1e300 m",
     _plan("x1e300", lambda f: _cell(f, "runs", 1, "route", "house bank > 1e300, 0, 0"))),
    ("a sensor 20 km from the origin",
     _plan("far", lambda f: _cell(f, "sensors", 1, "at", "20000, 0, 1"))),
    ("a point at x = 1e300", _plan("point", lambda f: _cell(f, "points", 1, "x", "1e300"))),
    ("a spacing of 1e300 mm", _plan("spacing", lambda f: _cell(f, "runs", 1, "spacing", "1e300 mm"))),
    ("a spacing longer than its run", _plan("longsp", lambda f: _cell(f, "runs", 1, "spacing", "40 m"))),
    ("a lay of 1e-300 mm", _plan("lay", lambda f: _cell(f, "runs", 5, "lay", "1e-300 mm"))),
    ("untwisted ends longer than the run",
     _plan("ends", lambda f: _cell(f, "runs", 5, "untwisted_ends", "30 m"))),
    ("a current of 1e300 A", _plan("amps", lambda f: _cell(f, "states", 1, "harbour", "1e300"))),
    ("a current of inf A", _plan("inf", lambda f: _cell(f, "states", 1, "harbour", "inf"))),
    ("a current of NaN A", _plan("nan", lambda f: _cell(f, "states", 1, "harbour", "NaN"))),
    ("a current with a unicode minus",
     _plan("minus", lambda f: _cell(f, "states", 1, "harbour", "\u22125"))),
    ("a labelled safe distance of 1e30 m",
     _plan("safe", lambda f: _cell(f, "equipment", 1, "safe_distance", "1e30 m"))),
    ("a moment of 1e300 A m2",
     _plan("moment", lambda f: _cell(_cell(f, "equipment", 1, "safe_distance", ""), "equipment",
                                     1, "moment_am2", "1e300"))),
    ("a budget of 1e300 degrees", _plan("budget", lambda f: _cell(f, "sensors", 1, "budget_deg", "1e300"))),
    ("a heel of 1e300 degrees", _plan("heel", lambda f: _cell(f, "sensors", 1, "max_heel_deg", "1e300"))),
    ("a horizontal field of 1e300 uT", _plan("field", _site({"horizontal_field_ut": "1e300"}))),
    ("a latitude of 1e300", _plan("lat", _site({"latitude": "1e300"}))),
    ("a date of 2024-12-31 (before WMM2025)", _plan("date", _site({"date": "2024-12-31"}))),
    ("a switch-on reading of 400 degrees",
     lambda t: ["test-results", SAMPLE, _text(t / "r.csv", "circuit,reading before,reading after\n"
                                              "autopilot,90,400\n"),
                "--sensor", "helm compass", "--heading", "90"]),
    ("a switch-on reading of 252 degrees on a heading of 90",
     lambda t: ["test-results", SAMPLE, _text(t / "r.csv", "circuit,reading before,reading after\n"
                                              "autopilot,90,252\n"),
                "--sensor", "helm compass", "--heading", "90"]),
    ("a swing deviation of 200 degrees",
     lambda t: ["swing", SAMPLE, _text(t / "s.csv", "compass,deviation,state\n" + "".join(
         f"{h},{'200' if h == 90 else '1E'},harbour\n" for h in range(0, 360, 45))),
                "--sensor", "helm compass"]),
]


def run_case(args, timeout_s=60.0):
    """(exit status or "hung", seconds, the lines said) of the command line on one case."""
    started = time.perf_counter()
    try:
        done = subprocess.run([sys.executable, "-m", "deviation.cli", *map(str, args)],
                              capture_output=True, text=True, timeout=timeout_s)
    except subprocess.TimeoutExpired:
        return "hung", time.perf_counter() - started, []
    lines = (done.stderr + done.stdout).strip().splitlines()
    return done.returncode, time.perf_counter() - started, lines


def tour(cases, tmp, quiet):
    refused = 0
    for name, build in cases:
        case_dir = tmp / f"case{len(name)}_{abs(hash(name)) % 10**6}"
        case_dir.mkdir()
        status, seconds, lines = run_case(build(case_dir))
        said = next((line for line in lines if not line.startswith("Error:")), "")
        ok = status == 2 and not any("Traceback" in line for line in lines) and bool(said)
        refused += ok
        if not quiet:
            shown = said.replace(str(case_dir), "…")
            shown = shown if len(shown) <= 150 else shown[:147] + "..."
            print(f"  {'refused' if ok else 'NOT REFUSED':11} exit {status!s:4} {seconds:5.1f} s  "
                  f"{name}\n      {shown}")
    return refused


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quiet", action="store_true")
    args = parser.parse_args()
    if os.name != "posix":
        raise SystemExit("the tour makes FIFOs and symbolic links: run it on Linux or macOS")
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        print("Hostile files:")
        hostile = tour(HOSTILE, tmp, args.quiet)
        print("Absurd numbers:")
        absurd = tour(ABSURD, tmp, args.quiet)
    print(f"hostile files refused: {hostile} of {len(HOSTILE)}")
    print(f"absurd numbers refused: {absurd} of {len(ABSURD)}")
    raise SystemExit(0 if hostile == len(HOSTILE) and absurd == len(ABSURD) else 1)


if __name__ == "__main__":
    main()
