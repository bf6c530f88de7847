"""Read a plan workbook (.xlsx) or a folder of .csv sheets into a validated :class:`Plan`.

Every problem found is collected as a :class:`Finding` naming the file, sheet, row and column;
if there are any, :class:`PlanError` carries all of them and nothing is computed. The input is
only ever opened for reading.
"""

from __future__ import annotations

import datetime as dt
import difflib
import math
import re
from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path

import numpy as np

from . import units
from .constants import (
    MAX_COORDINATE_M,
    MAX_CURRENT_A,
    MAX_DC_VOLTAGE_V,
    MAX_LENGTH_M,
    MAX_MOMENT_AM2,
    MAX_SAFE_DISTANCE_M,
    WMM_VALID_FROM,
    WMM_VALID_UNTIL,
)
from .errors import Problem
from .physics.geomag import decimal_year
from .physics.routing import CHORDS_PER_LAY, RunGeometry
from .plan import (
    DEFAULT_STATE,
    CandidateSpot,
    Circuit,
    Equipment,
    Finding,
    Inverter,
    Plan,
    PlanError,
    Run,
    Sensor,
    Site,
    StateCondition,
    frozen_array,
    name_key,
)
from .quantities import Budget, Unit
from .schema import (
    ENGINES,
    GENERATOR,
    PAIR_LIES,
    PROFILES,
    RADIOS,
    REQUIRED_SHEETS,
    RETURN_KINDS,
    SAFE_DISTANCE_FOR,
    SENSOR_KINDS,
    SHEETS,
    SITE_SETTINGS,
    SITE_TEXT_SETTINGS,
    SUPPLIES,
    SWITCHING,
    TOTAL_FIELD_KIND,
    VECTOR_ELECTRONIC_KINDS,
    columns_of,
)
from .sheets import (
    EXAMPLE_MARK,
    MAX_ROWS,
    Collector,
    Found,
    Raw,
    Sheet,
    dash_hint,
    grid_from_table,
    is_example_row,
    missing_sheet_message,
    plan_canonical,
    read_folder,
    read_workbook,
    spreadsheet_date_message,
    table,
    visible,
)

#: Straight segments one run, and a whole plan, may need (a 100 m twisted run of 5 mm lay is
#: 480 000; 10 million segments take about 0.7 GB).
MAX_SEGMENTS_PER_RUN = 2_000_000
MAX_SEGMENTS = 10_000_000

COLUMNS = {name: columns_of(name) for name in SHEETS if name != "states"}
#: Each sheet's known columns, to tell a header of one column from a wrong separator.
KNOWN_COLUMNS = {name: tuple(spec["known"]) for name, spec in COLUMNS.items()}
KNOWN_COLUMNS["states"] = ("circuit",)

canonical = plan_canonical

#: Names of runs, points, circuits, states, sensors: compared case- and space-insensitively.
key = name_key

# Every sheet is read by deviation.sheets; these names stay importable from here.
__all__ = ["read_plan", "plan_from_tables", "is_example_row", "EXAMPLE_MARK", "MAX_ROWS",
           "Sheet", "canonical"]


# Cell readers -------------------------------------------------------------------------------------

def _sig(value) -> str:
    """A number with sensible digits for a message (at most 6 significant: 20000, 1e+300)."""
    return f"{value:.6g}"


def _number(value, what, collector, sheet, row, column, *, limit=None, unit=""):
    """A finite number, within +-``limit`` [``unit``] if given; None with a finding."""
    if isinstance(value, (dt.date, dt.datetime, dt.time)):
        collector.add(sheet, row, column, spreadsheet_date_message(value), Problem.SPREADSHEET_DATE)
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        collector.add(sheet, row, column, f'"{visible(value)}" is not {what}', Problem.NOT_A_VALUE)
        return None
    try:
        number = float(value.strip()) if isinstance(value, str) else float(value)
    except (TypeError, ValueError, OverflowError):
        collector.add(sheet, row, column, dash_hint(value) or f'"{visible(value)}" is not {what}',
                      Problem.NOT_A_VALUE)
        return None
    if not math.isfinite(number):
        collector.add(sheet, row, column, f'"{visible(value)}" is not {what} (not a finite number)',
                      Problem.NOT_A_VALUE)
        return None
    if limit is not None and abs(number) > limit:
        collector.add(sheet, row, column, f"{_sig(number)} {unit} is more than the {limit:,.0f} "
                      f"{unit} any plan has (rule of thumb, no published source); check the digits "
                      "and the unit", Problem.OUT_OF_RANGE)
        return None
    return number


def _length(value, default_unit, collector, sheet, row, column, *, limit=MAX_LENGTH_M,
            what="any length in a plan may be"):
    """A length [m] within +-``limit``; None with a finding."""
    if isinstance(value, (dt.date, dt.datetime, dt.time)):
        collector.add(sheet, row, column, spreadsheet_date_message(value), Problem.SPREADSHEET_DATE)
        return None
    if isinstance(value, bool):
        collector.add(sheet, row, column, f'"{value}" is not a length', Problem.NOT_A_VALUE)
        return None
    try:
        metres = units.parse_length(value, default_unit)
    except (units.UnitError, OverflowError) as error:
        collector.add(sheet, row, column, dash_hint(value) or visible(error), Problem.NOT_A_VALUE)
        return None
    if abs(metres) > limit:
        collector.add(sheet, row, column, f'"{visible(value)}" is {_sig(metres)} m, more than the '
                      f"{_metres(limit)} {what} (rule of thumb, no published source); check "
                      "the digits and the unit", Problem.OUT_OF_RANGE)
        return None
    return metres


def _metres(value):
    return f"{value / 1000:g} km" if value >= 1000 else f"{value:g} m"


def _suggest(word, choices):
    close = difflib.get_close_matches(key(word), [key(c) for c in choices], n=1, cutoff=0.6)
    if not close:
        return ""
    original = next(c for c in choices if key(c) == close[0])
    return f'; did you mean "{original}"?'


def _position(text, points, default_unit, collector, sheet, row, column):
    """A point name or ``x, y, z`` (each may carry a unit), or a tuple, list or array of three
    coordinates (numbers in the plan's unit, or texts with units); each coordinate within
    ``MAX_COORDINATE_M`` of the origin."""
    if isinstance(text, (tuple, list, np.ndarray)):
        values = list(np.asarray(text, dtype=object).ravel())
        shown = "(" + ", ".join(visible(v) for v in values) + ")"
        if len(values) != 3 or any(isinstance(v, bool) for v in values):
            collector.add(sheet, row, column, f"{shown} is not x, y, z: a position is three "
                          "coordinates", Problem.NOT_A_VALUE)
            return None
        coords = []
        for value in values:
            try:
                coords.append(units.parse_length(value, default_unit))
            except (units.UnitError, OverflowError) as error:
                collector.add(sheet, row, column, f"{shown} is not x, y, z: "
                              f"{dash_hint(value) or visible(error)}", Problem.NOT_A_VALUE)
                return None
        return _within_reach(np.array(coords), shown, collector, sheet, row, column)
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        collector.add(sheet, row, column, f'"{text}" is not a position; give a point name or '
                      "x, y, z", Problem.NOT_A_VALUE)
        return None
    text = str(text).strip()
    if key(text) in points:
        return points[key(text)]
    if key(text) in points.bad:
        collector.add_dependent(sheet, row, column, f'point "{text}" has a bad coordinate (points '
                                f"row {points.bad[key(text)]})")
        return None
    parts = [p for p in text.split(",")]
    if len(parts) == 3:
        coords = []
        for part in parts:
            try:
                coords.append(units.parse_length(part, default_unit))
            except (units.UnitError, OverflowError):
                hint = dash_hint(part)
                if hint:
                    collector.add(sheet, row, column, hint, Problem.NOT_A_VALUE)
                    return None
                coords = None
                break
        if coords is not None:
            return _within_reach(np.array(coords), f'"{visible(text)}"', collector, sheet, row,
                                 column)
    collector.add(sheet, row, column, f'"{visible(text)}" is neither a point in the points sheet '
                  f"nor x, y, z{_suggest(text, points.names)}",
                  Problem.UNKNOWN_NAME if len(parts) != 3 else Problem.NOT_A_VALUE)
    return None


def _within_reach(position_m, shown, collector, sheet, row, column):
    """A position whose coordinates lie within ``MAX_COORDINATE_M`` of the origin, else None."""
    if np.abs(position_m).max() > MAX_COORDINATE_M:
        collector.add(sheet, row, column, f"{shown} lies {_sig(np.abs(position_m).max())} m from "
                      f"the plan's origin, more than the {_metres(MAX_COORDINATE_M)} a plan's "
                      "points may lie (rule of thumb, no published source); check the digits and "
                      "the unit", Problem.OUT_OF_RANGE)
        return None
    return position_m


class _Points(dict):
    def __init__(self):
        super().__init__()
        self.names = []
        self.bad = {}            # name key -> points row of a point whose coordinates are bad


# The sheets ---------------------------------------------------------------------------------------

def _check_columns(sheet, collector):
    spec = COLUMNS[sheet.name]
    ok = True
    for col in spec["required"]:
        if col not in sheet.columns:
            close = difflib.get_close_matches(col, list(sheet.columns), n=1, cutoff=0.6)
            hint = f'; is "{sheet.columns[close[0]]}" meant to be it?' if close else ""
            collector.add(sheet.name, None, col, f"the required column is missing{hint}",
                          Problem.MISSING)
            ok = False
    return ok


def _read_site(sheet, collector):
    values, rows, notes, place_rows = {}, {}, [], []
    if sheet is not None and _check_columns(sheet, collector):
        for number, row in sheet.rows:
            setting = row.get("setting")
            if setting is None:
                if row.get("value") is not None:
                    collector.add("site", number, "setting", "a value without a setting name")
                continue
            name = canonical(setting)
            if name not in SITE_SETTINGS:
                collector.add("site", number, "setting", f'"{setting}" is not a setting; expected '
                              f'one of {", ".join(SITE_SETTINGS)}{_suggest(name, SITE_SETTINGS)}')
                continue
            if name == "place":             # a place of the operating area: one row each
                place_rows.append((number, row.get("value"), row.get("note")))
                continue
            if name in rows and row.get("value") is None:
                continue                    # a blank row (the template's) beside a filled one
            if name in rows and values[name] is not None:
                collector.add("site", number, "setting", f"{name} is given twice (rows "
                              f"{rows[name]} and {number}); keep one", Problem.DUPLICATE)
                continue
            values[name], rows[name] = row.get("value"), number
            if row.get("note") is not None:
                notes.append((name, str(row["note"])))

    def number(name, low, high, what):
        if values.get(name) is None:
            return None
        got = _number(values[name], what, collector, "site", rows[name], "value")
        if got is not None and not low <= got <= high:
            collector.add("site", rows[name], "value", f"{name} {_sig(got)} is outside {low:g} to "
                          f"{high:g}", Problem.OUT_OF_RANGE)
            return None
        return got

    unit = str(values.get("units") or "m").strip().lower()
    if unit not in units.LENGTH_UNITS:
        collector.add("site", rows.get("units"), "value", f'units "{unit}" is not one of '
                      f'{", ".join(units.LENGTH_UNITS)}')
        unit = "m"
    latitude = number("latitude", -90, 90, "a latitude in decimal degrees")
    longitude = number("longitude", -180, 360, "a longitude in decimal degrees")
    altitude = number("altitude_m", -1000, 100_000, "a height in metres") or 0.0
    horizontal = number("horizontal_field_ut", 0.001, 100, "a horizontal field in microtesla")
    vertical = number("vertical_field_ut", -100, 100, "a vertical field in microtesla")
    if values.get("horizontal_field_ut") is None and (values.get("latitude") is None
                                                      or values.get("longitude") is None):
        collector.add("site", None, None, "give latitude and longitude (for the WMM2025 field) "
                      "or horizontal_field_ut (measured)")
    raw_date = values.get("date")
    try:
        if raw_date is None:
            year, date_text = decimal_year(dt.date.today()), dt.date.today().isoformat()
        elif isinstance(raw_date, (dt.date, dt.datetime)):
            year, date_text = decimal_year(raw_date), raw_date.strftime("%Y-%m-%d")
        elif isinstance(raw_date, (int, float)) or re.fullmatch(r"\d{4}(\.\d+)?", str(raw_date)):
            year, date_text = float(raw_date), f"{float(raw_date):.2f}"
            if not math.isfinite(year):
                raise ValueError(raw_date)
        else:
            year, date_text = decimal_year(str(raw_date)), str(raw_date)
    except ValueError:
        collector.add("site", rows.get("date"), "value", f'"{visible(raw_date)}" is not a date '
                      "(YYYY-MM-DD or a decimal year such as 2027.5)", Problem.NOT_A_VALUE)
        year, date_text = decimal_year(dt.date.today()), dt.date.today().isoformat()
    if horizontal is None and not WMM_VALID_FROM <= year <= WMM_VALID_UNTIL:
        # The date as the plan gives it: a decimal year rounded for display could fall inside
        # the span it is refused for (2024-12-31 is 2024.997).
        given = (date_text if raw_date is None or isinstance(raw_date, (dt.date, dt.datetime))
                 else visible(str(raw_date).strip()))
        when = "before" if year < WMM_VALID_FROM else "after"
        collector.add("site", rows.get("date"), "value" if "date" in rows else None,
                      f"the date {given} is {when} the span WMM-2025 is valid for (from "
                      f"{int(WMM_VALID_FROM)}-01-01 up to {int(WMM_VALID_UNTIL)}-01-01); give the "
                      "site's field from a measurement (horizontal_field_ut) or a current model "
                      "instead", Problem.OUT_OF_RANGE)
    places = tuple(p for p in (_place(number, value, note, collector)
                               for number, value, note in place_rows) if p is not None)
    profile = _choice(values.get("profile"), PROFILES, "general", collector, "site",
                      rows.get("profile"), "value", "a profile")
    text = {name: str(values[name]).strip() or None for name in SITE_TEXT_SETTINGS
            if values.get(name) is not None}
    return Site(unit, latitude, longitude, year, date_text, altitude, horizontal, vertical,
                tuple(notes), places=places, profile=profile, **text)


def _place(number, value, note, collector):
    """A place of the operating area from a site row: value "lat, lon", its name in the note."""
    parts = [] if value is None or isinstance(value, (int, float)) else str(value).split(",")
    if len(parts) != 2:
        collector.add("site", number, "value", f'place "{value if value is not None else ""}" '
                      "is not latitude, longitude in decimal degrees (e.g. 64.1, -21.9)")
        return None
    latitude = _number(parts[0], "a latitude in decimal degrees", collector, "site", number,
                       "value")
    longitude = _number(parts[1], "a longitude in decimal degrees", collector, "site", number,
                        "value")
    if latitude is None or longitude is None:
        return None
    if not -90 <= latitude <= 90 or not -180 <= longitude <= 360:
        collector.add("site", number, "value", f"place {latitude:g}, {longitude:g} is outside "
                      "latitude -90 to 90 and longitude -180 to 360")
        return None
    name = str(note).strip() if note is not None and str(note).strip() else \
        f"{latitude:g}, {longitude:g}"
    return (name, latitude, longitude)


def _read_points(sheet, unit, collector):
    points = _Points()
    if sheet is None or not _check_columns(sheet, collector):
        return points
    seen = set()
    for number, row in sheet.rows:
        name = _unique_name(row, "point", "point", seen, collector, "points", number)
        if name is None:
            continue
        coords = []
        for axis in ("x", "y", "z"):
            if row.get(axis) is None:
                collector.add("points", number, axis, "a length is needed")
                coords = None
                break
            value = _length(row[axis], unit, collector, "points", number, axis,
                            limit=MAX_COORDINATE_M, what="a point may lie from the plan's origin")
            coords = None if value is None or coords is None else coords + [value]
        if coords is not None:
            points[key(name)] = np.array(coords)
            points.names.append(str(name))
        else:
            # Known, but with a bad coordinate (reported here): cells naming it are not
            # reported again (see _position).
            points.bad[key(name)] = number
    return points


def _read_states(sheet, collector):
    """Circuit currents: ({circuit key: (K,) amperes}, [state names], {circuit key: name},
    {circuit key: (switching, note, row, power_w, voltage_v, inverter)})."""
    if sheet is None:
        return None, [DEFAULT_STATE], {}, {}
    if "circuit" not in sheet.columns:
        first = next(iter(sheet.columns.values()), None)
        if first is None or canonical(first) != "circuit":
            collector.add("states", None, "circuit", "the first column must be circuit")
            return {}, [], {}, {}
    states = [label for _, label in sheet.state_columns]
    if not states:
        collector.add("states", None, None, "no operating states: add a column per state "
                      "(e.g. harbour, night motoring) holding each circuit's current in A")
    currents, names, details = {}, {}, {}
    seen = set()
    for number, row in sheet.rows:
        circuit = _unique_name(row, "circuit", "circuit", seen, collector, "states", number)
        if circuit is None:
            continue
        amps, watts = [], []
        for col, label in sheet.state_columns:
            current, power = _load_cell(row.get(col), collector, number, label)
            amps.append(0.0 if current is None else current)
            watts.append(np.nan if power is None else power)
        switching = _choice(row.get("switching"), SWITCHING, "with states", collector, "states",
                            number, "switching", "a way of switching")
        power_w, voltage, inverter = _supply(row, np.array(watts, dtype=float), sheet, collector,
                                             number)
        made = Circuit(str(circuit), np.array(amps, dtype=float), switching,
                       str(row.get("note") or ""), number, power_w, voltage, inverter)
        _check_load_currents(made, sheet, collector)
        # A bad cell is reported above; the circuit stays known so runs naming it find it.
        currents[key(circuit)] = np.asarray(made.currents_a, dtype=float)
        names[key(circuit)] = str(circuit)
        details[key(circuit)] = (switching, made.note, number, power_w, voltage, inverter)
    return currents, states, names, details


# Loads in watts -----------------------------------------------------------------------------------

_NUMBER = r"([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:e[-+]?\d+)?)"
#: A states cell with a unit: 1500 W, 1.5 kW, 12 A.
_LOAD = re.compile(rf"^\s*{_NUMBER}\s*(kw|w|a)\s*$", re.I)
#: A voltage cell: 12, 12 V, 24 VDC, 24 V DC; an AC one (230 V AC, 120 VAC) is found apart.
_VOLTAGE = re.compile(rf"^\s*{_NUMBER}\s*(v)?\s*(dc|ac)?\s*$", re.I)
_PERCENT = re.compile(rf"^\s*{_NUMBER}\s*%\s*$")
_WATT_EXAMPLE = "e.g. 1500 W or 1.5 kW"


def _load_cell(cell, collector, number, label):
    """A states cell: (amperes, None), (None, watts), or (None, None) blank or bad (found)."""
    if cell is None:
        return None, None
    if isinstance(cell, str):
        match = _LOAD.match(cell)
        if match:
            value, unit = float(match.group(1)), match.group(2).lower()
            if not math.isfinite(value):
                collector.add("states", number, label, f'"{visible(cell)}" is not a finite number',
                              Problem.NOT_A_VALUE)
                return None, None
            if unit == "a":
                return _limited(value, collector, number, label), None
            return None, value * (1000.0 if unit == "kw" else 1.0)
    what = "a current in amperes"
    if isinstance(cell, str) and re.search(r"\d\s*[a-z]", cell, re.I) and "inf" not in cell.lower():
        what += f" or a load in watts ({_WATT_EXAMPLE})"       # a number with a unit we lack
    value = _number(cell, what, collector, "states", number, label, limit=MAX_CURRENT_A, unit="A")
    return value, None


def _limited(value, collector, number, label):
    if abs(value) > MAX_CURRENT_A:
        collector.add("states", number, label, f"{_sig(value)} A is more than the "
                      f"{MAX_CURRENT_A:,.0f} A any plan has (rule of thumb, no published source); "
                      "check the digits and the unit", Problem.OUT_OF_RANGE)
        return None
    return value


def _voltage(value, collector, number):
    """The voltage cell: (volts or None, whether it says AC); a finding where it is no voltage."""
    if value is None:
        return None, False
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        volts, ac = float(value), False
    else:
        match = _VOLTAGE.match(str(value)) if isinstance(value, str) else None
        if not match:
            _number(value, "a DC voltage (e.g. 12 or 24 V)", collector, "states", number,
                    "voltage")
            return None, False
        volts, ac = float(match.group(1)), (match.group(3) or "").lower() == "ac"
    if ac:
        return volts, True
    if not (math.isfinite(volts) and 0.0 < volts <= MAX_DC_VOLTAGE_V):
        collector.add("states", number, "voltage", f'"{visible(value)}" is not a DC voltage a '
                      f"circuit may have: more than 0 and at most {MAX_DC_VOLTAGE_V:,.0f} V (the "
                      "upper limit of low voltage DC, EU Low Voltage Directive 2014/35/EU)",
                      Problem.OUT_OF_RANGE)
        return None, False
    return volts, False


def _efficiency(value, collector, number):
    if value is None:
        return None
    match = _PERCENT.match(value) if isinstance(value, str) else None
    if match:
        number_value, percent = float(match.group(1)), True
    else:
        number_value = _number(value, "an efficiency (e.g. 0.88 or 88 %)", collector, "states",
                               number, "efficiency")
        percent = False
        if number_value is None:
            return None
    share = number_value / 100.0 if percent else number_value
    if not 0.0 < share <= 1.0:
        hint = (f"; for {number_value:g} % write {number_value:g} % or {number_value / 100:g}"
                if not percent and 1.0 < number_value <= 100.0 else "")
        collector.add("states", number, "efficiency", f'"{visible(value)}" is not an efficiency: '
                      f"more than 0 and at most 1 (100 %){hint}", Problem.OUT_OF_RANGE)
        return None
    return share


def _idle(value, collector, number):
    if value is None:
        return None
    if isinstance(value, str):
        match = _LOAD.match(value)
        if match and match.group(2).lower() in ("w", "kw"):
            value = float(match.group(1)) * (1000.0 if match.group(2).lower() == "kw" else 1.0)
    watts = _number(value, "an idle draw in watts (e.g. 25 or 25 W)", collector, "states", number,
                    "idle_w", limit=MAX_CURRENT_A * MAX_DC_VOLTAGE_V, unit="W")
    if watts is not None and watts < 0:
        collector.add("states", number, "idle_w", f"an idle draw of {_sig(watts)} W is less than "
                      "nothing; give the inverter's own draw when on, from its data sheet",
                      Problem.OUT_OF_RANGE)
        return None
    return watts


def _supply(row, watts, sheet, collector, number):
    """The row's voltage, supply, efficiency and idle draw, each checked against its cells:
    (power_w or None, voltage_v or None, Inverter or None)."""
    via = _choice(row.get("supply"), SUPPLIES, "DC", collector, "states", number, "supply",
                  "a supply") == "via inverter"
    voltage, ac = _voltage(row.get("voltage"), collector, number)
    given = np.isfinite(watts)
    labels = [label for _, label in sheet.state_columns]
    first = labels[int(np.argmax(given))] if given.any() else None
    if ac:
        text = visible(row.get("voltage"))
        what = (f'a load in watts ({_sig(watts[given][0])} W in "{first}") on a circuit that is not '
                "DC has no DC current to count" if given.any() else
                "this tool counts the fields of DC circuits")
        collector.add("states", number, "voltage", f'"{text}" is not DC: {what}; for an AC load '
                      'fed through an inverter give the inverter\'s DC voltage and supply "via '
                      'inverter"', Problem.INCONSISTENT)
        voltage = None
    elif given.any() and voltage is None and row.get("voltage") is None:
        collector.add("states", number, first, f"{_sig(watts[given][0])} W needs the circuit's DC "
                      "voltage to become a current: fill the voltage column (e.g. 12 or 24 V)",
                      Problem.MISSING)
    inverter = None
    if via:
        for (col, label), power in zip(sheet.state_columns, watts):
            cell = row.get(col)
            if cell is not None and not math.isfinite(power):
                collector.add("states", number, label, f'"{visible(cell)}" is in amperes; a load '
                              "via inverter is given in watts of AC output "
                              f"({_WATT_EXAMPLE}), and its DC current is worked out",
                              Problem.INCONSISTENT)
            elif math.isfinite(power) and power < 0:
                collector.add("states", number, label, f"{_sig(power)} W: a load via inverter "
                              "draws power, it does not feed it (for charging give the DC "
                              "current or power with supply DC)", Problem.OUT_OF_RANGE)
        if row.get("voltage") is None and not given.any():
            collector.add("states", number, "voltage", "a load via inverter needs the inverter's "
                          "DC voltage (e.g. 12 or 24 V)", Problem.MISSING)
        inverter = Inverter(_efficiency(row.get("efficiency"), collector, number),
                            _idle(row.get("idle_w"), collector, number))
    else:
        for column in ("efficiency", "idle_w"):
            if row.get(column) is not None:
                collector.add("states", number, column, f"{column} is for a load via inverter; "
                              'set supply to "via inverter" or leave the cell blank',
                              Problem.INCONSISTENT)
    if voltage is None:
        # Reported above; the watts are left out so the plan can still be made and every other
        # finding reported with it.
        return None, voltage, None
    if not given.any() and not via:
        return None, voltage, None
    return watts, voltage, inverter


def _check_load_currents(circuit, sheet, collector):
    """A load in watts whose current is beyond what any plan carries (a slip of kW for W)."""
    if not circuit.in_watts or circuit.voltage_v is None:
        return
    for (_, label), power, current in zip(sheet.state_columns, circuit.power_w,
                                          circuit.currents_a):
        if math.isfinite(power) and abs(current) > MAX_CURRENT_A:
            collector.add("states", circuit.row, label, f"{_sig(power)} W at "
                          f"{circuit.voltage_v:g} V is {_sig(current)} A, more than the "
                          f"{MAX_CURRENT_A:,.0f} A any plan has (rule of thumb, no published "
                          "source); check the digits and the unit", Problem.OUT_OF_RANGE)


def _unique_name(row, column, what, seen, collector, sheet, number):
    """The row's name in ``column``, or None with a finding when it is blank or taken already.

    ``seen`` holds the keys of the names met so far in the sheet; the name is added to it.
    """
    name = _name(row.get(column), what, collector, sheet, number, column)
    if name is None:
        return None
    if key(name) in seen:
        collector.add(sheet, number, column, f'"{visible(name)}" is named twice',
                      Problem.DUPLICATE)
        return None
    seen.add(key(name))
    return name


#: Texts that programs write for a missing value, never a name.
MISSING_WORDS = ("nan", "none", "null", "nat", "<na>")


def _name(value, what, collector, sheet, number, column):
    """A name from a cell: text (or a number, read as written); None with a finding when blank
    or a placeholder for a missing value."""
    if value is None:
        collector.add(sheet, number, column, f"the {what} has no name", Problem.MISSING)
        return None
    if not isinstance(value, (str, int, float)) or isinstance(value, bool):
        collector.add(sheet, number, column, f'"{visible(value)}" is not a name', Problem.NOT_A_VALUE)
        return None
    if str(value).strip().lower() in MISSING_WORDS:
        collector.add(sheet, number, column, f'"{visible(value)}" is what a program writes for a '
                      f"missing value, not a name; give the {what} a name", Problem.NOT_A_VALUE)
        return None
    return str(value)


def _choice(value, choices, default, collector, sheet, row, column, what):
    """One of ``choices`` (case and spaces ignored), the default when blank, else a finding."""
    if value is None:
        return default
    wanted = key(value).replace(" ,", ",")
    for choice in choices:
        if key(choice) == wanted or key(choice).replace(",", "") == wanted.replace(",", ""):
            return choice
    collector.add(sheet, row, column, f'"{visible(value)}" is not {what}; expected one of '
                  f'{", ".join(choices)}{_suggest(str(value), choices)}', Problem.NOT_A_VALUE)
    return default


def _read_runs(sheet, site, points, circuit_currents, n_states, circuit_names, collector):
    runs, currents = [], []
    if sheet is None or not _check_columns(sheet, collector):
        return runs, np.zeros((0, n_states))
    small = "in" if site.units in units.IMPERIAL else "mm"
    if circuit_currents is None and "current_a" not in sheet.columns:
        collector.add("runs", None, "current_a", "the column is needed when the plan has no states "
                      "sheet (or add a states sheet and a circuits column)")
    if circuit_currents is not None and "circuits" not in sheet.columns:
        collector.add("runs", None, "circuits", "the column is needed with a states sheet")
    seen = set()
    total_segments = 0
    for number, row in sheet.rows:
        bad = len(collector.findings)
        name = (_unique_name(row, "run", "run", seen, collector, "runs", number)
                or str(row.get("run") or f"row {number}"))

        route = _route(row.get("route"), points, site.units, collector, number, "route")
        kind = row.get("return")
        kind = key(kind) if kind is not None else None
        if kind not in RETURN_KINDS:
            given = "nothing" if kind is None else f'"{visible(row.get("return"))}"'
            collector.add("runs", number, "return", f"{given} is not a return kind; expected one of "
                          f'{", ".join(RETURN_KINDS)}{_suggest(kind or "", RETURN_KINDS)}',
                          Problem.MISSING if kind is None else Problem.NOT_A_VALUE)
        size_label, radius, default_spacing, bare = None, 0.0, None, None
        if row.get("size") is not None:
            try:
                size_label, bare, outer = units.conductor_size(row["size"])
                radius, default_spacing = outer / 2, outer
            except units.UnitError as error:
                collector.add("runs", number, "size", visible(error), Problem.NOT_A_VALUE)
        spacing = lay = back = None
        if kind in ("paired", "twisted"):
            if row.get("spacing") is not None:
                spacing = _length(row["spacing"], small, collector, "runs", number, "spacing")
            elif default_spacing is not None:
                spacing = default_spacing
            elif row.get("size") is None:
                collector.add("runs", number, "spacing", f"a {kind} run needs a spacing or a size "
                              "(e.g. 10 AWG) to place its return")
            if spacing is not None and spacing <= 0:
                collector.add("runs", number, "spacing", "the spacing must be more than zero")
            elif spacing is not None and row.get("spacing") is not None:
                _check_spacing(row["spacing"], spacing, small, site.units, size_label,
                               default_spacing, collector, number)
        if kind == "twisted":
            if row.get("lay") is None:
                collector.add("runs", number, "lay", "a twisted run needs its lay length "
                              "(the length of one full twist)")
            else:
                lay = _length(row["lay"], small, collector, "runs", number, "lay")
                if lay is not None and lay <= 0:
                    collector.add("runs", number, "lay", "the lay length must be more than zero")
        if kind == "separate":
            if row.get("return_route") is None:
                collector.add("runs", number, "return_route", "a separate return needs its route "
                              "from the load back to the source")
            else:
                back = _route(row["return_route"], points, site.units, collector, number,
                              "return_route")
        elif row.get("return_route") is not None and kind in RETURN_KINDS:
            collector.add("runs", number, "return_route", f"a return route is only used with "
                          f'return "separate", not "{kind}"')

        run_current = np.zeros(n_states)
        circuits = ()
        if circuit_currents is None:
            if row.get("current_a") is None:
                collector.add("runs", number, "current_a", "the run's current in amperes is needed")
            else:
                value = _number(row["current_a"], "a number of amperes", collector, "runs", number,
                                "current_a", limit=MAX_CURRENT_A, unit="A")
                run_current = np.array([value if value is not None else 0.0])
        elif row.get("circuits") is None:
            collector.add("runs", number, "circuits", "name the circuit(s) this run carries, "
                          "separated by ;")
        else:
            circuits = tuple(c.strip() for c in str(row["circuits"]).split(";") if c.strip())
            for circuit in circuits:
                if key(circuit) not in circuit_currents:
                    collector.add("runs", number, "circuits", _listed_with_commas(
                        circuit, circuit_names.values(), "circuit") or f'circuit '
                        f'"{visible(circuit)}" is not in the states sheet'
                        f"{_suggest(circuit, list(circuit_names.values()))}", Problem.UNKNOWN_NAME)
                else:
                    run_current = run_current + circuit_currents[key(circuit)]
        if bare is not None and len(run_current):
            _check_current(np.abs(run_current).max(), size_label, bare, circuits, collector, number,
                           "current_a" if circuit_currents is None else "circuits")
        lie = "not known"
        if row.get("lie") is not None:
            lie = _choice(row["lie"], PAIR_LIES, "not known", collector, "runs", number, "lie",
                          "a way a pair lies")
            if kind != "paired":
                collector.add("runs", number, "lie", f'lie is only used with return "paired", '
                              f'not "{kind}"')
        ends = None
        if row.get("untwisted_ends") is not None:
            ends = _length(row["untwisted_ends"], site.units, collector, "runs", number,
                           "untwisted_ends")
            if kind != "twisted":
                collector.add("runs", number, "untwisted_ends", "untwisted ends are only used "
                              f'with return "twisted", not "{kind}"')
            elif ends is not None and ends < 0:
                collector.add("runs", number, "untwisted_ends", "the length must be zero or more")
        if len(collector.findings) > bad:
            continue
        route = frozen_array(route)
        back = None if back is None else frozen_array(back)
        geometry = RunGeometry(name, route, kind, back, spacing, lay, radius, ends)
        length = np.linalg.norm(np.diff(route, axis=0), axis=1).sum()
        if length == 0:
            collector.add("runs", number, "route", "the route has no length (all waypoints coincide)",
                          Problem.NOT_A_VALUE)
            continue
        if not _fits_the_run(geometry, length, site.units, collector, number):
            continue
        segments = _segment_estimate(geometry, length)
        if segments > MAX_SEGMENTS_PER_RUN:
            lay_mm = f"{lay * 1000:.1f}" if lay >= 1e-4 else _sig(lay * 1000)
            count = f"{segments:,.0f}" if segments < 1e12 else f"{segments:.3g}"
            collector.add("runs", number, "lay", f"a twisted run of {length:.1f} m with a "
                          f"{lay_mm} mm lay needs {count} segments, more than the "
                          f"{MAX_SEGMENTS_PER_RUN:,} a run may have; check the lay and the route",
                          Problem.TOO_LARGE)
            continue
        runs.append(Run(name, circuits, geometry, size_label, str(row.get("note") or ""), number,
                        lie))
        currents.append(run_current)
        total_segments += segments
    if total_segments > MAX_SEGMENTS:
        collector.add("runs", None, None, f"the runs need {total_segments:,.0f} straight segments, "
                      f"more than the {MAX_SEGMENTS:,} a plan may have (twisted runs take "
                      f"{CHORDS_PER_LAY * 2} per lay length); check the lay lengths")
    return runs, np.array(currents).reshape(len(runs), n_states)


def _fits_the_run(geometry, length_m, plan_unit, collector, row):
    """A pair spacing no longer than its run, and untwisted ends that leave some of it twisted."""
    shown = units.format_length
    if geometry.spacing_m is not None and geometry.spacing_m > length_m:
        collector.add("runs", row, "spacing", f"a spacing of {shown(geometry.spacing_m, plan_unit)} "
                      f"is more than the run's whole length ({shown(length_m, plan_unit)}); give "
                      "the centre-to-centre distance of its two conductors", Problem.OUT_OF_RANGE)
        return False
    ends = geometry.untwisted_end_m
    if geometry.return_kind == "twisted" and ends is not None and 2 * ends >= length_m > 0:
        collector.add("runs", row, "untwisted_ends", f"untwisted ends of "
                      f"{shown(ends, plan_unit)} at each end take the whole run "
                      f"({shown(length_m, plan_unit)} long), so none of it is twisted; give the "
                      "length left untwisted at each end, or make the run paired",
                      Problem.OUT_OF_RANGE)
        return False
    return True


def _listed_with_commas(text, names, what):
    """For a cell naming several items separated by "," where ";" belongs: the message to give
    (None when the commas are not that)."""
    pieces = [p.strip() for p in str(text).split(",") if p.strip()]
    known = {key(n) for n in names}
    if len(pieces) < 2 or not any(key(p) in known for p in pieces):
        return None
    return (f'"{visible(text)}" names {what}s separated by ","; use ; between {what}s '
            f'({"; ".join(visible(p) for p in pieces)})')


def _check_spacing(text, spacing_m, small, plan_unit, size_label, outer_m, collector, row):
    """A pair spacing closer than the conductors' own diameter, or a bare one under 1 mm."""
    bare_number = units.is_bare_number(text)
    limit = None
    if outer_m is not None and spacing_m < (1 - units.OUTER_DIAMETER_TOLERANCE) * outer_m:
        shown_outer = (f"{outer_m / units.LENGTH_UNITS['in']:.2f} in" if small == "in" else
                       f"{outer_m * 1000:.1f} mm")
        limit = outer_m
        why = ("two conductors cannot be closer than their own diameter "
               f"({shown_outer} for {size_label})")
    elif outer_m is None and bare_number and spacing_m < MIN_BARE_SPACING_M:
        limit = MIN_BARE_SPACING_M
        why = "a spacing under 1 mm is less than the diameter of any insulated power conductor"
    if limit is None:
        return
    read = f"{spacing_m / units.LENGTH_UNITS[small]:g} {small}"
    if not bare_number:
        collector.add("runs", row, "spacing", f'"{str(text).strip()}" was read as {read}; {why}; '
                      "give the centre-to-centre spacing")
        return
    system = "an imperial" if small == "in" else "a metric"
    unit_word = "inches" if small == "in" else "mm"
    # The bare number in the plan's own length unit, if that reading is a sensible spacing.
    other = float(text) * units.LENGTH_UNITS[plan_unit]
    if limit <= other <= MAX_SUGGESTED_SPACING_M and plan_unit != small:
        example = units.format_length(other, plan_unit)
    elif small == "in":
        example = f"{max(0.5, math.ceil(limit / units.LENGTH_UNITS['in'] * 10) / 10):g} in"
    else:
        example = f"{max(12, math.ceil(limit * 1000)):g} mm"
    collector.add("runs", row, "spacing", f'"{str(text).strip()}" was read as {read} (bare numbers '
                  f"in spacing are {unit_word} in {system} plan); {why}; write it with a unit, "
                  f"e.g. {example}")


#: A bare spacing under this is taken as a unit mistake even without a size [m]: the thinnest
#: insulated power conductors are over 1 mm across (common practice, no source).
MIN_BARE_SPACING_M = 0.001
#: A bare spacing read in the plan's unit is offered as the meant one only up to this [m]: the two
#: conductors of a pair lie within a few centimetres (common practice, no source).
MAX_SUGGESTED_SPACING_M = 0.1


def _check_current(peak_a, size_label, bare_m, circuits, collector, row, column):
    """A run current far beyond what its conductor size carries continuously."""
    rating_a = units.allowable_current_a(bare_m)
    if peak_a <= units.OVERCURRENT_FACTOR * rating_a:
        return
    where = (f"the run carries up to {peak_a:g} A (circuits {', '.join(circuits)}, from the "
             "states sheet)" if circuits else f"the run carries {peak_a:g} A")
    collector.add("runs", row, column, f"{where}, more than {units.OVERCURRENT_FACTOR:g} times "
                  f"the {rating_a:.0f} A that {size_label} carries continuously (105 °C insulation, "
                  "33 CFR 183.425 Table 5); check the current in amperes and the size")


def _segment_estimate(geometry, length):
    """Straight segments the router will make of a run (twisted: chords per lay, both helices)."""
    route = len(geometry.route_m) + (len(geometry.return_route_m)
                                     if geometry.return_route_m is not None else 0)
    if geometry.return_kind == "twisted":
        return 2 * (length / geometry.lay_m * CHORDS_PER_LAY + len(geometry.route_m)) + 2
    return 2 * route + 2


def _route(text, points, unit, collector, row, column):
    """Waypoints from the source to the load: text separated by >, or (from the library) a list
    or array of waypoints, each a point name, ``x, y, z`` text or three coordinates."""
    if text is None:
        collector.add("runs", row, column, "the route is empty; give waypoints separated by >",
                      Problem.MISSING)
        return None
    if isinstance(text, (list, tuple, np.ndarray)):
        parts = list(text)
        if parts and all(isinstance(p, (int, float)) and not isinstance(p, bool) for p in parts):
            parts = [parts]                 # one point given as its coordinates
    else:
        parts = str(text).split(">")
    waypoints = []
    for part in parts:
        if isinstance(part, str) and not part.strip():
            collector.add("runs", row, column, "an empty waypoint (two > in a row, or one at an "
                          "end)", Problem.NOT_A_VALUE)
            return None
        position = _position(part, points, unit, collector, "runs", row, column)
        if position is None:
            return None
        waypoints.append(position)
    if len(waypoints) < 2:
        collector.add("runs", row, column, "a route needs at least two waypoints, separated by >",
                      Problem.NOT_A_VALUE)
        return None
    return np.array(waypoints)


def _read_sensors(sheet, site, points, states, collector):
    sensors = []
    if sheet is None or not _check_columns(sheet, collector):
        return sensors
    seen = set()
    for number, row in sheet.rows:
        bad = len(collector.findings)
        name = _unique_name(row, "sensor", "sensor", seen, collector, "sensors", number)
        position = None
        if row.get("at") is None:
            collector.add("sensors", number, "at", "where is it? give a point name or x, y, z")
        else:
            position = _position(row["at"], points, site.units, collector, "sensors", number, "at")
        kind = key(row.get("kind") or "")
        if kind not in SENSOR_KINDS:
            collector.add("sensors", number, "kind", f'"{row.get("kind") or ""}" is not a sensor '
                          f'kind; expected one of {", ".join(SENSOR_KINDS)}'
                          f"{_suggest(kind, SENSOR_KINDS)}")
        budget = _budget(row, kind, collector, number)
        reference = row.get("reference_state")
        if reference is not None:
            matches = [s for s in states if key(s) == key(reference)]
            if not matches:
                collector.add("sensors", number, "reference_state", f'"{reference}" is not a state'
                              f"{_suggest(str(reference), states)}")
            else:
                reference = matches[0]
        heel, pitch = (_angle(row.get(column), what, collector, number, column)
                       for column, what in (("max_heel_deg", "heel"), ("max_pitch_deg", "pitch")))
        used_in = _state_list(row.get("used_in"), states, collector, "sensors", number, "used_in")
        used_in = used_in or None                   # a cell of only separators: every state
        axes, axes_text = _sensor_axes(row.get("axes"), kind, collector, number)
        measured = _measured_currents(row.get("measured_currents"), kind, collector, number)
        if len(collector.findings) == bad:
            sensors.append(Sensor(str(name), position, kind, budget, reference, heel,
                                  str(row.get("note") or ""), number, pitch, used_in,
                                  axes=axes, axes_text=axes_text, measured_currents=measured))
    return sensors


def _budget(row, kind, collector, number):
    """A sensor's budget with its unit: degrees of deviation for a heading sensor (budget_deg),
    nT of total-field error for a total-field magnetometer (budget_nt); None after a finding."""
    scalar = kind == TOTAL_FIELD_KIND
    column, other = ("budget_nt", "budget_deg") if scalar else ("budget_deg", "budget_nt")
    if row.get(other) is not None and kind in SENSOR_KINDS:
        collector.add("sensors", number, other,
                      "a total-field magnetometer is judged in nT, not degrees: give its budget "
                      "in budget_nt and leave budget_deg blank" if scalar else
                      "budget_nt is for a total-field magnetometer; this sensor's budget is a "
                      "heading deviation in budget_deg")
    value = row.get(column)
    if value is None:
        if kind in SENSOR_KINDS:
            collector.add("sensors", number, column,
                          "a total-field magnetometer needs its budget in nT (e.g. 2 for a "
                          "survey installation)" if scalar else
                          "the deviation budget in degrees is needed (e.g. 1 for a steering "
                          "compass)")
        return None
    what, unit, high = (("a number of nanotesla", Unit.NANOTESLA, 1e5) if scalar else
                        ("a number of degrees", Unit.DEGREES, 180.0))
    got = _number(value, what, collector, "sensors", number, column)
    if got is None:
        return None
    if not 0 < got <= high:
        collector.add("sensors", number, column, f"the budget must be more than 0 and at most "
                      f"{high:g} {'nT' if scalar else 'degrees'}")
        return None
    return Budget(got, unit)


def _sensor_axes(value, kind, collector, number):
    """The sensor's axes in the vessel frame from its axes cell: (matrix, text) or (None, None)."""
    from .axes import AxesError, parse_axes

    if value is None:
        return None, None
    if kind not in VECTOR_ELECTRONIC_KINDS:
        if kind in SENSOR_KINDS:
            collector.add("sensors", number, "axes", f"axes are for an electronic compass or a "
                          f"magnetometer, not a {kind}")
        return None, None
    try:
        return parse_axes(str(value)), " ".join(str(value).split())
    except AxesError as error:
        collector.add("sensors", number, "axes", str(error))
        return None, None


def _measured_currents(value, kind, collector, number):
    """The currents a sensor's host measures: ("total",), circuit names, or None."""
    if value is None:
        return None
    if kind not in VECTOR_ELECTRONIC_KINDS:
        if kind in SENSOR_KINDS:
            collector.add("sensors", number, "measured_currents", "measured currents are for an "
                          f"electronic compass or a magnetometer, not a {kind}")
        return None
    names = tuple(dict.fromkeys(p.strip() for p in str(value).split(";") if p.strip()))
    if any(key(n) == "total" for n in names):
        if len(names) > 1:
            collector.add("sensors", number, "measured_currents", '"total" is every circuit '
                          "summed; give it alone, or circuit names separated by ;")
            return None
        return ("total",)
    return names or None


def _check_measured_currents(plan, collector):
    """Circuit names in the sensors' measured_currents must be circuits of the plan."""
    names = [c.name for c in plan.circuits]
    for sensor in plan.sensors:
        for name in sensor.measured_currents or ():
            if name != "total" and key(name) not in {key(n) for n in names}:
                collector.add("sensors", sensor.row, "measured_currents", f'"{name}" is not a '
                              f'circuit of the plan (nor total){_suggest(name, names)}')


def _angle(value, what, collector, row, column):
    """A largest heel or pitch in degrees, 0 to 90; blank is 0."""
    if value is None:
        return 0.0
    angle = _number(value, "a number of degrees", collector, "sensors", row, column)
    if angle is not None and not 0 <= angle <= 90:
        collector.add("sensors", row, column, f"the {what} must be 0 to 90 degrees")
    return angle


def _state_list(value, states, collector, sheet, row, column):
    """States named in a cell, separated by ; (None when blank: every state)."""
    if value is None:
        return None
    found = []
    for part in str(value).split(";"):
        if not part.strip():
            continue
        matches = [s for s in states if key(s) == key(part)]
        if not matches:
            collector.add(sheet, row, column, _listed_with_commas(part.strip(), states, "state")
                          or f'"{visible(part.strip())}" is not a state{_suggest(part, states)}',
                          Problem.UNKNOWN_NAME)
        elif matches[0] not in found:
            found.append(matches[0])
    return tuple(found)


def _read_equipment(sheet, site, points, states, collector):
    items = []
    if sheet is None or not _check_columns(sheet, collector):
        return items
    seen = set()
    for number, row in sheet.rows:
        bad = len(collector.findings)
        name = (f"row {number}" if row.get("item") is None else
                _unique_name(row, "item", "item", seen, collector, "equipment", number))
        position = None
        if row.get("at") is None:
            collector.add("equipment", number, "at", "where is it? give a point name or x, y, z")
        else:
            position = _position(row["at"], points, site.units, collector, "equipment", number, "at")
        safe = safe_for = moment = axis = None
        if row.get("safe_distance") is not None:
            safe = _length(row["safe_distance"], site.units, collector, "equipment", number,
                           "safe_distance", limit=MAX_SAFE_DISTANCE_M,
                           what="a compass safe distance label gives")
            safe_for = key(row.get("safe_distance_for") or "")
            if safe_for not in SAFE_DISTANCE_FOR:
                collector.add("equipment", number, "safe_distance_for", "say which compass the "
                              "label is for: standard or steering (IEC 60945)")
            if safe is not None and safe <= 0:
                collector.add("equipment", number, "safe_distance", "must be more than zero")
        elif row.get("moment_am2") is not None:
            moment = _number(row["moment_am2"], "a magnetic moment in A·m²", collector, "equipment",
                             number, "moment_am2", limit=MAX_MOMENT_AM2, unit="A·m²")
            if row.get("axis") is not None:
                axis = _direction(row["axis"], collector, "equipment", number, "axis")
        else:
            collector.add("equipment", number, "safe_distance", "give safe_distance (from the "
                          "label) or moment_am2")
        present = _state_list(row.get("states"), states, collector, "equipment", number,
                              "states")
        if len(collector.findings) == bad:
            items.append(Equipment(str(name), position, safe, safe_for, moment, axis, present,
                                   str(row.get("note") or ""), number))
    return items


def _direction(value, collector, sheet, row, column):
    """A unit vector from ``x, y, z`` text, or a tuple, list or array of three numbers."""
    parts = (list(np.asarray(value, dtype=object).ravel())
             if isinstance(value, (tuple, list, np.ndarray)) else str(value).split(","))
    try:
        if any(isinstance(p, bool) for p in parts):
            raise ValueError
        axis = np.array([float(p) for p in parts])
        if axis.shape != (3,) or not np.all(np.isfinite(axis)) or not np.linalg.norm(axis) > 0:
            raise ValueError
        return axis / np.linalg.norm(axis)
    except (TypeError, ValueError, OverflowError):
        collector.add(sheet, row, column, dash_hint(value) or f'"{visible(value)}" is not a '
                      "direction x, y, z (blank: the worst orientation)", Problem.NOT_A_VALUE)
        return None


def _for_sensor(value, sensors, collector, sheet, row):
    """The sensor a for_sensor cell names (None: blank or all, every sensor); a finding if unknown.

    Returns (name or None, ok).
    """
    if value is None or key(value) == "all":
        return None, True
    names = [s.name for s in sensors]
    match = next((n for n in names if key(n) == key(value)), None)
    if match is None:
        collector.add(sheet, row, "for_sensor", f'"{visible(value)}" is not a sensor in the sensors '
                      f"sheet (blank or all: every sensor){_suggest(str(value), names)}",
                      Problem.UNKNOWN_NAME)
        return None, False
    return match, True


def _read_spots(sheet, site, points, sensors, collector):
    spots = []
    if sheet is None or not _check_columns(sheet, collector):
        return spots
    seen = set()
    for number, row in sheet.rows:
        name = (f"row {number}" if row.get("spot") is None else
                _unique_name(row, "spot", "spot", seen, collector, "spots", number))
        if row.get("at") is None:
            collector.add("spots", number, "at", "where is it? give a point name or x, y, z",
                          Problem.MISSING)
            continue
        position = _position(row["at"], points, site.units, collector, "spots", number, "at")
        owner, ok = _for_sensor(row.get("for_sensor"), sensors, collector, "spots", number)
        if position is not None and ok and name is not None:
            spots.append(CandidateSpot(name, position, owner))
    return spots


def _read_conditions(sheet, states, collector):
    """What each named state stands for on a placard: engines, generator, radio receivers."""
    out = []
    if sheet is None or not _check_columns(sheet, collector):
        return out
    seen = set()
    for number, row in sheet.rows:
        name = _unique_name(row, "state", "state", seen, collector, "conditions", number)
        if name is None:
            continue
        matches = [s for s in states if key(s) == key(name)]
        if not matches:
            collector.add("conditions", number, "state", f'"{visible(name)}" is not a state of '
                          f"the states sheet{_suggest(str(name), states)}", Problem.UNKNOWN_NAME)
            continue
        words = [_choice(row.get(column), choices, None, collector, "conditions", number, column,
                         what) for column, choices, what in (
                             ("engines", ENGINES, "a condition of the engines"),
                             ("generator", GENERATOR, "a condition of the generator"),
                             ("radios", RADIOS, "a condition of the radio receivers"))]
        out.append(StateCondition(matches[0], *words, str(row.get("note") or ""), number))
    return out


def _read_volumes(sheet, site, points, sensors, collector):
    """Boxes to mount a sensor in or keep it out of, each with its corners ordered."""
    from .plan import Volume  # imported here to keep this sheet's change in one place
    from .schema import VOLUME_KINDS

    volumes = []
    if sheet is None or not _check_columns(sheet, collector):
        return volumes
    seen = set()
    for number, row in sheet.rows:
        bad = len(collector.findings)
        name = _unique_name(row, "volume", "volume", seen, collector, "volumes", number)
        kind = None
        if row.get("kind") is None:
            collector.add("volumes", number, "kind", "say mount in (spots only inside it) or keep "
                          "out (never a spot inside)")
        else:
            # "keep-out" and "mount_in" are the same words.
            wanted = key(re.sub(r"[-_]", " ", str(row["kind"])))
            kind = next((k for k in VOLUME_KINDS if key(k) == wanted), None)
            if kind is None:
                collector.add("volumes", number, "kind", f'"{row["kind"]}" is not a kind of '
                              f'volume; expected one of {", ".join(VOLUME_KINDS)}'
                              f"{_suggest(wanted, VOLUME_KINDS)}")
        corners = []
        for column in ("from", "to"):
            if row.get(column) is None:
                collector.add("volumes", number, column, "a corner of the box is needed: a point "
                              "name or x, y, z")
                continue
            corner = _position(row[column], points, site.units, collector, "volumes", number,
                               column)
            if corner is not None:
                corners.append(corner)
        owner, _ = _for_sensor(row.get("for_sensor"), sensors, collector, "volumes", number)
        if len(collector.findings) > bad:
            continue
        low, high = np.minimum(*corners), np.maximum(*corners)
        if kind == "keep out" and np.any(high <= low):
            flat = ", ".join(a for a, lo, hi in zip("xyz", low, high) if hi <= lo)
            collector.add("volumes", number, "to", f"a keep-out box with no thickness in {flat} "
                          "keeps nothing out; give corners that differ in x, y and z")
            continue
        volumes.append(Volume(str(name), kind, low, high, owner, str(row.get("note") or ""),
                              number))
    return volumes


#: Columns of free text: a date or a spreadsheet error value there is text, not a mistake.
NOTE_COLUMNS = ("note", "notes", "comment", "comments")


def _sheets_of(found, collector):
    """The plan's sheets, each header read and every cell looked at (deviation.sheets.table)."""
    sheets = {}
    for name, raw in found.sheets.items():
        dates = ("value",) if name == "site" else ()
        known = KNOWN_COLUMNS.get(name, ())

        def free_text(column, name=name, known=known):
            # Notes, and columns the plan does not know (kept as notes); in the states sheet
            # every column but switching and the circuit's own (voltage, supply, ...) is a
            # state's currents.
            if column in NOTE_COLUMNS:
                return True
            return column not in known if name != "states" else column == "switching"

        sheet = table(name, raw.label, raw.grid, collector, canonical, date_columns=dates,
                      free_text=free_text)
        if sheet is not None:
            sheets[name] = sheet
    return sheets


def read_plan(path) -> Plan:
    """Read and validate a plan (.xlsx workbook or folder of .csv sheets).

    Only regular files are read, each with its size capped (docs/robustness.md): a sheet that is
    a FIFO, a device, a folder or a link leading out of the plan's folder is a finding.

    Raises
    ------
    PlanError
        With every finding, each naming the file, sheet, row and column.
    OSError
        When the file system refuses to read a file (permission denied, an I/O error).
    """
    path = Path(path)
    collector = Collector(str(path))
    if not path.exists() and not path.is_symlink():
        raise PlanError([Finding(str(path), None, None, None, "no such file or folder",
                                 Problem.FILE)])
    if path.suffix.lower() in (".xls", ".ods", ".numbers"):     # .numbers may be a folder
        raise PlanError([Finding(str(path), None, None, None, "a plan is an .xlsx workbook or a "
                                 f"folder of .csv sheets, not an {path.suffix} file; save it as "
                                 ".xlsx (Excel workbook) or as CSV sheets", Problem.FILE)])
    if path.is_dir():
        found = read_folder(path, SHEETS, collector, canonical, KNOWN_COLUMNS)
    elif path.suffix.lower() in (".xlsx", ".xlsm"):
        found = read_workbook(path, SHEETS, collector, canonical)
    else:
        raise PlanError([Finding(str(path), None, None, None, "a plan is an .xlsx workbook or a "
                                 "folder of .csv sheets (site.csv, runs.csv, ...)", Problem.FILE)])
    return _plan_from_sheets(_sheets_of(found, collector), str(path), collector, found.others)


def plan_from_tables(tables, source="<tables>") -> Plan:
    """Make and validate a plan from tables given in Python.

    Parameters
    ----------
    tables : mapping of sheet name to table
        Each table is a pandas DataFrame, a list of dicts (one per row), or a list of rows whose
        first row is the header, in the layout of the workbook (docs/plan-format.md). A missing
        value (None, NaN, pandas' NA or NaT) is a blank cell in every kind of table: a blank
        current is 0 A, a blank name is a finding. Where a position is expected (``at``,
        ``from``, ``to``, a route's waypoints, ``axis``) a tuple, list or array of three
        numbers in the plan's unit may stand for ``x, y, z``; a route may be a list of
        waypoints.
    source : str
        What findings name as the file.

    Raises
    ------
    PlanError
        With every finding, located by sheet, row and column (rows counted as in a workbook:
        the header is row 1); also for tables of the wrong type (a number, a list where a
        mapping belongs).
    """
    collector = Collector(source)
    if not isinstance(tables, Mapping):
        kind = type(tables).__name__
        raise PlanError([Finding(source, None, None, None, "the tables are a mapping of sheet name "
                                 f"to table (a dict), not {'an' if kind[:1] in 'aeiou' else 'a'} "
                                 f"{kind}", Problem.NOT_A_VALUE)])
    found = Found()
    labels = {}
    for label, given in tables.items():
        name = canonical(label)
        if name not in SHEETS:
            found.others.append(str(label))
            continue
        if name in labels:
            collector.add(name, None, None, f'two tables are the {name} sheet: "{labels[name]}" '
                          f'and "{visible(label)}"; keep one', Problem.DUPLICATE)
            continue
        labels[name] = visible(label)
        grid = grid_from_table(given, name, collector)
        if grid is not None:
            found.sheets[name] = Raw(name, str(label), grid)
    return _plan_from_sheets(_sheets_of(found, collector), source, collector, found.others)


def _plan_from_sheets(sheets, source, collector, others=()) -> Plan:
    if collector.findings and not sheets:
        raise PlanError(collector.shown())
    reported = {f.sheet for f in collector.findings}
    for name in REQUIRED_SHEETS:
        if name not in sheets and name not in reported:
            collector.add(name, None, None, missing_sheet_message(name, others), Problem.MISSING)
    before = len(collector.findings)
    site = _read_site(sheets.get("site"), collector)
    if "site" not in sheets and "site" in reported:     # the site table itself was refused
        collector.keep_back_since(before)
    points = _read_points(sheets.get("points"), site.units, collector)
    circuit_currents, states, circuit_names, details = _read_states(sheets.get("states"),
                                                                    collector)
    runs, run_currents = _read_runs(sheets.get("runs"), site, points, circuit_currents, len(states),
                                    circuit_names, collector)
    _check_unused_circuits(sheets.get("runs"), circuit_names, details, collector)
    sensors = _read_sensors(sheets.get("sensors"), site, points, states, collector)
    equipment = _read_equipment(sheets.get("equipment"), site, points, states, collector)
    only_examples = "sensors" in sheets and sheets["sensors"].examples and not sheets["sensors"].rows
    if "sensors" in sheets and not sensors and (not collector.findings or only_examples):
        examples = ("; its rows beginning with \"e.g.\" are the template's examples, which are "
                    "not read" if sheets["sensors"].examples else "")
        collector.add("sensors", None, None, f"the plan has no sensors to check{examples}")
    spots = _read_spots(sheets.get("spots"), site, points, sensors, collector)
    volumes = _read_volumes(sheets.get("volumes"), site, points, sensors, collector)
    conditions = _read_conditions(sheets.get("conditions"), states, collector)
    if circuit_currents is None:        # no states sheet: each run is its own circuit
        circuits = [Circuit(run.name, run_currents[r], row=run.row) for r, run in enumerate(runs)]
        runs = [replace(run, circuits=(run.name,)) for run in runs]
    else:
        circuits = [Circuit(circuit_names[k], circuit_currents[k], *details[k])
                    for k in circuit_currents]
    plan = Plan(source, site, tuple((name, points[key(name)]) for name in points.names), runs,
                states, circuits, sensors, equipment, spots,
                circuits_from_runs=circuit_currents is None, volumes=tuple(volumes),
                skipped_examples=tuple((name, row) for name in SHEETS if name in sheets
                                       for row in sheets[name].examples),
                item_notes=_item_notes(sheets), conditions=tuple(conditions))
    if not collector.findings:
        _check_measured_currents(plan, collector)
    if collector.findings:
        raise PlanError(collector.shown())
    return plan


def _check_unused_circuits(sheet, circuit_names, details, collector):
    """A circuit renamed on one side only: the states row it left behind is reported too.

    Only when some run names a circuit the states sheet lacks (that run is reported at its own
    row); each circuit of the states sheet that no run names is then reported at its row, with
    the closest unknown name from the runs sheet.
    """
    if sheet is None or not circuit_names or "circuits" not in sheet.columns:
        return
    named, unknown = set(), []
    for _, row in sheet.rows:
        for circuit in str(row.get("circuits") or "").split(";"):
            if not circuit.strip():
                continue
            named.add(key(circuit))
            if key(circuit) not in circuit_names and circuit.strip() not in unknown:
                unknown.append(circuit.strip())
    if not unknown:
        return
    for circuit_key, name in circuit_names.items():
        if circuit_key not in named:
            collector.add("states", details[circuit_key][2], "circuit", f'circuit "{name}" is used '
                          f"by no run{_suggest(name, unknown)}")


def _item_notes(sheets):
    """Notes of the points and spots sheets, whose items carry no note of their own:
    {sheet: {name key: note}}, for writing the plan back (template.plan_rows)."""
    notes = {}
    for name, column in (("points", "point"), ("spots", "spot")):
        sheet = sheets.get(name)
        if sheet is None:
            continue
        found = {key(row.get(column) or f"row {number}"): str(row["note"])
                 for number, row in sheet.rows if row.get("note") is not None}
        if found:
            notes[name] = found
    return notes
