"""Total-field (scalar) magnetometers: the error |F + b| - |F| over headings, attitude and
switching, held against a budget in nT."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .currents import CircuitCurrents, circuit_currents
from .equipment import EquipmentFields
from .runs import RunParts


@dataclass(frozen=True)
class TotalFieldFigures:
    """Total-field figures of a sensor at P positions in K states; arrays (P, K) [T].

    high_t, low_t : largest and smallest |F + C b| - |F| over headings, attitudes within heel
        and pitch, switchings of the independent circuits, and every bound of unknown direction
        (b is the residual b - b_ref for a sensor compensated in a reference state)
    error_t : max(high_t, -low_t), the figure held against budget_nt
    peak_to_peak_t : level, over a full turn of heading, the largest over the switchings,
        bounds counted at their worst (2 x bound)
    bound_t : the bounds of unknown direction counted (pairs of unknown lie, twisted runs' ends
        and floors, equipment of unknown orientation)
    within_budget : error_t <= budget_nt
    exhaustive : every switching was tried; else high_t is still exact (from the zonotope's
        vertices) while low_t and peak_to_peak_t are bounds on the safe side
    combination : (P, K, Ci) the switching behind high_t or low_t, whichever sets error_t
    remainder_t : with steel, the second-order term R^2/(2(F - R)) in high_t and in the peak to
        peak (the first-order extremes are found within a tolerance; None without steel)
    """

    high_t: np.ndarray
    low_t: np.ndarray
    error_t: np.ndarray
    peak_to_peak_t: np.ndarray
    bound_t: np.ndarray
    within_budget: np.ndarray
    exhaustive: bool
    combination: np.ndarray
    remainder_t: np.ndarray | None = None


def sensor_field_parts(plan, sensor, parts: RunParts, items: EquipmentFields,
                       currents: CircuitCurrents | None = None):
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
        generator's length, by the triangle inequality), twisted runs' ends and floors,
        equipment bounds (for a reference state, only what changes from it).
    """
    split = currents or circuit_currents(plan)
    base = np.einsum("prj,rk->pkj", parts.unit_t, split.base_a) + items.oriented
    switched = split.switched_fields(parts.unit_t)
    reversing = split.reversing
    per_ampere = parts.bound_t + np.linalg.norm(parts.spread_t, axis=-1).sum(axis=-1)  # (P, R)
    if sensor.reference_state is None:
        bound = per_ampere @ split.scale_a() + items.bound
    else:
        k = plan.state_index(sensor.reference_state)
        base = base - base[:, k:k + 1, :]
        bound = per_ampere @ split.scale_a(k) + items.changing
    return base, switched, reversing, bound


def total_field_figures(plan, sensor, horizontal_t, vertical_t, parts: RunParts,
                        items: EquipmentFields, currents: CircuitCurrents | None = None, *,
                        steel=None, steel_exact: bool = True) -> TotalFieldFigures:
    """The figures of a total-field magnetometer at P points in every state.

    Parameters
    ----------
    plan, sensor, parts, items : as for :func:`budget_figures`
    horizontal_t, vertical_t : float [T]
        The Earth's H and Z (positive down).

    Notes
    -----
    A scalar magnetometer reads |F + C b|; its error over headings and attitudes is exact
    (:func:`deviation.physics.total_field.total_field_error_range`). The error grows with F . C b
    (exactly: |F + Cb|^2 = F^2 + 2 F . Cb + |b|^2), so at any one heading and attitude the worst
    switching is, to first order in |b|/F, the sign split of F-hat . C v_i. Up to
    MAX_SWITCHINGS_ENUMERATED switchings every one is tried and scored exactly; beyond, the
    zonotope's vertices, degenerate generators included
    (:func:`deviation.physics.total_field.vertex_switchings`). The largest error is a convex
    function of b, so over the zonotope its maximum is at a vertex and the vertex list gives it
    exactly (Rockafellar, section 32); the smallest is not convex, and there it is a bound under
    the truth by at most R^2/(2(F - R)), R the largest |b|, and the peak to peak a bound above
    it (:func:`deviation.physics.total_field.error_over_switchings`). A bound beta of unknown
    direction moves |F + Cb| by at most beta.
    A sensor compensated in a reference state (the survey's compensation flight) keeps the
    residual b - b_ref: the permanent term of the compensation takes out a vessel-fixed field.

    References
    ----------
    R. T. Rockafellar, *Convex Analysis*, Princeton University Press, 1970, section 32.
    """
    from ..physics.total_field import error_over_switchings

    h, z = horizontal_t, vertical_t
    heel, pitch = sensor.max_heel_deg, sensor.max_pitch_deg
    base, switched, reversing, bound = sensor_field_parts(plan, sensor, parts, items, currents)
    if steel is not None and np.any(steel.centre != 0.0) and steel_exact:
        return _with_steel(plan, sensor, h, z, base, switched, reversing, bound, steel)
    n_p, n_k = base.shape[:2]
    n_c = switched.shape[2]
    high = np.zeros((n_p, n_k))
    low = np.zeros((n_p, n_k))
    p2p = np.zeros((n_p, n_k))
    combination = np.zeros((n_p, n_k, n_c), dtype=int)
    exhaustive = True
    for p in range(n_p):
        for k in range(n_k):
            worst = error_over_switchings(base[p, k], switched[p, k], reversing, h, z, heel,
                                          pitch)
            exhaustive &= worst.exhaustive
            high[p, k], low[p, k] = worst.high, worst.low
            combination[p, k] = (worst.high_choice if worst.high >= -worst.low
                                 else worst.low_choice)
            p2p[p, k] = worst.peak_to_peak
    high, low = high + bound, low - bound
    p2p = p2p + 2.0 * bound
    if steel is not None and np.any(steel.centre != 0.0):
        # The search's quick bound: the steel's field |M F_v| <= ||M|| |F| moves |F + b| by at
        # most that (triangle inequality); every position returned is evaluated exactly.
        size = np.stack([_matrix_size(plan, sensor, steel, k) for k in range(n_k)], axis=1)
        reach = size * np.hypot(h, z)
        high, low, p2p = high + reach, low - reach, p2p + 2.0 * reach
    error = np.maximum(high, -low)
    budget_t = sensor.budget.value * 1e-9                     # nT -> T
    return TotalFieldFigures(high, low, error, p2p, bound, error <= budget_t, bool(exhaustive),
                             combination)


def _matrix_size(plan, sensor, steel, k):
    """(P,) a bound on ||M||_2 of the steel a sensor sees in state k (Frobenius norms added)."""
    from .steel import seen_steel

    seen = seen_steel(plan, sensor, steel, k, 0.0)
    return (np.sqrt(np.sum(seen.matrix ** 2, axis=(-2, -1)))
            + np.sqrt(np.sum(seen.matrix_generators ** 2, axis=(-2, -1))).sum(axis=-1))


def _with_steel(plan, sensor, h, z, base, switched, reversing, bound, steel):
    """Total-field figures with steel items: the error over every heading, attitude, switching
    and permeability band (:func:`deviation.physics.turning.worst_total_field_error`): the
    first-order extremes within a tolerance, the second-order remainder added to the high end
    (proven bounds on both ends)."""
    from ..physics import turning
    from .steel import seen_steel

    n_p, n_k = base.shape[:2]
    seen = [seen_steel(plan, sensor, steel, k, 0.0) for k in range(n_k)]
    matrix = np.stack([s.matrix for s in seen], axis=1)
    mgens = np.stack([s.matrix_generators for s in seen], axis=1)
    half = np.where(reversing[None, None, :, None], 0.0, 0.5) * switched
    gens = np.where(reversing[None, None, :, None], switched, half)
    problems = turning.Turning.of((base + half.sum(axis=2)).reshape(-1, 3),
                                  gens.reshape(n_p * n_k, -1, 3), matrix.reshape(-1, 3, 3),
                                  mgens.reshape(n_p * n_k, -1, 3, 3), bound.reshape(-1))
    worst = turning.worst_total_field_error(problems, h, z, sensor.max_heel_deg,
                                            sensor.max_pitch_deg)
    high, low = worst.high.reshape(n_p, n_k), worst.low.reshape(n_p, n_k)
    error = np.maximum(high, -low)
    n_c = switched.shape[2]

    def choice(signs):
        s = signs.reshape(n_p, n_k, -1)[..., :n_c]
        picked = np.where(reversing, np.where(s < 0, -1, 1), np.where(s > 0, 1, 0))
        return np.where(np.any(switched != 0.0, axis=-1), picked, 0).astype(int)

    combination = np.where((high >= -low)[..., None], choice(worst.high_choice),
                           choice(worst.low_choice))
    budget_t = sensor.budget.value * 1e-9                     # nT -> T
    return TotalFieldFigures(high, low, error, worst.level_peak_to_peak.reshape(n_p, n_k), bound,
                             error <= budget_t, False, combination,
                             worst.remainder.reshape(n_p, n_k))
