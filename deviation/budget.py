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
from dataclasses import dataclass, replace

import numpy as np

from . import heading
from .constants import SAFE_DISTANCE_DEG_UT, TWISTED_FLOOR_FRACTION
from .field import dipole_field, dipole_field_bound, point_segment_distance, segment_field_by_group
from .routing import as_paired, route_runs
from .sitefield import TESLA_PER_UT
from .worst_case import horizontal_over_attitude, worst_combination

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


# Runs at points ----------------------------------------------------------------------------------

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
    """

    vector_deviation_deg: np.ndarray
    max_deviation_deg: np.ndarray
    attitude_deviation_deg: np.ndarray
    change_from_reference_deg: np.ndarray | None
    attitude_change_deg: np.ndarray | None
    budget_used_deg: np.ndarray
    overwhelmed: np.ndarray
    within_budget: np.ndarray
    combination: np.ndarray
    total_t: np.ndarray
    bound_t: np.ndarray


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
    weight = (np.linalg.norm(spread, axis=-1).max(axis=0)[:, :, None]
              * np.abs(scale)[:, None, :]).max(axis=-1).reshape(-1)       # (R*G,)
    room = max(0, exact_cap - switched.shape[2])
    order = np.argsort(-weight, kind="stable")
    keep = order[:room][weight[order[:room]] > 0]
    rest = np.setdiff1d(np.flatnonzero(weight > 0), keep)
    flat = spread.reshape(n_p, n_r * n_g, 3)
    run_of = np.repeat(np.arange(n_r), n_g)
    kept = flat[:, keep][:, None] * np.abs(scale[run_of[keep]]).T[None, :, :, None]
    generators = np.concatenate([switched, kept], axis=2)
    reversing = np.concatenate([switched_reversing, np.ones(len(keep), dtype=bool)])
    size, choice = _worst(base, generators, reversing, heel, pitch)
    # The smaller spread generators are counted apart, by the triangle inequality at the worst
    # attitude: never less than the exact figure.
    apart = scalar.copy()
    if len(rest):
        sizes = _attitude_size(flat[:, rest], heel, pitch)                    # (P, n_rest)
        apart += sizes @ np.abs(scale[run_of[rest]])
    return size, choice[..., :switched.shape[2]], apart


#: The spot search's caps on generators searched exactly (level, attitude): over many points the
#: smaller spreads are counted as bounds, and every spot it returns is evaluated again with the
#: full caps.
SEARCH_EXACT_GENERATORS = (16, 0)


def budget_figures(plan, sensor, horizontal_t, parts: RunParts, items: EquipmentFields, *,
                   exact_generators=(MAX_EXACT_GENERATORS_LEVEL, MAX_EXACT_GENERATORS_ATTITUDE)
                   ) -> Figures:
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

    Notes
    -----
    Over all headings the largest deviation of a vessel-fixed disturbance b is asin(|b_h|/H)
    (the needle lies along H + b_h; NGA Pub. 226, semicircular deviation). A field of unknown
    direction and size at most beta can line up with b_h at the worst attitude, so the worst case
    is asin((|b_h| + beta)/H), exact for the worst direction.

    Circuits that switch independently may be on or off (or on either way round) on top of any
    state; the worst switching is found exactly (:func:`deviation.worst_case.worst_combination`).
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
    matrix = plan.circuit_matrix                                 # (R, C)
    currents = plan.circuit_currents_a                           # (C, K)
    independent = plan.independent
    base_a = matrix @ (currents * ~independent[:, None])         # (R, K)
    on_a = matrix[:, independent] @ np.abs(currents[independent])  # (R, K) all independents on
    base = np.einsum("prj,rk->pkj", parts.unit_t, base_a) + items.oriented      # (P, K, 3)
    circuit_unit = np.einsum("prj,rc->pcj", parts.unit_t, matrix[:, independent])  # (P, Ci, 3)
    switched = circuit_unit[:, None, :, :] * currents[independent].T[None, :, :, None]
    reversing = np.array([c.reversing for c in plan.circuits if c.independent], dtype=bool)
    scale = np.abs(base_a) + on_a
    scalar = parts.bound_t @ scale + items.bound                                 # (P, K)

    def held(field, scale, scalar, heel, pitch, cap):
        return _held(field, switched, reversing, parts.spread_t, scale, scalar, heel, pitch, cap)

    cap_level, cap_attitude = exact_generators
    level, _, level_apart = held(base, scale, scalar, 0.0, 0.0, cap_level)
    tilted, choice, tilted_apart = (
        held(base, scale, scalar, heel, pitch, cap_attitude) if heel or pitch
        else held(base, scale, scalar, 0.0, 0.0, cap_level))
    vector = asin_deg(heading.horizontal_disturbance(
        base + np.einsum("pkc,pkcj->pkj", choice, switched)) / h)
    absolute = asin_deg((level + level_apart) / h)
    attitude = asin_deg((tilted + tilted_apart) / h)
    change = attitude_change = None
    overwhelmed = tilted + tilted_apart >= h
    used, held_bound = attitude, tilted_apart
    if sensor.reference_state is not None:
        k = plan.state_index(sensor.reference_state)
        residual = base - base[:, k:k + 1, :]
        moved = np.abs(base_a - base_a[:, k:k + 1]) + on_a
        changing = parts.bound_t @ moved + items.changing
        level_r, choice, level_r_apart = held(residual, moved, changing, 0.0, 0.0, cap_level)
        tilted_r, tilted_r_apart = level_r, level_r_apart
        if heel or pitch:
            tilted_r, choice, tilted_r_apart = held(residual, moved, changing, heel, pitch,
                                                    cap_attitude)
        change = asin_deg((level_r + level_r_apart) / h)
        attitude_change = asin_deg((tilted_r + tilted_r_apart) / h)
        # Adjusted, the sensor sees only the residual: that is what can overwhelm it.
        overwhelmed = tilted_r + tilted_r_apart >= h
        used, held_bound = attitude_change, tilted_r_apart
    within = (used <= sensor.budget_deg) & ~overwhelmed
    total = base + np.einsum("pkc,pkcj->pkj", choice, switched)
    return Figures(vector, absolute, attitude, change, attitude_change, used, overwhelmed, within,
                   choice, total, held_bound)


# Total-field (scalar) magnetometers --------------------------------------------------------------

@dataclass(frozen=True)
class TotalFieldFigures:
    """Total-field figures of a sensor at P positions in K states; arrays (P, K) [T].

    high_t, low_t : largest and smallest |F + C b| - |F| over headings, attitudes within heel
        and pitch, switchings of the independent circuits, and every bound of unknown direction
        (b is the residual b - b_ref for a sensor compensated in a reference state)
    error_t : max(high_t, -low_t), the figure held against budget_nt
    peak_to_peak_t : level, over a full turn of heading, the largest over the switchings tried,
        bounds counted at their worst (2 x bound)
    bound_t : the bounds of unknown direction counted (pairs of unknown lie, twisted floors,
        equipment of unknown orientation)
    within_budget : error_t <= budget_nt
    exhaustive : every switching was tried (else chosen by sign, to first order)
    combination : (P, K, Ci) the switching behind high_t or low_t, whichever sets error_t
    """

    high_t: np.ndarray
    low_t: np.ndarray
    error_t: np.ndarray
    peak_to_peak_t: np.ndarray
    bound_t: np.ndarray
    within_budget: np.ndarray
    exhaustive: bool
    combination: np.ndarray


def sensor_field_parts(plan, sensor, parts: RunParts, items: EquipmentFields):
    """The field a sensor sees in every state, split as the budget splits it.

    Returns
    -------
    base : (P, K, 3) [T]
        Circuits that switch with the states, and oriented equipment; the residual b - b_ref
        for a sensor with a reference state.
    switched : (P, K, Ci, 3) [T]
        Each independent circuit at its current in each state.
    reversing : (Ci,) bool
    bound : (P, K) [T]
        Every part of unknown direction, as a size: a pair's spread over its lies (each
        generator's length, by the triangle inequality), twisted floors, equipment bounds (for
        a reference state, only what changes from it).
    """
    matrix = plan.circuit_matrix
    currents = plan.circuit_currents_a
    independent = plan.independent
    base_a = matrix @ (currents * ~independent[:, None])
    on_a = matrix[:, independent] @ np.abs(currents[independent])
    base = np.einsum("prj,rk->pkj", parts.unit_t, base_a) + items.oriented
    circuit_unit = np.einsum("prj,rc->pcj", parts.unit_t, matrix[:, independent])
    switched = circuit_unit[:, None, :, :] * currents[independent].T[None, :, :, None]
    reversing = np.array([c.reversing for c in plan.circuits if c.independent], dtype=bool)
    per_ampere = parts.bound_t + np.linalg.norm(parts.spread_t, axis=-1).sum(axis=-1)  # (P, R)
    if sensor.reference_state is None:
        bound = per_ampere @ (np.abs(base_a) + on_a) + items.bound
    else:
        k = plan.state_index(sensor.reference_state)
        base = base - base[:, k:k + 1, :]
        moved = np.abs(base_a - base_a[:, k:k + 1]) + on_a
        bound = per_ampere @ moved + items.changing
    return base, switched, reversing, bound


def total_field_figures(plan, sensor, horizontal_t, vertical_t, parts: RunParts,
                        items: EquipmentFields) -> TotalFieldFigures:
    """The figures of a total-field magnetometer at P points in every state.

    Parameters
    ----------
    plan, sensor, parts, items : as for :func:`budget_figures`
    horizontal_t, vertical_t : float [T]
        The Earth's H and Z (positive down).

    Notes
    -----
    A scalar magnetometer reads |F + C b|; its error over headings and attitudes is exact
    (:func:`deviation.total_field.total_field_error_range`). The error grows with F . C b
    (exactly: |F + Cb|^2 = F^2 + 2 F . Cb + |b|^2), so at any one heading and attitude the worst
    switching is, to first order in |b|/F, the sign split of F-hat . C v_i. Up to
    MAX_SWITCHINGS_ENUMERATED switchings every one is tried and scored exactly; beyond, the
    sign-split candidates (the zonotope's vertices) are scored exactly. The largest error is a
    convex function of b (a maximum of norms of affine maps), so over the zonotope its maximum
    is at a vertex and the vertex list gives it exactly (Rockafellar, section 32); the smallest
    is a first-order choice. A bound beta of unknown direction moves |F + Cb| by at most beta.
    A sensor compensated in a reference state (the survey's compensation flight) keeps the
    residual b - b_ref: the permanent term of the compensation takes out a vessel-fixed field.

    References
    ----------
    R. T. Rockafellar, *Convex Analysis*, Princeton University Press, 1970, section 32.
    """
    from .constants import MAX_SWITCHINGS_ENUMERATED
    from .total_field import candidate_switchings, heading_error_peak_to_peak, total_field_error_range

    h, z = horizontal_t, vertical_t
    heel, pitch = sensor.max_heel_deg, sensor.max_pitch_deg
    base, switched, reversing, bound = sensor_field_parts(plan, sensor, parts, items)
    n_p, n_k = base.shape[:2]
    n_c = switched.shape[2]
    high = np.zeros((n_p, n_k))
    low = np.zeros((n_p, n_k))
    p2p = np.zeros((n_p, n_k))
    combination = np.zeros((n_p, n_k, n_c), dtype=int)
    exhaustive = True
    for p in range(n_p):
        for k in range(n_k):
            vectors = switched[p, k]
            choices, complete = candidate_switchings(vectors, reversing,
                                                     MAX_SWITCHINGS_ENUMERATED)
            exhaustive &= complete
            fields = base[p, k][None, :] + choices @ vectors                       # (M, 3)
            lo, hi = total_field_error_range(fields, h, z, heel, pitch)
            i_hi, i_lo = int(np.argmax(hi)), int(np.argmin(lo))
            high[p, k], low[p, k] = hi[i_hi], lo[i_lo]
            combination[p, k] = choices[i_hi] if hi[i_hi] >= -lo[i_lo] else choices[i_lo]
            p2p[p, k] = np.max(heading_error_peak_to_peak(fields, h, z))
    high, low = high + bound, low - bound
    p2p = p2p + 2.0 * bound
    error = np.maximum(high, -low)
    budget_t = (sensor.budget_nt or 0.0) * 1e-9
    return TotalFieldFigures(high, low, error, p2p, bound, error <= budget_t, bool(exhaustive),
                             combination)
