"""The switch-on test at the berth: predicted changes, and the filled-in sheet read back."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..constants import MAX_CURRENT_A
from ..errors import DeviationError, InputError, Problem
from ..physics import heading, swing
from ..plan import Finding, Plan, Sensor, frozen_array, name_key
from ..sitefield import SiteField
from .common import (
    ALL_OFF,
    CHANGE_FRACTION,
    MAX_READ_DEVIATION_DEG,
    NO_VISIBLE_CHANGE_DEG,
    READING_RESOLUTION_DEG,
    SETTINGS_SHEET,
    TEST_SHEET,
    ReadingsError,
    _checked,
    _items_field,
    circuit_fields_t,
)
from .readings import _heading, _number, _state_named, _suggest, canonical, read_table


@dataclass(frozen=True)
class SwitchOnRow:
    """One step of the switch-on test: a circuit alone, or a whole operating state.

    ``predicted_change_deg`` is the change of the reading, positive when it rises.
    """

    step: int
    kind: str                          # "circuit" or "state"
    name: str
    action: str                        # "switch on", "switch off", "set as in the state"
    current_before_a: float | None
    current_on_test_a: float | None
    current_from: str | None           # the state whose current the test uses
    field_change_t: np.ndarray         # (3,) change of the field at the sensor
    predicted_change_deg: float
    runs: tuple[str, ...]              # runs that carry the circuit
    note: str = ""


@dataclass(frozen=True)
class SwitchOnTest:
    """A switch-on test of one sensor on one heading, from a starting state."""

    plan: Plan
    sensor: Sensor
    heading_deg: float                 # magnetic heading the vessel lies on
    start_state: str                   # ALL_OFF or a state of the plan
    adjusted: bool                     # correctors cancel the reference state's field
    site: SiteField
    base_field_t: np.ndarray           # (3,) what the sensor sees before each step
    circuit_fields_t: np.ndarray       # (C, 3) per ampere
    start_currents_a: np.ndarray       # (C,) circuits' currents in the starting state
    rows: tuple[SwitchOnRow, ...]
    unknown_items: tuple[str, ...]     # present items of unknown direction (not predicted)

    @property
    def overwhelmed(self) -> bool:
        return bool(heading.horizontal_disturbance(self.base_field_t) >= self.site.horizontal_t)

    def predicted_change_deg(self, circuit: int, before_a: float, on_test_a: float) -> float:
        """Change of the reading when circuit ``circuit`` goes from ``before_a`` to ``on_test_a``
        amperes, the others as in the starting state [deg], positive when the reading rises."""
        u = self.circuit_fields_t[circuit]
        start = self.start_currents_a[circuit]
        before = self.base_field_t + (before_a - start) * u
        after = self.base_field_t + (on_test_a - start) * u
        return float(swing.reading_change_deg(before, after, self.site.horizontal_t,
                                              self.heading_deg))


def _state_field(plan, sensor_result, state):
    return np.asarray(sensor_result.state(state).field_t)


def switch_on_test(plan: Plan, sensor, heading_deg: float, start_state: str | None = None,
                   adjusted: bool = False, analysis=None) -> SwitchOnTest:
    """Predict the change of a compass reading when each circuit alone, and each operating
    state, is switched on with the vessel lying still on a heading.

    Parameters
    ----------
    plan : Plan
    sensor : str or Sensor
    heading_deg : float [deg]
        Magnetic heading the vessel lies on at the berth.
    start_state : str or None
        The state the test starts from and returns to between steps; None or "all off": every
        circuit off (items present in every state stay).
    adjusted : bool
        The compass already has correctors set in its reference state (or an electronic
        compass is calibrated there): they cancel that state's field.
    analysis : CheckResult, optional
        A check of this plan, to save computing it again.

    Returns
    -------
    SwitchOnTest

    Notes
    -----
    Each circuit that is off in the starting state is switched on at the current of largest
    size the plan gives it in any state (an independent circuit: its current in the starting
    state, if it has one); each circuit that is on is switched off. The field at the sensor is
    the starting state's plus the circuit's field per ampere times the change of current; the
    reading changes by :math:`-(\\delta_{after} - \\delta_{before})` exactly at that heading
    (Compass = Magnetic - Deviation, the magnetic heading fixed). Items of unknown direction
    (labelled safe distances) cannot be predicted and are named apart.
    """
    chosen = plan.sensor(sensor) if isinstance(sensor, str) else sensor
    checked = _checked(plan, analysis)
    result = checked.sensor(chosen.name)
    site = checked.site
    h = site.horizontal_t
    start = None if start_state is None or name_key(start_state) == name_key(ALL_OFF) else (
        _state_named(plan, start_state))
    if start_state is not None and start is None and name_key(start_state) != name_key(ALL_OFF):
        raise InputError(f'"{start_state}" is not a state of the plan; it has: '
                         + ", ".join(plan.state_names) + f' (or "{ALL_OFF}")',
                         column="start_state", kind=Problem.UNKNOWN_NAME)
    if adjusted and not chosen.reference_state:
        raise InputError(f'sensor "{chosen.name}" has no reference state in the plan, so '
                         "there is no adjustment to allow for; give it a reference_state or "
                         "leave adjusted off", column="adjusted", kind=Problem.INCONSISTENT)
    units = circuit_fields_t(plan, result)
    currents = plan.circuit_currents_a
    independent = plan.independent
    if start is None:
        base, unknown = _items_field(plan, chosen, h, lambda item: item.states is None)
        start_currents = np.zeros(len(plan.circuits))
        k = None
    else:
        k = plan.state_index(start)
        base = _state_field(plan, result, start)
        _, unknown = _items_field(plan, chosen, h, lambda item: item.present_in(start))
        start_currents = np.where(independent, 0.0, currents[:, k])
    correction = _state_field(plan, result, chosen.reference_state) if adjusted else np.zeros(3)
    seen = base - correction
    matrix = plan.circuit_matrix
    rows: list[SwitchOnRow] = []
    for c, circuit in enumerate(plan.circuits):
        runs = tuple(plan.runs[r].name for r in np.flatnonzero(matrix[:, c]))
        before = float(start_currents[c])
        note = ""
        if before != 0.0:
            action, on_test, source = "switch off", 0.0, start
        else:
            action = "switch on"
            if k is not None and independent[c] and currents[c, k] != 0.0:
                on_test, source = float(currents[c, k]), start
            else:
                largest = int(np.argmax(np.abs(currents[c]))) if len(plan.state_names) else 0
                on_test = float(currents[c, largest]) if currents.size else 0.0
                source = plan.state_names[largest] if on_test else None
            if on_test == 0.0:
                note = "no current in any state of the plan: enter the current on test"
        if circuit.reversing:
            note = "either way round: reversed, the reading moves the other way"
        if not runs:
            note = "no run carries this circuit in the plan"
        change = (on_test - before) * units[c]
        predicted = float(swing.reading_change_deg(seen, seen + change, h, heading_deg))
        rows.append(SwitchOnRow(len(rows) + 1, "circuit", circuit.name, action, before, on_test,
                                source, frozen_array(change), predicted, runs, note))
    for state in plan.state_names:
        if state == start:
            continue
        target = _state_field(plan, result, state)
        change = target - base
        predicted = float(swing.reading_change_deg(seen, seen + change, h, heading_deg))
        rows.append(SwitchOnRow(len(rows) + 1, "state", state, "set as in the state", None, None,
                                state, frozen_array(change), predicted, ()))
    return SwitchOnTest(plan, chosen, float(heading_deg) % 360.0, start or ALL_OFF, adjusted,
                        site, frozen_array(seen), frozen_array(units), frozen_array(start_currents),
                        tuple(rows), unknown)


@dataclass(frozen=True)
class ResultRow:
    """A step of the test read back: the observed change beside the predicted one."""

    row: int                           # row in the sheet
    kind: str
    name: str
    current_before_a: float | None
    current_on_test_a: float | None
    predicted_change_deg: float
    observed_change_deg: float | None
    tolerance_deg: float | None
    status: str                        # "agrees", "differs" or "not read"
    cause: str | None                  # for a circuit that differs: what probably happened
    runs: tuple[str, ...]

    @property
    def difference_deg(self) -> float | None:
        if self.observed_change_deg is None:
            return None
        return self.observed_change_deg - self.predicted_change_deg


@dataclass(frozen=True)
class SwitchOnResults:
    test: SwitchOnTest
    rows: tuple[ResultRow, ...]
    resolution_deg: float
    fraction: float
    source: str                        # the file and sheet read

    @property
    def suspects(self) -> tuple[ResultRow, ...]:
        """Circuits whose observed change differs from the predicted: probable routing errors."""
        return tuple(r for r in self.rows if r.kind == "circuit" and r.status == "differs")

    @property
    def agrees(self) -> bool:
        return not any(r.status == "differs" for r in self.rows)


def probable_cause(predicted_deg: float, observed_deg: float) -> str:
    """What a differing switch-on change most probably means, in words."""
    if abs(predicted_deg) >= NO_VISIBLE_CHANGE_DEG and observed_deg * predicted_deg < 0:
        return ("moves the other way: the run lies on the other side of the compass from the "
                "plan, or its supply and return are swapped")
    if abs(observed_deg) < abs(predicted_deg):
        return ("smaller than predicted: the run lies further from the compass than planned, or "
                "its return closer beside it (or less current flowed)")
    return ("larger than predicted: the run lies nearer the compass than planned, or its return "
            "further from it (or more current flowed)")


def _settings(path):
    if Path(path).suffix.lower() == ".csv":          # a single table has no settings sheet
        return {}, None
    table = read_table(path, (SETTINGS_SHEET,), required=False)
    if table is None:
        return {}, None
    values = {}
    for number, row in table.rows:
        if row.get("setting") is not None:
            values[canonical(row["setting"])] = (row.get("value"), number)
    return values, table


def _yes(value):
    return name_key(value) in ("yes", "true", "1", "y")


def read_switch_on_results(plan: Plan, path, *, sensor=None, heading_deg=None, start_state=None,
                           adjusted=None, resolution_deg=READING_RESOLUTION_DEG,
                           fraction=CHANGE_FRACTION, analysis=None) -> SwitchOnResults:
    """Read a filled-in switch-on test sheet and set each observed change beside the predicted.

    Parameters
    ----------
    plan : Plan
    path : str or PathLike
        The workbook written by the test sheet, or a plan workbook or folder with a sheet
        "switch-on test", or a .csv file of that table. Columns: circuit or state; reading
        before and reading after (or observed change); current before and current on test are
        optional (a measured current there replaces the plan's in the prediction).
    sensor, heading_deg, start_state, adjusted
        Override the sheet's settings (sheet "switch-on settings"); needed where it has none.
    resolution_deg : float [deg]
        Reading resolution of the card (default 0.5, common practice, no source).
    fraction : float
        Share of the predicted change allowed (default 0.25, common practice, no source).

    Returns
    -------
    SwitchOnResults
        A step differs when |observed - predicted| > max(resolution_deg, fraction x |predicted|).

    Raises
    ------
    ReadingsError
        With every bad cell, located by file, sheet, row and column.
    """
    settings, settings_table = _settings(path)
    findings = []

    def setting(name, given):
        if given is not None:
            return given
        value = settings.get(name)
        return None if value is None else value[0]

    def where(name):
        value = settings.get(name)
        return (settings_table.sheet, value[1]) if value else (None, None)

    sensor_name = setting("sensor", sensor if not hasattr(sensor, "name") else sensor.name)
    if sensor_name is None:
        if len(plan.sensors) != 1:
            findings.append(Finding(str(path), None, None, None, "which sensor was watched? give "
                                    "--sensor or a sensor row in the switch-on settings sheet"))
        else:
            sensor_name = plan.sensors[0].name
    heading_value = setting("magnetic_heading", heading_deg)
    if heading_value is None:
        findings.append(Finding(str(path), None, None, None, "the magnetic heading the vessel lay "
                                "on is needed: give --heading or a magnetic_heading row in the "
                                "switch-on settings sheet"))
    else:
        try:
            heading_value = float(heading_value)
            if not 0.0 <= heading_value <= 360.0:
                raise ValueError
        except (TypeError, ValueError):
            sheet, row = where("magnetic_heading")
            findings.append(Finding(str(path), sheet, row, "value", f'"{heading_value}" is not a '
                                    "heading in degrees (0 to 360)"))
            heading_value = None
    start = setting("start_state", start_state)
    adjusted_value = setting("adjusted", adjusted)
    adjusted_value = _yes(adjusted_value) if isinstance(adjusted_value, str) else bool(
        adjusted_value)
    if findings:
        raise ReadingsError(findings)
    try:
        test = switch_on_test(plan, sensor_name, heading_value, start, adjusted_value, analysis)
    except DeviationError as error:
        # The setting the error belongs to, as the error says (an unknown sensor: "sensor").
        sheet, row = where(error.column) if error.column else (None, None)
        raise ReadingsError([Finding(str(path), sheet, row, "value" if sheet else None,
                                     str(error), error.kind)]) from None

    table = read_table(path, (TEST_SHEET,), any_single=True)
    if "circuit" not in table.columns and "state" not in table.columns:
        raise ReadingsError([table.finding(None, "circuit", "a circuit column (or a state "
                                           "column) is needed to say what was switched")])
    readable = ({"reading_before", "reading_after"} <= set(table.columns)
                or "observed_change" in table.columns)
    if not readable:
        raise ReadingsError([table.finding(None, "reading_before", "columns reading before and "
                                           "reading after (or observed change) are needed")])
    circuits = {name_key(c.name): i for i, c in enumerate(plan.circuits)}
    planned = {(r.kind, name_key(r.name)): r for r in test.rows}
    rows = []
    seen = set()
    for number, row in table.rows:
        circuit, state = row.get("circuit"), row.get("state")
        if circuit is not None and state is not None:
            findings.append(table.finding(number, "state", "give a circuit or a state, not both"))
            continue
        if circuit is None and state is None:
            if any(row.get(c) is not None for c in ("reading_before", "reading_after",
                                                    "observed_change")):
                findings.append(table.finding(number, "circuit", "readings without a circuit or "
                                                                 "state named"))
            continue
        kind, name = ("circuit", circuit) if circuit is not None else ("state", state)
        key = (kind, name_key(name))
        step = planned.get(key)
        if step is None:
            choices = ([c.name for c in plan.circuits] if kind == "circuit"
                       else list(plan.state_names))
            what = ("not a circuit of the plan" if kind == "circuit" else
                    "not a state of the plan" if _state_named(plan, name) is None else
                    "the starting state itself")
            findings.append(table.finding(number, kind, f'"{name}" is {what}'
                                          f"{_suggest(str(name), choices)}"))
            continue
        if key in seen:
            findings.append(table.finding(number, kind, f'"{name}" is listed twice'))
            continue
        seen.add(key)
        bad = len(findings)
        before_reading = _heading(table, number, "reading_before", row.get("reading_before"),
                                  findings)
        after_reading = _heading(table, number, "reading_after", row.get("reading_after"),
                                 findings)
        observed_cell = _number(table, number, "observed_change", row.get("observed_change"),
                                "a change in degrees", findings, -180.0, 180.0)
        for column, reading in (("reading_before", before_reading),
                                ("reading_after", after_reading)):
            shown = (None if reading is None or heading_value is None
                     else float(swing.wrap_deg(heading_value - reading)))
            if shown is not None and abs(shown) > MAX_READ_DEVIATION_DEG:
                findings.append(table.finding(
                    number, column, f"a reading of {reading:g}° with the vessel on "
                    f"{heading_value:g}° magnetic is a deviation of {shown:+.1f}°, more than "
                    f"the {MAX_READ_DEVIATION_DEG:g}° a compass that can still be read shows "
                    "(rule of thumb, no published source); check the reading and the magnetic "
                    "heading", Problem.OUT_OF_RANGE))
        current_before = step.current_before_a
        current_test = step.current_on_test_a
        if kind == "circuit":
            given_before = _number(table, number, "current_before", row.get("current_before"),
                                   "a current in amperes", findings, -MAX_CURRENT_A, MAX_CURRENT_A)
            given_test = _number(table, number, "current_on_test", row.get("current_on_test"),
                                 "a current in amperes", findings, -MAX_CURRENT_A, MAX_CURRENT_A)
            current_before = current_before if given_before is None else given_before
            current_test = current_test if given_test is None else given_test
        if len(findings) > bad:
            continue
        observed = None
        if before_reading is not None and after_reading is not None:
            observed = float(swing.wrap_deg(after_reading - before_reading))
            if observed_cell is not None and abs(observed_cell - observed) > 0.05:
                findings.append(table.finding(number, "observed_change", f"{observed_cell:g}° "
                                              f"disagrees with the readings ({observed:+.2f}°); "
                                              "clear one of them"))
                continue
        elif (before_reading is None) != (after_reading is None):
            missing = "reading_after" if after_reading is None else "reading_before"
            if observed_cell is None:
                findings.append(table.finding(number, missing, "both readings are needed (or the "
                                                               "observed change)"))
                continue
            observed = observed_cell
        else:
            observed = observed_cell
        if kind == "circuit":
            index = circuits[name_key(name)]
            # a circuit's step always has both currents (None only on a whole state's step)
            predicted = test.predicted_change_deg(index, float(current_before or 0.0),
                                                  float(current_test or 0.0))
        else:
            predicted = step.predicted_change_deg
        if observed is None:
            rows.append(ResultRow(number, kind, step.name, current_before, current_test,
                                  predicted, None, None, "not read", None, step.runs))
            continue
        tolerance = float(swing.change_tolerance_deg(predicted, resolution_deg, fraction))
        differs = abs(observed - predicted) > tolerance
        rows.append(ResultRow(number, kind, step.name, current_before, current_test, predicted,
                              observed, tolerance, "differs" if differs else "agrees",
                              probable_cause(predicted, observed) if differs else None,
                              step.runs))
    if findings:
        raise ReadingsError(findings)
    return SwitchOnResults(test, tuple(rows), float(resolution_deg), float(fraction),
                           f"{table.file}, sheet {table.sheet}")


