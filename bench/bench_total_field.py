"""Total-field worst switching beyond enumeration: the zonotope's vertices against brute force.

    python bench/bench_total_field.py                    # 30 circuits, brute force at 14
    python bench/bench_total_field.py --circuits 60 --brute 16

For random circuit fields in general position and for fields all in one plane (every run laid
fore and aft), prints the seconds per call of ``total_field.error_over_switchings`` (level, and
heel 20 / pitch 10), the number of vertex switchings scored, then the brute force over every
switching of the first ``--brute`` circuits: whether the largest error agrees, and how far the
smallest-error bound lies under the true smallest (never above it).
"""

from __future__ import annotations

import argparse
import resource
import time

import numpy as np

from deviation.physics.total_field import (
    all_switchings,
    error_over_switchings,
    total_field_error_range,
    vertex_switchings,
)

H_T, Z_T = 20e-6, 45e-6


def timed(function, repeat):
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = function()
        best = min(best, time.perf_counter() - t0)
    return best, result


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, default=30)
    parser.add_argument("--brute", type=int, default=14, help="circuits in the brute-force run")
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args()
    rng = np.random.default_rng(args.seed)
    for layout in ("general", "fore and aft"):
        vectors = rng.normal(scale=1e-6, size=(args.circuits, 3))          # [T]
        if layout == "fore and aft":
            vectors[:, 0] = 0.0
        base = rng.normal(scale=3e-7, size=3)
        reversing = np.zeros(args.circuits, dtype=bool)
        count = len(vertex_switchings(vectors, reversing))
        for label, heel, pitch in (("level", 0.0, 0.0), ("heel 20, pitch 10", 20.0, 10.0)):
            seconds, worst = timed(lambda: error_over_switchings(
                base, vectors, reversing, H_T, Z_T, heel, pitch, most=1), args.repeat)
            small = vectors[:args.brute]
            t_small, few = timed(lambda: error_over_switchings(
                base, small, reversing[:args.brute], H_T, Z_T, heel, pitch, most=1), 1)
            t0 = time.perf_counter()
            low, high = total_field_error_range(base + all_switchings(reversing[:args.brute])
                                                @ small, H_T, Z_T, heel, pitch)
            t_brute = time.perf_counter() - t0
            same = abs(few.high - high.max()) <= 1e-12 * high.max()
            print(f"{layout:>12}, {label:>17}: {args.circuits} circuits {seconds * 1e3:7.2f} ms "
                  f"({count} vertices; high {worst.high * 1e9:.2f} nT, low >= "
                  f"{worst.low * 1e9:.2f} nT); {args.brute} circuits {t_small * 1e3:.2f} ms vs "
                  f"brute force 2^{args.brute} {t_brute:.3f} s: same high {same}, low bound "
                  f"{(low.min() - few.low) * 1e9:.3f} nT under the true "
                  f"{low.min() * 1e9:.2f} nT (never above: {few.low <= low.min()})")
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak resident memory {peak_mb:.0f} MB")


if __name__ == "__main__":
    main()
