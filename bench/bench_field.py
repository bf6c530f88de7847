"""Segment-field throughput: our compiled kernel and NumPy path against magpylib, side by side.

    python bench/bench_field.py                      # 2 000 segments x 100 000 observers
    python bench/bench_field.py --points 20000       # quicker

Prints pairs per second for each and the ratios. The geometry is 20 random-walk cable runs of
100 segments each, observers spread over a 4 m box around them; all three compute the same
observers (magpylib through its object interface, ``getB(..., sumup=True)``, its fastest path
here), and the results are compared.
"""

from __future__ import annotations

import argparse
import os
import platform
import time

import numpy as np


def geometry(n_runs, per_run, n_points, seed=0):
    rng = np.random.default_rng(seed)
    runs = [np.cumsum(rng.normal(scale=0.05, size=(per_run + 1, 3)), axis=0) for _ in range(n_runs)]
    start = np.concatenate([v[:-1] for v in runs])
    end = np.concatenate([v[1:] for v in runs])
    points = rng.uniform(-2, 2, (n_points, 3))
    return runs, start, end, points


def timed(function, repeat=1):
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = function()
        best = min(best, time.perf_counter() - t0)
    return best, result


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--segments", type=int, default=2000)
    parser.add_argument("--points", type=int, default=100_000)
    parser.add_argument("--states", type=int, default=1, help="operating states (current columns)")
    parser.add_argument("--peer-points", type=int, default=None,
                        help="observers given to magpylib (default: all)")
    args = parser.parse_args()

    from deviation.physics.field import segment_field

    per_run = 100
    n_runs = max(1, args.segments // per_run)
    runs, start, end, points = geometry(n_runs, per_run, args.points)
    n_seg = len(start)
    current = np.full(n_seg, 5.0) if args.states == 1 else np.full((n_seg, args.states), 5.0)
    pairs = n_seg * len(points)
    print(f"machine: {platform.processor() or platform.machine()}, {os.cpu_count()} cores")
    print(f"work: {n_seg} segments x {len(points)} observers = {pairs:.3g} pairs, "
          f"{args.states} state(s)")

    t0 = time.perf_counter()
    segment_field(start, end, current, points[:64], backend="compiled")
    print(f"compiled kernel first call (load or compile): {time.perf_counter() - t0:.2f} s")
    t_fast, fast = timed(lambda: segment_field(start, end, current, points, backend="compiled"),
                         repeat=3)
    t_numpy, ref = timed(lambda: segment_field(start, end, current, points, backend="numpy"))
    rows = [("deviation compiled", t_fast, pairs), ("deviation numpy", t_numpy, pairs)]

    import magpylib

    n_peer = args.peer_points or len(points)
    sources = [magpylib.current.Polyline(current=5.0, vertices=v) for v in runs]
    t_peer, peer = timed(lambda: magpylib.getB(sources, points[:n_peer], sumup=True))
    rows.append(("magpylib getB", t_peer, n_seg * n_peer))

    check = fast if args.states == 1 else fast[:, 0, :]
    agree_numpy = np.abs(fast - ref).max() / np.abs(ref).max()
    agree_peer = np.abs(check[:n_peer] - peer).max() / np.abs(peer).max()

    print(f"{'path':<20}{'seconds':>10}{'pairs/s':>12}{'vs magpylib':>14}")
    peer_rate = rows[-1][2] / rows[-1][1]
    for name, seconds, n_pairs in rows:
        rate = n_pairs / seconds
        print(f"{name:<20}{seconds:>10.3f}{rate:>12.3g}{rate / peer_rate:>13.1f}x")
    print(f"largest relative difference: compiled vs numpy {agree_numpy:.1e}, "
          f"vs magpylib {agree_peer:.1e}")


if __name__ == "__main__":
    main()
