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

The first call of a kernel without numba's cache for this machine compiles it (several seconds);
that call is reported as a step of the library's progress (:mod:`deviation.progress`), which the
command line shows as one line on a terminal, and nowhere else.

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

from ..progress import step

#: Observers per tile: their coordinates, the kept vertex and the field accumulators stay in the
#: first-level cache.
_TILE = 256

#: The progress step a compiling call is reported as.
COMPILING_LABEL = "compiling the field and search kernels for this machine (once)"

_checked: set = set()               # kernels whose cache was looked at in this process

#: numba's threading layers that may be entered from several threads at once.
THREADSAFE_LAYERS = ("tbb", "omp")
_LAUNCH = threading.Lock()
_layer = None                       # the layer numba chose, known after the first launch


def _launch(kernel, *args):
    """Run a parallel kernel; one thread at a time unless numba's layer is threadsafe. The
    first call of a kernel that will compile it is reported as a progress step."""
    if kernel not in _checked:
        _checked.add(kernel)
        if _needs_compiling(kernel):
            with step(COMPILING_LABEL, 1) as tick:
                _run(kernel, *args)
                tick()
            return
    _run(kernel, *args)


def _run(kernel, *args):
    global _layer
    if _layer in THREADSAFE_LAYERS:
        kernel(*args)
        return
    with _LAUNCH:
        kernel(*args)
        _layer = numba.threading_layer()


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
def _end_pair(ax, ay, az, a2, na, ex, ey, ez, px, py, pz, r2, r2l2):  # pragma: no cover
    """:func:`_pair` from the start vertex a (vector, square, length) and the end point e at
    the observer p; also returns the vector, square and length to e, kept for the next
    segment."""
    bx = ex - px
    by = ey - py
    bz = ez - pz
    b2 = bx * bx + by * by + bz * bz
    nb = np.sqrt(b2)
    x, y, z, bad = _pair(ax, ay, az, a2, na, bx, by, bz, b2, nb, r2, r2l2)
    return x, y, z, bad, bx, by, bz, b2, nb


@njit(inline="always", fastmath=False)
def _tile_pairs(start, end, s, shared, r2, r2l2, n, px, py, pz, qx, qy, qz, q2, nq,
                gx, gy, gz, hit, weight, accumulate):  # pragma: no cover
    """Segment ``s`` at the n observers of a tile: its field times ``weight`` added into gx,
    gy, gz (``accumulate``), or its field stored there; ``hit`` marks observers inside it. The
    vertex kept in q (vector, square, length per observer) moves on to the segment's end;
    ``shared``: the segment starts at the vertex kept. (Four loops, not one with the branches
    inside, so that each vectorises.)"""
    sx = start[s, 0]
    sy = start[s, 1]
    sz = start[s, 2]
    ex = end[s, 0]
    ey = end[s, 1]
    ez = end[s, 2]
    if shared and accumulate:
        for j in range(n):
            x, y, z, bad, qx[j], qy[j], qz[j], q2[j], nq[j] = _end_pair(
                qx[j], qy[j], qz[j], q2[j], nq[j], ex, ey, ez, px[j], py[j], pz[j], r2, r2l2)
            gx[j] += x * weight
            gy[j] += y * weight
            gz[j] += z * weight
            hit[j] = max(hit[j], 1.0 if bad else 0.0)
    elif shared:
        for j in range(n):
            gx[j], gy[j], gz[j], bad, qx[j], qy[j], qz[j], q2[j], nq[j] = _end_pair(
                qx[j], qy[j], qz[j], q2[j], nq[j], ex, ey, ez, px[j], py[j], pz[j], r2, r2l2)
            hit[j] = max(hit[j], 1.0 if bad else 0.0)
    elif accumulate:
        for j in range(n):
            ax = sx - px[j]
            ay = sy - py[j]
            az = sz - pz[j]
            a2 = ax * ax + ay * ay + az * az
            x, y, z, bad, qx[j], qy[j], qz[j], q2[j], nq[j] = _end_pair(
                ax, ay, az, a2, np.sqrt(a2), ex, ey, ez, px[j], py[j], pz[j], r2, r2l2)
            gx[j] += x * weight
            gy[j] += y * weight
            gz[j] += z * weight
            hit[j] = max(hit[j], 1.0 if bad else 0.0)
    else:
        for j in range(n):
            ax = sx - px[j]
            ay = sy - py[j]
            az = sz - pz[j]
            a2 = ax * ax + ay * ay + az * az
            gx[j], gy[j], gz[j], bad, qx[j], qy[j], qz[j], q2[j], nq[j] = _end_pair(
                ax, ay, az, a2, np.sqrt(a2), ex, ey, ez, px[j], py[j], pz[j], r2, r2l2)
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
        single = n_states == 1              # one state: added straight into the accumulator
        for s in range(n_seg):
            r2 = radius2[s]
            if single:
                _tile_pairs(start, end, s, _follows(start, end, s), r2, r2 * length2[s], n,
                            px, py, pz, qx, qy, qz, q2, nq, acc[0, 0], acc[0, 1], acc[0, 2], hit,
                            current[s, 0], True)
                continue
            _tile_pairs(start, end, s, _follows(start, end, s), r2, r2 * length2[s], n,
                        px, py, pz, qx, qy, qz, q2, nq, gx, gy, gz, hit, 1.0, False)
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
        qx = np.empty(_TILE)
        qy = np.empty(_TILE)
        qz = np.empty(_TILE)
        q2 = np.empty(_TILE)
        nq = np.empty(_TILE)
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
                        px, py, pz, qx, qy, qz, q2, nq, acc[0], acc[1], acc[2], hit, weight[s],
                        True)


def segment_field_by_group(start, end, weight, group, radius2, length2, points, field, inside):
    """Accumulate each group's unscaled field into ``field`` (P, G, 3); set ``inside`` (P, G)."""
    _launch(_group_kernel, start, end, weight, group, radius2, length2, points, field, inside)


# --- the worst switching with heel and pitch: the circle walk of worst_case, compiled -----------

@njit(inline="always", fastmath=False)
def _attitude_size(bx, by, bz, heel, sin_heel, cos_heel, tan_pitch, sin_pitch, cos_pitch,
                   full_pitch):  # pragma: no cover
    """worst_case.horizontal_over_attitude of one vector (limits in radians), the same steps."""
    forward = bx
    starboard = -by
    down = -bz
    sign = -1.0 if starboard < 0.0 else 1.0
    phi0 = np.arctan2(-down * sign, abs(starboard))
    if abs(phi0) <= heel:
        p = np.cos(phi0) * starboard - np.sin(phi0) * down
        q = 0.0
    else:
        q_plus = sin_heel * starboard + cos_heel * down
        q_minus = -sin_heel * starboard + cos_heel * down
        end = heel if abs(q_plus) <= abs(q_minus) else -heel
        p = np.cos(end) * starboard - np.sin(end) * down
        q = np.sin(end) * starboard + np.cos(end) * down
    if full_pitch or abs(q) <= abs(forward) * tan_pitch:
        return np.sqrt(bx * bx + by * by + bz * bz)
    return np.hypot(p, cos_pitch * abs(forward) + sin_pitch * abs(q))


@njit(parallel=True, cache=True, fastmath=False, boundscheck=False)
def _walk_kernel(base, generators, heel, pitch, tolerance, margin, picked):  # pragma: no cover
    # For each row: every great circle v_i^perp walked with the 2-D sweep of worst_case._sweep,
    # both sides of it, each vertex met scored unless it is shorter than the best so far; then
    # the best vertex's switching rebuilt by walking its circle again up to its event.
    rows, n = generators.shape[0], generators.shape[1]
    sin_heel, cos_heel = np.sin(heel), np.cos(heel)
    sin_pitch, cos_pitch, tan_pitch = np.sin(pitch), np.cos(pitch), np.tan(pitch)
    full_pitch = pitch >= np.pi / 2
    for b in prange(rows):
        g = generators[b]
        norms = np.empty(n)
        for j in range(n):
            norms[j] = np.sqrt(g[j, 0] ** 2 + g[j, 1] ** 2 + g[j, 2] ** 2)
        best = _attitude_size(base[b, 0], base[b, 1], base[b, 2], heel, sin_heel, cos_heel,
                              tan_pitch, sin_pitch, cos_pitch, full_pitch)
        best_circle, best_event, best_side = -1, 0, 0
        angles = np.empty(2 * n)
        steps = np.empty(2 * n, dtype=np.int64)
        sides = np.zeros((2, 3))
        side_of = np.zeros(n, dtype=np.int64)       # +1, -1: goes with a side; 0: swept
        member = np.zeros(n, dtype=np.bool_)
        for rebuild in range(2):
            for i in range(n):
                if norms[i] == 0.0:
                    continue
                if rebuild and i != best_circle:
                    continue
                ux, uy, uz = g[i, 0] / norms[i], g[i, 1] / norms[i], g[i, 2] / norms[i]
                # The plane's basis: the normal crossed with its least-aligned axis.
                ax, ay, az = abs(ux), abs(uy), abs(uz)
                if ax <= ay and ax <= az:
                    e1x, e1y, e1z = 0.0, uz, -uy
                elif ay <= az:
                    e1x, e1y, e1z = -uz, 0.0, ux
                else:
                    e1x, e1y, e1z = uy, -ux, 0.0
                size = np.sqrt(e1x * e1x + e1y * e1y + e1z * e1z)
                e1x, e1y, e1z = e1x / size, e1y / size, e1z / size
                e2x, e2y, e2z = uy * e1z - uz * e1y, uz * e1x - ux * e1z, ux * e1y - uy * e1x
                sx, sy, sz = base[b, 0], base[b, 1], base[b, 2]
                sides[:, :] = 0.0
                m = 0
                for j in range(n):
                    side_of[j] = 0
                    member[j] = False
                    if norms[j] == 0.0:
                        continue
                    px = g[j, 0] * e1x + g[j, 1] * e1y + g[j, 2] * e1z
                    py = g[j, 0] * e2x + g[j, 1] * e2y + g[j, 2] * e2z
                    if np.hypot(px, py) <= tolerance * norms[j]:
                        along = g[j, 0] * ux + g[j, 1] * uy + g[j, 2] * uz
                        if along > 0.0:
                            side_of[j] = 1
                            sides[0, 0] += g[j, 0]
                            sides[0, 1] += g[j, 1]
                            sides[0, 2] += g[j, 2]
                        elif along < 0.0:
                            side_of[j] = -1
                            sides[1, 0] += g[j, 0]
                            sides[1, 1] += g[j, 1]
                            sides[1, 2] += g[j, 2]
                        continue
                    start = np.mod(np.arctan2(py, px) - np.pi / 2, 2 * np.pi)
                    if start >= np.pi:                 # picked from the start of the walk
                        member[j] = True
                        sx += g[j, 0]
                        sy += g[j, 1]
                        sz += g[j, 2]
                        angles[m] = start
                        angles[m + n] = start - np.pi
                    else:
                        angles[m] = start
                        angles[m + n] = start + np.pi
                    steps[m] = j
                    steps[m + n] = -j - 1
                    m += 1
                # Events: the m starts then the m leaves, sorted stably (as worst_case._sweep).
                keys = np.empty(2 * m)
                kinds = np.empty(2 * m, dtype=np.int64)
                keys[:m] = angles[:m]
                keys[m:] = angles[n:n + m]
                kinds[:m] = steps[:m]
                kinds[m:] = steps[n:n + m]
                order = np.argsort(keys, kind="mergesort")
                for k in range(2 * m + 1):
                    if k > 0:
                        event = kinds[order[k - 1]]
                        j = event if event >= 0 else -event - 1
                        sign = 1.0 if event >= 0 else -1.0
                        sx += sign * g[j, 0]
                        sy += sign * g[j, 1]
                        sz += sign * g[j, 2]
                        member[j] = event >= 0
                    if rebuild:
                        if k == best_event:
                            for j in range(n):
                                picked[b, j] = member[j] or side_of[j] == (1 if best_side == 0
                                                                          else -1)
                            break
                        continue
                    for side in range(2):
                        cx = sx + sides[side, 0]
                        cy = sy + sides[side, 1]
                        cz = sz + sides[side, 2]
                        if np.sqrt(cx * cx + cy * cy + cz * cz) < best * (1.0 - margin):
                            continue
                        value = _attitude_size(cx, cy, cz, heel, sin_heel, cos_heel, tan_pitch,
                                               sin_pitch, cos_pitch, full_pitch)
                        if value > best:
                            best, best_circle, best_event, best_side = value, i, k, side
            if best_circle < 0:
                break


def best_attitude(base, generators, heel_rad, pitch_rad, tolerance, margin):
    """(B, n) bool: the switching of worst_case._best_attitude, found by the compiled walk."""
    picked = np.zeros(generators.shape[:2], dtype=np.bool_)
    _launch(_walk_kernel, np.ascontiguousarray(base, dtype=np.float64),
            np.ascontiguousarray(generators, dtype=np.float64), float(heel_rad),
            float(pitch_rad), float(tolerance), float(margin), picked)
    return picked


def _needs_compiling(dispatcher) -> bool:
    """Whether calling a cached numba function will compile it: no entry for this machine in
    its on-disk cache index (numba's own cache files; False when that cannot be told)."""
    try:
        index = dispatcher._cache._cache_file._load_index()
        magic = dispatcher.targetctx.codegen().magic_tuple()
    except Exception:                  # another numba's internals: say nothing rather than wrong
        return False
    return not any(key[1] == magic for key in index)
