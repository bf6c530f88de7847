"""Reading the sheets filled in after installation (switch-on readings, swing readings), through
the one reader of every sheet (:mod:`deviation.sheets`)."""

from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Literal, overload

from ..errors import Problem
from ..plan import Finding, name_key
from ..sheets import (
    Collector,
    closest_sheet,
    dash_hint,
    read_csv_file,
    read_folder,
    read_workbook,
    readings_canonical,
    table,
    visible,
)
from .common import MAX_READ_DEVIATION_DEG, ReadingsError

canonical = readings_canonical


@dataclass(frozen=True)
class Table:
    """One sheet: its header (canonical name -> header text) and rows (row number, values)."""

    file: str
    sheet: str
    columns: dict
    rows: tuple

    def finding(self, row, column, message, kind=None) -> Finding:
        return Finding(self.file, self.sheet, row, self.columns.get(column, column), message, kind)


@overload
def read_table(path, names, *, required: Literal[True] = ..., any_single: bool = ...) -> Table: ...


@overload
def read_table(path, names, *, required: bool, any_single: bool = ...) -> Table | None: ...


def read_table(path, names, *, required=True, any_single=False):
    """A sheet named one of ``names`` from a .csv file, a folder of .csv sheets or a workbook.

    Read by the plan's own reader (:mod:`deviation.sheets`): the same separator and
    decimal-comma detection, the same limits (regular files only, sizes capped while reading,
    a workbook read-only and only this sheet parsed) and the same located findings (control
    characters, cells the spreadsheet turned into dates).

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
    OSError
        When the file system refuses to read a file (permission denied, an I/O error).
    """
    path = Path(path)
    file = str(path)
    wanted = [canonical(n) for n in names]
    collector = Collector(file)
    if not path.exists() and not path.is_symlink():
        raise ReadingsError([Finding(file, None, None, None, "no such file or folder",
                                     Problem.FILE)])
    suffix = path.suffix.lower()
    if path.is_dir():
        found = read_folder(path, set(wanted), collector, canonical)
    elif suffix == ".csv":
        found = read_csv_file(path, wanted[0], collector, canonical)
    elif suffix in (".xlsx", ".xlsm"):
        found = read_workbook(path, set(wanted), collector, canonical,
                              any_single=wanted[0] if any_single else None)
    else:
        raise ReadingsError([Finding(file, None, None, None, "readings are an .xlsx workbook, "
                                     "a .csv file or a folder of .csv sheets", Problem.FILE)])
    raw = next((found.sheets[n] for n in wanted if n in found.sheets), None)
    if raw is None:
        if collector.findings:
            raise ReadingsError(collector.shown())
        if not required:
            return None
        other = closest_sheet(wanted[0], found.others, canonical)
        hint = f'; found "{visible(other)}": did you mean {names[0]}? (rename it)' if other else ""
        if path.is_dir():
            message = f"no sheet {names[0]!r} here (a file {wanted[0]}.csv){hint}"
        else:
            have = ", ".join(visible(o) for o in found.others) or "no sheets"
            message = f"no sheet {names[0]!r} in the workbook (it has: {have}){hint}"
        raise ReadingsError([Finding(file, None, None, None, message, Problem.MISSING)])
    sheet = table(raw.label, raw.label, raw.grid, collector, canonical,
                  free_text=lambda column: column in _NOTE_COLUMNS)
    if collector.findings or sheet is None:
        raise ReadingsError(collector.shown())
    return Table(file, raw.label, sheet.columns, tuple(sheet.rows))


_NOTE_COLUMNS = ("note", "notes", "comment", "comments")


def _number(table, row, column, value, what, findings, low=None, high=None):
    if value is None:
        return None
    limits = "" if low is None else f" ({low:g} to {high:g})"
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        findings.append(table.finding(row, column, f'"{visible(value)}" is not {what}{limits}',
                                      Problem.NOT_A_VALUE))
        return None
    try:
        number = float(value.replace("°", "").strip()) if isinstance(value, str) else float(value)
    except (ValueError, OverflowError):
        findings.append(table.finding(row, column, dash_hint(value) or f'"{visible(value)}" is '
                                      f"not {what}{limits}", Problem.NOT_A_VALUE))
        return None
    if not math.isfinite(number) or (low is not None and number < low) or (
            high is not None and number > high):
        findings.append(table.finding(row, column, f'"{visible(value)}" is not {what}{limits}',
                                      Problem.OUT_OF_RANGE if math.isfinite(number)
                                      else Problem.NOT_A_VALUE))
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
            findings.append(table.finding(row, column, dash_hint(value) or f'"{visible(value)}" is '
                                          "not a deviation (degrees, east positive, or e.g. 3.5E, "
                                          "2W)", Problem.NOT_A_VALUE))
            return None
        number = float(match.group(1))
        if match.group(2):
            if number < 0:
                findings.append(table.finding(row, column, f'"{visible(value)}": give a sign or '
                                                            "E/W, not both", Problem.NOT_A_VALUE))
                return None
            number = number if match.group(2).upper() == "E" else -number
    else:
        number = _number(table, row, column, value, "a deviation in degrees", findings)
        if number is None:
            return None
    if abs(number) > MAX_READ_DEVIATION_DEG:
        findings.append(table.finding(row, column, f'"{visible(value)}" is not a deviation a '
                                      f"compass shows (at most {MAX_READ_DEVIATION_DEG:g} degrees "
                                      "either way; rule of thumb, no published source); check the "
                                      "reading", Problem.OUT_OF_RANGE))
        return None
    return number


def _suggest(word, choices):
    keys = {name_key(c): c for c in choices}
    close = difflib.get_close_matches(name_key(word), list(keys), n=1, cutoff=0.6)
    return f'; did you mean "{keys[close[0]]}"?' if close else ""


def _state_named(plan, text):
    return next((s for s in plan.state_names if name_key(s) == name_key(text)), None)


