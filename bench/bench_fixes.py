"""Remedies and the set of fixes: a 2 000-run plan, and a plan of many independent circuits.

    python bench/bench_fixes.py                          # 2 000 runs; 60 and 200 circuits
    python bench/bench_fixes.py --runs 500 --circuits 60

The budget is checked once (not timed); then the remedies and the set of fixes
(``advice.with_remedies``) are timed, CPU seconds as the median of ``--repeat`` calls, with the
peak of Python and NumPy allocations during one call (tracemalloc), and the number of sensors
given a set of fixes and of steps in them. The first plan is bench_big_plan.py's mix (a third
twisted, 40 circuits of which 4 independent, 3 compasses at heel 20 and pitch 10); the others are
bench_independent.py's (single conductors around one compass, each its own independent circuit,
a third reversing, heel 20, pitch 10, a reference state).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_independent import plan_with  # noqa: E402

from measure import load, timed, traced  # noqa: E402
from synthetic import write_plan  # noqa: E402


def measure(label, plan, repeat):
    from deviation.advice import with_remedies
    from deviation.analysis import analyse

    analysis = analyse(plan)
    cpu, wall, result = timed(lambda: with_remedies(analysis), repeat)
    peak_mb, _ = traced(lambda: with_remedies(analysis))
    fixed = [s for s in result.sensors if s.fixes is not None]
    steps = sum(len(s.fixes.steps) for s in fixed)
    print(f"{label:<34}{cpu:>9.2f}{wall:>9.2f}{peak_mb:>9.0f}   {len(fixed)} sets, {steps} steps")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=2000)
    parser.add_argument("--circuits", type=int, nargs="+", default=[60, 200])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    from deviation.reader import read_plan

    print(f"remedies and the set of fixes (with_remedies); {load()}")
    print(f"{'plan':<34}{'CPU s':>9}{'wall s':>9}{'peak MB':>9}")
    with tempfile.TemporaryDirectory() as tmp:
        plan = read_plan(write_plan(Path(tmp) / "big", args.runs))
    measure(f"{args.runs} runs, 3 sensors", plan, args.repeat)
    for n in args.circuits:
        measure(f"{n} independent circuits, 1 sensor", plan_with(n), args.repeat)


if __name__ == "__main__":
    main()
