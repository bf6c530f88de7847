"""The figures held against a heading sensor's budget when steel items turn the disturbance with
the Earth's field: the same rules as :mod:`.held`, over every heading as well.

Without steel a vessel-fixed disturbance b deviates a level needle at most asin(|b_h|/H) over all
headings, whatever its direction, and the worst switching is the one making |b_h| largest. With
steel the disturbance is b = P + M F_v and the heading matters: the worst is found over every
heading, heel and pitch, every switching, pair lie and permeability band at once
(:func:`deviation.physics.turning.worst_deviation`, a proven bound within 0.01 degrees of a
value reached). A search over many positions first ranks them by a quicker proven bound
(:func:`deviation.physics.turning.isotropic_split`, exact for a pure semicircular or quadrantal
disturbance) and evaluates every position it returns exactly.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..physics import turning
from .equipment import asin_deg
from .steel import SteelParts, lambda_range, seen_steel


@dataclass(frozen=True)
class SteelFigures:
    """What the steel adds to a sensor's figures at P positions in K states.

    lam_low : (P, K) the least lambda = 1 + (a + e)/2 over the bands (absolute)
    lam_high : (P, K) the largest
    fixed_t : (P, K, 3) [T] the vessel-fixed field the sensor sees in the worst choice (residual
        after adjustment, with what the correctors leave of the induced field), for the card
    matrix : (P, K, 3, 3) the steel's matrix it sees there (b = fixed + matrix F_v)
    absolute_matrix : (P, K, 3, 3) the same steel not adjusted (the card's unadjusted column)
    heading_deg, heel_deg, pitch_deg : (P, K) where the held figure is reached
    exact : the figures are the exact search's (False: the quick bound of a search over
        positions)
    """

    lam_low: np.ndarray
    lam_high: np.ndarray
    fixed_t: np.ndarray
    matrix: np.ndarray
    absolute_matrix: np.ndarray
    heading_deg: np.ndarray
    heel_deg: np.ndarray
    pitch_deg: np.ndarray
    exact: bool


def _spread_generators(spread, scale, scalar, heel, pitch, cap, n_switched):
    """The pairs' lies as generators (P, K, G, 3), the largest ``cap - n_switched`` of them kept,
    and the others counted apart as sizes (P, K), as :func:`.held._held` counts them: point by
    point, so a point's figure does not depend on which other points are evaluated with it."""
    from .held import _attitude_size

    n_p = spread.shape[0]
    n_r, n_g = spread.shape[1:3]
    n_k = scale.shape[1]
    flat = spread.reshape(n_p, n_r * n_g, 3)
    amps = np.abs(scale)[np.repeat(np.arange(n_r), n_g)]                     # (R*G, K)
    present = np.flatnonzero((np.abs(flat).max(axis=(0, 2), initial=0.0) > 0)
                             & (amps.max(axis=1, initial=0.0) > 0))
    flat, amps = flat[:, present], amps[present]
    weight = np.linalg.norm(flat, axis=-1) * amps.max(axis=1, initial=0.0)[None, :]  # (P, n)
    room = min(max(0, cap - n_switched), len(present))
    order = np.argsort(-weight, axis=1, kind="stable")
    keep = order[:, :room]                                                   # (P, room)
    kept = (np.take_along_axis(flat, keep[..., None], axis=1)[:, None]
            * np.transpose(amps[keep], (0, 2, 1))[..., None])               # (P, K, room, 3)
    apart = np.broadcast_to(scalar, (n_p, n_k)).copy()
    if room < len(present):
        rest = np.ones(weight.shape, dtype=bool)
        np.put_along_axis(rest, keep, False, axis=1)
        apart += (_attitude_size(flat, heel, pitch) * rest) @ amps
    return kept, apart


def _problems(base, switched, reversing, kept, unknown, seen):
    """One :class:`~deviation.physics.turning.Turning` per (P, K): P = base + switching + lies,
    M and its coupled fixed part from the steel, beta the rest."""
    n_p, n_k = base.shape[:2]
    half = np.where(reversing[None, None, :, None], 0.0, 0.5) * switched
    centre = base + half.sum(axis=2)
    gens = np.concatenate([np.where(reversing[None, None, :, None], switched, half), kept],
                          axis=2)
    return turning.Turning.of(
        (centre + seen.fixed).reshape(-1, 3), gens.reshape(n_p * n_k, -1, 3),
        seen.matrix.reshape(-1, 3, 3),
        seen.matrix_generators.reshape(n_p * n_k, -1, 3, 3), unknown.reshape(-1),
        seen.fixed_generators.reshape(n_p * n_k, -1, 3))


@dataclass(frozen=True)
class _Seen:
    """Per (P, K): the steel a sensor sees, stacked over states."""

    matrix: np.ndarray
    matrix_generators: np.ndarray
    fixed: np.ndarray
    fixed_generators: np.ndarray


def _seen(plan, sensor, steel, adjusted, vertical_adjust_t):
    per = [seen_steel(plan, sensor, steel, k, vertical_adjust_t, adjusted=adjusted)
           for k in range(len(plan.state_names))]
    return _Seen(*(np.stack([getattr(s, name) for s in per], axis=1)
                   for name in ("matrix", "matrix_generators", "fixed", "fixed_generators")))


def _choice(signs, switched, reversing):
    """Switching choices (1 on, 0 off, -1 reversed) from the generators' signs."""
    n_c = len(reversing)
    if n_c == 0:
        return np.zeros(signs.shape[:-1] + (0,), dtype=int)
    s = signs[..., :n_c]
    choice = np.where(reversing, np.where(s < 0, -1, 1), np.where(s > 0, 1, 0))
    matters = np.any(switched != 0.0, axis=-1)
    return np.where(matters, choice, 0).astype(int)


def _exact(problems, h, z, heel, pitch):
    return turning.worst_deviation(problems, h, z, heel, pitch)


def _quick(base, switched, reversing, spread, scale, unknown, seen, h, z, heel, pitch, cap):
    """The search's quick proven bound [deg] (P, K) (:func:`turning.isotropic_split`)."""
    from .held import _held

    n_p, n_k = base.shape[:2]
    flat = turning.Turning.of(np.zeros((n_p * n_k, 3)), None, seen.matrix.reshape(-1, 3, 3),
                              seen.matrix_generators.reshape(n_p * n_k, -1, 3, 3), None,
                              seen.fixed_generators.reshape(n_p * n_k, -1, 3))
    split = turning.isotropic_split(flat, h, z, heel, pitch)
    fixed = base + seen.fixed + split.fixed_centre.reshape(n_p, n_k, 3)
    steel_gens = split.fixed_generators.reshape(n_p, n_k, -1, 3)
    both = np.concatenate([switched, steel_gens], axis=2)
    reversing_both = np.concatenate([reversing, np.ones(steel_gens.shape[2], dtype=bool)])
    # A symmetric generator g is a reversing circuit of field g: s in {-1, 0, 1} reaches the
    # vertices of [-g, g] (the size is convex, largest at a vertex).
    size, _, apart = _held(fixed, both, reversing_both, spread, scale, unknown, heel, pitch,
                           cap)
    lam = split.lam_low.reshape(n_p, n_k)
    reach = size + apart + split.turning.reshape(n_p, n_k)
    ratio = np.where(lam > 0, reach / (h * np.where(lam > 0, lam, 1.0)), np.inf)
    return asin_deg(ratio)


def steel_figures(plan, sensor, horizontal_t, vertical_t, parts, items, steel: SteelParts,
                  split, exact_generators, *, exact=True, adjusting_vertical_t=None,
                  held_only=False):
    """The held figures of a heading sensor with steel (the fields of
    :class:`.held.Figures`), and what the steel adds (:class:`SteelFigures`).

    Parameters
    ----------
    plan, sensor, parts, items, split, exact_generators : as :func:`.held.budget_figures`
    horizontal_t, vertical_t : float [T] the Earth's H and Z (down positive) where judged
    steel : SteelParts at the same points
    exact : bool
        The exact worst over headings (False: the quick bound, for a search)
    adjusting_vertical_t : float [T], optional
        Z where the sensor is adjusted (default: here)
    held_only : bool
        Only the held figure (the others repeat it)
    """
    h, z = horizontal_t, vertical_t
    z_adj = z if adjusting_vertical_t is None else adjusting_vertical_t
    heel, pitch = sensor.max_heel_deg, sensor.max_pitch_deg
    cap_level, cap_attitude = exact_generators
    base = np.einsum("prj,rk->pkj", parts.unit_t, split.base_a) + items.oriented
    switched = split.switched_fields(parts.unit_t)
    reversing = split.reversing
    n_p, n_k = base.shape[:2]
    n_c = switched.shape[2]
    lam_low = np.stack([lambda_range(plan, steel, k)[0] for k in range(n_k)], axis=1)
    lam_high = np.stack([lambda_range(plan, steel, k)[1] for k in range(n_k)], axis=1)
    reference = sensor.reference_state
    absolute = _seen(plan, sensor, steel, False, z_adj)
    cases = [(base, split.scale_a(), parts.bound_t @ split.scale_a() + items.bound, absolute)]
    if reference is not None:
        k_ref = plan.state_index(reference)
        moved = split.scale_a(k_ref)
        cases.append((base - base[:, k_ref:k_ref + 1, :], moved,
                      parts.bound_t @ moved + items.changing,
                      _seen(plan, sensor, steel, True, z_adj)))
    tilted = bool(heel or pitch)
    out = []
    held_case: Any = None
    if held_only:
        cases = cases[-1:]
        used = np.array([sensor.used_in_state(state) for state in plan.state_names])
        if exact and not used.all():
            return _held_in_used_states(cases[0], used, parts, switched, reversing, h, z, heel,
                                        pitch, cap_attitude if tilted else cap_level, n_c,
                                        reference is not None, lam_low, lam_high, absolute)
    for fixed, scale, scalar, seen in cases:
        if not exact:
            cap = cap_attitude if tilted else cap_level
            figure = _quick(fixed, switched, reversing, parts.spread_t, scale, scalar, seen, h, z,
                            heel, pitch, cap)
            out.append((figure, figure))
            held_case = (fixed, seen, None)
            continue
        level: Any = None
        if not (held_only and tilted):
            kept, apart = _spread_generators(parts.spread_t, scale, scalar, 0.0, 0.0, cap_level,
                                             n_c)
            level = _exact(_problems(fixed, switched, reversing, kept, apart, seen), h, z, 0.0,
                           0.0)
        worst = level
        if tilted:
            kept_t, apart_t = _spread_generators(parts.spread_t, scale, scalar, heel, pitch,
                                                 cap_attitude, n_c)
            worst = _exact(_problems(fixed, switched, reversing, kept_t, apart_t, seen), h, z,
                           heel, pitch)
        level = worst if level is None else level
        out.append((level.bound_deg.reshape(n_p, n_k), worst.bound_deg.reshape(n_p, n_k)))
        held_case = (fixed, seen, worst)
    if held_only:
        out = out * (2 if reference is not None else 1)
    # The known parts alone, level: switching and bands, no lie and no bound of unknown
    # direction (the "vector sum" line).
    if exact and not held_only:
        none = np.zeros((n_p, n_k, 0, 3))
        known = _exact(_problems(base, switched, reversing, none, np.zeros((n_p, n_k)),
                                 absolute), h, z, 0.0, 0.0)
        vector = known.bound_deg.reshape(n_p, n_k)
    else:
        vector = out[0][0]
    fixed, seen, worst = held_case
    if worst is not None:
        signs = worst.signs.reshape(n_p, n_k, -1)
        msigns = worst.matrix_signs.reshape(n_p, n_k, -1)
        choice = _choice(signs, switched, reversing)
        fixed_seen = (fixed + np.einsum("pkc,pkcj->pkj", choice, switched) + seen.fixed
                      + np.einsum("pkm,pkmj->pkj", msigns, seen.fixed_generators))
        matrix_seen = seen.matrix + np.einsum("pkm,pkmab->pkab", msigns, seen.matrix_generators)
        matrix_absolute = absolute.matrix + np.einsum("pkm,pkmab->pkab", msigns,
                                                      absolute.matrix_generators)
        where = [worst.heading_deg, worst.heel_deg, worst.pitch_deg]
        where = [w.reshape(n_p, n_k) for w in where]
    else:
        choice = np.zeros((n_p, n_k, n_c), dtype=int)
        fixed_seen = fixed + seen.fixed
        matrix_seen = seen.matrix
        matrix_absolute = absolute.matrix
        where = [np.full((n_p, n_k), np.nan)] * 3
    info = SteelFigures(lam_low, lam_high, fixed_seen, matrix_seen, matrix_absolute, where[0],
                        where[1], where[2], exact)
    return out, vector, choice, info


def _held_in_used_states(case, used, parts, switched, reversing, h, z, heel, pitch, cap, n_c,
                         adjusted, lam_low, lam_high, absolute):
    """:func:`steel_figures` with ``held_only`` for a sensor relied on in some states only: the
    exact worst in those, the quick proven bound (never below it) in the others, which no
    verdict reads."""
    fixed, scale, scalar, seen = case
    n_p, n_k = fixed.shape[:2]
    figure = _quick(fixed, switched, reversing, parts.spread_t, scale, scalar, seen, h, z, heel,
                    pitch, cap)
    kk = np.flatnonzero(used)
    if len(kk):
        # The generators kept are chosen over every state, as the whole evaluation chooses
        # them, so the used states' figures are the same as there.
        kept, apart = _spread_generators(parts.spread_t, scale, scalar, heel, pitch, cap, n_c)
        kept, apart = kept[:, kk], apart[:, kk]
        sub = _Seen(*(getattr(seen, name)[:, kk] for name in
                      ("matrix", "matrix_generators", "fixed", "fixed_generators")))
        worst = _exact(_problems(fixed[:, kk], switched[:, kk], reversing, kept, apart, sub), h,
                       z, heel, pitch)
        figure[:, kk] = worst.bound_deg.reshape(n_p, len(kk))
    out = [(figure, figure)] * (2 if adjusted else 1)
    nan = np.full((n_p, n_k), np.nan)
    info = SteelFigures(lam_low, lam_high, fixed + seen.fixed, seen.matrix, absolute.matrix, nan,
                        nan, nan, False)
    return out, figure, np.zeros((n_p, n_k, n_c), dtype=int), info


def item_alone(plan, sensor, horizontal_t, vertical_t, steel: SteelParts, *,
               adjusting_vertical_t=None):
    """Each steel item alone at one position (P = 1) in every state: what it alone makes of
    the held figure [deg] (K, N), level absolute (K, N), and whether each is a bound (N,);
    NaN where an item is not present.

    Its own worst over headings (and attitude within the sensor's limits) and its band; for a
    sensor adjusted in a reference state, what the adjustment leaves of it (nothing at the
    adjusting site, level, if it is present in the reference state). An item's figures do not
    depend on the state it is present in, only on whether it is there when adjusted."""
    h, z = horizontal_t, vertical_t
    z_adj = z if adjusting_vertical_t is None else adjusting_vertical_t
    n_k, n_i = len(plan.state_names), len(plan.steel)
    heel, pitch = sensor.max_heel_deg, sensor.max_pitch_deg
    present = np.array([[item.present_in(state) for item in plan.steel]
                        for state in plan.state_names])                   # (K, N)
    shown = [i for i in range(n_i) if present[:, i].any()]
    held = np.full((n_k, n_i), np.nan)
    level = np.full((n_k, n_i), np.nan)
    if shown:
        def problems(adjusted):
            out = []
            for i in shown:
                k = int(np.argmax(present[:, i]))
                seen = seen_steel(plan, sensor, steel, k, z_adj, adjusted=adjusted, items=[i])
                out.append((seen.fixed[0], seen.matrix[0], seen.matrix_generators[0],
                            seen.fixed_generators[0]))
            fixed, matrix, mgens, fgens = (np.stack(x) for x in zip(*out))
            return turning.Turning.of(fixed, None, matrix, mgens, None, fgens)

        absolute = problems(False)
        alone = turning.worst_deviation(absolute, h, z).bound_deg
        tilted = bool(heel or pitch)
        if sensor.reference_state is not None:
            worst = turning.worst_deviation(problems(True), h, z, heel, pitch).bound_deg
        elif tilted:
            worst = turning.worst_deviation(absolute, h, z, heel, pitch).bound_deg
        else:
            worst = alone
        for j, i in enumerate(shown):
            level[present[:, i], i] = alone[j]
            held[present[:, i], i] = worst[j]
    return held, level, ~steel.exact
