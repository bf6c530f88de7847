"""The spot search as a user runs it: ``deviation spot`` on the sailboat sample's helm compass,
a 1 x 1 x 0.6 m box around it at the default step (2 cm), in a fresh process each time.

    python bench/bench_spot_cli.py               # median of 3
    python bench/bench_spot_cli.py --repeat 5

Prints, for each repeat and as medians (the machine is shared: the median says more than any
one run), the child's CPU seconds, wall seconds and peak resident memory, with the positions
evaluated and the best figure found. The first run after an install also compiles the kernels
(numba caches them on disk); it is printed but left out of the medians when there are more.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from measure import load, run_child  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
COMMAND = [str(Path(sys.executable).parent / "deviation"), "spot", str(ROOT / "sample_installs" /
                                                           "cruising_sailboat"),
           "--sensor", "helm compass", "--region", "1.1,-0.5,1.65", "2.1,0.5,2.25", "--json"]


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    print("deviation spot sample_installs/cruising_sailboat --sensor 'helm compass' "
          "--region 1.1,-0.5,1.65 2.1,0.5,2.25 --json")
    rows = []
    for i in range(args.repeat):
        cpu, wall, rss, code, out, err = run_child(COMMAND)
        if code not in (0, 1):
            sys.exit(f"the spot search failed (exit {code}): {err.strip()}")
        data = json.loads(out)
        best = data["spots"][0]["held"]
        print(f"run {i + 1}: {cpu:.2f} CPU s, {wall:.2f} s wall, peak {rss:.0f} MB; "
              f"{data['evaluated']:,} positions evaluated, best {best}° ({load()})")
        rows.append((cpu, wall, rss))
    kept = rows[1:] if len(rows) > 1 else rows
    print(f"median of {len(kept)}: {statistics.median(r[0] for r in kept):.2f} CPU s, "
          f"{statistics.median(r[1] for r in kept):.2f} s wall, peak "
          f"{statistics.median(r[2] for r in kept):.0f} MB")


if __name__ == "__main__":
    main()
