"""How far a plan can grow: time and peak memory of a check as the steps that grow do.

    python bench/bench_limits.py                      # the table in docs/robustness.md
    python bench/bench_limits.py --circuits 200       # one plan: 200 independent circuits
    python bench/bench_limits.py --states 1000 --timeout 300

Each plan is checked in a fresh process (so the peak memory is its own), once without the
rerouting remedies and the set of fixes (``check --no-fixes``) and once with them (``check``),
each under a time limit. The plans are synthetic: single-conductor runs around one compass,
heel, pitch and a reference state; ``--circuits N`` makes N of them independently switched (a
third reversing), ``--states N`` gives 20 circuits N operating states (currents of 2-10 A: over
budget, so that the set of fixes has work).
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import time

WORKER = r"""
import json, resource, sys, time
import numpy as np
import deviation

circuits, states, fixes = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3] == "1"
rng = np.random.default_rng(2)
runs, rows = [], []
names = [f"s{k}" for k in range(states)]
for i in range(circuits):
    a = rng.uniform(-3, 3, 3)
    b = a + rng.normal(size=3) * 2
    runs.append({"run": f"load {i}", "circuits": f"c{i}", "return": "none",
                 "route": f"{a[0]:.3f}, {a[1]:.3f}, {a[2]:.3f} > {b[0]:.3f}, {b[1]:.3f}, "
                          f"{b[2]:.3f}"})
    row = {"circuit": f"c{i}", **{n: float(rng.uniform(0.2, 3) if states == 2 else
                                           rng.uniform(2, 10)) for n in names}}
    if states == 2 and circuits > 20:     # the switching plan: every circuit independent
        row["s0"] = 0.0
        row["switching"] = "independent reversing" if i % 3 == 0 else "independent"
    rows.append(row)
plan = deviation.plan_from_tables({
    "site": [{"setting": "horizontal_field_ut", "value": 20},
             {"setting": "vertical_field_ut", "value": 40}],
    "runs": runs, "states": rows,
    "sensors": [{"sensor": "compass", "at": "0, 0, 0.5", "kind": "magnetic compass",
                 "budget_deg": 1, "reference_state": "s0", "max_heel_deg": 20,
                 "max_pitch_deg": 10}]})
started = time.perf_counter()
result = deviation.check(plan, remedies=fixes)
seconds = time.perf_counter() - started
peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps({"seconds": seconds, "peak_mb": peak_mb,
                  "within": bool(result.within_budget)}))
"""

#: (independent circuits, states) of the default table.
CASES = [(25, 2), (50, 2), (100, 2), (200, 2), (20, 10), (20, 100), (20, 1000)]


def measure(circuits, states, fixes, timeout):
    started = time.perf_counter()
    try:
        done = subprocess.run([sys.executable, "-c", WORKER, str(circuits), str(states),
                               "1" if fixes else "0"], capture_output=True, text=True,
                              timeout=timeout)
    except subprocess.TimeoutExpired:
        return f"did not finish in {timeout:.0f} s"
    if done.returncode != 0:
        return "failed: " + (done.stderr.strip().splitlines() or ["?"])[-1]
    figures = json.loads(done.stdout.strip().splitlines()[-1])
    whole = time.perf_counter() - started
    return (f"{figures['seconds']:.1f} s ({whole:.1f} s with start-up), "
            f"{figures['peak_mb']:.0f} MB peak, {'within' if figures['within'] else 'over'}")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--circuits", type=int, help="independent circuits (2 states)")
    parser.add_argument("--states", type=int, help="operating states (20 circuits)")
    parser.add_argument("--timeout", type=float, default=300.0, help="seconds per check")
    args = parser.parse_args()
    if args.circuits or args.states:
        cases = [(args.circuits or 20, args.states or 2)]
    else:
        cases = CASES
    print("| plan | check --no-fixes | check (with the set of fixes) |")
    print("|---|---|---|")
    for circuits, states in cases:
        what = (f"{circuits} independent circuits, 2 states" if states == 2 else
                f"{circuits} circuits, {states} states")
        print(f"| {what} | {measure(circuits, states, False, args.timeout)} | "
              f"{measure(circuits, states, True, args.timeout)} |", flush=True)


if __name__ == "__main__":
    main()
