"""Synthetic plans for the benchmarks: many runs of every return kind through a 12 m hull."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

KINDS = ("twisted", "paired", "separate", "none")


def write_plan(folder, n_runs, twisted_share=1 / 3, n_sensors=3, seed=1, n_independent=4,
               max_pitch_deg=10):
    """Write a plan of ``n_runs`` runs (a share of them twisted) on 40 circuits, the first
    ``n_independent`` of them switching on their own, and ``n_sensors`` compasses checked at
    heel 20 and pitch ``max_pitch_deg``, as CSV sheets; returns the folder."""
    rng = np.random.default_rng(seed)
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)

    def point(x_range=(0.5, 11.5)):
        return rng.uniform(*x_range), rng.uniform(-1.5, 1.5), rng.uniform(0.1, 1.6)

    def fmt(p):
        return ", ".join(f"{v:.3f}" for v in p)

    runs = [["run", "circuits", "route", "return", "return_route", "spacing", "lay", "size"]]
    n_twisted = int(round(n_runs * twisted_share))
    for i in range(n_runs):
        kind = "twisted" if i < n_twisted else KINDS[1 + (i % 3)]
        waypoints = [point() for _ in range(rng.integers(2, 5))]
        route = " > ".join(fmt(p) for p in waypoints)
        back = ""
        if kind == "separate":
            back = " > ".join(fmt(np.add(p, (0, 0, -0.15))) for p in waypoints[::-1])
        runs.append([f"run {i}", f"circuit {i % 40}", route, kind, back, "",
                     "25 mm" if kind == "twisted" else "", "12 AWG"])
    states = [["circuit", "harbour", "motoring", "anchoring", "switching"]]
    for c in range(40):
        states.append([f"circuit {c}", *np.round(rng.uniform(0, 20, 3), 2),
                       "independent" if c < n_independent else ""])
    sensors = [["sensor", "at", "kind", "budget_deg", "reference_state", "max_heel_deg",
                "max_pitch_deg"]]
    for s in range(n_sensors):
        sensors.append([f"sensor {s}", fmt((2.0 + 3 * s, 0.0, 2.4)), "magnetic compass", 1.0,
                        "harbour" if s % 2 == 0 else "", 20, max_pitch_deg])
    sheets = {
        "site": [["setting", "value"], ["units", "m"], ["latitude", 50.8], ["longitude", -1.3],
                 ["date", "2027-06-01"]],
        "runs": runs, "states": states, "sensors": sensors,
    }
    for name, rows in sheets.items():
        with open(folder / f"{name}.csv", "w", newline="") as f:
            csv.writer(f, lineterminator="\n").writerows(rows)
    return folder
