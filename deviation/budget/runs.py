"""What each run contributes at points, per ampere: the field of known direction, the spread of
a pair over its lies, and the bounds of unknown direction."""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..constants import TWISTED_FLOOR_FRACTION
from ..physics.field import (
    point_segment_distance,
    segment_field_by_group,
)
from ..physics.routing import as_paired, route_runs

#: Turns of a pair's return about the run's axis at which a pair of unknown lie is routed [deg]:
#: left of travel, above, right, below.
LIE_ANGLES_DEG = (0.0, 90.0, 180.0, 270.0)


def run_fields_at(conductors, n_runs, points_m, *, nearest=True, inside=None):
    """Field of each run at unit current [T/A], shape (P, R, 3), and nearest distances (P, R) [m]
    (infinite when ``nearest`` is False: the distances cost as much as the fields).

    ``inside``, a (P,) bool array if given, is set where a point lies inside a conductor.
    """
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    unit, hit = segment_field_by_group(conductors.start_m, conductors.end_m, conductors.sign,
                                       conductors.run_index, n_runs, points,
                                       radius_m=conductors.radius_m)
    if inside is not None:
        inside |= hit.any(axis=1)
    distance_to = np.full((len(points), n_runs), np.inf)
    if len(conductors) and nearest:
        distance = point_segment_distance(conductors.start_m, conductors.end_m, points)
        firsts = np.flatnonzero(np.r_[True, np.diff(conductors.run_index) != 0])
        distance_to[:, conductors.run_index[firsts]] = np.minimum.reduceat(distance, firsts,
                                                                           axis=1)
    return unit, distance_to


#: Generators of a pair's spread (see :func:`_lie_spread`).
SPREAD_GENERATORS = 4
#: Most spread generators given to the exact worst-case search; the smaller ones beyond are
#: counted as bounds of unknown direction (never less than the exact figure, a little more).
MAX_EXACT_GENERATORS_LEVEL = 64
MAX_EXACT_GENERATORS_ATTITUDE = 24


@dataclass(frozen=True)
class RunParts:
    """What the budget needs of each run at P points, per ampere of the run's current.

    unit_t : (P, R, 3) [T/A]
        The field of known direction (for a pair: the centre of its possible lies).
    spread_t : (P, R, SPREAD_GENERATORS, 3) [T/A]
        How a pair's field may move as it turns about its own axis, as generators g of a
        zonotope: the field is unit + sum_j s_j g_j for some s_j in [-1, 1] (zeros where a run
        has no such freedom).
    bound_t : (P, R) [T/A]
        A part of unknown direction: the second-order spread of a pair of unknown lie, and what
        a twisted run's floor adds.
    nearest_m : (P, R) [m]
        Infinite where not asked for.
    inside : (P,) bool
        The point lies inside a conductor of the plan as routed (its figures are not valid).
    """

    unit_t: np.ndarray
    spread_t: np.ndarray
    bound_t: np.ndarray
    nearest_m: np.ndarray
    inside: np.ndarray | None = None


def _lie_spread(b0, b90, b180, b270, lie):
    """Centre, spread generators (..., 4, 3) and a scalar bound of a pair over its lies [T/A].

    Notes
    -----
    "side by side" leaves the return left or right of the supply: exactly the two fields b0 and
    b180, the centre (b0 + b180)/2 plus or minus u = (b0 - b180)/2. "one above the other"
    likewise with b90 and b270 and w = (b90 - b270)/2.

    With the lie not known, turning the return by alpha about the axis moves the field on
    b(alpha) = c + cos(alpha) u + sin(alpha) w to first order in spacing/distance (the return is
    a line current displaced by s(cos alpha n + sin alpha v)). The ellipse lies inside the
    octagon sum_j [-1, 1] tan(pi/8) (cos(j pi/4) u + sin(j pi/4) w), j = 0..3 (the regular octagon
    circumscribing the unit circle, mapped by [u w]), at most 1/cos(pi/8) = 1.082 times farther
    out; c, the mean of the four routed lies, differs from each of them by the second-order
    delta = +-((b0 + b180) - (b90 + b270))/4, counted as a bound.
    """
    zero = np.zeros(b0.shape[:-1] + (SPREAD_GENERATORS, 3))
    if lie == "side by side":
        zero[..., 0, :] = (b0 - b180) / 2
        return (b0 + b180) / 2, zero, np.zeros(b0.shape[:-1])
    if lie == "one above the other":
        zero[..., 0, :] = (b90 - b270) / 2
        return (b90 + b270) / 2, zero, np.zeros(b0.shape[:-1])
    u, w = (b0 - b180) / 2, (b90 - b270) / 2
    t = math.tan(math.pi / 8)
    for j in range(SPREAD_GENERATORS):
        angle = j * math.pi / 4
        zero[..., j, :] = t * (math.cos(angle) * u + math.sin(angle) * w)
    delta = ((b0 + b180) - (b90 + b270)) / 4
    return (b0 + b90 + b180 + b270) / 4, zero, np.linalg.norm(delta, axis=-1)


def _lie_fields(geometries, points):
    """(4, P, n, 3) fields per ampere of each geometry with its return at LIE_ANGLES_DEG."""
    return np.stack([run_fields_at(route_runs([replace(g, return_angle_deg=a) for g in geometries]),
                                   len(geometries), points)[0] for a in LIE_ANGLES_DEG])


def parts_of_runs(runs, points_m, conductors=None, *, nearest=True) -> RunParts:
    """:class:`RunParts` of some runs (the plan's :class:`~deviation.plan.Run` values).

    ``conductors``, if given, are the runs already routed (``plan.conductors_of``); ``nearest``
    False leaves the nearest distances out (a search over many points does not need them).
    """
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    geometries = [r.geometry for r in runs]
    routed = conductors if conductors is not None else route_runs(geometries)
    inside = np.zeros(len(points), dtype=bool)
    unit, nearest_m = run_fields_at(routed, len(runs), points, nearest=nearest, inside=inside)
    spread = np.zeros(unit.shape[:2] + (SPREAD_GENERATORS, 3))
    bound = np.zeros(unit.shape[:2])
    paired = [i for i, g in enumerate(geometries) if g.return_kind == "paired"]
    if paired:
        b = _lie_fields([geometries[i] for i in paired], points)
        for j, i in enumerate(paired):
            unit[:, i], spread[:, i], bound[:, i] = _lie_spread(*b[:, :, j], runs[i].lie)
    twisted = [i for i, g in enumerate(geometries) if g.return_kind == "twisted"]
    if twisted:
        # Beyond what measurement supports, no weaker than the floor fraction of the same run
        # laid as a pair in its worst lie (Moser & Spencer 1968): the shortfall is a bound.
        b = _lie_fields([as_paired(geometries[i]) for i in twisted], points)
        for j, i in enumerate(twisted):
            centre, generators, delta = _lie_spread(*b[:, :, j], "not known")
            pair = (np.linalg.norm(centre, axis=-1) + delta
                    + np.linalg.norm(generators, axis=-1).sum(axis=-1))
            bound[:, i] = np.maximum(TWISTED_FLOOR_FRACTION * pair
                                     - np.linalg.norm(unit[:, i], axis=-1), 0.0)
    return RunParts(unit, spread, bound, nearest_m, inside)
