"""A whole check with many independently switched loads: the worst combination is found exactly.

    python bench/bench_independent.py [--circuits 30]

A synthetic plan of N single-conductor runs around one compass, each its own independent circuit
(a third of them reversing), with heel, pitch and a reference state. Prints the time of
``deviation.check`` with and without remedies, and, for up to 16 circuits, the brute-force worst
over every switching computed from the same fields, with the ratio and whether both agree.
"""

from __future__ import annotations

import argparse
import itertools
import resource
import time

import numpy as np


def plan_with(n, seed=2):
    import deviation

    rng = np.random.default_rng(seed)
    runs, states = [], []
    for i in range(n):
        a = rng.uniform(-3, 3, 3)
        b = a + rng.normal(size=3) * 2
        runs.append({"run": f"load {i}", "circuits": f"c{i}", "return": "none",
                     "route": f"{a[0]:.3f}, {a[1]:.3f}, {a[2]:.3f} > {b[0]:.3f}, {b[1]:.3f}, "
                              f"{b[2]:.3f}"})
        states.append({"circuit": f"c{i}", "harbour": 0.0, "under way": rng.uniform(0.2, 3),
                       "switching": "independent reversing" if i % 3 == 0 else "independent"})
    states.append({"circuit": "base", "harbour": 1.0, "under way": 2.0})
    runs.append({"run": "base", "circuits": "base", "return": "none",
                 "route": "-5, 0.4, -0.5 > 5, 0.4, -0.5"})
    return deviation.plan_from_tables({
        "site": [{"setting": "horizontal_field_ut", "value": 20},
                 {"setting": "vertical_field_ut", "value": 40}],
        "runs": runs, "states": states,
        "sensors": [{"sensor": "compass", "at": "0, 0, 0.5", "kind": "magnetic compass",
                     "budget_deg": 1, "reference_state": "harbour", "max_heel_deg": 20,
                     "max_pitch_deg": 10}]})


def brute(plan, result):
    """Worst level residual over every switching, from the package's per-ampere fields."""
    sensor = result.sensors[0]
    unit = sensor.unit_fields_t
    k = plan.state_index("under way")
    base = unit[-1] * (2.0 - 1.0)
    vectors = [unit[i] * plan.circuits[i].currents_a[k] for i in range(len(plan.circuits) - 1)]
    choices = [(-1, 0, 1) if c.reversing else (0, 1) for c in plan.circuits[:-1]]
    best = 0.0
    for choice in itertools.product(*choices):
        b = base + sum(s * v for s, v in zip(choice, vectors))
        best = max(best, float(np.hypot(b[0], b[1])))
    return float(np.degrees(np.arcsin(best / 20e-6)))


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, default=30)
    args = parser.parse_args()
    import deviation

    plan = plan_with(args.circuits)
    deviation.check(plan, remedies=False)                      # warm up imports
    t0 = time.process_time()
    result = deviation.check(plan, remedies=False)
    t_check = time.process_time() - t0
    t0 = time.process_time()
    deviation.check(plan)
    t_full = time.process_time() - t0
    st = result.sensors[0].state("under way")
    print(f"{args.circuits} independent circuits, heel 20, pitch 10, reference state: check "
          f"{t_check:.3f} CPU s, with remedies and the set of fixes {t_full:.2f} CPU s; held "
          f"{st.held:.4f}°, {len(st.switched_on)} circuits on in the worst case")
    small = min(args.circuits, 12)
    plan = plan_with(small)
    result = deviation.check(plan, remedies=False)
    level = result.sensors[0].state("under way").change_from_reference_deg
    t0 = time.perf_counter()
    expected = brute(plan, result)
    t_brute = time.perf_counter() - t0
    t0 = time.perf_counter()
    deviation.check(plan, remedies=False)
    t_small = time.perf_counter() - t0
    print(f"{small} circuits: level residual {level:.6f}° vs brute force {expected:.6f}° over "
          f"{np.prod([3 if c.reversing else 2 for c in plan.circuits[:-1]]):,} switchings "
          f"({t_brute:.2f} s; the whole check {t_small:.3f} s, {t_brute / t_small:.0f}x)")
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak resident memory {peak_mb:.0f} MB")


if __name__ == "__main__":
    main()
