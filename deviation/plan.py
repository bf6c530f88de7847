"""The validated wiring plan: plain dataclasses in SI units, made once by the reader."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .routing import RunGeometry

SENSOR_KINDS = ("magnetic compass", "electronic compass", "magnetometer")
SAFE_DISTANCE_FOR = ("standard", "steering")
DEFAULT_STATE = "as planned"


@dataclass(frozen=True)
class Finding:
    """One problem in a plan, located by file, sheet, row and column."""

    file: str
    sheet: str | None
    row: int | None
    column: str | None
    message: str

    def __str__(self):
        where = [self.sheet] if self.sheet else []
        if self.row is not None:
            where.append(f"row {self.row}")
        place = " ".join(where)
        if self.column:
            place = f"{place}, {self.column}" if place else self.column
        return f"{self.file}: {place}: {self.message}" if place else f"{self.file}: {self.message}"


class PlanError(Exception):
    """A plan with problems; ``findings`` lists all of them."""

    def __init__(self, findings):
        self.findings = list(findings)
        super().__init__("\n".join(str(f) for f in self.findings))


@dataclass(frozen=True)
class Site:
    units: str
    latitude_deg: float | None
    longitude_deg: float | None
    decimal_year: float
    date_text: str
    altitude_m: float
    horizontal_ut: float | None       # override of the model, e.g. measured on site
    vertical_ut: float | None


@dataclass(frozen=True)
class Run:
    name: str
    circuits: tuple
    geometry: RunGeometry
    size: str | None
    note: str
    row: int


@dataclass(frozen=True)
class Sensor:
    name: str
    position_m: np.ndarray
    kind: str
    budget_deg: float
    reference_state: str | None
    max_heel_deg: float
    note: str
    row: int


@dataclass(frozen=True)
class Equipment:
    name: str
    position_m: np.ndarray
    safe_distance_m: float | None
    safe_distance_for: str | None
    moment_am2: float | None
    axis: np.ndarray | None           # unit vector, or None for the worst orientation
    states: tuple | None              # None: present in every state
    note: str
    row: int

    def present_in(self, state):
        return self.states is None or state in self.states


@dataclass
class Plan:
    source: str
    site: Site
    points: dict
    runs: list
    state_names: list
    run_currents_a: np.ndarray        # (R, K) amperes of each run in each state
    sensors: list
    equipment: list = field(default_factory=list)
    spots: list = field(default_factory=list)   # (name, (3,) position) candidates to rank
    conductors: object = None         # the routed runs (routing.Conductors), made once by the reader

    @property
    def imperial(self):
        return self.site.units in ("ft", "in")
