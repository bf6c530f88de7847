"""How far the bound of a pair of unknown lie lies over the true worst turn, at each distance.

    python bench/bench_lie_bound.py            # 1.5 to 60 spacings, 24 places about the axis

A 4 m pair (5 mm spacing, 10 mA) laid fore and aft, athwartships, upright and oblique; a level
magnetometer at each distance from its supply's axis (in spacings), at 24 angles about it, beside
the middle of the run. For each, the held figure as a field (H sin(held)) over the brute-force
worst turn of the return (magpylib, closed loops every 0.25 degrees). Prints the smallest and the
largest ratio per distance (a bound never goes under 1) and the time per check.
"""

from __future__ import annotations

import math
import time

import numpy as np

H_UT = 20.0


def _worst(route, spacing, at, current):
    import magpylib

    d = (route[1] - route[0]) / np.linalg.norm(route[1] - route[0])
    left = np.cross([0, 0, 1.0], d)
    left = left / np.linalg.norm(left) if np.linalg.norm(left) > 1e-9 else np.array([0, 1.0, 0])
    up = np.cross(d, left)
    sources = [magpylib.current.Polyline(current=current, vertices=np.vstack([
        route, (route + spacing * (math.cos(t) * left + math.sin(t) * up))[::-1], route[:1]]))
        for t in np.radians(np.arange(0, 360, 0.25))]
    b = np.asarray(magpylib.getB(sources, np.asarray(at))).reshape(-1, 3)
    return float(np.hypot(b[:, 0], b[:, 1]).max()), left, up


def main():
    import deviation

    spacing, current = 0.005, 0.01
    axes = {"fore and aft": [1, 0, 0], "athwartships": [0, 1, 0], "upright": [0, 0, 1],
            "oblique": [1, 0.6, 0.5]}
    rows = []
    took = []
    for spacings in (1.5, 2, 3, 5, 10, 60):
        ratios = []
        for axis in axes.values():
            d = np.asarray(axis, float) / np.linalg.norm(axis)
            route = np.array([-2 * d, 2 * d])
            _, left, up = _worst(route, spacing, np.zeros(3) + 9, current)
            for k in range(24):
                phi = 2 * math.pi * k / 24 + 0.1
                at = spacings * spacing * (math.cos(phi) * left + math.sin(phi) * up)
                plan = deviation.plan_from_tables({
                    "site": [{"setting": "horizontal_field_ut", "value": H_UT},
                             {"setting": "vertical_field_ut", "value": 40}],
                    "runs": [{"run": "pair", "circuits": "c", "return": "paired",
                              "route": " > ".join(", ".join(f"{v:.9g}" for v in p)
                                                  for p in route),
                              "spacing": f"{spacing * 1000:g} mm"}],
                    "states": [{"circuit": "c", "on": current}],
                    "sensors": [{"sensor": "m", "at": ", ".join(f"{v:.9g}" for v in at),
                                 "kind": "magnetometer", "budget_deg": 90}]})
                t0 = time.perf_counter()
                held = deviation.check(plan, remedies=False).sensors[0].states[0].held
                took.append(time.perf_counter() - t0)
                worst, _, _ = _worst(route, spacing, at, current)
                ratios.append(H_UT * 1e-6 * math.sin(math.radians(held)) / worst)
        rows.append((spacings, min(ratios), max(ratios)))
        print(f"{spacings:>5} spacings: bound / true worst turn  min {min(ratios):.4f}  "
              f"max {max(ratios):.4f}  ({len(ratios)} places)", flush=True)
    print(f"check per place: {np.median(took) * 1000:.0f} ms median")


if __name__ == "__main__":
    main()
