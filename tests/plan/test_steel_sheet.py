"""The steel sheet: read with located findings, offered in the template, written back by
``new --from``."""

from __future__ import annotations

import math

import numpy as np
import pytest

from conftest import run_cli, straight_wire_plan, write_plan
from deviation.physics import induced
from deviation.plan import PlanError
from deviation.reader import read_plan
from deviation.schema import SCHEMA, STEEL_SHAPES
from deviation.template import write_plan as write_workbook
from deviation.units import UnitError, parse_sizes

HEADER = ["item", "at", "shape", "size", "axis", "wall", "mu_low", "mu_high", "states", "note"]


def plan_with(tmp_path, *rows, states=None):
    sheets = straight_wire_plan(states=states)
    sheets["steel"] = [HEADER] + [list(r) + [""] * (len(HEADER) - len(r)) for r in rows]
    return write_plan(tmp_path / "plan", sheets)


def findings(tmp_path, *rows, **kwargs):
    with pytest.raises(PlanError) as error:
        read_plan(plan_with(tmp_path, *rows, **kwargs))
    return [str(f) for f in error.value.findings]


def test_the_sheet_lists_the_physics_shapes():
    assert set(STEEL_SHAPES) == set(induced.SHAPES)
    assert SCHEMA["steel"].required == ("item", "at", "shape", "size")


@pytest.mark.parametrize("text, metres", [
    ("600 x 400 x 500 mm", (0.6, 0.4, 0.5)),      # the unit after the last applies to all
    ("0.6 m x 40 cm x 2", (0.6, 0.4, 2.0)),       # each with its own, bare in the plan's
    ("1.2 m by 60 mm", (1.2, 0.06)),
    ("2'6\" x 1'", (0.762, 0.3048)),              # 1 in = 25.4 mm exactly (1959 agreement)
    ("170 mm", (0.17,)),
])
def test_sizes_are_read_in_the_trades_length_syntax(text, metres):
    assert parse_sizes(text, "m") == pytest.approx(metres, rel=1e-12)


def test_a_bad_size_names_the_part():
    with pytest.raises(UnitError, match='"a" in "a x 3" is not a length'):
        parse_sizes("a x 3", "m")


def test_items_are_read_with_their_shape_size_axis_wall_band_and_states(tmp_path):
    states = [["circuit", "harbour", "sea"], ["feed", 10, 10]]
    plan = read_plan(plan_with(
        tmp_path, ["engine", "1, 0, -0.5", "box", "600 x 500 x 550 mm", "", "", "", "", "",
                   "diesel"],
        ["mast", "3, 0, 2", "hollow cylinder", "6 m x 150 mm", "z", "4", "200", "inf", "sea"],
        ["rail", "0, 1, -1", "Hollow-Box", "2 x 0.1 x 0.2", "1, 1, 0", "5 mm"],
        states=states))
    engine, mast, rail = plan.steel
    assert engine.shape == "box" and engine.sizes_m == pytest.approx([0.6, 0.5, 0.55])
    assert np.array_equal(engine.rotation, np.eye(3))
    assert (engine.mu_low, engine.mu_high) == (100.0, math.inf)   # the defaults
    assert engine.states is None and engine.note == "diesel"
    # A cylinder's axis is its third own axis; the wall's bare number is in mm.
    assert mast.rotation[:, 2] == pytest.approx([0, 0, 1])
    assert mast.wall_m == pytest.approx(0.004) and mast.mu_low == 200 and mast.states == ("sea",)
    # A box's first side along the axis, its second level and across it, right-handed.
    assert rail.shape == "hollow box"
    assert rail.rotation[:, 0] == pytest.approx([math.sqrt(0.5), math.sqrt(0.5), 0])
    assert rail.rotation[2, 1] == pytest.approx(0.0)
    assert np.linalg.det(rail.rotation) == pytest.approx(1.0)


@pytest.mark.parametrize("row, message", [
    (["box", "0, 0, -1", "cube", "1 x 1 x 1"],
     'steel row 2, shape: "cube" is not a shape; expected one of sphere, box'),
    (["box", "0, 0, -1", "sphre", "0.3"], 'did you mean "sphere"?'),
    (["c", "0, 0, -1", "cylinder", "1 x 0.1"], "steel row 2, axis: a cylinder needs the "
                                               "direction of its length"),
    (["c", "0, 0, -1", "cylinder", "1 x 0.1 x 3", "x"], "a cylinder needs length x diameter "
                                                         "(2 sizes), got 3"),
    (["b", "0, 0, -1", "box", "1 x 1 x 1", "", "3"], "steel row 2, wall: a box has no wall"),
    (["t", "0, 0, -1", "hollow box", "1 x 1 x 1"], "a hollow box needs its wall thickness"),
    (["t", "0, 0, -1", "hollow box", "1 x 1 x 0.2", "", "150"], "thinner than half the smallest"),
    (["s", "0, 0, -1", "sphere", "0.3", "", "", "0.5"], "steel row 2, mu_low: a relative "
                                                        "permeability is at least 1"),
    (["s", "0, 0, -1", "sphere", "0.3", "", "", "500", "200"], "high end 200 is below"),
    (["s", "0, 0, -1", "sphere", "0.3", "up"], 'axis: "up" is not a direction'),
    (["s", "0, 0, -1", "sphere", "0.3", "", "", "", "", "harbor"],
     '"harbor" is not a state; did you mean "harbour"?'),
    (["s", "0, 0, -1", "sphere", "-0.3"], "every size must be more than zero"),
])
def test_bad_cells_are_located_findings(tmp_path, row, message):
    states = [["circuit", "harbour"], ["feed", 10]]
    assert any(message in f for f in findings(tmp_path, row, states=states)), message


def test_a_sensor_inside_an_item_is_refused(tmp_path):
    # The compass of straight_wire_plan sits at the origin: a box around it. Refused when the
    # plan is checked (a what-if made in Python is refused the same way).
    from deviation import api

    plan = read_plan(plan_with(tmp_path, ["box", "0, 0, 0.1", "box", "0.5 x 0.5 x 0.5"]))
    with pytest.raises(PlanError) as error:
        api.check(plan)
    assert any('sensors row 2, at: sensor "compass" lies inside steel item "box"' in str(f)
               for f in error.value.findings)


def test_the_template_offers_the_sheet_with_a_drop_down_of_shapes(tmp_path):
    import openpyxl

    path = tmp_path / "t.xlsx"
    assert run_cli("new", path).exit_code == 0
    sheet = openpyxl.load_workbook(path)["steel"]
    assert [c.value for c in sheet[1]] == HEADER
    assert all(c.comment is not None for c in sheet[1])
    assert any("hollow cylinder" in dv.formula1 for dv in sheet.data_validations.dataValidation)


def test_items_are_written_back_and_read_the_same(tmp_path):
    plan = read_plan(plan_with(
        tmp_path, ["engine", "1, 0, -0.5", "box", "600 x 500 x 550 mm", "1, 1, 0"],
        ["mast", "3, 0, 2", "hollow cylinder", "6 m x 150 mm", "z", "4", "200", "inf"],
        ["ball", "0.6, 0, 0", "sphere", "0.34", "", "", "inf", "inf", "", "check value"]))
    path = tmp_path / "copy.xlsx"
    write_workbook(plan, path)
    again = read_plan(path)
    for a, b in zip(plan.steel, again.steel, strict=True):
        assert (a.name, a.shape, a.wall_m, a.mu_low, a.mu_high, a.states, a.note) == (
            b.name, b.shape, b.wall_m, b.mu_low, b.mu_high, b.states, b.note)
        for name in ("position_m", "sizes_m", "rotation"):
            np.testing.assert_array_equal(getattr(a, name), getattr(b, name))
