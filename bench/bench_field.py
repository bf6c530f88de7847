"""Segment-field throughput: our compiled kernel and NumPy path against magpylib, side by side.

    python bench/bench_field.py                      # 2 000 segments x 100 000 observers
    python bench/bench_field.py --points 20000       # the issue's case, quicker

Prints pairs per core-second for each (pairs over the process's CPU seconds, the median of
``--repeat`` calls: on a shared machine wall time measures the neighbours; the compiled kernel
runs on every core and its CPU time counts them all), pairs per wall second, the peak of NumPy
allocations during a call (tracemalloc), and the ratios to magpylib. The geometry is 20
random-walk cable runs of 100 segments each, observers spread over a 4 m box around them;
magpylib (through its object interface, ``getB(..., sumup=True)``, its fastest path here) gets
the first ``--peer-points`` observers, and the results are compared.
"""

from __future__ import annotations

import argparse
import os
import platform
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from measure import load, peak_rss_mb, timed, traced  # noqa: E402


def geometry(n_runs, per_run, n_points, seed=0):
    rng = np.random.default_rng(seed)
    runs = [np.cumsum(rng.normal(scale=0.05, size=(per_run + 1, 3)), axis=0) for _ in range(n_runs)]
    start = np.concatenate([v[:-1] for v in runs])
    end = np.concatenate([v[1:] for v in runs])
    points = rng.uniform(-2, 2, (n_points, 3))
    return runs, start, end, points


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--segments", type=int, default=2000)
    parser.add_argument("--points", type=int, default=100_000)
    parser.add_argument("--states", type=int, default=1, help="operating states (current columns)")
    parser.add_argument("--peer-points", type=int, default=2000,
                        help="observers given to magpylib (default 2000; it is slow)")
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args()

    from deviation.physics.field import segment_field

    per_run = 100
    n_runs = max(1, args.segments // per_run)
    runs, start, end, points = geometry(n_runs, per_run, args.points)
    n_seg = len(start)
    current = np.full(n_seg, 5.0) if args.states == 1 else np.full((n_seg, args.states), 5.0)
    pairs = n_seg * len(points)
    print(f"machine: {platform.processor() or platform.machine()}, {os.cpu_count()} cores; "
          f"{load()}")
    print(f"work: {n_seg} segments x {len(points)} observers = {pairs:.3g} pairs, "
          f"{args.states} state(s)")

    t0 = time.perf_counter()
    segment_field(start, end, current, points[:64], backend="compiled")
    print(f"compiled kernel first call (load or compile): {time.perf_counter() - t0:.2f} s")
    rows = []
    fast = ref = peer = None
    for name, backend, repeat in (("deviation compiled", "compiled", args.repeat),
                                  ("deviation numpy", "numpy", 1)):
        run = lambda backend=backend: segment_field(start, end, current, points, backend=backend)
        cpu, wall, result = timed(run, repeat)
        peak, _ = traced(run)
        rows.append((name, cpu, wall, pairs, peak))
        fast, ref = (result, ref) if backend == "compiled" else (fast, result)

    import magpylib

    n_peer = min(args.peer_points, len(points))
    sources = [magpylib.current.Polyline(current=5.0, vertices=v) for v in runs]
    peer_run = lambda: magpylib.getB(sources, points[:n_peer], sumup=True)
    cpu, wall, peer = timed(peer_run, 1)
    rows.append(("magpylib getB", cpu, wall, n_seg * n_peer, traced(peer_run)[0]))

    check = fast if args.states == 1 else fast[:, 0, :]
    agree_numpy = np.abs(fast - ref).max() / np.abs(ref).max()
    agree_peer = np.abs(check[:n_peer] - peer).max() / np.abs(peer).max()

    print(f"{'path':<20}{'CPU s':>9}{'pairs/core-s':>14}{'pairs/wall-s':>14}{'peak MB':>9}"
          f"{'vs magpylib':>13}")
    peer_rate = rows[-1][3] / rows[-1][1]
    for name, cpu, wall, n_pairs, peak in rows:
        rate = n_pairs / cpu
        print(f"{name:<20}{cpu:>9.3f}{rate:>14.3g}{n_pairs / wall:>14.3g}{peak:>9.0f}"
              f"{rate / peer_rate:>12.0f}x")
    print(f"largest relative difference: compiled vs numpy {agree_numpy:.1e}, "
          f"vs magpylib {agree_peer:.1e}; peak resident memory {peak_rss_mb():.0f} MB")


if __name__ == "__main__":
    main()
