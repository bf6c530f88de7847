"""Steel physics side by side with magpylib, and the cost of the exact heading and attitude worst
cases.

    python bench/bench_steel.py
    python bench/bench_steel.py --points 20000

Prints, for the exterior field of a uniformly magnetised prism and cylinder at random points:
our time, magpylib's, their ratio and the largest difference; then the time of the exact
largest deviation over headings for a batch of soft-iron matrices, and of the attitude branch
and bound for one sensor; and the peak resident memory of the process.
"""

from __future__ import annotations

import argparse
import resource
import time

import magpylib as magpy
import numpy as np

from deviation.physics import magnetised, soft_iron


def timed(function, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = function()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=10000)
    parser.add_argument("--matrices", type=int, default=10000)
    args = parser.parse_args()
    rng = np.random.default_rng(0)

    sides = np.array([1.0, 0.3, 0.2])
    points = rng.uniform(-2, 2, (args.points * 2, 3))
    points = points[np.any(np.abs(points) > sides / 2 + 1e-3, axis=1)][: args.points]
    ours, tensor = timed(lambda: magnetised.cuboid_tensor(points, sides))
    theirs, want = timed(lambda: np.stack([magpy.magnet.Cuboid(
        dimension=sides, polarization=np.eye(3)[j]).getB(points) for j in range(3)], axis=-1))
    print(f"cuboid   {len(points)} points x 3 magnetisations: ours {ours * 1e3:7.1f} ms, "
          f"magpylib {theirs * 1e3:7.1f} ms, ratio {ours / theirs:5.2f}, "
          f"max diff {np.max(np.abs(tensor - want)):.1e}")

    length, diameter = 1.0, 0.1
    points = rng.uniform(-1.5, 1.5, (args.points * 2, 3))
    rho = np.hypot(points[:, 0], points[:, 1])
    points = points[(rho > diameter / 2 + 1e-3) | (np.abs(points[:, 2]) > length / 2 + 1e-3)]
    points = points[: args.points]
    ours, tensor = timed(lambda: magnetised.cylinder_tensor(points, length, diameter))
    theirs, want = timed(lambda: np.stack([magpy.magnet.Cylinder(
        dimension=(diameter, length), polarization=np.eye(3)[j]).getB(points)
        for j in range(3)], axis=-1))
    print(f"cylinder {len(points)} points x 3 magnetisations: ours {ours * 1e3:7.1f} ms, "
          f"magpylib {theirs * 1e3:7.1f} ms, ratio {ours / theirs:5.2f}, "
          f"max diff {np.max(np.abs(tensor - want)):.1e}")

    matrices = rng.normal(scale=0.05, size=(args.matrices, 3, 3))
    fixed = rng.normal(scale=1.0, size=(args.matrices, 3))
    seconds, _ = timed(lambda: soft_iron.max_deviation_over_headings(matrices, fixed, 20.0, 40.0))
    print(f"exact max over headings: {args.matrices} sensors in {seconds * 1e3:.0f} ms "
          f"({seconds / args.matrices * 1e6:.1f} us each)")
    seconds, _ = timed(lambda: soft_iron.max_deviation_with_unknown_part(matrices, fixed, 20.0,
                                                                         40.0, 0.5))
    print(f"... with a part of unknown direction: {seconds / args.matrices * 1e6:.1f} us each")
    seconds, result = timed(lambda: soft_iron.max_deviation_over_attitude(
        matrices[0], fixed[0], 20.0, 40.0, 20.0, 10.0), repeat=1)
    print(f"attitude branch and bound (heel 20, pitch 10, tolerance "
          f"{result.tolerance_deg} deg): {seconds:.2f} s, bound {result.bound_deg:.4f} deg, "
          f"found {result.found_deg:.4f} deg")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak resident memory {peak:.0f} MB")


if __name__ == "__main__":
    main()
