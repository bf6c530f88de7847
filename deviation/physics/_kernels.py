"""Compiled loop kernel for the segment field (numba), imported only for large jobs.

The arithmetic is the one of :func:`deviation.physics.field.segment_field` (see its Notes),
evaluated pair by pair in float64 with fastmath off, so it matches the NumPy path to rounding.
Observers are cut into tiles, one tile per parallel task; inside a tile the loop over observers
is innermost so the compiler can vectorise it, and the currents of all K states are applied to
each pair's geometry.

The kernels may be called from several Python threads at once (a server, a notebook running
searches side by side). numba's ``workqueue`` threading layer, the one it falls back to when
neither OpenMP nor TBB is installed, aborts the whole process when two threads enter it together
(numba documentation, "The Threading Layers": only ``tbb`` and ``omp`` are threadsafe), so the
launches are serialised under that layer and run side by side under the others.
"""

import threading

import numba
import numpy as np
from numba import njit, prange

_TILE = 512

#: numba's threading layers that may be entered from several threads at once.
THREADSAFE_LAYERS = ("tbb", "omp")
_LAUNCH = threading.Lock()
_layer = None                       # the layer numba chose, known after the first launch


def _launch(kernel, *args):
    """Run a parallel kernel; one thread at a time unless numba's layer is threadsafe."""
    global _layer
    if _layer in THREADSAFE_LAYERS:
        kernel(*args)
        return
    with _LAUNCH:
        kernel(*args)
        _layer = numba.threading_layer()


@njit(inline="always", fastmath=False)
def _pair(sx, sy, sz, ex, ey, ez, r2, r2l2, px, py, pz):  # pragma: no cover
    """One segment at one observer: the unit-current field without mu0/4pi, and whether the
    observer lies inside the conductor (then the field is 0)."""
    ax = sx - px
    ay = sy - py
    az = sz - pz
    bx = ex - px
    by = ey - py
    bz = ez - pz
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
    positive = dot >= 0.0
    num = (na + nb) * (1.0 if positive else nanb - dot)
    den = nanb * (nanb + dot if positive else c2)
    near2 = min(a2, b2)
    bad = (near2 <= r2) or ((dot < near2) and (c2 <= r2l2))
    f = 0.0 if bad else num / den
    return cx * f, cy * f, cz * f, bad


@njit(parallel=True, cache=True, fastmath=False, boundscheck=False)
def _kernel(start, end, current, radius2, length2, points, field, inside):  # pragma: no cover
    n_points = points.shape[0]
    n_seg = start.shape[0]
    n_states = current.shape[1]
    n_tiles = (n_points + _TILE - 1) // _TILE
    for tile in prange(n_tiles):
        p0 = tile * _TILE
        n = min(_TILE, n_points - p0)
        px = np.empty(_TILE)
        py = np.empty(_TILE)
        pz = np.empty(_TILE)
        for j in range(n):
            px[j] = points[p0 + j, 0]
            py[j] = points[p0 + j, 1]
            pz[j] = points[p0 + j, 2]
        gx = np.empty(_TILE)
        gy = np.empty(_TILE)
        gz = np.empty(_TILE)
        hit = np.zeros(_TILE)
        acc = np.zeros((n_states, 3, _TILE))
        for s in range(n_seg):
            sx = start[s, 0]
            sy = start[s, 1]
            sz = start[s, 2]
            ex = end[s, 0]
            ey = end[s, 1]
            ez = end[s, 2]
            r2 = radius2[s]
            r2l2 = r2 * length2[s]
            for j in range(n):
                gx[j], gy[j], gz[j], bad = _pair(sx, sy, sz, ex, ey, ez, r2, r2l2,
                                                 px[j], py[j], pz[j])
                hit[j] = max(hit[j], 1.0 if bad else 0.0)
            for k in range(n_states):
                ik = current[s, k]
                for j in range(n):
                    acc[k, 0, j] += gx[j] * ik
                    acc[k, 1, j] += gy[j] * ik
                    acc[k, 2, j] += gz[j] * ik
        for j in range(n):
            inside[p0 + j] = hit[j] > 0.0
            for k in range(n_states):
                field[p0 + j, k, 0] += acc[k, 0, j]
                field[p0 + j, k, 1] += acc[k, 1, j]
                field[p0 + j, k, 2] += acc[k, 2, j]


def segment_field(start, end, current, radius2, length2, points, field, inside):
    """Accumulate the unscaled field (without mu0/4pi) into ``field`` (P, K, 3); set ``inside``."""
    hit = np.zeros(len(points), dtype=np.bool_)
    _launch(_kernel, start, end, current, radius2, length2, points, field, hit)
    inside |= hit


@njit(parallel=True, cache=True, fastmath=False, boundscheck=False)
def _group_kernel(start, end, weight, group, radius2, length2, points, field,
                  inside):  # pragma: no cover
    # The same pair arithmetic as _kernel; each segment's field, times its weight, is summed
    # into its group's column. Segments are sorted by group, so a tile's accumulator is flushed
    # whenever the group changes.
    n_points = points.shape[0]
    n_seg = start.shape[0]
    n_tiles = (n_points + _TILE - 1) // _TILE
    for tile in prange(n_tiles):
        p0 = tile * _TILE
        n = min(_TILE, n_points - p0)
        px = np.empty(_TILE)
        py = np.empty(_TILE)
        pz = np.empty(_TILE)
        for j in range(n):
            px[j] = points[p0 + j, 0]
            py[j] = points[p0 + j, 1]
            pz[j] = points[p0 + j, 2]
        acc = np.zeros((3, _TILE))
        hit = np.zeros(_TILE)
        current_group = group[0] if n_seg else 0
        for s in range(n_seg + 1):
            if s == n_seg or group[s] != current_group:
                for j in range(n):
                    field[p0 + j, current_group, 0] += acc[0, j]
                    field[p0 + j, current_group, 1] += acc[1, j]
                    field[p0 + j, current_group, 2] += acc[2, j]
                    inside[p0 + j, current_group] = inside[p0 + j, current_group] or hit[j] > 0
                    acc[0, j] = 0.0
                    acc[1, j] = 0.0
                    acc[2, j] = 0.0
                    hit[j] = 0.0
                if s == n_seg:
                    break
                current_group = group[s]
            sx = start[s, 0]
            sy = start[s, 1]
            sz = start[s, 2]
            ex = end[s, 0]
            ey = end[s, 1]
            ez = end[s, 2]
            r2 = radius2[s]
            r2l2 = r2 * length2[s]
            w = weight[s]
            for j in range(n):
                gx, gy, gz, bad = _pair(sx, sy, sz, ex, ey, ez, r2, r2l2, px[j], py[j], pz[j])
                hit[j] = max(hit[j], 1.0 if bad else 0.0)
                acc[0, j] += gx * w
                acc[1, j] += gy * w
                acc[2, j] += gz * w


def segment_field_by_group(start, end, weight, group, radius2, length2, points, field, inside):
    """Accumulate each group's unscaled field into ``field`` (P, G, 3); set ``inside`` (P, G)."""
    _launch(_group_kernel, start, end, weight, group, radius2, length2, points, field, inside)
