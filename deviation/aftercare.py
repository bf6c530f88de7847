"""After installation: the switch-on test at the berth, the swing, and refits, over a plan.

Once the cables are in, each load is switched on alone at the berth while someone watches the
compass; later the compass is swung and the swing worked into the approximate coefficients A-E.
This module predicts the first, reads both back, and sets the plan's figures beside what was
observed:

* :func:`switch_on_test` predicts the change of the compass reading when each circuit alone,
  and each operating state, is switched on at the berth; :func:`read_switch_on_results` reads the
  filled-in sheet back and names the circuits whose change differs (probable routing errors).
* :func:`read_swing` and :func:`swing_comparison` fit the approximate coefficients to a swing per
  state and set the plan's own coefficients beside them.
* :func:`reference_choices` ranks the states a sensor could be adjusted and swung in.
* :func:`deflection_item` turns a hand-bearing compass's deflection by an item into a moment
  for the plan's equipment sheet (Gauss's method).
* :func:`refit` compares a plan with its earlier version and says whether a new swing is due.

Everything here works through the public API (:mod:`deviation.api`), the budget's own rules
(:mod:`deviation.budget`) and the pure functions of :mod:`deviation.swing` and
:mod:`deviation.heading`; a wrong cell in a file it reads is located by file, sheet, row and
column.
"""

from __future__ import annotations

import csv
import difflib
import math
import re
import zipfile
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from . import api, heading, swing
from .budget import asin_deg, item_effect
from .errors import DeviationError
from .plan import Finding, Plan, frozen_array, name_key

#: The starting state of a switch-on test in which every circuit is off.
ALL_OFF = "all off"

#: Reading resolution of a typical compass card [deg] (common practice, no source): a change
#: smaller than this cannot be told from the card's graduation and the eye.
READING_RESOLUTION_DEG = 0.5
#: Share of the predicted change an observed change may differ by before a circuit is named
#: (common practice, no source): currents at the berth and cable positions vary this much.
CHANGE_FRACTION = 0.25
#: Change of the deviation card, at any heading, beyond which a new swing is advised [deg]
#: (common practice, no source).
SWING_THRESHOLD_DEG = 1.0
#: A change of reading below this is shown as no visible change [deg] (a tenth of the card's
#: resolution).
NO_VISIBLE_CHANGE_DEG = 0.05

#: Largest uncompressed size of a readings workbook [bytes], checked before parsing.
MAX_WORKBOOK_BYTES = 100 * 1024 * 1024
#: Rows a readings sheet may have.
MAX_ROWS = 20_000

TEST_SHEET = "switch-on test"
SETTINGS_SHEET = "switch-on settings"
SWING_SHEET = "swing"


class ReadingsError(DeviationError):
    """A readings sheet with problems; ``findings`` lists all of them, each located."""

    def __init__(self, findings):
        self.findings = tuple(findings)
        super().__init__("\n".join(str(f) for f in self.findings))


# Reading sheets ----------------------------------------------------------------------------------

def canonical(name) -> str:
    """Sheet and column names: case, units in brackets, spaces, hyphens and _ ignored."""
    text = re.sub(r"\[[^\]]*\]|\([^)]*\)", " ", str(name))
    return re.sub(r"[\s_\-]+", "_", text.strip().lower()).strip("_")


@dataclass(frozen=True)
class Table:
    """One sheet: its header (canonical name -> header text) and rows (row number, values)."""

    file: str
    sheet: str
    columns: dict
    rows: tuple

    def finding(self, row, column, message) -> Finding:
        return Finding(self.file, self.sheet, row, self.columns.get(column, column), message)


def _blank(value):
    return value is None or (isinstance(value, str) and not value.strip())


def _table(file, label, grid):
    rows = [(n, r) for n, r in enumerate(grid, start=1) if any(not _blank(c) for c in r)]
    if not rows:
        raise ReadingsError([Finding(file, label, None, None, "the sheet is empty; it needs a "
                                                              "header row")])
    if len(rows) > MAX_ROWS:
        raise ReadingsError([Finding(file, label, None, None, f"{len(rows)} rows is more than "
                                                              f"the {MAX_ROWS} a sheet may have")])
    header_row, header = rows[0]
    columns, positions = {}, {}
    findings = []
    for index, cell in enumerate(header):
        if _blank(cell):
            continue
        name = canonical(cell)
        if name in columns:
            findings.append(Finding(file, label, header_row, str(cell).strip(),
                                    "this column appears twice"))
            continue
        columns[name] = str(cell).strip()
        positions[name] = index
    if findings:
        raise ReadingsError(findings)
    data = []
    for number, cells in rows[1:]:
        values = {}
        for name, index in positions.items():
            value = cells[index] if index < len(cells) else None
            values[name] = None if _blank(value) else (value.strip() if isinstance(value, str)
                                                       else value)
        data.append((number, values))
    return Table(file, label, columns, tuple(data))


def _csv_grid(path, file):
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise ReadingsError([Finding(file, Path(path).name, None, None,
                                     "not UTF-8 text; save it as CSV UTF-8")]) from None
    return list(csv.reader(text.splitlines()))


def _workbook(path, file):
    try:
        with zipfile.ZipFile(path) as archive:
            size = sum(m.file_size for m in archive.infolist())
    except (zipfile.BadZipFile, OSError, ValueError):
        raise ReadingsError([Finding(file, None, None, None, "this is not an .xlsx workbook (not a "
                                                             "zip archive)")]) from None
    if size > MAX_WORKBOOK_BYTES:
        raise ReadingsError([Finding(file, None, None, None, f"the workbook would unpack to "
                                                             f"{size / 1e6:.0f} MB; refused")])
    import openpyxl

    try:
        return openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as error:  # noqa: BLE001  damaged files raise many kinds
        raise ReadingsError([Finding(file, None, None, None, "cannot be read as an .xlsx workbook "
                                                             f"({error.__class__.__name__})")]) \
            from None


def read_table(path, names, *, required=True, any_single=False) -> Table | None:
    """A sheet named one of ``names`` from a .csv file, a folder of .csv sheets or a workbook.

    Parameters
    ----------
    path : str or PathLike
        A .csv file (read whatever its name), a folder (``<name>.csv``) or an .xlsx workbook.
    names : sequence of str
        Acceptable sheet names (compared by :func:`canonical`).
    required : bool
        Raise a finding when no such sheet is found (else return None).
    any_single : bool
        A workbook with a single sheet is read whatever the sheet is called.

    Raises
    ------
    ReadingsError
        With located findings.
    """
    path = Path(path)
    file = str(path)
    wanted = {canonical(n) for n in names}
    if not path.exists():
        raise ReadingsError([Finding(file, None, None, None, "no such file or folder")])
    if path.is_dir():
        for candidate in sorted(path.iterdir()):
            if candidate.suffix.lower() == ".csv" and canonical(candidate.stem) in wanted:
                return _table(file, candidate.name, _csv_grid(candidate, file))
        if required:
            raise ReadingsError([Finding(file, None, None, None, f"no sheet {names[0]!r} here "
                                         f"(a file {canonical(names[0])}.csv)")])
        return None
    suffix = path.suffix.lower()
    if suffix == ".csv":
        return _table(file, path.name, _csv_grid(path, file))
    if suffix not in (".xlsx", ".xlsm"):
        raise ReadingsError([Finding(file, None, None, None, "readings are an .xlsx workbook, "
                                     "a .csv file or a folder of .csv sheets")])
    book = _workbook(path, file)
    try:
        sheets = book.worksheets
        chosen = next((s for s in sheets if canonical(s.title) in wanted), None)
        if chosen is None and any_single and len(sheets) == 1:
            chosen = sheets[0]
        if chosen is None:
            if not required:
                return None
            have = ", ".join(s.title for s in sheets)
            raise ReadingsError([Finding(file, None, None, None, f"no sheet {names[0]!r} in "
                                         f"the workbook (it has: {have})")])
        grid = [list(r) for r in chosen.iter_rows(values_only=True)]
        return _table(file, chosen.title, grid)
    finally:
        book.close()


def _number(table, row, column, value, what, findings, low=None, high=None):
    if value is None:
        return None
    limits = "" if low is None else f" ({low:g} to {high:g})"
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        findings.append(table.finding(row, column, f'"{value}" is not {what}{limits}'))
        return None
    try:
        number = float(value.replace("°", "").strip()) if isinstance(value, str) else float(value)
    except ValueError:
        findings.append(table.finding(row, column, f'"{value}" is not {what}{limits}'))
        return None
    if not math.isfinite(number) or (low is not None and number < low) or (
            high is not None and number > high):
        findings.append(table.finding(row, column, f'"{value}" is not {what}{limits}'))
        return None
    return number


def _heading(table, row, column, value, findings):
    number = _number(table, row, column, value, "a heading in degrees", findings, 0.0, 360.0)
    return None if number is None else number % 360.0


def _signed_deviation(table, row, column, value, findings):
    """A deviation: a number (east positive) or degrees with E or W, e.g. 3.5E, 2 W."""
    if value is None:
        return None
    if isinstance(value, str):
        match = re.fullmatch(r"\s*([+-]?\d+(?:\.\d*)?|[+-]?\.\d+)\s*°?\s*([EWew])?\s*", value)
        if not match:
            findings.append(table.finding(row, column, f'"{value}" is not a deviation (degrees, '
                                                        "east positive, or e.g. 3.5E, 2W)"))
            return None
        number = float(match.group(1))
        if match.group(2):
            if number < 0:
                findings.append(table.finding(row, column, f'"{value}": give a sign or E/W, '
                                                            "not both"))
                return None
            number = number if match.group(2).upper() == "E" else -number
    else:
        number = _number(table, row, column, value, "a deviation in degrees", findings)
        if number is None:
            return None
    if abs(number) >= 180:
        findings.append(table.finding(row, column, f'"{value}" is not a deviation (less than '
                                                    "180 degrees either way)"))
        return None
    return number


def _suggest(word, choices):
    keys = {name_key(c): c for c in choices}
    close = difflib.get_close_matches(name_key(word), list(keys), n=1, cutoff=0.6)
    return f'; did you mean "{keys[close[0]]}"?' if close else ""


def _state_named(plan, text):
    return next((s for s in plan.state_names if name_key(s) == name_key(text)), None)


# The plan's fields at a sensor -------------------------------------------------------------------

def _checked(plan, analysis=None):
    return analysis if analysis is not None else api.check(plan, remedies=False)


def _items_field(plan, sensor, horizontal_t, present):
    """Vector field of the oriented items for which ``present(item)`` is true [T], and the names
    of the present items whose direction is not known (bounds only)."""
    total = np.zeros(3)
    unknown = []
    for item in plan.equipment:
        if not present(item):
            continue
        field, _bound, _ = item_effect(item, sensor.position_m[None, :], horizontal_t)
        if field is None:
            unknown.append(item.name)
        else:
            total += field[0]
    return total, tuple(unknown)


def circuit_fields_t(plan: Plan, sensor_result) -> np.ndarray:
    """Field of each circuit at unit current at a sensor, (C, 3) [T/A]: the sum of the runs that
    carry it (a run may carry several circuits; its field per ampere is the same for each)."""
    return plan.circuit_matrix.T @ np.asarray(sensor_result.unit_fields_t)


# Switch-on test ----------------------------------------------------------------------------------

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
    sensor: object
    heading_deg: float                 # magnetic heading the vessel lies on
    start_state: str                   # ALL_OFF or a state of the plan
    adjusted: bool                     # correctors cancel the reference state's field
    site: object
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
        raise DeviationError(f'"{start_state}" is not a state of the plan; it has: '
                             + ", ".join(plan.state_names) + f' (or "{ALL_OFF}")')
    if adjusted and not chosen.reference_state:
        raise DeviationError(f'sensor "{chosen.name}" has no reference state in the plan, so '
                             "there is no adjustment to allow for; give it a reference_state or "
                             "leave adjusted off")
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
    rows = []
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
        sheet, row = where("sensor" if "sensor" in str(error) else "start_state")
        raise ReadingsError([Finding(str(path), sheet, row, "value" if sheet else None,
                                     str(error))]) from None

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
        current_before = step.current_before_a
        current_test = step.current_on_test_a
        if kind == "circuit":
            given_before = _number(table, number, "current_before", row.get("current_before"),
                                   "a current in amperes", findings)
            given_test = _number(table, number, "current_on_test", row.get("current_on_test"),
                                 "a current in amperes", findings)
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
            predicted = test.predicted_change_deg(index, current_before, current_test)
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


# Swing -------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class SwingReadings:
    """A swing's readings per state: compass and magnetic headings and the deviation [deg]."""

    source: str
    states: dict                       # state -> (rows (n,), compass (n,), magnetic (n,), dev (n,))


def read_swing(path, plan: Plan, state: str | None = None) -> SwingReadings:
    """Read swing readings: per row a compass heading and the deviation, or a compass and a
    magnetic heading (or all three, which must agree), and the state the vessel was in.

    Parameters
    ----------
    path : str or PathLike
        A .csv file, a workbook (sheet "swing", or its only sheet) or a folder with swing.csv.
    plan : Plan
        For the state names.
    state : str, optional
        The state of rows that name none (needed when the plan has several states).

    Raises
    ------
    ReadingsError
        With every bad cell located; also a state with fewer than five distinct headings.
    """
    table = read_table(path, (SWING_SHEET,), any_single=True)
    findings = []
    columns = set(table.columns)
    aliases = {"compass": ("compass", "compass_heading", "compass_deg"),
               "magnetic": ("magnetic", "magnetic_heading", "magnetic_deg"),
               "deviation": ("deviation", "deviation_deg")}
    found = {key: next((c for c in names if c in columns), None) for key, names in aliases.items()}
    if sum(v is not None for v in found.values()) < 2:
        raise ReadingsError([table.finding(None, None, "two of the columns compass (heading), "
                                           "magnetic (heading) and deviation are needed")])
    default = None
    if state is not None:
        default = _state_named(plan, state)
        if default is None:
            raise ReadingsError([Finding(table.file, table.sheet, None, None,
                                         f'"{state}" is not a state of the plan'
                                         f"{_suggest(state, plan.state_names)}")])
    elif len(plan.state_names) == 1:
        default = plan.state_names[0]
    per_state = {}
    for number, row in table.rows:
        bad = len(findings)
        named = row.get("state")
        if named is not None:
            chosen = _state_named(plan, named)
            if chosen is None:
                findings.append(table.finding(number, "state", f'"{named}" is not a state of the '
                                              f"plan{_suggest(str(named), plan.state_names)}"))
        else:
            chosen = default
            if chosen is None:
                findings.append(table.finding(number, "state", "which state was the vessel in? "
                                              "name it here, or give --state"))
        compass = (_heading(table, number, found["compass"], row.get(found["compass"]), findings)
                   if found["compass"] else None)
        magnetic = (_heading(table, number, found["magnetic"], row.get(found["magnetic"]),
                             findings) if found["magnetic"] else None)
        deviation = (_signed_deviation(table, number, found["deviation"],
                                       row.get(found["deviation"]), findings)
                     if found["deviation"] else None)
        if len(findings) > bad:
            continue
        given = [v is not None for v in (compass, magnetic, deviation)]
        if sum(given) < 2:
            if any(given):
                findings.append(table.finding(number, found["deviation"] or found["magnetic"],
                                              "two of compass, magnetic and deviation are needed"))
            continue
        if compass is None:
            compass = float(heading.compass_from_magnetic(magnetic, deviation))
        elif magnetic is None:
            magnetic = float(heading.magnetic_from_compass(compass, deviation))
        elif deviation is None:
            deviation = float(swing.wrap_deg(magnetic - compass))
        elif abs(off := float(swing.wrap_deg(magnetic - compass - deviation))) > 0.05:
            findings.append(table.finding(number, found["deviation"], "compass + deviation is not "
                                          f"the magnetic heading (off by {off:+.2f}°)"))
            continue
        per_state.setdefault(chosen, []).append((number, compass, magnetic, deviation))
    for chosen, readings in per_state.items() if not findings else ():
        distinct = len({round(r[1], 6) for r in readings})
        if distinct < swing.MIN_HEADINGS:
            findings.append(Finding(table.file, table.sheet, readings[0][0], None,
                                    f'state "{chosen}" has {distinct} distinct compass heading'
                                    f"{'s' if distinct != 1 else ''}; at least "
                                    f"{swing.MIN_HEADINGS} are needed for five coefficients"))
    if not per_state and not findings:
        findings.append(Finding(table.file, table.sheet, None, None, "no readings in the sheet"))
    if findings:
        raise ReadingsError(findings)
    states = {s: tuple(np.array(values) for values in zip(*per_state[s]))
              for s in plan.state_names if s in per_state}
    return SwingReadings(f"{table.file}, sheet {table.sheet}", states)


@dataclass(frozen=True)
class StateSwing:
    """One state's swing: the fit beside the plan's own coefficients."""

    state: str
    rows: np.ndarray                   # sheet rows of the readings
    headings_deg: np.ndarray           # the heading fitted against (compass or magnetic)
    deviation_deg: np.ndarray
    fit: swing.CoefficientFit
    predicted_deg: np.ndarray | None   # (5,) from the plan; None where the field overwhelms
    field_t: np.ndarray                # (3,) the field the prediction is drawn from

    @property
    def unexplained_deg(self) -> np.ndarray | None:
        """Observed minus predicted coefficients: what the plan does not explain."""
        if self.predicted_deg is None:
            return None
        return self.fit.coefficients_deg - self.predicted_deg


@dataclass(frozen=True)
class StateChange:
    """The change of the coefficients from one swung state to another: the vessel's own iron
    and the correctors are the same in both, so this is the wiring's part alone."""

    state: str
    base: str
    observed_deg: np.ndarray
    predicted_deg: np.ndarray | None
    standard_error_deg: np.ndarray | None = None   # of the observed change, both fits together

    @property
    def unexplained_deg(self) -> np.ndarray | None:
        return None if self.predicted_deg is None else self.observed_deg - self.predicted_deg


@dataclass(frozen=True)
class SwingComparison:
    sensor: object
    site: object
    on: str                            # "compass" or "magnetic"
    adjusted_in: str | None            # predictions are of the residual after adjustment here
    source: str
    states: tuple[StateSwing, ...]
    changes: tuple[StateChange, ...]
    unknown_items: tuple[str, ...]


def swing_comparison(plan: Plan, sensor, readings: SwingReadings, *, on: str = "compass",
                     adjusted_in: str | None = "reference", analysis=None) -> SwingComparison:
    """Fit the approximate coefficients to each state's swing and set the plan's beside them.

    Parameters
    ----------
    plan : Plan
    sensor : str or Sensor
    readings : SwingReadings
    on : "compass" or "magnetic"
        The heading the coefficients are written against (the handbook: compass).
    adjusted_in : str or None
        The state the compass was adjusted in before the swing: the plan's prediction is then of
        the residual field b_state - b_adjusted. "reference" (default): the sensor's reference
        state in the plan, if any; None: not adjusted, the absolute field.

    Returns
    -------
    SwingComparison

    Notes
    -----
    The plan knows the wiring and oriented items only: the vessel's own iron, the correctors and
    a misaligned lubber line are part of every swing and not of the prediction, so the
    difference per state mixes them in. Between two swung states they are the same, so the
    change of the coefficients from one state to another is the wiring's part alone, and that
    is set beside the plan's change too. On compass headings a vessel-fixed field gives no A, D
    or E (see :func:`deviation.swing.deviation_on_compass_heading_deg`).

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (formerly Pub. 226), chapter V.
    """
    chosen = plan.sensor(sensor) if isinstance(sensor, str) else sensor
    checked = _checked(plan, analysis)
    result = checked.sensor(chosen.name)
    h = checked.site.horizontal_t
    if adjusted_in == "reference":
        adjusted_in = chosen.reference_state
    elif adjusted_in is not None:
        named = _state_named(plan, adjusted_in)
        if named is None:
            raise DeviationError(f'"{adjusted_in}" is not a state of the plan; it has: '
                                 + ", ".join(plan.state_names))
        adjusted_in = named
    correction = _state_field(plan, result, adjusted_in) if adjusted_in else np.zeros(3)
    states = []
    unknown = set()
    for state, (rows, compass, magnetic, deviation) in readings.states.items():
        psi = compass if on == "compass" else magnetic
        try:
            fit = swing.fit_coefficients(psi, deviation)
        except swing.SwingFitError as error:
            raise ReadingsError([Finding(readings.source, None, int(rows[0]), None,
                                         f'state "{state}": {error}')]) from None
        seen = _state_field(plan, result, state) - correction
        predicted = swing.field_coefficients_deg(seen, h, on)
        _, missing = _items_field(plan, chosen, h, lambda item, s=state: item.present_in(s))
        unknown.update(missing)
        states.append(StateSwing(state, rows, psi, deviation, fit,
                                 None if predicted is None else frozen_array(predicted),
                                 frozen_array(seen)))
    changes = []
    if len(states) > 1:
        base = next((s for s in states if s.state == adjusted_in), states[0])
        for other in states:
            if other is base:
                continue
            predicted = (None if other.predicted_deg is None or base.predicted_deg is None
                         else frozen_array(other.predicted_deg - base.predicted_deg))
            errors = (None if other.fit.standard_error_deg is None
                      or base.fit.standard_error_deg is None else frozen_array(np.hypot(
                          other.fit.standard_error_deg, base.fit.standard_error_deg)))
            changes.append(StateChange(other.state, base.state, frozen_array(
                other.fit.coefficients_deg - base.fit.coefficients_deg), predicted, errors))
    return SwingComparison(chosen, checked.site, on, adjusted_in, readings.source, tuple(states),
                           tuple(changes), tuple(sorted(unknown)))


# Which state to swing in -------------------------------------------------------------------------

@dataclass(frozen=True)
class ReferenceChoice:
    """One candidate state to adjust and swing a sensor in, with what the others then keep."""

    sensor: str
    reference_state: str
    worst_deg: float                   # largest held figure over the other states it is used in
    worst_state: str | None
    level_worst_deg: float             # the same, level: the deviation of b_state - b_ref
    within_budget: bool
    budget_deg: float
    in_plan: bool                      # the plan's own reference state
    overwhelmed: bool


def reference_choices(plan: Plan, sensor: str | None = None) -> dict:
    """For each sensor, every state as the one to adjust and swing in, best first.

    Parameters
    ----------
    plan : Plan
    sensor : str, optional
        Only this sensor.

    Returns
    -------
    dict of sensor name -> tuple of ReferenceChoice, smallest worst figure first

    Notes
    -----
    For each candidate r the plan is checked again with r as the sensor's reference state; the
    figure is the one :func:`deviation.check` holds against the budget: the deviation of the
    residual b_state - b_r, largest over headings (asin(|b_h|/H), NGA Pub. 226), at the worst
    attitude, with the bounds of items that change, in the worst of the other states the sensor
    is used in.
    """
    sensors = plan.sensors if sensor is None else (plan.sensor(sensor),)
    names = {s.name for s in sensors}
    choices = {s.name: [] for s in sensors}
    for state in plan.state_names:
        trial = replace(plan, sensors=tuple(
            replace(s, reference_state=state) if s.name in names else s for s in plan.sensors))
        checked = api.check(trial, remedies=False)
        for result in checked.sensors:
            s = result.sensor
            if s.name not in names:
                continue
            others = [st for st in result.states if st.used and st.state != state]
            original = next(o for o in sensors if o.name == s.name)
            if others:
                worst = max(others, key=lambda st: st.budget_used_deg)
                figure, worst_state = worst.budget_used_deg, worst.state
                level = max(st.change_from_reference_deg for st in others)
                over = any(st.overwhelmed for st in others)
                within = all(st.within_budget for st in others)
            else:
                figure, worst_state, level, over, within = 0.0, None, 0.0, False, True
            choices[s.name].append(ReferenceChoice(
                s.name, state, float(figure), worst_state, float(level), within, s.budget_deg,
                original.reference_state == state, over))
    return {name: tuple(sorted(found, key=lambda c: (c.worst_deg, c.reference_state)))
            for name, found in choices.items()}


# Gauss's deflection ------------------------------------------------------------------------------

def deflection_item(name: str, at: str, deflection_deg: float, distance_m: float,
                    horizontal_t: float, position: str = "end-on", note: str = "") -> dict:
    """An equipment-sheet row for an item whose moment was found by deflecting a compass.

    Parameters
    ----------
    name : str
        The item.
    at : str
        Where it will be mounted: a point name or x, y, z, as the plan's ``at`` column takes.
    deflection_deg, distance_m, horizontal_t, position
        As :func:`deviation.swing.moment_from_deflection_am2`.

    Returns
    -------
    dict
        The equipment sheet's columns: item, at, moment_am2 (3 significant digits) and a blank
        axis (the orientation aboard is not known, so the worst one counts), and a note saying
        how the moment was found.
    """
    moment = swing.moment_from_deflection_am2(deflection_deg, distance_m, horizontal_t, position)
    how = (f"moment from a {abs(deflection_deg):g}° deflection at {distance_m:g} m {position}, "
           f"H {horizontal_t * 1e6:.2f} µT")
    return {"item": name, "at": at, "safe_distance": "", "safe_distance_for": "",
            "moment_am2": float(f"{moment:.3g}"), "axis": "", "states": "",
            "note": f"{note}; {how}" if note else how}


# Refits ------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Difference:
    """A run or item that differs between two versions of a plan, at one sensor in one state."""

    kind: str                          # "run" or "item"
    name: str
    how: tuple[str, ...]               # "added", "removed", "moved", "current changed", ...
    field_change_t: np.ndarray | None  # (3,) change of its field at the sensor (None: a bound)
    size_deg: float                    # asin(|change of the horizontal field| / H)


@dataclass(frozen=True)
class StateRefit:
    sensor: str
    state: str
    used: bool
    held_before_deg: float
    held_after_deg: float
    level_before_deg: float            # level deviation the compass shows, largest over headings
    level_after_deg: float
    card_change_deg: float             # largest change of the deviation card over headings
    swing_advised: bool
    differences: tuple[Difference, ...]


@dataclass(frozen=True)
class Refit:
    old_source: str
    new_source: str
    threshold_deg: float
    states: tuple[StateRefit, ...]
    notes: tuple[str, ...]             # sensors or states only in one version, moved sensors

    @property
    def swing_advised(self) -> bool:
        return any(s.swing_advised for s in self.states) or any(
            n.startswith("sensor") and "moved" in n for n in self.notes)


def _same_array(a, b):
    if a is None or b is None:
        return a is None and b is None
    a, b = np.asarray(a), np.asarray(b)
    return a.shape == b.shape and np.allclose(a, b, rtol=0, atol=1e-9)


def _run_differences(old_run, new_run):
    how = []
    g0, g1 = old_run.geometry, new_run.geometry
    if not _same_array(g0.route_m, g1.route_m):
        how.append("moved")
    if (g0.return_kind != g1.return_kind or not _same_array(g0.return_route_m, g1.return_route_m)
            or g0.spacing_m != g1.spacing_m or g0.lay_m != g1.lay_m
            or getattr(old_run, "lie", None) != getattr(new_run, "lie", None)):
        how.append("return changed")
    if g0.radius_m != g1.radius_m or old_run.size != new_run.size:
        how.append("size changed")
    return how


def _item_differences(old, new):
    how = []
    if not _same_array(old.position_m, new.position_m):
        how.append("moved")
    if (old.moment_am2 != new.moment_am2 or not _same_array(old.axis, new.axis)
            or old.safe_distance_m != new.safe_distance_m
            or old.safe_distance_for != new.safe_distance_for):
        how.append("moment or label changed")
    if old.states != new.states:
        how.append("states changed")
    return how


def refit(old: Plan, new: Plan, threshold_deg: float = SWING_THRESHOLD_DEG) -> Refit:
    """Compare a plan with its earlier version: per sensor and state, how the figures and the
    deviation card change, which runs and items cause it, and whether a new swing is due.

    Parameters
    ----------
    old, new : Plan
        The earlier and the current version; sensors, states, runs and items match by name.
    threshold_deg : float [deg]
        A new swing is advised where the deviation card changes by more than this at some
        heading, in a state the sensor is used in (default 1°, common practice, no source).

    Returns
    -------
    Refit

    Notes
    -----
    The compass keeps the correctors set for the old installation: it still cancels the old
    reference state's field b_ref, so after the refit it shows the deviation of
    b_new - b_ref,old where it showed that of b_old - b_ref,old. The card change is the largest
    over headings of the difference of those two level deviations, found by
    :func:`deviation.heading.max_change_deg`; both use the new plan's site field. The held
    figures are each plan's own (the new one as if adjusted afresh). Each run's or item's part
    is the size of the change of its own field at the sensor, asin(|Delta b_h|/H): the
    changes add as vectors, so the largest is the main cause, not a share of the total.
    """
    before = api.check(old, remedies=False)
    after = api.check(new, remedies=False)
    h = after.site.horizontal_t
    notes = []
    old_sensors = {name_key(s.sensor.name): s for s in before.sensors}
    new_sensors = {name_key(s.sensor.name): s for s in after.sensors}
    for key in old_sensors.keys() - new_sensors.keys():
        notes.append(f'sensor "{old_sensors[key].sensor.name}" is only in the earlier plan')
    for key in new_sensors.keys() - old_sensors.keys():
        notes.append(f'sensor "{new_sensors[key].sensor.name}" is new: adjust and swing it')
    old_states = {name_key(s): s for s in old.state_names}
    new_states = {name_key(s): s for s in new.state_names}
    for key in old_states.keys() - new_states.keys():
        notes.append(f'state "{old_states[key]}" is only in the earlier plan')
    for key in new_states.keys() - old_states.keys():
        notes.append(f'state "{new_states[key]}" is new: no earlier figures to compare')
    old_runs = {name_key(r.name): i for i, r in enumerate(old.runs)}
    new_runs = {name_key(r.name): i for i, r in enumerate(new.runs)}
    old_items = {name_key(e.name): e for e in old.equipment}
    new_items = {name_key(e.name): e for e in new.equipment}
    old_currents, new_currents = old.run_currents_a, new.run_currents_a
    states = []
    for key, new_result in new_sensors.items():
        old_result = old_sensors.get(key)
        if old_result is None:
            continue
        sensor = new_result.sensor
        if not _same_array(old_result.sensor.position_m, sensor.position_m):
            notes.append(f'sensor "{sensor.name}" moved: adjust and swing it again')
        reference = old_result.sensor.reference_state
        b_ref = (np.asarray(old_result.state(reference).field_t) if reference
                 and reference in old.state_names else np.zeros(3))
        for state_key, state in new_states.items():
            if state_key not in old_states:
                continue
            old_state = old_states[state_key]
            st_old, st_new = old_result.state(old_state), new_result.state(state)
            k_old, k_new = old.state_index(old_state), new.state_index(state)
            seen_old = np.asarray(st_old.field_t) - b_ref
            seen_new = np.asarray(st_new.field_t) - b_ref
            card = float(heading.max_change_deg(seen_new, seen_old, h))
            differences = []
            for run_key in sorted(old_runs.keys() | new_runs.keys()):
                r0, r1 = old_runs.get(run_key), new_runs.get(run_key)
                f0 = (np.zeros(3) if r0 is None else
                      old_result.unit_fields_t[r0] * old_currents[r0, k_old])
                f1 = (np.zeros(3) if r1 is None else
                      new_result.unit_fields_t[r1] * new_currents[r1, k_new])
                if r0 is None:
                    how = ["added"]
                elif r1 is None:
                    how = ["removed"]
                else:
                    how = _run_differences(old.runs[r0], new.runs[r1])
                    if old_currents[r0, k_old] != new_currents[r1, k_new]:
                        how.append("current changed")
                if not how:
                    continue
                change = f1 - f0
                name = (new.runs[r1] if r1 is not None else old.runs[r0]).name
                differences.append(Difference("run", name, tuple(how), frozen_array(change), float(
                    asin_deg(heading.horizontal_disturbance(change) / h))))
            for item_key in sorted(old_items.keys() | new_items.keys()):
                e0, e1 = old_items.get(item_key), new_items.get(item_key)
                how = (["added"] if e0 is None else ["removed"] if e1 is None
                       else _item_differences(e0, e1))
                if not how:
                    continue
                fields, bounds = [], []
                for item, plan_state in ((e0, old_state), (e1, state)):
                    if item is None or not item.present_in(plan_state):
                        fields.append(np.zeros(3))
                        bounds.append(0.0)
                        continue
                    field, bound, _ = item_effect(item, sensor.position_m[None, :], h)
                    fields.append(np.zeros(3) if field is None else field[0])
                    bounds.append(float(bound[0]))
                change = fields[1] - fields[0]
                size = heading.horizontal_disturbance(change) + abs(bounds[1] - bounds[0])
                bound_only = not np.any(change) and bounds[1] != bounds[0]
                differences.append(Difference(
                    "item", (e1 or e0).name, tuple(how),
                    None if bound_only else frozen_array(change), float(asin_deg(size / h))))
            differences.sort(key=lambda d: (-d.size_deg, d.name))
            level = [st.change_from_reference_deg if st.change_from_reference_deg is not None
                     else st.vector_deviation_deg for st in (st_old, st_new)]
            states.append(StateRefit(
                sensor.name, state, st_new.used, st_old.budget_used_deg, st_new.budget_used_deg,
                float(level[0]), float(level[1]), card,
                bool(st_new.used and card > threshold_deg), tuple(differences)))
    return Refit(old.source, new.source, float(threshold_deg), tuple(states), tuple(notes))
