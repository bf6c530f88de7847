"""Turn cable runs (waypoints and a return kind) into straight conductor segments.

Every run becomes a set of segments that remember which run they belong to and which way the run's
current flows in them (+1 with the supply current, -1 against it), so that one pass of the field
kernel gives both the total field and each run's own part.

Conventions (also in the project's docs):

* the supply conductor follows the route from the source to the load;
* ``paired``: the return lies beside the supply at the centre spacing, offset in the horizontal
  plane to the *left* of the direction of travel (a run laid forward has its return to port).
  A vertical stretch has no left of its own: it takes the left of the *next* stretch along the
  route that is not vertical, or, when none follows, of the last one before it (not simply the
  nearest neighbour); a route vertical all the way has its return to port (see
  :func:`_left_normals` and docs/routing.md);
* ``twisted``: the route is the pair's axis; the two conductors are helices of radius
  spacing/2, half a turn apart, advancing one turn per lay length, starting with the return to the
  left of travel as a paired run has it. The first and last ``untwisted_end_m`` of the route (lugs,
  breaker, the fanned-out ends at each terminal) are laid as a paired stretch, and each conductor
  steps straight from its paired end into its helix, so the circuit stays one closed loop;
* ``separate``: the return follows its own waypoints from the load back to the source;
* ``none``: one conductor whose current returns on rows modelled elsewhere.

Circuits of kinds paired, twisted and separate are closed at both ends by a short straight
segment (through the load and the source), as the real current is.
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass, field, replace

import numpy as np

from ..constants import HINT_LAY_M, MIN_LAY_PER_OUTER_DIAMETER, UNTWISTED_END_M

RETURN_KINDS = ("paired", "twisted", "separate", "none")

#: Straight chords per lay length for each helix of a twisted pair. With the area-keeping vertex
#: radius (see twisted_helices) 12 chords stay within 2.1e-4 of an independent 1000-chord helix
#: (magpylib) from 0.3 to 2.5 lay lengths off the axis, mid-run (tests/test_twisted.py); without
#: it they are 2.3 % off.
CHORDS_PER_LAY = 12


@dataclass(frozen=True)
class RunGeometry:
    """What the router needs of one run; lengths in metres."""

    name: str
    route_m: np.ndarray                 # (N, 3) waypoints, source to load
    return_kind: str
    return_route_m: np.ndarray | None = None   # (M, 3), load to source, for "separate"
    spacing_m: float | None = None      # centre-to-centre, for paired and twisted
    lay_m: float | None = None          # for twisted
    radius_m: float = 0.0               # conductor radius (inside test)
    untwisted_end_m: float | None = None   # twisted: paired length at each end; None: default
    #: paired: where the return lies about the run's axis, turned from "left of travel" towards
    #: "above" (0: left, 90: above, 180: right, 270: below).
    return_angle_deg: float = 0.0


@dataclass
class Conductors:
    """Straight segments of all runs.

    Attributes
    ----------
    start_m, end_m : (S, 3) arrays [m]
    sign : (S,) array
        +1 where the segment carries its run's current forward, -1 where backward.
    run_index : (S,) int array
        Index of the run in ``run_names``.
    radius_m : (S,) array [m]
    run_names : list of str
    """

    start_m: np.ndarray
    end_m: np.ndarray
    sign: np.ndarray
    run_index: np.ndarray
    radius_m: np.ndarray
    run_names: list = field(default_factory=list)

    def __len__(self):
        return len(self.sign)

    def segment_currents(self, run_current_a):
        """Current of every segment from the runs' currents.

        Parameters
        ----------
        run_current_a : (R,) or (R, K) array [A]

        Returns
        -------
        (S,) or (S, K) array [A]
        """
        run_current = np.asarray(run_current_a, dtype=float)
        taken = run_current[self.run_index]
        return taken * (self.sign if taken.ndim == 1 else self.sign[:, None])

    def of_run(self, index):
        """The segments of one run, as a new Conductors."""
        keep = self.run_index == index
        return Conductors(self.start_m[keep], self.end_m[keep], self.sign[keep],
                          np.zeros(keep.sum(), dtype=int), self.radius_m[keep],
                          [self.run_names[index]])


def route_runs(runs) -> Conductors:
    """Segments of every run (a sequence of :class:`RunGeometry`)."""
    runs = list(runs)
    starts, ends, signs = [], [], []
    for run in runs:
        start, end, sign = route_run(run)
        starts.append(start)
        ends.append(end)
        signs.append(sign)
    if not starts:
        empty = np.zeros((0, 3))
        return Conductors(empty, empty, np.zeros(0), np.zeros(0, dtype=int), np.zeros(0), [])
    counts = [len(sign) for sign in signs]
    # Each list let go as soon as it is joined: the runs' pieces and the joined arrays are not
    # all held at once (a big plan's helices are hundreds of MB).
    start = np.concatenate(starts)
    starts.clear()
    end = np.concatenate(ends)
    ends.clear()
    sign = np.concatenate(signs)
    signs.clear()
    owners = np.repeat(np.arange(len(runs)), counts)
    radii = np.repeat(np.array([float(run.radius_m) for run in runs]), counts)
    return Conductors(start, end, sign, owners, radii, [r.name for r in runs])


def route_run(run: RunGeometry):
    """Segments of one run: ``(start (S, 3), end (S, 3), sign (S,))``."""
    route = np.asarray(run.route_m, dtype=float).reshape(-1, 3)
    if run.return_kind == "none":
        return _polyline(route, 1.0)
    if run.return_kind == "separate":
        back = np.asarray(run.return_route_m, dtype=float).reshape(-1, 3)
        return _closed_circuit(route, back, forward_sign=1.0, back_sign=1.0)
    if run.return_kind == "paired":
        return _closed_circuit(route, offset_polyline(route, run.spacing_m,
                                                      run.return_angle_deg), 1.0, -1.0)
    if run.return_kind == "twisted":
        supply, back, turn, end_of = _twisted_with_ends(route, run.spacing_m, run.lay_m,
                                                        run.untwisted_end_m, CHORDS_PER_LAY)
        if not np.all(end_of < 0):
            _remember_parts(run, _twisted_split(supply, back, turn, end_of)[1])
        return _closed_circuit(supply, back, 1.0, -1.0)
    raise ValueError(f"unknown return kind {run.return_kind!r}; expected one of {RETURN_KINDS}")


#: The turning parts of each twisted run routed (its untwisted ends: a few segments), kept while
#: its geometry lives: routing a run and finding its turning parts then make its helices once.
_TWISTED_PARTS: dict = {}


def _remember_parts(run, parts):
    key = id(run)

    def forget(_reference, key=key):
        _TWISTED_PARTS.pop(key, None)

    _TWISTED_PARTS[key] = (weakref.ref(run, forget), parts)


def turning_parts(run: RunGeometry):
    """The parts of a run that turn about its axis: ``turning_run(run)[1]``, the same values,
    without routing a twisted run again when it has been routed (:func:`route_run`)."""
    if run.return_kind == "twisted":
        kept = _TWISTED_PARTS.get(id(run))
        if kept is not None and kept[0]() is run:
            return kept[1]
    return turning_run(run)[1]


def _polyline(points, sign):
    return points[:-1], points[1:], np.full(len(points) - 1, sign)


def _closed_circuit(supply, back, forward_sign, back_sign):
    """Supply and return polylines joined at the load and the source.

    ``back`` runs load-to-source when ``back_sign`` is +1 and source-to-load when it is -1.
    """
    load_far, source_far = (back[0], back[-1]) if back_sign > 0 else (back[-1], back[0])
    parts = [_polyline(supply, forward_sign), _polyline(back, back_sign),
             (supply[-1:], load_far[None], np.ones(1)),          # through the load
             (source_far[None], supply[:1], np.ones(1))]         # through the source
    start = np.concatenate([p[0] for p in parts])
    end = np.concatenate([p[1] for p in parts])
    sign = np.concatenate([p[2] for p in parts])
    return start, end, sign


def _cross(a, b):
    """a x b of 3-vectors (..., 3), broadcast: numpy.cross's own products and differences in
    its order (so the same numbers to the bit), without its per-call overhead, which a route
    of many short stretches pays thousands of times."""
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    a0, a1, a2 = a[..., 0], a[..., 1], a[..., 2]
    b0, b1, b2 = b[..., 0], b[..., 1], b[..., 2]
    out = np.empty(np.broadcast_shapes(a.shape, b.shape))
    out[..., 0] = a1 * b2 - a2 * b1
    out[..., 1] = a2 * b0 - a0 * b2
    out[..., 2] = a0 * b1 - a1 * b0
    return out


def _left_normals(points):
    """Unit horizontal normals to the left of each stretch of a route.

    Parameters
    ----------
    points : (N, 3) array [m]
        The route, source to load.

    Returns
    -------
    (N - 1, 3) array
        For stretch i, d = points[i + 1] - points[i]: the unit vector along z x d = (-d_y, d_x, 0)
        (left of travel, horizontal). A stretch is vertical when that has length at most 1e-9 of
        the stretch's (a stretch of zero length too); it takes the normal of the first stretch
        after it that is not vertical (``searchsorted`` over their indices), or, when none
        follows, of the last one before it (the index clipped to the last of them). Every
        stretch vertical: (0, 1, 0), to port.

    Notes
    -----
    So a cable going up a compass pedestal and then forward into the binnacle has its return to
    port all the way up, whatever the stretch before the pedestal does; one ending at the top of
    the pedestal keeps the side of the stretch before it. A stretch leaning by any measurable
    amount is not vertical and keeps the left of its own horizontal direction. Rules and
    drawings: docs/routing.md; checked against magpylib in tests/test_routing_docs.py.
    """
    direction = np.diff(points, axis=0)
    normal = _cross([0.0, 0.0, 1.0], direction)
    size = np.linalg.norm(normal, axis=1)
    length = np.linalg.norm(direction, axis=1)
    horizontal = size > 1e-9 * np.maximum(length, 1e-300)
    if not horizontal.any():
        return np.tile([0.0, 1.0, 0.0], (len(direction), 1))      # all vertical: offset to port
    normal[horizontal] /= size[horizontal, None]
    known = np.flatnonzero(horizontal)
    nearest = known[np.clip(np.searchsorted(known, np.arange(len(direction))), 0, len(known) - 1)]
    normal[~horizontal] = normal[nearest[~horizontal]]
    return normal


def _mitred(points, normals, spacing_m):
    """Offsets (N, 3) of a polyline's points along per-stretch unit normals, mitred at corners."""
    offsets = np.empty_like(points)
    offsets[0] = normals[0] * spacing_m
    offsets[-1] = normals[-1] * spacing_m
    for i in range(1, len(points) - 1):
        mean = normals[i - 1] + normals[i]
        size = np.linalg.norm(mean)
        if size < 1e-9:
            offsets[i] = normals[i - 1] * spacing_m
            continue
        mean /= size
        offsets[i] = mean * min(spacing_m / max(mean @ normals[i - 1], 1e-12), 3 * spacing_m)
    return offsets


def offset_frames(points, spacing_m):
    """The offsets of a paired return turned to the left of travel and to above it.

    Parameters
    ----------
    points : (N, 3) array [m]
        The route, source to load.
    spacing_m : float [m]

    Returns
    -------
    left, up : (N, 3) arrays [m]
        Offsets of the route's points for a return to the left of travel (the left normals of
        :func:`_left_normals`) and for one above the supply (each stretch's direction crossed
        with its left normal; a zero-length stretch keeps its left normal), each mitred at the
        corners as :func:`offset_polyline` describes. A return turned by ``a`` from "left"
        towards "above" lies at ``points + cos(a) left + sin(a) up``.

    Notes
    -----
    Where the two stretches at a corner lie in one plane with their left normals in it or
    along its normal (a horizontal corner, or a vertical stretch meeting a horizontal one in a
    vertical plane), the offset lines of a return turned by any ``a`` meet at exactly this
    point, so the turned return keeps the spacing from both stretches; elsewhere it is the
    same linear blend of the two mitred frames, which keeps every turn of the return on an
    ellipse about each corner.
    """
    points = np.asarray(points, dtype=float)
    normals = _left_normals(points)
    direction = np.diff(points, axis=0)
    length = np.linalg.norm(direction, axis=1, keepdims=True)
    up = _cross(direction / np.maximum(length, 1e-300), normals)
    size = np.linalg.norm(up, axis=1, keepdims=True)
    # Stays a unit normal of each stretch: left and "up" are perpendicular to the stretch.
    up = np.where(size > 1e-12, up / np.maximum(size, 1e-300), normals)
    return _mitred(points, normals, spacing_m), _mitred(points, up, spacing_m)


def offset_polyline(points, spacing_m, angle_deg=0.0):
    """The polyline offset by ``spacing_m`` to the left of travel, mitred at the corners.

    Parameters
    ----------
    points : (N, 3) array [m]
    spacing_m : float [m]
    angle_deg : float [deg]
        Turns the offset about each stretch from "left of travel" towards "above": 90 puts the
        return above the supply (on a vertical stretch: towards the stretch's direction crossed
        with its left normal), 180 to the right.

    Returns
    -------
    (N, 3) array [m]

    Notes
    -----
    The normals are :func:`_left_normals` (vertical stretches take the next non-vertical
    stretch's side, else the previous one's). The end points are offset by ``spacing_m`` along
    the first and last stretch's normal. At a corner the offset point lies on the bisector m of
    the two stretches' normals, at the distance ``spacing_m / (m . n_before)`` that keeps both
    offset stretches ``spacing_m`` from their originals (capped at three spacings on hairpin
    turns); where the route doubles back (the two normals opposite) it is offset along the first
    stretch's normal. A turned return is ``cos(angle) left + sin(angle) up`` of the two mitred
    frames (:func:`offset_frames`), linear in the turn. Docs: docs/routing.md.
    """
    points = np.asarray(points, dtype=float)
    left, up = offset_frames(points, spacing_m)
    if not angle_deg:
        return points + left
    angle = np.radians(angle_deg)
    return points + np.cos(angle) * left + np.sin(angle) * up


def twisted_helices(points, spacing_m, lay_m, chords_per_lay=CHORDS_PER_LAY,
                    start_phase_rad=0.0):
    r"""The two conductors of a twisted pair laid along a route.

    Parameters
    ----------
    points : (N, 3) array [m]
        The pair's axis, source to load.
    spacing_m : float [m]
        Centre-to-centre distance of the two conductors (the helix diameter).
    lay_m : float [m]
        Length of one full twist.
    chords_per_lay : int
        Straight chords per lay for each conductor.
    start_phase_rad : float [rad]
        Azimuth of the supply at the start, from the left normal towards the normal above it;
        0 puts the supply to the left of travel, pi puts the return there.

    Returns
    -------
    supply, back : (M, 3) arrays [m]
        Both ordered source to load; their points correspond one to one.

    Notes
    -----
    The twist phase advances continuously with arc length along the route; each straight stretch
    has its own frame (the left normal and the normal above it), and at a corner the conductors
    step between the frames with one short chord.

    An inscribed polygon of N chords encloses less than its circle, which shrinks the pair's
    residual field by O(1/N^2). The vertices are therefore put on the radius
    :math:`R\sqrt{(2\pi/N)/\sin(2\pi/N)}`, where the polygon's area equals the circle's; the
    error then falls as O(1/N^4).
    """
    points = np.asarray(points, dtype=float)
    normals = _left_normals(points)
    radius = spacing_m / 2.0
    supply, back = [], []
    travelled = 0.0
    for i in range(len(points) - 1):
        a, b = points[i], points[i + 1]
        stretch = b - a
        length = float(np.linalg.norm(stretch))
        if length == 0:
            continue
        axis = stretch / length
        u = normals[i]
        v = _cross(axis, u)
        n = max(1, int(np.ceil(length / lay_m * max(chords_per_lay, 4))))
        s = np.linspace(0.0, length, n + 1)
        phase = start_phase_rad + 2 * np.pi * (travelled + s) / lay_m
        chord_turn = 2 * np.pi * length / (lay_m * n)
        keep_area = np.sqrt(chord_turn / np.sin(chord_turn)) if chord_turn > 1e-6 else 1.0
        centre = a + s[:, None] * axis
        arm = radius * keep_area * (np.cos(phase)[:, None] * u + np.sin(phase)[:, None] * v)
        supply.append(centre + arm)
        back.append(centre - arm)
        travelled += length
    if not supply:
        return points[:1].copy(), points[:1].copy()
    return np.concatenate(supply), np.concatenate(back)


def _arc_lengths(points):
    return np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(points, axis=0), axis=1))])


def _point_at(points, arc, s):
    """The point at arc length ``s`` along the polyline."""
    i = int(np.clip(np.searchsorted(arc, s, side="right") - 1, 0, len(points) - 2))
    step = arc[i + 1] - arc[i]
    t = 0.0 if step <= 0 else min(max((s - arc[i]) / step, 0.0), 1.0)
    return points[i] + t * (points[i + 1] - points[i])


def _stretch(points, arc, s0, s1):
    """The part of the polyline from arc length ``s0`` to ``s1``, both ends included."""
    if len(points) < 2 or s1 <= s0:
        return (_point_at(points, arc, s0) if len(points) > 1 else points[0])[None].copy()
    inner = points[(arc > s0) & (arc < s1)]
    return np.vstack([_point_at(points, arc, s0), inner, _point_at(points, arc, s1)])


def _split(points, end_m):
    points = np.asarray(points, dtype=float).reshape(-1, 3)
    if not end_m >= 0:
        raise ValueError(f"an untwisted end must be a length of 0 m or more, not {end_m!r}")
    arc = _arc_lengths(points)
    total = float(arc[-1])
    end = min(float(end_m), total / 2)       # the two ends never overlap
    return (_stretch(points, arc, 0.0, end), _stretch(points, arc, end, total - end),
            _stretch(points, arc, total - end, total), end)


def split_twisted_route(points, end_m):
    """Cut a twisted run's route into its untwisted lead, its twisted middle and its untwisted tail.

    Parameters
    ----------
    points : (N, 3) array [m]
        The route, source to load.
    end_m : float [m]
        Length along the route left untwisted at each end. A route shorter than two ends is cut at
        its middle, so it is untwisted all the way and the middle is a single point.

    Returns
    -------
    lead, middle, tail : (k, 3) arrays [m]
        Polylines in route order; each starts where the one before ends. A part of zero length is
        a single point.
    """
    lead, middle, tail, _ = _split(points, end_m)
    return lead, middle, tail


def twisted_conductors(points, spacing_m, lay_m, untwisted_end_m=None,
                       chords_per_lay=CHORDS_PER_LAY):
    """Supply and return polylines of a twisted run with untwisted ends.

    Parameters
    ----------
    points : (N, 3) array [m]
        The pair's axis, source to load.
    spacing_m : float [m]
        Centre-to-centre distance of the two conductors.
    lay_m : float [m]
        Length of one full twist.
    untwisted_end_m : float or None [m]
        Length at each end laid as a paired stretch; None takes ``constants.UNTWISTED_END_M``,
        0 gives helices all the way into the terminals.
    chords_per_lay : int
        Straight chords per helix per lay.

    Returns
    -------
    supply, back : (M, 3), (K, 3) arrays [m]
        Both ordered source to load, each one continuous polyline.

    Notes
    -----
    On the untwisted ends the supply follows the route and the return lies ``spacing_m`` to its
    left (:func:`offset_polyline` of the whole route, so the ends coincide with the same run laid
    paired). The helices start with the return to the left (phase pi), so at the lead both
    conductors step ``spacing_m/2`` sideways into them; at the tail each steps from wherever the
    twist ends to its paired position. A route no longer than two ends is laid paired all the way.
    How each end may turn about the axis: :func:`turning_run`.
    """
    supply, back, _, _ = _twisted_with_ends(points, spacing_m, lay_m, untwisted_end_m,
                                            chords_per_lay)
    return supply, back


def _twisted_with_ends(points, spacing_m, lay_m, untwisted_end_m, chords_per_lay):
    """:func:`twisted_conductors`, and for each return vertex its turn (K, 2, 3) [m] (the
    offsets "left" and "up" of :func:`offset_frames`; zero on the helix) and which end turns it
    (K,) int: 0 the lead, 1 the tail, -1 none. Laid paired all the way, every vertex is 0."""
    end_m = UNTWISTED_END_M if untwisted_end_m is None else untwisted_end_m
    route = np.asarray(points, dtype=float).reshape(-1, 3)
    lead, middle, tail, end = _split(route, end_m)
    if end == 0:
        supply, back = twisted_helices(route, spacing_m, lay_m, chords_per_lay,
                                       start_phase_rad=np.pi)
        return supply, back, np.zeros((len(back), 2, 3)), np.full(len(back), -1)
    if len(middle) == 1:
        left, up = offset_frames(route, spacing_m)
        return (route, route + left, np.stack([left, up], axis=1),
                np.zeros(len(route), dtype=int))
    supply_mid, back_mid = twisted_helices(middle, spacing_m, lay_m, chords_per_lay,
                                           start_phase_rad=np.pi)
    # Offset the whole route (split points inserted on their stretches) so corners keep their mitre.
    axis = np.vstack([lead, middle[1:], tail[1:]])
    left, up = offset_frames(axis, spacing_m)
    lead_end = len(lead) - 1
    tail_start = lead_end + len(middle) - 1
    supply = np.vstack([lead, supply_mid, tail])
    back = np.vstack([axis[:lead_end + 1] + left[:lead_end + 1], back_mid,
                      axis[tail_start:] + left[tail_start:]])
    frames = np.stack([left, up], axis=1)
    turn = np.concatenate([frames[:lead_end + 1], np.zeros((len(back_mid), 2, 3)),
                           frames[tail_start:]])
    end_of = np.concatenate([np.zeros(lead_end + 1, dtype=int), np.full(len(back_mid), -1),
                             np.ones(len(axis) - tail_start, dtype=int)])
    return supply, back, turn, end_of


@dataclass(frozen=True)
class TurningPart:
    """Segments of one run that turn together about the run's axis, by an angle not given.

    At turn ``a`` [rad] (from "left of travel" towards "above", as ``return_angle_deg``)
    segment i runs from ``base_start_m[i] + cos(a) turn_start_m[i, 0] + sin(a)
    turn_start_m[i, 1]`` to the same of its end, carrying ``sign[i]`` times the run's current.

    Attributes
    ----------
    base_start_m, base_end_m : (S, 3) arrays [m]
        The segments with the offsets left out (the return laid onto the supply).
    turn_start_m, turn_end_m : (S, 2, 3) arrays [m]
        The offsets "left" and "up" of each end (:func:`offset_frames`; zero where an end does
        not turn, e.g. where a twisted run's end steps into its helix).
    sign : (S,) array
    """

    base_start_m: np.ndarray
    base_end_m: np.ndarray
    turn_start_m: np.ndarray
    turn_end_m: np.ndarray
    sign: np.ndarray

    def __len__(self):
        return len(self.sign)

    def at(self, angle_rad):
        """``(start (S, 3), end (S, 3))`` [m] of the segments at one turn."""
        c, s = np.cos(angle_rad), np.sin(angle_rad)
        return (self.base_start_m + c * self.turn_start_m[:, 0] + s * self.turn_start_m[:, 1],
                self.base_end_m + c * self.turn_end_m[:, 0] + s * self.turn_end_m[:, 1])


def _return_part(supply, back, turn, sign_back=-1.0):
    """The turning segments of a return polyline ``back`` (source to load, vertex turns
    ``turn`` (K, 2, 3)) with the two segments closing it to ``supply`` through the load and the
    source."""
    base = back - turn[:, 0]
    zero = np.zeros((1, 2, 3))
    starts = np.vstack([base[:-1], supply[-1:], base[:1]])
    ends = np.vstack([base[1:], base[-1:], supply[:1]])
    turn_start = np.concatenate([turn[:-1], zero, turn[:1]])
    turn_end = np.concatenate([turn[1:], turn[-1:], zero])
    sign = np.r_[np.full(len(back) - 1, sign_back), 1.0, 1.0]
    return starts, ends, turn_start, turn_end, sign


def turning_run(run: RunGeometry):
    """A run's segments split into those that stay put and the parts that turn about its axis.

    Parameters
    ----------
    run : RunGeometry

    Returns
    -------
    fixed : (start (F, 3), end (F, 3), sign (F,))
        Segments that do not depend on any turn.
    parts : tuple of TurningPart
        ``paired``: one part, the return with the two closing segments, turned by any angle
        (``return_angle_deg`` is the turn :func:`route_run` lays). ``twisted``: the lead and the
        tail, each an untwisted end's return with its step into the helix and its closing
        segment, each turning on its own (the helices stay put); a route no longer than two ends
        is one part; without untwisted ends, none. Other kinds: none.

    Notes
    -----
    At turn ``radians(return_angle_deg)`` of a paired run's part, and at turn 0 of both ends of a
    twisted run, ``fixed`` and the parts are exactly the segments of :func:`route_run` (in
    another order).
    """
    route = np.asarray(run.route_m, dtype=float).reshape(-1, 3)
    if run.return_kind == "paired":
        left, up = offset_frames(route, run.spacing_m)
        part = TurningPart(*_return_part(route, route + left, np.stack([left, up], axis=1)))
        return _polyline(route, 1.0), (part,)
    if run.return_kind != "twisted":
        return route_run(run), ()
    supply, back, turn, end_of = _twisted_with_ends(route, run.spacing_m, run.lay_m,
                                                    run.untwisted_end_m, CHORDS_PER_LAY)
    if np.all(end_of < 0):
        return _closed_circuit(supply, back, 1.0, -1.0), ()
    still, parts = _twisted_split(supply, back, turn, end_of)
    f_start, f_end, f_sign = _polyline(supply, 1.0)
    fixed = (np.vstack([f_start, still[0]]), np.vstack([f_end, still[1]]),
             np.r_[f_sign, still[2]])
    return fixed, parts


def _twisted_split(supply, back, turn, end_of):
    """A twisted run's return and closing segments that stay put (start, end, sign), and its
    turning parts (see :func:`turning_run`)."""
    start, end, turn_start, turn_end, sign = _return_part(supply, back, turn)
    # Which end turns each segment: a step into the helix has one turning vertex.
    owner = np.maximum(np.r_[end_of[:-1], end_of[-1], end_of[0]],
                       np.r_[end_of[1:], end_of[-1], end_of[0]])
    still = owner < 0
    parts = tuple(TurningPart(start[owner == k], end[owner == k], turn_start[owner == k],
                              turn_end[owner == k], sign[owner == k])
                  for k in sorted(set(owner[owner >= 0].tolist())))
    return (start[still], end[still], sign[still]), parts


def as_paired(geometry: RunGeometry) -> RunGeometry:
    """The same run laid as an untwisted pair at the same spacing.

    Used to bound a twisted run from below: beyond what measurement supports, its field is counted
    as no weaker than ``constants.TWISTED_FLOOR_FRACTION`` of this run's.

    Raises
    ------
    ValueError
        If the run is neither twisted nor paired (it has no spacing to keep).
    """
    if geometry.return_kind not in ("twisted", "paired"):
        raise ValueError(f"run {geometry.name!r} is {geometry.return_kind!r}; only a twisted or "
                         "paired run has a pair to compare with")
    return replace(geometry, return_kind="paired", return_route_m=None, lay_m=None,
                   untwisted_end_m=None)


def minimum_lay_m(outer_diameter_m):
    r"""The tightest lay a pair of cables of this outer diameter can be twisted to.

    Parameters
    ----------
    outer_diameter_m : float or array [m]
        Insulated outer diameter of one conductor.

    Returns
    -------
    float or array [m]
        ``MIN_LAY_PER_OUTER_DIAMETER`` outer diameters.

    Notes
    -----
    Common practice, no source: stranded boat cable is twisted to a lay of no less than about 12
    outer diameters. Two touching cables of diameter D twisted to a lay p bend each conductor on
    a helix of radius D/2, whose radius of curvature is :math:`(D/2)(1 + (p/\pi D)^2)`; at
    p = 12 D that is 7.8 D, above the roughly 6 D minimum bending radius usually given for
    flexible cable (from memory), so the twist does not overbend the cable.
    """
    diameter = np.asarray(outer_diameter_m, dtype=float)
    if np.any(~(diameter > 0)):
        raise ValueError(f"an outer diameter must be more than 0 m, not {outer_diameter_m!r}")
    lay = MIN_LAY_PER_OUTER_DIAMETER * diameter
    return float(lay) if lay.ndim == 0 else lay


def hint_lay_m(outer_diameter_m):
    """The lay a twisting hint proposes [m]: ``HINT_LAY_M``, or the cable's minimum lay if longer.

    Parameters
    ----------
    outer_diameter_m : float or array [m]
        Insulated outer diameter of one conductor.
    """
    lay = np.maximum(HINT_LAY_M, minimum_lay_m(outer_diameter_m))
    return float(lay) if np.ndim(lay) == 0 else lay
