"""The deviation budget of a plan: every run and item at every sensor in every state.

This is the middle layer: it takes a validated :class:`~deviation.plan.Plan`, calls the physics
and the budget rules, and returns frozen result values that renderers turn into tables, JSON or
reports. The per-run fields at each sensor are kept, so advice and the spot search reuse them.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from .budget import (
    TESLA_PER_NT,
    RunParts,
    adjusting_vertical_t,
    asin_deg,
    circuit_currents,
    equipment_fields,
    fields_routed_in_turn,
    item_effect,
    nearest_by_run,
    parts_of_runs,
    sensor_figures,
)
from .constants import (
    MAX_FIXES_INDEPENDENT_CIRCUITS,
    MAX_FIXES_STATES,
    MAX_INDEPENDENT_CIRCUITS,
    MAX_STATES,
)
from .errors import Problem
from .physics import heading
from .physics.routing import Conductors
from .physics.total_field import total_field_error_range
from .plan import Finding, Plan, PlanError, Sensor, conductors_of, frozen_array
from .progress import counter
from .quantities import Status, status_of
from .sitefield import SiteField, site_field


@dataclass(frozen=True)
class RunContribution:
    """One run at one sensor in one state (supply and return together)."""

    name: str
    current_a: float                  # in the worst switching of independent circuits
    field_t: np.ndarray               # (3,) vessel frame, the part of known direction
    nearest_m: float
    max_deviation_deg: float | None   # this run alone, level, over all headings, absolute
    change_from_reference_deg: float | None   # this run's own residual b - b_ref, level
    held: float                       # what it alone makes of the held figure, budget's unit
    share_of_budget: float            # held / the budget
    return_kind: str
    bound_t: float = 0.0              # the part of unknown direction of its horizontal size
    ends_share: float | None = None   # twisted: share of its field from the untwisted ends
    unknown_t: float = 0.0            # the 3-D size of its parts of unknown direction


@dataclass(frozen=True)
class EquipmentContribution:
    name: str
    distance_m: float
    kind: str                         # "safe distance" or "moment"
    field_t: np.ndarray | None        # known orientation: the vector field
    bound_t: float                    # unknown orientation: the largest field it may cause
    max_deviation_deg: float          # this item alone, level, over headings, absolute
    inside_safe_distance: bool
    safe_distance_m: float | None
    compensated: bool = False         # present in the reference state too: adjusted out
    held: float = 0.0                 # what it alone adds to the held figure, budget's unit

    @property
    def bound(self) -> bool:
        """Of unknown direction: its figure is an upper bound."""
        return self.field_t is None


@dataclass(frozen=True)
class SteelContribution:
    """One steel item at one sensor in one state: its induced field, alone.

    ``held`` is what it alone makes of the held figure in the budget's unit (its own worst
    over headings, attitude and its permeability band; for an adjusted sensor what the
    adjustment leaves of it); ``bound`` where its band's ends are proven bounds (boxes,
    cylinders, hollow items) rather than exact (spheres, ellipsoids); ``horizontal_t`` and
    ``vertical_t`` bound the sizes of its field over headings, level.
    """

    name: str
    shape: str
    distance_m: float                 # from the sensor to the item's surface
    max_deviation_deg: float | None   # alone, level, absolute (heading sensors)
    held: float
    share_of_budget: float
    bound: bool
    horizontal_t: float
    vertical_t: float
    adjusted: bool = False            # present in the reference state too


@dataclass(frozen=True)
class StateResult:
    """One sensor in one state. ``held`` is the figure held against the budget, in the budget's
    unit (degrees, or nT for a total-field magnetometer); ``status`` where it stands. The degree
    figures are None for a total-field magnetometer, the total-field ones for the other kinds."""

    state: str
    used: bool                        # the sensor is relied on in this state
    is_reference: bool                # the state the sensor is adjusted in
    field_t: np.ndarray               # (3,) all runs and oriented items, vector sum
    held: float                       # the figure held against the budget, in its unit
    within_budget: bool               # held within the budget (whether or not the state is used)
    overwhelmed: bool
    fraction_of_total: float          # |vector sum| / F
    equipment_bound_t: float
    runs: tuple[RunContribution, ...]
    equipment: tuple[EquipmentContribution, ...]
    remedies: tuple = ()
    bound_t: float = 0.0              # every bound of unknown direction in the held figure
    switched_on: tuple[tuple[str, int], ...] = ()   # independent circuits on in the worst case
    # Heading sensors [deg]; None for a total-field magnetometer.
    vector_deviation_deg: float | None = None       # level, from the vector sum only
    max_deviation_deg: float | None = None          # level, with every bound: absolute worst
    magnitude_bound_deg: float | None = None        # level, every field's size added
    change_from_reference_deg: float | None = None  # level, deviation of the residual field
    heeled_max_deviation_deg: float | None = None   # absolute, worst attitude
    attitude_change_deg: float | None = None        # residual, worst attitude
    # Total-field magnetometers only [T]: the error |F + b| - |F| over headings and attitude
    # (largest, smallest, held), its level peak to peak over headings, the bounds in it
    # (budget.TotalFieldFigures); None for other kinds.
    total_field_high_t: float | None = None
    total_field_low_t: float | None = None
    total_field_error_t: float | None = None
    heading_peak_to_peak_t: float | None = None
    total_field_bound_t: float | None = None
    # Steel items (empty without a steel sheet): each alone, lambda's range over the bands, and
    # what the sensor sees of the steel in the worst choice (b = steel_fixed_t + steel_matrix
    # F_v, vessel frame), for the card.
    steel: tuple[SteelContribution, ...] = ()
    lam_low: float | None = None
    lam_high: float | None = None
    steel_fixed_t: np.ndarray | None = None
    steel_matrix: np.ndarray | None = None
    steel_absolute_matrix: np.ndarray | None = None   # the same steel, not adjusted
    steel_spread_t: float = 0.0       # total field: what the bands may add to |b| (the card's band)

    @property
    def status(self) -> Status:
        """Not used, overwhelmed, within or over."""
        return status_of(self.used, self.within_budget, self.overwhelmed)


@dataclass(frozen=True)
class SensorResult:
    sensor: Sensor
    states: tuple[StateResult, ...]
    within_budget: bool               # in every state the sensor is used in
    parts: RunParts = field(repr=False)  # each run's field per ampere at the sensor (P = 1)
    fixes: object = None              # advice.FixSet once remedies are made, for a sensor over

    @property
    def nearest_m(self) -> np.ndarray:
        """(R,) each run's nearest distance to the sensor [m]."""
        return self.parts.nearest_m[0]

    @property
    def unit_fields_t(self) -> np.ndarray:
        """(R, 3) each run's field of known direction per ampere at the sensor [T/A] (for a pair
        whose lie is not fixed: the centre of its lies)."""
        return self.parts.unit_t[0]

    def state(self, name: str) -> StateResult:
        return next(s for s in self.states if s.state == name)

    @property
    def worst(self) -> StateResult:
        """The used state with the largest held figure."""
        used = [s for s in self.states if s.used] or list(self.states)
        return max(used, key=lambda s: s.held)

    @property
    def over_in(self) -> tuple[str, ...]:
        """The states it is used in where it is over its budget (or overwhelmed)."""
        return tuple(s.state for s in self.states if s.status.fails)

    @property
    def status(self) -> Status:
        """Within (every state it is used in) or over: the sensor's verdict."""
        return Status.WITHIN if self.within_budget else Status.OVER

    @property
    def lam_low(self) -> float | None:
        """The least lambda over the states (steel items only; None without them)."""
        values = [s.lam_low for s in self.states if s.lam_low is not None]
        return min(values) if values else None

    @property
    def adjustment_absorbs_deg(self) -> float | None:
        """Absolute worst deviation in the reference state: what the adjustment takes out."""
        reference = [s for s in self.states if s.is_reference]
        return reference[0].heeled_max_deviation_deg if reference else None


@dataclass(frozen=True)
class Analysis:
    """The result of checking a plan: every sensor in every state, with its remedies and the
    rule findings once :func:`deviation.check` has made them.

    Tables: :meth:`to_frame` (one row per sensor and state), :meth:`runs_frame` (one row per
    sensor, state and run or item), :meth:`remedies_frame`, :meth:`findings_frame`; pandas is
    imported only when one is asked for.
    """

    plan: Plan
    site: SiteField
    sensors: tuple[SensorResult, ...]
    findings: tuple = ()

    def to_frame(self):
        from .frames import summary_frame

        return summary_frame(self)

    def verdict_frame(self):
        """One row per sensor: budget, held figure per state, status (what a notebook shows)."""
        from .frames import verdict_frame

        return verdict_frame(self)

    def __repr__(self) -> str:
        parts = []
        for result in self.sensors:
            worst = result.worst
            held = f"{worst.held:.2f}{result.sensor.budget.unit.symbol}"
            if worst.overwhelmed:
                held = "overwhelmed"
            parts.append(f"{result.sensor.name} {result.status.value} ({held} of "
                         f"{result.sensor.budget} in {worst.state})")
        verdict = "within budget" if self.within_budget else "over budget"
        return f"<CheckResult {self.plan.source!r}: {verdict}; {'; '.join(parts)}>"

    def _repr_html_(self) -> str:
        return self.verdict_frame()._repr_html_()

    def runs_frame(self):
        from .frames import runs_frame

        return runs_frame(self)

    def remedies_frame(self):
        from .frames import remedies_frame

        return remedies_frame(self)

    def findings_frame(self):
        from .frames import findings_frame

        return findings_frame(self)

    @property
    def conductors(self) -> Conductors:
        return conductors_of(self.plan)

    @property
    def within_budget(self) -> bool:
        return all(s.within_budget for s in self.sensors)

    def sensor(self, name: str) -> SensorResult:
        wanted = self.plan.sensor(name)
        return next(s for s in self.sensors if s.sensor is wanted)


def equipment_at(plan, sensor, position, state, site):
    """The items present in a state, at one position, each with what it alone adds to the held
    figure in the budget's unit (nothing where the adjustment in the reference state takes it
    out)."""
    out = []
    h = site.horizontal_t
    in_reference = sensor.reference_state is not None
    for item in plan.equipment:
        if not item.present_in(state):
            continue
        field_t, bound, distance = item_effect(item, position[None, :], h)
        distance, bound = float(distance[0]), float(bound[0])
        size = float(heading.horizontal_disturbance(field_t[0])) if field_t is not None else bound
        compensated = in_reference and item.present_in(sensor.reference_state)
        deviation = float(asin_deg(size / h))
        if compensated:
            held = 0.0
        elif sensor.budget.degrees:
            held = deviation
        elif field_t is None:
            held = bound / TESLA_PER_NT            # moves |F + b| by at most its size
        else:
            low, high = total_field_error_range(field_t[0], h, site.vertical_t,
                                                sensor.max_heel_deg, sensor.max_pitch_deg)
            held = max(float(high), -float(low)) / TESLA_PER_NT
        out.append(EquipmentContribution(
            item.name, distance, "safe distance" if item.safe_distance_m is not None else "moment",
            None if field_t is None else frozen_array(field_t[0]), bound, deviation,
            item.safe_distance_m is not None and distance < item.safe_distance_m,
            item.safe_distance_m, compensated=compensated, held=held))
    return tuple(out)


def steel_at(plan, sensor, position, site, figures_steel, *, vertical_adjust_t):
    """Each steel item alone at one position, per state: (K,) tuples of SteelContribution."""
    from .budget import steel as steel_budget
    from .budget.with_steel import item_alone
    from .physics import induced

    parts = steel_budget.steel_parts_at(plan, position[None, :])
    if parts is None:
        return [()] * len(plan.state_names)
    h, z = site.horizontal_t, site.vertical_t
    total = site.total_t
    if sensor.budget.degrees:
        held, level, bound = item_alone(plan, sensor, h, z, parts,
                                        adjusting_vertical_t=vertical_adjust_t)
    else:
        held = level = None
        bound = ~parts.exact
    out = []
    for k, state in enumerate(plan.state_names):
        rows = []
        for i, item in enumerate(plan.steel):
            if not item.present_in(state):
                continue
            mats = parts.centre[0, i][None] + np.einsum(
                "cj,jab->cab", _CORNERS, parts.generators[0, i])           # (8, 3, 3)
            horizontal = float(np.max(_block_norm(mats[:, :2, :2]) * h
                                      + np.linalg.norm(mats[:, :2, 2], axis=-1) * abs(z)))
            vertical = float(np.max(np.linalg.norm(mats[:, 2, :2], axis=-1) * h
                                    + np.abs(mats[:, 2, 2]) * abs(z)))
            adjusted = (sensor.reference_state is not None
                        and item.present_in(sensor.reference_state))
            if held is not None:
                figure, alone = float(held[k, i]), float(level[k, i])
            else:
                # A total-field magnetometer: its field moves |F + b| by at most its size.
                size = float(np.max(np.sqrt(np.sum(mats ** 2, axis=(-2, -1))))) * total
                figure, alone = size / TESLA_PER_NT, None
                if adjusted:
                    figure = 0.0
            distance = float(induced.distance_outside_m(item.shape, item.sizes_m,
                                                        induced.body_points(
                                                            item.position_m, item.rotation,
                                                            position)))
            rows.append(SteelContribution(item.name, item.shape, distance, alone, figure,
                                          sensor.budget.share(figure), bool(bound[i]),
                                          horizontal, vertical, adjusted))
        out.append(tuple(sorted(rows, key=lambda r: (-r.held, r.name))))
    return out


def _total_field_steel(plan, sensor, position, k, field_t, ref_k, totals):
    """A total-field magnetometer's steel in state k, for the card: the fixed field of the held
    switching (less the reference's), the steel's matrix at the middle of its bands, and what
    the bands may add to |b| at most (||G|| |F| each, by the triangle inequality)."""
    from .budget.steel import lambda_range, seen_steel, steel_parts_at

    parts = steel_parts_at(plan, position[None, :])
    low, high = lambda_range(plan, parts, k)
    seen = seen_steel(plan, sensor, parts, k, 0.0)
    fixed = field_t - (totals[ref_k] if ref_k is not None else 0.0)
    spread = float(np.sqrt(np.sum(seen.matrix_generators[0] ** 2, axis=(-2, -1))).sum())
    return dict(lam_low=float(low[0]), lam_high=float(high[0]),
                steel_fixed_t=frozen_array(fixed), steel_matrix=frozen_array(seen.matrix[0]),
                steel_spread_t=spread)


#: The eight corners of a band's box as signs of its three generators.
_CORNERS = np.array([[1.0 if (k >> j) & 1 else -1.0 for j in range(3)] for k in range(8)])


def _block_norm(m):
    """||m||_2 of (..., 2, 2) matrices."""
    return np.linalg.norm(m, ord=2, axis=(-2, -1))


def evaluate_sensor(plan: Plan, sensor: Sensor, site: SiteField, parts: RunParts,
                    ends_share=None) -> SensorResult:
    """Budget of one sensor in every state, from each run's field per ampere at it (P = 1).

    ``ends_share`` (R,), if given, is each twisted run's share of its field that comes from its
    untwisted ends (None for other runs).
    """
    position = sensor.position_m
    h = site.horizontal_t
    items = equipment_fields(plan, sensor, position[None, :], h)
    split = circuit_currents(plan)
    figures = sensor_figures(plan, sensor, site, parts, items=items, currents=split,
                             per_run=True)
    degrees, scalar, alone = figures.heading, figures.total_field, figures.runs
    ref_k = plan.state_index(sensor.reference_state) if sensor.reference_state else None
    rank_own = alone.alone_deg if alone.alone_deg is not None else alone.held
    totals = figures.total_t[0]                                             # (K, 3)
    steel_info = degrees.steel if degrees is not None else None
    steel_rows = (steel_at(plan, sensor, position, site, steel_info,
                           vertical_adjust_t=adjusting_vertical_t(plan, site))
                  if plan.steel else [()] * len(plan.state_names))
    results = []
    for k, state in enumerate(plan.state_names):
        is_reference = k == ref_k
        # In the reference state every run's change is zero by definition; rank by what the
        # adjustment has to absorb instead.
        rank = rank_own[k] if is_reference else alone.held[k]
        runs = [RunContribution(
            run.name, float(alone.current_a[k, r]), frozen_array(alone.field_t[k, r]),
            float(parts.nearest_m[0, r]),
            None if alone.alone_deg is None else float(alone.alone_deg[k, r]),
            None if alone.change_deg is None else float(alone.change_deg[k, r]),
            float(alone.held[k, r]), sensor.budget.share(alone.held[k, r]),
            run.geometry.return_kind, float(alone.bound_t[k, r]),
            None if ends_share is None else ends_share[r], float(alone.unknown_t[k, r]))
            for r, run in enumerate(plan.runs)]
        order = sorted(range(len(runs)), key=lambda r: (-rank[r], runs[r].name))
        on = tuple((name, int(s)) for name, s in zip(split.names, figures.combination[0, k]) if s)
        values = dict(
            state=state, used=sensor.used_in_state(state), is_reference=is_reference,
            field_t=frozen_array(totals[k]), held=float(figures.held[0, k]),
            within_budget=bool(figures.within[0, k]),
            overwhelmed=bool(figures.overwhelmed[0, k]),
            fraction_of_total=float(np.linalg.norm(totals[k])) / site.total_t,
            equipment_bound_t=float(items.bound[0, k]), runs=tuple(runs[r] for r in order),
            equipment=equipment_at(plan, sensor, position, state, site),
            bound_t=float(figures.bound_t[0, k]), switched_on=on, steel=steel_rows[k])
        if steel_info is not None:
            values.update(lam_low=float(steel_info.lam_low[0, k]),
                          lam_high=float(steel_info.lam_high[0, k]),
                          steel_fixed_t=frozen_array(steel_info.fixed_t[0, k]),
                          steel_matrix=frozen_array(steel_info.matrix[0, k]),
                          steel_absolute_matrix=frozen_array(steel_info.absolute_matrix[0, k]))
        elif plan.steel:
            values.update(_total_field_steel(plan, sensor, position, k, totals[k], ref_k, totals))
        if degrees is not None:
            # "if every field lined up": each run's own worst size, added as magnitudes
            sizes = (heading.horizontal_disturbance(alone.field_t[k]).sum()
                     + alone.bound_t[k].sum() + items.bound[0, k]
                     + sum(row.horizontal_t for row in steel_rows[k]))
            values.update(
                vector_deviation_deg=float(degrees.vector_deviation_deg[0, k]),
                max_deviation_deg=float(degrees.max_deviation_deg[0, k]),
                magnitude_bound_deg=float(asin_deg(sizes / h)),
                change_from_reference_deg=(None if degrees.change_from_reference_deg is None
                                           else float(degrees.change_from_reference_deg[0, k])),
                heeled_max_deviation_deg=float(degrees.attitude_deviation_deg[0, k]),
                attitude_change_deg=(None if degrees.attitude_change_deg is None
                                     else float(degrees.attitude_change_deg[0, k])))
        if scalar is not None:
            values.update(
                total_field_high_t=float(scalar.high_t[0, k]),
                total_field_low_t=float(scalar.low_t[0, k]),
                total_field_error_t=float(scalar.error_t[0, k]),
                heading_peak_to_peak_t=float(scalar.peak_to_peak_t[0, k]),
                total_field_bound_t=float(scalar.bound_t[0, k]))
        results.append(StateResult(**values))
    within = all(s.within_budget for s in results if s.used)
    return SensorResult(sensor, tuple(results), within, parts)


def parts_at(plan: Plan, points_m, *, nearest: bool = True, nearest_m=None) -> RunParts:
    """Each run's field per ampere (known and unknown direction) at many points (``nearest_m``:
    each run's nearest distance there, if already found)."""
    return parts_of_runs(plan.runs, points_m, conductors_of(plan), nearest=nearest,
                         nearest_m=nearest_m)


def _one(parts: RunParts, i: int) -> RunParts:
    return RunParts(parts.unit_t[i:i + 1], parts.spread_t[i:i + 1], parts.bound_t[i:i + 1],
                    parts.nearest_m[i:i + 1], parts.inside[i:i + 1])


def check_sensors_outside_conductors(plan: Plan, distance=None) -> None:
    """A sensor inside a conductor of the plan as routed is a modelling error, reported as a
    located finding (the field there is not the field of a line current).

    ``distance`` (sensors, segments) [m], if given, is each sensor's distance to each routed
    segment (:func:`sensor_distances`), already found.

    Raises
    ------
    PlanError
        With one finding per such sensor, at its row and ``at`` column.
    """
    conductors = conductors_of(plan)
    if not len(conductors) or not plan.sensors:
        return
    if distance is None:
        distance = sensor_distances(plan)
    inside = distance <= conductors.radius_m[None, :]
    findings = []
    for i, sensor in enumerate(plan.sensors):
        if not inside[i].any():
            continue
        s = int(np.argmax(inside[i]))
        run = plan.runs[conductors.run_index[s]]
        findings.append(Finding(
            plan.source, "sensors", sensor.row, "at", f'sensor "{sensor.name}" lies inside run '
            f'"{run.name}" ({distance[i, s] * 1000:.1f} mm from a conductor\'s axis, radius '
            f"{conductors.radius_m[s] * 1000:.1f} mm); move the sensor or the run",
            Problem.INCONSISTENT))
    if findings:
        raise PlanError(findings)


def check_sensors_outside_steel(plan: Plan) -> None:
    """A sensor inside a steel item, or within ``budget.steel.CLEARANCE_M`` of its surface, is a
    modelling error reported as a located finding (the item's exterior field does not hold
    there).

    Raises
    ------
    PlanError
        With one finding per such sensor and item, at the sensor's row and ``at`` column.
    """
    from .budget.steel import CLEARANCE_M
    from .physics.induced import body_points, distance_outside_m

    findings = []
    for item in plan.steel:
        for sensor in plan.sensors:
            gap = float(distance_outside_m(item.shape, item.sizes_m, body_points(
                item.position_m, item.rotation, sensor.position_m)))
            if gap <= CLEARANCE_M:
                findings.append(Finding(
                    plan.source, "sensors", sensor.row, "at", f'sensor "{sensor.name}" lies '
                    f'inside steel item "{item.name}" (steel row {item.row}) or within '
                    f"{CLEARANCE_M * 1000:g} mm of it; move the sensor or check the item's place "
                    "and size", Problem.INCONSISTENT))
    if findings:
        raise PlanError(findings)


def sensor_distances(plan: Plan):
    """(sensors, segments) [m] each sensor's distance to each routed segment of the plan."""
    from .physics.field import point_segment_distance

    conductors = conductors_of(plan)
    positions = np.array([s.position_m for s in plan.sensors]).reshape(-1, 3)
    return point_segment_distance(conductors.start_m, conductors.end_m, positions)


def check_ceilings(plan: Plan, *, fixes: bool = False) -> None:
    """Refuse a plan beyond what a check is made for (constants.MAX_*): a :class:`PlanError`
    whose finding is at the first state or independent circuit past the ceiling. With
    ``fixes``, the lower ceilings of the remedies and the set of fixes apply."""
    states = MAX_FIXES_STATES if fixes else MAX_STATES
    independent = MAX_FIXES_INDEPENDENT_CIRCUITS if fixes else MAX_INDEPENDENT_CIRCUITS
    what = "the remedies and the set of fixes are worked out for" if fixes else "a plan may have"
    instead = ("; check with --no-fixes (remedies=False), which gives the same budget and "
               "verdict" if fixes else "")
    findings = []
    if len(plan.state_names) > states:
        findings.append(Finding(plan.source, "states", 1, plan.state_names[states],
                                f"{len(plan.state_names)} operating states is more than the "
                                f"{states} {what}{instead}"))
    switched = [c for c in plan.circuits if c.independent]
    if len(switched) > independent:
        findings.append(Finding(plan.source, "states", switched[independent].row, "switching",
                                f"{len(switched)} independent circuits is more than the "
                                f"{independent} {what} (their worst combination grows about as "
                                f"their number cubed){instead}"))
    if findings:
        raise PlanError(findings)


def analyse(plan: Plan) -> Analysis:
    """Compute the deviation budget of every sensor in every state.

    Raises
    ------
    PlanError
        A sensor lies inside a conductor (:func:`check_sensors_outside_conductors`) or a steel
        item (:func:`check_sensors_outside_steel`), or the plan is beyond the ceilings
        (:func:`check_ceilings`).
    """
    check_ceilings(plan)
    # The sensors' distances to every segment, found once: for the check that none lies inside
    # a conductor, and for each run's nearest distance; then let go (sensors x segments).
    distance = sensor_distances(plan)
    check_sensors_outside_conductors(plan, distance)
    check_sensors_outside_steel(plan)
    nearest_m = nearest_by_run(conductors_of(plan), len(plan.runs), distance)
    del distance
    site = site_field(plan.site)
    positions = np.array([s.position_m for s in plan.sensors]).reshape(-1, 3)
    parts = parts_at(plan, positions, nearest_m=nearest_m)
    shares = _ends_shares(plan, positions, parts.unit_t)
    tick = counter("the budget of each sensor", len(plan.sensors))
    sensors = []
    for i, sensor in enumerate(plan.sensors):
        sensors.append(evaluate_sensor(plan, sensor, site, _one(parts, i), shares[i]))
        tick()
    tick.done()
    return Analysis(plan, site, tuple(sensors))


def _ends_shares(plan, points, unit_t):
    """(P, R) list of lists: each twisted run's share of its field from its untwisted ends,
    |b - b_helix| / |b| with b_helix the same run twisted right into its terminals."""
    shares = [[None] * len(plan.runs) for _ in range(len(points))]
    twisted = [i for i, r in enumerate(plan.runs) if r.geometry.return_kind == "twisted"]
    if not twisted:
        return shares
    helix = fields_routed_in_turn([replace(plan.runs[i].geometry, untwisted_end_m=0.0)
                                   for i in twisted], points)
    for j, r in enumerate(twisted):
        size = np.linalg.norm(unit_t[:, r], axis=-1)
        ends = np.linalg.norm(unit_t[:, r] - helix[:, j], axis=-1)
        for p in range(len(points)):
            shares[p][r] = float(min(1.0, ends[p] / size[p])) if size[p] > 0 else 0.0
    return shares
