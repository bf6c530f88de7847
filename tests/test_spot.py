"""The spot search finds the known optimum, matches brute force, and ranks a spots sheet."""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from conftest import SAMPLES
from deviation import spot as spot_module
from deviation.analysis import analyse, parts_at
from deviation.budget import budget_figures, equipment_fields
from deviation.cli import main
from deviation.field import segment_field
from deviation.reader import read_plan


def twin_feeds():
    # Two long parallel runs 2 m apart carrying equal currents the same way: by symmetry
    # (Biot-Savart, superposition) their fields cancel on the midline y = 0, z = 0.
    return {
        "site": [["setting", "value"], ["horizontal_field_ut", 20], ["vertical_field_ut", 40]],
        "runs": [["run", "circuits", "route", "return"],
                 ["port feed", "feed", "-50, 1, 0 > 50, 1, 0", "none"],
                 ["starboard feed", "feed", "-50, -1, 0 > 50, -1, 0", "none"]],
        "states": [["circuit", "on"], ["feed", 20]],
        "sensors": [["sensor", "at", "kind", "budget_deg"],
                    ["compass", "0, 0.6, 0.3", "magnetic compass", 1.0]],
        "spots": [["spot", "at"], ["midline", "0, 0, 0"], ["off", "0, 0.4, 0"],
                  ["far off", "0, 0.8, 0.1"]],
    }


def test_search_finds_the_midline_where_the_fields_cancel(plan_dir):
    plan = read_plan(plan_dir(twin_feeds()))
    analysis = analyse(plan)
    step = 0.01
    result = spot_module.search_box(plan, analysis, plan.sensors[0], np.array([-0.2, -0.7, -0.3]),
                                    np.array([0.2, 0.5, 0.25]), step)
    best = result.spots[0]
    assert abs(best.position_m[1]) <= step / 2 + 1e-12
    assert abs(best.position_m[2]) <= step / 2 + 1e-12
    assert best.budget_used_deg < 1e-6
    assert result.grid_points > result.evaluated          # coarse to fine, not every point


def test_coarse_to_fine_matches_brute_force_on_a_sample(monkeypatch):
    plan = read_plan(SAMPLES / "cruising_sailboat")
    analysis = analyse(plan)
    sensor = plan.sensors[1]
    # A grid of 21 x 21 x 6 points, searched coarse to fine (the coarse stage is forced small).
    low, high, step = np.array([2.6, 0.1, 0.3]), np.array([3.4, 0.9, 0.5]), 0.04
    monkeypatch.setattr(spot_module, "COARSE_POINTS", 300)
    result = spot_module.search_box(plan, analysis, sensor, low, high, step)
    axes = spot_module._grid(low, high, step)
    points = spot_module._points(axes)
    conductors = analysis.conductors
    _, inside = segment_field(conductors.start_m, conductors.end_m,
                              conductors.segment_currents(plan.run_currents_a), points,
                              radius_m=conductors.radius_m, return_inside=True)
    items = equipment_fields(plan, sensor, points, analysis.site.horizontal_t)
    figures = budget_figures(plan, sensor, analysis.site.horizontal_t, parts_at(plan, points),
                             items)
    brute = np.where(inside, np.inf, figures.budget_used_deg.max(axis=1))
    assert result.spots[0].budget_used_deg == pytest.approx(brute.min(), abs=1e-9)


def test_spots_sheet_is_ranked_best_first(plan_dir):
    plan = read_plan(plan_dir(twin_feeds()))
    result = spot_module.rank_positions(plan, analyse(plan), plan.sensors[0],
                                        [s.position_m for s in plan.spots],
                                        [s.name for s in plan.spots])
    assert [s.name for s in result.spots] == ["midline", "off", "far off"]
    assert result.spots[0].budget_used_deg < 1e-9


def test_spot_command_json_layout_and_plot(plan_dir, tmp_path):
    path = plan_dir(twin_feeds())
    plot = tmp_path / "map.png"
    result = CliRunner().invoke(main, ["spot", str(path), "--sensor", "compass", "--region",
                                       "-0.2,-0.5,-0.2", "0.2,0.5,0.2", "--step", "2cm",
                                       "--json", "--plot", str(plot)])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["sensor"] == "compass"
    first = data["spots"][0]
    assert set(first) >= {"position_m", "budget_used_deg", "worst_state"}
    assert abs(first["position_m"][1]) <= 0.01
    figures = [s["budget_used_deg"] for s in data["spots"]]
    assert figures == sorted(figures)
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_spot_command_ranks_the_spots_sheet_without_a_region(plan_dir):
    result = CliRunner().invoke(main, ["spot", str(plan_dir(twin_feeds())), "--sensor",
                                       "compass", "--width", "120"])
    assert result.exit_code == 0, result.output
    assert result.output.index("midline") < result.output.index("far off")


def test_spot_command_unknown_sensor_exits_2(plan_dir):
    result = CliRunner().invoke(main, ["spot", str(plan_dir(twin_feeds())), "--sensor", "helm",
                                       "--region", "0,0,0", "1,1,1"])
    assert result.exit_code == 2
    assert 'no sensor "helm" in the plan; it has: compass' in result.output


def test_spot_command_bad_region_exits_2(plan_dir):
    result = CliRunner().invoke(main, ["spot", str(plan_dir(twin_feeds())), "--sensor",
                                       "compass", "--region", "0,0", "1,1,1"])
    assert result.exit_code == 2
    assert "is not x,y,z" in result.output
