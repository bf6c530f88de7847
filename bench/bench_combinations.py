"""Worst switching of independent circuits at one sensor: exact search against brute force.

    python bench/bench_combinations.py                  # 30 circuits, brute force at 16
    python bench/bench_combinations.py --circuits 60 --brute 18

Prints the seconds per call of ``worst_case.worst_combination`` for random circuit fields, level
(2-D sweep) and with heel 20 / pitch 10 (3-D vertex enumeration); then the time of trying every
one of the 2^16 switchings of the first 16 circuits, checks that both give the same figure, and
prints the ratios and the brute force's extrapolation to all the circuits (x 2 per circuit).

    python bench/bench_combinations.py --cases 200x1 1000x1 30x1000 200x1000

With ``--cases``, instead: for each CIRCUITSxSTATES, one call with heel 20 and pitch 10 over that
many states (rows) of random circuit fields, a third of the circuits reversing: CPU seconds (the
median of ``--repeat``), the peak of NumPy allocations (tracemalloc), and the figure of the first
state, so runs of two versions can be compared digit by digit.
"""

from __future__ import annotations

import argparse
import itertools
import sys
import time
from pathlib import Path

import numpy as np

from deviation.physics.worst_case import horizontal_over_attitude, worst_combination

sys.path.insert(0, str(Path(__file__).resolve().parent))
from measure import load, peak_rss_mb, traced  # noqa: E402
from measure import timed as cpu_timed


def timed(function, repeat):
    """Best of ``repeat`` calls [s] and the last result."""
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = function()
        best = min(best, time.perf_counter() - t0)
    return best, result


def brute_force(base, vectors, heel, pitch):
    choices = np.array(list(itertools.product((0.0, 1.0), repeat=len(vectors))))
    return float(horizontal_over_attitude(base + choices @ vectors, heel, pitch).max())


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, default=30)
    parser.add_argument("--brute", type=int, default=16, help="circuits in the brute-force run")
    parser.add_argument("--repeat", type=int, default=20)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--cases", nargs="+", default=None, metavar="CIRCUITSxSTATES")
    args = parser.parse_args()
    if args.cases:
        return cases(args)

    rng = np.random.default_rng(args.seed)
    vectors = rng.normal(scale=1e-6, size=(args.circuits, 3))          # [T], a microtesla each
    base = rng.normal(scale=1e-6, size=3)
    print(f"{args.circuits} independent circuits, random fields, one sensor")
    for label, heel, pitch in (("level", 0.0, 0.0), ("heel 20, pitch 10", 20.0, 10.0)):
        t_ours, (size, _) = timed(lambda: worst_combination(base, vectors, None, heel, pitch),
                                  args.repeat)
        small = vectors[:args.brute]
        t_small, (size_small, _) = timed(
            lambda: worst_combination(base, small, None, heel, pitch), args.repeat)
        t_brute, brute = timed(lambda: brute_force(base, small, heel, pitch), 1)
        same = abs(brute - float(size_small)) <= 1e-12 * brute
        print(f"{label:>18}: exact {args.circuits} circuits {t_ours * 1e3:8.3f} ms/call "
              f"({size * 1e6:.4f} uT); {args.brute} circuits {t_small * 1e3:.3f} ms; "
              f"brute force 2^{args.brute} {t_brute:.3f} s, same figure: {same}; "
              f"brute/exact at {args.brute}: {t_brute / t_small:,.0f}x; brute at "
              f"{args.circuits} ~ {t_brute * 2.0 ** (args.circuits - args.brute):,.0f} s")
    print(f"peak resident memory {peak_rss_mb():.0f} MB; {load()}")


def cases(args):
    """Worst switching at heel 20, pitch 10 for each CIRCUITSxSTATES case."""
    print(f"worst switching, heel 20 and pitch 10, random fields; {load()}")
    print(f"{'circuits':>9}{'states':>8}{'CPU s':>10}{'wall s':>9}{'peak MB':>9}  first state [uT]")
    for case in args.cases:
        n, rows = (int(v) for v in case.lower().split("x"))
        rng = np.random.default_rng(args.seed)
        vectors = rng.normal(scale=1e-6, size=(rows, n, 3))            # [T], a microtesla each
        base = rng.normal(scale=1e-6, size=(rows, 3))
        reversing = rng.random(n) < 1 / 3
        run = lambda: worst_combination(base, vectors, reversing, 20.0, 10.0)
        cpu, wall, (size, _) = cpu_timed(run, args.repeat)
        peak, _ = traced(run)
        print(f"{n:>9}{rows:>8}{cpu:>10.3f}{wall:>9.3f}{peak:>9.0f}  {size[0] * 1e6:.15f}")


if __name__ == "__main__":
    main()
