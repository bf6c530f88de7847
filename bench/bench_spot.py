"""Spot search speed: a box of 10^6 candidate positions in a 50-run plan with twisted pairs.

    python bench/bench_spot.py               # coarse to fine, then a brute-force check
    python bench/bench_spot.py --no-brute    # coarse to fine only
    python bench/bench_spot.py --step 0.03   # a coarser grid (39 304 positions, under the coarse
                                             # stage's 40 000: the fine grid searched directly)
    python bench/bench_spot.py --step 0.02   # 125 000 positions: coarse to fine, then brute
                                             # force in minutes rather than the better part of
                                             # an hour

Prints the plan's size, the time of the coarse-to-fine search, and (unless --no-brute) the time of
evaluating the held figure at every one of the grid positions, with the ratio and whether both
find the same best figure, to the bit (each position has one figure: issue 17, point 5). Exits 1,
saying so, when they do not.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from measure import load, peak_rss_mb  # noqa: E402
from synthetic import write_plan  # noqa: E402


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=50)
    parser.add_argument("--no-brute", action="store_true")
    parser.add_argument("--step", type=float, default=0.01, help="grid step [m]")
    args = parser.parse_args()

    from deviation import spot
    from deviation.analysis import analyse
    from deviation.physics.field import segment_field
    from deviation.reader import read_plan

    with tempfile.TemporaryDirectory() as tmp:
        plan = read_plan(write_plan(Path(tmp) / "plan", args.runs, n_sensors=1))
    analysis = analyse(plan)
    sensor = plan.sensors[0]
    conductors = analysis.conductors
    kinds = {}
    for run in plan.runs:
        kinds[run.geometry.return_kind] = kinds.get(run.geometry.return_kind, 0) + 1
    print(f"plan: {len(plan.runs)} runs {kinds}, {len(conductors)} segments, "
          f"{len(plan.state_names)} states; sensor with reference state and ±20° heel")
    low, high, step = np.array([1.5, -0.495, 1.8]), np.array([2.49, 0.495, 2.79]), args.step
    segment_field(conductors.start_m, conductors.end_m, np.ones(len(conductors)),
                  np.zeros((64, 3)) + 5, backend="compiled")            # load the kernel
    t0, c0 = time.perf_counter(), time.process_time()
    result = spot.search_box(plan, analysis, sensor, low, high, step)
    t_search, c_search = time.perf_counter() - t0, time.process_time() - c0
    print(f"coarse to fine: {result.grid_points:,} grid positions, {result.evaluated:,} evaluated, "
          f"{t_search:.2f} s ({c_search:.2f} CPU s, {load()}); peak resident memory "
          f"{peak_rss_mb():.0f} MB; best {result.spots[0].held:.4f}° at "
          f"{np.round(result.spots[0].position_m, 3).tolist()}")
    if args.no_brute:
        return
    points = spot._points(spot._grid(low, high, step))
    t0 = time.perf_counter()
    brute, _, _ = spot._figures_at(plan, sensor, analysis.site, points)
    t_brute = time.perf_counter() - t0
    print(f"brute force: all {len(points):,} positions in {t_brute:.2f} s "
          f"({len(points) * len(conductors) / t_brute:.3g} pairs/s); best {brute.min():.4f}°")
    same = bool(brute.min() == result.spots[0].held)
    print(f"coarse to fine is {t_brute / t_search:.1f}x faster; same best figure: {same}; "
          f"peak resident memory {peak_rss_mb():.0f} MB")
    if not same:
        sys.exit(f"FAILED: coarse to fine found {result.spots[0].held!r}, brute force over the "
                 f"same grid {brute.min()!r}: a position has two figures (issue 17, point 5)")


if __name__ == "__main__":
    main()
