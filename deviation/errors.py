"""The library's own errors: one base type, so a caller can catch everything the tool reports.

Errors and findings carry where they belong as values (sheet, row, column) and what is wrong
(:class:`Problem`), so no code has to search a message's words to place it.
"""

from __future__ import annotations

import enum


class Problem(str, enum.Enum):
    """What is wrong with an input, whatever the words of its message."""

    MISSING = "missing"                      # a required sheet, column or cell is blank
    NOT_A_VALUE = "not a value"              # the cell cannot be read as what its column holds
    OUT_OF_RANGE = "out of range"            # a number beyond what physics or the column allows
    UNKNOWN_NAME = "unknown name"            # names something the plan does not have
    DUPLICATE = "duplicate"                  # a name, column or sheet given twice
    INCONSISTENT = "inconsistent"            # values that contradict each other
    CONTROL_CHARACTER = "control character"  # ESC, BEL, NUL and the like in a cell
    SPREADSHEET_DATE = "spreadsheet date"    # the spreadsheet turned the cell into a date
    FILE = "file"                            # the file is not a sheet that can be read
    TOO_LARGE = "too large"                  # beyond a documented limit of size


class DeviationError(Exception):
    """Base of every error the library raises on purpose; its message says what to do.

    ``sheet``, ``row`` and ``column`` say which input the error belongs to and ``kind`` what
    is wrong with it, where that is known (None otherwise).
    """

    sheet: str | None = None
    row: int | None = None
    column: str | None = None
    kind: Problem | None = None


class InputError(DeviationError, ValueError):
    """A value given to the library (a sensor or state name, a setting) that cannot be used."""

    def __init__(self, message: str, *, sheet: str | None = None, row: int | None = None,
                 column: str | None = None, kind: Problem | None = None):
        self.sheet, self.row, self.column, self.kind = sheet, row, column, kind
        super().__init__(message)


class UnknownSensorError(DeviationError, LookupError):
    """A sensor name that is not in the plan."""

    column = "sensor"
    kind = Problem.UNKNOWN_NAME

    def __init__(self, name: str, known: tuple[str, ...]):
        self.name = name
        self.known = known
        listed = ", ".join(known) if known else "none"
        super().__init__(f'no sensor "{name}" in the plan; it has: {listed}')
