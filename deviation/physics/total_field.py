"""What a vessel-fixed disturbance does to a total-field (scalar) reading and to the field's
inclination, over every heading and every attitude within the heel and pitch limits, exactly.

Frames as in :mod:`deviation.physics.heading`: the disturbance ``b`` is in the vessel frame (x forward,
y port, z up); the Earth's field in the level frame is F = (H, 0, Z) (magnetic north, east,
down). The vessel turns and tilts, the Earth's field does not, so the sensor sees F + C b with C
the vessel-to-level rotation.

Everything here rests on one fact: as the heading turns freely, the disturbance's level
horizontal part turns through every direction while its level down component d stays put. So
what the sensor can see is fixed by the interval [d_lo, d_hi] that d sweeps as the vessel heels
and pitches, and |C b| = |b| always. Nothing is sampled.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from ..constants import MAX_SWITCHINGS_ENUMERATED


def _limits(max_heel_deg, max_pitch_deg):
    heel = np.radians(abs(float(max_heel_deg)))
    pitch = np.radians(abs(float(max_pitch_deg)))
    if heel > np.pi / 2 + 1e-12 or pitch > np.pi / 2 + 1e-12:
        raise ValueError("heel and pitch limits are at most 90 degrees")
    return heel, pitch


def _extremes_of_sinusoid(a, c, limit):
    """Smallest and largest of a sin(t) + c cos(t) over |t| <= limit (elementwise, exact).

    The critical points are t = atan2(a, c) + k pi; those inside the range and the two ends are
    the only candidates.
    """
    phase = np.arctan2(a, c)
    candidates = [np.full(np.shape(a), -limit), np.full(np.shape(a), limit)]
    candidates += [np.clip(phase + k * np.pi, -limit, limit) for k in (-2, -1, 0, 1, 2)]
    t = np.stack(np.broadcast_arrays(*candidates), axis=-1)
    value = a[..., None] * np.sin(t) + c[..., None] * np.cos(t)
    return value.min(axis=-1), value.max(axis=-1)


def down_range(b_vessel, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Smallest and largest level down component of a vessel-fixed vector over the attitudes.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Vector in the vessel frame, any unit.
    max_heel_deg, max_pitch_deg : float [deg]
        Every heel in [-max_heel, max_heel] and pitch in [-max_pitch, max_pitch] (at most 90).

    Returns
    -------
    d_lo, d_hi : (...) arrays, in the unit of ``b_vessel``

    Notes
    -----
    Written forward-starboard-down, f = b_x, s = -b_y, d = -b_z, heel phi rolls the down part
    to q = s sin(phi) + d cos(phi), and pitch theta gives the level down component
    -f sin(theta) + q cos(theta) (the aerospace body-to-level sequence, heading last; heading
    does not change it). q's range over the heel interval does not depend on the pitch, and for
    a pitch within +-90 degrees the down component grows with q (cos(theta) >= 0): the largest
    comes from q's largest, the smallest from q's smallest. Each step is a sinusoid over an
    interval, whose extremes lie at its ends or at its critical points, all of which are
    compared.

    References
    ----------
    D. H. Titterton and J. L. Weston, *Strapdown Inertial Navigation Technology*, 2nd ed., IET,
    2004, chapter 3 (direction cosine matrix from roll, pitch and yaw).
    """
    b = np.asarray(b_vessel, dtype=float)
    heel, pitch = _limits(max_heel_deg, max_pitch_deg)
    forward, starboard, down = b[..., 0], -b[..., 1], -b[..., 2]
    q_lo, q_hi = _extremes_of_sinusoid(starboard, down, heel)
    d_lo = _extremes_of_sinusoid(-forward, q_lo, pitch)[0]
    d_hi = _extremes_of_sinusoid(-forward, q_hi, pitch)[1]
    return d_lo, d_hi


def _error(g, size_sq, total):
    """|F + x| - |F| from g = F . x and |x|^2, without cancellation."""
    return (2.0 * g + size_sq) / (np.sqrt(np.maximum(total ** 2 + 2.0 * g + size_sq, 0.0)) + total)


def total_field_error_range(b_vessel, horizontal, vertical, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Smallest and largest total-field error |F + C b| - |F| over headings and attitudes.

    Parameters
    ----------
    b_vessel : (..., 3) array
        Disturbance in the vessel frame, in the unit of ``horizontal``.
    horizontal, vertical : float
        The Earth's H and Z (positive down).
    max_heel_deg, max_pitch_deg : float [deg]

    Returns
    -------
    low, high : (...) arrays, in the unit of ``horizontal``

    Notes
    -----
    :math:`|F + Cb|^2 = F^2 + 2F\\cdot Cb + |b|^2` and :math:`|Cb| = |b|`, so the error grows with
    :math:`g = F \\cdot Cb`. With the heading free, at a level down component d the horizontal
    part :math:`\\sqrt{|b|^2 - d^2}` can point along or against H, so
    :math:`g \\in [-H\\sqrt{|b|^2-d^2} + Zd,\\; H\\sqrt{|b|^2-d^2} + Zd]`. The upper end is concave
    in d, largest at :math:`d^* = |b|Z/F` (b along F), the lower end convex, smallest at
    :math:`-|b|Z/F`; over the interval :func:`down_range` gives, each is reached at its optimum
    clipped to the interval. Exact, no sampling.
    """
    b = np.asarray(b_vessel, dtype=float)
    total = float(np.hypot(horizontal, vertical))
    size = np.linalg.norm(b, axis=-1)
    d_lo, d_hi = down_range(b, max_heel_deg, max_pitch_deg)
    d_up = np.clip(size * vertical / total, d_lo, d_hi)
    d_dn = np.clip(-size * vertical / total, d_lo, d_hi)
    g_high = horizontal * np.sqrt(np.maximum(size ** 2 - d_up ** 2, 0.0)) + vertical * d_up
    g_low = -horizontal * np.sqrt(np.maximum(size ** 2 - d_dn ** 2, 0.0)) + vertical * d_dn
    return _error(g_low, size ** 2, total), _error(g_high, size ** 2, total)


def heading_error_peak_to_peak(b_vessel, horizontal, vertical):
    """Peak-to-peak of the total-field error over a full turn of heading, level [unit of H].

    Notes
    -----
    Level, the down component is d = -b_z and the horizontal part r = |(b_x, b_y)| turns
    through every direction: the error runs between its values at g = Zd - Hr and g = Zd + Hr.
    To first order this is 2 H r / F, the heading effect survey operators quote.
    """
    b = np.asarray(b_vessel, dtype=float)
    total = float(np.hypot(horizontal, vertical))
    size_sq = np.sum(b * b, axis=-1)
    r = np.hypot(b[..., 0], b[..., 1])
    d = -b[..., 2]
    return (_error(vertical * d + horizontal * r, size_sq, total)
            - _error(vertical * d - horizontal * r, size_sq, total))


def inclination_range_deg(b_vessel, horizontal, vertical, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Smallest and largest inclination of F + C b over headings and attitudes [deg].

    Returns
    -------
    low, high : (...) arrays [deg], down positive

    Notes
    -----
    The sensor's field is P = F + x with x on the zone of the sphere of radius |b| whose down
    component lies in [d_lo, d_hi] (:func:`down_range`); every horizontal direction of x is
    reached by some heading. The inclination atan2(P_down, |P_h|) has, on the open zone, critical
    points only where the ray from the origin touches the sphere (in the meridian plane of F, at
    I +- asin(|b|/F)); on the zone's two edge circles, at fixed down component, it is extreme
    where |P_h| is, at H + r or |H - r|. Where the zone holds a point with P_h = 0 (|b| >= H) the
    inclination reaches +-90 degrees. All these candidates are compared: exact.
    """
    b = np.asarray(b_vessel, dtype=float)
    total = float(np.hypot(horizontal, vertical))
    size = np.linalg.norm(b, axis=-1)
    d_lo, d_hi = down_range(b, max_heel_deg, max_pitch_deg)
    downs, horizontals, valid = [], [], []
    for d in (d_lo, d_hi):
        r = np.sqrt(np.maximum(size ** 2 - d ** 2, 0.0))
        for h in (horizontal + r, np.abs(horizontal - r)):
            downs.append(vertical + d)
            horizontals.append(h)
            valid.append(np.ones_like(size, dtype=bool))
    inclination = np.arctan2(vertical, horizontal)
    inside = size < total
    reach = np.sqrt(np.maximum(total ** 2 - size ** 2, 0.0))
    delta = np.arcsin(np.clip(size / total, 0.0, 1.0))
    for angle in (inclination + delta, inclination - delta):
        p_north, p_down = reach * np.cos(angle), reach * np.sin(angle)
        d = p_down - vertical
        downs.append(p_down)
        horizontals.append(np.abs(p_north))
        valid.append(inside & (d >= d_lo) & (d <= d_hi))
    # P_h = 0 needs a horizontal part of size H: |d| <= sqrt(|b|^2 - H^2) within the zone.
    limit = np.sqrt(np.maximum(size ** 2 - horizontal ** 2, 0.0))
    for d in (np.clip(-limit, d_lo, d_hi), np.clip(limit, d_lo, d_hi)):
        downs.append(vertical + d)
        horizontals.append(np.zeros_like(size))
        valid.append((size >= horizontal) & (np.abs(d) <= limit))
    angle = np.degrees(np.arctan2(np.stack(np.broadcast_arrays(*downs), axis=-1),
                                  np.stack(np.broadcast_arrays(*horizontals), axis=-1)))
    ok = np.stack(np.broadcast_arrays(*valid), axis=-1)
    return (np.where(ok, angle, np.inf).min(axis=-1), np.where(ok, angle, -np.inf).max(axis=-1))


def first_order_range(vector, horizontal, vertical, max_heel_deg=0.0, max_pitch_deg=0.0):
    """Smallest and largest F-hat . C v over headings and attitudes (a linear figure, e.g. the
    total-field change per ampere of a circuit's field per ampere v), exact; unit of ``v``."""
    v = np.asarray(vector, dtype=float)
    total = float(np.hypot(horizontal, vertical))
    size = np.linalg.norm(v, axis=-1)
    d_lo, d_hi = down_range(v, max_heel_deg, max_pitch_deg)
    d_up = np.clip(size * vertical / total, d_lo, d_hi)
    d_dn = np.clip(-size * vertical / total, d_lo, d_hi)
    high = horizontal * np.sqrt(np.maximum(size ** 2 - d_up ** 2, 0.0)) + vertical * d_up
    low = -horizontal * np.sqrt(np.maximum(size ** 2 - d_dn ** 2, 0.0)) + vertical * d_dn
    return low / total, high / total


# Switching of independent circuits ---------------------------------------------------------------

#: Two circuits' field directions closer than this (|u_a x u_b| of unit vectors) count as one
#: line and are merged; a direction with |u . p| below it lies in the plane normal to an
#: arrangement vertex p. Common practice, no source: far above the rounding of a unit cross
#: product (~1e-16), far below any physical effect.
DEGENERATE_TOLERANCE = 1e-9

#: Sectors of a plane sweep narrower than this [rad] are rounding, not sectors.
_SECTOR_TOLERANCE_RAD = 1e-12


def all_switchings(reversing):
    """Every switching of n independent circuits, (M, n) int: 0/1, or -1/0/1 where reversing."""
    choices = [(-1, 0, 1) if r else (0, 1) for r in reversing]
    if not choices:
        return np.zeros((1, 0), dtype=int)
    return np.array(list(itertools.product(*choices)), dtype=int)


def count_switchings(reversing) -> int:
    return int(np.prod([3 if r else 2 for r in reversing], dtype=float)) if len(reversing) else 1


def _merge_parallel(units):
    """Group unit vectors by the line through the origin they lie on.

    Returns ``group`` (k,) the line of each vector, ``sign`` (k,) +-1 its sense along the line's
    direction, and ``directions`` (m, 3) one unit vector per line (the first of its group).
    """
    group = np.full(len(units), -1)
    directions: list[np.ndarray] = []
    for i in range(len(units)):
        if group[i] >= 0:
            continue
        across = np.linalg.norm(np.cross(units[i], units), axis=-1)
        group[(group < 0) & (across <= DEGENERATE_TOLERANCE)] = len(directions)
        directions.append(units[i])
    lines = np.array(directions)
    sign = np.where(np.einsum("kj,kj->k", units, lines[group]) < 0, -1, 1)
    return group, sign, lines


def _plane_sweep(directions, normal):
    """Sign vectors (s, k) of ``directions`` (k, 3), all in the plane normal to ``normal``, seen
    from a direction turning once round in that plane: one row per sector between the 2k angles
    where a sign changes."""
    e1 = directions[0] - (directions[0] @ normal) * normal
    e1 = e1 / np.linalg.norm(e1)
    e2 = np.cross(normal, e1)
    angle = np.arctan2(directions @ e2, directions @ e1)
    events = np.sort(np.mod(np.concatenate([angle + np.pi / 2, angle - np.pi / 2]), 2 * np.pi))
    gaps = np.diff(np.concatenate([events, events[:1] + 2 * np.pi]))
    middle = (events + gaps / 2)[gaps > _SECTOR_TOLERANCE_RAD]
    w = np.cos(middle)[:, None] * e1 + np.sin(middle)[:, None] * e2
    return np.where(w @ directions.T > 0, 1, -1).astype(np.int8)


def _region_signs(lines):
    """Sign vectors (M, m) of every region of the central arrangement of the planes normal to
    ``lines`` (m, 3), pairwise not parallel: see :func:`vertex_switchings`."""
    m = len(lines)
    if m == 1:
        return np.array([[1], [-1]], dtype=np.int8)
    first, second = np.triu_indices(m, 1)
    cross = np.cross(lines[first], lines[second])
    size = np.linalg.norm(cross, axis=-1)
    # Best-conditioned pairs first, so that each vertex is kept with its most accurate normal.
    order = np.argsort(-size, kind="stable")
    normal = cross[order] / size[order, None]
    first, second = first[order], second[order]
    normal = np.concatenate([normal, -normal])
    first, second = np.concatenate([first, first]), np.concatenate([second, second])
    dots = normal @ lines.T                                                  # (V, m)
    side = np.where(dots > DEGENERATE_TOLERANCE, 1,
                    np.where(dots < -DEGENERATE_TOLERANCE, -1, 0)).astype(np.int8)
    rows = np.arange(len(normal))
    side[rows, first] = 0
    side[rows, second] = 0
    # Many pairs name one vertex (three or more planes through it): keep it once.
    _, keep = np.unique(side, axis=0, return_index=True)
    keep = np.sort(keep)
    side, normal, first, second = side[keep], normal[keep], first[keep], second[keep]
    generic = np.sum(side == 0, axis=-1) == 2
    patterns = []
    at = np.arange(int(generic.sum()))
    for sa, sb in ((1, 1), (1, -1), (-1, 1), (-1, -1)):
        row = side[generic].copy()
        row[at, first[generic]] = sa
        row[at, second[generic]] = sb
        patterns.append(row)
    for v in np.nonzero(~generic)[0]:
        members = np.nonzero(side[v] == 0)[0]
        sweep = _plane_sweep(lines[members], normal[v])
        row = np.repeat(side[v][None, :], len(sweep), axis=0)
        row[:, members] = sweep
        patterns.append(row)
    return np.unique(np.concatenate(patterns), axis=0)


def vertex_switchings(vectors, reversing):
    """A switching for every vertex of the zonotope of the independent circuits, degenerate
    generators included: (M, n) int.

    Parameters
    ----------
    vectors : (n, 3) array
        Field of each independent circuit at its current (any unit).
    reversing : (n,) bool
        True where the circuit may also run backwards (-1, 0 or 1 times its vector).

    Returns
    -------
    choices : (M, n) int
        0/1 (-1/1 where reversing; 0 for a zero vector), M <= m(m - 1) + 2 for m distinct
        directions among the vectors, every vertex of
        :math:`Z = \\sum_i S_i v_i` (:math:`S_i = [0, 1]`, or :math:`[-1, 1]` where reversing)
        given by at least one row.

    Notes
    -----
    *Vertices and sign vectors.* For a direction w with :math:`w \\cdot v_i \\neq 0` for every
    non-zero :math:`v_i`, the point of Z furthest along w is unique: it switches each circuit on
    where :math:`w \\cdot v_i > 0` (reversed, -1, where :math:`w \\cdot v_i < 0` and the circuit
    reverses) and off otherwise. Every vertex of a polytope is the unique maximiser of w over
    an open cone of directions (its normal cone), which holds such generic w; so every vertex
    is one of these points, and each is a real switching (Ziegler, Lecture 7: the faces of a
    zonotope are dual to the cells of the arrangement of the planes :math:`v_i^\\perp`).

    *Parallel generators.* Circuits whose vectors lie on one line through the origin, direction
    :math:`u_g`, have :math:`w \\cdot v_i = \\sigma_i |v_i| \\, w \\cdot u_g`
    (:math:`\\sigma_i = \\pm 1`): the sign of :math:`w \\cdot u_g` fixes them all, and their
    sum is a segment of the line. They are merged into one line g. Collinear fields included:
    all circuits on one line make m = 1, whose two regions :math:`\\pm u_g` give the segment's
    two ends. What remains is to list the sign vectors
    :math:`\\tau_g = \\operatorname{sign}(w \\cdot u_g)` of generic w over m pairwise
    non-parallel lines: the regions of the central arrangement of the m planes
    :math:`u_g^\\perp`.

    *Every region is met.* With m >= 2 let R be a region (an open polyhedral cone).

    - If all :math:`u_g` lie in one plane with normal n (rank 2; e.g. every run laid fore and
      aft, whose fields have no forward part), every pair gives the vertex :math:`p = \\pm n`
      with every line in its plane. :math:`w \\cdot u_g` depends only on the part of w in that
      plane, so R's sign vector is that of a direction in the plane, which the sweep at p
      (one row per sector between the 2m angles where a sign changes) meets.
    - Otherwise (rank 3) R's closure is a pointed cone; it has an extreme ray r, which lies on
      at least two of the planes, :math:`u_a^\\perp` and :math:`u_b^\\perp` with a, b not
      parallel, so :math:`r = \\pm (u_a \\times u_b)/|u_a \\times u_b|` is a listed vertex p.
      Points of R near p are :math:`w = p + \\varepsilon t` with t in :math:`p^\\perp`: lines
      with :math:`u_g \\cdot p \\neq 0` keep the sign of :math:`u_g \\cdot p`, and the lines in
      :math:`p^\\perp` take the sign of :math:`t \\cdot u_g`, a generic direction t in that
      plane. Where only a and b lie in it the four sign pairs of (a, b) are every sector;
      where more do, the sweep in :math:`p^\\perp` lists every sector.

    So the rows hold every region, hence every vertex. Up to :math:`m(m-1) + 2` regions exist
    (the most a central arrangement of m planes in 3-D has, reached in general position;
    Zaslavsky 1975).

    *Rounding.* Directions within :data:`DEGENERATE_TOLERANCE` of one line are merged, and lines
    within it of a vertex's plane are swept there. A region the tolerance hides is a sliver of
    directions of that angular width; its vertex lies within about the tolerance times
    :math:`\\sum_i |v_i|` of the other vertices' hull (its support value differs from a
    neighbour's by that much), so a figure that is a convex function of the field with slope
    at most 1, such as :math:`|F + Cb| - |F|`, is short by no more than that.

    *Complexity.* n circuits on m <= n lines: merging O(nm); :math:`m(m-1)` oriented vertices,
    O(m) each to place the other lines, O(m^3) in all; a sweep O(k log k) at a vertex with k
    lines in its plane; the rows O(n m^2) to build. Memory O(n m^2).

    References
    ----------
    G. M. Ziegler, *Lectures on Polytopes*, Graduate Texts in Mathematics 152, Springer, 1995,
    Lecture 7 (zonotopes and the dual hyperplane arrangement; cited for this duality by
    T. Rörig, N. Witte and G. M. Ziegler, "Zonotopes with large 2D-cuts", arXiv:0710.3116, 2007).
    T. Zaslavsky, "Facing up to arrangements", Memoirs of the AMS 154, 1975 (the number of
    regions; from memory).
    """
    v = np.asarray(vectors, dtype=float).reshape(-1, 3)
    rev = np.asarray(reversing, dtype=bool).reshape(-1)
    n = len(v)
    norms = np.linalg.norm(v, axis=-1)
    live = np.nonzero(norms > 0.0)[0]
    if not len(live):
        return np.zeros((1, n), dtype=int)
    live = live[np.argsort(-norms[live], kind="stable")]
    group, sign, lines = _merge_parallel(v[live] / norms[live, None])
    member = _region_signs(lines)[:, group].astype(int) * sign[None, :]    # (M, k) +-1
    choices = np.zeros((len(member), n), dtype=int)
    choices[:, live] = np.where(rev[live][None, :], member, (member > 0).astype(int))
    return np.unique(choices, axis=0)


def candidate_switchings(vectors, reversing, most):
    """Every switching when there are at most ``most``, else :func:`vertex_switchings`.

    Returns
    -------
    choices : (M, n) int
    exhaustive : bool
        True when every switching was listed.
    """
    if count_switchings(reversing) <= most:
        return all_switchings(reversing), True
    return vertex_switchings(vectors, reversing), False


@dataclass(frozen=True)
class SwitchedError:
    """Total-field error over headings, attitudes and the switchings of independent circuits.

    low, high : the smallest and largest |F + C b| - |F| [unit of H]
    low_choice, high_choice : (n,) int, a switching behind each (for a ``low`` that is a bound,
        the vertex where the bound is reached; its own smallest error is at least ``low``)
    peak_to_peak : level, over a full turn of heading, the largest over the switchings
    exhaustive : every switching was scored; else ``high`` is still exact, while ``low`` and
        ``peak_to_peak`` are bounds on the safe side (see :func:`error_over_switchings`)
    """

    low: float
    high: float
    low_choice: np.ndarray
    high_choice: np.ndarray
    peak_to_peak: float
    exhaustive: bool


def _peak_to_peak_bound(fields, horizontal, vertical):
    """The largest level peak-to-peak any point of the fields' zonotope can have, given its
    vertices ``fields`` (M, 3): see :func:`error_over_switchings`."""
    reach = float(np.max(np.hypot(fields[:, 0], fields[:, 1])))
    down = -fields[:, 2]
    lo, hi = vertical + float(down.min()), vertical + float(down.max())
    zeta = 0.0 if lo <= 0.0 <= hi else min(abs(lo), abs(hi))
    spread = np.hypot(horizontal + reach, zeta) + np.hypot(horizontal - reach, zeta)
    return float(4.0 * horizontal * reach / spread) if spread > 0 else 0.0


def error_over_switchings(base, vectors, reversing, horizontal, vertical, max_heel_deg=0.0,
                          max_pitch_deg=0.0, most=MAX_SWITCHINGS_ENUMERATED) -> SwitchedError:
    """Smallest and largest total-field error over headings, attitudes and switchings.

    Parameters
    ----------
    base : (3,) array
        Field that is always there, vessel frame, in the unit of ``horizontal``.
    vectors : (n, 3) array
        Field of each independent circuit at its current.
    reversing : (n,) bool
    horizontal, vertical : float
        The Earth's H and Z (positive down).
    max_heel_deg, max_pitch_deg : float [deg]
    most : int
        Up to this many switchings, every one is scored.

    Returns
    -------
    SwitchedError

    Notes
    -----
    Up to ``most`` switchings every one is scored exactly
    (:func:`total_field_error_range`). Beyond, the candidates are the zonotope's vertices
    (:func:`vertex_switchings`):

    - *high* is exact. :math:`|F + Cb| - |F|` maximised over headings and attitudes is a maximum
      of convex functions of b, so convex; over the zonotope (which holds every switching) its
      maximum is at a vertex (Rockafellar, section 32), and every vertex is a listed switching.
    - *low* is a bound that never flatters. For any direction of the Earth's field in the
      vessel frame w (|w| = F), :math:`|w + b| \\ge \\hat w \\cdot (w + b) = F + \\hat w \\cdot b`,
      so the error is at least the linear :math:`\\hat w \\cdot b`. For each w that is smallest
      at a vertex, so the minimum over vertices, headings and attitudes of :math:`\\hat w \\cdot b`
      (:func:`first_order_range`) is at most the true smallest error. It falls short of it by
      at most :math:`\\max_{w,b} (|w + b| - F - \\hat w \\cdot b) \\le R^2/(2(F - R))` with R the
      largest |b| (a vertex's), since
      :math:`|w + b| - F - \\hat w \\cdot b = |b_\\perp|^2/(|w + b| + F + \\hat w \\cdot b)`.
      The smallest error is not convex in b and may lie inside the zonotope, so no vertex
      list gives it exactly.
    - *peak to peak* (level) is :math:`\\sqrt{(H+r)^2 + \\zeta^2} - \\sqrt{(H-r)^2 + \\zeta^2}` with
      r the horizontal size of b and :math:`\\zeta = Z + d`, d its down component: it grows with
      r (derivative :math:`(H+r)/a + (H-r)/b \\ge 0`, also for r > H) and shrinks as
      :math:`|\\zeta|` grows (it equals :math:`4Hr/(a + b)`). r is convex in b, so at most its
      largest vertex value; d is linear, so within its vertices' range. Their worst pairing is
      an upper bound.

    References
    ----------
    R. T. Rockafellar, *Convex Analysis*, Princeton University Press, 1970, section 32.
    """
    base = np.asarray(base, dtype=float)
    vectors = np.asarray(vectors, dtype=float).reshape(-1, 3)
    choices, exhaustive = candidate_switchings(vectors, reversing, most)
    fields = base[None, :] + choices @ vectors
    low, high = total_field_error_range(fields, horizontal, vertical, max_heel_deg,
                                        max_pitch_deg)
    i_hi = int(np.argmax(high))
    if exhaustive:
        i_lo = int(np.argmin(low))
        low_value = float(low[i_lo])
        peak = float(np.max(heading_error_peak_to_peak(fields, horizontal, vertical)))
    else:
        linear = first_order_range(fields, horizontal, vertical, max_heel_deg, max_pitch_deg)[0]
        i_lo = int(np.argmin(linear))
        low_value = float(linear[i_lo])
        peak = _peak_to_peak_bound(fields, horizontal, vertical)
    return SwitchedError(low_value, float(high[i_hi]), choices[i_lo], choices[i_hi], peak,
                         exhaustive)


def inclination_over_switchings(base, vectors, reversing, horizontal, vertical,
                                max_heel_deg=0.0, max_pitch_deg=0.0,
                                most=MAX_SWITCHINGS_ENUMERATED):
    """Smallest and largest inclination of F + C b over headings, attitudes and switchings.

    Returns
    -------
    low_deg, high_deg : float [deg]
    largest : float
        The largest |b| over the switchings (a vertex's; |b| is convex), unit of ``horizontal``.

    Notes
    -----
    Up to ``most`` switchings, every one (exact). Beyond, the zonotope's vertices, which hold
    both extremes whenever every |b| < H. Proof: at a fixed heel and pitch, with the heading
    free, the level down component d of b is linear in b and its level horizontal size r is
    convex in b; the sensor's field has down part Z + d and horizontal size anywhere in
    [H - r, H + r]. For an angle alpha with t = tan(alpha), "the largest inclination is at
    least alpha" reads :math:`d + t r \\ge tH - Z` for :math:`t \\ge 0` and
    :math:`d - t r \\ge tH - Z` for t < 0; both left sides are convex in b, so if a switching
    meets them a vertex does (a convex function is largest over a polytope at a vertex). "The
    smallest is at most alpha" reads :math:`d - t r \\le tH - Z` (t > 0) or
    :math:`d + t r \\le tH - Z` (:math:`t \\le 0`), concave left sides, smallest at a vertex.
    Every heel and pitch alike, so the vertices hold the extremes over all of them. Where some
    |b| reaches H the horizontal size H - r can vanish and the argument fails: the range given
    is then the whole [-90, 90] degrees, which holds any inclination.
    """
    base = np.asarray(base, dtype=float)
    vectors = np.asarray(vectors, dtype=float).reshape(-1, 3)
    choices, exhaustive = candidate_switchings(vectors, reversing, most)
    fields = base[None, :] + choices @ vectors
    low, high = inclination_range_deg(fields, horizontal, vertical, max_heel_deg, max_pitch_deg)
    largest = float(np.max(np.linalg.norm(fields, axis=-1)))
    if not exhaustive and largest >= horizontal:
        return -90.0, 90.0, largest
    return float(np.min(low)), float(np.max(high)), largest
