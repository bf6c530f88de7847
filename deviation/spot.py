"""Search for the mounting spot where a sensor's budget figure is smallest.

The figure is the one held against the sensor's budget (worst state, heel and reference-state
change, with equipment bounds), evaluated at candidate positions instead of the sensor's own.

A box is searched coarse to fine: a coarse grid finds the promising cells, and a grid at the
requested step refines each of them. Every stage evaluates the held figure itself (it is closed
form: see :mod:`deviation.budget`), so the ranking needs no separate exact pass. Each position
has one figure: the one the per-position call gives there (same rules, same caps, one kernel
path at any size), the coarse grid's positions are positions of the fine grid, and so the
search and brute force over the same grid find the same best figure, to the bit. With steel
items, the search ranks positions by a quicker proven bound (never below the held figure), and
the best of them are evaluated exactly and ranked again (:func:`_steel_spots`).

The plan's volumes sheet limits where a spot may be: never inside a keep-out box, and, where the
sensor has mount-in boxes, only inside one of them. Each mount-in box within the searched box is
searched on its own grid, so a thin box (a shelf, a bulkhead's face) is not missed between the
points of a coarse grid.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .analysis import evaluate_sensor, parts_at
from .budget import circuit_currents, equipment_fields, sensor_figures
from .errors import DeviationError
from .physics.field import one_path_at_any_size
from .plan import Sensor
from .progress import counter

#: Largest number of points in the coarse stage.
COARSE_POINTS = 40_000
#: Coarse cells refined at the fine step.
REFINED_CELLS = 24
#: Points evaluated per call of the field kernel (bounds memory: P x R x 3 doubles).
CHUNK_POINTS = 20_000
#: Ceilings of a search (measured, bench/bench_limits.py and docs/robustness.md): positions
#: evaluated in all (about 2 000 to 300 000 a second, by the plan), and points of the grid at
#: the step, along one axis and in all (the grid's axes are held in memory).
MAX_POSITIONS = 1_000_000
MAX_GRID_POINTS = 10**12
MAX_AXIS_POINTS = 1_000_000
#: Fewest coarse points given to one mount-in box when several share the coarse stage.
MIN_COARSE_POINTS_PER_BOX = 1_000
#: Margin added around the plan's geometry to make its extent [m] (common practice, no source:
#: room for a sensor's housing beyond the outermost point of the plan).
EXTENT_MARGIN_M = 0.1
#: Two coordinates closer than this are the same [m] (far below any grid step).
_SAME_M = 1e-9
#: Faces of a box, in the words of a vessel's plan (x forward, y port, z up).
FACES = ("x low", "x high", "y low", "y high", "z low", "z high")


@dataclass(frozen=True)
class Spot:
    """A position and the sensor's held figure there, in the unit of its budget."""

    position_m: np.ndarray
    held: float
    worst_state: str
    within_budget: bool
    dominant_runs: list               # (run name, share of the figure) at this spot, largest first
    name: str | None = None           # the spots sheet's name for it, if any


@dataclass(frozen=True)
class SpotSearch:
    """The result of a spot search, best spot first.

    Attributes
    ----------
    best_on_edge : bool
        The best spot lies on a face of the searched box (where the box, not a mount-in volume,
        set the limit): a better spot may lie outside it.
    edge_faces : tuple of str
        Those faces, from :data:`FACES` (e.g. "z high").
    volumes : tuple of Volume
        The volumes that limited the search.
    excluded : tuple of (str, str)
        Candidates of a ranking left out by the volumes: (spot name, why).
    """

    sensor: Sensor
    spots: tuple
    current: Spot | None              # the sensor's own position, for comparison
    evaluated: int                    # positions whose figure was computed
    grid_points: int                  # positions of the full grid at the requested step
    step_m: float | None
    region: tuple | None
    best_on_edge: bool = False
    edge_faces: tuple = ()
    volumes: tuple = ()
    excluded: tuple = ()

    @property
    def within_budget(self) -> bool:
        """The best spot meets the sensor's budget (False when there is no spot)."""
        return bool(self.spots) and self.spots[0].within_budget

    def to_frame(self):
        """One row per spot, best first: position [m], held figure (in the budget's unit, named
        in the column ``unit``), worst state."""
        import pandas

        return pandas.DataFrame([{
            "rank": i, "name": s.name, "x_m": s.position_m[0], "y_m": s.position_m[1],
            "z_m": s.position_m[2], "held": s.held, "unit": self.sensor.budget.unit.value,
            "worst_state": s.worst_state, "within_budget": s.within_budget,
            "dominant_runs": "; ".join(f"{n} {share * 100:.0f} %" for n, share in s.dominant_runs)}
            for i, s in enumerate(self.spots, start=1)])


def volumes_for(plan, sensor):
    """The volumes that apply to a sensor: (mount-in boxes, keep-out boxes)."""
    boxes = [v for v in plan.volumes if v.is_for(sensor.name)]
    return (tuple(v for v in boxes if v.kind == "mount in"),
            tuple(v for v in boxes if v.kind == "keep out"))


def allowed(plan, sensor, points_m):
    """(P,) True where the volumes let the sensor be mounted: outside every keep-out box and, if
    the sensor has mount-in boxes, inside one of them (faces count as inside)."""
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    mount, keep = volumes_for(plan, sensor)
    ok = np.ones(len(points), dtype=bool)
    for volume in keep:
        ok &= ~volume.contains(points)
    if mount:
        ok &= np.any([volume.contains(points) for volume in mount], axis=0)
    return ok


def _why_excluded(plan, sensor, position):
    mount, keep = volumes_for(plan, sensor)
    inside = [v.name for v in keep if v.contains(position)[0]]
    if inside:
        return f'inside keep-out "{inside[0]}"'
    return "outside every mount-in volume"


def spots_for(plan, sensor):
    """The spots sheet's candidates for a sensor (its own and those for every sensor)."""
    return tuple(s for s in plan.spots if s.is_for(sensor.name))


def plan_extent(plan, margin_m=EXTENT_MARGIN_M):
    """The box holding the plan: every route and return route, sensor, point, equipment item,
    steel item's centre and candidate spot, grown by ``margin_m`` [m] on every side. Returns
    (low, high) (3,) [m]."""
    pieces = [s.position_m[None] for s in plan.sensors]
    for run in plan.runs:
        pieces.append(run.geometry.route_m)
        if run.geometry.return_route_m is not None:
            pieces.append(run.geometry.return_route_m)
    pieces += [p[None] for _, p in plan.points]
    pieces += [e.position_m[None] for e in plan.equipment]
    pieces += [s.position_m[None] for s in plan.spots]
    pieces += [item.position_m[None] for item in plan.steel]
    everything = np.concatenate(pieces).reshape(-1, 3)
    return everything.min(axis=0) - margin_m, everything.max(axis=0) + margin_m


def search_box_around(plan, sensor, half_m):
    """A box to search for a better spot near a sensor: (low, high) (3,) [m].

    Parameters
    ----------
    plan : Plan
    sensor : Sensor
    half_m : float [m]
        Half the box's size in each axis, more than 0.

    Returns
    -------
    low, high : (3,) arrays [m]
        The cube of half-size ``half_m`` around the sensor, cut to the plan's extent
        (:func:`plan_extent`) and, where the sensor has mount-in volumes, to the part of them
        within it; never larger than the extent. When no mount-in volume lies within the cube,
        the cube is centred instead on the nearest point of the nearest mount-in volume.
    """
    half_m = float(half_m)
    if not half_m > 0:
        raise ValueError(f"the half-size must be more than zero metres, got {half_m:g}")
    extent_low, extent_high = plan_extent(plan)
    mount, _ = volumes_for(plan, sensor)
    centre = np.asarray(sensor.position_m, dtype=float)
    low = np.maximum(centre - half_m, extent_low)
    high = np.minimum(centre + half_m, extent_high)
    if not mount:
        return low, high
    met = [(np.maximum(low, v.low_m), np.minimum(high, v.high_m)) for v in mount]
    met = [(lo, hi) for lo, hi in met if np.all(lo <= hi + _SAME_M)]
    if not met:
        nearest = min(mount, key=lambda v: np.linalg.norm(centre - np.clip(centre, v.low_m,
                                                                            v.high_m)))
        centre = np.clip(centre, nearest.low_m, nearest.high_m)
        low = np.maximum(np.maximum(centre - half_m, nearest.low_m), extent_low)
        high = np.minimum(np.minimum(centre + half_m, nearest.high_m), extent_high)
        if np.any(low > high):           # the volume lies outside the plan's extent
            low = np.maximum(centre - half_m, nearest.low_m)
            high = np.minimum(centre + half_m, nearest.high_m)
        return low, high
    return (np.min([lo for lo, _ in met], axis=0), np.max([hi for _, hi in met], axis=0))


def _figures_at(plan, sensor, site, points, progress=None):
    """Worst figure over used states at each point (P,), its state index (P,), inside mask (P,).

    Each point's figure is the held figure :func:`deviation.analysis.evaluate_sensor` gives
    there (:func:`_spot`), to the bit, whatever the other points evaluated with it: the same
    rules with the same caps, on one path at any size (:func:`one_path_at_any_size`). With steel
    it is the quicker proven bound (never below that figure) that :func:`_steel_spots` re-ranks.
    """
    worst = np.empty(len(points))
    which = np.empty(len(points), dtype=int)
    inside = np.zeros(len(points), dtype=bool)
    used_states = np.array([sensor.used_in_state(s) for s in plan.state_names])
    currents = circuit_currents(plan)
    with one_path_at_any_size():
        for p0 in range(0, len(points), CHUNK_POINTS):
            chunk = points[p0:p0 + CHUNK_POINTS]
            parts = parts_at(plan, chunk, nearest=False)
            items = equipment_fields(plan, sensor, chunk, site.horizontal_t)
            figures = sensor_figures(plan, sensor, site, parts, chunk, items=items,
                                     currents=currents, held_only=True, steel_exact=False)
            used = np.where(used_states[None, :], figures.held, -np.inf)
            worst[p0:p0 + len(chunk)] = used.max(axis=1)
            which[p0:p0 + len(chunk)] = used.argmax(axis=1)
            inside[p0:p0 + len(chunk)] = parts.inside
            if plan.steel:
                from .budget.steel import steel_parts_at

                inside[p0:p0 + len(chunk)] |= steel_parts_at(plan, chunk).inside
            if progress is not None:
                progress(len(chunk))
    worst[inside] = np.inf
    return worst, which, inside


def _grid(low, high, step):
    axes = [np.arange(lo, hi + step * 0.5, step) if hi > lo else np.array([lo])
            for lo, hi in zip(low, high)]
    axes = [a[a <= hi + 1e-12] for a, hi in zip(axes, high)]
    return axes


def _on_axes(axes, fine_axes):
    """Each axis of a coarser grid moved onto the nearest values of the fine grid's axis (no
    value twice): every position a search evaluates is then a position of the fine grid, to the
    bit, and has the figure brute force over that grid gives it."""
    moved = []
    for coarse, fine in zip(axes, fine_axes):
        if len(fine) == 1:
            moved.append(fine.copy())
            continue
        j = np.clip(np.searchsorted(fine, coarse), 1, len(fine) - 1)
        j = np.where(np.abs(fine[j - 1] - coarse) <= np.abs(fine[j] - coarse), j - 1, j)
        moved.append(np.unique(fine[j]))
    return moved


def _points(axes):
    mesh = np.meshgrid(*axes, indexing="ij")
    return np.stack([m.ravel() for m in mesh], axis=1)


def _distinct_best(points, figure, count, min_separation):
    """Indices of the best points, at least ``min_separation`` apart (greedy)."""
    order = np.argsort(figure, kind="stable")
    chosen = []
    for i in order:
        if not np.isfinite(figure[i]):
            break
        if all(np.linalg.norm(points[i] - points[j]) >= min_separation for j in chosen):
            chosen.append(i)
            if len(chosen) == count:
                break
    return np.array(chosen, dtype=int)


def _spot(plan, site, sensor, position, name=None):
    """The sensor evaluated at a position: its held figure, worst state and the runs behind it."""
    moved = replace(sensor, position_m=position)
    with one_path_at_any_size():          # the path the search scored it on (_figures_at)
        result = evaluate_sensor(plan, moved, site, parts_at(plan, position[None, :]))
    worst = result.worst
    counted = [(r.name, r.share_of_budget) for r in worst.runs if r.share_of_budget > 0]
    total = sum(share for _, share in counted)
    dominant = tuple((n, share / total) for n, share in counted[:3]) if total > 0 else ()
    return Spot(np.array(position), worst.held, worst.state, bool(worst.within_budget),
                dominant, name)


class SearchTooLarge(DeviationError, ValueError):
    """A spot search beyond its ceilings (MAX_POSITIONS, MAX_GRID_POINTS, MAX_AXIS_POINTS)."""


def _size_text(span_m):
    return " x ".join(f"{v:g}" for v in np.round(span_m, 3)) + " m"


#: With steel, the search ranks positions by a quicker proven bound; this many times ``top`` of
#: its best are then evaluated exactly and ranked again.
STEEL_POOL = 2


def _steel_spots(plan, site, sensor, positions, names, count):
    """With steel items: the positions evaluated exactly (the held figure over every heading,
    attitude, switching and band; :mod:`deviation.budget.with_steel`), best first, at most
    ``count`` of them; each with its largest contributors, runs and steel items alone."""
    from dataclasses import replace as replaced

    from .budget.figures import _with_runs
    from .budget.steel import steel_parts_at
    from .budget.with_steel import item_alone

    positions = np.asarray(positions, dtype=float).reshape(-1, 3)
    used = np.array([sensor.used_in_state(s) for s in plan.state_names])
    parts = parts_at(plan, positions)
    currents = circuit_currents(plan)
    figures = sensor_figures(plan, sensor, site, parts, positions, currents=currents,
                             held_only=True)
    held = np.where(used[None, :], figures.held, -np.inf)
    order = np.argsort(held.max(axis=1), kind="stable")[:count]
    out = []
    for i in order:
        one = parts_at(plan, positions[i][None, :])
        sliced = replaced(figures, held=figures.held[i:i + 1], within=figures.within[i:i + 1],
                          overwhelmed=figures.overwhelmed[i:i + 1],
                          combination=figures.combination[i:i + 1],
                          total_t=figures.total_t[i:i + 1], bound_t=figures.bound_t[i:i + 1],
                          heading=None, total_field=None)
        runs = _with_runs(sliced, plan, sensor, site, one, currents).runs
        k = int(np.argmax(held[i]))
        shares = [(run.name, float(runs.held[k, r]) / sensor.budget.value)
                  for r, run in enumerate(plan.runs)]
        if sensor.budget.degrees:
            moved = replaced(sensor, position_m=positions[i])
            alone, _, _ = item_alone(plan, moved, site.horizontal_t, site.vertical_t,
                                     steel_parts_at(plan, positions[i][None, :]))
            shares += [(item.name, float(alone[k, j]) / sensor.budget.value)
                       for j, item in enumerate(plan.steel) if np.isfinite(alone[k, j])]
        counted = sorted(((n, v) for n, v in shares if v > 0), key=lambda x: (-x[1], x[0]))
        total = sum(v for _, v in counted)
        dominant = tuple((n, v / total) for n, v in counted[:3]) if total > 0 else ()
        figure = float(held[i, k])
        within = bool(np.all(figures.within[i][used])) if used.any() else True
        out.append(Spot(np.array(positions[i]), figure, plan.state_names[k], within, dominant,
                        names[i] if names is not None else None))
    return tuple(out)


class _Part:
    """One box searched on its own grid: the searched box, or its meeting with a mount-in box."""

    def __init__(self, low, high, step, coarse_budget, volume=None):
        self.low, self.high = low, high
        self.volume = volume              # the mount-in volume it lies in, if any
        self.fine_axes = _grid(low, high, step)
        self.grid_points = int(np.prod([len(a) for a in self.fine_axes]))
        span = high - low
        self.dimensions = int((span > 0).sum())
        cells = max(1.0, self.grid_points / coarse_budget)
        self.coarse_step = step * max(1.0, cells ** (1 / max(1, self.dimensions)))
        self.coarse = _points(_on_axes(_grid(low, high, self.coarse_step), self.fine_axes))
        if self.grid_points <= len(self.coarse) * 1.5:   # small job: search the fine grid directly
            self.coarse, self.coarse_step = _points(self.fine_axes), step
        self.refine = self.coarse_step > step

    def expected(self, step):
        if not self.refine:
            return len(self.coarse)
        return len(self.coarse) + REFINED_CELLS * int(math.ceil(2 * self.coarse_step / step + 1)) \
            ** self.dimensions

    def around(self, seed):
        """The fine grid within a coarse step of a seed point."""
        lo = np.maximum(self.low, seed - self.coarse_step)
        hi = np.minimum(self.high, seed + self.coarse_step)
        axes = [a[(a >= l_ - 1e-12) & (a <= h_ + 1e-12)]
                for a, l_, h_ in zip(self.fine_axes, lo, hi)]
        return _points(axes)


def _parts(low, high, step, mount):
    """The boxes to search: the whole box, or its meeting with each mount-in box."""
    if not mount:
        return [_Part(low, high, step, COARSE_POINTS)]
    boxes = [(np.maximum(low, v.low_m), np.minimum(high, v.high_m), v) for v in mount]
    boxes = [(lo, np.maximum(lo, hi), v) for lo, hi, v in boxes if np.all(lo <= hi + _SAME_M)]
    sizes = [int(np.prod([len(a) for a in _grid(lo, hi, step)])) for lo, hi, _ in boxes]
    total = max(1, sum(sizes))
    parts = []
    for (lo, hi, volume), size in zip(boxes, sizes):
        parts.append(_Part(lo, hi, step, max(MIN_COARSE_POINTS_PER_BOX,
                                             COARSE_POINTS * size / total), volume))
    return parts


def _edge_faces(part, position, region_low, region_high):
    """Faces of the searched box the position lies on, where the box (not a mount-in volume)
    set the limit; axes the box is flat in have no faces."""
    volume = part.volume
    faces = []
    for a, axis in enumerate(part.fine_axes):
        if len(axis) < 2:
            continue
        limit_low = volume is None or region_low[a] > volume.low_m[a] + _SAME_M
        limit_high = volume is None or region_high[a] < volume.high_m[a] - _SAME_M
        if limit_low and position[a] <= axis[0] + _SAME_M:
            faces.append(FACES[2 * a])
        if limit_high and position[a] >= axis[-1] - _SAME_M:
            faces.append(FACES[2 * a + 1])
    return tuple(faces)


def search_box(plan, analysis, sensor, low_m, high_m, step_m, *, progress=None, top=10):
    """Best mounting spots in the box [low_m, high_m] at a resolution of ``step_m``.

    Parameters
    ----------
    plan, analysis : the plan and its analysis (for the site field and the conductors)
    sensor : Sensor
    low_m, high_m : (3,) arrays [m]
        Opposite corners of the box.
    step_m : float [m]
        Grid resolution of the answer.
    progress : callable(total) -> callable(advance), optional
        Called once with the number of evaluations to come; the returned function is called with
        each chunk's size.
    top : int
        Spots returned, best first, at least two steps apart.

    Returns
    -------
    SpotSearch
        Only positions the plan's volumes allow (:func:`allowed`); ``best_on_edge`` says when the
        best of them lies on a face of the box. No spots when the volumes allow none in the box.
    """
    low = np.minimum(low_m, high_m).astype(float)
    high = np.maximum(low_m, high_m).astype(float)
    site = analysis.site
    mount, keep = volumes_for(plan, sensor)
    axis_points = np.floor((high - low) / step_m) + 1
    if axis_points.max() > MAX_AXIS_POINTS or np.prod(axis_points) > MAX_GRID_POINTS:
        raise SearchTooLarge(f"a box of {_size_text(high - low)} at a step of "
                             f"{step_m * 1e3:g} mm has {np.prod(axis_points):,.0f} grid points, "
                             f"more than the {MAX_GRID_POINTS:,} a search may have (at most "
                             f"{MAX_AXIS_POINTS:,} along an axis); give a coarser step or a "
                             "smaller box")
    parts = _parts(low, high, step_m, mount)
    for part in parts:
        part.coarse = part.coarse[allowed(plan, sensor, part.coarse)]
    grid_points = sum(part.grid_points for part in parts)
    total = sum(part.expected(step_m) for part in parts)
    if total > MAX_POSITIONS:
        coarser = math.ceil(step_m * (total / MAX_POSITIONS) ** (1 / 3) * 1e3) / 1e3
        while sum(part.expected(coarser) for part in _parts(low, high, coarser, mount)) \
                > MAX_POSITIONS:
            coarser = math.ceil(coarser * 1.2 * 1e3) / 1e3
        raise SearchTooLarge(f"a box of {_size_text(high - low)} at a step of "
                             f"{step_m * 1e3:g} mm needs {total:,} positions evaluated, more "
                             f"than the {MAX_POSITIONS:,} a search may; give a step of at least "
                             f"{coarser * 1e3:g} mm or a smaller box")
    tick = counter("positions searched", total)
    advance = progress(total) if progress else tick

    def evaluate(points):
        if not len(points):
            return np.empty(0), np.empty(0, dtype=int)
        figure, state, _ = _figures_at(plan, sensor, site, points, advance)
        return figure, state

    # Seeded empty, so that a box no mount-in volume meets gives no spots.
    candidates, figures, states, owners = ([np.empty((0, 3))], [np.empty(0)],
                                           [np.empty(0, dtype=int)], [np.empty(0, dtype=int)])
    for p, part in enumerate(parts):
        figure, state = evaluate(part.coarse)
        found = [(part.coarse, figure, state)]
        if part.refine and len(part.coarse):
            seeds = _distinct_best(part.coarse, figure, REFINED_CELLS, 1.5 * part.coarse_step)
            if len(seeds):
                fine = np.unique(np.concatenate([part.around(part.coarse[i]) for i in seeds]),
                                 axis=0)
                fine = fine[allowed(plan, sensor, fine)]
                found.append((fine, *evaluate(fine)))
        for points, figure, state in found:
            candidates.append(points)
            figures.append(figure)
            states.append(state)
            owners.append(np.full(len(points), p))
    tick.done()
    candidates = np.concatenate(candidates).reshape(-1, 3)
    figures, states, owners = (np.concatenate(x) for x in (figures, states, owners))
    if plan.steel:
        # Ranked by the quick bound: the best of them evaluated exactly, and ranked again.
        pool = _distinct_best(candidates, figures, STEEL_POOL * top, 2 * step_m - 1e-12)
        spots = _steel_spots(plan, site, sensor, candidates[pool], None, top)
        chosen = {tuple(s.position_m) for s in spots}
        pick = np.array([i for i in pool if tuple(candidates[i]) in chosen], dtype=int)
        order = {tuple(s.position_m): n for n, s in enumerate(spots)}
        pick = pick[np.argsort([order[tuple(candidates[i])] for i in pick])]
    else:
        pick = _distinct_best(candidates, figures, top, 2 * step_m - 1e-12)
        spots = tuple(_spot(plan, site, sensor, candidates[i]) for i in pick)
    faces = (_edge_faces(parts[owners[pick[0]]], candidates[pick[0]], low, high) if len(pick)
             else ())
    return SpotSearch(sensor, spots, _current(plan, analysis, sensor), len(candidates),
                      grid_points, step_m, (low, high), bool(faces), faces, mount + keep)


def rank_positions(plan, analysis, sensor, positions_m, names=None):
    """Rank given candidate positions (e.g. a spots sheet) by the held figure, best first.

    Positions the plan's volumes do not allow (:func:`allowed`) are left out, and listed in the
    result's ``excluded`` with the reason.
    """
    site = analysis.site
    positions = np.asarray(positions_m, dtype=float).reshape(-1, 3)
    names = list(names) if names is not None else [None] * len(positions)
    ok = allowed(plan, sensor, positions)
    excluded = tuple((names[i] or f"position {i + 1}", _why_excluded(plan, sensor, positions[i]))
                     for i in np.flatnonzero(~ok))
    kept = np.flatnonzero(ok)
    spots = ()
    if len(kept):
        if plan.steel:
            spots = _steel_spots(plan, site, sensor, positions[kept],
                                 [names[i] for i in kept], len(kept))
        else:
            figure, _, _ = _figures_at(plan, sensor, site, positions[kept])
            order = np.argsort(figure, kind="stable")
            spots = tuple(_spot(plan, site, sensor, positions[kept[i]], names[kept[i]])
                          for i in order)
    mount, keep = volumes_for(plan, sensor)
    return SpotSearch(sensor, spots, _current(plan, analysis, sensor), len(kept), len(positions),
                      None, None, volumes=mount + keep, excluded=excluded)


def _current(plan, analysis, sensor):
    """The sensor where it is now (a what-if sensor not in the plan is evaluated afresh)."""
    result = next((r for r in analysis.sensors if r.sensor is sensor), None)
    if result is None:
        result = evaluate_sensor(plan, sensor, analysis.site,
                                 parts_at(plan, sensor.position_m[None, :]))
    worst = result.worst
    return Spot(np.array(sensor.position_m), worst.held, worst.state,
                bool(worst.within_budget), ())


def slice_map(plan, analysis, sensor, low_m, high_m, z_m, resolution=160):
    """Worst figure over a horizontal slice at height ``z_m``, for plotting.

    Returns x (nx,), y (ny,), figure (nx, ny) in the unit of the sensor's budget (inf inside
    conductors).
    """
    low, high = np.minimum(low_m, high_m), np.maximum(low_m, high_m)
    x = np.linspace(low[0], high[0], resolution) if high[0] > low[0] else np.array([low[0]])
    y = np.linspace(low[1], high[1], resolution) if high[1] > low[1] else np.array([low[1]])
    points = _points([x, y, np.array([z_m])])
    figure, _, _ = _figures_at(plan, sensor, analysis.site, points)
    return x, y, figure.reshape(len(x), len(y))
