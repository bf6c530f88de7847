"""Plans as people save them: other separators, decimal commas, notes, other workbook kinds,
spacings and currents that cannot be right, outputs into folders that do not exist."""

import csv
import os
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from conftest import SAMPLES, straight_wire_plan, write_plan
from deviation import files
from deviation.analysis import analyse
from deviation.cli import main
from deviation.files import OutputError, check_output, write_atomically
from deviation.plan import PlanError
from deviation.reader import read_plan

BROKEN = Path(__file__).resolve().parent / "data" / "broken"


def findings_of(path):
    with pytest.raises(PlanError) as caught:
        read_plan(path)
    return [str(f) for f in caught.value.findings]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def write_raw(folder, sheets):
    """Write {file name: text} as they are (separators and decimal commas by hand)."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in sheets.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def semicolon_plan(route, at="0, 0, 0", spacing="", size="10 AWG", current="10"):
    """A compass above one run, written as a spreadsheet set to a decimal comma saves it."""
    return {
        "site.csv": "setting;value\nhorizontal_field_ut;20\nvertical_field_ut;40\n",
        "runs.csv": f"run;circuits;route;return;size;spacing\nfeed;feed;{route};paired;{size};"
                    f"{spacing}\n",
        "states.csv": f"circuit;on\nfeed;{current}\n",
        "sensors.csv": f"sensor;at;kind;budget_deg\ncompass;{at};magnetic compass;1\n",
    }


# Spacings closer than the conductors, currents beyond the size -----------------------------------

def paired(spacing, size, units=None, current=10.0):
    sheets = straight_wire_plan(kind="paired", current=current)
    sheets["runs"][1][4], sheets["runs"][1][5] = size, spacing
    if units:
        sheets["site"].append(["units", units])
    return sheets


def test_a_bare_spacing_closer_than_the_conductor_says_how_it_was_read(plan_dir):
    # 8 AWG boat cable is 6.6 mm across (from memory, units.AWG_OUTER_DIAMETER_MM).
    path = plan_dir(paired("0.025", "8 AWG"))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "0.025" was read as 0.025 mm (bare numbers in spacing are '
        "mm in a metric plan); two conductors cannot be closer than their own diameter (6.6 mm "
        "for 8 AWG); write it with a unit, e.g. 25 mm"]


def test_a_spacing_with_a_unit_closer_than_the_conductor(plan_dir):
    # 3 mm is below 0.85 x 6.6 mm = 5.6 mm (the outer-diameter table is +-15 %).
    path = plan_dir(paired("3 mm", "8 AWG"))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "3 mm" was read as 3 mm; two conductors cannot be closer '
        "than their own diameter (6.6 mm for 8 AWG); give the centre-to-centre spacing"]


def test_a_spacing_within_the_tolerance_of_the_diameter_table_is_accepted(plan_dir):
    # 6 mm is 0.91 of 6.6 mm: inside the table's +-15 %, so a thin-wall cable is not refused.
    plan = read_plan(plan_dir(paired("6 mm", "8 AWG")))
    assert plan.runs[0].geometry.spacing_m == pytest.approx(0.006)


def test_a_bare_spacing_under_a_millimetre_is_refused_even_without_a_size(plan_dir):
    path = plan_dir(paired("0.5", ""))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "0.5" was read as 0.5 mm (bare numbers in spacing are mm in '
        "a metric plan); a spacing under 1 mm is less than the diameter of any insulated power "
        "conductor; write it with a unit, e.g. 12 mm"]


def test_a_small_spacing_with_a_unit_and_no_size_is_taken_as_meant(plan_dir):
    plan = read_plan(plan_dir(paired("0.5 mm", "")))
    assert plan.runs[0].geometry.spacing_m == pytest.approx(0.0005)


def test_an_imperial_plan_reads_bare_spacings_as_inches(plan_dir):
    # 0.02 in = 0.51 mm; 8 AWG is 6.6 mm = 0.26 in; 0.02 ft = 6.1 mm is no better, so no guess.
    path = plan_dir(paired("0.02", "8 AWG", units="ft"))
    assert findings_of(path) == [
        f'{path}: runs row 2, spacing: "0.02" was read as 0.02 in (bare numbers in spacing are '
        "inches in an imperial plan); two conductors cannot be closer than their own diameter "
        "(0.26 in for 8 AWG); write it with a unit, e.g. 0.5 in"]


def test_a_state_current_far_beyond_the_size_is_a_finding(plan_dir):
    # 8 AWG, 105 °C: 80 A (33 CFR 183.425 Table 5); 850 A is over 3 x 80 = 240 A.
    path = plan_dir(paired("", "8 AWG", current=850))
    assert findings_of(path) == [
        f"{path}: runs row 2, circuits: the run carries up to 850 A (circuits feed, from the states "
        "sheet), more than 3 times the 80 A that 8 AWG carries continuously (105 °C insulation, "
        "33 CFR 183.425 Table 5); check the current in amperes and the size"]


def test_the_current_check_uses_the_largest_magnitude_over_states_of_all_circuits(plan_dir):
    # Two circuits of -130 A each in one state: -260 A on 8 AWG, over 240 A; each alone is not.
    sheets = paired("", "8 AWG")
    sheets["runs"][1][1] = "feed; charger"
    sheets["states"] = [["circuit", "harbour", "charging"], ["feed", 5, -130],
                        ["charger", 0, -130]]
    path = plan_dir(sheets)
    assert findings_of(path) == [
        f"{path}: runs row 2, circuits: the run carries up to 260 A (circuits feed, charger, from "
        "the states sheet), more than 3 times the 80 A that 8 AWG carries continuously (105 °C "
        "insulation, 33 CFR 183.425 Table 5); check the current in amperes and the size"]
    sheets["states"][2][2] = -100                   # 230 A: within 3 x 80 A
    assert read_plan(plan_dir(sheets, name="within")).run_currents_a[0, 1] == -230


def test_a_run_current_far_beyond_a_metric_size_is_a_finding(plan_dir):
    # 2.5 mm2 read on the 105 °C table by cross-section: 39 A (between 14 AWG 35 A and 12 AWG 45 A).
    sheets = paired("", "2.5 mm2")
    del sheets["states"]
    sheets["runs"][0] = sheets["runs"][0][:1] + sheets["runs"][0][2:] + ["current_a"]
    sheets["runs"][1] = sheets["runs"][1][:1] + sheets["runs"][1][2:] + [-150]
    path = plan_dir(sheets)
    assert findings_of(path) == [
        f"{path}: runs row 2, current_a: the run carries 150 A, more than 3 times the 39 A that "
        "2.5 mm2 carries continuously (105 °C insulation, 33 CFR 183.425 Table 5); check the "
        "current in amperes and the size"]


def test_the_sample_windlass_is_within_its_size():
    # 85 A on 2/0 AWG (330 A at 105 °C, 33 CFR 183.425 Table 5): no finding.
    plan = read_plan(SAMPLES / "cruising_sailboat")
    assert plan.run_currents_a.max() == 85
