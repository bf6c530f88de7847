"""Volumes and owners of spots: the reader's findings, the search honouring keep-out and mount-in
boxes, the box around a sensor, and the pictures saying what they show."""

import numpy as np
import pytest

from conftest import straight_wire_plan
from deviation import spot as spot_module
from deviation.analysis import analyse, parts_at
from deviation.budget import equipment_fields, sensor_figures
from deviation.physics.field import segment_field
from deviation.plan import PlanError
from deviation.reader import read_plan


def cancelling_feeds(volumes=None, spots=None, sensors=None):
    # Two long parallel runs at y = +-1 m, z = 0 with equal currents the same way: by symmetry
    # (Biot-Savart, superposition) both the horizontal and the vertical field vanish on the line
    # y = 0, z = 0 alone, so with heel counted the held figure has its one minimum, 0, there.
    sheets = {
        "site": [["setting", "value"], ["horizontal_field_ut", 20], ["vertical_field_ut", 40]],
        "runs": [["run", "circuits", "route", "return"],
                 ["port feed", "feed", "-50, 1, 0 > 50, 1, 0", "none"],
                 ["starboard feed", "feed", "-50, -1, 0 > 50, -1, 0", "none"]],
        "states": [["circuit", "on"], ["feed", 20]],
        "sensors": sensors or [["sensor", "at", "kind", "budget_deg", "max_heel_deg"],
                               ["compass", "0, 0.6, 0.3", "magnetic compass", 1.0, 20],
                               ["autopilot", "0.5, 0.2, 0.2", "electronic compass", 5.0, 20]],
    }
    if volumes is not None:
        sheets["volumes"] = volumes
    if spots is not None:
        sheets["spots"] = spots
    return sheets


VOLUME_HEADER = ["volume", "kind", "from", "to", "for_sensor"]
# A slice across the feeds (x fixed): a 2-D grid in y and z.
SLICE_LOW, SLICE_HIGH, STEP = np.array([0.0, -0.5, -0.3]), np.array([0.0, 0.5, 0.3]), 0.01


def brute_best(plan, analysis, sensor, points):
    """Least held figure over the given points, every point evaluated (no coarse stage)."""
    conductors = analysis.conductors
    _, inside = segment_field(conductors.start_m, conductors.end_m,
                              conductors.segment_currents(plan.run_currents_a), points,
                              radius_m=conductors.radius_m, return_inside=True)
    items = equipment_fields(plan, sensor, points, analysis.site.horizontal_t)
    figures = sensor_figures(plan, sensor, analysis.site, parts_at(plan, points), points,
                             items=items)
    return np.where(inside, np.inf, figures.held.max(axis=1)).min()


def in_box(points, low, high):
    """Inside the closed box [low, high], written out here."""
    points = np.atleast_2d(points)
    return np.all((points >= np.asarray(low) - 1e-9) & (points <= np.asarray(high) + 1e-9), axis=1)


def slice_points():
    return spot_module._points(spot_module._grid(SLICE_LOW, SLICE_HIGH, STEP))


# --- the search --------------------------------------------------------------------------------

def test_unconstrained_optimum_is_inside_the_keep_out_box_used_below(plan_dir):
    # The premise of the next test: without volumes the best spot is the cancelling line.
    plan = read_plan(plan_dir(cancelling_feeds()))
    result = spot_module.search_box(plan, analyse(plan), plan.sensor("compass"), SLICE_LOW,
                                    SLICE_HIGH, STEP)
    assert in_box(result.spots[0].position_m, [-1, -0.1, -0.05], [1, 0.1, 0.05])[0]
    assert result.spots[0].held < 1e-9


def test_search_never_returns_a_spot_inside_a_keep_out_box(plan_dir, monkeypatch):
    low, high = [-1, -0.1, -0.05], [1, 0.1, 0.05]
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["midline", "keep out", "-1, -0.1, -0.05", "1, 0.1, 0.05", ""]])))
    analysis = analyse(plan)
    sensor = plan.sensor("compass")
    monkeypatch.setattr(spot_module, "COARSE_POINTS", 300)      # force coarse to fine
    result = spot_module.search_box(plan, analysis, sensor, SLICE_LOW, SLICE_HIGH, STEP, top=10)
    positions = np.array([s.position_m for s in result.spots])
    assert len(positions) == 10
    assert not in_box(positions, low, high).any()
    # The best allowed spot is the brute-force best over the grid outside the box (a mask
    # applied only to the coarse stage would let refined points inside win with 0 deg).
    points = slice_points()
    allowed = points[~in_box(points, low, high)]
    assert result.spots[0].held == pytest.approx(
        brute_best(plan, analysis, sensor, allowed), abs=1e-9)
    assert result.spots[0].held > 0.5              # pushed out of the cancelling line
    assert [v.name for v in result.volumes] == ["midline"]


def test_mount_in_box_restricts_the_spots_to_it(plan_dir):
    low, high = [-1, 0.2, -0.1], [1, 0.4, 0.1]
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["shelf", "mount in", "1, 0.4, 0.1", "-1, 0.2, -0.1", "compass"],
         ["other sensor's", "mount in", "0, -0.5, -0.3", "0, -0.4, -0.2", "autopilot"]])))
    analysis = analyse(plan)
    sensor = plan.sensor("compass")
    result = spot_module.search_box(plan, analysis, sensor, SLICE_LOW, SLICE_HIGH, STEP)
    positions = np.array([s.position_m for s in result.spots])
    assert in_box(positions, low, high).all()
    points = slice_points()
    assert result.spots[0].held == pytest.approx(
        brute_best(plan, analysis, sensor, points[in_box(points, low, high)]), abs=1e-9)
    # The figure grows away from the cancelling line: the best is the box's nearest edge to it.
    assert result.spots[0].position_m[1] == pytest.approx(0.2, abs=1e-9)
    assert result.spots[0].position_m[2] == pytest.approx(0.0, abs=1e-9)
    # The box, not the searched region, set the limit: no edge flag.
    assert not result.best_on_edge


def test_flat_mount_in_box_between_coarse_points_is_still_searched(plan_dir, monkeypatch):
    # A shelf top at z = 0.123 m, which no coarse grid point of the region lies on.
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["shelf top", "mount in", "-0.2, -0.3, 0.123", "0.2, 0.3, 0.123", ""]])))
    monkeypatch.setattr(spot_module, "COARSE_POINTS", 300)
    result = spot_module.search_box(plan, analyse(plan), plan.sensor("compass"),
                                    [-0.2, -0.5, -0.3], [0.2, 0.5, 0.3], STEP)
    assert result.spots
    assert all(s.position_m[2] == pytest.approx(0.123, abs=1e-12) for s in result.spots)


def test_region_outside_every_mount_in_box_gives_no_spot(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["locker", "mount in", "3, 0, 0", "3.5, 0.5, 0.5", ""]])))
    result = spot_module.search_box(plan, analyse(plan), plan.sensor("compass"), SLICE_LOW,
                                    SLICE_HIGH, STEP)
    assert result.spots == () and not result.within_budget and not result.best_on_edge


def test_best_spot_on_the_searched_box_face_is_flagged(plan_dir):
    # One long wire 0.5 m below the compass: its field falls as 1/r (Griffiths ch. 5), so the
    # best spot is as far above it as the box allows: on the top face, at a side.
    plan = read_plan(plan_dir(straight_wire_plan(current=20.0)))
    result = spot_module.search_box(plan, analyse(plan), plan.sensors[0], [-0.1, -0.2, 0.0],
                                    [0.1, 0.2, 0.3], 0.02)
    best = result.spots[0].position_m
    assert best[2] == pytest.approx(0.3, abs=1e-9)
    assert result.best_on_edge
    assert "z high" in result.edge_faces
    assert ("y low" in result.edge_faces) == (best[1] < 0)


def test_interior_best_spot_is_not_flagged(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds()))
    result = spot_module.search_box(plan, analyse(plan), plan.sensor("compass"), SLICE_LOW,
                                    SLICE_HIGH, STEP)
    assert not result.best_on_edge and result.edge_faces == ()


def test_ranking_leaves_out_spots_the_volumes_forbid(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["engine", "keep out", "-1, -0.1, -0.1", "1, 0.1, 0.1", ""]],
        [["spot", "at"], ["on the line", "0, 0, 0"], ["beside", "0, 0.3, 0"],
         ["above", "0, 0, 0.2"]])))
    result = spot_module.rank_positions(plan, analyse(plan), plan.sensor("compass"),
                                        [s.position_m for s in plan.spots],
                                        [s.name for s in plan.spots])
    assert [s.name for s in result.spots] == ["beside", "above"]
    assert result.excluded == (("on the line", 'inside keep-out "engine"'),)


def test_ranking_keeps_only_spots_inside_the_sensors_mount_in_boxes(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["shelf", "mount in", "-1, 0.2, -0.1", "1, 0.4, 0.1", "compass"],
         ["pod box", "mount in", "-1, -0.5, -0.1", "1, -0.4, 0.1", "autopilot"]],
        [["spot", "at"], ["on the line", "0, 0, 0"], ["on the shelf", "0, 0.3, 0"],
         ["shelf edge", "0, 0.4, 0.1"], ["in the pod box", "0, -0.45, 0"]])))
    analysis = analyse(plan)
    positions, names = [s.position_m for s in plan.spots], [s.name for s in plan.spots]
    result = spot_module.rank_positions(plan, analysis, plan.sensor("compass"), positions, names)
    assert [s.name for s in result.spots] == ["on the shelf", "shelf edge"]   # faces count
    assert dict(result.excluded) == {"on the line": "outside every mount-in volume",
                                     "in the pod box": "outside every mount-in volume"}
    other = spot_module.rank_positions(plan, analysis, plan.sensor("autopilot"), positions, names)
    assert [s.name for s in other.spots] == ["in the pod box"]


def test_spots_for_keeps_the_sensors_own_and_the_shared_spots(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds(spots=[
        ["spot", "at", "for_sensor"], ["binnacle", "0, 0.1, 0.3", "Compass"],
        ["pod", "0, 0.2, 0.3", "autopilot"], ["anywhere", "0, 0.3, 0.3", "all"],
        ["blank", "0, 0.4, 0.3", ""]])))
    assert [s.name for s in spot_module.spots_for(plan, plan.sensor("compass"))] == [
        "binnacle", "anywhere", "blank"]
    assert [s.name for s in spot_module.spots_for(plan, plan.sensor("autopilot"))] == [
        "pod", "anywhere", "blank"]


# --- the box around a sensor -------------------------------------------------------------------

def test_search_box_around_is_clipped_to_the_plan_extent(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds()))
    low, high = spot_module.search_box_around(plan, plan.sensor("compass"), 2.0)
    # Extent: runs x -50..50, y -1..1, z 0; sensors up to z 0.3; margin 0.1 m.
    np.testing.assert_allclose(low, [-2.0, -1.1, -0.1], atol=1e-12)
    np.testing.assert_allclose(high, [2.0, 1.1, 0.4], atol=1e-12)


def test_search_box_around_is_cut_to_the_sensors_mount_in_boxes(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["shelf", "mount in", "-0.3, 0.5, 0.1", "0.3, 0.8, 0.2", "compass"],
         ["locker", "mount in", "10, 0, 0", "11, 0.5, 0.2", "compass"]])))
    low, high = spot_module.search_box_around(plan, plan.sensor("compass"), 0.5)
    np.testing.assert_allclose(low, [-0.3, 0.5, 0.1], atol=1e-12)
    np.testing.assert_allclose(high, [0.3, 0.8, 0.2], atol=1e-12)
    # The other sensor has no mount-in box: only the extent cuts its cube.
    low, high = spot_module.search_box_around(plan, plan.sensor("autopilot"), 0.5)
    np.testing.assert_allclose(low, [0.0, -0.3, -0.1], atol=1e-12)
    np.testing.assert_allclose(high, [1.0, 0.7, 0.4], atol=1e-12)


def test_search_box_around_moves_to_the_nearest_mount_in_box_out_of_reach(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["locker", "mount in", "10, 0, 0", "11, 0.5, 0.2", "compass"],
         ["far locker", "mount in", "30, 0, 0", "31, 0.5, 0.2", "compass"]])))
    low, high = spot_module.search_box_around(plan, plan.sensor("compass"), 0.25)
    # The nearest point of the nearest box to (0, 0.6, 0.3) is (10, 0.5, 0.2).
    np.testing.assert_allclose(low, [10.0, 0.25, 0.0], atol=1e-12)
    np.testing.assert_allclose(high, [10.25, 0.5, 0.2], atol=1e-12)


def test_search_box_around_needs_a_positive_size(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds()))
    with pytest.raises(ValueError, match="more than zero"):
        spot_module.search_box_around(plan, plan.sensor("compass"), 0.0)


# --- the reader --------------------------------------------------------------------------------

def findings_of(sheets, plan_dir):
    with pytest.raises(PlanError) as caught:
        read_plan(plan_dir(sheets))
    return [str(f) for f in caught.value.findings]


def test_reader_reads_volumes_with_corners_in_order_and_kinds_in_any_spelling(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER + ["note"],
         ["engine", "Keep-Out", "1, 1, 1", "0, 0, 0", "", "hot"],
         ["shelf", "mount_in", "0, 0, 0.5", "1, 1, 0.5", "ALL", ""],
         ["pod", "mount in", "0, 0, 0", "10 cm, 20 cm, 30 cm", "autopilot", ""]])))
    engine, shelf, pod = plan.volumes
    assert (engine.kind, shelf.kind, pod.kind) == ("keep out", "mount in", "mount in")
    np.testing.assert_allclose(engine.low_m, [0, 0, 0])
    np.testing.assert_allclose(engine.high_m, [1, 1, 1])
    np.testing.assert_allclose(pod.high_m, [0.1, 0.2, 0.3])
    assert (engine.for_sensor, shelf.for_sensor, pod.for_sensor) == (None, None, "autopilot")
    assert engine.note == "hot"


def test_reader_locates_bad_volume_cells(plan_dir):
    found = findings_of(cancelling_feeds(
        [VOLUME_HEADER,
         ["engine", "keep outt", "0, 0, 0", "1, 1, 1", ""],
         ["engine", "mount in", "0, 0, 0", "1, 1, 1", ""],
         ["shelf", "mount in", "0, 0", "1, 1, 1", ""],
         ["pod", "mount in", "0, 0, 0", "", "compas"],
         ["wall", "keep out", "0, 0, 0", "1, 1, 0", ""],
         ["", "", "0, 0, 0", "1, 1, 1", ""]]), plan_dir)
    text = "\n".join(found)
    assert ('volumes row 2, kind: "keep outt" is not a kind of volume; expected one of mount '
            'in, keep out; did you mean "keep out"?') in text
    assert 'volumes row 3, volume: "engine" is named twice' in text
    assert 'volumes row 4, from: "0, 0" is neither a point' in text
    assert "volumes row 5, to: a corner of the box is needed" in text
    assert ('volumes row 5, for_sensor: "compas" is not a sensor in the sensors sheet (blank or '
            'all: every sensor); did you mean "compass"?') in text
    assert "volumes row 6, to: a keep-out box with no thickness in z keeps nothing out" in text
    assert "volumes row 7, volume: the volume has no name" in text
    assert "volumes row 7, kind: say mount in" in text


def test_reader_reports_a_missing_volumes_column(plan_dir):
    found = findings_of(cancelling_feeds([["volume", "kind", "from"],
                                          ["engine", "keep out", "0, 0, 0"]]), plan_dir)
    assert any("volumes" in f and "to: the required column is missing" in f for f in found)


def test_reader_locates_an_unknown_spot_owner_with_a_suggestion(plan_dir):
    found = findings_of(cancelling_feeds(spots=[["spot", "at", "for_sensor"],
                                                ["pod", "0, 0.2, 0.3", "autopilt"]]), plan_dir)
    assert found == [f'{found[0].split(":")[0]}: spots row 2, for_sensor: "autopilt" is not a '
                     'sensor in the sensors sheet (blank or all: every sensor); did you mean '
                     '"autopilot"?']


def test_reader_keeps_the_spot_owner_as_the_sensors_sheet_spells_it(plan_dir):
    plan = read_plan(plan_dir(cancelling_feeds(spots=[["spot", "at", "for_sensor"],
                                                      ["pod", "0, 0.2, 0.3", " AUTOPILOT "]])))
    assert plan.spots[0].for_sensor == "autopilot"
    assert plan.volumes == ()


# --- the pictures ------------------------------------------------------------------------------

@pytest.fixture
def drawn(monkeypatch):
    """The matplotlib figures the plot functions save, kept open for inspection."""
    from deviation.render import plots

    figures = []

    def keep(fig, path, fmt=None):
        figures.append(fig)
        return b""

    monkeypatch.setattr(plots, "_save", keep)
    monkeypatch.setattr(plots._pyplot(), "close", lambda fig: None)
    return figures


def test_spot_map_states_the_slice_height_and_where_the_sensor_is(plan_dir, drawn):
    from deviation.render.plots import spot_map

    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["midline", "keep out", "-1, -0.1, -0.05", "1, 0.1, 0.05", ""]])))
    analysis = analyse(plan)
    sensor = plan.sensor("compass")                       # at z = 0.3 m
    result = spot_module.search_box(plan, analysis, sensor, [-0.2, -0.4, -0.2],
                                    [0.2, 0.4, 0.2], 0.02)
    z = -0.12
    x, y, figure = spot_module.slice_map(plan, analysis, sensor, *result.region, z, resolution=20)
    spot_map(plan, result, x, y, figure, "map.png", z_m=z)
    fig = drawn[0]
    main_axes, bar_axes = fig.axes[0], fig.axes[1]
    assert "z = -0.12 m" in main_axes.get_title()
    assert "z = -0.12 m" in bar_axes.get_ylabel()
    legend = [t.get_text() for t in main_axes.get_legend().get_texts()]
    assert "sensor now, 420 mm above this slice" in legend      # 0.3 - (-0.12) = 0.42 m
    marker = next(line for line in main_axes.get_lines()
                  if line.get_label().startswith("sensor now"))
    assert marker.get_markerfacecolor() == "none"                   # hollow
    # The keep-out box meets the slice? No: it spans z -0.05..0.05, the slice is at -0.12.
    assert "keep-out volume" not in legend


def test_spot_map_sensor_in_the_slice_is_a_solid_cross(plan_dir, drawn):
    from deviation.render.plots import spot_map

    plan = read_plan(plan_dir(cancelling_feeds(
        [VOLUME_HEADER, ["midline", "keep out", "-1, -0.1, 0.2", "1, 0.1, 0.4", ""]])))
    analysis = analyse(plan)
    sensor = plan.sensor("compass")
    result = spot_module.search_box(plan, analysis, sensor, [-0.2, -0.4, 0.3], [0.2, 0.8, 0.3],
                                    0.02)
    x, y, figure = spot_module.slice_map(plan, analysis, sensor, *result.region, 0.3,
                                         resolution=20)
    spot_map(plan, result, x, y, figure, "map.png", z_m=0.3)
    legend = [t.get_text() for t in drawn[0].axes[0].get_legend().get_texts()]
    assert "sensor now (in this slice)" in legend
    assert "keep-out volume" in legend


def test_plan_view_colours_runs_by_height_and_draws_equipment(plan_dir, drawn):
    from matplotlib.collections import LineCollection

    from deviation.render.plots import plan_view

    sheets = cancelling_feeds([VOLUME_HEADER, ["engine", "keep out", "0, 0, 0", "1, 1, 1", ""]])
    sheets["runs"].append(["riser", "feed", "2, 0, 0 > 2, 0, 1 > 3, 0, 1", "none"])
    sheets["equipment"] = [["item", "at", "safe_distance", "safe_distance_for"],
                           ["speaker", "1, 0.5, 0.4", "0.8 m", "standard"]]
    plan_view(read_plan(plan_dir(sheets)))
    fig = drawn[0]
    ax, bar = fig.axes[0], fig.axes[1]
    assert "height" in bar.get_ylabel()
    heights = np.concatenate([c.get_array() for c in ax.collections
                              if isinstance(c, LineCollection)])
    # The riser's two stretches: up (mean z 0.5) and level at 1; the feeds at 0.
    assert sorted(set(np.round(heights, 9))) == [0.0, 0.5, 1.0]
    texts = [t.get_text() for t in ax.texts]
    assert "speaker (z 0.40)" in texts
    assert "riser (z 0.75)" in texts           # length-weighted: (1 m * 0.5 + 1 m * 1) / 2 m
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert {"sensor", "equipment", "keep-out volume"} <= set(legend)
