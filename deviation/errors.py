"""The library's own errors: one base type, so a caller can catch everything the tool reports."""

from __future__ import annotations


class DeviationError(Exception):
    """Base of every error the library raises on purpose; its message says what to do."""


class UnknownSensorError(DeviationError, LookupError):
    """A sensor name that is not in the plan."""

    def __init__(self, name: str, known: tuple[str, ...]):
        self.name = name
        self.known = known
        listed = ", ".join(known) if known else "none"
        super().__init__(f'no sensor "{name}" in the plan; it has: {listed}')
