"""The figures held against a sensor's budget, vectorised over positions and states.

One place for every rule that turns fields into the number a budget is judged by: deviation over
all headings, heel and pitch, the change from the reference state, equipment bounds (IEC 60945
compass safe distance, magnets of unknown orientation). ``check``, the advice, the spot search and
the card all use these functions, so they cannot disagree.

Where the plan does not say, the worst case counts: an item of unknown orientation points the
worst way, the attitude is the worst within the stated heel and pitch. Figures that rest on such a
worst case are bounds, and the results say so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import heading
from .constants import SAFE_DISTANCE_DEG_UT
from .field import dipole_field, dipole_field_bound
from .sitefield import TESLA_PER_UT

#: Deviation reported where the disturbance's horizontal part reaches H: the sensor can point
#: anywhere (renderers say "overwhelmed", never this number).
OVERWHELMED_DEG = 180.0


def asin_deg(ratio):
    """arcsin in degrees of |b|/H, elementwise; OVERWHELMED_DEG where |b| >= H."""
    ratio = np.asarray(ratio, dtype=float)
    return np.where(ratio < 1.0, np.degrees(np.arcsin(np.clip(ratio, 0.0, 1.0))),
                    OVERWHELMED_DEG)


def safe_distance_disturbance_t(label: str, horizontal_t: float) -> float:
    """Horizontal disturbance an item may cause at its labelled compass safe distance [T].

    Parameters
    ----------
    label : "standard" or "steering"
    horizontal_t : float [T]

    Notes
    -----
    IEC 60945 (compass safe distance): the item may cause at most 5.4/H degrees at a standard
    compass and 18/H degrees at a steering compass, H in microtesla; as a field that is
    H sin(k/H deg), about 94.2 nT and 314 nT whatever H is.

    References
    ----------
    IEC 60945, Maritime navigation and radiocommunication equipment and systems - General
    requirements, clause on compass safe distance (restated in ISO 25862, Annex F).
    """
    h_ut = horizontal_t / TESLA_PER_UT
    return horizontal_t * math.sin(math.radians(SAFE_DISTANCE_DEG_UT[label] / h_ut))


def item_effect(item, points_m, horizontal_t):
    """One magnetised item at many points.

    Returns
    -------
    field : (P, 3) array [T] or None
        The vector field where the orientation is known, else None.
    bound : (P,) array [T]
        Largest field it may cause where the orientation is unknown (any direction), else zeros.
    distance : (P,) array [m]

    Notes
    -----
    A labelled item falls off at least as 1/r^3 beyond its safe distance (a dipole's field);
    inside it the same 1/r^3 law is continued, a figure the output flags as inside the label.
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


@dataclass(frozen=True)
class EquipmentFields:
    """Equipment at P positions in K states.

    oriented : (P, K, 3) [T]
        Vector sum of the items of known orientation present in each state.
    bound : (P, K) [T]
        Sum of the largest fields of the items of unknown orientation present in each state.
    changing : (P, K) [T]
        The same for the items whose presence differs from the sensor's reference state: an
        item present in both is adjusted out with the reference state.
    """

    oriented: np.ndarray
    bound: np.ndarray
    changing: np.ndarray


def equipment_fields(plan, sensor, points_m, horizontal_t) -> EquipmentFields:
    """The plan's equipment at many points in every state (see :class:`EquipmentFields`)."""
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
    return EquipmentFields(oriented, bound, changing)


def attitude_horizontal(b_vessel, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Largest level horizontal part of a vessel-fixed field over the attitudes allowed, exactly.

    Parameters
    ----------
    b_vessel : (..., 3) array
    max_heel_deg, max_pitch_deg : float [deg]

    Returns
    -------
    (..., ) array, in the unit of ``b_vessel``
    """
    if max_heel_deg:
        return heading.horizontal_disturbance(
            b_vessel, heading.worst_heel_deg(b_vessel, max_heel_deg))
    return heading.horizontal_disturbance(b_vessel)


@dataclass(frozen=True)
class Figures:
    """Budget figures of one sensor at P positions in K states; arrays (P, K) [deg].

    vector_deviation_deg : level, largest over headings, from the vector sum alone
    max_deviation_deg : level, vector sum and equipment bounds: the absolute worst
    attitude_deviation_deg : the same at the worst attitude within heel and pitch
    change_from_reference_deg : level, the deviation of the residual field b - b_ref, with the
        bounds of items that change with the state (None without a reference state)
    attitude_change_deg : the same at the worst attitude (None without a reference state)
    budget_used_deg : the figure held against the budget
    overwhelmed : the disturbance (or residual) reaches H at some attitude
    within_budget : budget_used_deg <= budget and not overwhelmed
    """

    vector_deviation_deg: np.ndarray
    max_deviation_deg: np.ndarray
    attitude_deviation_deg: np.ndarray
    change_from_reference_deg: np.ndarray | None
    attitude_change_deg: np.ndarray | None
    budget_used_deg: np.ndarray
    overwhelmed: np.ndarray
    within_budget: np.ndarray


def budget_figures(sensor, horizontal_t, totals_t, bound_t, changing_t, reference_index=None):
    """The figures held against a sensor's budget.

    Parameters
    ----------
    sensor : Sensor
        Its budget, heel and pitch limits.
    horizontal_t : float [T]
        The Earth's horizontal field H.
    totals_t : (P, K, 3) array [T]
        Vector sum of runs and oriented items, vessel frame.
    bound_t, changing_t : (P, K) arrays [T]
        Fields of unknown direction: all of them, and those that change from the reference state.
    reference_index : int or None
        The state the sensor is adjusted in.

    Returns
    -------
    Figures

    Notes
    -----
    Over all headings the largest deviation of a vessel-fixed disturbance b is
    asin(|b_h|/H) (the needle lies along H + b_h; NGA Pub. 226, semicircular deviation). A field
    of unknown direction and size at most beta can line up with b_h, so the worst case is
    asin((|b_h| + beta)/H), exact for the worst direction.

    A sensor adjusted in a reference state keeps the residual field: compass correctors and an
    electronic compass's hard-iron calibration cancel the vessel-fixed field b_ref present when
    they are set, so in another state the sensor sees b - b_ref and its deviation is
    delta(b - b_ref), not delta(b) - delta(b_ref) (the latter is what a deviation card alone
    leaves, with no correction). The same worst-attitude and bound rules apply to the residual.
    """
    h = horizontal_t
    heel, pitch = sensor.max_heel_deg, sensor.max_pitch_deg
    level = heading.horizontal_disturbance(totals_t)
    tilted = attitude_horizontal(totals_t, heel, pitch) if heel or pitch else level
    vector = asin_deg(level / h)
    absolute = asin_deg((level + bound_t) / h)
    attitude = asin_deg((tilted + bound_t) / h)
    change = attitude_change = None
    overwhelmed = tilted + bound_t >= h
    if reference_index is not None:
        residual = totals_t - totals_t[:, reference_index:reference_index + 1, :]
        level_residual = heading.horizontal_disturbance(residual)
        tilted_residual = (attitude_horizontal(residual, heel, pitch) if heel or pitch
                           else level_residual)
        change = asin_deg((level_residual + changing_t) / h)
        attitude_change = asin_deg((tilted_residual + changing_t) / h)
        used = attitude_change
        # Adjusted, the sensor sees only the residual: that is what can overwhelm it.
        overwhelmed = tilted_residual + changing_t >= h
    else:
        used = attitude
    within = (used <= sensor.budget_deg) & ~overwhelmed
    return Figures(vector, absolute, attitude, change, attitude_change, used, overwhelmed, within)
