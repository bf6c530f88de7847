"""The aviation profile: the card in 30° steps per electrical state with the placard's
conditions, the 10° limit on any heading in level flight, the placard lines, and the occasions
for a swing of FAA AC 43.13-1B CHG 1 par. 12-37a named by refit.

Regulation figures (each quoted where it is used):
* 14 CFR 23.1327(a)(2) (Amdt. 23-20, before amendment 23-64) and 25.1327(b): the compensated
  installation may not have a deviation, in level flight, greater than 10 degrees on any heading.
* 14 CFR 25.1547(b)-(d): the placard shows the calibration in level flight with the engines
  operating, states whether radio receivers were on or off, in not more than 45 degree increments
  of magnetic heading.
"""

import json
import math

import numpy as np
import pytest

from conftest import run_cli, straight_wire_plan, write_plan
from deviation import api
from deviation.aftercare import refit
from deviation.aftercare.refit import SwingTrigger
from deviation.errors import InputError
from deviation.plan import PlanError
from deviation.reader import plan_from_tables, read_plan
from deviation.render import words

LIMIT_DEG = 10.0          # 14 CFR 23.1327(a)(2), 25.1327(b)
MAX_STEP_DEG = 45.0       # 14 CFR 25.1547(d)
H_UT = 20.0
DEPTH_M = 0.5


def wire_ut(current_a, depth_m=DEPTH_M, length_m=100.0):
    """Field of the plan's straight 100 m wire at its midpoint's perpendicular [µT]: finite
    segment, B = mu0 I/(4 pi d) (sin t2 - sin t1) (textbook, Griffiths ch. 5)."""
    half = length_m / 2
    return 0.1 * current_a / depth_m * 2 * half / math.hypot(half, depth_m)


def aircraft(states, *, profile="aviation", conditions=None, kind="magnetic compass",
             budget=12.0, reference=None, h_ut=H_UT, extra_runs=()):
    sheets = straight_wire_plan(h_ut=h_ut, states=states, budget=budget, reference=reference,
                                extra_runs=extra_runs)
    if profile:
        sheets["site"].append(["profile", profile])
    sheets["sensors"][1][2] = kind
    if conditions:
        sheets["conditions"] = [["state", "engines", "generator", "radios"], *conditions]
    return sheets


def _read(tmp_path, sheets, name="p"):
    return read_plan(write_plan(tmp_path / name, sheets))


def _card(plan, step=None):
    return api.deviation_cards(api.check(plan, remedies=False), step_deg=step)[0]


# The card: 30° steps within the 45° limit -------------------------------------------------------

def test_aviation_card_is_in_30_degree_steps_within_the_45_degree_limit(tmp_path):
    plan = _read(tmp_path, aircraft([["circuit", "cruise"], ["feed", 5]]))
    card = _card(plan)
    headings = card.states[0].headings_deg
    assert headings.tolist() == list(range(0, 360, 30))
    assert np.all(np.diff(np.append(headings, 360.0)) <= MAX_STEP_DEG)
    general = _read(tmp_path, aircraft([["circuit", "cruise"], ["feed", 5]], profile=None), "g")
    assert _card(general).states[0].headings_deg[1] == 15.0       # the general card's step
    with pytest.raises(InputError, match="25.1547"):
        _card(plan, step=60.0)
    data = json.loads(run_cli("card", write_plan(tmp_path / "c", aircraft(
        [["circuit", "cruise"], ["feed", 5]])), "--json").output)
    assert data["sensors"][0]["step_deg"] == 30.0
    assert len(data["sensors"][0]["states"][0]["headings"]) == 12


# The 10° limit, level, on any heading ----------------------------------------------------------

@pytest.mark.parametrize("current_a, within", [(8.6, True), (8.8, False)])
def test_level_figure_is_held_against_10_degrees(tmp_path, current_a, within):
    # Largest deviation over headings of a horizontal field b: asin(b/H) (NGA Pub. 226).
    # 8.6 A: 9.90°, 8.8 A: 10.14° against the 10° limit.
    expected = math.degrees(math.asin(wire_ut(current_a) / H_UT))
    assert (expected <= LIMIT_DEG) is within
    plan = _read(tmp_path, aircraft([["circuit", "cruise"], ["feed", current_a]]))
    card = _card(plan)
    limit = card.states[0].limit
    assert limit.limit_deg == LIMIT_DEG
    assert limit.level_deg == pytest.approx(expected, rel=1e-9)
    assert limit.within is within
    # The card's own figures: its 30° rows never reach the worst heading exactly (the largest
    # deviation of this field falls between them), its 1° curve comes within 0.01° of it, and
    # neither exceeds it. A sampled maximum would flatter.
    rows = np.abs(card.states[0].deviation_deg).max()
    assert rows < limit.level_deg - 0.01
    assert limit.level_deg - 0.01 < card.states[0].level_worst <= limit.level_deg + 1e-9


def test_the_compensated_installation_counts_the_residual(tmp_path):
    # 12 A in both states: 13.9° absolute, but adjusted in "ground" the residual is nothing: the
    # compensated installation is within 10°; not adjusted, the absolute deviation counts.
    states = [["circuit", "ground", "cruise"], ["feed", 12, 12]]
    absolute = math.degrees(math.asin(wire_ut(12) / H_UT))
    assert absolute > LIMIT_DEG
    adjusted = _card(_read(tmp_path, aircraft(states, reference="ground", budget=20)))
    assert adjusted.states[1].limit.level_deg == pytest.approx(0.0, abs=1e-9)
    assert adjusted.states[1].limit.within
    plain = _card(_read(tmp_path, aircraft(states, budget=20), "plain"))
    assert plain.states[1].limit.level_deg == pytest.approx(absolute, rel=1e-9)
    assert not plain.states[1].limit.within


def test_the_limit_is_in_addition_to_the_budget_and_sets_the_exit_status(tmp_path):
    # 9.5 A: 10.95°, within a 12° budget but over 10°: check exits 1 in the aviation profile
    # only, and says why.
    states = [["circuit", "cruise"], ["feed", 9.5]]
    assert LIMIT_DEG < math.degrees(math.asin(wire_ut(9.5) / H_UT)) < 12.0
    aviation = write_plan(tmp_path / "a", aircraft(states))
    general = write_plan(tmp_path / "g", aircraft(states, profile=None))
    result = run_cli("check", aviation, "--width", 160)
    assert result.exit_code == 1
    assert "Aviation: over 10° in level flight — compass in cruise (10.95°)." in result.output
    assert run_cli("check", general).exit_code == 0
    data = json.loads(run_cli("check", aviation, "--json").output)
    assert data["within_budget"] is True
    assert data["aviation"]["within_limit"] is False
    assert data["aviation"]["states"][0]["level_deg"] == pytest.approx(10.95, abs=0.01)
    assert json.loads(run_cli("check", general, "--json").output)["aviation"] is None


def test_a_magnetometer_is_no_direction_indicator(tmp_path):
    plan = _read(tmp_path, aircraft([["circuit", "cruise"], ["feed", 20]], kind="magnetometer"))
    card = _card(plan)
    assert card.states[0].limit is None and card.placard == ()


# The placard lines --------------------------------------------------------------------------------

def test_placard_lines_carry_the_conditions_each_state_stands_for(tmp_path):
    states = [["circuit", "radios on", "radios off"], ["feed", 3, 2]]
    conditions = [["radios on", "running", "charging", "on"],
                  ["radios off", "running", "charging", "off"]]
    card = _card(_read(tmp_path, aircraft(states, conditions=conditions)))
    on, off = card.placard
    assert (on.condition.engines, on.condition.generator, on.condition.radios) == (
        "running", "charging", "on")
    assert off.condition.radios == "off"
    assert on.step_deg == 30.0 and on.radios_stated
    text = words.placard_text(on)
    assert text == ("radios on: calibration in level flight, engines running, generator "
                    "charging, radio receivers on; readings every 30° of magnetic heading.")


def test_a_state_the_plan_does_not_describe_is_said_to_lack_its_radios(tmp_path):
    card = _card(_read(tmp_path, aircraft([["circuit", "cruise"], ["feed", 3]])))
    (line,) = card.placard
    assert not line.radios_stated
    assert "radio receivers on or off: not stated in the plan" in words.placard_text(line)


def test_a_state_over_the_limit_names_the_loads_that_put_it_over(tmp_path):
    # The pitot heat, switched on its own, adds 6 A beside the feed's 4 A: 10 A is 11.5°.
    states = [["circuit", "cruise", "switching"], ["feed", 4, ""], ["pitot", 6, "independent"]]
    pitot = (["pitot heat", "pitot", f"-50, 0, {-DEPTH_M} > 50, 0, {-DEPTH_M}", "none", "", "",
              "", ""],)
    plan = _read(tmp_path, aircraft(states, extra_runs=pitot, budget=20))
    (line,) = _card(plan).placard
    assert not line.limit.within
    assert line.limit.level_deg == pytest.approx(
        math.degrees(math.asin(wire_ut(10) / H_UT)), rel=1e-6)
    assert words.placard_text(line).endswith("more than 10° when on: cruise with pitot on.")


# The plan says it: profile and conditions ----------------------------------------------------------

def test_bad_profile_and_conditions_are_located(tmp_path):
    sheets = aircraft([["circuit", "cruise"], ["feed", 3]], profile="marine",
                      conditions=[["crusie", "running", "", ""], ["cruise", "", "", "maybe"]])
    with pytest.raises(PlanError) as caught:
        _read(tmp_path, sheets)
    found = [(f.sheet, f.row, f.column) for f in caught.value.findings]
    assert found == [("site", 4, "value"), ("conditions", 2, "state"),
                     ("conditions", 3, "radios")]
    assert 'did you mean "cruise"' in str(caught.value)


def test_profile_and_conditions_round_trip(tmp_path):
    sheets = aircraft([["circuit", "cruise"], ["feed", 3]],
                      conditions=[["cruise", "running", "charging", "on"]])
    plan = _read(tmp_path, sheets)
    again = plan_from_tables(plan.to_tables())
    assert again.site.profile == "aviation"
    assert again.conditions[0].radios == "on" and again.conditions[0].state == "cruise"


# Refit: the occasions of AC 43.13-1B CHG 1 par. 12-37a -----------------------------------------------

def _refit(tmp_path, old_sheets, new_sheets, **kwargs):
    return refit(_read(tmp_path, old_sheets, "old"), _read(tmp_path, new_sheets, "new"), **kwargs)


def test_an_unchanged_plan_meets_no_occasion(tmp_path):
    sheets = aircraft([["circuit", "cruise"], ["feed", 3]])
    assert _refit(tmp_path, sheets, sheets).triggers == ()


def test_a_change_to_the_electrical_system_is_a_trigger_in_aviation_whatever_its_size(tmp_path):
    # 12-37a(6): "whenever a change is made to the electrical system" -- a tiny current change
    # whose card change is far below the 1° threshold still calls a swing in the aviation
    # profile; in the general profile the threshold decides.
    old = aircraft([["circuit", "cruise"], ["feed", 3]])
    new = aircraft([["circuit", "cruise"], ["feed", 3.001]])
    result = _refit(tmp_path, old, new)
    (found,) = result.triggers
    assert found.trigger is SwingTrigger.ELECTRICAL and found.paragraph == "12-37a(6)"
    assert found.circuits == ("feed",) and found.runs == ()
    assert result.states[0].card_change_deg < 0.01 and result.swing_advised
    general = _refit(tmp_path, aircraft([["circuit", "cruise"], ["feed", 3]], profile=None),
                     aircraft([["circuit", "cruise"], ["feed", 3.001]], profile=None))
    assert general.triggers and not general.swing_advised
    assert "whenever a change is made to the electrical system" in words.trigger_text(found)


def test_an_added_run_and_a_moved_item_name_their_occasions(tmp_path):
    old = aircraft([["circuit", "cruise"], ["feed", 3], ["strobe", 1]])
    old["equipment"] = [["item", "at", "moment_am2"], ["headset", "0.5, 0.5, 0", 0.01]]
    new = aircraft([["circuit", "cruise"], ["feed", 3], ["strobe", 1]], extra_runs=(
        ["strobe feed", "strobe", "-1, 1, 0 > 1, 1, 0", "paired", "16 AWG", "", "", ""],))
    new["equipment"] = [["item", "at", "moment_am2"], ["headset", "0.6, 0.5, 0", 0.01]]
    old["runs"].append(["strobe stub", "strobe", "-1, 3, 0 > 1, 3, 0", "paired", "16 AWG", "",
                        "", ""])
    new["runs"].append(["strobe stub", "strobe", "-1, 3, 0 > 1, 3, 0", "paired", "16 AWG", "",
                        "", ""])
    found = {t.trigger: t for t in _refit(tmp_path, old, new).triggers}
    assert found[SwingTrigger.ELECTRICAL].runs == ("strobe feed",)
    assert found[SwingTrigger.FERROUS].items == ("headset",)
    assert found[SwingTrigger.FERROUS].paragraph == "12-37a(2)"
    assert SwingTrigger.LOCATION not in found


def test_a_steel_item_added_moved_or_changed_is_a_ferrous_occasion(tmp_path):
    # 12-37a(2): "after any cockpit modification or major replacement involving ferrous metal".
    # A steel item of the steel sheet is ferrous metal: adding one, moving one or changing its
    # permeability band each meets the occasion, named by the item; an unchanged one does not.
    def with_steel(*rows):
        sheets = aircraft([["circuit", "cruise"], ["feed", 3]])
        sheets["steel"] = [["item", "at", "shape", "size", "mu_low", "mu_high", "axis"],
                           *(list(r) + [""] * (7 - len(r)) for r in rows)]
        return sheets

    seat = ["seat frame", "1.5, 0, -0.4", "box", "0.4 x 0.4 x 0.05", 100, 2000]
    rail_row = ["seat rail", "1.5, 0.3, -0.5", "rod", "1 m x 20 mm", "", "", "x"]
    unchanged = _refit(tmp_path, with_steel(seat), with_steel(seat))
    assert unchanged.triggers == ()
    added = {t.trigger: t for t in _refit(
        tmp_path, with_steel(seat),
        with_steel(seat, ["toolbox", "0.8, -0.3, -0.2", "box", "0.3 x 0.2 x 0.15", "", ""])
    ).triggers}
    assert added[SwingTrigger.FERROUS].items == ("toolbox",)
    assert added[SwingTrigger.FERROUS].paragraph == "12-37a(2)"
    assert SwingTrigger.ELECTRICAL not in added
    moved = _refit(tmp_path, with_steel(seat), with_steel(
        ["seat frame", "1.6, 0, -0.4", "box", "0.4 x 0.4 x 0.05", 100, 2000]))
    assert [(t.trigger, t.items) for t in moved.triggers] == [
        (SwingTrigger.FERROUS, ("seat frame",))]
    assert moved.swing_advised
    band = _refit(tmp_path, with_steel(seat), with_steel(
        ["seat frame", "1.5, 0, -0.4", "box", "0.4 x 0.4 x 0.05", 100, 5000]))
    assert [t.items for t in band.triggers] == [("seat frame",)]
    removed = _refit(tmp_path, with_steel(seat, rail_row), with_steel(seat))
    assert [t.items for t in removed.triggers] == [("seat rail",)]


def test_a_large_change_of_location_is_an_occasion(tmp_path):
    # 12-37a(8). H from 20 to 12 µT: a 40 % change (beyond the 20 % rule of thumb). The earlier
    # installation's own field b (5 A under the compass, athwartships) reads atan2(b_E, H + b_N)
    # (east positive, standard navigation practice): its card moves by the largest difference of
    # that at the two fields, found here by dense sampling, apart from the code's own search.
    old = aircraft([["circuit", "cruise"], ["feed", 5]])
    new = aircraft([["circuit", "cruise"], ["feed", 5]], h_ut=12.0)
    (found,) = _refit(tmp_path, old, new).triggers
    assert found.trigger is SwingTrigger.LOCATION and found.paragraph == "12-37a(8)"
    assert found.field_change == pytest.approx(max(0.4, abs((40 / 12) / (40 / 20) - 1)))
    psi = np.radians(np.arange(0, 360, 0.001))
    b = wire_ut(5)
    north, east = b * np.sin(psi), b * np.cos(psi)       # a field athwartships, turned by psi
    change = np.degrees(np.abs(np.arctan2(east, 12 + north) - np.arctan2(east, 20 + north)))
    assert found.card_change_deg == pytest.approx(change.max(), abs=1e-4)


def test_a_small_move_is_no_change_of_location(tmp_path):
    old = aircraft([["circuit", "cruise"], ["feed", 1]])
    new = aircraft([["circuit", "cruise"], ["feed", 1]], h_ut=19.5)
    assert _refit(tmp_path, old, new).triggers == ()


def test_a_pair_whose_lie_is_not_known_counts_at_its_worst_lie(tmp_path):
    # A paired run 0.1 m under the compass: with its lie not known the limit's figure is no
    # smaller than the same plan's with either lie stated (side by side, one above the other).
    pair = ["near pair", "pair", "-1, 0, -0.1 > 1, 0, -0.1", "paired", "4 AWG", "20 mm", "", ""]

    def level(lie):
        runs = straight_wire_plan()["runs"]
        header = runs[0] + ["lie"]
        sheets = aircraft([["circuit", "cruise"], ["feed", 0.1], ["pair", 60]], budget=90)
        sheets["runs"] = [header, runs[1] + [""], pair + [lie]]
        return _card(_read(tmp_path, sheets, lie or "unknown")).states[0].limit.level_deg

    unknown = level("")
    stated = [level("side by side"), level("one above the other")]
    assert unknown >= max(stated) - 1e-9
    assert unknown > min(stated)


def test_location_counts_the_field_change_and_the_card_change_each_alone(tmp_path):
    # H 20 -> 12 µT with almost no wiring field: the plan's own card hardly moves, but H falls by
    # 40 % (beyond the 20 % rule of thumb): the steel and magnets the plan cannot see deviate
    # the compass more. H 20 -> 17 µT (15 %) under a strong field (15 A: 6 µT): asin(0.3) =
    # 17.46° becomes asin(6/17) = 20.67°, a card change of more than 1° (NGA Pub. 226).
    quiet = _refit(tmp_path, aircraft([["circuit", "cruise"], ["feed", 0.01]]),
                   aircraft([["circuit", "cruise"], ["feed", 0.01]], h_ut=12.0))
    (found,) = quiet.triggers
    assert found.trigger is SwingTrigger.LOCATION and found.card_change_deg < 0.1
    loud = _refit(tmp_path, aircraft([["circuit", "cruise"], ["feed", 15]], budget=30),
                  aircraft([["circuit", "cruise"], ["feed", 15]], h_ut=17.0, budget=30))
    (found,) = loud.triggers
    assert found.field_change < 0.2
    b = wire_ut(15)
    assert found.card_change_deg >= (math.degrees(math.asin(b / 17)) -
                                     math.degrees(math.asin(b / 20))) - 1e-6
