"""Magnetic field of straight current segments and of point dipoles.

Everything here works on flat arrays in SI units (metres, amperes, tesla) and never reads files
or prints. Two paths compute the same segment field: a buffered NumPy path, which is the
reference the tests hold the other to, and a compiled loop (numba), used for large jobs.
"""

from __future__ import annotations

import contextvars
import os
from contextlib import contextmanager

import numpy as np

from ..constants import MU0_OVER_4PI

#: Jobs with fewer segment-observer pairs than this stay on the NumPy path, so that a small check
#: never pays for importing or loading the compiled kernel.
COMPILED_MIN_PAIRS = 4_000_000

#: Inside :func:`one_path_at_any_size`: "auto" does not look at a job's size.
_ANY_SIZE = contextvars.ContextVar("deviation_one_path_at_any_size", default=False)


@contextmanager
def one_path_at_any_size():
    """Within it, every "auto" choice between the compiled and the NumPy path (the segment
    field here, the worst case with attitude in :mod:`deviation.physics.worst_case`) takes the
    compiled path wherever numba is available, whatever the job's size.

    The two paths agree only to rounding, so a choice by size makes a position's figure depend,
    in its last bits, on how many positions are evaluated with it. A search over many
    positions, and the per-position call that lists its results, run inside this so that each
    position has one figure to the bit. Each path alone gives a point the same figure whatever
    the other points of the job.
    """
    token = _ANY_SIZE.set(True)
    try:
        yield
    finally:
        _ANY_SIZE.reset(token)


def auto_compiled(work, threshold) -> bool:
    """Whether "auto" takes the compiled path for a job of ``work`` against its ``threshold``
    (always, where numba is available, inside :func:`one_path_at_any_size`)."""
    if _ANY_SIZE.get():
        return _compiled_available()
    return work >= threshold and _compiled_available()


# Elements (pairs) per NumPy block: large enough to amortise Python overhead, small enough for cache.
_NUMPY_BLOCK_PAIRS = 65_536


class InsideConductorError(ValueError):
    """An observer lies within a conductor's radius, where the line-current model does not hold.

    Attributes
    ----------
    point_index : int
        Index of the first offending observer.
    segment_index : int
        Index of a segment whose conductor contains it.
    distance_m : float
        Distance from the observer to that segment's axis [m].
    """

    def __init__(self, point_index: int, segment_index: int, distance_m: float):
        self.point_index = int(point_index)
        self.segment_index = int(segment_index)
        self.distance_m = float(distance_m)
        super().__init__(
            f"observer {self.point_index} lies {self.distance_m * 1000:.2f} mm from the axis of "
            f"segment {self.segment_index}, inside the conductor"
        )


#: Segments whose lengths are found at a time (bounds the temporary).
_LENGTH_BLOCK = 65_536


def _as_segments(start_m, end_m, current_a, radius_m):
    """The segments as contiguous float arrays, those of zero length left out: start, end,
    current (S, K), radius squared, length squared, the index of each kept segment among those
    given (None when every one is kept), and whether the current had one state."""
    start = np.ascontiguousarray(start_m, dtype=float).reshape(-1, 3)
    end = np.ascontiguousarray(end_m, dtype=float).reshape(-1, 3)
    if start.shape != end.shape:
        raise ValueError(f"start_m {start.shape} and end_m {end.shape} differ in shape")
    current = np.asarray(current_a, dtype=float)
    single_state = current.ndim == 1
    current = current[:, None] if single_state else current
    if current.shape[0] != len(start):
        raise ValueError(f"current_a has {current.shape[0]} rows for {len(start)} segments")
    radius = np.broadcast_to(np.asarray(radius_m, dtype=float), (len(start),))
    # A zero-length segment carries no field; dropping it also keeps the on-axis test well posed.
    length2 = np.empty(len(start))
    for s0 in range(0, len(start), _LENGTH_BLOCK):       # no (S, 3) temporary for a big plan
        axis = end[s0:s0 + _LENGTH_BLOCK] - start[s0:s0 + _LENGTH_BLOCK]
        length2[s0:s0 + _LENGTH_BLOCK] = np.einsum("ij,ij->i", axis, axis)
    keep = length2 > 0
    if keep.all():                 # the usual case: the arrays as given, no copies
        return (start, end, np.ascontiguousarray(current), radius ** 2, length2, None,
                single_state)
    index = np.flatnonzero(keep)
    return (start[keep], end[keep], np.ascontiguousarray(current[keep]), radius[keep] ** 2,
            length2[keep], index, single_state)


def segment_field(start_m, end_m, current_a, points_m, *, radius_m=0.0, return_inside=False,
                  backend="auto"):
    """Exact Biot-Savart field of finite straight line currents.

    Parameters
    ----------
    start_m, end_m : (S, 3) array [m]
        Segment ends; the current flows from ``start_m`` to ``end_m``.
    current_a : (S,) or (S, K) array [A]
        Current of each segment, or of each segment in each of K operating states. The geometry
        of every segment-observer pair is computed once, whatever K is.
    points_m : (P, 3) array [m]
        Observers.
    radius_m : float or (S,) array [m]
        Conductor radius. An observer at or within it (0: exactly on the axis) is inside the
        conductor, where the line model fails.
    return_inside : bool
        If False (default) an observer inside a conductor raises :class:`InsideConductorError`.
        If True, return ``(field, inside)`` instead; ``field`` is not meaningful where ``inside``.
    backend : {"auto", "numpy", "compiled"}
        "auto" takes the compiled kernel for jobs of at least ``COMPILED_MIN_PAIRS`` pairs when
        numba is installed, else NumPy.

    Returns
    -------
    field : (P, 3) or (P, K, 3) array [T]
        (P, K, 3) when ``current_a`` is two-dimensional.
    inside : (P,) bool array
        Only with ``return_inside=True``.

    Notes
    -----
    With a, b the vectors from the observer to the segment's ends,

    .. math:: B = \\frac{\\mu_0 I}{4\\pi}
              \\frac{(a \\times b)(|a| + |b|)}{|a||b|\\,(|a||b| + a \\cdot b)},

    equivalent to the textbook :math:`\\mu_0 I/(4\\pi d)(\\sin\\theta_2 - \\sin\\theta_1)`.
    When :math:`a\\cdot b < 0` the denominator is evaluated without cancellation as
    :math:`|a||b| + a\\cdot b = |a\\times b|^2/(|a||b| - a\\cdot b)`. Zero-length segments
    contribute nothing.

    References
    ----------
    D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., section 5.3 (finite wire).
    J. D. Hanson and S. P. Hirshman, "Compact expressions for the Biot-Savart fields of a
    filamentary segment", Phys. Plasmas 9, 4410 (2002).
    """
    if backend not in ("auto", "numpy", "compiled"):
        raise ValueError(f"backend must be auto, numpy or compiled, not {backend!r}")
    start, end, current, radius2, length2, index, single = _as_segments(
        start_m, end_m, current_a, radius_m)
    points = np.ascontiguousarray(points_m, dtype=float).reshape(-1, 3)
    n_states = current.shape[1]
    field = np.zeros((len(points), n_states, 3))
    inside = np.zeros(len(points), dtype=bool)
    if len(start) and len(points):
        pairs = len(start) * len(points)
        use_compiled = backend == "compiled" or (
            backend == "auto" and auto_compiled(pairs, COMPILED_MIN_PAIRS))
        if use_compiled:
            from . import _kernels
            _kernels.segment_field(start, end, current, radius2, length2, points, field, inside)
        else:
            _numpy_segment_field(start, end, current, radius2, length2, points, field, inside)
        field *= MU0_OVER_4PI
    if inside.any() and not return_inside:
        p = int(np.flatnonzero(inside)[0])
        s, distance = _nearest_segment(start, end, points[p])
        raise InsideConductorError(p, s if index is None else index[s], distance)
    if single:
        field = field[:, 0, :]
    return (field, inside) if return_inside else field


def _block_geometry(start, end, radius2, length2, points):
    """Unit-current field (without mu0/4pi) of every segment at every point of a block.

    Returns gx, gy, gz of shape (p, s) and the inside mask (p, s).
    """
    sx, sy, sz = start.T[:, None, :]
    ex, ey, ez = end.T[:, None, :]
    px, py, pz = points.T[:, :, None]
    ax, ay, az = sx - px, sy - py, sz - pz                           # (p, s) each
    bx, by, bz = ex - px, ey - py, ez - pz
    cx = ay * bz - az * by
    cy = az * bx - ax * bz
    cz = ax * by - ay * bx
    a2 = ax * ax + ay * ay + az * az
    b2 = bx * bx + by * by + bz * bz
    dot = ax * bx + ay * by + az * bz
    c2 = cx * cx + cy * cy + cz * cz
    na = np.sqrt(a2)
    nb = np.sqrt(b2)
    nanb = na * nb
    positive = dot >= 0
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = (na + nb) * np.where(positive, 1.0, nanb - dot)
        factor /= nanb * np.where(positive, nanb + dot, c2)
    near2 = np.minimum(a2, b2)
    hit = (near2 <= radius2) | ((dot < near2) & (c2 <= radius2 * length2))
    if hit.any():
        factor[hit] = 0.0
    return cx * factor, cy * factor, cz * factor, hit


def _tiles(n_points, n_segments):
    """(points slice, segments slice) tiles of at most about _NUMPY_BLOCK_PAIRS pairs."""
    seg_block = max(1, min(n_segments, _NUMPY_BLOCK_PAIRS))
    point_block = max(1, _NUMPY_BLOCK_PAIRS // seg_block)
    for p0 in range(0, n_points, point_block):
        for s0 in range(0, n_segments, seg_block):
            yield slice(p0, p0 + point_block), slice(s0, s0 + seg_block)


def _numpy_segment_field(start, end, current, radius2, length2, points, field, inside):
    """Tiled NumPy evaluation; accumulates the unscaled field (without mu0/4pi) into ``field``."""
    for p, s in _tiles(len(points), len(start)):
        gx, gy, gz, hit = _block_geometry(start[s], end[s], radius2[s], length2[s], points[p])
        inside[p] |= hit.any(axis=1)
        out = field[p]
        out[:, :, 0] += gx @ current[s]                               # geometry x currents
        out[:, :, 1] += gy @ current[s]
        out[:, :, 2] += gz @ current[s]


def segment_field_by_group(start_m, end_m, weight, group, n_groups, points_m, *, radius_m=0.0,
                           backend="auto"):
    """Field of each group of segments (e.g. each cable run) at each point, in one pass.

    Parameters
    ----------
    start_m, end_m : (S, 3) array [m]
    weight : (S,) array [A]
        Current of each segment (e.g. +1 and -1 for a run's supply and return at unit current).
    group : (S,) int array
        Group of each segment, in 0..n_groups-1, non-decreasing (segments of a group contiguous).
    n_groups : int
    points_m : (P, 3) array [m]
    radius_m : float or (S,) array [m]
    backend : {"auto", "numpy", "compiled"}
        As for :func:`segment_field`.

    Returns
    -------
    field : (P, n_groups, 3) array [T]
    inside : (P, n_groups) bool array
        True where a point lies within a conductor of that group (its field is then not valid).

    Notes
    -----
    The same closed form as :func:`segment_field`; the sum over segments is taken per group.
    """
    group = np.asarray(group)
    if np.any(group[1:] < group[:-1]):
        raise ValueError("segments must be sorted by group")
    start, end, weight2, radius2, length2, index, _ = _as_segments(start_m, end_m, weight, radius_m)
    weight = weight2[:, 0]
    group = group if index is None else group[index]
    points = np.ascontiguousarray(points_m, dtype=float).reshape(-1, 3)
    field = np.zeros((len(points), n_groups, 3))
    inside = np.zeros((len(points), n_groups), dtype=bool)
    if not len(start) or not len(points):
        return field, inside
    if backend not in ("auto", "numpy", "compiled"):
        raise ValueError(f"backend must be auto, numpy or compiled, not {backend!r}")
    if backend == "compiled" or (backend == "auto" and auto_compiled(len(start) * len(points),
                                                                     COMPILED_MIN_PAIRS)):
        from . import _kernels

        _kernels.segment_field_by_group(start, end, weight, np.ascontiguousarray(group),
                                        radius2, length2, points, field, inside)
        return field * MU0_OVER_4PI, inside
    for p, s in _tiles(len(points), len(start)):
        gx, gy, gz, hit = _block_geometry(start[s], end[s], radius2[s], length2[s], points[p])
        tile_group = group[s]
        firsts = np.flatnonzero(np.r_[True, np.diff(tile_group) != 0])
        present = tile_group[firsts]
        for c, g in enumerate((gx, gy, gz)):
            field[p, present, c] += np.add.reduceat(g * weight[s], firsts, axis=1)
        inside[p, present] |= np.logical_or.reduceat(hit, firsts, axis=1)
    return field * MU0_OVER_4PI, inside


def _nearest_segment(start, end, point):
    """Index of the segment nearest to one point, and its distance [m]."""
    distance = point_segment_distance(start, end, point[None, :])[0]
    s = int(np.argmin(distance))
    return s, float(distance[s])


def point_segment_distance(start_m, end_m, points_m):
    """Shortest distance from each point to each segment.

    Parameters
    ----------
    start_m, end_m : (S, 3) array [m]
    points_m : (P, 3) array [m]

    Returns
    -------
    (P, S) array [m]
    """
    start = np.asarray(start_m, dtype=float).reshape(-1, 3)
    end = np.asarray(end_m, dtype=float).reshape(-1, 3)
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    distance = np.empty((len(points), len(start)))
    for p, s in _tiles(len(points), len(start)):
        axis = end[s] - start[s]
        length2 = np.einsum("ij,ij->i", axis, axis)
        rel = points[p, None, :] - start[None, s, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(length2 > 0, np.einsum("psc,sc->ps", rel, axis) / length2, 0.0)
        t = np.clip(t, 0.0, 1.0)
        offset = rel - t[..., None] * axis[None, :, :]
        distance[p, s] = np.sqrt(np.einsum("psc,psc->ps", offset, offset))
    return distance


def dipole_field(moment_am2, position_m, points_m):
    """Field of point magnetic dipoles.

    Parameters
    ----------
    moment_am2 : (M, 3) array [A m^2]
        Dipole moments.
    position_m : (M, 3) array [m]
        Dipole positions.
    points_m : (P, 3) array [m]
        Observers; one at a dipole's position raises ``ValueError``.

    Returns
    -------
    (P, 3) array [T]
        Sum of the dipoles' fields at each observer.

    Notes
    -----
    .. math:: B = \\frac{\\mu_0}{4\\pi}\\,\\frac{3(m\\cdot\\hat r)\\hat r - m}{r^3}

    References
    ----------
    D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., eq. 5.89.
    """
    moment = np.asarray(moment_am2, dtype=float).reshape(-1, 3)
    position = np.asarray(position_m, dtype=float).reshape(-1, 3)
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    r = points[:, None, :] - position[None, :, :]                  # (P, M, 3)
    dist = np.linalg.norm(r, axis=-1)
    if np.any(dist == 0):
        raise ValueError("an observer lies at a dipole's position, where its field is undefined")
    unit = r / dist[..., None]
    m_dot_r = np.einsum("pmc,mc->pm", unit, moment)
    field = (3 * m_dot_r[..., None] * unit - moment[None, :, :]) / dist[..., None] ** 3
    return MU0_OVER_4PI * field.sum(axis=1)


def dipole_field_bound(moment_am2, distance_m):
    """Largest field magnitude of a dipole of unknown orientation at a distance.

    Parameters
    ----------
    moment_am2 : float or array [A m^2]
    distance_m : float or array [m]

    Returns
    -------
    float or array [T]
        :math:`2\\mu_0 m/(4\\pi r^3)`, the on-axis value, which no orientation exceeds.

    References
    ----------
    D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., eq. 5.89.
    """
    return 2 * MU0_OVER_4PI * np.asarray(moment_am2) / np.asarray(distance_m, dtype=float) ** 3


def _compiled_available() -> bool:
    if os.environ.get("DEVIATION_NO_COMPILED"):
        return False
    try:
        import numba  # noqa: F401
    except ImportError:
        return False
    return True
