"""Read a plan workbook (.xlsx) or a folder of .csv sheets into a validated :class:`Plan`.

Every problem found is collected as a :class:`Finding` naming the file, sheet, row and column;
if there are any, :class:`PlanError` carries all of them and nothing is computed. The input is
only ever opened for reading.
"""

from __future__ import annotations

import csv
import datetime as dt
import difflib
import math
import re
import zipfile
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from . import units
from .constants import WMM_VALID_FROM, WMM_VALID_UNTIL
from .physics.geomag import decimal_year
from .physics.routing import CHORDS_PER_LAY, RunGeometry
from .plan import (
    DEFAULT_STATE,
    CandidateSpot,
    Circuit,
    Equipment,
    Finding,
    Plan,
    PlanError,
    Run,
    Sensor,
    Site,
    conductors_of,
    frozen_array,
    name_key,
)
from .quantities import Budget, Unit
from .schema import (
    PAIR_LIES,
    REQUIRED_SHEETS,
    RETURN_KINDS,
    SAFE_DISTANCE_FOR,
    SENSOR_KINDS,
    SHEETS,
    SITE_SETTINGS,
    STATES_TEXT_COLUMNS,
    SWITCHING,
    TOTAL_FIELD_KIND,
    VECTOR_ELECTRONIC_KINDS,
    columns_of,
)

#: Rows per sheet beyond which a plan is refused (a wiring plan has hundreds, not millions).
MAX_ROWS = 20_000
#: Straight segments one run, and a whole plan, may need (a 100 m twisted run of 5 mm lay is
#: 480 000; 10 million segments take about 0.7 GB).
MAX_SEGMENTS_PER_RUN = 2_000_000
MAX_SEGMENTS = 10_000_000
#: Largest uncompressed size of a workbook and of one member, and largest expansion ratio, checked
#: before parsing (a plan of 20 000 rows is a few MB).
MAX_UNZIPPED_BYTES = 100 * 1024 * 1024
MAX_MEMBER_BYTES = 50 * 1024 * 1024
MAX_ZIP_RATIO = 200

COLUMNS = {name: columns_of(name) for name in SHEETS if name != "states"}


def canonical(name) -> str:
    """Sheet and column names: case-insensitive, surrounding spaces ignored, inner spaces as _."""
    return re.sub(r"[\s_]+", "_", str(name).strip().lower())


#: Names of runs, points, circuits, states, sensors: compared case- and space-insensitively.
key = name_key


@dataclass
class Sheet:
    name: str
    label: str
    columns: dict            # canonical column -> header text
    rows: list               # (row number, {canonical column: value})
    state_columns: list      # for the states sheet: (canonical, header text) in order
    examples: list = field(default_factory=list)   # row numbers of template examples, skipped


class _Collector:
    def __init__(self, file):
        self.file = file
        self.findings = []
        self._dependent = set()      # ids of findings that follow from one already reported

    def add(self, sheet, row, column, message):
        self.findings.append(Finding(self.file, sheet, row, column, message))

    def add_dependent(self, sheet, row, column, message):
        """A problem that only follows from one reported elsewhere (a row using a bad point):
        it stops the row like any finding, but is not shown, so the cause is reported once."""
        self.add(sheet, row, column, message)
        self._dependent.add(id(self.findings[-1]))

    def shown(self):
        """The findings to report: all but the dependent ones."""
        return [f for f in self.findings if id(f) not in self._dependent]


# Reading the raw sheets ---------------------------------------------------------------------------

def _blank(value):
    return value is None or (isinstance(value, str) and value.strip() == "")


def _clean(value):
    if isinstance(value, str):
        value = value.strip()
        return None if value == "" else value
    return value


def _table(name, label, grid, first_row, collector):
    """A sheet from a grid of cells (list of rows), the header in the first non-empty row."""
    rows = [(first_row + i, r) for i, r in enumerate(grid)]
    rows = [(n, r) for n, r in rows if any(not _blank(c) for c in r)]
    if not rows:
        collector.add(name, None, None, "the sheet is empty; it needs a header row")
        return None
    header_row, header = rows[0]
    columns, positions, state_columns = {}, {}, []
    for index, cell in enumerate(header):
        if _blank(cell):
            continue
        col = canonical(cell)
        if col in columns:
            collector.add(name, header_row, str(cell).strip(), "this column appears twice")
            continue
        columns[col] = str(cell).strip()
        positions[col] = index
        # Free-text and switching columns of the states sheet are not operating states.
        if name == "states" and index > 0 and col not in STATES_TEXT_COLUMNS:
            state_columns.append((col, str(cell).strip()))
    data, examples = [], []
    for number, cells in rows[1:]:
        if is_example_row(cells):
            examples.append(number)
            continue
        values = {col: _clean(cells[i]) if i < len(cells) else None for col, i in positions.items()}
        if name == "states" and header and not _blank(header[0]):
            values["circuit"] = _clean(cells[0]) if cells else None
        data.append((number, values))
    if len(data) > MAX_ROWS:
        collector.add(name, None, None, f"{len(data)} rows is more than the {MAX_ROWS} a plan may "
                      "have; split the plan or remove empty formatted rows")
        return None
    return Sheet(name, label, columns, data, state_columns, examples)


#: The template's worked examples begin their first cell with this (any case, spaces ignored);
#: such rows are never read as data (docs/plan-format.md, docs/robustness.md).
EXAMPLE_MARK = "e.g."
_EXAMPLE = re.compile(r"^\s*e\s*\.\s*g\s*\.", re.I)


def is_example_row(cells) -> bool:
    """Whether a row is one of the template's worked examples: its first cell (column A) is text
    beginning with "e.g."."""
    first = cells[0] if len(cells) else None
    return isinstance(first, str) and _EXAMPLE.match(first) is not None


def _check_zip(path, collector):
    """Refuse, before parsing, what is not a zip or would unpack to far more than a plan needs."""
    try:
        with zipfile.ZipFile(path) as archive:
            members = archive.infolist()
    except (zipfile.BadZipFile, OSError, ValueError):
        collector.add(None, None, None, "this is not an .xlsx workbook (not a zip archive); "
                      "save it from the spreadsheet as .xlsx, or give a folder of .csv sheets")
        return False
    unpacked = sum(m.file_size for m in members)
    packed = max(1, sum(m.compress_size for m in members))
    largest = max(members, key=lambda m: m.file_size, default=None)
    if (unpacked > MAX_UNZIPPED_BYTES or (largest and largest.file_size > MAX_MEMBER_BYTES)
            or (unpacked / packed > MAX_ZIP_RATIO and unpacked > 10e6)):
        collector.add(None, None, None, f"the workbook would unpack to {unpacked / 1e6:.0f} MB "
                      f"from {packed / 1e6:.1f} MB; refused as unsafe (a plan needs at most "
                      f"{MAX_UNZIPPED_BYTES / 1e6:.0f} MB)")
        return False
    return True


def _root_cause(error):
    """The innermost cause of an exception, as one short line."""
    seen = set()
    while (error.__cause__ or error.__context__) and id(error) not in seen:
        seen.add(id(error))
        error = error.__cause__ or error.__context__
    text = str(error).strip().splitlines()[0] if str(error).strip() else ""
    text = text if len(text) <= 120 else text[:117] + "..."
    return f"{error.__class__.__name__}: {text}" if text else error.__class__.__name__


def _read_xlsx(path, collector):
    if not _check_zip(path, collector):
        return {}
    import openpyxl  # with defusedxml installed (a dependency), openpyxl parses XML through it

    try:
        values = openpyxl.load_workbook(path, read_only=False, data_only=True)
        formulas = openpyxl.load_workbook(path, read_only=False, data_only=False)
    except Exception as error:  # noqa: BLE001  damaged or hostile files raise many kinds
        collector.add(None, None, None, f"cannot be read as an .xlsx workbook ({_root_cause(error)})"
                      "; open and save it again in the spreadsheet")
        return {}
    sheets = {}
    for worksheet in values.worksheets:
        name = canonical(worksheet.title)
        if name not in SHEETS:
            continue
        if worksheet.max_row > MAX_ROWS + 100:
            collector.add(name, None, None, f"{worksheet.max_row} rows is more than the {MAX_ROWS} "
                          "a plan may have; delete the empty formatted rows or split the plan")
            continue
        for merged in worksheet.merged_cells.ranges:
            collector.add(name, merged.min_row, str(worksheet.cell(1, merged.min_col).value or
                                                    merged.coord),
                          f"merged cells ({merged.coord}) are not allowed in a plan; unmerge them "
                          "and fill each cell")
        grid = [list(r) for r in worksheet.iter_rows(values_only=True)]
        # Formulas: their saved results are used; one without a saved result cannot be.
        source = formulas[worksheet.title]
        header = grid[0] if grid else []
        for row in source.iter_rows():
            for cell in row:
                if cell.data_type == "f" and grid[cell.row - 1][cell.column - 1] is None:
                    column = header[cell.column - 1] if cell.column - 1 < len(header) else None
                    collector.add(name, cell.row, str(column or cell.coordinate),
                                  f"cell {cell.coordinate} holds a formula ({cell.value}) with no "
                                  "saved result; open and save the workbook in the spreadsheet, "
                                  "or type the value")
        sheet = _table(name, worksheet.title, grid, 1, collector)
        if sheet is not None:
            sheets[name] = sheet
    values.close()
    formulas.close()
    return sheets


def _read_csv_folder(path, collector):
    """Sheets from a folder of CSV files, each separated by , ; or tab (found from its header)."""
    import io

    sheets = {}
    for file in sorted(path.iterdir()):
        if file.suffix.lower() != ".csv" or canonical(file.stem) not in SHEETS:
            continue
        name = canonical(file.stem)
        if file.stat().st_size > MAX_MEMBER_BYTES:
            collector.add(name, None, None, f"{file.name} is {file.stat().st_size / 1e6:.0f} MB, "
                          f"more than a plan's sheet may be ({MAX_MEMBER_BYTES / 1e6:.0f} MB)")
            continue
        try:
            text = file.read_text(encoding="utf-8-sig")
        except UnicodeDecodeError:
            collector.add(name, None, None, f"{file.name} is not UTF-8 text; save it as CSV UTF-8")
            continue
        try:
            separator = _csv_separator(text)
            grid = list(csv.reader(io.StringIO(text, newline=""), delimiter=separator))
        except csv.Error as error:                  # e.g. a cell beyond the csv module's limit
            collector.add(name, None, None, f"{file.name} cannot be read as CSV ({error}); save "
                          "it again from the spreadsheet as CSV")
            continue
        if _header_is_one_column(name, file.name, grid, collector):
            continue
        if separator == ";":
            grid = _decimal_commas(name, grid, collector)
        sheet = _table(name, file.name, grid, 1, collector)
        if sheet is not None:
            sheets[name] = sheet
    return sheets


#: Separators a CSV sheet may use, preferred in this order when the header splits equally.
CSV_SEPARATORS = (",", ";", "\t")
#: Columns holding positions (x, y, z, or routes of them joined by >) and names or free text;
#: in a file separated by ";" the other cells may carry decimal commas.
_POSITION_COLUMNS = ("route", "return_route", "at", "axis")
_TEXT_COLUMNS = ("run", "circuits", "return", "point", "sensor", "kind", "reference_state", "item",
                 "safe_distance_for", "states", "spot", "setting", "circuit", "note", "notes",
                 "comment", "comments")
# A number with a decimal comma and perhaps a unit: 1,5  -0,75  2,5 mm2  0,9 m  1,5e3
_DECIMAL_COMMA = re.compile(r"^(\s*[-+]?\d*),(\d+(?:[eE][-+]?\d+)?"
                            r"\s*(?:[A-Za-z\u00b5\u00b2^'\"]+\d?)?\s*)$")


def _csv_separator(text):
    """The separator of a CSV sheet: whichever of , ; tab splits its header line into most cells."""
    header = next((line for line in text.splitlines() if line.strip()), "")
    counts = [len(next(csv.reader([header], delimiter=d), [])) for d in CSV_SEPARATORS]
    return CSV_SEPARATORS[counts.index(max(counts))]


def _header_is_one_column(name, file_name, grid, collector):
    """A header read as one cell (an unknown separator): one finding saying what was found."""
    header_at = next((i for i, r in enumerate(grid) if any(not _blank(c) for c in r)), None)
    if header_at is None:
        return False
    cells = [c for c in grid[header_at] if not _blank(c)]
    if len(cells) != 1 or canonical(cells[0]) in COLUMNS.get(name, {}).get("known", ("circuit",)):
        return False
    text = cells[0].strip()
    shown = text if len(text) <= 80 else text[:77] + "..."
    marks = [c for c in text if not (c.isalnum() or c.isspace() or c in "_-")]
    found = max(dict.fromkeys(marks), key=marks.count) if marks else None
    if found in CSV_SEPARATORS:
        hint = (f'the file seems to use "{found}" as separator, but the whole header is one quoted '
                "cell; save the sheet again from the spreadsheet as CSV")
    elif found:
        hint = (f'the file seems to use "{found}" as separator; save it with commas, semicolons or '
                "tabs between cells")
    else:
        needs = ", ".join(COLUMNS[name]["required"]) if name in COLUMNS else "circuit and a state"
        hint = (f"the {name} sheet needs the columns {needs}, separated by commas, semicolons "
                "or tabs")
    collector.add(name, header_at + 1, None, f'the header of {file_name} reads as one column '
                  f'"{shown}"; {hint}')
    return True


def _decimal_commas(name, grid, collector):
    """Decimal commas of a sheet separated by ";" turned into points, as docs/robustness.md says.

    Number cells: one comma between digits (1,5 or 2,5 mm2) is a decimal comma. Positions (each
    waypoint): exactly two commas separate x, y, z; with more, the two not between digits
    separate and those between digits are decimal commas (1,2, 0,5, 0,3); a position whose commas
    can be read more than one way is reported, and its row is left out (one finding, not a second
    one for the same cell).
    """
    header_at = next((i for i, r in enumerate(grid) if any(not _blank(c) for c in r)), None)
    if header_at is None:
        return grid
    columns = [canonical(c) if not _blank(c) else None for c in grid[header_at]]
    if name == "states":                            # circuit names, then currents or notes
        columns = ["circuit"] + [None if c is None else c if c in _TEXT_COLUMNS else "current"
                                 for c in columns[1:]]
    out = grid[:header_at + 1]
    for index, cells in enumerate(grid[header_at + 1:], start=header_at + 1):
        row = list(cells)
        for i, cell in enumerate(row):
            column = columns[i] if i < len(columns) else None
            if _blank(cell) or column is None or column in _TEXT_COLUMNS:
                continue
            if column in _POSITION_COLUMNS:
                converted = _decimal_comma_position(cell)
                if converted is None:
                    collector.add(name, index + 1, column, f'"{cell.strip()}" cannot be read as '
                                  'x, y, z: in a file separated by ";" a comma is either a decimal '
                                  "comma or separates coordinates; put a space after each comma "
                                  "between coordinates (1,2, 0,5, 0,3) or write decimal points "
                                  "(1.2, 0.5, 0.3)")
                    row = []
                    break
                row[i] = converted
            else:
                row[i] = _DECIMAL_COMMA.sub(r"\1.\2", cell)
        out.append(row)
    return out


def _decimal_comma_position(text):
    """A position or route with decimal commas written with points; None if it is ambiguous."""
    waypoints = []
    for part in text.split(">"):
        tight = len(re.findall(r"(?<=\d),(?=\d)", part))
        loose = part.count(",") - tight
        if tight == 0 or part.count(",") == 2:
            waypoints.append(part)                  # 1, 2, 3 or 1,2,3 or -1,2,-3 or a point name
        elif loose == 2:
            waypoints.append(re.sub(r"(?<=\d),(?=\d)", ".", part))
        else:
            return None
    return ">".join(waypoints)


# Cell readers -------------------------------------------------------------------------------------

def _number(value, what, collector, sheet, row, column):
    if isinstance(value, (dt.date, dt.datetime, dt.time)):
        shown = value.isoformat()[:10] if isinstance(value, (dt.date, dt.datetime)) else value
        collector.add(sheet, row, column, f"a date or time ({shown}) is not {what}; format the "
                      "cell as a number")
        return None
    if isinstance(value, bool):
        collector.add(sheet, row, column, f'"{value}" is not {what}')
        return None
    try:
        number = float(str(value).strip()) if isinstance(value, str) else float(value)
    except (TypeError, ValueError):
        collector.add(sheet, row, column, f'"{value}" is not {what}')
        return None
    if not math.isfinite(number):
        collector.add(sheet, row, column, f'"{value}" is not {what}')
        return None
    return number


def _length(value, default_unit, collector, sheet, row, column):
    if isinstance(value, (dt.date, dt.datetime, bool)):
        collector.add(sheet, row, column, f'"{value}" is not a length')
        return None
    try:
        return units.parse_length(value, default_unit)
    except units.UnitError as error:
        collector.add(sheet, row, column, str(error))
        return None


def _suggest(word, choices):
    close = difflib.get_close_matches(key(word), [key(c) for c in choices], n=1, cutoff=0.6)
    if not close:
        return ""
    original = next(c for c in choices if key(c) == close[0])
    return f'; did you mean "{original}"?'


def _position(text, points, default_unit, collector, sheet, row, column):
    """A point name or ``x, y, z`` (each may carry a unit)."""
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        collector.add(sheet, row, column, f'"{text}" is not a position; give a point name or x, y, z')
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
            except units.UnitError:
                coords = None
                break
        if coords is not None:
            return np.array(coords)
    collector.add(sheet, row, column, f'"{text}" is neither a point in the points sheet nor '
                  f'x, y, z{_suggest(text, points.names)}')
    return None


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
            collector.add(sheet.name, None, col, f"the required column is missing{hint}")
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
            values[name], rows[name] = row.get("value"), number
            if row.get("note") is not None:
                notes.append((name, str(row["note"])))

    def number(name, low, high, what):
        if values.get(name) is None:
            return None
        got = _number(values[name], what, collector, "site", rows[name], "value")
        if got is not None and not low <= got <= high:
            collector.add("site", rows[name], "value", f"{name} {got:g} is outside {low:g} to {high:g}")
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
        else:
            year, date_text = decimal_year(str(raw_date)), str(raw_date)
    except ValueError:
        collector.add("site", rows.get("date"), "value", f'"{raw_date}" is not a date '
                      "(YYYY-MM-DD or a decimal year such as 2027.5)")
        year, date_text = decimal_year(dt.date.today()), dt.date.today().isoformat()
    if horizontal is None and not WMM_VALID_FROM <= year <= WMM_VALID_UNTIL:
        collector.add("site", rows.get("date"), "value" if "date" in rows else None,
                      f"{year:.2f} is outside the validity of WMM-2025 ({WMM_VALID_FROM:.1f}-"
                      f"{WMM_VALID_UNTIL:.1f}); give the site's field from a measurement or a "
                      "current model instead")
    places = tuple(p for p in (_place(number, value, note, collector)
                               for number, value, note in place_rows) if p is not None)
    return Site(unit, latitude, longitude, year, date_text, altitude, horizontal, vertical,
                tuple(notes), places=places)


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
            value = _length(row[axis], unit, collector, "points", number, axis)
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
    {circuit key: (switching, note, row)})."""
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
        values = []
        for col, label in sheet.state_columns:
            cell = row.get(col)
            values.append(0.0 if cell is None else
                          _number(cell, "a current in amperes", collector, "states", number, label))
        # A bad cell is reported above; the circuit stays known so runs naming it find it.
        currents[key(circuit)] = np.array([0.0 if v is None else v for v in values], dtype=float)
        names[key(circuit)] = str(circuit)
        switching = _choice(row.get("switching"), SWITCHING, "with states", collector, "states",
                            number, "switching", "a way of switching")
        details[key(circuit)] = (switching, str(row.get("note") or ""), number)
    return currents, states, names, details


def _unique_name(row, column, what, seen, collector, sheet, number):
    """The row's name in ``column``, or None with a finding when it is blank or taken already.

    ``seen`` holds the keys of the names met so far in the sheet; the name is added to it.
    """
    name = row.get(column)
    if name is None:
        collector.add(sheet, number, column, f"the {what} has no name")
        return None
    if key(name) in seen:
        collector.add(sheet, number, column, f'"{name}" is named twice')
        return None
    seen.add(key(name))
    return str(name)


def _choice(value, choices, default, collector, sheet, row, column, what):
    """One of ``choices`` (case and spaces ignored), the default when blank, else a finding."""
    if value is None:
        return default
    wanted = key(value).replace(" ,", ",")
    for choice in choices:
        if key(choice) == wanted or key(choice).replace(",", "") == wanted.replace(",", ""):
            return choice
    collector.add(sheet, row, column, f'"{value}" is not {what}; expected one of '
                  f'{", ".join(choices)}{_suggest(str(value), choices)}')
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
            given = "nothing" if kind is None else f'"{row.get("return")}"'
            collector.add("runs", number, "return", f"{given} is not a return kind; expected one of "
                          f'{", ".join(RETURN_KINDS)}{_suggest(kind or "", RETURN_KINDS)}')
        size_label, radius, default_spacing, bare = None, 0.0, None, None
        if row.get("size") is not None:
            try:
                size_label, bare, outer = units.conductor_size(row["size"])
                radius, default_spacing = outer / 2, outer
            except units.UnitError as error:
                collector.add("runs", number, "size", str(error))
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
                                "current_a")
                run_current = np.array([value if value is not None else 0.0])
        elif row.get("circuits") is None:
            collector.add("runs", number, "circuits", "name the circuit(s) this run carries, "
                          "separated by ;")
        else:
            circuits = tuple(c.strip() for c in str(row["circuits"]).split(";") if c.strip())
            for circuit in circuits:
                if key(circuit) not in circuit_currents:
                    collector.add("runs", number, "circuits", f'circuit "{circuit}" is not in the '
                                  f"states sheet{_suggest(circuit, list(circuit_names.values()))}")
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
            collector.add("runs", number, "route", "the route has no length (all waypoints coincide)")
            continue
        segments = _segment_estimate(geometry, length)
        if segments > MAX_SEGMENTS_PER_RUN:
            collector.add("runs", number, "lay", f"a twisted run of {length:.1f} m with a "
                          f"{lay * 1000:.1f} mm lay needs {segments:,.0f} segments, more than the "
                          f"{MAX_SEGMENTS_PER_RUN:,} a run may have; check the lay and the route")
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
    if text is None:
        collector.add("runs", row, column, "the route is empty; give waypoints separated by >")
        return None
    waypoints = []
    for part in str(text).split(">"):
        if not part.strip():
            collector.add("runs", row, column, "an empty waypoint (two > in a row, or one at an end)")
            return None
        position = _position(part, points, unit, collector, "runs", row, column)
        if position is None:
            return None
        waypoints.append(position)
    if len(waypoints) < 2:
        collector.add("runs", row, column, "a route needs at least two waypoints, separated by >")
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
            collector.add(sheet, row, column, f'"{part.strip()}" is not a state'
                          f"{_suggest(part, states)}")
        elif matches[0] not in found:
            found.append(matches[0])
    return tuple(found)


def _read_equipment(sheet, site, points, states, collector):
    items = []
    if sheet is None or not _check_columns(sheet, collector):
        return items
    for number, row in sheet.rows:
        bad = len(collector.findings)
        name = row.get("item") or f"row {number}"
        position = None
        if row.get("at") is None:
            collector.add("equipment", number, "at", "where is it? give a point name or x, y, z")
        else:
            position = _position(row["at"], points, site.units, collector, "equipment", number, "at")
        safe = safe_for = moment = axis = None
        if row.get("safe_distance") is not None:
            safe = _length(row["safe_distance"], site.units, collector, "equipment", number,
                           "safe_distance")
            safe_for = key(row.get("safe_distance_for") or "")
            if safe_for not in SAFE_DISTANCE_FOR:
                collector.add("equipment", number, "safe_distance_for", "say which compass the "
                              "label is for: standard or steering (IEC 60945)")
            if safe is not None and safe <= 0:
                collector.add("equipment", number, "safe_distance", "must be more than zero")
        elif row.get("moment_am2") is not None:
            moment = _number(row["moment_am2"], "a magnetic moment in A·m²", collector, "equipment",
                             number, "moment_am2")
            if row.get("axis") is not None:
                parts = str(row["axis"]).split(",")
                try:
                    axis = np.array([float(p) for p in parts])
                    if axis.shape != (3,) or not np.linalg.norm(axis) > 0:
                        raise ValueError
                    axis = axis / np.linalg.norm(axis)
                except ValueError:
                    collector.add("equipment", number, "axis", f'"{row["axis"]}" is not a direction '
                                  "x, y, z (blank: the worst orientation)")
        else:
            collector.add("equipment", number, "safe_distance", "give safe_distance (from the "
                          "label) or moment_am2")
        present = _state_list(row.get("states"), states, collector, "equipment", number,
                              "states")
        if len(collector.findings) == bad:
            items.append(Equipment(str(name), position, safe, safe_for, moment, axis, present,
                                   str(row.get("note") or ""), number))
    return items


def _for_sensor(value, sensors, collector, sheet, row):
    """The sensor a for_sensor cell names (None: blank or all, every sensor); a finding if unknown.

    Returns (name or None, ok).
    """
    if value is None or key(value) == "all":
        return None, True
    names = [s.name for s in sensors]
    match = next((n for n in names if key(n) == key(value)), None)
    if match is None:
        collector.add(sheet, row, "for_sensor", f'"{value}" is not a sensor in the sensors sheet '
                      f"(blank or all: every sensor){_suggest(str(value), names)}")
        return None, False
    return match, True


def _read_spots(sheet, site, points, sensors, collector):
    spots = []
    if sheet is None or not _check_columns(sheet, collector):
        return spots
    for number, row in sheet.rows:
        if row.get("at") is None:
            collector.add("spots", number, "at", "where is it? give a point name or x, y, z")
            continue
        position = _position(row["at"], points, site.units, collector, "spots", number, "at")
        owner, ok = _for_sensor(row.get("for_sensor"), sensors, collector, "spots", number)
        if position is not None and ok:
            spots.append(CandidateSpot(str(row.get("spot") or f"row {number}"), position, owner))
    return spots


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


def _check_sensors_outside_conductors(plan, collector):
    from .physics.field import point_segment_distance

    conductors = conductors_of(plan)
    if not len(conductors) or not plan.sensors:
        return
    positions = np.array([s.position_m for s in plan.sensors])
    distance = point_segment_distance(conductors.start_m, conductors.end_m, positions)
    inside = distance <= conductors.radius_m[None, :]
    for i, sensor in enumerate(plan.sensors):
        if not inside[i].any():
            continue
        s = int(np.argmax(inside[i]))
        run = plan.runs[conductors.run_index[s]]
        collector.add("sensors", sensor.row, "at", f'sensor "{sensor.name}" lies inside run '
                      f'"{run.name}" ({distance[i, s] * 1000:.1f} mm from a conductor\'s axis, '
                      f"radius {conductors.radius_m[s] * 1000:.1f} mm); move the sensor or the run")


def read_plan(path) -> Plan:
    """Read and validate a plan (.xlsx workbook or folder of .csv sheets).

    Raises
    ------
    PlanError
        With every finding, each naming the file, sheet, row and column.
    """
    path = Path(path)
    collector = _Collector(str(path))
    if not path.exists():
        raise PlanError([Finding(str(path), None, None, None, "no such file or folder")])
    if path.suffix.lower() in (".xls", ".ods", ".numbers"):     # .numbers may be a folder
        raise PlanError([Finding(str(path), None, None, None, "a plan is an .xlsx workbook or a "
                                 f"folder of .csv sheets, not an {path.suffix} file; save it as "
                                 ".xlsx (Excel workbook) or as CSV sheets")])
    if path.is_dir():
        sheets = _read_csv_folder(path, collector)
    elif path.suffix.lower() in (".xlsx", ".xlsm"):
        sheets = _read_xlsx(path, collector)
    else:
        raise PlanError([Finding(str(path), None, None, None, "a plan is an .xlsx workbook or a "
                                 "folder of .csv sheets (site.csv, runs.csv, ...)")])
    return _plan_from_sheets(sheets, str(path), collector)


def plan_from_tables(tables, source="<tables>") -> Plan:
    """Make and validate a plan from tables given in Python.

    Parameters
    ----------
    tables : mapping of sheet name to table
        Each table is a pandas DataFrame, a list of dicts (one per row), or a list of rows whose
        first row is the header, in the layout of the workbook (docs/plan-format.md).
    source : str
        What findings name as the file.

    Raises
    ------
    PlanError
        With every finding, located by sheet, row and column (rows counted as in a workbook:
        the header is row 1).
    """
    collector = _Collector(source)
    sheets = {}
    for label, table in tables.items():
        name = canonical(label)
        if name not in SHEETS:
            continue
        sheet = _table(name, str(label), _grid(table), 1, collector)
        if sheet is not None:
            sheets[name] = sheet
    return _plan_from_sheets(sheets, source, collector)


def _grid(table):
    """A table as a header row and value rows."""
    if hasattr(table, "columns") and hasattr(table, "itertuples"):        # a DataFrame
        rows = [list(table.columns)] + [list(r) for r in table.itertuples(index=False)]
        return [[None if _missing(v) else v for v in row] for row in rows]
    table = list(table)
    if table and isinstance(table[0], dict):
        header = list(dict.fromkeys(k for row in table for k in row))
        return [header] + [[row.get(k) for k in header] for row in table]
    return [list(row) for row in table]


def _missing(value):
    return isinstance(value, float) and math.isnan(value)


def _plan_from_sheets(sheets, source, collector) -> Plan:
    if collector.findings and not sheets:
        raise PlanError(collector.findings)
    reported = {f.sheet for f in collector.findings}
    for name in REQUIRED_SHEETS:
        if name not in sheets and name not in reported:
            collector.add(name, None, None, "the sheet is missing")
    site = _read_site(sheets.get("site"), collector)
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
                item_notes=_item_notes(sheets))
    if not collector.findings:
        _check_measured_currents(plan, collector)
    if not collector.findings:
        _check_sensors_outside_conductors(plan, collector)
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
