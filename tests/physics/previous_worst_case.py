"""The worst switching search as it was before the circle walk (commit 35402a0), kept only as
an oracle: an O(n^3) enumeration of the arrangement vertices, pair by pair. Tests compare the
package against it on many circuits, where brute force over every switching is out of reach.
"""
from __future__ import annotations

import numpy as np

#: Relative size of :math:`|v_k \\cdot w|/|v_k|` below which a circuit counts as lying in the
#: plane of an arrangement vertex ``w`` and is swept rather than fixed. Common practice, no source:
#: well above the rounding of a unit cross product (~1e-16) and far below any physical effect.
IN_PLANE_TOLERANCE = 1e-9

#: Doubles held at once by the vertex enumeration (bounds memory: chunk x pairs x 2 x n).
_CHUNK_ELEMENTS = 4_000_000


def _limits_rad(max_heel_deg, max_pitch_deg):
    heel = np.abs(np.asarray(max_heel_deg, dtype=float))
    pitch = np.abs(np.asarray(max_pitch_deg, dtype=float))
    for name, value in (("max_heel_deg", heel), ("max_pitch_deg", pitch)):
        if not np.all(np.isfinite(value)) or np.any(value > 90.0):
            raise ValueError(f"{name} must be a finite angle of at most 90 degrees, got "
                             f"{np.asarray(value).tolist()}")
    return np.radians(heel), np.radians(pitch)


def _sign(x):
    """+1 or -1, with +1 at zero (a branch choice, not a value)."""
    return np.where(x < 0, -1.0, 1.0)


def _worst_attitude(b_vessel, max_heel_deg, max_pitch_deg):
    """Largest level horizontal part and the heel and pitch [rad] attaining it."""
    b = np.asarray(b_vessel, dtype=float)
    heel_max, pitch_max = _limits_rad(max_heel_deg, max_pitch_deg)
    forward, starboard, down = b[..., 0], -b[..., 1], -b[..., 2]
    # Heel that makes the rolled down component q vanish: tan(phi0) = -d/s, phi0 in [-90, 90].
    phi0 = np.arctan2(-down * _sign(starboard), np.abs(starboard))
    inside = np.abs(phi0) <= heel_max
    q_plus = np.sin(heel_max) * starboard + np.cos(heel_max) * down
    q_minus = -np.sin(heel_max) * starboard + np.cos(heel_max) * down
    heel_end = np.where(np.abs(q_plus) <= np.abs(q_minus), heel_max, -heel_max)
    heel = np.where(inside, phi0, heel_end)
    p = np.cos(heel) * starboard - np.sin(heel) * down
    q = np.where(inside, 0.0, np.sin(heel) * starboard + np.cos(heel) * down)
    # The pitch reaching the peak of (cos th f + sin th q)^2 lies within the range?
    with np.errstate(invalid="ignore", over="ignore"):
        full = (pitch_max >= np.pi / 2) | (np.abs(q) <= np.abs(forward) * np.tan(pitch_max))
    pitch = np.where(full, np.arctan2(q * _sign(forward), np.abs(forward)),
                     pitch_max * _sign(forward * q))
    corner = np.hypot(p, np.cos(pitch_max) * np.abs(forward) + np.sin(pitch_max) * np.abs(q))
    value = np.where(full, np.linalg.norm(b, axis=-1), corner)
    return value, heel, pitch


def horizontal_over_attitude(b_vessel, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Largest level horizontal part of a vessel-fixed vector over every heel and pitch, exactly.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Disturbance in the vessel frame (x forward, y port, z up), any unit.
    max_heel_deg : float or array [deg]
        Heel limit: every heel in [-max_heel, +max_heel] (positive starboard down), at most 90.
    max_pitch_deg : float or array [deg]
        Pitch limit: every pitch in [-max_pitch, +max_pitch] (positive bow up), at most 90.
        Heel and pitch vary together; the limits broadcast against ``b_vessel[..., 0]``.

    Returns
    -------
    array, in the unit of ``b_vessel``
        :math:`\\max_{|\\phi|\\le\\Phi,\\,|\\theta|\\le\\Theta} |b_h(\\phi, \\theta)|`, the same on every
        heading. With both limits zero it is :math:`\\sqrt{b_x^2 + b_y^2}`.

    Raises
    ------
    ValueError
        A limit above 90 degrees or not finite.

    Notes
    -----
    The vector is written forward-starboard-down, :math:`f = b_x`, :math:`s = -b_y`,
    :math:`d = -b_z`, and turned into the level frame by :math:`C = R_y(\\theta) R_x(\\phi)` (the
    aerospace body-to-NED direction cosine matrix with heading zero; heading only turns the
    horizontal part). Rolling gives :math:`p = s\\cos\\phi - d\\sin\\phi` (athwartships, which is
    also the level east component) and :math:`q = s\\sin\\phi + d\\cos\\phi`, with
    :math:`p^2 + q^2 = s^2 + d^2`; pitching gives north :math:`= f\\cos\\theta + q\\sin\\theta`. So

    .. math:: |b_h|^2 = p^2 + (f\\cos\\theta + q\\sin\\theta)^2 .

    For a fixed heel, :math:`(f\\cos\\theta + q\\sin\\theta)^2 = (f^2+q^2)\\cos^2(\\theta-\\alpha)`,
    :math:`\\tan\\alpha = q/f`, peaks once per half turn; the pitch range (at most half a turn)
    holds the peak when :math:`|q| \\le |f|\\tan\\Theta`, else the larger end value is
    :math:`(|f|\\cos\\Theta + |q|\\sin\\Theta)^2`. Hence

    .. math:: g^*(\\phi) = |b|^2 \\text{ if } |q| \\le |f|\\tan\\Theta, \\text{ else }
              s^2 + d^2 - q^2 + (|f|\\cos\\Theta + |q|\\sin\\Theta)^2,

    whose derivative in :math:`|q|` on the second branch is
    :math:`2\\cos\\Theta\\,(|f|\\sin\\Theta - |q|\\cos\\Theta) \\le 0`: :math:`g^*` is
    non-increasing in :math:`|q|`. The worst heel therefore makes :math:`|q|` smallest. With
    :math:`q = \\rho\\cos(\\phi - \\beta)`, :math:`\\beta = \\operatorname{atan2}(s, d)`, q vanishes
    at :math:`\\phi_0 = \\beta + 90° + k\\,180°`, i.e. :math:`\\tan\\phi_0 = -d/s`; if that lies in
    the heel range it is the worst heel (and :math:`|b_h| = |b|`), otherwise :math:`|q|`, concave
    on the one lobe the range then covers, is smallest at one of its ends. At
    :math:`\\Theta = 90°` the peak is always within reach and the result is :math:`|b|`.
    Equivalently the result is :math:`\\sqrt{|b|^2 - \\min b_D^2}`: the worst attitude makes the
    disturbance as nearly horizontal as the limits allow, and it is either :math:`|b|` or reached
    at a corner of the range.

    References
    ----------
    D. H. Titterton and J. L. Weston, *Strapdown Inertial Navigation Technology*, 2nd ed., IET,
    2004, chapter 3 (direction cosine matrix from roll, pitch and yaw).
    """
    return _worst_attitude(b_vessel, max_heel_deg, max_pitch_deg)[0]


def worst_attitude_deg(b_vessel, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Heel and pitch within the limits at which the level horizontal part is largest.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Disturbance in the vessel frame, any unit.
    max_heel_deg, max_pitch_deg : float or array [deg]
        Limits as in :func:`horizontal_over_attitude`.

    Returns
    -------
    heel_deg, pitch_deg : arrays [deg]
        One attitude attaining :func:`horizontal_over_attitude` (heel positive starboard down,
        pitch positive bow up, applied heel first as in the aerospace roll-pitch-yaw sequence).
        Where the maximum is :math:`|b|` many attitudes attain it; this one is the heel that
        makes the vector horizontal with the pitch at zero if the heel range allows, else the
        nearest heel end with the pitch that finishes the job.

    Notes
    -----
    See :func:`horizontal_over_attitude` for the derivation.
    """
    _, heel, pitch = _worst_attitude(b_vessel, max_heel_deg, max_pitch_deg)
    return np.degrees(heel), np.degrees(pitch)


def _sweep(planar, vectors, active):
    """Every subset a half-plane turning once round the origin picks out, as running sums.

    Parameters
    ----------
    planar : (R, m, 2) array
        The generators' coordinates in the plane of the sweep.
    vectors : (R, m, D) array
        What is summed for each generator (its planar or its full vector).
    active : (R, m) bool
        Generators taking part; the others are never picked.

    Returns
    -------
    sums : (R, 2m+1, D) array
        Sum of the picked generators before the first event and after each event.
    initial, enter_rank, leave_rank : (R, m) arrays
        Enough to rebuild the picked subset after k events, see :func:`_sweep_subset`.

    Notes
    -----
    Generator i is picked by the direction u while :math:`u \\cdot v_i > 0`, the half-open arc
    [ang(v_i) - 90°, ang(v_i) + 90°). Sorting the 2m arc ends and toggling membership at each is a
    walk over every distinct picked subset. Membership follows the computed arc ends, not the dot
    products, so the walk is consistent however ties fall; at coincident angles each partial step
    is still a real subset.
    """
    rows, m = planar.shape[:2]
    start = np.mod(np.arctan2(planar[..., 1], planar[..., 0]) - np.pi / 2, 2 * np.pi)
    initial = active & (start >= np.pi)          # arcs running past 0 (= 360) are picked at the start
    leave = np.where(start >= np.pi, start - np.pi, start + np.pi)
    angles = np.concatenate([start, leave], axis=-1)
    weight = vectors * active[..., None]
    steps = np.concatenate([weight, -weight], axis=-2)
    order = np.argsort(angles, axis=-1, kind="stable")
    steps = np.take_along_axis(steps, order[..., None], axis=-2)
    first = np.einsum("rm,rmd->rd", initial.astype(float), weight)
    sums = np.concatenate([first[:, None, :], first[:, None, :] + np.cumsum(steps, axis=-2)],
                          axis=-2)
    rank = np.empty_like(order)
    np.put_along_axis(rank, order, np.arange(2 * m)[None, :].repeat(rows, axis=0), axis=-1)
    return sums, initial, rank[:, :m], rank[:, m:]


def _sweep_subset(initial, enter_rank, leave_rank, active, events):
    """Subset picked after ``events`` (R,) events of :func:`_sweep`, (R, m) bool."""
    k = np.asarray(events)[:, None]
    return active & (initial ^ (enter_rank < k) ^ (leave_rank < k))


def _best_level(base, generators):
    """Best 0/1 choice (B, n) for the level case: the 2-D sweep over horizontal parts."""
    planar = generators[..., :2]
    active = np.any(planar != 0.0, axis=-1)
    sums, initial, enter_rank, leave_rank = _sweep(planar, planar, active)
    size = np.hypot(*np.moveaxis(base[:, None, :2] + sums, -1, 0))
    return _sweep_subset(initial, enter_rank, leave_rank, active, np.argmax(size, axis=-1))


def _pick_best(batch, value, masks, rows):
    """Per batch row, the mask of the record with the largest value; -inf where it has none."""
    best_value = np.full(rows, -np.inf)
    best_mask = np.zeros((rows, masks.shape[-1]), dtype=bool)
    if len(batch):
        order = np.lexsort((-value, batch))
        first = order[np.unique(batch[order], return_index=True)[1]]
        best_value[batch[first]] = value[first]
        best_mask[batch[first]] = masks[first]
    return best_value, best_mask


def _best_attitude(base, generators, max_heel_deg, max_pitch_deg):
    """Best 0/1 choice (B, n) with heel and pitch: the vertices of the 3-D zonotope."""
    rows, n = generators.shape[:2]

    def size(v):
        return horizontal_over_attitude(v, max_heel_deg, max_pitch_deg)

    norms = np.linalg.norm(generators, axis=-1)
    nonzero = norms > 0.0
    candidates = []                                          # (value (B,), mask (B, n))
    empty = np.zeros((rows, n), dtype=bool)
    candidates.append((size(base), empty))
    # Rank 1 (all vectors parallel): the two ends of the segment.
    along = generators[np.arange(rows), np.argmax(norms, axis=-1)]
    projection = np.einsum("bnk,bk->bn", generators, along)
    for mask in (nonzero & (projection > 0), nonzero & (projection < 0)):
        candidates.append((size(base + np.einsum("bn,bnk->bk", mask.astype(float), generators)),
                           mask))
    if n >= 2:
        first, second = np.triu_indices(n, 1)
        members = np.zeros((len(first), n), dtype=bool)
        members[np.arange(len(first)), first] = True
        members[np.arange(len(first)), second] = True
        cross = np.cross(generators[:, first], generators[:, second])       # (B, P, 3)
        cross_norm = np.linalg.norm(cross, axis=-1)
        valid = cross_norm > 0.0
        w = cross / np.where(valid, cross_norm, 1.0)[..., None]
        w = np.stack([w, -w], axis=2)                                        # (B, P, 2, 3)
        dots = np.einsum("bpsk,bnk->bpsn", w, generators)
        # Generic vertex: circuits off the plane fixed by their exact sign, the pair free.
        fixed = (dots > 0.0) & nonzero[:, None, None, :] & ~members[None, :, None, :]
        fixed_sum = np.einsum("bpsn,bnk->bpsk", fixed.astype(float), generators)
        g_first = generators[:, first][:, :, None, None, :]
        g_second = generators[:, second][:, :, None, None, :]
        pair_choice = np.array([[0, 0], [1, 0], [0, 1], [1, 1]], dtype=float)
        corner_sum = (fixed_sum[:, :, :, None, :] + pair_choice[:, 0, None] * g_first
                      + pair_choice[:, 1, None] * g_second)                  # (B, P, 2, 4, 3)
        value = size(base[:, None, None, None, :] + corner_sum)
        value = np.where(valid[:, :, None, None], value, -np.inf).reshape(rows, -1)
        best = np.argmax(value, axis=-1)
        pair, side, choice = np.unravel_index(best, (len(first), 2, 4))
        mask = fixed[np.arange(rows), pair, side].copy()
        mask[np.arange(rows), first[pair]] = pair_choice[choice, 0] > 0
        mask[np.arange(rows), second[pair]] = pair_choice[choice, 1] > 0
        candidates.append((value[np.arange(rows), best], mask))
        # Degenerate vertex: more circuits (nearly) in the plane of w; sweep them all in it.
        near = (np.abs(dots) <= IN_PLANE_TOLERANCE * norms[:, None, None, :]) \
            & nonzero[:, None, None, :] & ~members[None, :, None, :]
        degenerate = valid[:, :, None] & np.any(near, axis=-1)
        if np.any(degenerate):
            candidates.append(_degenerate_vertices(base, generators, norms, nonzero, members,
                                                   first, second, cross_norm, w, dots, near,
                                                   degenerate, size))
    values = np.stack([c[0] for c in candidates], axis=-1)
    masks = np.stack([c[1] for c in candidates], axis=-2)
    return masks[np.arange(rows), np.argmax(values, axis=-1)]


def _degenerate_vertices(base, generators, norms, nonzero, members, first, second, cross_norm,
                         w, dots, near, degenerate, size):
    rows = len(generators)
    batch, pair, side = np.nonzero(degenerate)
    in_plane = near[batch, pair, side] | members[pair]
    fixed = (dots[batch, pair, side] > IN_PLANE_TOLERANCE * norms[batch]) & nonzero[batch] \
        & ~in_plane
    # Many pairs name the same vertex; keep the best-conditioned pair of each.
    conditioning = cross_norm[batch, pair] / (norms[batch, first[pair]] * norms[batch, second[pair]])
    order = np.argsort(-conditioning, kind="stable")
    keys = np.concatenate([batch[order, None], np.packbits(in_plane[order], axis=-1),
                           np.packbits(fixed[order], axis=-1)], axis=-1)
    keep = order[np.unique(keys, axis=0, return_index=True)[1]]
    batch, pair, side = batch[keep], pair[keep], side[keep]
    in_plane, fixed = in_plane[keep], fixed[keep]
    normal = w[batch, pair, side]                                          # (R, 3)
    g = generators[batch]                                                  # (R, n, 3)
    along = g[np.arange(len(keep)), first[pair]]
    e1 = along - np.einsum("rk,rk->r", along, normal)[:, None] * normal
    e1 /= np.linalg.norm(e1, axis=-1, keepdims=True)
    e2 = np.cross(normal, e1)
    planar = np.stack([np.einsum("rnk,rk->rn", g, e1), np.einsum("rnk,rk->rn", g, e2)], axis=-1)
    sums, initial, enter_rank, leave_rank = _sweep(planar, g, in_plane)
    fixed_sum = np.einsum("rn,rnk->rk", fixed.astype(float), g)
    value = size(base[batch][:, None, :] + fixed_sum[:, None, :] + sums)   # (R, 2n+1)
    events = np.argmax(value, axis=-1)
    masks = fixed | _sweep_subset(initial, enter_rank, leave_rank, in_plane, events)
    return _pick_best(batch, value[np.arange(len(keep)), events], masks, rows)


def worst_combination(base, vectors, reversing=None, max_heel_deg=0.0, max_pitch_deg=0.0):
    """The switching of independent circuits that makes the level horizontal disturbance largest.

    Parameters
    ----------
    base : (..., 3) array
        Field that is always there (vessel frame, any unit).
    vectors : (..., n, 3) array
        Field of each of n independently switched circuits at full current, same unit; the
        leading dimensions broadcast against ``base``'s.
    reversing : None or (..., n) bool array
        True for a circuit whose current may also run backwards (it may be +1, 0 or -1 times its
        vector); None means none reverses.
    max_heel_deg, max_pitch_deg : float [deg]
        Attitude limits as in :func:`horizontal_over_attitude`.

    Returns
    -------
    size : (...) array, in the unit of ``base``
        :math:`\\max_s` ``horizontal_over_attitude(base + sum_i s_i v_i)``.
    choice : (..., n) int array
        A choice s attaining it: 0 or 1 for an ordinary circuit, -1 or 1 for a reversing one;
        0 for a circuit whose vector is zero (in the level case: whose horizontal part is zero).

    Notes
    -----
    The function maximised, :math:`F(v) = \\max_{\\phi,\\theta} |P\\,C(\\phi,\\theta)\\,v|`, is a
    maximum of norms of linear maps, so it is convex; its maximum over the zonotope
    :math:`Z = c + \\sum_i [0, 1]\\,v_i` (which holds every switching) is reached at a vertex
    (Rockafellar), and every vertex is a switching. A reversing circuit is the generator
    :math:`2v_i` with :math:`c` shifted by :math:`-v_i`.

    *Level* (both limits zero): F is the length of the horizontal part, and
    :math:`\\max_{z \\in Z} |z| = \\max_u [u \\cdot c + \\sum_i (u \\cdot v_i)^+]`: the vertex
    extreme in direction u switches on :math:`\\{i : u \\cdot v_i > 0\\}`. That set changes only at
    the 2n angles :math:`\\operatorname{ang}(v_i) \\pm 90°`; the events are sorted and walked with a
    running sum, O(n log n), and every vertex of the 2-D zonotope is met.

    *With heel or pitch*: the vertices of the 3-D zonotope are the cells of the arrangement of
    great circles :math:`v_i^\\perp` on the sphere of directions, and every cell has a corner at an
    arrangement vertex :math:`w = \\pm (v_i \\times v_j)/|v_i \\times v_j|`. Near w, circuits with
    :math:`v_k \\cdot w \\neq 0` keep the sign of :math:`v_k \\cdot w`, and those in the plane
    :math:`w^\\perp` take every pattern a direction turning in that plane gives them. Each pair
    gives its four patterns of (i, j) with the others fixed by their exact sign (all pairs at
    once); where other circuits lie within :data:`IN_PLANE_TOLERANCE` of the plane, all of them are
    also swept with the 2-D walk in the plane. Together these meet every vertex except cells
    narrower than the rounding of w, whose value differs from a neighbour's by rounding only.
    The rank-1 ends (all vectors parallel) and the all-off choice are added. Every candidate is
    scored with :func:`horizontal_over_attitude`: :math:`O(n^3)` work for n circuits.

    References
    ----------
    R. T. Rockafellar, *Convex Analysis*, Princeton University Press, 1970, section 32 (the
    maximum of a convex function over a polytope is at an extreme point).
    H. Edelsbrunner, *Algorithms in Combinatorial Geometry*, Springer, 1987 (zonotopes, their
    vertices and the dual arrangement of hyperplanes; from memory, no chapter given).
    """
    vectors = np.asarray(vectors, dtype=float)
    base = np.asarray(base, dtype=float)
    if vectors.ndim < 2 or vectors.shape[-1] != 3 or base.shape[-1:] != (3,):
        raise ValueError(f"expected base (..., 3) and vectors (..., n, 3), got {base.shape} and "
                         f"{vectors.shape}")
    n = vectors.shape[-2]
    shape = np.broadcast_shapes(base.shape[:-1], vectors.shape[:-2])
    vectors = np.broadcast_to(vectors, shape + (n, 3))
    base = np.broadcast_to(base, shape + (3,))
    rev = np.zeros(shape + (n,), dtype=bool) if reversing is None else \
        np.broadcast_to(np.asarray(reversing, dtype=bool), shape + (n,))
    heel_limit, pitch_limit = _limits_rad(max_heel_deg, max_pitch_deg)
    if heel_limit.ndim or pitch_limit.ndim:
        raise ValueError("max_heel_deg and max_pitch_deg must be single angles here")
    rows = int(np.prod(shape, dtype=int))
    flat_v = vectors.reshape(rows, n, 3)
    flat_rev = rev.reshape(rows, n)
    generators = np.where(flat_rev[..., None], 2.0 * flat_v, flat_v)
    shifted = base.reshape(-1, 3) - np.einsum("bn,bnk->bk", flat_rev.astype(float), flat_v)
    level = heel_limit == 0.0 and pitch_limit == 0.0
    # Doubles per row: the sweep's running sums (level), or dots and corner sums (attitude).
    per_row = 6 * n + 3 if level else max(n * (n - 1), 1) * max(n, 12)
    chunk = max(1, _CHUNK_ELEMENTS // per_row)
    picked = np.zeros(flat_v.shape[:2], dtype=bool)
    for lo in range(0, rows if n else 0, chunk):
        part = slice(lo, lo + chunk)
        if level:
            picked[part] = _best_level(shifted[part], generators[part])
        else:
            picked[part] = _best_attitude(shifted[part], generators[part],
                                          max_heel_deg, max_pitch_deg)
    choice = np.where(flat_rev, 2 * picked.astype(int) - 1, picked.astype(int))
    matters = np.any(flat_v[..., :2] != 0.0, axis=-1) if level else np.any(flat_v != 0.0, axis=-1)
    choice = np.where(matters, choice, 0)
    total = base.reshape(-1, 3) + np.einsum("bn,bnk->bk", choice.astype(float), flat_v)
    size = horizontal_over_attitude(total, max_heel_deg, max_pitch_deg)
    return size.reshape(shape), choice.reshape(shape + (n,))
