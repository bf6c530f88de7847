"""A big plan through the whole check: 2 000 runs (a third twisted), 3 sensors.

    python bench/bench_big_plan.py
    python bench/bench_big_plan.py --runs 500

Writes the plan as CSV sheets in a temporary folder, runs `deviation check --json` on it in a
child process, and prints the wall time and the child's peak resident memory.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from synthetic import write_plan  # noqa: E402


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=2000)
    parser.add_argument("--sensors", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = write_plan(Path(tmp) / "big", args.runs, n_sensors=args.sensors)
        t0 = time.perf_counter()
        done = subprocess.run([sys.executable, "-m", "deviation.cli", "check", str(folder),
                               "--json"], capture_output=True, text=True)
        seconds = time.perf_counter() - t0
        peak_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    if done.returncode not in (0, 1):
        print(done.stderr)
        raise SystemExit(f"check failed with exit status {done.returncode}")
    data = json.loads(done.stdout)
    states = sum(len(s["states"]) for s in data["sensors"])
    print(f"plan: {args.runs} runs ({round(args.runs / 3)} twisted), {args.sensors} sensors, "
          f"{states} sensor-states")
    print(f"deviation check --json: {seconds:.2f} s wall, peak memory {peak_mb:.0f} MB, "
          f"exit status {done.returncode}")


if __name__ == "__main__":
    main()
