"""Every figure a sensor needs, from one entry: :func:`sensor_figures`.

A heading sensor is held in degrees (:mod:`.held`), a total-field magnetometer in nT
(:mod:`.total`); the caller gets the held figure in the budget's own unit either way, with its
verdict, the switching behind it, and, for one position, what each run alone contributes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..physics import heading
from ..physics.total_field import total_field_error_range
from ..physics.worst_case import worst_combination
from ..quantities import Unit
from .currents import CircuitCurrents, circuit_currents
from .equipment import EquipmentFields, asin_deg, equipment_fields
from .held import Figures, budget_figures
from .runs import MAX_EXACT_GENERATORS_ATTITUDE, MAX_EXACT_GENERATORS_LEVEL, RunParts
from .steel import steel_parts_at
from .total import TotalFieldFigures, total_field_figures

#: Tesla per nanotesla.
TESLA_PER_NT = 1e-9


@dataclass(frozen=True)
class RunFigures:
    """Each run alone at one position, in every state; arrays (K, R).

    current_a : [A] in the switching of independent circuits behind the held figure
    field_t : (K, R, 3) [T] its field of known direction at that current
    alone_deg : level, its own largest deviation over headings and its lies, absolute (heading
        sensors; None for a total-field magnetometer)
    change_deg : the same for its own residual b - b_ref (heading sensors adjusted in a reference
        state; else None)
    bound_t : [T] the part of its own largest horizontal size that is of unknown direction
    unknown_t : [T] the size of its parts of unknown direction in 3-D (each lie's and end's
        spread and floor added by the triangle inequality): its vertical field is within this
        of the known part's
    held : what it alone would make of the held figure, in the budget's unit: degrees (its
        residual where the sensor is adjusted), or nT of total-field error over headings and
        attitude for a total-field magnetometer
    """

    current_a: np.ndarray
    field_t: np.ndarray
    alone_deg: np.ndarray | None
    change_deg: np.ndarray | None
    bound_t: np.ndarray
    unknown_t: np.ndarray
    held: np.ndarray


@dataclass(frozen=True)
class SensorFigures:
    """Every figure of a sensor at P positions in K states.

    unit : the budget's unit; ``held`` (P, K) is in it
    within, overwhelmed : (P, K) bool (overwhelmed only for heading sensors)
    combination : (P, K, Ci) the switching of independent circuits behind the held figure
    total_t : (P, K, 3) [T] the vector field (absolute, not residual) in that switching
    bound_t : (P, K) [T] the bounds of unknown direction counted in the held figure
    heading : the degree figures (heading sensors; None for a total-field magnetometer)
    total_field : the nT figures (total-field magnetometers; else None)
    runs : each run alone (only where asked, at one position)
    """

    unit: Unit
    held: np.ndarray
    within: np.ndarray
    overwhelmed: np.ndarray
    combination: np.ndarray
    total_t: np.ndarray
    bound_t: np.ndarray
    heading: Figures | None
    total_field: TotalFieldFigures | None
    runs: RunFigures | None = None


def sensor_figures(plan, sensor, site, parts: RunParts, points_m=None, *,
                   items: EquipmentFields | None = None, currents: CircuitCurrents | None = None,
                   per_run: bool = False, held_only: bool = False,
                   exact_generators=(MAX_EXACT_GENERATORS_LEVEL, MAX_EXACT_GENERATORS_ATTITUDE),
                   steel=None, steel_exact: bool = True
                   ) -> SensorFigures:
    """Every figure a sensor needs at P points: the one entry to the budget's rules.

    Parameters
    ----------
    plan : Plan
    sensor : Sensor
        Its kind and budget decide the unit: degrees of deviation, or nT of total-field error.
    site : SiteField
        The Earth's H and Z.
    parts : RunParts
        Each run's field per ampere at the P points.
    points_m : (P, 3) array [m], optional
        Where the sensor is evaluated (default: its own position); for the equipment.
    items : EquipmentFields, optional
        The equipment at the points, if already computed.
    currents : CircuitCurrents, optional
        The plan's currents, if already split.
    per_run : bool
        Also each run alone (P must be 1).
    held_only : bool
        Only what the held figure needs (a search over many positions), as
        :func:`deviation.budget.held.budget_figures`; the held figure is the same number (with
        steel, exact only in the states the sensor is used in).
    exact_generators : (int, int)
        As :func:`deviation.budget.held.budget_figures`.
    steel : SteelParts, optional
        The plan's steel items at the points, if already computed (else computed here when the
        plan has any).
    steel_exact : bool
        With steel, the exact worst over headings (False: a quicker proven bound, for searches
        over many positions; every position they return is evaluated again exactly).
    """
    points = sensor.position_m[None, :] if points_m is None else np.asarray(points_m, float)
    h = site.horizontal_t
    split = currents or circuit_currents(plan)
    if items is None:
        items = equipment_fields(plan, sensor, points.reshape(-1, 3), h)
    if steel is None and plan.steel:
        steel = steel_parts_at(plan, points)
    z_adjust = adjusting_vertical_t(plan, site)
    if sensor.budget.unit is Unit.NANOTESLA:
        scalar = total_field_figures(plan, sensor, h, site.vertical_t, parts, items, split,
                                     steel=steel, steel_exact=steel_exact)
        base = np.einsum("prj,rk->pkj", parts.unit_t, split.base_a) + items.oriented
        total = base + np.einsum("pkc,pkcj->pkj", scalar.combination,
                                 split.switched_fields(parts.unit_t))
        figures = SensorFigures(Unit.NANOTESLA, scalar.error_t / TESLA_PER_NT,
                                scalar.within_budget, np.zeros(scalar.error_t.shape, dtype=bool),
                                scalar.combination, total, scalar.bound_t, None, scalar)
    else:
        degrees = budget_figures(plan, sensor, h, parts, items, exact_generators=exact_generators,
                                 currents=split, steel=steel, vertical_t=site.vertical_t,
                                 adjusting_vertical_t=z_adjust, steel_exact=steel_exact,
                                 held_only=held_only)
        figures = SensorFigures(Unit.DEGREES, degrees.budget_used_deg, degrees.within_budget,
                                degrees.overwhelmed, degrees.combination, degrees.total_t,
                                degrees.bound_t, degrees, None)
    if per_run:
        figures = _with_runs(figures, plan, sensor, site, parts, split)
    return figures


def adjusting_vertical_t(plan, site) -> float:
    """Z [T] (down positive) where the plan's sensors are adjusted: its adjusting site, or
    ``site`` (the plan's own) when it names none."""
    if plan.adjusting_site is None:
        return site.vertical_t
    from ..sitefield import site_field

    return site_field(plan.adjusting_site).vertical_t


def _with_runs(figures, plan, sensor, site, parts, split):
    """The figures with each run alone at the (single) position."""
    from dataclasses import replace

    h = site.horizontal_t
    run_a = split.run_currents_a(figures.combination[0])                    # (R, K)
    unit, spread, bound = parts.unit_t[0], parts.spread_t[0], parts.bound_t[0]
    per_run = unit[None, :, :] * run_a.T[:, :, None]                        # (K, R, 3)
    scale = split.scale_a().T                                               # (K, R)
    ref_k = plan.state_index(sensor.reference_state) if sensor.reference_state else None
    own_size, run_bound = _alone(per_run, spread, bound, scale)
    seen, seen_scale = per_run, scale
    if ref_k is not None:
        seen, seen_scale = per_run - per_run[ref_k][None], split.scale_a(ref_k).T
    if figures.unit is Unit.NANOTESLA:
        held = _alone_total_nt(seen, spread, bound, seen_scale, site, sensor)
        alone = change = None
    else:
        alone = asin_deg(own_size / h)                                      # (K, R)
        change = None if ref_k is None else asin_deg(
            _alone(seen, spread, bound, seen_scale)[0] / h)
        held = alone if change is None else change
    unknown = (bound[None, :] + np.linalg.norm(spread, axis=-1).sum(axis=-1)[None, :]) * scale
    runs = RunFigures(run_a.T, per_run, alone, change, run_bound, unknown, held)
    return replace(figures, runs=runs)


def _alone(per_run, spread, bound, scale):
    """Each run alone, level: its largest horizontal size over its own lies and bounds, and the
    part of that of unknown direction. per_run (K, R, 3) [T], spread (R, G, 3) [T/A], bound (R,)
    [T/A], scale (K, R) [A]."""
    generators = spread[None] * scale[:, :, None, None]                     # (K, R, G, 3)
    size, _ = worst_combination(per_run, generators,
                                np.ones(generators.shape[2], dtype=bool))
    extra = bound[None, :] * scale
    return size + extra, size + extra - heading.horizontal_disturbance(per_run)


def _alone_total_nt(per_run, spread, bound, scale, site, sensor):
    """Each run alone: its largest total-field error |F + C b| - |F| over headings, attitude and
    its own lies, in nT, (K, R). Exact over the vertices of its lies (the largest error is
    convex in b, the smallest is checked at the same vertices and widened by the run's bound,
    which moves |F + C b| by at most its size)."""
    n_g = spread.shape[1]
    signs = np.array(np.meshgrid(*([[-1.0, 1.0]] * n_g), indexing="ij")).reshape(n_g, -1).T
    generators = spread[None] * scale[:, :, None, None]                     # (K, R, G, 3)
    vertices = per_run[:, :, None, :] + np.einsum("vg,krgj->krvj", signs, generators)
    low, high = total_field_error_range(vertices, site.horizontal_t, site.vertical_t,
                                        sensor.max_heel_deg, sensor.max_pitch_deg)
    extra = bound[None, :] * scale
    error = np.maximum(high.max(axis=-1), -low.min(axis=-1)) + extra
    return error / TESLA_PER_NT
