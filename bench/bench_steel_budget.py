"""Steel in the budget: the cost of a check and of a spot search with steel items, beside the same
plans without them, and the exact worst case over attitude against a dense brute force.

    python bench/bench_steel_budget.py
    python bench/bench_steel_budget.py --repeat 3

Prints, for the samples with steel (the sailboat's engine block, the van's fridge case, the
workboat's helm pump): `check` with remedies and a spot search of each with and without the
steel sheet, their ratio, and the peak resident memory of the process; then the branch and bound
of one attitude worst case beside a brute force over every vertex on a grid of heading, heel and
pitch (time and the difference).
"""

from __future__ import annotations

import argparse
import itertools
import resource
import shutil
import tempfile
import time
from pathlib import Path

import numpy as np

from deviation.checking import check_plan
from deviation.physics import soft_iron, turning
from deviation.reader import read_plan
from deviation.spot import search_box

SAMPLES = Path(__file__).resolve().parents[1] / "sample_installs"
#: (sample, sensor, region low, region high, step [m]) of each spot search.
SEARCHES = (
    ("cruising_sailboat", "helm compass", (1.2, -0.4, 1.7), (2.0, 0.4, 2.1), 0.02),
    ("survey_workboat", "console compass", (2.95, -0.35, 1.55), (3.55, 0.35, 1.95), 0.02),
    ("camper_van", "dash compass", (16.0, -0.5, 3.5), (17.5, 1.5, 4.5), 0.0254),
)


def best_of(function, repeat):
    best, out = np.inf, None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = function()
        best = min(best, time.perf_counter() - t0)
    return best, out


def without_steel(name, folder):
    copy = Path(folder) / name
    shutil.copytree(SAMPLES / name, copy)
    (copy / "steel.csv").unlink()
    return copy


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=1)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        warm = read_plan(without_steel(SEARCHES[0][0], Path(folder) / "warm"))
        search_box(warm, check_plan(warm, remedies=False), warm.sensor(SEARCHES[0][1]),
                   np.array(SEARCHES[0][2]), np.array(SEARCHES[0][3]), SEARCHES[0][4])
        for name, sensor_name, low, high, step in SEARCHES:
            # Without steel first: the first search of a process may compile the field kernels.
            plans = {"none": read_plan(without_steel(name, folder)),
                     "steel": read_plan(SAMPLES / name)}
            times = {}
            for label, plan in plans.items():
                check, analysis = best_of(lambda p=plan: check_plan(p), args.repeat)
                sensor = plan.sensor(sensor_name)
                spot, found = best_of(lambda p=plan, a=analysis, s=sensor: search_box(
                    p, a, s, np.array(low), np.array(high), step), args.repeat)
                times[label] = (check, spot, found.evaluated, found.spots[0].held)
            s, n = times["steel"], times["none"]
            print(f"{name:18s} check {s[0]:6.2f} s (no steel {n[0]:5.2f} s, x{s[0] / n[0]:5.1f}); "
                  f"spot {s[1]:6.2f} s over {s[2]} positions (no steel {n[1]:5.2f} s, "
                  f"x{s[1] / n[1]:4.1f}); best spot {s[3]:.2f} (no steel {n[3]:.2f})")
    # One attitude worst case beside a brute force over every vertex.
    rng = np.random.default_rng(0)
    h, z = 20.0, 40.0
    problem = turning.Turning.of(rng.normal(0, 2, (1, 3)), rng.normal(0, 1, (1, 2, 3)),
                                 rng.normal(0, 0.03, (1, 3, 3)), rng.normal(0, 0.01, (1, 3, 3, 3)))
    ours, worst = best_of(lambda: turning.worst_deviation(problem, h, z, 20.0, 10.0), args.repeat)

    def brute():
        best = 0.0
        psi = np.arange(0.0, 360.0, 0.5)[:, None, None]
        phi = np.linspace(-20, 20, 81)[None, :, None]
        theta = np.linspace(-10, 10, 41)[None, None, :]
        for s in itertools.product([-1.0, 1.0], repeat=2):
            for t in itertools.product([-1.0, 1.0], repeat=3):
                fixed = problem.centre[0] + np.array(s) @ problem.generators[0]
                matrix = problem.matrix[0] + np.einsum("j,jab->ab", np.array(t),
                                                       problem.matrix_generators[0])
                best = max(best, float(np.abs(soft_iron.deviation_curve_deg(
                    matrix, fixed, h, z, psi, phi, theta)).max()))
        return best

    theirs, sampled = best_of(brute, 1)
    print(f"attitude worst case: branch and bound {ours * 1e3:7.1f} ms, bound "
          f"{worst.bound_deg[0]:.4f} (reached {worst.found_deg[0]:.4f}); brute force over "
          f"32 vertices x 2.4 M orientations {theirs:6.1f} s, {sampled:.4f}; ratio "
          f"{theirs / ours:6.0f}")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak resident memory {peak:.0f} MB")


if __name__ == "__main__":
    main()
