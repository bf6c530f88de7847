"""The validated wiring plan: a plain, frozen value in SI units.

The reader makes a :class:`Plan` once, at the edge; everything after it only reads it. A what-if
plan is made with :func:`dataclasses.replace` and is a new value: routing and every figure are
computed from the plan that is passed, never cached on an old one (see :func:`conductors_of`).
"""

from __future__ import annotations

import math
import weakref
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from .constants import DEFAULT_INVERTER_EFFICIENCY, MAX_DC_VOLTAGE_V
from .errors import DeviationError, InputError, Problem, UnknownSensorError
from .physics.loads import dc_current_a, pvwatts_idle_share
from .physics.routing import RunGeometry
from .quantities import Budget
from .schema import SAFE_DISTANCE_FOR, SENSOR_KINDS  # noqa: F401  (re-exported)

if TYPE_CHECKING:
    from .physics.routing import Conductors

DEFAULT_STATE = "as planned"


def frozen_array(values, dtype=float) -> np.ndarray:
    """A read-only copy, so a frozen plan cannot be changed through its arrays."""
    array = np.array(values, dtype=dtype)
    array.flags.writeable = False
    return array


def _freeze(obj, *names):
    for name in names:
        value = getattr(obj, name)
        if value is not None:
            object.__setattr__(obj, name, frozen_array(value))


def name_key(name) -> str:
    """Names of runs, points, circuits, states, sensors compare case- and space-insensitively."""
    return " ".join(str(name).split()).lower()


@dataclass(frozen=True)
class Finding:
    """One problem in a plan or a readings sheet, located by file, sheet, row and column.

    ``kind`` says what is wrong (:class:`~deviation.errors.Problem`; None where no kind is
    given), so code can act on a finding without reading its message.
    """

    file: str
    sheet: str | None
    row: int | None
    column: str | None
    message: str
    kind: Problem | None = None

    def __str__(self):
        where = [self.sheet] if self.sheet else []
        if self.row is not None:
            where.append(f"row {self.row}")
        place = " ".join(where)
        if self.column:
            place = f"{place}, {self.column}" if place else self.column
        return f"{self.file}: {place}: {self.message}" if place else f"{self.file}: {self.message}"


class PlanError(DeviationError):
    """A plan with problems; ``findings`` lists all of them, each located.

    With a single finding, the error's own ``sheet``, ``row``, ``column`` and ``kind`` are that
    finding's.
    """

    def __init__(self, findings):
        self.findings = tuple(findings)
        if len(self.findings) == 1:
            only = self.findings[0]
            self.sheet, self.row, self.column, self.kind = (only.sheet, only.row, only.column,
                                                            only.kind)
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
    notes: tuple[tuple[str, str], ...] = ()   # (setting, note) as the plan gave them
    # Further places of the operating area: (name, latitude_deg, longitude_deg), from the site
    # sheet's "place" rows; the area command evaluates the plan at each of them too.
    places: tuple[tuple[str, float, float], ...] = ()
    # Who and what the reports are for (the site sheet's vessel, owner and installer rows).
    vessel: str | None = None
    owner: str | None = None
    installer: str | None = None
    # What the plan is for (schema.PROFILES): "general", or "aviation" (the card in 30 degree
    # steps with the placard's conditions, the 10 degree limit, the swing triggers of aircraft).
    profile: str = "general"

    @property
    def aviation(self) -> bool:
        return self.profile == "aviation"


@dataclass(frozen=True)
class Inverter:
    """An inverter feeding a circuit's AC load from the DC system, as the plan gives it.

    ``efficiency`` and ``idle_w`` [W] are None where the plan leaves them blank; the defaults
    then count (:attr:`Circuit.efficiency`, :attr:`Circuit.idle_w`).
    """

    efficiency: float | None = None
    idle_w: float | None = None


def valid_voltage(voltage_v) -> bool:
    """A DC voltage a circuit may have: more than 0 and at most MAX_DC_VOLTAGE_V [V]."""
    return (voltage_v is not None and math.isfinite(voltage_v)
            and 0.0 < voltage_v <= MAX_DC_VOLTAGE_V)


@dataclass(frozen=True)
class Circuit:
    """A circuit: its current in every operating state, and how it switches.

    ``switching`` is "with states" (the current is what the state column says), "independent"
    (the load may be on or off on top of any state, at the current its cell gives in that state),
    or "independent reversing" (on either way round, or off).

    A load may be given in watts (``power_w``, NaN in the states given in amperes or left
    blank) on a circuit of DC voltage ``voltage_v``, straight from the DC system or, for an AC
    load, through an ``inverter``. The plan keeps the watts as written; ``currents_a`` is then
    worked out from them here (:func:`deviation.physics.loads.dc_current_a`), so a plan made with
    ``dataclasses.replace`` at another voltage carries the currents of that voltage. A circuit
    through an inverter draws nothing where its cell is blank (the inverter off) and its idle
    draw wherever a power is given, 0 W included.
    """

    name: str
    currents_a: np.ndarray            # (K,) amperes in each state (DC side)
    switching: str = "with states"
    note: str = ""
    row: int | None = None
    power_w: np.ndarray | None = None   # (K,) [W] as given; NaN where given in A or blank
    voltage_v: float | None = None      # the circuit's DC voltage [V]
    inverter: Inverter | None = None    # an AC load fed through an inverter

    def __post_init__(self):
        _freeze(self, "currents_a", "power_w")
        if self.power_w is None or not valid_voltage(self.voltage_v):
            return                        # no watts, or a finding (consistency_findings)
        given = np.isfinite(self.power_w)
        watts = np.where(given, self.power_w, 0.0)
        derived = dc_current_a(watts, self.voltage_v, self.efficiency, self.idle_w, on=given)
        if self.inverter is None:
            derived = np.where(given, derived, np.asarray(self.currents_a, dtype=float))
        object.__setattr__(self, "currents_a", frozen_array(derived))

    @property
    def in_watts(self) -> bool:
        """Some state's load is given in watts."""
        return self.power_w is not None and bool(np.isfinite(self.power_w).any())

    @property
    def efficiency(self) -> float:
        """The efficiency that counts: the inverter's as given, else the default; 1 for DC."""
        if self.inverter is None:
            return 1.0
        given = self.inverter.efficiency
        return DEFAULT_INVERTER_EFFICIENCY if given is None else given

    @property
    def idle_w(self) -> float:
        """The inverter's idle draw that counts [W]: as given, else the PVWatts curve's draw at
        zero output for an inverter rated at the circuit's largest load; 0 for DC."""
        if self.inverter is None:
            return 0.0
        if self.inverter.idle_w is not None:
            return self.inverter.idle_w
        watts = np.abs(self.power_w[np.isfinite(self.power_w)]) if self.power_w is not None \
            else np.zeros(0)
        return float(watts.max() if len(watts) else 0.0) * pvwatts_idle_share()

    @property
    def independent(self) -> bool:
        return self.switching != "with states"

    def at_voltage(self, voltage_v: float) -> Circuit:
        """The same circuit on another DC voltage (its loads in watts drawn at that voltage)."""
        return replace(self, voltage_v=float(voltage_v)) if self.in_watts else self

    @property
    def reversing(self) -> bool:
        return self.switching == "independent reversing"


@dataclass(frozen=True)
class StateCondition:
    """What an operating state stands for on a placard (the conditions sheet): the engines, the
    generator and the radio receivers, each one of the schema's words or None where not said."""

    state: str
    engines: str | None = None        # schema.ENGINES: running, stopped
    generator: str | None = None      # schema.GENERATOR: charging, not charging
    radios: str | None = None         # schema.RADIOS: on, off
    note: str = ""
    row: int | None = None


@dataclass(frozen=True)
class Run:
    name: str
    circuits: tuple[str, ...]
    geometry: RunGeometry
    size: str | None
    note: str
    row: int | None
    lie: str = "not known"            # paired runs: how the two conductors lie


@dataclass(frozen=True)
class Sensor:
    name: str
    position_m: np.ndarray
    kind: str
    budget: Budget                    # degrees for heading sensors, nT for a total-field one
    reference_state: str | None
    max_heel_deg: float
    note: str
    row: int | None
    max_pitch_deg: float = 0.0
    used_in: tuple[str, ...] | None = None   # states it is relied on in; None: every state
    # Electronic sensors: (3, 3) rows are the sensor's own x, y, z axes as unit vectors in the
    # vessel frame (b_sensor = axes @ b_vessel); None: the vessel's axes. axes_text as given.
    axes: np.ndarray | None = None
    axes_text: str | None = None
    # Currents its host measures for compensation: ("total",) or circuit names; None: none.
    measured_currents: tuple[str, ...] | None = None

    def __post_init__(self):
        _freeze(self, "position_m", "axes")

    def used_in_state(self, state: str) -> bool:
        return self.used_in is None or state in self.used_in


@dataclass(frozen=True)
class Equipment:
    name: str
    position_m: np.ndarray
    safe_distance_m: float | None
    safe_distance_for: str | None
    moment_am2: float | None
    axis: np.ndarray | None           # unit vector, or None for the worst orientation
    states: tuple[str, ...] | None    # None: present in every state
    note: str
    row: int | None

    def __post_init__(self):
        _freeze(self, "position_m", "axis")

    def present_in(self, state: str) -> bool:
        return self.states is None or state in self.states


@dataclass(frozen=True)
class CandidateSpot:
    name: str
    position_m: np.ndarray
    for_sensor: str | None = None     # the sensor it is a candidate for; None: every sensor

    def __post_init__(self):
        _freeze(self, "position_m")

    def is_for(self, sensor_name: str) -> bool:
        return self.for_sensor is None or name_key(self.for_sensor) == name_key(sensor_name)


@dataclass(frozen=True)
class Volume:
    """A box of the volumes sheet: where a sensor may be mounted, or must not be.

    ``kind`` is "mount in" (spots only inside such boxes, where the sensor has any) or "keep out"
    (never a spot inside). The box is closed: its faces count as inside. A box may be flat in
    one axis (a shelf's top, a bulkhead's face).
    """

    name: str
    kind: str
    low_m: np.ndarray                 # (3,) the corner of least x, y, z
    high_m: np.ndarray                # (3,) the opposite corner
    for_sensor: str | None = None     # None: every sensor
    note: str = ""
    row: int | None = None

    def __post_init__(self):
        _freeze(self, "low_m", "high_m")

    def is_for(self, sensor_name: str) -> bool:
        return self.for_sensor is None or name_key(self.for_sensor) == name_key(sensor_name)

    def contains(self, points_m, tolerance_m: float = 1e-9) -> np.ndarray:
        """(P,) True for the points [m] inside the closed box (within ``tolerance_m``)."""
        points = np.asarray(points_m, dtype=float).reshape(-1, 3)
        return np.all((points >= self.low_m - tolerance_m) & (points <= self.high_m + tolerance_m),
                      axis=1)


@dataclass(frozen=True, eq=False)
class Plan:
    """A validated plan. Frozen, and compared by identity: a changed plan is a new value.

    Attributes
    ----------
    circuits : tuple of Circuit
        Every circuit with its current per state. A plan without a states sheet has one circuit
        per run, named after the run.
    runs : tuple of Run
        Each run names the circuits it carries; its current is their sum.
    """

    source: str
    site: Site
    points: tuple[tuple[str, np.ndarray], ...]
    runs: tuple[Run, ...]
    state_names: tuple[str, ...]
    circuits: tuple[Circuit, ...]
    sensors: tuple[Sensor, ...]
    equipment: tuple[Equipment, ...] = ()
    spots: tuple[CandidateSpot, ...] = ()
    circuits_from_runs: bool = False  # no states sheet: each run is its own circuit
    notes: dict = field(default_factory=dict, compare=False)  # sheet -> free-text column titles
    volumes: tuple[Volume, ...] = ()  # boxes to mount in or keep out of (the volumes sheet)
    #: (sheet, row) of the template's example rows left in the plan; they were not read.
    skipped_examples: tuple[tuple[str, int], ...] = ()
    #: Notes of items that carry none themselves: {"points"/"spots": {name key: note}}.
    item_notes: dict = field(default_factory=dict, compare=False)
    #: What each state stands for on a placard (the conditions sheet); states not named: none.
    conditions: tuple[StateCondition, ...] = ()

    def __post_init__(self):
        for name in ("runs", "state_names", "circuits", "sensors", "equipment", "spots",
                     "points", "conditions"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
        findings = consistency_findings(self)
        if findings:
            raise PlanError(findings)

    def __repr__(self) -> str:
        count = [f"{len(self.runs)} run{'s' * (len(self.runs) != 1)}",
                 f"{len(self.circuits)} circuit{'s' * (len(self.circuits) != 1)}",
                 f"{len(self.state_names)} state{'s' * (len(self.state_names) != 1)}",
                 f"{len(self.sensors)} sensor{'s' * (len(self.sensors) != 1)}"]
        if self.equipment:
            count.append(f"{len(self.equipment)} equipment item"
                         f"{'s' * (len(self.equipment) != 1)}")
        return f"<Plan {self.source!r}: {', '.join(count)}>"

    def _repr_html_(self) -> str:
        import html

        rows = "".join(
            f"<tr><td>{html.escape(s.name)}</td><td>{html.escape(s.kind)}</td>"
            f"<td>{html.escape(str(s.budget))}</td>"
            f"<td>{html.escape(s.reference_state or '')}</td></tr>" for s in self.sensors)
        states = ", ".join(html.escape(s) for s in self.state_names)
        return (f"<p><b>Plan</b> {html.escape(self.source)}: {len(self.runs)} runs, "
                f"{len(self.circuits)} circuits, states: {states}</p>"
                "<table><tr><th>sensor</th><th>kind</th><th>budget</th>"
                f"<th>reference state</th></tr>{rows}</table>")

    def to_tables(self) -> dict:
        """The plan as pandas DataFrames, one per sheet, in the workbook's layout and the plan's
        own units and names (what ``new --from`` writes); ``plan_from_tables`` reads them back to
        the same plan. Sheets with no rows are left out."""
        import pandas

        from .template import plan_rows

        return {sheet: pandas.DataFrame(rows[1:], columns=rows[0])
                for sheet, rows in plan_rows(self).items() if len(rows) > 1}

    @property
    def imperial(self) -> bool:
        return self.site.units in ("ft", "in")

    def sensor(self, name: str) -> Sensor:
        """The sensor of this name (case and spaces ignored), or :class:`UnknownSensorError`."""
        for sensor in self.sensors:
            if name_key(sensor.name) == name_key(name):
                return sensor
        raise UnknownSensorError(name, tuple(s.name for s in self.sensors))

    def state_index(self, state: str) -> int:
        return self.state_names.index(state)

    def condition(self, state: str) -> StateCondition | None:
        """What the state stands for on a placard, or None where the plan does not say."""
        return next((c for c in self.conditions if c.state == state), None)

    @property
    def in_watts(self) -> bool:
        """Some circuit's load is given in watts."""
        return any(c.in_watts for c in self.circuits)

    @property
    def circuit_matrix(self) -> np.ndarray:
        """(R, C) incidence: 1 where run r carries circuit c."""
        index = {name_key(c.name): i for i, c in enumerate(self.circuits)}
        matrix = np.zeros((len(self.runs), len(self.circuits)))
        for r, run in enumerate(self.runs):
            for name in run.circuits:
                matrix[r, index[name_key(name)]] += 1.0
        return matrix

    @property
    def circuit_currents_a(self) -> np.ndarray:
        """(C, K) amperes of every circuit in every state."""
        return np.array([c.currents_a for c in self.circuits], dtype=float).reshape(
            len(self.circuits), len(self.state_names))

    @property
    def independent(self) -> np.ndarray:
        """(C,) True for circuits that switch on their own."""
        return np.array([c.independent for c in self.circuits], dtype=bool)

    @property
    def run_currents_a(self) -> np.ndarray:
        """(R, K) amperes of each run in each state, from the circuits that switch with the
        states (independent circuits off)."""
        base = self.circuit_currents_a * ~self.independent[:, None]
        return self.circuit_matrix @ base


def consistency_findings(plan) -> list[Finding]:
    """What makes a plan unusable, each located by sheet, row and column: a run that cannot be
    routed (too few waypoints, a paired or twisted run with no spacing, a twisted one with no
    lay, a separate return with no route), a run naming a circuit the plan lacks, currents that
    do not match the states, a sensor or item naming a state the plan lacks.

    The reader finds all of these first, with better words; this is the safety net for plans
    made or changed in Python (``dataclasses.replace``), so that a what-if never fails inside
    routing with a TypeError.
    """
    out: list[Finding] = []

    def add(sheet, row, column, message):
        out.append(Finding(plan.source, sheet, row, column, message))

    circuits = {name_key(c.name) for c in plan.circuits}
    states = set(plan.state_names)
    for run in plan.runs:
        g = run.geometry
        if len(np.asarray(g.route_m).reshape(-1, 3)) < 2:
            add("runs", run.row, "route", f'run "{run.name}": a route needs at least two '
                "waypoints")
        if g.return_kind not in ("paired", "twisted", "separate", "none"):
            add("runs", run.row, "return", f'run "{run.name}": "{g.return_kind}" is not a return '
                "kind; expected one of paired, twisted, separate, none")
        if g.return_kind in ("paired", "twisted") and not (g.spacing_m and g.spacing_m > 0):
            add("runs", run.row, "spacing", f'run "{run.name}": a {g.return_kind} run needs a '
                "spacing of more than zero")
        if g.return_kind == "twisted" and not (g.lay_m and g.lay_m > 0):
            add("runs", run.row, "lay", f'run "{run.name}": a twisted run needs a lay length of '
                "more than zero")
        if g.return_kind == "separate" and (
                g.return_route_m is None or len(np.asarray(g.return_route_m).reshape(-1, 3)) < 2):
            add("runs", run.row, "return_route", f'run "{run.name}": a separate return needs '
                "its own route of at least two waypoints")
        for name in run.circuits:
            if name_key(name) not in circuits:
                add("runs", run.row, "circuits", f'run "{run.name}": circuit "{name}" is not in '
                    "the plan")
    for circuit in plan.circuits:
        if np.shape(circuit.currents_a) != (len(plan.state_names),):
            add("states", circuit.row, "circuit", f'circuit "{circuit.name}": '
                f"{np.size(circuit.currents_a)} currents for {len(plan.state_names)} states")
        if circuit.power_w is not None and np.shape(circuit.power_w) != (len(plan.state_names),):
            add("states", circuit.row, "circuit", f'circuit "{circuit.name}": '
                f"{np.size(circuit.power_w)} powers for {len(plan.state_names)} states")
        if circuit.in_watts and not valid_voltage(circuit.voltage_v):
            add("states", circuit.row, "voltage", f'circuit "{circuit.name}": a load in watts '
                f"needs the circuit's DC voltage, more than 0 and at most {MAX_DC_VOLTAGE_V:g} V"
                f" (it is {circuit.voltage_v})")
        if circuit.inverter is not None and not 0.0 < circuit.efficiency <= 1.0:
            add("states", circuit.row, "efficiency", f'circuit "{circuit.name}": an efficiency '
                f"is more than 0 and at most 1 (it is {circuit.efficiency:g})")
    for condition in plan.conditions:
        if condition.state not in states:
            add("conditions", condition.row, "state",
                f'"{condition.state}" is not a state of the plan')
    for sensor in plan.sensors:
        for state in ((sensor.reference_state,) if sensor.reference_state else ()) + tuple(
                sensor.used_in or ()):
            if state not in states:
                add("sensors", sensor.row, "reference_state" if state ==
                    sensor.reference_state else "used_in",
                    f'sensor "{sensor.name}": "{state}" is not a state of the plan')
    for item in plan.equipment:
        for state in item.states or ():
            if state not in states:
                add("equipment", item.row, "states",
                    f'item "{item.name}": "{state}" is not a state of the plan')
    return out


def at_voltage(plan: Plan, voltage_v: float) -> Plan:
    """The plan with every load given in watts drawn at the DC voltage ``voltage_v`` [V] (a
    what-if: "what if we went to 24 V?"); loads given in amperes are left as they are.

    Raises
    ------
    InputError
        The voltage is not more than 0 and at most MAX_DC_VOLTAGE_V, or no load of the plan is
        given in watts (the what-if would change nothing).
    """
    if not valid_voltage(voltage_v):
        raise InputError(f"a DC voltage is more than 0 and at most {MAX_DC_VOLTAGE_V:g} V (got "
                         f"{voltage_v:g} V)", kind=Problem.OUT_OF_RANGE)
    if not plan.in_watts:
        raise InputError("no load of the plan is given in watts, so another voltage changes "
                         "nothing: give loads as e.g. 1500 W with the circuit's voltage in the "
                         "states sheet", kind=Problem.INCONSISTENT)
    return replace(plan, circuits=tuple(c.at_voltage(voltage_v) for c in plan.circuits))


_ROUTED: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def conductors_of(plan: Plan) -> Conductors:
    """The routed conductors of a plan's runs.

    Routing is a function of the plan: the result is remembered for this plan object only
    (plans are frozen and compared by identity), so a plan made with ``dataclasses.replace``
    is always routed afresh.
    """
    from .physics.routing import route_runs

    routed = _ROUTED.get(plan)
    if routed is None:
        routed = route_runs([r.geometry for r in plan.runs])
        _ROUTED[plan] = routed
    return routed
