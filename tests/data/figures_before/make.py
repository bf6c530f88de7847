"""Write the figures the tool gave before the lean work (issue 20), as JSON, for
tests/analysis/test_same_figures.py to compare against.

Run once on main at commit 3006ea0 (before any change of the `lean` branch), and again when
steel items joined the samples (the merge of the steel work: the van and the sailboat gained
steel, and the area document its steel and cautions keys; every other figure as before):

    python tests/data/figures_before/make.py

Each case is one command line; its JSON output and exit status are stored in cases.json.gz. The
commands run in-process as the tests run them (click's CliRunner). For each spot box, also
every position of its grid with the held figure the per-position library call gave there.
"""

from __future__ import annotations

import gzip
import json
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[2]
sys.path.insert(0, str(ROOT / "bench"))
sys.path.insert(0, str(ROOT / "tests"))

SAMPLES = ("camper_van", "camper_van.xlsx", "cruising_sailboat", "survey_boom", "survey_drone")
#: A sensor and a small box around it for `spot --region` at a coarse step (sample, sensor,
#: corners, step), so that the search's stages and its final evaluation are both covered.
SPOT_BOXES = (
    ("camper_van", "dash compass", "16.5,0.3,4.0", "17.5,0.9,4.5", "2in"),
    ("cruising_sailboat", "helm compass", "1.4,-0.2,1.8", "1.8,0.2,2.1", "5cm"),
    ("cruising_sailboat", "autopilot sensor", "2.9,0.4,0.35", "3.2,0.7,0.6", "5cm"),
    ("survey_boom", "boom magnetometer", "1400,-100,-150", "1600,100,0", "25mm"),
    ("survey_boom", "fc compass", "-100,-60,100", "20,60,200", "20mm"),
    ("survey_drone", "mast magnetometer", "-100,-60,60", "20,60,200", "20mm"),
)
#: The synthetic plan of the benchmarks (bench/synthetic.py), small enough for a test.
SYNTHETIC_RUNS = 60


def commands(plan_of):
    """(name, argument list) of every case."""
    out = []
    for sample in SAMPLES:
        plan = plan_of(sample)
        for command in ("check", "card", "electronic", "per-amp", "area", "swing-state"):
            out.append((f"{sample} {command}", [command, plan, "--json"]))
    for sample, sensor, low, high, step in SPOT_BOXES:
        out.append((f"{sample} spot {sensor}", ["spot", plan_of(sample), "--sensor", sensor,
                                                "--region", low, high, "--step", step,
                                                "--json"]))
    synthetic = plan_of("synthetic")
    out.append(("synthetic check", ["check", synthetic, "--json"]))
    out.append(("synthetic card", ["card", synthetic, "--json"]))
    return out


def normalised(value, places):
    """A JSON value with the folders of the plans written as the words in ``places``
    ({folder: word}), so that it does not depend on where the plans lie."""
    if isinstance(value, dict):
        return {k: normalised(v, places) for k, v in value.items()}
    if isinstance(value, list):
        return [normalised(v, places) for v in value]
    if isinstance(value, str):
        for folder, word in places.items():
            value = value.replace(folder, word)
    return value


def run(args, places):
    """One command line in-process: its exit status and its JSON (or its text, when it
    printed no JSON), with the plans' folders written as words (:func:`normalised`)."""
    from conftest import run_cli

    result = run_cli(*args)
    try:
        data = json.loads(result.stdout)
    except ValueError:
        data = None
    text = None if data is not None else result.stdout + result.stderr
    return {"args": args, "exit": result.exit_code, "json": normalised(data, places),
            "text": normalised(text, places)}


def plan_maker(tmp):
    from synthetic import write_plan

    def plan_of(name):
        if name == "synthetic":
            return str(write_plan(Path(tmp) / "synthetic", SYNTHETIC_RUNS))
        return str(ROOT / "sample_installs" / name)
    return plan_of


def relative(args):
    """Arguments with the sample folder written relative to the repository and the temporary
    synthetic plan as the word SYNTHETIC."""
    out = []
    for a in args:
        if a.startswith(str(ROOT)):
            a = str(Path(a).relative_to(ROOT))
        elif a.endswith("/synthetic"):
            a = "SYNTHETIC"
        out.append(a)
    return out


def grid_figures(plan_path, sensor_name, low, high, step):
    """Every position of a spot box's grid at the step and the held figure there (the worst
    used state), each from the per-position library call with its full exact search
    (``budget.sensor_figures`` at the default caps); None inside a conductor."""
    import numpy as np

    from deviation import api, spot
    from deviation.analysis import parts_at
    from deviation.budget import sensor_figures
    from deviation.cli.spot import _step, _triple
    from deviation.sitefield import site_field

    plan = api.read_plan(plan_path)
    sensor = plan.sensor(sensor_name)
    unit = plan.site.units
    lo, hi = np.array(_triple(low, unit, "")), np.array(_triple(high, unit, ""))
    points = spot._points(spot._grid(np.minimum(lo, hi), np.maximum(lo, hi),
                                     _step(step, plan)))
    site = site_field(plan.site)
    used = np.array([sensor.used_in_state(s) for s in plan.state_names])
    held = []
    for point in points:
        parts = parts_at(plan, point[None, :])
        figures = sensor_figures(plan, sensor, site, parts, point[None, :])
        value = float(np.where(used, figures.held[0], -np.inf).max())
        held.append(None if parts.inside[0] else value)
    return {"points_m": points.tolist(), "held": held}


def main():
    cases = {}
    for sample, sensor, low, high, step in SPOT_BOXES:
        cases[f"{sample} grid {sensor}"] = grid_figures(str(ROOT / "sample_installs" / sample),
                                                        sensor, low, high, step)
    with tempfile.TemporaryDirectory() as tmp:
        places = {str(Path(tmp) / "synthetic"): "SYNTHETIC",
                  str(ROOT / "sample_installs"): "SAMPLES"}
        for name, args in commands(plan_maker(tmp)):
            case = run(args, places)
            case["args"] = relative(args)
            cases[name] = case
            print(name, case["exit"], file=sys.stderr)
    with gzip.open(HERE / "cases.json.gz", "wt") as f:
        json.dump(cases, f, indent=0, sort_keys=True)


if __name__ == "__main__":
    main()
