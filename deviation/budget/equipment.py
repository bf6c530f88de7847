"""Magnetised equipment at points: labelled compass safe distances and magnets (IEC 60945), and
the arcsine that turns a horizontal disturbance into the largest deviation over headings."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..constants import OVERWHELMED_DEG, SAFE_DISTANCE_DEG_UT
from ..physics.field import (
    dipole_field,
    dipole_field_bound,
)
from ..sitefield import TESLA_PER_UT


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
