"""Every table the tool reads, read one way: plan sheets, switch-on readings and swing readings.

A sheet comes from a folder of .csv files, a single .csv file, an .xlsx workbook, or (from the
library) a table given in Python. Whatever the source, the same rules hold, and each problem is
a located :class:`~deviation.plan.Finding` (docs/robustness.md, "Reading files"):

- Only regular files are read: a FIFO, a device or a folder in a sheet's place is a finding,
  never a read that hangs or fills memory. A sheet that is a link leading out of the plan's
  folder is not read (a finding that names no content). Every file is read with its size capped
  while reading, not only from what the file system reports.
- A CSV sheet's separator is found from its header (comma, semicolon or tab); in a sheet
  separated by semicolons, decimal commas are read.
- A workbook is checked as a zip before it is parsed (the limit that refuses it is the one
  named), then opened read-only and only the sheets asked for are parsed, one by one.
- A cell holding a control character, a cell the spreadsheet turned into a date where no date
  belongs, and a spreadsheet error value (``#REF!``) are findings at their cell. Later findings
  at a cell already reported are kept back, so one cause gives one finding.

Nothing here raises for bad input: findings are collected and the caller decides when to stop.
"""

from __future__ import annotations

import csv
import datetime as dt
import difflib
import io
import math
import os
import re
import stat
import unicodedata
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import Problem
from .plan import Finding
from .schema import STATES_TEXT_COLUMNS

#: Data rows a sheet may have (a wiring plan has hundreds, not millions; so has a test sheet).
MAX_ROWS = 20_000
#: Cells of a row that are read; a plan's widest sheet has about 15 columns.
MAX_COLUMNS = 200
#: Largest .csv sheet, and largest part of a workbook once unpacked [bytes] (a plan of 20 000
#: rows is a few MB).
MAX_SHEET_BYTES = 50_000_000
#: Largest workbook file, and largest total of its parts once unpacked [bytes].
MAX_WORKBOOK_BYTES = 100_000_000
#: Largest ratio of unpacked to packed size of a workbook above ``RATIO_FLOOR_BYTES``: saved
#: workbooks compress their XML about 5 to 20 times (common practice, no source); a zip bomb
#: expands thousands of times.
MAX_ZIP_RATIO = 200
RATIO_FLOOR_BYTES = 10_000_000

#: Spreadsheet error values a formula leaves in its cell (as openpyxl reads them, and as a
#: spreadsheet writes them to CSV).
SPREADSHEET_ERRORS = ("#NULL!", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#N/A",
                      "#GETTING_DATA", "#SPILL!", "#CALC!", "#FIELD!", "#BLOCKED!", "#UNKNOWN!")

# NUL cannot pass Python 3.10's csv module; it is carried through as U+FFFE (a noncharacter, never
# in text a spreadsheet writes) and reported as NUL at its cell.
_NUL_STANDIN = "\ufffe"


# Names -------------------------------------------------------------------------------------------

def plan_canonical(name) -> str:
    """A plan's sheet and column names: case-insensitive, surrounding spaces ignored, inner
    spaces as _."""
    return re.sub(r"[\s_]+", "_", str(name).strip().lower())


def readings_canonical(name) -> str:
    """A readings sheet's names: case, units in brackets, spaces, hyphens and _ ignored."""
    text = re.sub(r"\[[^\]]*\]|\([^)]*\)", " ", str(name))
    return re.sub(r"[\s_\-]+", "_", text.strip().lower()).strip("_")


# Text that is text -------------------------------------------------------------------------------

def _is_control(char: str) -> bool:
    code = ord(char)
    if char in "\t\n\r":
        return False                # a cell may hold tabs and line breaks (Alt+Enter)
    return (code < 0x20 or 0x7F <= code <= 0x9F or char == _NUL_STANDIN
            or 0x202A <= code <= 0x202E or 0x2066 <= code <= 0x2069)   # bidi overrides


_CONTROL_NAMES = {0x00: "NUL", 0x07: "BEL", 0x08: "BS", 0x0B: "VT", 0x0C: "FF", 0x1B: "ESC",
                  0x7F: "DEL", 0x9B: "CSI"}


def control_characters(text: str) -> list[str]:
    """The distinct control characters of ``text`` (tab, line feed and carriage return are not)."""
    return list(dict.fromkeys(c for c in text if _is_control(c)))


def describe_character(char: str) -> str:
    """A character as a reader can name it: ``ESC (U+001B)``."""
    code = 0 if char == _NUL_STANDIN else ord(char)
    name = _CONTROL_NAMES.get(code) or unicodedata.name(char, "") or "control character"
    return f"{name} (U+{code:04X})"


def visible(text) -> str:
    """Text to quote in a message: control characters shown as ``\\x1b``, never sent raw."""
    out = []
    for char in str(text):
        if char == _NUL_STANDIN:
            out.append("\\x00")
        elif _is_control(char):
            out.append(f"\\x{ord(char):02x}" if ord(char) < 0x100 else f"\\u{ord(char):04x}")
        else:
            out.append(char)
    return "".join(out)


#: Dashes a word processor or a spreadsheet puts where a minus sign belongs; none of them is
#: read as a minus.
DASHES = "\u2212\u2010\u2011\u2012\u2013\u2014\ufe63\uff0d"


def dash_hint(value) -> str | None:
    """Why a number with a dash in it did not read: the dash is not the minus sign (None when
    there is no such dash)."""
    found = next((c for c in str(value) if c in DASHES), None)
    if found is None:
        return None
    return (f'"{visible(value)}" has a {unicodedata.name(found).lower()} (U+{ord(found):04X}), '
            'which is not read as a minus; type the minus as "-" (the hyphen-minus key)')


def without_controls(text: str) -> str:
    return "".join(c for c in text if not _is_control(c))


def missing(value) -> bool:
    """A value that stands for an empty cell: None, NaN, pandas' NA and NaT (one rule for
    DataFrames, lists of dicts and lists of rows; docs/api.md)."""
    if value is None:
        return True
    if isinstance(value, float):
        return math.isnan(value)
    return type(value).__name__ in ("NAType", "NaTType") or (
        type(value).__name__ == "datetime64" and str(value) == "NaT")


# Findings ----------------------------------------------------------------------------------------

class Collector:
    """The findings of one input, in the order met.

    A finding at a cell already reported (a control character, a date the spreadsheet made) is
    kept back, as is one added with :meth:`add_dependent`: it stops its row like any finding but
    is not shown, so each cause is reported once.
    """

    def __init__(self, file):
        self.file = str(file)
        self.findings: list[Finding] = []
        self._dependent: set[int] = set()
        self._reported_cells: set[tuple] = set()

    def add(self, sheet, row, column, message, kind=None):
        self.findings.append(Finding(self.file, sheet, row, column, message, kind))
        if (sheet, row, column) in self._reported_cells:
            self._dependent.add(id(self.findings[-1]))

    def add_dependent(self, sheet, row, column, message, kind=None):
        """A problem that only follows from one reported elsewhere (a row using a bad point)."""
        self.add(sheet, row, column, message, kind)
        self._dependent.add(id(self.findings[-1]))

    def cell_reported(self, sheet, row, *columns):
        """Mark a cell as reported: later findings there are kept back."""
        for column in columns:
            self._reported_cells.add((sheet, row, column))

    def keep_back_since(self, count):
        """Keep back every finding added after the first ``count`` (they follow from one
        already reported)."""
        self._dependent.update(id(f) for f in self.findings[count:])

    def shown(self) -> list[Finding]:
        """The findings to report: all but the dependent ones."""
        return [f for f in self.findings if id(f) not in self._dependent]


# Files -------------------------------------------------------------------------------------------

def _kind_of_file(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def _inside(path: Path, folder: Path) -> bool:
    try:
        path.resolve(strict=True).relative_to(folder.resolve(strict=True))
    except ValueError:
        return False
    return True


def read_bytes(path, collector, sheet, limit, *, folder=None, what="sheet"):
    """The bytes of a regular file, at most ``limit`` of them; None with a finding otherwise.

    ``folder``, if given, is the plan's folder: a file reached through a link that leaves it is
    not read. An error of the file system itself (permission denied, an I/O error) is raised as
    :class:`OSError`: the file could not be read, which is not a fault of the plan.
    """
    path = Path(path)
    name = path.name
    try:
        info = os.stat(path)                 # follows links; does not open, so never blocks
    except FileNotFoundError:
        if path.is_symlink():
            collector.add(sheet, None, None, f"{name} is a link to nothing (its target is "
                          "missing); not read", Problem.FILE)
            return None
        raise
    except (RuntimeError, OSError):           # a loop of links
        if path.is_symlink():
            collector.add(sheet, None, None, f"{name} is a link that cannot be followed (a loop "
                          "of links); not read", Problem.FILE)
            return None
        raise
    if folder is not None and path.is_symlink() and not _inside(path, folder):
        collector.add(sheet, None, None, f"{name} is a link to a file outside the plan's folder; "
                      f"it was not read (copy the {what} into the folder)", Problem.FILE)
        return None
    if not stat.S_ISREG(info.st_mode):
        collector.add(sheet, None, None, f"{name} is {_kind_of_file(info.st_mode)}, not a file; "
                      f"a {what} must be a file", Problem.FILE)
        return None
    if info.st_size > limit:
        collector.add(sheet, None, None, f"{name} is {info.st_size / 1e6:.0f} MB, more than the "
                      f"{limit / 1e6:.0f} MB a {what} may be", Problem.FILE)
        return None
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) | \
        getattr(os, "O_BINARY", 0)
    descriptor = os.open(path, flags)
    with os.fdopen(descriptor, "rb", buffering=0) as handle:
        # Checked again on what was opened: the path may have changed since the stat.
        opened = os.fstat(handle.fileno())
        if not stat.S_ISREG(opened.st_mode):
            collector.add(sheet, None, None, f"{name} is {_kind_of_file(opened.st_mode)}, not a "
                          f"file; a {what} must be a file", Problem.FILE)
            return None
        chunks, size = [], 0
        while size <= limit:                 # the cap holds while reading, whatever st_size said
            chunk = handle.read(min(1 << 20, limit + 1 - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    if size > limit:
        collector.add(sheet, None, None, f"{name} is more than the {limit / 1e6:.0f} MB a {what} "
                      "may be", Problem.FILE)
        return None
    return b"".join(chunks)


# CSV ---------------------------------------------------------------------------------------------

#: Separators a CSV sheet may use, preferred in this order when the header splits equally.
CSV_SEPARATORS = (",", ";", "\t")
#: Columns holding positions (x, y, z, or routes of them joined by >) and names or free text;
#: in a file separated by ";" the other cells may carry decimal commas.
POSITION_COLUMNS = ("route", "return_route", "at", "axis", "from", "to")
TEXT_COLUMNS = ("run", "circuits", "return", "point", "sensor", "kind", "reference_state", "item",
                "safe_distance_for", "states", "spot", "setting", "circuit", "note", "notes",
                "comment", "comments", "state", "volume", "for_sensor", "used_in",
                "measured_currents", "switching", "lie")
# A number with a decimal comma and perhaps a unit: 1,5  -0,75  2,5 mm2  0,9 m  1,5e3
_DECIMAL_COMMA = re.compile(r"^(\s*[-+]?\d*),(\d+(?:[eE][-+]?\d+)?"
                            r"\s*(?:[A-Za-z\u00b5\u00b2\u00b0^'\"]+\d?)?\s*)$")


def csv_grid(data: bytes, name: str, label: str, collector, canonical, known_columns=()):
    """The rows of a CSV sheet from its bytes, or None with a finding.

    ``name`` is the sheet's canonical name (findings name it), ``label`` the file name;
    ``known_columns`` the sheet's column names, to tell a one-column header from a wrong
    separator.
    """
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        collector.add(name, None, None, f"{label} is not UTF-8 text; save it as CSV UTF-8",
                      Problem.FILE)
        return None
    text = text.replace("\x00", _NUL_STANDIN)
    separator = _csv_separator(text)
    limit = csv.field_size_limit()
    try:
        csv.field_size_limit(MAX_SHEET_BYTES)      # a long route is one long cell
        grid = list(csv.reader(io.StringIO(text, newline=""), delimiter=separator))
    except csv.Error as error:
        collector.add(name, None, None, f"{label} cannot be read as CSV ({error}); save it again "
                      "from the spreadsheet as CSV", Problem.FILE)
        return None
    finally:
        csv.field_size_limit(limit)
    if _header_is_one_column(name, label, grid, collector, canonical, known_columns):
        return None
    if separator == ";":
        grid = _decimal_commas(name, grid, collector, canonical)
    return grid


def _csv_separator(text):
    """The separator of a CSV sheet: whichever of , ; tab splits its header line into most cells."""
    header = next((line for line in text.splitlines() if line.strip()), "")
    counts = [len(next(csv.reader([header], delimiter=d), [])) for d in CSV_SEPARATORS]
    return CSV_SEPARATORS[counts.index(max(counts))]


def _blank(value):
    return value is None or (isinstance(value, str) and value.strip() == "")


def _header_is_one_column(name, label, grid, collector, canonical, known_columns):
    """A header read as one cell (an unknown separator): one finding saying what was found."""
    header_at = next((i for i, r in enumerate(grid) if any(not _blank(c) for c in r)), None)
    if header_at is None:
        return False
    cells = [c for c in grid[header_at] if not _blank(c)]
    if len(cells) != 1 or canonical(cells[0]) in known_columns:
        return False
    text = cells[0].strip()
    shown = visible(text if len(text) <= 80 else text[:77] + "...")
    marks = [c for c in text if not (c.isalnum() or c.isspace() or c in "_-")]
    found = max(dict.fromkeys(marks), key=marks.count) if marks else None
    if found in CSV_SEPARATORS:
        hint = (f'the file seems to use "{visible(found)}" as separator, but the whole header is '
                "one quoted cell; save the sheet again from the spreadsheet as CSV")
    elif found:
        hint = (f'the file seems to use "{visible(found)}" as separator; save it with commas, '
                "semicolons or tabs between cells")
    else:
        needs = ", ".join(known_columns) if known_columns else "its columns"
        hint = (f"the {name} sheet needs the columns {needs}, separated by commas, semicolons "
                "or tabs")
    collector.add(name, header_at + 1, None, f'the header of {label} reads as one column '
                  f'"{shown}"; {hint}', Problem.FILE)
    return True


def _decimal_commas(name, grid, collector, canonical):
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
        columns = ["circuit"] + [None if c is None else c if c in TEXT_COLUMNS else "current"
                                 for c in columns[1:]]
    out = grid[:header_at + 1]
    for index, cells in enumerate(grid[header_at + 1:], start=header_at + 1):
        row = list(cells)
        for i, cell in enumerate(row):
            column = columns[i] if i < len(columns) else None
            if _blank(cell) or column is None or column in TEXT_COLUMNS:
                continue
            if column in POSITION_COLUMNS:
                converted = _decimal_comma_position(cell)
                if converted is None:
                    collector.add(name, index + 1, column, f'"{visible(cell.strip())}" cannot be '
                                  'read as x, y, z: in a file separated by ";" a comma is either a '
                                  "decimal comma or separates coordinates; put a space after each "
                                  "comma between coordinates (1,2, 0,5, 0,3) or write decimal "
                                  "points (1.2, 0.5, 0.3)", Problem.NOT_A_VALUE)
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


# Sources: a folder, a file, a workbook -----------------------------------------------------------

@dataclass
class Raw:
    """A sheet as found: its canonical name, its label (file name or sheet title) and its rows."""

    name: str
    label: str
    grid: list


@dataclass
class Found:
    """The sheets read from a source, and the names of the others there (to suggest from)."""

    sheets: dict = field(default_factory=dict)      # canonical name -> Raw
    others: list = field(default_factory=list)      # labels of sheets or files not asked for


def read_folder(path, wanted, collector, canonical, known_columns=None, *, what="sheet"):
    """The sheets ``wanted`` (canonical names) from a folder of .csv files."""
    path = Path(path)
    found = Found()
    labels: dict[str, str] = {}
    for file in sorted(path.iterdir()):
        if file.suffix.lower() != ".csv":
            continue
        name = canonical(file.stem)
        if name not in wanted:
            found.others.append(file.name)
            continue
        if name in labels:
            collector.add(name, None, None, f"two files are the {name} sheet: {labels[name]} and "
                          f"{file.name}; keep one", Problem.DUPLICATE)
            continue
        labels[name] = file.name
        data = read_bytes(file, collector, name, MAX_SHEET_BYTES, folder=path, what=what)
        if data is None:
            continue
        grid = csv_grid(data, name, file.name, collector, canonical,
                        (known_columns or {}).get(name, ()))
        if grid is not None:
            found.sheets[name] = Raw(name, file.name, grid)
    return found


def read_csv_file(path, name, collector, canonical, known_columns=(), *, what="sheet"):
    """One .csv file read as the sheet ``name`` whatever the file is called."""
    path = Path(path)
    found = Found()
    data = read_bytes(path, collector, name, MAX_SHEET_BYTES, what=what)
    if data is not None:
        grid = csv_grid(data, name, path.name, collector, canonical, known_columns)
        if grid is not None:
            found.sheets[name] = Raw(name, path.name, grid)
    return found


def _check_zip(archive_bytes, collector):
    """Refuse, before parsing, what is not a zip or would unpack to far more than a plan needs;
    the finding names the limit that refuses it."""
    try:
        with zipfile.ZipFile(io.BytesIO(archive_bytes)) as archive:
            members = archive.infolist()
    except (zipfile.BadZipFile, OSError, ValueError, EOFError):
        collector.add(None, None, None, "this is not an .xlsx workbook (not a zip archive); "
                      "save it from the spreadsheet as .xlsx, or give a folder of .csv sheets",
                      Problem.FILE)
        return False
    unpacked = sum(m.file_size for m in members)
    packed = max(1, sum(m.compress_size for m in members))
    largest = max(members, key=lambda m: m.file_size, default=None)
    opening = f"the workbook would unpack to {unpacked / 1e6:.0f} MB from {packed / 1e6:.1f} MB"
    if largest is not None and largest.file_size > MAX_SHEET_BYTES:
        why = (f"one part ({visible(largest.filename)}) would be {largest.file_size / 1e6:.0f} "
               f"MB, more than the {MAX_SHEET_BYTES / 1e6:.0f} MB a sheet may be")
    elif unpacked > MAX_WORKBOOK_BYTES:
        why = f"more than the {MAX_WORKBOOK_BYTES / 1e6:.0f} MB a workbook may unpack to"
    elif unpacked > RATIO_FLOOR_BYTES and unpacked / packed > MAX_ZIP_RATIO:
        why = (f"{unpacked / packed:.0f} times its packed size, more than the {MAX_ZIP_RATIO} "
               "times a saved workbook ever expands")
    else:
        return True
    collector.add(None, None, None, f"{opening}; refused as unsafe: {why}", Problem.FILE)
    return False


def _root_cause(error):
    """The innermost cause of an exception, as one short line."""
    seen = set()
    while (error.__cause__ or error.__context__) and id(error) not in seen:
        seen.add(id(error))
        error = error.__cause__ or error.__context__
    text = str(error).strip().splitlines()[0] if str(error).strip() else ""
    text = visible(text if len(text) <= 120 else text[:117] + "...")
    return f"{error.__class__.__name__}: {text}" if text else error.__class__.__name__


_MERGED = re.compile(rb'<(?:\w+:)?mergeCell\b[^>]*\bref="([A-Z]{1,3})(\d+):([A-Z]{1,3})(\d+)"')


def _merged_ranges(archive, member):
    """(first column letters, first row, last column letters, last row) of each merged range in a
    sheet's XML; the mergeCells element follows the sheet's data."""
    try:
        info = archive.getinfo(member)
    except KeyError:
        return []
    if info.file_size > MAX_SHEET_BYTES:
        return []
    data = archive.read(member)
    tail = data[max(0, data.rfind(b"</sheetData>")):]
    return [(a.decode(), int(b), c.decode(), int(d)) for a, b, c, d in _MERGED.findall(tail)]


def read_workbook(path, wanted, collector, canonical, *, any_single=None, what="plan"):
    """The sheets ``wanted`` from an .xlsx workbook, opened read-only; only they are parsed.

    ``any_single``, if given, is the name under which a workbook of one sheet is read whatever
    that sheet is called. Formulas without a saved result and merged cells are findings.
    """
    found = Found()
    data = read_bytes(path, collector, None, MAX_WORKBOOK_BYTES, what="workbook")
    if data is None or not _check_zip(data, collector):
        return found
    import openpyxl  # with defusedxml installed (a dependency), openpyxl parses XML through it

    buffer = io.BytesIO(data)
    try:
        values = openpyxl.load_workbook(buffer, read_only=True, data_only=True)
    except Exception as error:  # noqa: BLE001  damaged or hostile files raise many kinds
        collector.add(None, None, None, f"cannot be read as an .xlsx workbook ({_root_cause(error)})"
                      "; open and save it again in the spreadsheet", Problem.FILE)
        return found
    formulas = None
    try:
        worksheets = list(values.worksheets)
        titles: dict[str, str] = {}
        for worksheet in worksheets:
            name = canonical(worksheet.title)
            if name not in wanted and not (any_single and len(worksheets) == 1):
                found.others.append(worksheet.title)
                continue
            name = name if name in wanted else any_single
            if name in titles:
                collector.add(name, None, None, f'two sheets are the {name} sheet: '
                              f'"{visible(titles[name])}" and "{visible(worksheet.title)}"; '
                              "keep one", Problem.DUPLICATE)
                continue
            titles[name] = worksheet.title
            try:
                grid = _worksheet_grid(worksheet, name, collector)
                if grid is None:
                    continue
                if formulas is None:
                    formulas = openpyxl.load_workbook(io.BytesIO(data), read_only=True,
                                                      data_only=False)
                _formulas_without_results(formulas[worksheet.title], grid, name, collector)
                with zipfile.ZipFile(io.BytesIO(data)) as archive:
                    merged = _merged_ranges(archive, worksheet._worksheet_path)
            except Exception as error:  # noqa: BLE001  a damaged sheet raises many kinds
                collector.add(name, None, None, f"the sheet cannot be read ({_root_cause(error)}); "
                              "open and save the workbook again in the spreadsheet", Problem.FILE)
                continue
            header = grid[0] if grid else []
            for first_col, first_row, _last_col, _last_row in merged:
                index = _column_index(first_col)
                column = header[index - 1] if index - 1 < len(header) else None
                collector.add(name, first_row, visible(column or f"{first_col}{first_row}").strip(),
                              f"merged cells ({first_col}{first_row}:{_last_col}{_last_row}) are "
                              "not allowed in a plan; unmerge them and fill each cell",
                              Problem.NOT_A_VALUE)
            found.sheets[name] = Raw(name, worksheet.title, grid)
    finally:
        values.close()
        if formulas is not None:
            formulas.close()
    return found


def _column_index(letters):
    index = 0
    for letter in letters:
        index = index * 26 + ord(letter) - 64
    return index


def _worksheet_grid(worksheet, name, collector):
    """The rows of a read-only worksheet, at most ``MAX_ROWS`` + 100 of them and ``MAX_COLUMNS``
    cells each (whatever size the sheet claims)."""
    worksheet.reset_dimensions()         # a claimed size is not trusted: rows as stored
    grid = []
    for number, row in enumerate(worksheet.iter_rows(values_only=True), start=1):
        if number > MAX_ROWS + 100:
            collector.add(name, None, None, f"more than {MAX_ROWS + 100} rows; a sheet may have "
                          f"{MAX_ROWS}: delete the empty formatted rows or split the plan",
                          Problem.TOO_LARGE)
            return None
        grid.append([_unescaped(v) if isinstance(v, str) else v for v in row[:MAX_COLUMNS]])
    return grid


# A spreadsheet saves a control character in a cell as the escape _xHHHH_ (ECMA-376 Part 1,
# 22.9.2.19 ST_Xstring), which openpyxl leaves as it is; read as the character it stands for, it
# is found like any other control character.
_OOXML_CONTROL = re.compile(r"_x(00[01][0-9A-Fa-f]|007[Ff]|00[89][0-9A-Fa-f])_")


def _unescaped(text):
    return _OOXML_CONTROL.sub(lambda m: chr(int(m.group(1), 16)), text)


def _formulas_without_results(worksheet, grid, name, collector):
    """A formula whose result the spreadsheet did not save reads as a blank: a finding instead."""
    worksheet.reset_dimensions()
    header = grid[0] if grid else []
    for r, row in enumerate(worksheet.iter_rows(values_only=True), start=1):
        if r > len(grid):
            break
        for c, formula in enumerate(row[:MAX_COLUMNS], start=1):
            if (isinstance(formula, str) and formula.startswith("=")
                    and (c > len(grid[r - 1]) or grid[r - 1][c - 1] is None)):
                column = header[c - 1] if c - 1 < len(header) else None
                where = f"{_column_letters(c)}{r}"
                collector.add(name, r, visible(column or where).strip(), f"cell {where} holds a formula "
                              f"({visible(formula)}) with no saved result; open and save the "
                              "workbook in the spreadsheet, or type the value", Problem.NOT_A_VALUE)


def _column_letters(index):
    letters = ""
    while index:
        index, rest = divmod(index - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


# Tables from Python ------------------------------------------------------------------------------

def grid_from_table(table, name, collector):
    """A table given in Python (a DataFrame, a list of dicts, a list of rows whose first row is
    the header) as rows of cells; None with a finding for anything else.

    Missing values (None, NaN, pandas' NA and NaT) are blank cells, in every kind of table alike.
    NumPy scalars are read as the Python numbers they hold.
    """
    if hasattr(table, "columns") and hasattr(table, "itertuples"):        # a DataFrame
        rows = [list(table.columns)] + [list(r) for r in table.itertuples(index=False)]
    elif isinstance(table, (str, bytes)) or not _is_sequence(table):
        collector.add(name, None, None, f"a table is a DataFrame, a list of dicts or a list of "
                      f"rows (the header first), not {_a(table)}", Problem.NOT_A_VALUE)
        return None
    else:
        table = list(table)
        if table and all(isinstance(row, dict) for row in table):
            header = list(dict.fromkeys(k for row in table for k in row))
            rows = [header] + [[row.get(k) for k in header] for row in table]
        else:
            rows = []
            for number, row in enumerate(table, start=1):
                if isinstance(row, (str, bytes, dict)) or not _is_sequence(row):
                    collector.add(name, number, None, f"a row is a list of cells, not "
                                  f"{_a(row)}", Problem.NOT_A_VALUE)
                    return None
                rows.append(list(row))
    return [[_plain(value) for value in row] for row in rows]


def _is_sequence(value):
    return hasattr(value, "__iter__") and hasattr(value, "__len__")


def _a(value):
    kind = type(value).__name__
    return f"an {kind}" if kind[:1].lower() in "aeiou" else f"a {kind}"


def _plain(value):
    """A cell as a plain Python value: missing values blank, NumPy scalars as Python numbers."""
    if missing(value):
        return None
    if isinstance(value, np.generic):
        return value.item()
    return value


# Sheets ------------------------------------------------------------------------------------------

@dataclass
class Sheet:
    """One sheet, its header read: the columns and the data rows (examples left out)."""

    name: str
    label: str
    columns: dict            # canonical column -> header text
    rows: list               # (row number, {canonical column: value})
    state_columns: list      # for the states sheet: (canonical, header text) in order
    examples: list = field(default_factory=list)   # row numbers of template examples, skipped


#: The template's worked examples begin their first cell with this (any case, spaces ignored);
#: such rows are never read as data (docs/plan-format.md, docs/robustness.md).
EXAMPLE_MARK = "e.g."
_EXAMPLE = re.compile(r"^\s*e\s*\.\s*g\s*\.", re.I)


def is_example_row(cells) -> bool:
    """Whether a row is one of the template's worked examples: its first cell (column A) is text
    beginning with "e.g."."""
    first = cells[0] if len(cells) else None
    return isinstance(first, str) and _EXAMPLE.match(first) is not None


def _clean(value):
    if isinstance(value, str):
        value = value.strip()
        return None if value == "" else value
    return value


def table(name, label, grid, collector, canonical=plan_canonical, *, first_row=1,
          date_columns=(), free_text=lambda column: False):
    """A sheet from a grid of cells (list of rows), the header in the first non-empty row.

    Every cell is looked at once here: a control character (replaced by nothing, so messages can
    quote the rest), a date where ``date_columns`` does not allow one (made blank), and a
    spreadsheet error value (made blank) are each a finding at the cell, and later findings
    there are kept back. ``free_text(column)`` says whether a column holds free text (notes, and
    columns the reader does not know), where a date or an error value is only text.
    Returns None (with a finding) for an empty sheet or one of more than ``MAX_ROWS`` rows.
    """
    rows = [(first_row + i, [_plain(c) for c in r]) for i, r in enumerate(grid)]
    rows = [(n, r) for n, r in rows if any(not _blank(c) for c in r)]
    if not rows:
        collector.add(name, None, None, "the sheet is empty; it needs a header row", Problem.MISSING)
        return None
    if len(rows) - 1 > MAX_ROWS:
        collector.add(name, None, None, f"{len(rows) - 1} rows is more than the {MAX_ROWS} a sheet "
                      "may have; split the plan or delete the empty formatted rows",
                      Problem.TOO_LARGE)
        return None
    header_row, header = rows[0]
    columns, positions, state_columns = {}, {}, []
    for index, cell in enumerate(header):
        if _blank(cell):
            continue
        text = str(cell).strip()
        bad = control_characters(text)
        if bad:
            collector.add(name, header_row, visible(text), _control_message(bad),
                          Problem.CONTROL_CHARACTER)
            text = without_controls(text).strip()
        col = canonical(text)
        if col in columns:
            collector.add(name, header_row, text, "this column appears twice", Problem.DUPLICATE)
            continue
        columns[col] = text
        positions[col] = index
        # Free-text and switching columns of the states sheet are not operating states.
        if name == "states" and index > 0 and col not in STATES_TEXT_COLUMNS:
            state_columns.append((col, text))
    if name == "states" and header and not _blank(header[0]):
        positions.setdefault("circuit", 0)
    data, examples = [], []
    for number, cells in rows[1:]:
        if is_example_row(cells):
            examples.append(number)
            continue
        values = {}
        for col, i in positions.items():
            value = _clean(cells[i]) if i < len(cells) else None
            values[col] = _looked_at(value, name, number, col, columns.get(col, col), collector,
                                     col in date_columns, free_text(col))
        data.append((number, values))
    return Sheet(name, label, columns, data, state_columns, examples)


def _control_message(characters):
    named = ", ".join(describe_character(c) for c in characters[:3])
    if len(characters) == 1:
        return (f"the cell holds a control character, {named}, which a plan never needs; delete "
                "it (it can come from text copied out of a terminal or another program)")
    return (f"the cell holds control characters, {named}, which a plan never needs; delete them "
            "(they can come from text copied out of a terminal or another program)")


def _looked_at(value, sheet, row, column, label, collector, date_ok, text):
    # text: the column is free text, where a date or an error value is only text
    """A cell after the checks every cell gets (see :func:`table`)."""
    if isinstance(value, str):
        bad = control_characters(value)
        if bad:
            collector.add(sheet, row, label, _control_message(bad), Problem.CONTROL_CHARACTER)
            collector.cell_reported(sheet, row, column, label)
            value = _clean(without_controls(value))
        if value is not None and not text and value.strip().upper() in SPREADSHEET_ERRORS:
            collector.add(sheet, row, label, f"the cell holds the spreadsheet error "
                          f"{value.strip().upper()}: a formula there failed; correct it, or type "
                          "the value", Problem.NOT_A_VALUE)
            collector.cell_reported(sheet, row, column, label)
            return None
        return value
    if isinstance(value, (dt.datetime, dt.date, dt.time)) and not (date_ok or text):
        collector.add(sheet, row, label, spreadsheet_date_message(value), Problem.SPREADSHEET_DATE)
        collector.cell_reported(sheet, row, column, label)
        return None
    return value


def spreadsheet_date_message(value) -> str:
    """The finding for a cell the spreadsheet turned into a date or a time."""
    if isinstance(value, dt.time) or (isinstance(value, dt.datetime) and value.year < 1901):
        shown, what = (value.isoformat() if isinstance(value, dt.time)
                       else value.time().isoformat()), "a time"
    else:
        shown, what = value.isoformat()[:10], "a date"
    return (f"the spreadsheet turned this cell into {what} ({shown}); format the cell as text "
            "(or as a number) and type the value again")


# Sheets that are missing -------------------------------------------------------------------------

def closest_sheet(wanted: str, others, canonical=plan_canonical) -> str | None:
    """Of the sheets or files not read, the one most probably meant as ``wanted``: one whose name
    holds it as a word ("Cable runs" for runs), else a close spelling ("sensor" for sensors)."""
    stems = {other: canonical(Path(other).stem if other.lower().endswith(".csv") else other)
             for other in others}
    for other, stem in stems.items():
        words = re.split(r"[\W_]+", stem)
        if wanted in words or wanted.rstrip("s") in words:
            return other
    close = difflib.get_close_matches(wanted, list(stems.values()), n=1, cutoff=0.7)
    if close:
        return next(o for o, s in stems.items() if s == close[0])
    return None


def missing_sheet_message(wanted: str, others, canonical=plan_canonical, *, file_word="sheet"):
    """'the sheet is missing', with the sheet probably meant where there is one."""
    other = closest_sheet(wanted, others, canonical)
    if other is None:
        return "the sheet is missing"
    if other.lower().endswith(".csv"):
        return (f'the sheet is missing; found a file named "{visible(other)}": did you mean '
                f"{wanted}.csv? (rename it)")
    return (f'the sheet is missing; found a {file_word} named "{visible(other)}": did you mean '
            f"{wanted}? (rename it)")
