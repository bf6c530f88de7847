"""A sensor's budget as a value with its unit, and the status of a figure held against it.

A heading sensor (a magnetic compass, an electronic compass, a vector magnetometer used for
heading) is judged in degrees of deviation; a total-field (scalar) magnetometer in nanotesla of
total-field error. Every figure held against a budget, every share of it, the spot search, the
card, the tables and the JSON follow the budget's unit; nothing stands in for a missing one.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass


class Unit(str, enum.Enum):
    """The unit a budget, and every figure held against it, is in."""

    DEGREES = "deg"
    NANOTESLA = "nT"

    @property
    def symbol(self) -> str:
        """As printed after a number: ``°`` (no space) or `` nT``."""
        return "°" if self is Unit.DEGREES else " nT"

    @property
    def label(self) -> str:
        """As printed in a column heading: ``°`` or ``nT``."""
        return "°" if self is Unit.DEGREES else "nT"


@dataclass(frozen=True)
class Budget:
    """What a sensor may take from the plan's wiring and equipment: a value and its unit."""

    value: float
    unit: Unit

    def __post_init__(self):
        if not self.value > 0:
            raise ValueError(f"a budget is more than zero, got {self.value!r}")
        object.__setattr__(self, "unit", Unit(self.unit))

    @property
    def degrees(self) -> bool:
        """Judged in degrees of deviation (a heading sensor)."""
        return self.unit is Unit.DEGREES

    def share(self, figure: float) -> float:
        """``figure`` (in this budget's unit) as a share of the budget."""
        return float(figure) / self.value

    def __str__(self) -> str:
        return f"{self.value:g}{self.unit.symbol}"


class Status(str, enum.Enum):
    """Where a held figure stands against its budget.

    ``NOT_USED``: a state the sensor is not relied on in (its figure is shown, never held);
    ``OVERWHELMED``: the disturbance reaches the Earth's horizontal field, so a heading sensor can
    point anywhere (always over budget).
    """

    WITHIN = "within"
    OVER = "over"
    OVERWHELMED = "overwhelmed"
    NOT_USED = "not used"

    @property
    def fails(self) -> bool:
        """Counts against the sensor's verdict."""
        return self in (Status.OVER, Status.OVERWHELMED)


def status_of(used: bool, within: bool, overwhelmed: bool) -> Status:
    """The status of a figure: not used, overwhelmed, within or over."""
    if not used:
        return Status.NOT_USED
    if overwhelmed:
        return Status.OVERWHELMED
    return Status.WITHIN if within else Status.OVER
