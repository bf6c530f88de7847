r"""The worst case of a disturbance that turns with the Earth's field, with everything a plan leaves
open: over every heading and attitude, every switching of the independent loads, every lie of a
pair, the permeability band of every steel item and every part of unknown direction.

A sensor near steel sees, in the vessel frame (x forward, y port, z up),

.. math:: b = P + M F_v,\qquad P \in c + \sum_i [-1, 1]\,g_i,\qquad
          M \in M_0 + \sum_j [-1, 1]\,G_j,

plus a part of unknown direction of size at most beta. P is the vessel-fixed part (cables,
oriented equipment): the switching of an independent circuit is a generator (on/off is
:math:`v/2 \pm v/2`), a pair's lies are generators. M is the summed matrix of the steel items
(:func:`deviation.physics.induced.field_matrix`), linear in each item's principal
polarisabilities, so each item's band is three generators. :math:`F_v = W^T F` is the Earth's
field seen in the vessel frame, :math:`W = R_z(\psi)R_y(\theta)R_x(\phi)S` the vessel-to-level
rotation (:mod:`deviation.physics.soft_iron`), F = (H, 0, Z) north, east, down.

*At one orientation* the level horizontal part of every possible disturbance fills a
two-dimensional zonotope (the images of all the generators, P's and M's alike, at that
orientation) grown by a disc of radius beta; the largest angle of the needle over it is found
exactly from the zonotope's vertices (:func:`_widest_angle`). *Over the orientation* the worst is
found by Lipschitz branch and bound (Piyavskii 1972, Shubert 1972): the bound it returns is
proven and within ``tolerance`` of a value actually reached. Nothing is sampled.

A total-field (scalar) magnetometer's error :math:`|F + Wb| - |F|` is bounded the same way from its
first-order part :math:`\hat F\cdot Wb`, whose extremes over the set at one orientation are its
support function, with the second-order remainder :math:`R^2/(2(|F| - R))` stated and added
(:func:`worst_total_field_error`).

References
----------
S. A. Piyavskii, "An algorithm for finding the absolute extremum of a function", USSR Comput.
Math. Math. Phys. 12(4), 57-67 (1972); B. O. Shubert, "A sequential method seeking the global
maximum of a function", SIAM J. Numer. Anal. 9(3), 379-388 (1972); R. T. Rockafellar, *Convex
Analysis*, Princeton, 1970, section 32 (extremes of convex and quasi-convex functions at extreme
points); G. M. Ziegler, *Lectures on Polytopes*, Springer, 1995, §7.3 (zonotopes; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Vessel frame (x forward, y port, z up) to ship's axes (forward, starboard, down).
_SHIP = np.diag([1.0, -1.0, -1.0])

#: Default tolerance of the worst deviation [deg]: the bound exceeds a value actually reached by
#: at most this (a budget is read in hundredths of a degree).
TOLERANCE_DEG = 1e-2
#: Default tolerance of the total-field error, as a fraction of H (1e-5 H: 0.2 nT at 20 µT).
TOLERANCE_OF_H = 1e-5
#: Most cells the branch and bound holds at once (over all problems) before it stops refining and
#: reports the bound it has (still proven, looser).
MAX_CELLS = 2_000_000
#: Rows evaluated at once (bounds memory: rows x generators x a few doubles).
_CHUNK_ROWS = 40_000


@dataclass(frozen=True)
class Turning:
    """B problems of a disturbance b = P + M F_v (see the module notes), in one unit (T or nT).

    centre : (B, 3) the centre of P, vessel frame
    generators : (B, n, 3) P's generators (P = centre + sum t_i g_i, t_i in [-1, 1])
    matrix : (B, 3, 3) the centre of M (dimensionless, vessel frame, b = M F_v)
    matrix_generators : (B, m, 3, 3) M's generators
    unknown : (B,) beta, the size of a further part of any direction
    matrix_fixed : (B, m, 3) a vessel-fixed part that moves with each matrix generator (the
        generator's term is t_j (matrix_fixed_j + G_j F_v)); zeros unless an adjustment ties
        one to the other
    """

    centre: np.ndarray
    generators: np.ndarray
    matrix: np.ndarray
    matrix_generators: np.ndarray
    unknown: np.ndarray
    matrix_fixed: np.ndarray

    @classmethod
    def of(cls, centre, generators=None, matrix=None, matrix_generators=None, unknown=None,
           matrix_fixed=None):
        """Broadcast the parts to B problems (missing generators: none; matrix: zero)."""
        centre = np.atleast_2d(np.asarray(centre, dtype=float))
        b = centre.shape[0]
        gens = (np.zeros((b, 0, 3)) if generators is None else
                np.broadcast_to(np.asarray(generators, dtype=float),
                                (b,) + np.shape(generators)[-2:]))
        mat = (np.zeros((b, 3, 3)) if matrix is None else
               np.broadcast_to(np.asarray(matrix, dtype=float), (b, 3, 3)))
        mgens = (np.zeros((b, 0, 3, 3)) if matrix_generators is None else
                 np.broadcast_to(np.asarray(matrix_generators, dtype=float),
                                 (b,) + np.shape(matrix_generators)[-3:]))
        beta = np.broadcast_to(np.asarray(0.0 if unknown is None else unknown, dtype=float), (b,))
        if np.any(beta < 0):
            raise ValueError("the size of a part of unknown direction cannot be negative")
        mfixed = (np.zeros(mgens.shape[:2] + (3,)) if matrix_fixed is None else
                  np.broadcast_to(np.asarray(matrix_fixed, dtype=float), mgens.shape[:2] + (3,)))
        return cls(centre, gens, mat, mgens, beta, mfixed)

    def __len__(self):
        return self.centre.shape[0]

    def fixed_size(self):
        """(B,) a bound on |P| over the zonotope, and on its horizontal part |P_h|."""
        full = (np.linalg.norm(self.centre, axis=-1)
                + np.linalg.norm(self.generators, axis=-1).sum(axis=-1)
                + np.linalg.norm(self.matrix_fixed, axis=-1).sum(axis=-1))
        level = (np.linalg.norm(self.centre[:, :2], axis=-1)
                 + np.linalg.norm(self.generators[..., :2], axis=-1).sum(axis=-1)
                 + np.linalg.norm(self.matrix_fixed[..., :2], axis=-1).sum(axis=-1))
        return full, level

    def matrix_size(self):
        """(B,) bounds on ||M||_2 (spectral norms added), on its two horizontal rows, and on
        their first two columns, over the zonotope of matrices."""
        def norm(m, rows=slice(None), cols=slice(None)):
            part = m[..., rows, cols]
            if part.size == 0:
                return np.zeros(part.shape[:-2])
            return np.linalg.norm(part, ord=2, axis=(-2, -1))
        full = norm(self.matrix) + norm(self.matrix_generators).sum(axis=-1)
        rows = norm(self.matrix, slice(0, 2)) + norm(self.matrix_generators,
                                                     slice(0, 2)).sum(axis=-1)
        block = (norm(self.matrix, slice(0, 2), slice(0, 2))
                 + norm(self.matrix_generators, slice(0, 2), slice(0, 2)).sum(axis=-1))
        return full, rows, block


def rotation(heading_rad, heel_rad=0.0, pitch_rad=0.0):
    """W = Rz(psi) Ry(theta) Rx(phi) S: vessel frame to the level frame (north, east, down),
    (..., 3, 3), broadcast over the angles [rad]."""
    psi, phi, theta = np.broadcast_arrays(*(np.asarray(a, dtype=float)
                                            for a in (heading_rad, heel_rad, pitch_rad)))
    cz, sz = np.cos(psi), np.sin(psi)
    cy, sy = np.cos(theta), np.sin(theta)
    cx, sx = np.cos(phi), np.sin(phi)
    out = np.empty(psi.shape + (3, 3))
    # Rz Ry Rx (aerospace body-to-NED), then the columns of S (y and z negated).
    out[..., 0, 0] = cz * cy
    out[..., 0, 1] = -(cz * sy * sx - sz * cx)
    out[..., 0, 2] = -(cz * sy * cx + sz * sx)
    out[..., 1, 0] = sz * cy
    out[..., 1, 1] = -(sz * sy * sx + cz * cx)
    out[..., 1, 2] = -(sz * sy * cx - cz * sx)
    out[..., 2, 0] = -sy
    out[..., 2, 1] = -(cy * sx)
    out[..., 2, 2] = -(cy * cx)
    return out


def _images(turning, index, w, horizontal, vertical):
    """The set at one orientation per row: centre (R, 3) and generators (R, n + m, 3) of
    W b, level frame (the disturbance only; the Earth's field is not added)."""
    earth = np.array([horizontal, 0.0, vertical])
    seen = earth @ w                                                    # F_v = W^T F
    centre = turning.centre[index] + _times(turning.matrix[index], seen)
    steel = (_times(turning.matrix_generators[index], seen[:, None, :])
             + turning.matrix_fixed[index])
    gens = np.concatenate([turning.generators[index], steel], axis=1)
    return _times(w, centre), gens @ np.swapaxes(w, -1, -2), seen


def _times(m, v):
    """m (..., 3, 3) times v (..., 3): (..., 3), by matmul (einsum is slow on small batches)."""
    return (m @ v[..., None])[..., 0]


def _vertices(centre, gens):
    """The vertices of the 2-D zonotope centre + sum [-1, 1] g, in order round it, (R, 2k, 2),
    with the sign pattern of each (R, 2k, k) over the generators as given (k >= 1)."""
    flip = (gens[..., 1] < 0) | ((gens[..., 1] == 0) & (gens[..., 0] < 0))
    up = np.where(flip[..., None], -gens, gens)
    order = np.argsort(np.arctan2(up[..., 1], up[..., 0]), axis=-1, kind="stable")
    ordered = np.take_along_axis(up, order[..., None], axis=1)
    start = centre - ordered.sum(axis=1)
    steps = 2.0 * np.cumsum(ordered, axis=1)
    first = np.concatenate([start[:, None], start[:, None] + steps[:, :-1]], axis=1)
    return np.concatenate([first, 2.0 * centre[:, None] - first], axis=1), flip, order


def _signs(flip, order, vertex):
    """The generators' signs (R, k) at vertex ``vertex`` (R,) of :func:`_vertices`."""
    rows, k = flip.shape
    j = np.asarray(vertex) % (2 * k)
    mirrored = j >= k
    j = np.where(mirrored, j - k, j)
    rank = np.empty_like(order)
    np.put_along_axis(rank, order, np.broadcast_to(np.arange(k), (rows, k)), axis=-1)
    signs = np.where(rank < j[:, None], 1.0, -1.0)
    signs = np.where(mirrored[:, None], -signs, signs)
    return np.where(flip, -signs, signs)


def _widest_angle(centre, gens, beta):
    """Largest |angle| from north of the points of (centre + zonotope) grown by a disc beta.

    Parameters
    ----------
    centre : (R, 2) north, east; generators (R, k, 2); beta (R,)

    Returns
    -------
    value : (R,) [rad], pi where the set reaches the south half-line or the origin
    vertex : (R,) index of the vertex reaching it (:func:`_vertices`), -1 with no generators
    distance : (R,) distance of the origin from the zonotope (without the disc)
    reaches : (R,) bool, the set reaches the half-line of 180 degrees or the origin
    high, low : (R,) the largest and least angle of the set, unwrapped about the centre's

    Notes
    -----
    Along a line not through the origin the angle is monotone, so over a polygon its extremes
    are at vertices; over the polygon grown by a disc, at the tangents from the origin to the
    discs about the vertices (arg v +- asin(beta/|v|)). A convex set misses the origin exactly
    when its directions fit in an arc shorter than pi; taken relative to the direction of the
    centre (a point of the set) the arc is read without wrapping.
    """
    rows = centre.shape[0]
    if gens.shape[1]:
        verts, _, _ = _vertices(centre, gens)
    else:
        verts = centre[:, None, :]
    a0 = np.arctan2(centre[:, 1], centre[:, 0])
    size = np.hypot(verts[..., 0], verts[..., 1])
    rel = np.angle(np.exp(1j * (np.arctan2(verts[..., 1], verts[..., 0]) - a0[:, None])))
    with np.errstate(divide="ignore", invalid="ignore"):
        tangent = np.arcsin(np.clip(beta[:, None] / size, 0.0, 1.0))
    high = rel + tangent
    low = rel - tangent
    hi_i, lo_i = np.argmax(high, axis=1), np.argmin(low, axis=1)
    hi = high[np.arange(rows), hi_i] + a0
    lo = low[np.arange(rows), lo_i] + a0
    reaches = (np.any(size <= beta[:, None], axis=1) | (hi - lo >= np.pi) | (hi >= np.pi)
               | (lo <= -np.pi) | (np.hypot(centre[:, 0], centre[:, 1]) == 0.0))
    value = np.where(reaches, np.pi, np.maximum(hi, -lo))
    vertex = np.where(hi >= -lo, hi_i, lo_i) if gens.shape[1] else np.full(rows, -1)
    # Distance of the origin from the polygon: the nearest edge (or vertex), zero when inside.
    if verts.shape[1] > 1:
        a, b = verts, np.roll(verts, -1, axis=1)
        edge = b - a
        length = np.sum(edge * edge, axis=-1)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.clip(np.where(length > 0, -np.sum(a * edge, axis=-1) / length, 0.0), 0, 1)
        nearest = np.hypot(*np.moveaxis(a + t[..., None] * edge, -1, 0)).min(axis=1)
        cross = a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]
        inside = np.all(cross >= 0, axis=1) | np.all(cross <= 0, axis=1)
        distance = np.where(inside, 0.0, nearest)
    else:
        distance = size[:, 0]
    return value, vertex, distance, reaches, hi, lo

#: Steps of the support iteration before a row falls back to sorting its vertices.
_TANGENT_STEPS = 16


def _upper_tangent(length, gens, beta):
    """The largest angle above the centre's direction, relative to it, of the points of the
    zonotope (centre at (length, 0); generators ``gens`` (R, k, 2) in that turned frame) grown
    by a disc beta, by the support iteration.

    Returns (angle (R,), signs (R, k), converged (R,) bool, wraps (R,) bool): ``wraps`` where
    the set reaches relative angle pi (it holds the origin or a point behind it).

    Notes
    -----
    A ray from the origin at angle t bounds the set from above exactly when the set's support
    in the ray's normal direction n_t = (-sin t, cos t) is at most zero, h(n_t) =
    n_t . c + sum |n_t . g_i| + beta <= 0. While h(n_t) > 0 the vertex picked by n_t, grown by
    the disc, reaches past the ray, and the tangent from the origin to its disc has a larger
    angle: the angles found increase, and stop at the set's tangent after finitely many steps
    (there are finitely many vertices); each is a point of the set, so the angle found is
    reached.
    """
    rows, k = gens.shape[:2]
    t = np.zeros(rows)
    signs = np.zeros((rows, k))
    converged = np.zeros(rows, dtype=bool)
    wraps = np.zeros(rows, dtype=bool)
    idx = np.arange(rows)
    gx, gy, lengths, betas = gens[..., 0], gens[..., 1], length, beta
    for _ in range(_TANGENT_STEPS):
        if not len(idx):
            break
        n_x, n_y = -np.sin(t[idx]), np.cos(t[idx])
        pick = np.where(gx * n_x[:, None] + gy * n_y[:, None] > 0, 1.0, -1.0)
        vx = lengths + (pick * gx).sum(axis=1)
        vy = (pick * gy).sum(axis=1)
        support = n_x * vx + n_y * vy + betas
        done = support <= 1e-13 * (lengths + betas)
        converged[idx[done]] = True
        size = np.hypot(vx, vy)
        with np.errstate(divide="ignore", invalid="ignore"):
            reach = np.arctan2(vy, vx) + np.arcsin(np.clip(betas / size, 0.0, 1.0))
        hit = ~done & ((size <= betas) | (reach >= np.pi) | (reach <= t[idx]))
        wraps[idx[hit]] = True
        moved = ~done & ~hit
        t[idx[moved]] = reach[moved]
        signs[idx[moved]] = pick[moved]
        stay = moved
        idx, gx, gy, lengths, betas = idx[stay], gx[stay], gy[stay], lengths[stay], betas[stay]
    return t, signs, converged, wraps


def _widest_fast(centre, gens, beta):
    """:func:`_widest_angle` by the support iteration (no sorting): value, signs at the value,
    a lower bound on the origin's distance from the zonotope, and rows to redo by sorting."""
    a0 = np.arctan2(centre[:, 1], centre[:, 0])
    length = np.hypot(centre[:, 0], centre[:, 1])
    c, s = np.cos(a0), np.sin(a0)
    turned = np.stack([gens[..., 0] * c[:, None] + gens[..., 1] * s[:, None],
                       -gens[..., 0] * s[:, None] + gens[..., 1] * c[:, None]], axis=-1)
    up, up_signs, up_ok, up_wraps = _upper_tangent(length, turned, beta)
    mirror = turned * np.array([1.0, -1.0])
    down, down_signs, down_ok, down_wraps = _upper_tangent(length, mirror, beta)
    high, low = a0 + up, a0 - down
    reaches = (up_wraps | down_wraps | (up + down >= np.pi) | (high >= np.pi) | (low <= -np.pi)
               | (length <= beta))
    value = np.where(reaches, np.pi, np.maximum(high, -low))
    signs = np.where((high >= -low)[:, None], up_signs, down_signs)
    distance = np.maximum(length - np.abs(turned[..., 0]).sum(axis=1), 0.0)
    redo = ~reaches & ~(up_ok & down_ok)
    return value, signs, distance, redo, high, low



@dataclass(frozen=True)
class WorstDeviation:
    """The worst deviation of B problems over orientation and every open choice.

    bound_deg : (B,) proven: no heading, attitude or choice gives more (180: the sensor may be
        overwhelmed, or nothing rules it out)
    found_deg : (B,) a value reached, at ``heading_deg``, ``heel_deg``, ``pitch_deg``
    signs : (B, n) the fixed generators' signs at the found value (+1 or -1)
    matrix_signs : (B, m) the matrix generators' signs there
    overwhelmed : (B,) bool, the bound reaches 180 degrees: nothing rules out the set reaching
        the south half-line or the origin (the needle may point anywhere)
    tolerance_deg : what the search aimed at (bound - found <= tolerance unless it ran out of
        cells)
    """

    bound_deg: np.ndarray
    found_deg: np.ndarray
    heading_deg: np.ndarray
    heel_deg: np.ndarray
    pitch_deg: np.ndarray
    signs: np.ndarray
    matrix_signs: np.ndarray
    overwhelmed: np.ndarray
    tolerance_deg: float


def _attitude_cells(heel_max, pitch_max, headings):
    """Initial cells: ``headings`` cells over the full turn, one over each attitude range."""
    psi_half = np.pi / headings
    centres = np.stack([np.arange(headings) * 2 * psi_half + psi_half, np.zeros(headings),
                        np.zeros(headings)], axis=-1)
    half = np.broadcast_to([psi_half, heel_max, pitch_max], centres.shape).copy()
    return centres, half


def worst_deviation(turning: Turning, horizontal, vertical, max_heel_deg=0.0, max_pitch_deg=0.0,
                    *, tolerance_deg=TOLERANCE_DEG, headings=16) -> WorstDeviation:
    r"""Largest |deviation| over every heading, heel and pitch and every open choice, proven.

    Parameters
    ----------
    turning : Turning
        B problems, in the unit of ``horizontal``.
    horizontal, vertical : float
        H (> 0) and Z (down positive).
    max_heel_deg, max_pitch_deg : float [deg]
        Every heel in [-max, max] (starboard down positive) and pitch (bow up positive), at most
        90; both 0: level.
    tolerance_deg : float
        The bound is within this of a value reached.
    headings : int
        Cells the heading circle starts with.

    Returns
    -------
    WorstDeviation

    Notes
    -----
    *One orientation.* Every choice gives a point of a zonotope; its horizontal image (with the
    disc of radius beta) is the set the needle's resultant u = (H + b_N, b_E) may be anywhere
    in, and :func:`_widest_angle` finds its largest angle exactly.

    *Lipschitz.* Every rotation derivative has norm 1. Each of psi, phi, theta moves a point
    :math:`WP + WMW^TF` of the set by at most :math:`K = |P| + 2\|M\||F|` per radian (level:
    :math:`|P_h| + \|M_{h\cdot}\||F| + \|M_{hh}\|H`, the horizontal rows and block), norms
    bounded over the zonotopes by the triangle inequality. Within a cell of half-widths w about
    an orientation where the origin lies at distance d from the set, no point comes nearer
    than :math:`d_w = d - K\sum w`, and the angle plus its tangent term,
    :math:`|\arg u| + \arcsin(\beta/|u|)`, moves by at most
    :math:`K(1 + \beta/\sqrt{d_w^2 - \beta^2})/d_w` per radian: the value at the centre plus
    that times :math:`\sum w` bounds the cell (pi where :math:`d_w \le \beta`). The largest of
    a set of such functions (one per choice) obeys the same bound. Cells whose bound is within
    the tolerance of the best value reached are closed; the others are halved across their
    widest side.
    """
    b = len(turning)
    h, z = float(horizontal), float(vertical)
    heel_max = np.radians(abs(float(max_heel_deg)))
    pitch_max = np.radians(abs(float(max_pitch_deg)))
    if heel_max > np.pi / 2 + 1e-12 or pitch_max > np.pi / 2 + 1e-12:
        raise ValueError("heel and pitch limits are at most 90 degrees")
    if not h > 0:
        raise ValueError("the horizontal field must be positive")
    original = turning
    # The smallest fixed generators are counted as part of the disc (it holds their zonotope),
    # up to a tenth of the tolerance's worth, and generators that are zero everywhere dropped:
    # fewer generators, the same bound to within the tolerance.
    turning = _folded(turning, 0.1 * np.radians(tolerance_deg) * h / 2.0)
    tolerance_deg = 0.9 * tolerance_deg
    total = float(np.hypot(h, z))
    fixed_full, fixed_level = turning.fixed_size()
    m_full, m_rows, m_block = turning.matrix_size()
    level = heel_max == 0 and pitch_max == 0
    speed = (fixed_level + m_rows * total + m_block * h if level
             else fixed_full + 2.0 * m_full * total)                          # (B,) per radian
    second = fixed_full + 4.0 * m_full * total                    # (B,) any second derivative
    tol = np.radians(tolerance_deg)
    centres, half = _attitude_cells(heel_max, pitch_max, headings)
    owner = np.repeat(np.arange(b), len(centres))
    centres = np.tile(centres, (b, 1))
    half = np.tile(half, (b, 1))
    best = np.full(b, -np.inf)
    best_at = np.zeros((b, 3))
    closed_bound = np.full(b, -np.inf)
    if not level:
        # Values reached at the corners of the attitude box, where the worst usually lies: a
        # good value early closes cells early (it changes no bound).
        seeds = np.array([[psi, a * heel_max, c * pitch_max]
                          for psi in np.arange(headings) * 2 * np.pi / headings
                          for a in (-1.0, 1.0) for c in (-1.0, 1.0)])
        seed_owner = np.repeat(np.arange(b), len(seeds))
        seed_at = np.tile(seeds, (b, 1))
        seed_value, _ = _evaluate(turning, seed_owner, seed_at, h, z)
        np.maximum.at(best, seed_owner, seed_value)
        hit = seed_value >= best[seed_owner]
        best_at[seed_owner[hit]] = seed_at[hit]
    while len(owner):
        value, distance = _evaluate(turning, owner, centres, h, z)
        improve = value > best[owner]
        if np.any(improve):
            order = np.lexsort((-value, owner))
            first = order[np.unique(owner[order], return_index=True)[1]]
            first = first[value[first] > best[owner[first]]]
            best[owner[first]] = value[first]
            best_at[owner[first]] = centres[first]
        width = half.sum(axis=1)
        near = distance - speed[owner] * width
        beta = turning.unknown[owner]
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = speed[owner] * (1.0 + beta / np.sqrt(near ** 2 - beta ** 2)) / near
        upper = np.where(near > beta, value + slope * width, np.pi)
        upper = np.minimum(upper, np.pi)
        # Where the first-order bound does not close a cell, try the second-order one.
        trying = (upper > best[owner] + tol) & (best[owner] < np.pi) & (near > beta)
        # The second-order bound is at least the centre's value plus its remainder: try it only
        # where that could close the cell.
        with np.errstate(divide="ignore", invalid="ignore"):
            rest = (0.5 * second[owner] * width ** 2
                    * (1.0 + beta / np.sqrt(near ** 2 - beta ** 2)) / near)
        trying &= value + rest <= best[owner] + tol
        if np.any(trying):
            upper[trying] = np.minimum(upper[trying], _linearised_upper(
                turning, owner[trying], centres[trying], half[trying], h, z, near[trying],
                second))
        done = (upper <= best[owner] + tol) | (best[owner] >= np.pi)
        if np.any(done):
            np.maximum.at(closed_bound, owner[done], upper[done])
        keep = ~done
        owner, centres, half, upper = owner[keep], centres[keep], half[keep], upper[keep]
        if not len(owner):
            break
        if 2 * len(owner) > MAX_CELLS:
            np.maximum.at(closed_bound, owner, upper)
            break
        axis = np.argmax(half, axis=1)
        step = np.zeros_like(half)
        step[np.arange(len(owner)), axis] = half[np.arange(len(owner)), axis] / 2.0
        half = np.concatenate([half - step, half - step])
        centres = np.concatenate([centres - step, centres + step])
        owner = np.concatenate([owner, owner])
    bound = np.maximum(closed_bound, best)
    overwhelmed = bound >= np.pi
    # The value reached, by the problem as given, where the search found its best.
    best = np.minimum(_evaluate(original, np.arange(b), best_at, h, z)[0], bound)
    signs, matrix_signs = _signs_at(original, best_at, h, z)
    return WorstDeviation(np.degrees(np.minimum(bound, np.pi)), np.degrees(best),
                          np.mod(np.degrees(best_at[:, 0]), 360.0), np.degrees(best_at[:, 1]),
                          np.degrees(best_at[:, 2]), signs, matrix_signs, overwhelmed,
                          float(tolerance_deg) / 0.9)


def _folded(turning, budget):
    """The problems with their smallest fixed generators folded into the disc (their sizes added
    to beta, at most ``budget`` per problem) and the generators zero in every problem dropped."""
    gens = turning.generators
    norms = np.linalg.norm(gens, axis=-1)                                  # (B, n)
    order = np.argsort(norms, axis=1, kind="stable")
    cumulative = np.cumsum(np.take_along_axis(norms, order, axis=1), axis=1)
    fold = np.zeros_like(norms, dtype=bool)
    np.put_along_axis(fold, order, cumulative <= budget, axis=1)
    unknown = turning.unknown + np.where(fold, norms, 0.0).sum(axis=1)
    gens = np.where(fold[..., None], 0.0, gens)
    keep = np.any(gens != 0.0, axis=(0, 2))
    mkeep = (np.any(turning.matrix_generators != 0.0, axis=(0, 2, 3))
             | np.any(turning.matrix_fixed != 0.0, axis=(0, 2)))
    return Turning(turning.centre, gens[:, keep], turning.matrix,
                   turning.matrix_generators[:, mkeep], unknown, turning.matrix_fixed[:, mkeep])


_JX = np.array([[0.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]])
_JY = np.array([[0.0, 0.0, 1.0], [0.0, 0.0, 0.0], [-1.0, 0.0, 0.0]])
_JZ = np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]])


def _rotation_and_derivatives(c):
    """W and its derivatives in heading, heel and pitch at cell centres c (R, 3): (4, R, 3, 3).

    W = Rz(psi) Ry(theta) Rx(phi) S, and d Rz/d psi = Rz Jz etc. (Jx, Jy, Jz the generators
    of rotations about x, y, z)."""
    zero = np.zeros(len(c))
    rz, ry, rx = (rotation(c[:, 0], zero, zero) @ _SHIP, rotation(zero, zero, c[:, 2]) @ _SHIP,
                  rotation(zero, c[:, 1], zero) @ _SHIP)
    w = rz @ ry @ rx @ _SHIP
    d_psi = rz @ _JZ @ ry @ rx @ _SHIP
    d_phi = rz @ ry @ rx @ _JX @ _SHIP
    d_theta = rz @ ry @ _JY @ rx @ _SHIP
    return np.stack([w, d_psi, d_phi, d_theta])


def _linearised_upper(turning, owner, centres, half, h, z, near, second):
    """A second-order bound on the largest angle over each cell (R,).

    Every point of the set is u_s(x) = W(P_s + M_s W^T F) for a choice s; to first order about
    the cell's centre it moves as u_s + sum_i du_s/dx_i dx_i, whose set over the choices at a
    corner of the cell is the zonotope with the generators' first-order images there. Over the
    cell each such point stays in the convex hull of its corner values, so the largest angle of
    the linearised set over the cell is the largest over the corners (unless their union
    reaches round to the south); the rest, at most ``second`` (sum of half-widths)^2 / 2 in
    size (``second`` bounds every second derivative), turns the angle and its tangent term by
    at most that over ``near`` (the least distance of the set from the origin over the cell)
    times (1 + beta/sqrt(near^2 - beta^2)).
    """
    rows = len(owner)
    out = np.full(rows, np.pi)
    beta_all = turning.unknown[owner]
    for lo in range(0, rows, _CHUNK_ROWS // 4):
        part = slice(lo, lo + _CHUNK_ROWS // 8)
        index, c, w_half = owner[part], centres[part], half[part]
        rot = _rotation_and_derivatives(c)                                  # (4, r, 3, 3)
        earth = np.array([h, 0.0, z])
        seen = earth @ rot[0]                                               # W^T F
        d_seen = earth @ rot[1:]                                            # dW^T F
        matrix = turning.matrix[index]
        mgens = turning.matrix_generators[index]
        fixed = turning.centre[index] + _times(matrix, seen)
        gens = turning.generators[index]
        steel = _times(mgens, seen[:, None, :]) + turning.matrix_fixed[index]
        all_fixed = np.concatenate([fixed[:, None], gens, steel], axis=1)  # (r, 1+n+m, 3)
        image = all_fixed @ np.swapaxes(rot[0], -1, -2)
        derivative = all_fixed[None] @ np.swapaxes(rot[1:], -1, -2)        # (3, r, n, 3)
        # The matrix terms also see the field move: W M dW^T F.
        moved_centre = _times(matrix[None], d_seen)                        # (3, r, 3)
        moved_steel = _times(mgens[None], d_seen[:, :, None, :])           # (3, r, m, 3)
        moved = np.concatenate([moved_centre[:, :, None], np.zeros((3,) + gens.shape),
                                moved_steel], axis=2)
        derivative = derivative + moved @ np.swapaxes(rot[0], -1, -2)[None]
        dims = [d for d in range(3) if np.any(w_half[:, d] > 0)]
        corners = np.array(np.meshgrid(*([[-1.0, 1.0]] * len(dims)), indexing="ij")
                           ).reshape(len(dims), -1).T
        beta = beta_all[part]
        rows = len(index)
        flat = image[..., :2]
        steps = np.stack([w_half[:, d][:, None, None] * derivative[d][..., :2] for d in dims])
        # Every corner at once: (corners, rows, n, 2), one call of the support iteration.
        pts = flat[None] + np.einsum("cj,jrnk->crnk", corners, steps)
        centre_h = pts[:, :, 0] + np.array([h, 0.0])
        gens = pts[:, :, 1:]
        n_c = len(corners)
        beta_c = np.tile(beta, n_c)
        value, _, _, redo, high, low = _widest_fast(centre_h.reshape(-1, 2),
                                                    gens.reshape((n_c * rows,) + gens.shape[2:]),
                                                    beta_c)
        if np.any(redo):
            got = _widest_angle(centre_h.reshape(-1, 2)[redo],
                                gens.reshape((n_c * rows,) + gens.shape[2:])[redo], beta_c[redo])
            value[redo], high[redo], low[redo] = got[0], got[4], got[5]
        value, high, low = (x.reshape(n_c, rows) for x in (value, high, low))
        # Unwrap every corner's arc about the first corner's centre direction.
        a0 = np.arctan2(centre_h[..., 1], centre_h[..., 0])
        shift_back = 2 * np.pi * np.round((a0[:1] - a0) / (2 * np.pi))
        highs, lows, reached = high + shift_back, low + shift_back, value >= np.pi
        hi, lo = np.max(highs, axis=0), np.min(lows, axis=0)
        # The union's arc must stay short of pi and of the south half-line.
        wraps = np.any(reached, axis=0) | (hi - lo >= np.pi) | (hi >= np.pi) | (lo <= -np.pi)
        angle = np.where(wraps, np.inf, np.maximum(hi, -lo))
        width = w_half.sum(axis=1)
        rest = 0.5 * second[index] * width ** 2
        gap = near[part]
        with np.errstate(divide="ignore", invalid="ignore"):
            factor = (1.0 + beta / np.sqrt(gap ** 2 - beta ** 2)) / gap
        bound = angle + rest * factor
        bad = ~np.isfinite(angle) | ~(gap > beta) | (bound >= np.pi)
        out[part] = np.where(bad, np.pi, bound)
    return out


def _evaluate(turning, owner, centres, h, z):
    """Largest angle and the origin's distance from the set at cell centres (rows)."""
    value = np.empty(len(owner))
    distance = np.empty(len(owner))
    for lo in range(0, len(owner), _CHUNK_ROWS):
        part = slice(lo, lo + _CHUNK_ROWS)
        c = centres[part]
        w = rotation(c[:, 0], c[:, 1], c[:, 2])
        centre, gens, _ = _images(turning, owner[part], w, h, z)
        centre_h = centre[:, :2] + np.array([h, 0.0])
        beta = turning.unknown[owner[part]]
        got, _, near, redo, _, _ = _widest_fast(centre_h, gens[..., :2], beta)
        if np.any(redo):
            got[redo], _, near[redo] = _widest_angle(centre_h[redo], gens[redo][..., :2],
                                                     beta[redo])[:3]
        value[part], distance[part] = got, near
    return value, distance


def _signs_at(turning, at, h, z):
    """The generators' signs (fixed, matrix) at the vertex reaching the value at ``at``."""
    b = len(turning)
    n, m = turning.generators.shape[1], turning.matrix_generators.shape[1]
    if n + m == 0:
        return np.zeros((b, 0)), np.zeros((b, 0))
    w = rotation(at[:, 0], at[:, 1], at[:, 2])
    centre, gens, _ = _images(turning, np.arange(b), w, h, z)
    centre_h = centre[:, :2] + np.array([h, 0.0])
    _, signs, _, redo, _, _ = _widest_fast(centre_h, gens[..., :2], turning.unknown)
    if np.any(redo):
        vertex = _widest_angle(centre_h[redo], gens[redo][..., :2], turning.unknown[redo])[1]
        _, flip, order = _vertices(centre_h[redo], gens[redo][..., :2])
        signs[redo] = _signs(flip, order, vertex)
    return signs[:, :n], signs[:, n:]


# Total field ------------------------------------------------------------------------------------

@dataclass(frozen=True)
class WorstTotalField:
    """Bounds on the total-field error |F + W b| - |F| of B problems over orientation and every
    open choice, in the unit of H.

    high : (B,) no error is larger (proven)
    low : (B,) no error is smaller (proven)
    high_choice, low_choice : (B, n) the fixed generators' signs where each is reached to first
        order
    high_matrix, low_matrix : (B, m) the matrix generators' signs there
    remainder : (B,) the second-order term R^2/(2(|F| - R)) in ``high`` (the first-order part
        is reached within the tolerance)
    level_peak_to_peak : (B,) level, over a full turn, a bound on the largest minus the smallest
        error of any one choice
    """

    high: np.ndarray
    low: np.ndarray
    high_choice: np.ndarray
    low_choice: np.ndarray
    high_matrix: np.ndarray
    low_matrix: np.ndarray
    remainder: np.ndarray
    level_peak_to_peak: np.ndarray


def _support(turning, owner, centres, h, z, sign):
    """sign * (first-order error's extreme) at cell centres: F-hat_v . (c + M0 F_v) +- sum|..|
    +- beta, and the signs of the generators reaching it."""
    total = float(np.hypot(h, z))
    value = np.empty(len(owner))
    for lo in range(0, len(owner), _CHUNK_ROWS):
        part = slice(lo, lo + _CHUNK_ROWS)
        c = centres[part]
        w = rotation(c[:, 0], c[:, 1], c[:, 2])
        index = owner[part]
        seen = np.einsum("rji,j->ri", w, np.array([h, 0.0, z]))
        unit = seen / total
        centre = turning.centre[index] + np.einsum("rij,rj->ri", turning.matrix[index], seen)
        fixed = np.einsum("rnj,rj->rn", turning.generators[index], unit)
        steel = (np.einsum("rmij,rj,ri->rm", turning.matrix_generators[index], seen, unit)
                 + np.einsum("rmi,ri->rm", turning.matrix_fixed[index], unit))
        value[part] = sign * np.einsum("rj,rj->r", centre, unit) + np.abs(fixed).sum(axis=1) \
            + np.abs(steel).sum(axis=1) + turning.unknown[index]
    return value


def _maximise(function, b, speed, heel_max, pitch_max, tol, headings=16):
    """Largest of a function of orientation per problem, by Lipschitz branch and bound with a
    constant ``speed`` (B,) per radian of each angle. Returns (bound, found, at)."""
    centres, half = _attitude_cells(heel_max, pitch_max, headings)
    owner = np.repeat(np.arange(b), len(centres))
    centres = np.tile(centres, (b, 1))
    half = np.tile(half, (b, 1))
    best = np.full(b, -np.inf)
    best_at = np.zeros((b, 3))
    closed = np.full(b, -np.inf)
    while len(owner):
        value = function(owner, centres)
        order = np.lexsort((-value, owner))
        first = order[np.unique(owner[order], return_index=True)[1]]
        first = first[value[first] > best[owner[first]]]
        best[owner[first]] = value[first]
        best_at[owner[first]] = centres[first]
        upper = value + speed[owner] * half.sum(axis=1)
        done = upper <= best[owner] + tol
        np.maximum.at(closed, owner[done], upper[done])
        owner, centres, half = owner[~done], centres[~done], half[~done]
        if 2 * len(owner) > MAX_CELLS:
            np.maximum.at(closed, owner, (function(owner, centres)
                                          + speed[owner] * half.sum(axis=1)))
            break
        if not len(owner):
            break
        axis = np.argmax(half, axis=1)
        step = np.zeros_like(half)
        step[np.arange(len(owner)), axis] = half[np.arange(len(owner)), axis] / 2.0
        half = np.concatenate([half - step, half - step])
        centres = np.concatenate([centres - step, centres + step])
        owner = np.concatenate([owner, owner])
    return np.maximum(closed, best), best, best_at


def worst_total_field_error(turning: Turning, horizontal, vertical, max_heel_deg=0.0,
                            max_pitch_deg=0.0, *, tolerance=None) -> WorstTotalField:
    r"""Bounds on the total-field error over every heading, attitude and open choice.

    Parameters
    ----------
    turning : Turning
        In the unit of ``horizontal``.
    horizontal, vertical : float
    max_heel_deg, max_pitch_deg : float [deg]
    tolerance : float, optional
        Of the first-order extremes, in the unit of H (default :data:`TOLERANCE_OF_H` x H).

    Returns
    -------
    WorstTotalField

    Notes
    -----
    With :math:`\hat F` the field's direction and x = Wb,
    :math:`|F| + \hat F\cdot x \le |F + x| \le |F| + \hat F\cdot x + |x_\perp|^2/(2(|F| + \hat
    F\cdot x))` (the square root's tangent and the bound :math:`\sqrt{a^2 + c} \le a + c/2a`).
    With R a bound on |x| over everything, the error lies within
    :math:`[\hat F\cdot x,\ \hat F\cdot x + R^2/(2(|F| - R))]`. At one orientation
    :math:`\hat F\cdot W b = \hat F_v\cdot b` with :math:`\hat F_v = W^T\hat F`, linear in every
    choice, so its extremes over the zonotopes are their support functions
    :math:`\hat F_v\cdot(c + M_0F_v) \pm (\sum|\hat F_v\cdot g_i| + \sum|\hat F_v\cdot G_jF_v|
    + \beta)`, reached at the vertex of the signs. Over the orientation, F_v moves by at most
    |F| per radian of each angle, so these move by at most
    :math:`|c| + \sum|g_i| + 2(\|M_0\| + \sum\|G_j\|)|F|`: Lipschitz branch and bound, as in
    :func:`worst_deviation`.
    """
    b = len(turning)
    h, z = float(horizontal), float(vertical)
    total = float(np.hypot(h, z))
    heel_max = np.radians(abs(float(max_heel_deg)))
    pitch_max = np.radians(abs(float(max_pitch_deg)))
    if heel_max > np.pi / 2 + 1e-12 or pitch_max > np.pi / 2 + 1e-12:
        raise ValueError("heel and pitch limits are at most 90 degrees")
    tol = TOLERANCE_OF_H * h if tolerance is None else float(tolerance)
    fixed_full, _ = turning.fixed_size()
    m_full, _, _ = turning.matrix_size()
    speed = fixed_full + 2.0 * m_full * total
    reach = fixed_full + m_full * total + turning.unknown
    with np.errstate(divide="ignore"):
        remainder = np.where(reach < total, reach ** 2 / (2.0 * (total - reach)), np.inf)

    def extremes(heel, pitch):
        up = _maximise(lambda o, c: _support(turning, o, c, h, z, 1.0), b, speed, heel, pitch,
                       tol)
        down = _maximise(lambda o, c: _support(turning, o, c, h, z, -1.0), b, speed, heel,
                         pitch, tol)
        return up, down

    up, down = extremes(heel_max, pitch_max)
    high = up[0] + remainder
    low = -down[0]
    if heel_max == 0 and pitch_max == 0:
        level_up, level_down = up, down
    else:
        level_up, level_down = extremes(0.0, 0.0)
    peak = level_up[0] + level_down[0] + remainder
    high_choice, high_matrix = _support_signs(turning, up[2], h, z, 1.0)
    low_choice, low_matrix = _support_signs(turning, down[2], h, z, -1.0)
    return WorstTotalField(high, low, high_choice, low_choice, high_matrix, low_matrix,
                           remainder, peak)


def _support_signs(turning, at, h, z, sign):
    """Signs of the generators reaching the support value at orientations ``at`` (B, 3)."""
    total = float(np.hypot(h, z))
    w = rotation(at[:, 0], at[:, 1], at[:, 2])
    seen = np.einsum("rji,j->ri", w, np.array([h, 0.0, z]))
    unit = seen / total
    fixed = np.einsum("rnj,rj->rn", turning.generators, unit)
    steel = (np.einsum("rmij,rj,ri->rm", turning.matrix_generators, seen, unit)
             + np.einsum("rmi,ri->rm", turning.matrix_fixed, unit))
    return sign * np.where(fixed < 0, -1.0, 1.0), sign * np.where(steel < 0, -1.0, 1.0)


def deviation_at(turning: Turning, signs, matrix_signs, horizontal, vertical, heading_deg,
                 heel_deg=0.0, pitch_deg=0.0):
    """Deviation [deg] of one choice of each problem at given orientations (east positive):
    P = centre + sum signs g, M = matrix + sum matrix_signs G; (B, ...) over the headings."""
    p = (turning.centre + np.einsum("bn,bnj->bj", signs, turning.generators)
         + np.einsum("bm,bmj->bj", matrix_signs, turning.matrix_fixed))
    m = turning.matrix + np.einsum("bm,bmij->bij", matrix_signs, turning.matrix_generators)
    psi, phi, theta = np.broadcast_arrays(*(np.radians(np.asarray(a, dtype=float))
                                            for a in (heading_deg, heel_deg, pitch_deg)))
    w = rotation(psi, phi, theta)                                            # (..., 3, 3)
    earth = np.array([horizontal, 0.0, vertical])
    seen = np.einsum("...ji,j->...i", w, earth)
    b = np.einsum("...ij,bj->b...i", w, p) + np.einsum(
        "...ij,bjk,...k->b...i", w, m, seen)
    return np.degrees(np.arctan2(b[..., 1], horizontal + b[..., 0]))


# A quick proven bound, for searches over many positions ------------------------------------------

def _spectral_2x2(m):
    """||m||_2 of (..., 2, 2) matrices, exactly."""
    a, b, c, d = m[..., 0, 0], m[..., 0, 1], m[..., 1, 0], m[..., 1, 1]
    square = a * a + b * b + c * c + d * d
    det = a * d - b * c
    return np.sqrt(np.maximum(square / 2.0 + np.sqrt(np.maximum(square ** 2 / 4.0 - det ** 2,
                                                                  0.0)), 0.0))


@dataclass(frozen=True)
class IsotropicSplit:
    """The pieces of :func:`isotropic_split`, per problem (B,).

    lam_low : least lambda = 1 + s over the matrix zonotope (s: the horizontal block's mean)
    fixed_centre : (B, 3) a vessel-fixed part -Z N[:, z] of the matrix centre, N = M - s I
    fixed_generators : (B, m, 3) the same of each matrix generator (plus its coupled fixed part)
    turning : (B,) a bound on the level horizontal size of what else the matrix adds over every
        heading and attitude (:func:`isotropic_split`)
    """

    lam_low: np.ndarray
    fixed_centre: np.ndarray
    fixed_generators: np.ndarray
    turning: np.ndarray


def isotropic_split(turning: Turning, horizontal, vertical, max_heel_deg=0.0, max_pitch_deg=0.0
                    ) -> IsotropicSplit:
    r"""Split the matrix part for a quick bound: :math:`M = sI + N`, s the mean of M's horizontal
    block (lambda - 1).

    Notes
    -----
    :math:`WMW^TF = sF + WNW^TF`, and :math:`sF` only lengthens H to :math:`(1+s)H` (lambda H).
    With :math:`\xi = W^TF`, :math:`N\xi = -ZN_{\cdot z} + N_{\cdot h}\xi_h + N_{\cdot z}(\xi_z
    + Z)`: the first term is vessel-fixed (the induced B and C; returned to be searched with the
    fixed part), the others are bounded. The vessel's z axis is tilted from the vertical by at
    most :math:`\tau = \arccos(\cos\Phi\cos\Theta)`, so a vessel vector y has a level horizontal
    part at most :math:`|y_h| + |y_z|\sin\tau`, :math:`|\xi_h| \le H\cos\tau + |Z|\sin\tau`
    (:math:`|F|` beyond :math:`\tau = I`) and :math:`|\xi_z + Z| \le |Z|(1 - \cos\tau) + H\sin\tau`.
    Level (tau = 0) the rest is :math:`\|N_{hh}\|_2 H` exactly as a bound, so the figure is
    exact for a pure quadrantal item (a sphere ahead: :math:`\arcsin\mathfrak D`). Norms over
    the zonotope of matrices by the triangle inequality; lambda's least value at its vertices.
    """
    h, z = float(horizontal), abs(float(vertical))
    total = float(np.hypot(h, z))
    tau = float(np.arccos(np.cos(np.radians(max_heel_deg)) * np.cos(np.radians(max_pitch_deg))))
    inclination = float(np.arctan2(z, h))
    across = h * np.cos(tau) + z * np.sin(tau) if tau <= inclination else total
    along = z * (1.0 - np.cos(tau)) + h * np.sin(tau)
    sin_tau = np.sin(tau)
    mats = np.concatenate([turning.matrix[:, None], turning.matrix_generators], axis=1)
    mean = (mats[..., 0, 0] + mats[..., 1, 1]) / 2.0                       # (B, 1 + m)
    rest = mats - mean[..., None, None] * np.eye(3)
    lam_low = 1.0 + mean[:, 0] - np.abs(mean[:, 1:]).sum(axis=1)
    size = ((_spectral_2x2(rest[..., :2, :2]) + np.linalg.norm(rest[..., 2, :2], axis=-1)
             * sin_tau) * across
            + (np.linalg.norm(rest[..., :2, 2], axis=-1) + np.abs(rest[..., 2, 2]) * sin_tau)
            * along).sum(axis=1)
    column = -float(vertical) * rest[..., :, 2]                             # (B, 1 + m, 3)
    return IsotropicSplit(lam_low, column[:, 0], column[:, 1:] + turning.matrix_fixed, size)
