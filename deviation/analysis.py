"""The deviation budget of a plan: every run and item at every sensor in every state.

This is the middle layer: it takes a validated :class:`~deviation.plan.Plan`, calls the physics
modules, and returns plain result dataclasses that renderers turn into tables, JSON or reports.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import heading
from .constants import SAFE_DISTANCE_DEG_UT
from .field import dipole_field, dipole_field_bound, point_segment_distance, segment_field_by_group
from .geomag import declination_uncertainty_deg, wmm_field, zone_of
from .plan import Plan
from .routing import Conductors, route_runs

TESLA_PER_UT = 1e-6


@dataclass(frozen=True)
class SiteField:
    """The Earth's field at the site [T] and what it came from."""

    horizontal_t: float
    vertical_t: float
    declination_deg: float | None
    inclination_deg: float
    source: str                       # "WMM2025" or "plan"
    zone: str
    decimal_year: float
    date_text: str
    declination_uncertainty_deg: float | None

    @property
    def total_t(self):
        return math.hypot(self.horizontal_t, self.vertical_t)


def site_field(site) -> SiteField:
    """The site's field: the plan's own H and Z where given, else WMM2025 at the place and date."""
    model = None
    if site.latitude_deg is not None and site.longitude_deg is not None and (
            site.horizontal_ut is None or site.vertical_ut is None):
        model = wmm_field(site.latitude_deg, site.longitude_deg, site.decimal_year, site.altitude_m)
    if site.horizontal_ut is not None:
        horizontal = site.horizontal_ut * TESLA_PER_UT
        vertical = (site.vertical_ut * TESLA_PER_UT if site.vertical_ut is not None else
                    float(model.z_nt) * 1e-9 if model is not None else 0.0)
        declination = float(model.declination_deg) if model is not None else None
        return SiteField(horizontal, vertical, declination,
                         math.degrees(math.atan2(vertical, horizontal)), "plan",
                         zone_of(horizontal * 1e9), site.decimal_year, site.date_text, None)
    horizontal = float(model.h_nt) * 1e-9
    vertical = (site.vertical_ut * TESLA_PER_UT if site.vertical_ut is not None
                else float(model.z_nt) * 1e-9)
    return SiteField(horizontal, vertical, float(model.declination_deg),
                     math.degrees(math.atan2(vertical, horizontal)), "WMM2025",
                     zone_of(horizontal * 1e9), site.decimal_year, site.date_text,
                     float(declination_uncertainty_deg(horizontal * 1e9)))


def safe_distance_disturbance_t(label, horizontal_t):
    """Horizontal disturbance an item may cause at its labelled compass safe distance [T].

    IEC 60945 (compass safe distance): 5.4/H degrees at a standard compass, 18/H at a steering
    compass, H in microtesla; as a field, H sin(k/H deg), about 94.2 nT and 314 nT.
    """
    h_ut = horizontal_t / TESLA_PER_UT
    return horizontal_t * math.sin(math.radians(SAFE_DISTANCE_DEG_UT[label] / h_ut))


@dataclass
class RunContribution:
    name: str
    current_a: float
    field_t: np.ndarray               # (3,) vessel frame, this run alone in this state
    nearest_m: float
    max_deviation_deg: float          # this run alone, level, over all headings
    change_from_reference_deg: float | None   # this run's own change from the reference state
    share_of_budget: float            # the figure held against the budget / budget_deg
    return_kind: str


@dataclass
class EquipmentContribution:
    name: str
    distance_m: float
    kind: str                         # "safe distance" or "moment"
    field_t: np.ndarray | None        # known orientation: the vector field
    bound_t: float                    # unknown orientation: the largest field it may cause
    max_deviation_deg: float
    inside_safe_distance: bool
    safe_distance_m: float | None
    compensated: bool = False         # present in the reference state too: adjusted out


@dataclass
class StateResult:
    state: str
    field_t: np.ndarray               # (3,) all runs and oriented items, vector sum
    vector_deviation_deg: float       # level, from the vector sum only
    max_deviation_deg: float          # level, vector sum plus equipment bounds: absolute worst
    magnitude_bound_deg: float        # level, runs' horizontal fields added as magnitudes
    change_from_reference_deg: float | None
    heeled_max_deviation_deg: float
    budget_used_deg: float
    within_budget: bool
    overwhelmed: bool
    fraction_of_total: float          # |vector sum| / F
    equipment_bound_t: float
    runs: list
    equipment: list
    hints: list = field(default_factory=list)


@dataclass
class SensorResult:
    sensor: object
    states: list
    within_budget: bool


@dataclass
class Analysis:
    plan: Plan
    site: SiteField
    conductors: Conductors
    sensors: list

    @property
    def within_budget(self):
        return all(s.within_budget for s in self.sensors)


def _asin_deg(ratio):
    return math.degrees(math.asin(ratio)) if ratio < 1 else 180.0


def run_fields_at(conductors, n_runs, points_m):
    """Field of each run at unit current [T/A], shape (P, R, 3), and nearest distances (P, R) [m]."""
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    unit, _ = segment_field_by_group(conductors.start_m, conductors.end_m, conductors.sign,
                                     conductors.run_index, n_runs, points,
                                     radius_m=conductors.radius_m)
    nearest = np.full((len(points), n_runs), np.inf)
    if len(conductors):
        distance = point_segment_distance(conductors.start_m, conductors.end_m, points)
        firsts = np.flatnonzero(np.r_[True, np.diff(conductors.run_index) != 0])
        nearest[:, conductors.run_index[firsts]] = np.minimum.reduceat(distance, firsts, axis=1)
    return unit, nearest


def equipment_at(plan, position, state, horizontal_t):
    """Contributions of the items present in a state at a position."""
    out = []
    for item in plan.equipment:
        if not item.present_in(state):
            continue
        distance = float(np.linalg.norm(position - item.position_m))
        if item.safe_distance_m is not None:
            at_label = safe_distance_disturbance_t(item.safe_distance_for, horizontal_t)
            bound = at_label * (item.safe_distance_m / max(distance, 1e-9)) ** 3
            out.append(EquipmentContribution(item.name, distance, "safe distance", None, bound,
                                             _asin_deg(bound / horizontal_t),
                                             distance < item.safe_distance_m,
                                             item.safe_distance_m))
        elif item.axis is not None:
            b = dipole_field([item.moment_am2 * item.axis], [item.position_m], [position])[0]
            size = float(heading.horizontal_disturbance(b))
            out.append(EquipmentContribution(item.name, distance, "moment", b, 0.0,
                                             _asin_deg(size / horizontal_t), False, None))
        else:
            bound = float(dipole_field_bound(item.moment_am2, max(distance, 1e-9)))
            out.append(EquipmentContribution(item.name, distance, "moment", None, bound,
                                             _asin_deg(bound / horizontal_t), False, None))
    return out


def evaluate_sensor(plan, sensor, site, unit_fields, nearest, position=None):
    """Budget of one sensor (at its own position, or at ``position``) in every state."""
    position = sensor.position_m if position is None else position
    h = site.horizontal_t
    currents = plan.run_currents_a                                 # (R, K)
    per_run = unit_fields[None, :, :] * currents.T[:, :, None]      # (K, R, 3)
    items = {state: equipment_at(plan, position, state, h) for state in plan.state_names}
    oriented = {state: sum((e.field_t for e in items[state] if e.field_t is not None),
                           np.zeros(3)) for state in plan.state_names}
    totals = {state: per_run[k].sum(axis=0) + oriented[state]
              for k, state in enumerate(plan.state_names)}
    reference = sensor.reference_state
    ref_k = plan.state_names.index(reference) if reference else None
    if reference:
        in_reference = {e.name for e in items[reference]}
        for state in plan.state_names:
            for item in items[state]:
                item.compensated = item.name in in_reference
    results = []
    for k, state in enumerate(plan.state_names):
        b = totals[state]
        bound = sum(e.bound_t for e in items[state])
        level = float(heading.horizontal_disturbance(b))
        heel = float(heading.worst_heel_deg(b, sensor.max_heel_deg)) if sensor.max_heel_deg else 0.0
        heeled = float(heading.horizontal_disturbance(b, heel))
        absolute = _asin_deg((level + bound) / h)
        heeled_absolute = _asin_deg((heeled + bound) / h)
        run_sizes = heading.horizontal_disturbance(per_run[k])
        magnitude_bound = _asin_deg((run_sizes.sum() + bound) / h)
        change = None
        run_changes = [None] * len(plan.runs)
        if ref_k is not None:
            # Items present in both states are compensated by the adjustment; the others count,
            # added as a bound in degrees.
            in_state = {e.name for e in items[state]}
            in_reference = {e.name for e in items[reference]}
            changing = (sum(e.bound_t for e in items[state] if e.name not in in_reference)
                        + sum(e.bound_t for e in items[reference] if e.name not in in_state))
            extra = _asin_deg(changing / h) if changing else 0.0
            level_change = float(heading.max_change_deg(b, totals[reference], h))
            heeled_change = (float(heading.max_heeled_change_deg(b, totals[reference], h,
                                                                 sensor.max_heel_deg))
                             if sensor.max_heel_deg else level_change)
            change = min(180.0, level_change + extra)
            used = min(180.0, heeled_change + extra)
            run_changes = [_asin_deg(float(heading.horizontal_disturbance(
                per_run[k, r] - per_run[ref_k, r])) / h) for r in range(len(plan.runs))]
        else:
            used = heeled_absolute
        overwhelmed = level + bound >= h or heeled + bound >= h
        runs = []
        for r, run in enumerate(plan.runs):
            own = _asin_deg(float(run_sizes[r]) / h)
            figure = run_changes[r] if ref_k is not None else own
            runs.append(RunContribution(run.name, float(currents[r, k]), per_run[k, r].copy(),
                                        float(nearest[r]), own, run_changes[r],
                                        figure / sensor.budget_deg, run.geometry.return_kind))
        runs.sort(key=lambda c: (-c.share_of_budget, c.name))
        results.append(StateResult(
            state=state, field_t=b, vector_deviation_deg=_asin_deg(level / h),
            max_deviation_deg=absolute, magnitude_bound_deg=magnitude_bound,
            change_from_reference_deg=change, heeled_max_deviation_deg=heeled_absolute,
            budget_used_deg=used, within_budget=(used <= sensor.budget_deg and not overwhelmed),
            overwhelmed=overwhelmed,
            fraction_of_total=float(np.linalg.norm(b)) / site.total_t,
            equipment_bound_t=bound, runs=runs, equipment=items[state]))
    return results


def analyse(plan: Plan) -> Analysis:
    """Compute the deviation budget of every sensor in every state."""
    site = site_field(plan.site)
    conductors = route_runs([r.geometry for r in plan.runs])
    positions = np.array([s.position_m for s in plan.sensors]).reshape(-1, 3)
    unit, nearest = run_fields_at(conductors, len(plan.runs), positions)
    sensors = []
    for i, sensor in enumerate(plan.sensors):
        states = evaluate_sensor(plan, sensor, site, unit[i], nearest[i])
        sensors.append(SensorResult(sensor, states, all(s.within_budget for s in states)))
    return Analysis(plan, site, conductors, sensors)
