"""Fuzzing every reader with hypothesis: CSV sheets as raw bytes, workbooks of random cells, tables
given in Python, and the switch-on and swing readings. Each either reads, giving finite figures,
or raises its own error with located findings; nothing else (no other exception, no finding that
carries a control character back out).

Bounded and quick (40 examples each, about 10 s in all), so they run in CI's fast lane; in CI the
examples are fixed (tests/conftest.py).
"""

import datetime as dt
import math
import os
import re

import numpy as np
import openpyxl
import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import straight_wire_plan, write_plan
from deviation.aftercare import ReadingsError, read_swing, read_switch_on_results
from deviation.analysis import analyse
from deviation.plan import PlanError
from deviation.reader import plan_from_tables, read_plan

# FUZZ_EXAMPLES=2000 for a longer search by hand; CI runs the default.
FAST = settings(max_examples=int(os.environ.get("FUZZ_EXAMPLES", 40)), deadline=None,
                suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def _clean_findings(error):
    assert error.findings
    for finding in error.findings:
        text = str(finding)
        assert text and not CONTROL.search(text), repr(text)


def _finite_plan(plan):
    for result in analyse(plan).sensors:
        for state in result.states:
            assert math.isfinite(state.held)
            assert np.all(np.isfinite(state.field_t))


# Pieces a CSV sheet is made of, hostile ones included.
csv_pieces = st.one_of(
    st.sampled_from([",", ";", "\t", "\n", "\r\n", '"', '""', ">", " > ", "e.g.", "=1+1", "#REF!",
                     "−", "1,5", "0, 0, 0", "1e300", "nan", "inf", "-0", "\x00", "\x1b[31m",
                     "\x07", "\u202e", "\ufeff", "\xa0", "2'6\"", "10 AWG", "feed", "on",
                     "paired", "twisted", "magnetic compass", "compass", "run", "route",
                     "return", "circuits", "sensor", "at", "kind", "budget_deg"]),
    st.text(max_size=6))


@FAST
@given(st.sampled_from(["runs", "states", "sensors", "site", "points", "equipment"]),
       st.lists(csv_pieces, max_size=40), st.booleans())
def test_a_csv_sheet_of_random_bytes_gives_findings_or_a_plan(tmp_path_factory, sheet, pieces,
                                                               latin1):
    folder = write_plan(tmp_path_factory.mktemp("csv"), straight_wire_plan())
    text = "".join(pieces)
    data = text.encode("latin-1", "replace") if latin1 else text.encode("utf-8")
    (folder / f"{sheet}.csv").write_bytes(data)
    try:
        plan = read_plan(folder)
    except PlanError as error:
        _clean_findings(error)
        return
    _finite_plan(plan)


xlsx_cells = st.one_of(
    st.none(), st.booleans(), st.integers(-10**12, 10**12),
    st.floats(allow_nan=False, allow_infinity=False),
    st.datetimes(min_value=dt.datetime(1900, 3, 1), max_value=dt.datetime(2100, 1, 1)),
    st.text(st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"),
            max_size=10).map(lambda t: re.sub(r"[\x00-\x08\x0b\x0c\x0e-\x1f]", "", t)),
    st.sampled_from(["=1+1", "=NA()", "_x001B_[2J", "paired", "0, 0, 0", "feed", "on",
                     "magnetic compass", "1 m", "#DIV/0!", "e.g. x"]))


@FAST
@given(st.sampled_from(["runs", "states", "sensors", "site", "Cable runs", "log"]),
       st.lists(st.lists(xlsx_cells, max_size=6), max_size=6))
def test_a_workbook_of_random_cells_gives_findings_or_a_plan(tmp_path_factory, title, rows):
    path = tmp_path_factory.mktemp("xlsx") / "plan.xlsx"
    book = openpyxl.Workbook(write_only=True)
    for name, table in straight_wire_plan().items():
        sheet = book.create_sheet(name if name != title else f"{name} (old)")
        for row in table:
            sheet.append(row)
    sheet = book.create_sheet(title)
    for row in rows:
        sheet.append(row)
    book.save(path)
    try:
        plan = read_plan(path)
    except PlanError as error:
        _clean_findings(error)
        return
    _finite_plan(plan)


python_cells = st.one_of(
    st.none(), st.booleans(), st.integers(-10**20, 10**20), st.floats(), st.text(max_size=8),
    st.just(pd.NA), st.just(pd.NaT), st.just(np.nan), st.just(np.float64(1.5)),
    st.just(np.int64(3)), st.just(dt.date(2027, 1, 5)), st.just((0, 0, 0)), st.just((1, 2)),
    st.just(np.zeros(3)), st.just([(-1, 0, 0), (1, 0, 0)]), st.just({"a": 1}), st.just(object()),
    st.sampled_from(["feed", "on", "paired", "none", "compass", "magnetic compass", "0, 0, 0",
                     "-1, 0, -1 > 1, 0, -1", "nan", "NaN", "1e300", "−1"]))
python_tables = st.one_of(
    st.lists(st.lists(python_cells, max_size=5), max_size=5),
    st.lists(st.dictionaries(st.sampled_from(["run", "circuits", "route", "return", "circuit",
                                              "on", "sensor", "at", "kind", "budget_deg",
                                              "setting", "value", "x"]), python_cells,
                             max_size=5), max_size=4),
    python_cells)


@FAST
@given(st.dictionaries(st.sampled_from(["runs", "states", "sensors", "site", "points", "spots",
                                        "equipment", "volumes", "cable runs", 3]),
                       python_tables, max_size=5), st.booleans(), st.booleans())
def test_tables_of_any_python_values_give_plan_errors_or_a_plan(tables, base, as_frames):
    if base:
        tables = {**straight_wire_plan(), **tables}
    if as_frames:
        for name, table in list(tables.items()):
            if isinstance(table, list) and table and all(isinstance(r, dict) for r in table):
                tables[name] = pd.DataFrame(table)
    try:
        plan = plan_from_tables(tables)
    except PlanError as error:
        _clean_findings(error)
        return
    _finite_plan(plan)


@FAST
@given(st.lists(st.one_of(
    st.sampled_from(["compass", "magnetic", "deviation", "state", ",", ";", "\n", "on", "0",
                     "45", "90", "400", "-5", "3.5E", "2W", "1,5E", "−2", "nan", "1e300", "252",
                     "\x1b", '"', "e.g."]),
    st.text(max_size=4)), max_size=40))
def test_swing_readings_of_random_text_give_findings_or_readings(tmp_path_factory, pieces):
    folder = tmp_path_factory.mktemp("swing")
    plan = read_plan(write_plan(folder / "plan", straight_wire_plan()))
    path = folder / "swing.csv"
    path.write_bytes("".join(pieces).encode("utf-8"))
    try:
        readings = read_swing(path, plan)
    except ReadingsError as error:
        _clean_findings(error)
        return
    for _rows, compass, _magnetic, deviation in readings.states.values():
        assert np.all(np.isfinite(compass)) and np.all(np.isfinite(deviation))
        assert np.all(np.abs(deviation) <= 90)


@FAST
@given(st.lists(st.one_of(
    st.sampled_from(["circuit", "state", "reading before", "reading after", "observed change",
                     "current on test", ",", ";", "\n", "feed", "on", "30", "31,5", "400",
                     "252", "-3", "nan", "1e300", "\x00", "\x07", "#N/A"]),
    st.text(max_size=4)), max_size=40))
def test_switch_on_readings_of_random_text_give_findings_or_results(tmp_path_factory, pieces):
    folder = tmp_path_factory.mktemp("switch")
    plan = read_plan(write_plan(folder / "plan", straight_wire_plan()))
    path = folder / "readings.csv"
    path.write_bytes("".join(pieces).encode("utf-8"))
    try:
        results = read_switch_on_results(plan, path, heading_deg=30.0)
    except ReadingsError as error:
        _clean_findings(error)
        return
    for row in results.rows:
        assert math.isfinite(row.predicted_change_deg)
        assert row.observed_change_deg is None or math.isfinite(row.observed_change_deg)
