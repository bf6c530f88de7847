"""Compiled loop kernels for the segment field (numba), imported only for large jobs.

The arithmetic is the one of :func:`deviation.physics.field.segment_field` (see its Notes),
evaluated pair by pair in float64 with fastmath off, so it matches the NumPy path to rounding.
Observers are cut into tiles, one tile per parallel task; inside a tile the loop over observers
is innermost so the compiler can vectorise it, and the currents of all K states are applied to
each pair's geometry.

Routed runs are polylines: a segment usually starts where the one before it ended. The vector
from each observer to that shared vertex, its square and its length (a square root, the dearest
operation of a pair after the division) are then kept from the previous segment rather than
computed again: the same numbers from the same operands, so the result is bit for bit the one
of computing them afresh, at one square root per pair instead of two.

The first call in a process without numba's cache for this machine compiles the kernels (several
seconds); :func:`announce_compiling` says so on a terminal first.
"""

import sys

import numpy as np
from numba import njit, prange

#: Observers per tile: their coordinates, the kept vertex and the field accumulators stay in the
#: first-level cache.
_TILE = 256

#: Said once on a terminal before the kernels are compiled.
COMPILING_MESSAGE = ("deviation: compiling the field kernels for this machine (once, some "
                     "seconds; later runs load them)...")

_announced = False


@njit(inline="always", fastmath=False)
def _pair(ax, ay, az, a2, na, bx, by, bz, b2, nb, r2, r2l2):  # pragma: no cover
    """One segment at one observer, from the vectors a, b to its ends (with their squares and
    lengths): the unit-current field without mu0/4pi, and whether the observer lies inside the
    conductor (then the field is 0)."""
    cx = ay * bz - az * by
    cy = az * bx - ax * bz
    cz = ax * by - ay * bx
    dot = ax * bx + ay * by + az * bz
    c2 = cx * cx + cy * cy + cz * cz
    nanb = na * nb
    positive = dot >= 0.0
    num = (na + nb) * (1.0 if positive else nanb - dot)
    den = nanb * (nanb + dot if positive else c2)
    near2 = min(a2, b2)
    bad = (near2 <= r2) | ((dot < near2) & (c2 <= r2l2))
    f = 0.0 if bad else num / den
    return cx * f, cy * f, cz * f, bad


@njit(inline="always", fastmath=False)
def _tile_pairs(start, end, s, shared, r2, r2l2, n, px, py, pz, qx, qy, qz, q2, nq,
                gx, gy, gz, hit):  # pragma: no cover
    """Segment ``s`` at the n observers of a tile into gx, gy, gz (and ``hit``); the vertex
    kept in q (vector, square, length per observer) moves on to the segment's end. ``shared``:
    the segment starts at the vertex kept."""
    sx = start[s, 0]
    sy = start[s, 1]
    sz = start[s, 2]
    ex = end[s, 0]
    ey = end[s, 1]
    ez = end[s, 2]
    if shared:
        for j in range(n):
            ax = qx[j]
            ay = qy[j]
            az = qz[j]
            a2 = q2[j]
            na = nq[j]
            bx = ex - px[j]
            by = ey - py[j]
            bz = ez - pz[j]
            b2 = bx * bx + by * by + bz * bz
            nb = np.sqrt(b2)
            qx[j] = bx
            qy[j] = by
            qz[j] = bz
            q2[j] = b2
            nq[j] = nb
            gx[j], gy[j], gz[j], bad = _pair(ax, ay, az, a2, na, bx, by, bz, b2, nb, r2, r2l2)
            hit[j] = max(hit[j], 1.0 if bad else 0.0)
    else:
        for j in range(n):
            ax = sx - px[j]
            ay = sy - py[j]
            az = sz - pz[j]
            a2 = ax * ax + ay * ay + az * az
            na = np.sqrt(a2)
            bx = ex - px[j]
            by = ey - py[j]
            bz = ez - pz[j]
            b2 = bx * bx + by * by + bz * bz
            nb = np.sqrt(b2)
            qx[j] = bx
            qy[j] = by
            qz[j] = bz
            q2[j] = b2
            nq[j] = nb
            gx[j], gy[j], gz[j], bad = _pair(ax, ay, az, a2, na, bx, by, bz, b2, nb, r2, r2l2)
            hit[j] = max(hit[j], 1.0 if bad else 0.0)


@njit(inline="always")
def _follows(start, end, s):  # pragma: no cover
    """Segment s starts exactly where segment s - 1 ended."""
    return (s > 0 and start[s, 0] == end[s - 1, 0] and start[s, 1] == end[s - 1, 1]
            and start[s, 2] == end[s - 1, 2])


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
        qx = np.empty(_TILE)
        qy = np.empty(_TILE)
        qz = np.empty(_TILE)
        q2 = np.empty(_TILE)
        nq = np.empty(_TILE)
        gx = np.empty(_TILE)
        gy = np.empty(_TILE)
        gz = np.empty(_TILE)
        hit = np.zeros(_TILE)
        acc = np.zeros((n_states, 3, _TILE))
        for s in range(n_seg):
            r2 = radius2[s]
            _tile_pairs(start, end, s, _follows(start, end, s), r2, r2 * length2[s], n,
                        px, py, pz, qx, qy, qz, q2, nq, gx, gy, gz, hit)
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
    announce_compiling()
    hit = np.zeros(len(points), dtype=np.bool_)
    _kernel(start, end, current, radius2, length2, points, field, hit)
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
        qx = np.empty(_TILE)
        qy = np.empty(_TILE)
        qz = np.empty(_TILE)
        q2 = np.empty(_TILE)
        nq = np.empty(_TILE)
        gx = np.empty(_TILE)
        gy = np.empty(_TILE)
        gz = np.empty(_TILE)
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
            r2 = radius2[s]
            _tile_pairs(start, end, s, _follows(start, end, s), r2, r2 * length2[s], n,
                        px, py, pz, qx, qy, qz, q2, nq, gx, gy, gz, hit)
            w = weight[s]
            for j in range(n):
                acc[0, j] += gx[j] * w
                acc[1, j] += gy[j] * w
                acc[2, j] += gz[j] * w


def segment_field_by_group(start, end, weight, group, radius2, length2, points, field, inside):
    """Accumulate each group's unscaled field into ``field`` (P, G, 3); set ``inside`` (P, G)."""
    announce_compiling()
    _group_kernel(start, end, weight, group, radius2, length2, points, field, inside)


def _needs_compiling(dispatcher) -> bool:
    """Whether calling a cached numba function will compile it: no entry for this machine in
    its on-disk cache index (numba's own cache files; False when that cannot be told)."""
    try:
        index = dispatcher._cache._cache_file._load_index()
        magic = dispatcher.targetctx.codegen().magic_tuple()
    except Exception:                  # another numba's internals: say nothing rather than wrong
        return False
    return not any(key[1] == magic for key in index)


def announce_compiling(stream=None) -> bool:
    """Say on one line of ``stream`` (standard error) that the kernels are about to be compiled,
    once per process, and only when it is a terminal: never into a pipe, a file or JSON, and
    never on standard output. Returns whether it said so."""
    global _announced
    stream = sys.stderr if stream is None else stream
    if _announced:
        return False
    _announced = True
    if not (getattr(stream, "isatty", None) and stream.isatty()):
        return False
    if not any(_needs_compiling(kernel) for kernel in (_kernel, _group_kernel)):
        return False
    stream.write(COMPILING_MESSAGE + "\n")
    stream.flush()
    return True
