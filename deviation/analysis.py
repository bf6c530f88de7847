"""The deviation budget of a plan: every run and item at every sensor in every state.

This is the middle layer: it takes a validated :class:`~deviation.plan.Plan`, calls the physics
and the budget rules, and returns frozen result values that renderers turn into tables, JSON or
reports. The per-run fields at each sensor are kept, so advice and the spot search reuse them.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import heading
from .budget import asin_deg, budget_figures, equipment_fields, item_effect
from .field import point_segment_distance, segment_field_by_group
from .plan import Plan, Sensor, conductors_of, frozen_array
from .routing import Conductors
from .sitefield import SiteField, site_field


@dataclass(frozen=True)
class RunContribution:
    """One run at one sensor in one state (supply and return together)."""

    name: str
    current_a: float
    field_t: np.ndarray               # (3,) vessel frame, this run alone in this state
    nearest_m: float
    max_deviation_deg: float          # this run alone, level, over all headings, absolute
    change_from_reference_deg: float | None   # this run's own residual b - b_ref, level
    share_of_budget: float            # the run's counted figure / budget_deg
    return_kind: str


@dataclass(frozen=True)
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


@dataclass(frozen=True)
class StateResult:
    state: str
    used: bool                        # the sensor is relied on in this state
    is_reference: bool                # the state the sensor is adjusted in
    field_t: np.ndarray               # (3,) all runs and oriented items, vector sum
    vector_deviation_deg: float       # level, from the vector sum only
    max_deviation_deg: float          # level, vector sum plus equipment bounds: absolute worst
    magnitude_bound_deg: float        # level, every field's horizontal size added, bounds too
    change_from_reference_deg: float | None   # level, deviation of the residual field
    heeled_max_deviation_deg: float   # absolute, worst attitude within heel and pitch
    attitude_change_deg: float | None # residual, worst attitude within heel and pitch
    budget_used_deg: float            # the figure held against the budget
    within_budget: bool
    overwhelmed: bool
    fraction_of_total: float          # |vector sum| / F
    equipment_bound_t: float
    runs: tuple[RunContribution, ...]
    equipment: tuple[EquipmentContribution, ...]
    remedies: tuple = ()


@dataclass(frozen=True)
class SensorResult:
    sensor: Sensor
    states: tuple[StateResult, ...]
    within_budget: bool               # in every state the sensor is used in
    unit_fields_t: np.ndarray = field(repr=False)   # (R, 3) each run's field per ampere [T/A]
    nearest_m: np.ndarray = field(repr=False)       # (R,) each run's nearest distance [m]

    def state(self, name: str) -> StateResult:
        return next(s for s in self.states if s.state == name)

    @property
    def worst(self) -> StateResult:
        """The used state with the largest held figure."""
        used = [s for s in self.states if s.used] or list(self.states)
        return max(used, key=lambda s: s.budget_used_deg)

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


def equipment_at(plan, sensor, position, state, horizontal_t):
    """The items present in a state, at one position."""
    out = []
    in_reference = sensor.reference_state is not None
    for item in plan.equipment:
        if not item.present_in(state):
            continue
        field_t, bound, distance = item_effect(item, position[None, :], horizontal_t)
        distance, bound = float(distance[0]), float(bound[0])
        size = float(heading.horizontal_disturbance(field_t[0])) if field_t is not None else bound
        out.append(EquipmentContribution(
            item.name, distance, "safe distance" if item.safe_distance_m is not None else "moment",
            None if field_t is None else frozen_array(field_t[0]), bound,
            float(asin_deg(size / horizontal_t)),
            item.safe_distance_m is not None and distance < item.safe_distance_m,
            item.safe_distance_m,
            compensated=in_reference and item.present_in(sensor.reference_state)))
    return tuple(out)


def evaluate_sensor(plan: Plan, sensor: Sensor, site: SiteField, unit_fields_t: np.ndarray,
                    nearest_m: np.ndarray) -> SensorResult:
    """Budget of one sensor in every state.

    Parameters
    ----------
    unit_fields_t : (R, 3) array [T/A]
        Each run's field at unit current, at the sensor.
    nearest_m : (R,) array [m]
        Each run's nearest distance to the sensor.
    """
    position = sensor.position_m
    h = site.horizontal_t
    currents = plan.run_currents_a                                  # (R, K)
    per_run = unit_fields_t[None, :, :] * currents.T[:, :, None]    # (K, R, 3)
    items = equipment_fields(plan, sensor, position[None, :], h)
    totals = per_run.sum(axis=1)[None] + items.oriented             # (1, K, 3)
    ref_k = plan.state_index(sensor.reference_state) if sensor.reference_state else None
    figures = budget_figures(sensor, h, totals, items.bound, items.changing, ref_k)
    run_sizes = heading.horizontal_disturbance(per_run)                        # (K, R)
    own = asin_deg(run_sizes / h)
    change = (None if ref_k is None else
              asin_deg(heading.horizontal_disturbance(per_run - per_run[ref_k][None]) / h))
    counted = own if change is None else change
    results = []
    for k, state in enumerate(plan.state_names):
        is_reference = k == ref_k
        # In the reference state every run's change is zero by definition; rank by what the
        # adjustment has to absorb instead.
        rank = own[k] if is_reference else counted[k]
        runs = [RunContribution(run.name, float(currents[r, k]), frozen_array(per_run[k, r]),
                                float(nearest_m[r]), float(own[k, r]),
                                None if change is None else float(change[k, r]),
                                float(counted[k, r]) / sensor.budget_deg,
                                run.geometry.return_kind)
                for r, run in enumerate(plan.runs)]
        order = sorted(range(len(runs)), key=lambda r: (-rank[r], runs[r].name))
        results.append(StateResult(
            state=state, used=sensor.used_in_state(state), is_reference=is_reference,
            field_t=frozen_array(totals[0, k]),
            vector_deviation_deg=float(figures.vector_deviation_deg[0, k]),
            max_deviation_deg=float(figures.max_deviation_deg[0, k]),
            magnitude_bound_deg=float(asin_deg((run_sizes[k].sum() + items.bound[0, k]) / h)),
            change_from_reference_deg=(None if figures.change_from_reference_deg is None
                                       else float(figures.change_from_reference_deg[0, k])),
            heeled_max_deviation_deg=float(figures.attitude_deviation_deg[0, k]),
            attitude_change_deg=(None if figures.attitude_change_deg is None
                                 else float(figures.attitude_change_deg[0, k])),
            budget_used_deg=float(figures.budget_used_deg[0, k]),
            within_budget=bool(figures.within_budget[0, k]),
            overwhelmed=bool(figures.overwhelmed[0, k]),
            fraction_of_total=float(np.linalg.norm(totals[0, k])) / site.total_t,
            equipment_bound_t=float(items.bound[0, k]), runs=tuple(runs[r] for r in order),
            equipment=equipment_at(plan, sensor, position, state, h)))
    within = all(s.within_budget for s in results if s.used)
    return SensorResult(sensor, tuple(results), within, frozen_array(unit_fields_t),
                        frozen_array(nearest_m))


def analyse(plan: Plan) -> Analysis:
    """Compute the deviation budget of every sensor in every state."""
    site = site_field(plan.site)
    conductors = conductors_of(plan)
    positions = np.array([s.position_m for s in plan.sensors]).reshape(-1, 3)
    unit, nearest = run_fields_at(conductors, len(plan.runs), positions)
    sensors = tuple(evaluate_sensor(plan, sensor, site, unit[i], nearest[i])
                    for i, sensor in enumerate(plan.sensors))
    return Analysis(plan, site, sensors)
