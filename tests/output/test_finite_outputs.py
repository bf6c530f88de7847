"""No NaN and no infinity ever reaches an output: the results, the JSON of every command, the
terminal, the xlsx and html reports and the DataFrames, on every sample and on fuzzed plans whose
numbers span the whole range of a float (issue 19.4; docs/robustness.md, "Numbers within
physics").

A figure that does not apply is None in the results and JSON, ``<NA>`` in a frame, a dash or a
word in the tables: never NaN.
"""

import dataclasses
import io
import json
import math
import re

import numpy as np
import openpyxl
import pandas as pd
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from conftest import SAMPLES, run_cli
from deviation import api
from deviation.plan import PlanError
from deviation.reader import plan_from_tables, read_plan
from deviation.render.documents.check import check_document
from deviation.render.terminal import make_console, write_document

SAMPLE_NAMES = sorted(p.name for p in SAMPLES.iterdir() if p.is_dir())
#: A NaN or an infinity as any writer spells one (Python, JSON, numpy, a spreadsheet).
NOT_FINITE = re.compile(r"(?<![\w.])(nan|NaN|NAN|inf|Inf|INF|-inf|infinity|Infinity|#NUM!)(?![\w])")


def finite_everywhere(value, where="result"):
    """Every number inside ``value`` (dataclasses, mappings, sequences, arrays) is finite."""
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return
    if isinstance(value, (int, np.integer)):
        return
    if isinstance(value, (float, np.floating)):
        assert math.isfinite(value), f"{where} is {value}"
        return
    if isinstance(value, np.ndarray):
        if value.dtype.kind in "fc":
            assert np.all(np.isfinite(value)), f"{where} holds {value}"
        elif value.dtype == object:
            for i, item in enumerate(value.ravel()):
                finite_everywhere(item, f"{where}[{i}]")
        return
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        for f in dataclasses.fields(value):
            if f.name in ("plan",):                 # the plan itself was read, not computed
                continue
            finite_everywhere(getattr(value, f.name), f"{where}.{f.name}")
        return
    if isinstance(value, dict):
        for k, item in value.items():
            finite_everywhere(item, f"{where}[{k!r}]")
        return
    if isinstance(value, (list, tuple)):
        for i, item in enumerate(value):
            finite_everywhere(item, f"{where}[{i}]")


def strict_json(text):
    """JSON parsed refusing NaN and Infinity tokens, with every number finite."""
    def refuse(token):
        raise AssertionError(f"{token} in the JSON")
    document = json.loads(text, parse_constant=refuse)
    finite_everywhere(document, "json")
    return document


def finite_frames(result):
    for name in ("to_frame", "runs_frame", "remedies_frame", "findings_frame"):
        frame = getattr(result, name)()
        for column in frame.columns:
            values = frame[column]
            if pd.api.types.is_float_dtype(values.dtype):
                # <NA> (a figure that does not apply) is masked; a NaN is not.
                numbers = (values.array.to_numpy(dtype=float, na_value=0.0)
                           if pd.api.types.is_extension_array_dtype(values.dtype)
                           else values.to_numpy())
                assert np.all(np.isfinite(numbers)), f"{name}.{column} holds {values.tolist()}"
            elif values.dtype == object:
                for item in values:
                    assert not (isinstance(item, float) and not math.isfinite(item)), (name, column)


def no_words_of_nan(text, where):
    found = NOT_FINITE.search(text)
    assert found is None, f"{where}: {found.group(0)!r} in ...{text[max(0, found.start() - 80):found.end() + 40]}..."


def finite_workbook(path):
    book = openpyxl.load_workbook(path)
    for sheet in book.worksheets:
        for row in sheet.iter_rows(values_only=True):
            for value in row:
                if isinstance(value, float):
                    assert math.isfinite(value), (path, sheet.title, row)
                elif isinstance(value, str):
                    no_words_of_nan(value, f"{path.name} {sheet.title}")


def terminal_text(result, width=160):
    buffer = io.StringIO()
    write_document(check_document(result, all_runs=True), make_console(file=buffer, width=width),
                   detail=True)
    return buffer.getvalue()


@pytest.mark.slow
@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_every_output_of_every_sample_is_finite(name, tmp_path):
    path = SAMPLES / name
    plan = read_plan(path)
    result = api.check(plan)
    finite_everywhere(result.sensors, "sensors")
    finite_frames(result)
    no_words_of_nan(terminal_text(result), "terminal")
    commands = [("check",), ("card",), ("electronic",), ("per-amp",), ("area",), ("swing-state",),
                ("test-sheet", "--sensor", plan.sensors[0].name, "--heading", 0)]
    for args in commands:
        out = run_cli(*args, path, "--json")
        if out.exit_code == 2 and args[0] in ("electronic", "per-amp"):
            continue                                # a plan with no electronic sensor
        assert out.exit_code in (0, 1), (args, out.output)
        strict_json(out.output)
    shown = run_cli("check", path, "--width", 120)
    no_words_of_nan(shown.output, "check")
    for suffix in ("xlsx", "html"):
        report = tmp_path / f"report.{suffix}"
        assert run_cli("check", path, "--report", report).exit_code in (0, 1)
        if suffix == "xlsx":
            finite_workbook(report)
        else:
            no_words_of_nan(re.sub(r"<[^>]+>|data:image/[^\"]+", " ", report.read_text()), "html")


def test_the_sailboat_json_and_frames_are_finite():
    # The fast lane's share of the sweep above.
    result = api.check(read_plan(SAMPLES / "cruising_sailboat"))
    finite_everywhere(result.sensors, "sensors")
    strict_json(json.dumps(check_document(result).data))
    finite_frames(result)


# Fuzzed plans: numbers from the whole range of a float ------------------------------------------

#: Each figure of the fuzzed plan: a plausible range, and edges the reader accepts.
FIGURES = {
    "coordinate": (st.floats(-5, 5).map(lambda v: round(v, 3)),
                   [0.0, -0.0, 1e-300, 5e-324, 9999.0, -9999.0, 1e-9]),
    "current": (st.floats(-400, 400), [0.0, 99_999.0, -99_999.0, 1e-300]),
    "spacing_mm": (st.floats(2, 80), [1e-9, 1e-300, 0.5, 99_000.0]),
    "budget": (st.floats(0.1, 10), [1e-300, 180.0]),
    "heel": (st.floats(0, 45), [0.0, 90.0, 89.999]),
    "field_ut": (st.floats(5, 60), [0.001, 100.0]),
    "moment": (st.floats(0, 50), [0.0, 1e6, 1e-300, -1e6]),
    "safe_m": (st.floats(0.2, 5), [1e-300, 100.0, 1e-9]),
}
#: What a float or its text can be besides: the reader must refuse these.
ANYTHING = st.one_of(st.floats(allow_nan=True, allow_infinity=True).map(repr),
                     st.sampled_from(["1e400", "-1e400", "1e-400", "nan", "inf", "−1", "1e300"]))


@st.composite
def fuzzed_figures(draw):
    """A plausible plan's figures with one of them (or none) pushed to an edge or beyond."""
    names = [f"coordinate{i}" for i in range(9)] + [n for n in FIGURES if n != "coordinate"]
    figures = {name: str(draw(FIGURES[name.rstrip("012345678")][0])) for name in names}
    pushed = draw(st.sampled_from([None] + names))
    if pushed is not None:
        edges = FIGURES[pushed.rstrip("012345678")][1]
        figures[pushed] = draw(st.one_of(st.sampled_from(edges).map(str), ANYTHING))
    return figures


def _point(figures, first):
    return ", ".join(figures[f"coordinate{i}"] for i in range(first, first + 3))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(figures=fuzzed_figures(), kind=st.sampled_from(["paired", "twisted", "none", "separate"]))
def test_a_fuzzed_plan_is_refused_or_every_output_is_finite(figures, kind):
    f = figures
    tables = {
        "site": [["setting", "value"], ["horizontal_field_ut", f["field_ut"]],
                 ["vertical_field_ut", 40]],
        "runs": [["run", "circuits", "route", "return", "return_route", "spacing", "lay"],
                 ["feed", "feed", f"{_point(f, 0)} > {_point(f, 3)}", kind,
                  f"{_point(f, 3)} > {_point(f, 0)}" if kind == "separate" else "",
                  f"{f['spacing_mm']} mm" if kind in ("paired", "twisted") else "",
                  "30 mm" if kind == "twisted" else ""]],
        "states": [["circuit", "on", "off"], ["feed", f["current"], 0]],
        "sensors": [["sensor", "at", "kind", "budget_deg", "reference_state", "max_heel_deg"],
                    ["compass", _point(f, 6), "magnetic compass", f["budget"], "off", f["heel"]]],
        "equipment": [["item", "at", "moment_am2", "safe_distance", "safe_distance_for"],
                      ["magnet", _point(f, 3), f["moment"], "", ""],
                      ["speaker", _point(f, 0), "", f["safe_m"], "standard"]],
    }
    try:
        plan = plan_from_tables(tables)
        result = api.check(plan)
    except PlanError as error:
        assert error.findings
        event("refused: " + re.sub(r"[-\d.e+]+", "#", error.findings[0].message)[:70])
        return
    event("read and checked")
    finite_everywhere(result.sensors, "sensors")
    strict_json(json.dumps(check_document(result).data))
    finite_frames(result)
    no_words_of_nan(terminal_text(result), "terminal")


def test_the_checks_fail_on_what_they_look_for():
    # The helpers themselves fail on what they look for (else the tests above prove nothing).
    with pytest.raises(AssertionError):
        strict_json('{"a": NaN}')
    with pytest.raises(AssertionError):
        strict_json('{"a": 1e999}')
    with pytest.raises(AssertionError):
        finite_everywhere({"a": [1.0, float("inf")]})
    with pytest.raises(AssertionError):
        no_words_of_nan("held nan°", "t")
    no_words_of_nan("information, finance, nanotesla", "t")
    for column in ([1.0, np.nan], pd.arrays.FloatingArray(np.array([1.0, np.nan, 0.0]),
                                                          np.array([False, False, True]))):
        frames = type("R", (), {n: staticmethod(lambda c=column: pd.DataFrame({"x": c}))
                                for n in ("to_frame", "runs_frame", "remedies_frame",
                                          "findings_frame")})
        with pytest.raises(AssertionError):
            finite_frames(frames)
