"""The figure held against a heading sensor's budget: the worst over headings, attitude, switching
and every part of unknown direction."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..physics import heading
from ..physics.worst_case import horizontal_over_attitude, worst_combination
from .currents import CircuitCurrents, circuit_currents
from .equipment import OVERWHELMED_DEG, EquipmentFields, asin_deg
from .runs import MAX_EXACT_GENERATORS_ATTITUDE, MAX_EXACT_GENERATORS_LEVEL, RunParts


@dataclass(frozen=True)
class Figures:
    """Budget figures of one sensor at P positions in K states; arrays (P, K) [deg] unless noted.

    vector_deviation_deg : level, largest over headings, from the vector sum alone
    max_deviation_deg : level, with every bound of unknown direction: the absolute worst
    attitude_deviation_deg : the same at the worst attitude within heel and pitch
    change_from_reference_deg : level, the deviation of the residual field b - b_ref with the
        bounds that change from the reference state (None without a reference state)
    attitude_change_deg : the same at the worst attitude (None without a reference state)
    budget_used_deg : the figure held against the budget
    overwhelmed : what the sensor sees (the residual, if adjusted) can reach H
    within_budget : budget_used_deg <= budget and not overwhelmed
    combination : (P, K, Ci) int, the switching of the independent circuits behind the held
        figure (1 on, 0 off, -1 on reversed)
    total_t : (P, K, 3) [T] the vector field in that worst combination
    bound_t : (P, K) [T] the bounds of unknown direction counted in the held figure
    steel : what steel items add (:class:`.with_steel.SteelFigures`); None without steel

    Where only the held figure was asked for (``held_only``), the figures that do not feed it
    are None.
    """

    vector_deviation_deg: np.ndarray | None
    max_deviation_deg: np.ndarray | None
    attitude_deviation_deg: np.ndarray | None
    change_from_reference_deg: np.ndarray | None
    attitude_change_deg: np.ndarray | None
    budget_used_deg: np.ndarray
    overwhelmed: np.ndarray
    within_budget: np.ndarray
    combination: np.ndarray
    total_t: np.ndarray
    bound_t: np.ndarray
    steel: object = None


def _worst(base, generators, reversing, heel, pitch):
    """Largest horizontal size over attitude and switching: (size, choice)."""
    if generators.shape[-2] == 0:
        size = horizontal_over_attitude(base, heel, pitch) if heel or pitch else \
            heading.horizontal_disturbance(base)
        return size, np.zeros(base.shape[:-1] + (0,), dtype=int)
    return worst_combination(base, generators, reversing, heel, pitch)


def _attitude_size(b, heel, pitch):
    return horizontal_over_attitude(b, heel, pitch) if heel or pitch else \
        heading.horizontal_disturbance(b)


def _held(base, switched, switched_reversing, spread, scale, scalar, heel, pitch, exact_cap):
    """The largest horizontal size of base + switching + spread, over attitude.

    Parameters
    ----------
    base : (P, K, 3)
    switched : (P, K, Ci, 3) independent circuits' fields in each state
    switched_reversing : (Ci,) bool
    spread : (P, R, G, 3) per ampere; scale : (R, K) amperes
    scalar : (P, K) bounds of unknown direction
    exact_cap : int, most generators searched exactly

    Returns
    -------
    size (P, K), choice of the switched circuits (P, K, Ci), bound counted apart (P, K)
    """
    n_p, n_k = base.shape[:2]
    n_r, n_g = spread.shape[1:3]
    flat = spread.reshape(n_p, n_r * n_g, 3)
    amps = np.abs(scale)[np.repeat(np.arange(n_r), n_g)]                       # (R*G, K)
    # Point by point, the largest generators (at their largest current) are searched exactly,
    # so a point's figure never depends on which other points are evaluated with it.
    present = np.flatnonzero((np.abs(flat).max(axis=(0, 2)) > 0) & (amps.max(axis=1) > 0))
    flat, amps = flat[:, present], amps[present]
    weight = np.linalg.norm(flat, axis=-1) * amps.max(axis=1)[None, :]         # (P, n)
    room = min(max(0, exact_cap - switched.shape[2]), len(present))
    order = np.argsort(-weight, axis=1, kind="stable")
    keep = order[:, :room]                                                     # (P, room)
    kept = (np.take_along_axis(flat, keep[..., None], axis=1)[:, None]
            * np.transpose(amps[keep], (0, 2, 1))[..., None])                 # (P, K, room, 3)
    generators = np.concatenate([switched, kept], axis=2)
    reversing = np.concatenate([switched_reversing, np.ones(room, dtype=bool)])
    size, choice = _worst(base, generators, reversing, heel, pitch)
    # The smaller spread generators are counted apart, by the triangle inequality at the worst
    # attitude: never less than the exact figure.
    apart = scalar.copy()
    if room < len(present):
        rest = np.ones(weight.shape, dtype=bool)
        np.put_along_axis(rest, keep, False, axis=1)
        sizes = _attitude_size(flat, heel, pitch) * rest                       # (P, n)
        apart += sizes @ amps
    return size, choice[..., :switched.shape[2]], apart


def budget_figures(plan, sensor, horizontal_t, parts: RunParts, items: EquipmentFields, *,
                   exact_generators=(MAX_EXACT_GENERATORS_LEVEL, MAX_EXACT_GENERATORS_ATTITUDE),
                   currents: CircuitCurrents | None = None, steel=None, vertical_t=None,
                   adjusting_vertical_t=None, steel_exact: bool = True,
                   held_only: bool = False) -> Figures:
    """The figures held against a sensor's budget at P points in every state.

    Parameters
    ----------
    plan : Plan
        Its circuits (currents per state, which switch independently) and runs.
    sensor : Sensor
        Its budget, reference state, heel and pitch limits.
    horizontal_t : float [T]
        The Earth's horizontal field H.
    parts : RunParts
        Each run's field per ampere at the points.
    items : EquipmentFields
        The equipment at the points.
    exact_generators : (int, int)
        Most spread generators (pairs' lies) searched exactly, level and with attitude; the
        smaller ones beyond are counted as bounds of unknown direction (an upper bound).
    steel : SteelParts, optional
        The plan's steel items at the points; with any present the disturbance turns with the
        Earth's field and the figures come from :func:`.with_steel.steel_figures` (needs
        ``vertical_t``, Z where judged, and ``adjusting_vertical_t``, Z where adjusted).
    steel_exact : bool
        With steel: the exact worst over headings (False: a quicker proven bound, for searches).
    held_only : bool
        Only what the held figure needs (a search over many positions): the figures that do not
        feed it are None (``vector_deviation_deg``, ``max_deviation_deg``,
        ``change_from_reference_deg``, and ``attitude_deviation_deg`` of a sensor adjusted in
        a reference state). The held figure, verdict, switching and bound are the same numbers,
        from the same calls, as without it. With steel, the held figure is worked out exactly only
        in the states the sensor is used in (the quick proven bound, never below it, in the
        others, which no verdict reads).

    Notes
    -----
    Over all headings the largest deviation of a vessel-fixed disturbance b is asin(|b_h|/H)
    (the needle lies along H + b_h; NGA Pub. 226, semicircular deviation). A field of unknown
    direction and size at most beta can line up with b_h at the worst attitude, so the worst case
    is asin((|b_h| + beta)/H), exact for the worst direction.

    Circuits that switch independently may be on or off (or on either way round) on top of any
    state; the worst switching is found exactly (:func:`deviation.physics.worst_case.worst_combination`).
    A bound's current is taken with every independent circuit of its run on.

    A sensor adjusted in a reference state keeps the residual field: compass correctors and an
    electronic compass's hard-iron calibration cancel the vessel-fixed field present when they are
    set (the reference state, independent circuits off), so in another state the sensor sees
    b - b_ref and its deviation is delta(b - b_ref), not delta(b) - delta(b_ref) (the latter is what
    a deviation card alone leaves, with no correction). A bound's share of the residual goes with
    the change of its current, because the cable does not move between states; an item present in
    both states is adjusted out with the reference.
    """
    h = horizontal_t
    heel, pitch = sensor.max_heel_deg, sensor.max_pitch_deg
    split = currents or circuit_currents(plan)
    if steel is not None and np.any(steel.centre != 0.0):
        return _with_steel(plan, sensor, h, vertical_t, parts, items, steel, split,
                           exact_generators, steel_exact, adjusting_vertical_t, held_only)
    base_a = split.base_a                                                        # (R, K)
    base = np.einsum("prj,rk->pkj", parts.unit_t, base_a) + items.oriented      # (P, K, 3)
    switched = split.switched_fields(parts.unit_t)                              # (P, K, Ci, 3)
    reversing = split.reversing
    scale = split.scale_a()
    scalar = parts.bound_t @ scale + items.bound                                 # (P, K)

    def held(field, scale, scalar, heel, pitch, cap):
        return _held(field, switched, reversing, parts.spread_t, scale, scalar, heel, pitch, cap)

    cap_level, cap_attitude = exact_generators
    tilt = bool(heel or pitch)
    adjusted = sensor.reference_state is not None
    vector = absolute = attitude = change = attitude_change = None
    if not (held_only and adjusted):
        # Level, the search is the same as without attitude: done once, its switching kept.
        # None where held_only skips a search whose figure is not asked for (typed Any: the
        # skipped one is never read).
        level: Any = None
        level_apart: Any = None
        if not (held_only and tilt):
            level, choice, level_apart = held(base, scale, scalar, 0.0, 0.0, cap_level)
        tilted, tilted_apart = level, level_apart
        if tilt:
            tilted, choice, tilted_apart = held(base, scale, scalar, heel, pitch, cap_attitude)
        if not held_only:
            vector = asin_deg(heading.horizontal_disturbance(
                base + np.einsum("pkc,pkcj->pkj", choice, switched)) / h)
            absolute = asin_deg((level + level_apart) / h)
        attitude = asin_deg((tilted + tilted_apart) / h)
        overwhelmed = tilted + tilted_apart >= h
        used, held_bound = attitude, tilted_apart
    if adjusted:
        k = plan.state_index(sensor.reference_state)
        residual = base - base[:, k:k + 1, :]
        moved = split.scale_a(k)
        changing = parts.bound_t @ moved + items.changing
        level_r: Any = None
        level_r_apart: Any = None
        if not (held_only and tilt):
            level_r, choice, level_r_apart = held(residual, moved, changing, 0.0, 0.0,
                                                  cap_level)
        tilted_r, tilted_r_apart = level_r, level_r_apart
        if tilt:
            tilted_r, choice, tilted_r_apart = held(residual, moved, changing, heel, pitch,
                                                    cap_attitude)
        if not held_only:
            change = asin_deg((level_r + level_r_apart) / h)
        attitude_change = asin_deg((tilted_r + tilted_r_apart) / h)
        # Adjusted, the sensor sees only the residual: that is what can overwhelm it.
        overwhelmed = tilted_r + tilted_r_apart >= h
        used, held_bound = attitude_change, tilted_r_apart
    within = (used <= sensor.budget.value) & ~overwhelmed
    total = base + np.einsum("pkc,pkcj->pkj", choice, switched)
    return Figures(vector, absolute, attitude, change, attitude_change, used, overwhelmed, within,
                   choice, total, held_bound)


def _with_steel(plan, sensor, h, z, parts, items, steel, split, exact_generators, exact,
                adjusting_vertical_t, held_only):
    """:func:`budget_figures` with steel items (:mod:`.with_steel`)."""
    from .with_steel import steel_figures

    out, vector, choice, info = steel_figures(
        plan, sensor, h, z, parts, items, steel, split, exact_generators, exact=exact,
        adjusting_vertical_t=adjusting_vertical_t, held_only=held_only)
    (level, tilted), *residual = out
    change = attitude_change = None
    used = tilted
    scale = split.scale_a()
    held_bound = parts.bound_t @ scale + items.bound
    if residual:
        change, attitude_change = residual[0]
        used = attitude_change
        held_bound = parts.bound_t @ split.scale_a(plan.state_index(sensor.reference_state)) \
            + items.changing
    overwhelmed = used >= OVERWHELMED_DEG
    within = (used <= sensor.budget.value) & ~overwhelmed
    base = np.einsum("prj,rk->pkj", parts.unit_t, split.base_a) + items.oriented
    total = base + np.einsum("pkc,pkcj->pkj", choice, split.switched_fields(parts.unit_t))
    return Figures(vector, level, tilted, change, attitude_change, used, overwhelmed, within,
                   choice, total, held_bound, info)
