"""Reading a plan workbook that also holds a large sheet the tool does not read.

    python bench/bench_workbook.py
    python bench/bench_workbook.py --rows 200000

Writes the cruising sailboat sample as an .xlsx workbook with one more sheet ("log", ROWS rows of
12 cells: numbers, dates and text, as a data logger's export pasted into the plan), then reads
the plan in a child process (`deviation.read_plan`) and runs `deviation check --json` in another,
printing each one's wall time and peak resident memory. The unrelated sheet should cost little:
the reader opens the workbook read-only and parses only the plan's own sheets.
"""

from __future__ import annotations

import argparse
import datetime as dt
import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def write_workbook(path: Path, rows: int) -> None:
    import openpyxl

    from deviation.reader import read_plan
    from deviation.template import write_plan

    write_plan(read_plan(ROOT / "sample_installs" / "cruising_sailboat"), path)
    book = openpyxl.load_workbook(path)
    log = book.create_sheet("log")
    log.append(["time", "lat", "lon", "sog", "cog", "hdg", "volts", "amps", "temp", "depth",
                "wind", "remark"])
    start = dt.datetime(2026, 6, 1)
    for i in range(rows):
        log.append([start + dt.timedelta(seconds=i), 43.29 + i * 1e-6, 9.35 - i * 1e-6,
                    i % 7 + 0.5, i % 360, (i * 7) % 360, 12.6 + (i % 10) / 100, i % 40 * 0.25,
                    18 + i % 5, 4.2 + i % 3, i % 30, f"entry {i}"])
    book.save(path)


#: Prefix of each child's code: print its own peak resident memory [kB] on stderr at exit.
PEAK = ("import atexit, resource, sys; atexit.register(lambda: sys.stderr.write("
        "'peak_kb %d\\n' % resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)); ")


def measure(code: str, *args: str) -> tuple[float, float, int]:
    """Wall seconds, peak resident MB and exit status of a child process running ``code``."""
    t0 = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", PEAK + code, *args], capture_output=True,
                          text=True)
    seconds = time.perf_counter() - t0
    peaks = re.findall(r"peak_kb (\d+)", done.stderr)
    if done.returncode not in (0, 1) or not peaks:
        print(done.stderr[-2000:])
    return seconds, int(peaks[-1]) / 1024 if peaks else float("nan"), done.returncode


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=100_000)
    parser.add_argument("--write", metavar="PATH", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.write:
        write_workbook(Path(args.write), args.rows)
        return
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "plan_with_log.xlsx"
        # Written in a child: a child's peak memory counts its parent's at the fork, so this
        # process stays small while the others are measured.
        subprocess.run([sys.executable, __file__, "--rows", str(args.rows), "--write", str(path)],
                       check=True)
        size_mb = path.stat().st_size / 1e6
        print(f"workbook: the sailboat plan and a 'log' sheet of {args.rows} rows x 12 cells, "
              f"{size_mb:.1f} MB")
        read = measure("import deviation; deviation.read_plan(sys.argv[1])", str(path))
        print(f"read_plan:              {read[0]:.2f} s wall, peak memory {read[1]:.0f} MB, "
              f"exit status {read[2]}")
        check = measure("from deviation.cli import main; main(['check', sys.argv[1], '--json'])",
                        str(path))
        print(f"deviation check --json: {check[0]:.2f} s wall, peak memory {check[1]:.0f} MB, "
              f"exit status {check[2]}")


if __name__ == "__main__":
    main()
