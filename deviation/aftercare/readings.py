"""Reading the sheets filled in after installation (switch-on readings, swing readings)."""

from __future__ import annotations

import csv
import difflib
import math
import re
import zipfile
from dataclasses import dataclass
from pathlib import Path

from ..plan import Finding, name_key
from .common import MAX_ROWS, MAX_WORKBOOK_BYTES, ReadingsError


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


