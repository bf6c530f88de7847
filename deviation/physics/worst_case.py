"""Worst cases of a vessel-fixed disturbance: over the vessel's attitude, and over which circuits
are switched on.

Frames as in :mod:`deviation.physics.heading`: the disturbance is given in the vessel frame (x forward,
y port, z up); heel is positive starboard side down, pitch positive bow up. The sensor stays level
(gimballed card or tilt-compensated magnetometer), so only the level horizontal part of the
disturbance deflects it, and its size :math:`|b_h|` does not depend on heading; the worst deviation
over all headings is :math:`\\arcsin(|b_h|/H)` (see :func:`deviation.physics.heading.max_deviation_deg`).

Both searches here are exact (closed form, or a finite list of candidates proved to contain the
maximum); nothing is sampled.
"""

from __future__ import annotations

import numpy as np

#: Relative size of :math:`|v_j \\times \\hat v_i|/|v_j|` below which circuit j counts as parallel
#: to circuit i (the same great circle of the arrangement) and goes with i's side of it. Common
#: practice, no source: well above the rounding of a unit cross product (~1e-16) and far below any
#: physical effect.
IN_PLANE_TOLERANCE = 1e-9

#: Relative margin below the best level figure within which a vertex is still scored: many
#: times the rounding of a length or of the attitude figure (~1e-16), far below any effect.
_PRUNE_MARGIN = 1e-12

#: Doubles held at once by the searches (bounds memory: about 24 n per walk of a circle).
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
    """Per batch row, the mask of the record with the largest value; -inf where it has none.

    Ties go to the record that comes first."""
    best_value = np.full(rows, -np.inf)
    best_mask = np.zeros((rows, masks.shape[-1]), dtype=bool)
    if len(batch):
        order = np.lexsort((-value, batch))
        first = order[np.unique(batch[order], return_index=True)[1]]
        best_value[batch[first]] = value[first]
        best_mask[batch[first]] = masks[first]
    return best_value, best_mask


def _plane_basis(unit):
    """Two unit vectors (..., 3) spanning the plane normal to each unit vector (..., 3)."""
    # Cross with the coordinate axis least aligned with the normal: never near-parallel.
    axis = np.zeros_like(unit)
    np.put_along_axis(axis, np.argmin(np.abs(unit), axis=-1)[..., None], 1.0, axis=-1)
    e1 = np.cross(unit, axis)
    e1 /= np.linalg.norm(e1, axis=-1, keepdims=True)
    return e1, np.cross(unit, e1)


def _circle_walks(base, generators, norms, batch, circle, size, floor):
    """Walk the great circles ``circle`` of rows ``batch``: the best vertex met on each.

    Returns, per walk, the largest ``size`` of a vertex of a cell next to the circle, and the
    switching (bool mask) that gives it. ``floor`` (B,) is a value each row already reaches:
    vertices that cannot beat it are not scored.
    """
    g = generators[batch]                                        # (W, n, 3)
    walks, n = g.shape[:2]
    normal = g[np.arange(walks), circle] / norms[batch, circle][:, None]
    e1, e2 = _plane_basis(normal)
    planar = np.stack([np.einsum("wnk,wk->wn", g, e1), np.einsum("wnk,wk->wn", g, e2)], axis=-1)
    along = np.einsum("wnk,wk->wn", g, normal)
    nonzero = norms[batch] > 0.0
    # |planar| = |g_j x normal|: a circuit (nearly) parallel to the circle's own has the same
    # great circle, so it goes with the side of the circle, by the sign of its dot product.
    parallel = np.hypot(planar[..., 0], planar[..., 1]) <= IN_PLANE_TOLERANCE * norms[batch]
    active = nonzero & ~parallel
    plus = nonzero & parallel & (along > 0.0)
    minus = nonzero & parallel & (along < 0.0)
    sums, initial, enter_rank, leave_rank = _sweep(planar, g, active)     # (W, 2n+1, 3)
    sides = np.stack([np.einsum("wn,wnk->wk", plus.astype(float), g),
                      np.einsum("wn,wnk->wk", minus.astype(float), g)], axis=1)  # (W, 2, 3)
    corners = (base[batch][:, None, None, :] + sums[:, :, None, :]
               + sides[:, None, :, :]).reshape(walks, -1, 3)   # (W, (2n+1) * 2, 3)
    # The size over attitude lies between the level horizontal part and the length: a vertex
    # shorter than what another reaches level is never the worst, and is not scored (the
    # margin covers rounding in both figures).
    floor = floor.copy()
    np.maximum.at(floor, batch, np.hypot(corners[..., 0], corners[..., 1]).max(axis=-1))
    length = np.sqrt(np.einsum("wck,wck->wc", corners, corners))
    scored = length >= floor[batch][:, None] * (1.0 - _PRUNE_MARGIN)
    value = np.full(scored.shape, -np.inf)
    value[scored] = size(corners[scored])
    best = np.argmax(value, axis=-1)
    event, side = np.divmod(best, 2)
    masks = _sweep_subset(initial, enter_rank, leave_rank, active, event)
    masks |= np.where(side[:, None] == 0, plus, minus)
    return value[np.arange(walks), best], masks


def _best_attitude(base, generators, max_heel_deg, max_pitch_deg):
    """Best 0/1 choice (B, n) with heel and pitch: every vertex of the 3-D zonotope, met by
    walking each generator's great circle (see :func:`worst_combination`)."""
    rows, n = generators.shape[:2]

    def size(v):
        return horizontal_over_attitude(v, max_heel_deg, max_pitch_deg)

    norms = np.linalg.norm(generators, axis=-1)
    best_value = size(base)                                          # everything off
    best_mask = np.zeros((rows, n), dtype=bool)
    batch, circle = np.nonzero(norms > 0.0)
    # Doubles per walk: planar and running sums, the corners and their scores.
    chunk = max(1, _CHUNK_ELEMENTS // (24 * n + 12))
    for lo in range(0, len(batch), chunk):
        part = slice(lo, lo + chunk)
        value, masks = _circle_walks(base, generators, norms, batch[part], circle[part], size,
                                     best_value)
        value, masks = _pick_best(batch[part], value, masks, rows)
        better = value > best_value
        best_value = np.where(better, value, best_value)
        best_mask[better] = masks[better]
    return best_mask


#: Work (rows x circuits^2) from which the search with heel or pitch runs compiled when the
#: compiled kernels are not loaded yet (loading them costs about half a second; a check of a
#: normal plan never does), and from which it runs compiled once they are.
COMPILED_MIN_WALK = 1_000_000
COMPILED_MIN_WALK_LOADED = 20_000


def _walk_compiled(rows, n, backend):
    if backend not in ("auto", "numpy", "compiled"):
        raise ValueError(f"backend must be auto, numpy or compiled, not {backend!r}")
    if backend != "auto":
        return backend == "compiled"
    import sys

    from .field import auto_compiled

    loaded = "deviation.physics._kernels" in sys.modules
    return auto_compiled(rows * n * n, COMPILED_MIN_WALK_LOADED if loaded else COMPILED_MIN_WALK)


def worst_combination(base, vectors, reversing=None, max_heel_deg=0.0, max_pitch_deg=0.0, *,
                      backend="auto"):
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
    backend : {"auto", "numpy", "compiled"}
        The search with heel or pitch in NumPy, or compiled (numba, on every core, the same
        walk and scores); "auto" compiles from :data:`COMPILED_MIN_WALK` rows x circuits^2 up
        (:data:`COMPILED_MIN_WALK_LOADED` once the compiled kernels are loaded).

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
    great circles :math:`v_i^\\perp` on the sphere of directions (the vertex extreme in direction
    u switches on :math:`\\{i : u \\cdot v_i > 0\\}`, constant on a cell). Every cell has an edge
    on some circle :math:`v_i^\\perp`, and along that circle the other circuits' signs are those
    of their projections on the plane :math:`v_i^\\perp`: walking each circle with the 2-D sweep
    above meets every cell next to it, on both sides (circuit i off and on). Circuits parallel
    to :math:`v_i` (within :data:`IN_PLANE_TOLERANCE`) share its circle and go with the side of
    it their direction gives. So every vertex is met (cells narrower than the rounding of a
    projection aside, whose value differs from a neighbour's by rounding only), and the all-off
    choice is added. Each vertex is scored with :func:`horizontal_over_attitude`, except those
    no longer than the best level horizontal part already met, which cannot be the worst.

    Cost: level, :math:`O(B\\,n \\log n)` time and :math:`O(B\\,n)` memory for B rows of n circuits;
    with heel or pitch, :math:`O(B\\,n^2 \\log n)` time (n walks of 2n sorted events per row) and
    memory bounded by :data:`_CHUNK_ELEMENTS` doubles (rows and walks are processed in chunks,
    vectorised, never one at a time); compiled, the same time spread over the cores and
    :math:`O(n)` memory per row.

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
    picked = np.zeros(flat_v.shape[:2], dtype=bool)
    if n and level:
        # Doubles per row: the sweep's running sums.
        chunk = max(1, _CHUNK_ELEMENTS // (6 * n + 3))
        for lo in range(0, rows, chunk):
            part = slice(lo, lo + chunk)
            picked[part] = _best_level(shifted[part], generators[part])
    elif n and _walk_compiled(rows, n, backend):
        from . import _kernels

        picked = _kernels.best_attitude(shifted, generators, heel_limit, pitch_limit,
                                        IN_PLANE_TOLERANCE, _PRUNE_MARGIN)
    elif n:
        picked = _best_attitude(shifted, generators, max_heel_deg, max_pitch_deg)
    choice = np.where(flat_rev, 2 * picked.astype(int) - 1, picked.astype(int))
    matters = np.any(flat_v[..., :2] != 0.0, axis=-1) if level else np.any(flat_v != 0.0, axis=-1)
    choice = np.where(matters, choice, 0)
    total = base.reshape(-1, 3) + np.einsum("bn,bnk->bk", choice.astype(float), flat_v)
    size = horizontal_over_attitude(total, max_heel_deg, max_pitch_deg)
    return size.reshape(shape), choice.reshape(shape + (n,))
