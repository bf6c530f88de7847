"""``deviation clearance``: its rows against textbook formulas written here, its JSON layout, its
words, and its refusals of bad options."""

import json
import math

import pytest
from click.testing import CliRunner
from scipy.optimize import brentq

from deviation.cli import main
from deviation.render.words import CAUTIONS

MU0 = 4e-7 * math.pi   # pre-2019 exact value; CODATA 2018 differs by 5e-10 relative


def run(*args):
    return CliRunner().invoke(main, ["clearance", *map(str, args)])


def allowed_t(horizontal_ut, budget_deg):
    # Largest deviation of a vessel-fixed disturbance b over every heading is asin(b/H)
    # (NGA Pub. 226, semicircular deviation): the allowed disturbance is H sin(budget).
    return horizontal_ut * 1e-6 * math.sin(math.radians(budget_deg))


def single_wire_distance_m(current_a, field_t):
    # B = mu0 I / (2 pi r) of a long straight wire (Griffiths, ch. 5), solved for r.
    return MU0 * current_a / (2 * math.pi * field_t)


def two_wire_distance_m(current_a, spacing_m, field_t):
    # Two long wires, +I and -I, s apart; an observer at d from their centre line in their plane
    # (the worst orientation): B = mu0 I/(2 pi) (1/(d - s/2) - 1/(d + s/2)), each wire by
    # Griffiths ch. 5. The distance where B equals the limit, by root finding.
    def excess(d):
        return MU0 * current_a / (2 * math.pi) * (1 / (d - spacing_m / 2)
                                                  - 1 / (d + spacing_m / 2)) - field_t
    return brentq(excess, spacing_m / 2 * (1 + 1e-12), 1e3, xtol=1e-15, rtol=1e-14)


def test_rows_match_the_wire_and_two_wire_formulas():
    result = run("--horizontal-ut", 20, "--budget-deg", 1, "--currents", "1,5,10,100",
                 "--spacing", "5mm", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    limit = allowed_t(20.0, 1.0)
    assert [row["current_a"] for row in data["rows"]] == [1.0, 5.0, 10.0, 100.0]
    for row in data["rows"]:
        assert row["single_m"] == pytest.approx(single_wire_distance_m(row["current_a"], limit),
                                                rel=1e-12)
        assert row["pair_m"] == pytest.approx(two_wire_distance_m(row["current_a"], 0.005,
                                                                  limit), rel=1e-9)
    # 10 A at 20 uT and 1 degree: mu0 I/(2 pi H sin 1deg) = 2e-6 / (20e-6 * 0.0174524) = 5.72987 m.
    assert data["rows"][2]["single_m"] == pytest.approx(5.72987, abs=1e-5)


def test_twisted_column_lies_between_its_floor_and_the_pair():
    # The twisted model is never worse than the untwisted pair, nor better than the pair with
    # its field 50 dB lower (Moser and Spencer 1968: 50 dB below the two-wire line at 1.5 lay).
    data = json.loads(run("--horizontal-ut", 20, "--budget-deg", 1, "--currents", "1,10,100",
                          "--json").output)
    floor = 10 ** (-50 / 20)
    for row in data["rows"]:
        at_floor = two_wire_distance_m(row["current_a"], 0.005, allowed_t(20.0, 1.0) / floor)
        assert at_floor * (1 - 1e-9) <= row["twisted_m"] <= row["pair_m"] * (1 + 1e-9)
        assert row["twisted_m"] < row["pair_m"]


def test_json_layout():
    data = json.loads(run("--horizontal-ut", 20, "--budget-deg", 2, "--currents", "3",
                          "--spacing", "4 mm", "--lay", "40 mm", "--json").output)
    assert set(data) == {"horizontal_ut", "field_source", "site", "zone", "budget_deg",
                         "allowed_ut", "spacing_m", "lay_m", "rows", "assumptions", "cautions"}
    assert data["field_source"] == "given" and data["site"] is None and data["zone"] == "ok"
    assert data["horizontal_ut"] == 20.0 and data["budget_deg"] == 2.0
    assert data["allowed_ut"] == pytest.approx(20 * math.sin(math.radians(2)), abs=1e-6)
    assert data["spacing_m"] == pytest.approx(0.004) and data["lay_m"] == pytest.approx(0.04)
    assert set(data["rows"][0]) == {"current_a", "single_m", "pair_m", "twisted_m"}
    assert data["cautions"] == list(CAUTIONS)
    assert len(data["assumptions"]) == 5


def test_field_from_the_model_at_a_place():
    data = json.loads(run("--lat", 50.8, "--lon", -1.3, "--date", "2027-06-01",
                          "--budget-deg", 1, "--currents", "10", "--json").output)
    assert data["field_source"] == "WMM2025"
    assert data["site"]["latitude_deg"] == 50.8 and data["site"]["date"] == "2027-06-01"
    # Whatever the model says, the single conductor's row follows from its H.
    limit = allowed_t(data["horizontal_ut"], 1.0)
    assert data["rows"][0]["single_m"] == pytest.approx(single_wire_distance_m(10, limit),
                                                        rel=1e-6)


def test_imperial_table_and_bare_numbers_in_inches():
    result = run("--horizontal-ut", 20, "--budget-deg", 1, "--currents", "10", "--spacing",
                 "0.2", "--units", "ft")
    assert result.exit_code == 0, result.output
    assert "pair at 0.20 in" in result.output
    # 5.72987 m is 18.799 ft (0.3048 m per ft, exact by definition).
    assert "18.80 ft" in result.output
    data = json.loads(run("--horizontal-ut", 20, "--budget-deg", 1, "--currents", "10",
                          "--spacing", "0.2", "--units", "ft", "--json").output)
    assert data["spacing_m"] == pytest.approx(0.2 * 0.0254, rel=1e-12)


def test_table_says_what_each_column_assumes_and_gives_the_cautions():
    result = run("--horizontal-ut", 20, "--budget-deg", 1, "--width", "300")
    assert result.exit_code == 0, result.output
    text = " ".join(result.output.split())
    assert "worst orientation about its axis" in text
    assert "50 dB below the pair's at 1.5 lay lengths (75 mm)" in text
    assert "50 dB floor beyond" in text
    assert "The untwisted ends of a twisted run (at lugs, breakers and terminals) count as a " \
           "pair" in text
    for caution in CAUTIONS:
        assert " ".join(caution.split()) in text
    # Every default current has its row (1 to 500 A).
    for current in ("1", "2", "5", "10", "20", "50", "100", "200", "500"):
        assert f"| {current:>9} |" in result.output or f"│ {current:>9} │" in result.output


def test_weak_field_site_is_warned_about():
    result = run("--horizontal-ut", 1.5, "--budget-deg", 1, "--currents", "1", "--width", "200")
    assert "blackout zone" in result.output


@pytest.mark.parametrize("args, message", [
    (["--budget-deg", 1], "give --lat and --lon"),
    (["--lat", 50, "--lon", 1, "--horizontal-ut", 20, "--budget-deg", 1], "not both"),
    (["--horizontal-ut", 20, "--budget-deg", 90], "less than 90 degrees"),
    (["--horizontal-ut", 20, "--budget-deg", 0], "more than 0"),
    (["--horizontal-ut", 20, "--budget-deg", 1, "--currents", "1,ten"],
     '"ten" is not a current of more than zero amperes'),
    (["--horizontal-ut", 20, "--budget-deg", 1, "--currents", "-5"],
     '"-5" is not a current of more than zero amperes'),
    (["--horizontal-ut", 20, "--budget-deg", 1, "--spacing", "0"], "must be more than zero"),
    (["--horizontal-ut", 20, "--budget-deg", 1, "--lay", "long"], "is not a length"),
    (["--horizontal-ut", 0, "--budget-deg", 1], "--horizontal-ut"),
    (["--horizontal-ut", 20, "--budget-deg", 1, "--date", "2027-01-01"],
     "--date and --altitude-m go with --lat and --lon"),
    (["--lat", 50, "--lon", 1, "--date", "2031-01-01", "--budget-deg", 1],
     "outside the validity of WMM-2025"),
    (["--lat", 50, "--lon", 1, "--date", "soon", "--budget-deg", 1], '"soon" is not a date'),
    (["--horizontal-ut", 20], "Missing option '--budget-deg'"),
])
def test_bad_options_exit_2_with_a_clear_message(args, message):
    result = run(*args)
    assert result.exit_code == 2
    assert message in " ".join(result.output.split())
    assert "Traceback" not in result.output
