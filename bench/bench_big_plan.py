"""A big plan through the whole check: 2 000 runs (a third twisted), 3 sensors.

    python bench/bench_big_plan.py
    python bench/bench_big_plan.py --runs 500

Writes the plan as CSV sheets in a temporary folder (synthetic.py: a third of the runs twisted,
40 circuits of which 4 switch on their own, compasses at heel 20 and pitch 10), runs
`deviation check --json` on it in a child process, and prints the child's CPU seconds, wall
seconds and peak resident memory (os.wait4: that child alone).
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from measure import load, run_child  # noqa: E402
from synthetic import write_plan  # noqa: E402


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=2000)
    parser.add_argument("--sensors", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = write_plan(Path(tmp) / "big", args.runs, n_sensors=args.sensors)
        cpu, wall, peak_mb, code, out, err = run_child(
            [sys.executable, "-m", "deviation.cli", "check", str(folder), "--json"])
    if code not in (0, 1):
        print(err)
        raise SystemExit(f"check failed with exit status {code}")
    data = json.loads(out)
    states = sum(len(s["states"]) for s in data["sensors"])
    print(f"plan: {args.runs} runs ({round(args.runs / 3)} twisted), {args.sensors} sensors, "
          f"{states} sensor-states; {load()}")
    print(f"deviation check --json: {cpu:.2f} CPU s, {wall:.2f} s wall, peak memory "
          f"{peak_mb:.0f} MB, exit status {code}")


if __name__ == "__main__":
    main()
