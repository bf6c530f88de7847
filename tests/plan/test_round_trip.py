"""``new --from``: the user's own plan written back as a workbook, as they would type it, that
reads back to the same plan and the same figures."""

import csv

import numpy as np
import openpyxl
import pytest
from click.testing import CliRunner

from conftest import SAMPLES, straight_wire_plan
from deviation import api
from deviation.cli import main
from deviation.reader import plan_from_tables, read_plan
from deviation.template import length_text, plan_rows, shortest_number, write_plan

SAMPLE_NAMES = tuple(sorted(p.name for p in SAMPLES.iterdir() if p.is_dir()))


def written(tmp_path, source):
    path = tmp_path / "copy.xlsx"
    result = CliRunner().invoke(main, ["new", str(path), "--from", str(source)])
    assert result.exit_code == 0, result.output
    return path


def sheet_rows(path, title):
    """A sheet of the written workbook as dicts by column."""
    rows = list(openpyxl.load_workbook(path)[title].iter_rows(values_only=True))
    return [dict(zip(rows[0], r)) for r in rows[1:]]


def csv_rows(folder, name):
    with open(SAMPLES / folder / f"{name}.csv", newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def assert_same_plan(a, b):
    assert a.site.units == b.site.units and a.site.notes == b.site.notes
    for name in ("latitude_deg", "longitude_deg", "decimal_year", "date_text", "altitude_m",
                 "horizontal_ut", "vertical_ut"):
        assert getattr(a.site, name) == getattr(b.site, name), name
    assert [n for n, _ in a.points] == [n for n, _ in b.points]
    for (_, p), (_, q) in zip(a.points, b.points):
        np.testing.assert_array_equal(p, q)
    assert a.item_notes == b.item_notes
    assert a.state_names == b.state_names
    assert [(c.name, c.switching, c.note) for c in a.circuits] == [
        (c.name, c.switching, c.note) for c in b.circuits]
    np.testing.assert_array_equal(a.circuit_currents_a, b.circuit_currents_a)
    assert [(r.name, r.circuits, r.size, r.note, r.lie) for r in a.runs] == [
        (r.name, r.circuits, r.size, r.note, r.lie) for r in b.runs]
    for r, s in zip(a.runs, b.runs):
        g, h = r.geometry, s.geometry
        assert (g.return_kind, g.spacing_m, g.lay_m, g.radius_m, g.untwisted_end_m) == (
            h.return_kind, h.spacing_m, h.lay_m, h.radius_m, h.untwisted_end_m)
        np.testing.assert_array_equal(g.route_m, h.route_m)
        if g.return_route_m is not None:
            np.testing.assert_array_equal(g.return_route_m, h.return_route_m)
    for s, t in zip(a.sensors, b.sensors, strict=True):
        assert (s.name, s.kind, s.budget.value, s.reference_state, s.max_heel_deg,
                s.max_pitch_deg, s.used_in, s.note) == (
            t.name, t.kind, t.budget.value, t.reference_state, t.max_heel_deg, t.max_pitch_deg,
            t.used_in, t.note)
        np.testing.assert_array_equal(s.position_m, t.position_m)
    for e, f in zip(a.equipment, b.equipment, strict=True):
        assert (e.name, e.safe_distance_m, e.safe_distance_for, e.moment_am2, e.states,
                e.note) == (f.name, f.safe_distance_m, f.safe_distance_for, f.moment_am2,
                            f.states, f.note)
        np.testing.assert_array_equal(e.position_m, f.position_m)
    assert [(p.name, p.for_sensor) for p in a.spots] == [(p.name, p.for_sensor) for p in b.spots]
    assert [(v.name, v.kind, v.for_sensor, v.note) for v in a.volumes] == [
        (v.name, v.kind, v.for_sensor, v.note) for v in b.volumes]
    for v, w in zip(a.volumes, b.volumes):
        np.testing.assert_array_equal(v.low_m, w.low_m)
        np.testing.assert_array_equal(v.high_m, w.high_m)


def assert_same_figures(a, b):
    first, again = api.check(a), api.check(b)
    for s, t in zip(first.sensors, again.sensors, strict=True):
        for x, y in zip(s.states, t.states, strict=True):
            # The same plan computed twice (exact inputs, the same code path).
            assert y.held == pytest.approx(x.held, rel=1e-9, abs=1e-12)
            np.testing.assert_allclose(y.field_t, x.field_t, rtol=1e-9, atol=1e-18)


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_each_sample_written_by_new_from_reads_back_to_the_same_plan_and_figures(name, tmp_path):
    original = read_plan(SAMPLES / name)
    again = read_plan(written(tmp_path, SAMPLES / name))
    assert_same_plan(original, again)
    assert_same_figures(original, again)


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_each_sample_is_written_in_its_own_units_with_its_numbers_and_notes(name, tmp_path):
    path = written(tmp_path, SAMPLES / name)
    written_rows = sheet_rows(path, "site")
    site = {r["setting"]: r for r in written_rows if r["setting"] != "place"}
    for row in csv_rows(name, "site"):
        if row["setting"] != "place":
            assert (site[row["setting"]]["note"] or "") == row["note"]
    # Places of the operating area, one row each, their names in the note, in order.
    assert [(r["note"] or "") for r in written_rows if r["setting"] == "place"] == [
        r["note"] for r in csv_rows(name, "site") if r["setting"] == "place"]
    assert site["units"]["value"] == csv_rows(name, "site")[0]["value"]
    points = sheet_rows(path, "points")
    for mine, theirs in zip(points, csv_rows(name, "points"), strict=True):
        assert mine["point"] == theirs["point"] and (mine["note"] or "") == theirs["note"]
        # The number the user typed, as a workbook number in the plan's units.
        assert [mine[a] for a in "xyz"] == [float(theirs[a]) for a in "xyz"]
    for mine, theirs in zip(sheet_rows(path, "runs"), csv_rows(name, "runs"), strict=True):
        assert mine["circuits"] == theirs["circuits"] and (mine["note"] or "") == theirs["note"]
        # Waypoints: the same point names, the same numbers (written without trailing zeros).
        for route in ("route", "return_route"):
            ours = mine[route].split(" > ") if mine[route] else []
            typed = theirs[route].split(" > ") if theirs[route] else []
            assert len(ours) == len(typed)
            for a, b in zip(ours, typed):
                if "," in b:
                    assert [float(v) for v in a.split(",")] == [float(v) for v in b.split(",")]
                else:
                    assert a == b
        # Left to the size where the sample leaves it so, else as typed (with its unit).
        assert mine["spacing"] == (theirs.get("spacing") or None)
    states = sheet_rows(path, "states")
    for mine, theirs in zip(states, csv_rows(name, "states"), strict=True):
        assert (mine["note"] or "") == theirs["note"]
        assert mine["switching"] == (theirs.get("switching") or None)
        for state in list(theirs)[1:]:
            if state not in ("switching", "note"):
                assert mine[state] == float(theirs[state])


def test_the_van_is_written_as_its_owner_typed_it(tmp_path):
    path = written(tmp_path, SAMPLES / "camper_van")
    points = {r["point"]: r for r in sheet_rows(path, "points")}
    assert (points["house battery"]["x"], points["house battery"]["y"]) == (13.6, -1.6)   # ft
    runs = {r["run"]: r for r in sheet_rows(path, "runs")}
    assert runs["inverter feed"]["route"] == "house battery > 13, -1, 0.9 > 7, 1.8, 0.9 > inverter"
    assert runs["inverter feed"]["return_route"] == (
        "inverter > frame rear > 6.2, -1.8, 1 > frame front > house battery")
    assert runs["roof fan"]["lay"] == "1 in" and runs["roof fan"]["lie"] is None
    [sensor] = sheet_rows(path, "sensors")
    assert (sensor["at"], sensor["max_heel_deg"], sensor["max_pitch_deg"], sensor["used_in"]) == (
        "17, 0.6, 4.2", 5, 6, "driving")


def test_the_drone_keeps_its_decimal_year_and_its_oriented_magnet(tmp_path):
    path = written(tmp_path, SAMPLES / "survey_drone")
    site = {r["setting"]: r["value"] for r in sheet_rows(path, "site")}
    assert (site["units"], site["date"]) == ("mm", 2028.3)
    [item] = sheet_rows(path, "equipment")
    assert (item["at"], item["axis"], item["moment_am2"], item["states"]) == (
        "90, 0, -60", "0, 0, 1", 0.02, "hover; climb")


def test_the_sailboat_lay_is_written_with_its_unit(tmp_path):
    runs = {r["run"]: r for r in sheet_rows(written(tmp_path, SAMPLES / "cruising_sailboat"),
                                            "runs")}
    assert runs["stern light"]["lay"] == "25 mm"
    assert runs["windlass feed"]["route"].startswith("house bank > 6, -0.75, 0.35 > ")


@pytest.mark.parametrize("metres, unit, text", [
    (13.6 * 0.3048, "ft", "13.6"),          # 4.1452800000000005 m
    (0.85, "ft", "850 mm"),                 # no short decimal in feet reads back: another unit
    (0.1 + 0.2, "m", "0.30000000000000004 m"),   # none in any unit: full precision in metres
    (1.2e6, "m", "1200000"), (1e-5, "m", "0.00001"), (-0.0, "m", "0"),
])
def test_lengths_are_written_with_the_shortest_decimal_that_reads_back(metres, unit, text):
    assert length_text(metres, unit) == text
    # Read back as the reader reads it: the number times the unit's size in metres.
    number, _, written_unit = text.partition(" ")
    from deviation.units import LENGTH_UNITS, parse_length

    assert parse_length(text, unit) == metres
    assert float(number) * LENGTH_UNITS[written_unit or unit] == metres


def test_shortest_number_reads_back_to_the_last_bit_however_many_digits_it_needs():
    # 0.85 m in feet needs 17 significant digits: too many for a person, so length_text goes
    # on to another unit; the number itself still reads back exactly.
    text = shortest_number(0.85, "ft")
    assert text == "2.7887139107611545" and float(text) * 0.3048 == 0.85
    assert shortest_number(13.6 * 0.3048, "ft") == "13.6"
    assert shortest_number(0.1 + 0.2, "m") == "0.30000000000000004"


def _awkward_tables():
    """A plan with everything the samples lack: spots and volumes with notes, an independent
    circuit, a used_in, a pitch, a twisted run with untwisted ends, a lie, a spacing of its own,
    lengths in other units, a point named like coordinates, and a measured field."""
    sheets = straight_wire_plan(reference="off", states=[["circuit", "on", "off", "switching",
                                                          "note"],
                                                         ["feed", 10, 0, "", "main"],
                                                         ["winch", 40, 40, "independent", ""]])
    sheets["site"] = [["setting", "value", "note"], ["units", "ft", "imperial"],
                      ["horizontal_field_ut", 20, "measured"], ["vertical_field_ut", 40, ""]]
    sheets["points"] = [["point", "x", "y", "z", "note"], ["a", "850 mm", 0, -2, "metric"],
                        ["1, 1, 1", 3, 3, 3, "named like coordinates"], ["b", 1, 1, 1, ""]]
    sheets["runs"] = [["run", "circuits", "route", "return", "spacing", "lay", "lie",
                       "untwisted_ends", "size", "note"],
                      ["long feed", "feed", "-150, 0, -2 > a > 150, 0, -2", "paired", "0.5 in",
                       "", "side by side", "", "10 AWG", "n1"],
                      ["winch", "winch; feed", "b > 0, 5, -2 > 2'6\", 5, -2", "twisted", "", "2 in",
                       "", "150 mm", "8 AWG", ""]]
    sheets["sensors"] = [["sensor", "at", "kind", "budget_deg", "reference_state", "used_in",
                          "max_heel_deg", "max_pitch_deg", "note"],
                         ["compass", "0, 0, 0", "magnetic compass", 1, "off", "on", 15, 5, "c"]]
    sheets["equipment"] = [["item", "at", "safe_distance", "safe_distance_for", "note"],
                           ["radio", "1, 1, 1", "3 ft", "steering", "vhf"]]
    sheets["spots"] = [["spot", "at", "for_sensor", "note"], ["shelf", "b", "compass", "dry"],
                       ["post", "0, 2, 1", "", ""]]
    sheets["volumes"] = [["volume", "kind", "from", "to", "for_sensor", "note"],
                         ["deck", "mount in", "-2, -2, 0", "b", "all", "above deck"]]
    return sheets


def test_a_plan_with_every_sheet_round_trips(tmp_path):
    original = plan_from_tables(_awkward_tables())
    path = tmp_path / "awkward.xlsx"
    write_plan(original, path)
    again = read_plan(path)
    assert_same_plan(original, again)
    assert_same_figures(original, again)
    rows = plan_rows(original)
    points = {r[0]: r for r in rows["points"][1:]}
    assert points["a"][1:4] == ["850 mm", 0, -2]
    # "1, 1, 1" names the point of that name (names come first, as the reader reads them).
    assert rows["equipment"][1][1] == "1, 1, 1"
    assert [r[1] for r in rows["spots"][1:]] == ["b", "0, 2, 1"]
    runs = {r[0]: dict(zip(rows["runs"][0], r)) for r in rows["runs"][1:]}
    assert runs["winch"]["route"] == "b > 0, 5, -2 > 2.5, 5, -2"
    assert (runs["long feed"]["spacing"], runs["long feed"]["lie"]) == ("0.5 in", "side by side")
    assert (runs["winch"]["lay"], runs["winch"]["untwisted_ends"]) == ("2 in", "150 mm")
    assert rows["states"][2][3] == "independent"
    assert [r[3] for r in rows["spots"][1:]] == ["dry", None]


def test_coordinates_that_spell_a_point_name_are_written_with_units():
    sheets = _awkward_tables()
    sheets["equipment"][1][1] = "1 ft, 1 ft, 1 ft"         # not the point "1, 1, 1"
    sheets["points"] = [r for r in sheets["points"] if r[0] != "b"]
    sheets["runs"][2][2] = "0, 0, -3 > 0, 5, -2"
    sheets["spots"][1][1] = "0, 1, 1"
    sheets["volumes"][1][3] = "2, 2, 2"
    plan = plan_from_tables(sheets)
    rows = plan_rows(plan)
    assert rows["equipment"][1][1] == "1 ft, 1 ft, 1 ft"
    np.testing.assert_array_equal(plan_from_tables(rows).equipment[0].position_m,
                                  plan.equipment[0].position_m)


def test_a_plan_without_a_states_sheet_is_written_without_one(tmp_path):
    sheets = straight_wire_plan()
    del sheets["states"]
    sheets["runs"] = [["run", "route", "return", "current_a"],
                      ["long feed", "-50, 0, -0.5 > 50, 0, -0.5", "none", 12.5]]
    original = plan_from_tables(sheets)
    rows = plan_rows(original)
    assert "states" not in rows
    assert dict(zip(rows["runs"][0], rows["runs"][1]))["current_a"] == 12.5
    path = tmp_path / "plain.xlsx"
    write_plan(original, path)
    again = read_plan(path)
    assert again.circuits_from_runs and again.state_names == original.state_names
    assert_same_plan(original, again)
    assert_same_figures(original, again)
