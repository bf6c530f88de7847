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


def asin_deg(ratio):
    """arcsin in degrees of |b|/H, elementwise; 180 where |b| >= H (the sensor is overwhelmed)."""
    ratio = np.asarray(ratio, dtype=float)
    return np.where(ratio < 1.0, np.degrees(np.arcsin(np.clip(ratio, 0.0, 1.0))), 180.0)


def _asin_deg(ratio):
    return float(asin_deg(ratio))


def item_effect(item, points_m, horizontal_t):
    """One magnetised item at many points.

    Returns
    -------
    field : (P, 3) array [T] or None
        The vector field where the orientation is known, else None.
    bound : (P,) array [T]
        Largest horizontal field it may cause where the orientation is unknown, else zeros.
    distance : (P,) array [m]
    """
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    distance = np.linalg.norm(points - item.position_m, axis=1)
    apart = np.maximum(distance, 1e-9)
    if item.safe_distance_m is not None:
        at_label = safe_distance_disturbance_t(item.safe_distance_for, horizontal_t)
        return None, at_label * (item.safe_distance_m / apart) ** 3, distance
    if item.axis is not None:
        field = dipole_field([item.moment_am2 * item.axis], [item.position_m], points)
        return field, np.zeros(len(points)), distance
    return None, dipole_field_bound(item.moment_am2, apart), distance


def equipment_arrays(plan, sensor, points_m, horizontal_t):
    """Equipment at many points in every state: oriented fields (P, K, 3), bounds (P, K), and the
    bounds of items whose presence differs from the sensor's reference state (P, K)."""
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    n_states = len(plan.state_names)
    oriented = np.zeros((len(points), n_states, 3))
    bound = np.zeros((len(points), n_states))
    changing = np.zeros((len(points), n_states))
    reference = sensor.reference_state
    for item in plan.equipment:
        field, size, _ = item_effect(item, points, horizontal_t)
        present = np.array([item.present_in(s) for s in plan.state_names], dtype=float)
        if field is not None:
            oriented += field[:, None, :] * present[None, :, None]
        bound += size[:, None] * present[None, :]
        if reference:
            differs = present != float(item.present_in(reference))
            changing += size[:, None] * differs[None, :]
    return oriented, bound, changing


@dataclass
class Figures:
    """Budget figures of one sensor at P positions in K states; arrays (P, K) [deg]."""

    vector_deviation_deg: np.ndarray
    max_deviation_deg: np.ndarray
    heeled_max_deviation_deg: np.ndarray
    change_from_reference_deg: np.ndarray | None
    budget_used_deg: np.ndarray
    overwhelmed: np.ndarray
    within_budget: np.ndarray


def budget_figures(plan, sensor, site, totals_t, bound_t, changing_t, *, exact=True):
    """The figures held against a sensor's budget, vectorised over positions and states.

    Parameters
    ----------
    totals_t : (P, K, 3) array [T]
        Vector sum of runs and oriented items, vessel frame.
    bound_t, changing_t : (P, K) arrays [T]
        Equipment bounds of unknown direction, all of them and those whose presence differs
        from the reference state (the others are adjusted out with it).
    exact : bool
        With a reference state, True computes the largest change over headings exactly (to
        1e-8 deg); False uses the first-order figure asin(|delta b_h|/H), a fast screen for
        searches (exact in the limit of small disturbances).

    Notes
    -----
    Without a reference state the figure is the absolute deviation asin((|b_h| + bounds)/H) at the
    worst heel in ±max_heel (exact, see :func:`deviation.heading.worst_heel_deg`); with one it is
    the largest change of deviation from the reference state over headings and heel, plus the
    changing bounds as degrees.
    """
    h = site.horizontal_t
    level = heading.horizontal_disturbance(totals_t)
    if sensor.max_heel_deg:
        heeled = heading.horizontal_disturbance(
            totals_t, heading.worst_heel_deg(totals_t, sensor.max_heel_deg))
    else:
        heeled = level
    vector = asin_deg(level / h)
    absolute = asin_deg((level + bound_t) / h)
    heeled_absolute = asin_deg((heeled + bound_t) / h)
    change = None
    if sensor.reference_state:
        ref_k = plan.state_names.index(sensor.reference_state)
        reference = np.broadcast_to(totals_t[:, ref_k:ref_k + 1, :], totals_t.shape)
        extra = np.where(changing_t > 0, asin_deg(changing_t / h), 0.0)
        if exact:
            level_change = heading.max_change_deg(totals_t, reference, h)
            heeled_change = (heading.max_heeled_change_deg(totals_t, reference, h,
                                                           sensor.max_heel_deg)
                             if sensor.max_heel_deg else level_change)
        else:
            delta = totals_t - reference
            level_change = asin_deg(heading.horizontal_disturbance(delta) / h)
            heeled_change = (asin_deg(heading.horizontal_disturbance(
                delta, heading.worst_heel_deg(delta, sensor.max_heel_deg)) / h)
                if sensor.max_heel_deg else level_change)
        change = np.minimum(180.0, level_change + extra)
        used = np.minimum(180.0, heeled_change + extra)
    else:
        used = heeled_absolute
    overwhelmed = (level + bound_t >= h) | (heeled + bound_t >= h)
    within = (used <= sensor.budget_deg) & ~overwhelmed
    return Figures(vector, absolute, heeled_absolute, change, used, overwhelmed, within)


def equipment_at(plan, sensor, position, state, horizontal_t):
    """Display rows of the items present in a state at one position."""
    out = []
    in_reference = sensor.reference_state is not None
    for item in plan.equipment:
        if not item.present_in(state):
            continue
        field, bound, distance = item_effect(item, position[None, :], horizontal_t)
        distance, bound = float(distance[0]), float(bound[0])
        if field is not None:
            size = float(heading.horizontal_disturbance(field[0]))
        else:
            size = bound
        out.append(EquipmentContribution(
            item.name, distance, "safe distance" if item.safe_distance_m is not None else "moment",
            None if field is None else field[0], bound, _asin_deg(size / horizontal_t),
            item.safe_distance_m is not None and distance < item.safe_distance_m,
            item.safe_distance_m,
            compensated=in_reference and item.present_in(sensor.reference_state)))
    return out


def evaluate_sensor(plan, sensor, site, unit_fields, nearest):
    """Budget of one sensor in every state.

    ``unit_fields`` (R, 3) [T/A] and ``nearest`` (R,) [m] are each run's field at unit current
    and its nearest distance, at the sensor.
    """
    position = sensor.position_m
    h = site.horizontal_t
    currents = plan.run_currents_a                                 # (R, K)
    per_run = unit_fields[None, :, :] * currents.T[:, :, None]      # (K, R, 3)
    oriented, bound, changing = equipment_arrays(plan, sensor, position[None, :], h)
    totals = per_run.sum(axis=1)[None] + oriented                   # (1, K, 3)
    figures = budget_figures(plan, sensor, site, totals, bound, changing)
    ref_k = plan.state_names.index(sensor.reference_state) if sensor.reference_state else None
    own = asin_deg(heading.horizontal_disturbance(per_run) / h)              # (K, R)
    change = (None if ref_k is None else
              asin_deg(heading.horizontal_disturbance(per_run - per_run[ref_k][None]) / h))
    counted = own if change is None else change
    run_sizes_all = heading.horizontal_disturbance(per_run)
    results = []
    for k, state in enumerate(plan.state_names):
        run_sizes = run_sizes_all[k]
        runs = [RunContribution(run.name, float(currents[r, k]), per_run[k, r].copy(),
                                float(nearest[r]), float(own[k, r]),
                                None if change is None else float(change[k, r]),
                                float(counted[k, r]) / sensor.budget_deg,
                                run.geometry.return_kind)
                for r, run in enumerate(plan.runs)]
        runs.sort(key=lambda c: (-c.share_of_budget, c.name))
        b = totals[0, k]
        results.append(StateResult(
            state=state, field_t=b,
            vector_deviation_deg=float(figures.vector_deviation_deg[0, k]),
            max_deviation_deg=float(figures.max_deviation_deg[0, k]),
            magnitude_bound_deg=_asin_deg((run_sizes.sum() + bound[0, k]) / h),
            change_from_reference_deg=(None if figures.change_from_reference_deg is None
                                       else float(figures.change_from_reference_deg[0, k])),
            heeled_max_deviation_deg=float(figures.heeled_max_deviation_deg[0, k]),
            budget_used_deg=float(figures.budget_used_deg[0, k]),
            within_budget=bool(figures.within_budget[0, k]),
            overwhelmed=bool(figures.overwhelmed[0, k]),
            fraction_of_total=float(np.linalg.norm(b)) / site.total_t,
            equipment_bound_t=float(bound[0, k]), runs=runs,
            equipment=equipment_at(plan, sensor, position, state, h)))
    return results


def analyse(plan: Plan) -> Analysis:
    """Compute the deviation budget of every sensor in every state."""
    site = site_field(plan.site)
    conductors = (plan.conductors if plan.conductors is not None
                  else route_runs([r.geometry for r in plan.runs]))
    positions = np.array([s.position_m for s in plan.sensors]).reshape(-1, 3)
    unit, nearest = run_fields_at(conductors, len(plan.runs), positions)
    sensors = []
    for i, sensor in enumerate(plan.sensors):
        states = evaluate_sensor(plan, sensor, site, unit[i], nearest[i])
        sensors.append(SensorResult(sensor, states, all(s.within_budget for s in states)))
    return Analysis(plan, site, conductors, sensors)
