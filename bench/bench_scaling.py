"""How a whole check grows with the plan: time and peak memory from 10 to 5 000 runs.

    python bench/bench_scaling.py                       # 10, 100, 500, 2 000, 5 000 runs
    python bench/bench_scaling.py --sizes 10 100 500    # quicker

Each size is the mix of bench_big_plan.py (a third of the runs twisted at 25 mm lay, 40 circuits
of which 4 switch on their own, 3 compasses checked at heel 20 and pitch 10), written as CSV
sheets and checked by ``deviation check --json`` in a child process. For each size prints the
child's CPU seconds, wall seconds and peak resident memory, the routed segments, and the exit
status (2: the plan was refused). Then least-squares lines through the sizes that ran: CPU
microseconds and bytes per segment, and milliseconds and kilobytes per run.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from measure import load, run_child  # noqa: E402
from synthetic import write_plan  # noqa: E402


def segments_of(folder):
    """Routed segments of a plan, run by run (so counting never holds the whole plan); None
    when the reader refuses the plan (the check will say why)."""
    from deviation.physics.routing import route_runs
    from deviation.plan import PlanError
    from deviation.reader import read_plan

    try:
        plan = read_plan(folder)
    except PlanError:
        return None
    return sum(len(route_runs([run.geometry])) for run in plan.runs)


def fit(x, y):
    """Slope and intercept of the least-squares line y = a x + b."""
    a, b = np.polyfit(np.asarray(x, float), np.asarray(y, float), 1)
    return a, b


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[10, 100, 500, 2000, 5000])
    args = parser.parse_args()
    print(f"deviation check --json, child process per size; {load()}")
    print(f"{'runs':>6}{'segments':>12}{'CPU s':>9}{'wall s':>9}{'peak MB':>9}{'exit':>6}")
    ran = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.sizes:
            folder = write_plan(Path(tmp) / f"plan{n}", n)
            segments = segments_of(folder)
            cpu, wall, peak, code, _, err = run_child(
                [sys.executable, "-m", "deviation.cli", "check", str(folder), "--json"])
            lines = err.strip().splitlines() or [""]
            note = "" if code in (0, 1) else "  refused: " + next(
                (line.strip() for line in lines if "segments" in line), lines[-1])
            shown = "-" if segments is None else f"{segments:,}"
            print(f"{n:>6}{shown:>12}{cpu:>9.2f}{wall:>9.2f}{peak:>9.0f}{code:>6}{note}")
            if code in (0, 1) and segments is not None:
                ran.append((n, segments, cpu, peak))
    if len(ran) >= 2:
        runs, segments, cpu, peak = (np.array(v, float) for v in zip(*ran))
        per_segment_s, _ = fit(segments, cpu)
        per_segment_mb, _ = fit(segments, peak)
        per_run_s, start_s = fit(runs, cpu)
        per_run_mb, start_mb = fit(runs, peak)
        print(f"growth: {per_segment_s * 1e6:.2f} CPU µs and {per_segment_mb * 2**20:.0f} B per "
              f"segment; {per_run_s * 1e3:.2f} CPU ms and {per_run_mb * 1024:.0f} kB per run "
              f"(start {start_s:.2f} s, {start_mb:.0f} MB)")


if __name__ == "__main__":
    main()
