"""Loads in watts, as installers keep load lists: a DC load's current is P / V, an AC load's
through an inverter P / (V eta) plus the inverter's idle draw; --voltage re-runs the plan at
another DC voltage; bad cells are located findings; the plan keeps the watts it was given."""

import json
import math

import numpy as np
import pytest

from conftest import run_cli, straight_wire_plan, write_plan
from deviation import api
from deviation.errors import InputError
from deviation.plan import PlanError
from deviation.reader import plan_from_tables, read_plan
from deviation.render.json_out import analysis_json, cards_json
from deviation.template import plan_rows
from deviation.template import write_plan as write_workbook


def _plan(tmp_path, states, name="p", extra_runs=()):
    return read_plan(write_plan(tmp_path / name, straight_wire_plan(states=states,
                                                                    extra_runs=extra_runs)))


def _findings(tmp_path, states):
    with pytest.raises(PlanError) as caught:
        _plan(tmp_path, states)
    return [(f.sheet, f.row, f.column, f.message) for f in caught.value.findings]


#: A second run, paired, on its own circuit, so the check has remedies, a pair's lie and a card.
PAIRED = (["windlass feed", "windlass", "-2, 0.3, -0.4 > 2, 0.3, -0.4", "paired", "10 AWG", "",
           "", ""],)


def _everything(plan):
    """Every figure a check gives: the JSON of the whole check with remedies, findings and the
    cards, less the plan's name and its load list (which says how the load was written)."""
    result = api.check(plan)
    data = analysis_json(result)
    data.pop("plan")
    data.pop("loads")
    text = json.dumps([data, cards_json(api.deviation_cards(result))], sort_keys=True)
    return text.replace(plan.source, "PLAN")           # advice names the plan's file


def test_120_w_at_12_v_gives_every_figure_of_10_a(tmp_path):
    # P = V I: 120 W at 12 V is 10 A (conservation of power, no source needed); every figure of
    # the whole check (budget, runs, remedies, set of fixes, findings, cards) is the same.
    watts = _plan(tmp_path, [["circuit", "on", "off", "voltage", "switching"],
                             ["feed", "120 W", "", "12 V", ""],
                             ["windlass", 40, 0, "", "independent"]], "w", PAIRED)
    amps = _plan(tmp_path, [["circuit", "on", "off", "switching"],
                            ["feed", 10, 0, ""],
                            ["windlass", 40, 0, "independent"]], "a", PAIRED)
    assert watts.circuits[0].currents_a.tolist() == [10.0, 0.0]
    assert _everything(watts) == _everything(amps)


def test_a_kilowatt_cell_and_an_ampere_cell_with_its_unit(tmp_path):
    # 1.2 kW = 1 200 W; at 24 V that is 50 A (P = V I).
    plan = _plan(tmp_path, [["circuit", "on", "off", "voltage"], ["feed", "1.2 kW", "3 A", "24"]])
    assert plan.circuits[0].currents_a.tolist() == [50.0, 3.0]


def test_inverter_current_is_power_over_voltage_and_efficiency(tmp_path):
    # I = P / (V eta) (conservation of power through the inverter); the trade's worked figures
    # (check-values: 1 500 W at eta 0.88 is 142 A at 12 V, 71 A at 24 V, 36 A at 48 V).
    for volts, rounded in ((12, 142), (24, 71), (48, 36)):
        expected = 1500.0 / (volts * 0.88)
        assert round(expected) == rounded
        plan = _plan(tmp_path, [["circuit", "on", "voltage", "supply", "efficiency", "idle_w"],
                                ["feed", "1500 W", volts, "via inverter", "0.88", "0"]],
                     f"v{volts}")
        assert plan.circuits[0].currents_a[0] == pytest.approx(expected, rel=1e-12)


def test_inverter_idle_draw_counts_where_a_power_is_given_and_not_when_off(tmp_path):
    # I = P / (V eta) + P_idle / V: 24 W idle at 12 V adds 2 A, also at 0 W (on, idling); a
    # blank cell is the inverter off, 0 A. Efficiency given as a percentage.
    plan = _plan(tmp_path, [["circuit", "cooking", "standby", "off", "voltage", "supply",
                             "efficiency", "idle_w"],
                            ["feed", "1500 W", "0 W", "", "12", "via inverter", "88 %", "24 W"]])
    assert plan.circuits[0].currents_a.tolist() == pytest.approx(
        [1500 / (12 * 0.88) + 2.0, 2.0, 0.0], rel=1e-12)


def test_inverter_defaults_never_flatter_and_follow_the_pvwatts_curve(tmp_path):
    # PVWatts inverter model (Dobos, NREL 2014; pvlib inverter.pvwatts): eta = eta_nom/eta_ref
    # (-0.0162 z - 0.0059/z + 0.9858), eta_nom 0.96, eta_ref 0.9637. Written out here, apart
    # from the code.
    zeta = np.linspace(0.1, 1.0, 91)
    curve = 0.96 / 0.9637 * (-0.0162 * zeta - 0.0059 / zeta + 0.9858)
    plan = _plan(tmp_path, [["circuit", "on", "voltage", "supply"],
                            ["feed", "1500 W", "12", "via inverter"]])
    circuit = plan.circuits[0]
    # The default efficiency is below the curve over 10-100 % of rating: more current, not less.
    assert circuit.efficiency < curve.min()
    # The default idle draw is the curve's zero of AC output (the smaller root of
    # -0.0162 z^2 + 0.9858 z - 0.0059), as a share of an inverter rated at the largest load.
    zero = min(r.real for r in np.roots([-0.0162, 0.9858, -0.0059]))
    idle = zero / 0.96 * 1500
    assert circuit.idle_w == pytest.approx(idle, rel=1e-12)
    assert idle == pytest.approx(9.35, abs=0.01)
    assert circuit.currents_a[0] == pytest.approx(1500 / (12 * circuit.efficiency) + idle / 12,
                                                  rel=1e-12)


def test_voltage_24_halves_a_watt_load_and_leaves_amperes(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan(
        states=[["circuit", "on", "voltage"], ["feed", "120 W", "12"], ["pump", 8, ""]],
        extra_runs=(["pump feed", "pump", "-50, 3, -0.5 > 50, 3, -0.5", "none", "", "", "",
                     ""],)))
    at_12 = json.loads(run_cli("check", folder, "--json").output)
    result = run_cli("check", folder, "--json", "--voltage", 24)
    at_24 = json.loads(result.output)
    runs = {r["run"]: r for r in at_24["sensors"][0]["states"][0]["runs"]}
    before = {r["run"]: r for r in at_12["sensors"][0]["states"][0]["runs"]}
    assert before["long feed"]["current_a"] == 10.0
    assert runs["long feed"]["current_a"] == 5.0             # 120 W / 24 V
    assert runs["pump feed"]["current_a"] == 8.0             # given in amperes: unchanged
    # The long wire alone: B = mu0 I / (2 pi d) = 0.2 uT x 5 / 0.5 = 2 uT against H = 20 uT,
    # largest over headings asin(2/20) (textbook; NGA Pub. 226).
    assert runs["long feed"]["max_deviation_deg"] == pytest.approx(
        math.degrees(math.asin(2.0 / 20.0)), rel=1e-4)
    assert at_24["loads"][0]["voltage_v"] == 24.0 and at_24["loads"][0]["states"][0][
        "power_w"] == 120.0


def test_library_at_voltage_is_a_new_plan(tmp_path):
    plan = _plan(tmp_path, [["circuit", "on", "voltage"], ["feed", "120 W", "12"]])
    other = api.at_voltage(plan, 48)
    assert other.circuits[0].currents_a.tolist() == [2.5]         # 120 W / 48 V
    assert plan.circuits[0].currents_a.tolist() == [10.0]         # the plan is a value
    with pytest.raises(InputError):
        api.at_voltage(plan, 0)
    with pytest.raises(InputError):
        api.at_voltage(plan, 5000)
    amps_only = _plan(tmp_path, [["circuit", "on"], ["feed", 10]], "amps")
    with pytest.raises(InputError, match="no load of the plan is given in watts"):
        api.at_voltage(amps_only, 24)


def test_voltage_option_refuses_a_plan_without_watts_and_a_bad_voltage(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan())
    result = run_cli("check", folder, "--voltage", 24)
    assert result.exit_code == 2
    assert "no load of the plan is given in watts" in result.output
    folder = write_plan(tmp_path / "w", straight_wire_plan(
        states=[["circuit", "on", "voltage"], ["feed", "120 W", "12"]]))
    result = run_cli("check", folder, "--voltage", -12)
    assert result.exit_code == 2 and "--voltage -12" in result.output


def test_the_report_shows_watts_and_amperes_side_by_side(tmp_path):
    folder = write_plan(tmp_path / "p", straight_wire_plan(
        states=[["circuit", "on", "voltage", "supply", "efficiency", "idle_w"],
                ["feed", "1500 W", "12", "via inverter", "0.88", "0"]]))
    result = run_cli("check", folder, "--width", 160)
    lines = [line for line in result.output.splitlines() if line.startswith("|feed")]
    # 1 500 W / (12 V x 0.88) = 142.05 A, shown whole above 100 A.
    assert lines and "1500" in lines[0] and "142" in lines[0], result.output


# Findings, each located at its cell ------------------------------------------------------------

def test_watts_without_a_voltage_is_found_at_the_cell(tmp_path):
    assert _findings(tmp_path, [["circuit", "on"], ["feed", "1500 W"]]) == [
        ("states", 2, "on", "1500 W needs the circuit's DC voltage to become a current: fill "
         "the voltage column (e.g. 12 or 24 V)")]


def test_watts_on_a_circuit_that_is_not_dc_is_found_at_the_voltage(tmp_path):
    (found,) = _findings(tmp_path, [["circuit", "on", "voltage"], ["feed", "1500 W", "230 V AC"]])
    assert found[:3] == ("states", 2, "voltage")
    assert found[3].startswith('"230 V AC" is not DC: a load in watts (1500 W in "on") on a '
                               "circuit that is not DC has no DC current to count")


@pytest.mark.parametrize("cell", ["0", "-12", "5000 V", "twelve"])
def test_a_voltage_of_zero_or_absurd_is_found_at_the_voltage(tmp_path, cell):
    found = _findings(tmp_path, [["circuit", "on", "voltage"], ["feed", "120 W", cell]])
    assert [f[:3] for f in found] == [("states", 2, "voltage")], found


@pytest.mark.parametrize("row, column, start", [
    (["feed", "10", "12", "via inverter", "", ""], "on", '"10" is in amperes; a load via '
     "inverter is given in watts"),
    (["feed", "-10 W", "12", "via inverter", "", ""], "on", "-10 W: a load via inverter draws "
     "power"),
    (["feed", "100 W", "12", "via inverter", "88", ""], "efficiency", '"88" is not an '
     "efficiency"),
    (["feed", "100 W", "12", "", "0.9", ""], "efficiency", "efficiency is for a load via "
     "inverter"),
    (["feed", "100 W", "12", "via inverter", "", "-5"], "idle_w", "an idle draw of -5 W"),
    (["feed", "100 W", "12", "by magic", "", ""], "supply", '"by magic" is not a supply'),
    (["feed", "100 MW", "12", "", "", ""], "on", '"100 MW" is not a current in amperes or a '
     "load in watts"),
    (["feed", "1000 kW", "1", "", "", ""], "on", "1e+06 W at 1 V is 1e+06 A, more than"),
])
def test_bad_load_cells_are_located(tmp_path, row, column, start):
    found = _findings(tmp_path, [["circuit", "on", "voltage", "supply", "efficiency", "idle_w"],
                                 row])
    assert [(f[0], f[1], f[2]) for f in found] == [("states", 2, column)], found
    assert found[0][3].startswith(start), found


# The plan keeps what the user wrote -------------------------------------------------------------

def test_watts_round_trip_through_the_writer(tmp_path):
    states = [["circuit", "cooking", "off", "voltage", "supply", "efficiency", "idle_w", "note"],
              ["microwave", "1.5 kW", "", "12", "via inverter", "0.88", "", "galley"],
              ["fridge", "60 W", "4", "12 V", "", "", "", ""],
              ["feed", 3, 0, "", "", "", "", ""]]
    plan = _plan(tmp_path, states, extra_runs=(
        ["microwave feed", "microwave", "-1, 1, -1 > 1, 1, -1", "none", "", "", "", ""],
        ["fridge feed", "fridge", "-1, 2, -1 > 1, 2, -1", "none", "", "", "", ""]))
    rows = plan_rows(plan)["states"]
    assert rows[0] == ["circuit", "cooking", "off", "switching", "voltage", "supply",
                       "efficiency", "idle_w", "note"]
    assert rows[1] == ["microwave", "1500 W", None, None, 12, "via inverter", 0.88, None,
                       "galley"]
    assert rows[2] == ["fridge", "60 W", 4, None, 12, None, None, None, None]
    for again in (plan_from_tables(plan.to_tables()), _written(plan, tmp_path)):
        for a, b in zip(plan.circuits, again.circuits):
            assert a.currents_a.tolist() == b.currents_a.tolist()
            if a.power_w is None:
                assert b.power_w is None
            else:
                assert np.array_equal(a.power_w, b.power_w, equal_nan=True)
            assert (a.voltage_v, a.inverter) == (b.voltage_v, b.inverter)


def _written(plan, tmp_path):
    path = tmp_path / "again.xlsx"
    write_workbook(plan, path)
    return read_plan(path)


def test_the_template_offers_the_new_columns_with_a_drop_down(tmp_path):
    import openpyxl

    path = tmp_path / "new.xlsx"
    assert run_cli("new", path).exit_code == 0
    sheet = openpyxl.load_workbook(path)["states"]
    header = [c.value for c in sheet[1]]
    for column in ("voltage", "supply", "efficiency", "idle_w"):
        assert column in header
        assert sheet.cell(1, header.index(column) + 1).comment is not None
    supply = sheet.cell(1, header.index("supply") + 1).column_letter
    rules = [r for r in sheet.data_validations.dataValidation
             if str(r.sqref).startswith(f"{supply}2")]
    assert rules and "via inverter" in rules[0].formula1
