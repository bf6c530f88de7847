"""Search for the mounting spot where a sensor's budget figure is smallest.

The figure is the one held against the sensor's budget (worst state, heel and reference-state
change, with equipment bounds), evaluated at candidate positions instead of the sensor's own.

A box is searched coarse to fine: a coarse grid finds the promising cells, and a grid at the
requested step refines each of them. Every stage evaluates the held figure itself (it is closed
form: see :mod:`deviation.budget`), so the ranking needs no separate exact pass.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .analysis import evaluate_sensor, parts_at
from .budget import budget_figures, equipment_fields

#: Largest number of points in the coarse stage.
COARSE_POINTS = 40_000
#: Coarse cells refined at the fine step.
REFINED_CELLS = 24
#: Points evaluated per call of the field kernel (bounds memory: P x R x 3 doubles).
CHUNK_POINTS = 20_000


@dataclass(frozen=True)
class Spot:
    position_m: np.ndarray
    budget_used_deg: float
    worst_state: str
    within_budget: bool
    dominant_runs: list               # (run name, share of the figure) at this spot, largest first
    name: str | None = None           # the spots sheet's name for it, if any


@dataclass(frozen=True)
class SpotSearch:
    sensor: object
    spots: tuple
    current: Spot | None              # the sensor's own position, for comparison
    evaluated: int                    # positions whose figure was computed
    grid_points: int                  # positions of the full grid at the requested step
    step_m: float | None
    region: tuple | None

    def to_frame(self):
        """One row per spot, best first: position [m], held figure [deg], worst state."""
        import pandas

        return pandas.DataFrame([{
            "rank": i, "name": s.name, "x_m": s.position_m[0], "y_m": s.position_m[1],
            "z_m": s.position_m[2], "budget_used_deg": s.budget_used_deg,
            "worst_state": s.worst_state, "within_budget": s.within_budget,
            "dominant_runs": "; ".join(f"{n} {share * 100:.0f} %" for n, share in s.dominant_runs)}
            for i, s in enumerate(self.spots, start=1)])


def _figures_at(plan, sensor, site, points, progress=None):
    """Worst figure over used states at each point (P,), its state index (P,), inside mask (P,)."""
    worst = np.empty(len(points))
    which = np.empty(len(points), dtype=int)
    inside = np.zeros(len(points), dtype=bool)
    used_states = np.array([sensor.used_in_state(s) for s in plan.state_names])
    for p0 in range(0, len(points), CHUNK_POINTS):
        chunk = points[p0:p0 + CHUNK_POINTS]
        parts = parts_at(plan, chunk)
        items = equipment_fields(plan, sensor, chunk, site.horizontal_t)
        figures = budget_figures(plan, sensor, site.horizontal_t, parts, items)
        used = np.where(used_states[None, :], figures.budget_used_deg, -np.inf)
        worst[p0:p0 + len(chunk)] = used.max(axis=1)
        which[p0:p0 + len(chunk)] = used.argmax(axis=1)
        inside[p0:p0 + len(chunk)] = ~np.isfinite(parts.unit_t).all(axis=(1, 2))
        if progress is not None:
            progress(len(chunk))
    worst[inside] = np.inf
    return worst, which, inside


def _grid(low, high, step):
    axes = [np.arange(lo, hi + step * 0.5, step) if hi > lo else np.array([lo])
            for lo, hi in zip(low, high)]
    axes = [a[a <= hi + 1e-12] for a, hi in zip(axes, high)]
    return axes


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
    result = evaluate_sensor(plan, moved, site, parts_at(plan, position[None, :]))
    worst = result.worst
    counted = [(r.name, r.share_of_budget) for r in worst.runs if r.share_of_budget > 0]
    total = sum(share for _, share in counted)
    dominant = tuple((n, share / total) for n, share in counted[:3]) if total > 0 else ()
    return Spot(np.array(position), worst.budget_used_deg, worst.state,
                bool(worst.within_budget), dominant, name)


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
    """
    low = np.minimum(low_m, high_m).astype(float)
    high = np.maximum(low_m, high_m).astype(float)
    site = analysis.site
    fine_axes = _grid(low, high, step_m)
    grid_points = int(np.prod([len(a) for a in fine_axes]))
    span = high - low
    cells = max(1.0, grid_points / COARSE_POINTS)
    coarse_step = step_m * max(1.0, cells ** (1 / max(1, int((span > 0).sum()))))
    coarse_axes = _grid(low, high, coarse_step)
    coarse = _points(coarse_axes)
    if grid_points <= len(coarse) * 1.5:               # small job: search the fine grid directly
        coarse, coarse_step = _points(fine_axes), step_m
    refine = coarse_step > step_m
    expected = len(coarse) + (REFINED_CELLS * int(math.ceil(2 * coarse_step / step_m + 1)) **
                              int((span > 0).sum()) if refine else 0)
    advance = progress(expected) if progress else None

    figure, state, _ = _figures_at(plan, sensor, site, coarse, advance)
    candidates, candidate_figure, candidate_state = coarse, figure, state
    if refine:
        seeds = _distinct_best(coarse, figure, REFINED_CELLS, 1.5 * coarse_step)
        fine = []
        for i in seeds:
            lo = np.maximum(low, coarse[i] - coarse_step)
            hi = np.minimum(high, coarse[i] + coarse_step)
            axes = [a[(a >= l_ - 1e-12) & (a <= h_ + 1e-12)] for a, l_, h_ in zip(fine_axes, lo, hi)]
            fine.append(_points(axes))
        fine = np.unique(np.concatenate(fine), axis=0)
        fine_figure, fine_state, _ = _figures_at(plan, sensor, site, fine, advance)
        candidates = np.concatenate([coarse, fine])
        candidate_figure = np.concatenate([figure, fine_figure])
        candidate_state = np.concatenate([state, fine_state])
    pick = _distinct_best(candidates, candidate_figure, top, 2 * step_m - 1e-12)
    spots = tuple(_spot(plan, site, sensor, candidates[i]) for i in pick)
    return SpotSearch(sensor, spots, _current(plan, analysis, sensor), len(candidates),
                      grid_points, step_m, (low, high))


def rank_positions(plan, analysis, sensor, positions_m, names=None):
    """Rank given candidate positions (e.g. a spots sheet) by the held figure, best first."""
    positions = np.asarray(positions_m, dtype=float).reshape(-1, 3)
    figure, _, _ = _figures_at(plan, sensor, analysis.site, positions)
    order = np.argsort(figure, kind="stable")
    spots = tuple(_spot(plan, analysis.site, sensor, positions[i], names[i] if names else None)
                  for i in order)
    return SpotSearch(sensor, spots, _current(plan, analysis, sensor), len(positions),
                      len(positions), None, None)


def _current(plan, analysis, sensor):
    """The sensor where it is now (a what-if sensor not in the plan is evaluated afresh)."""
    result = next((r for r in analysis.sensors if r.sensor is sensor), None)
    if result is None:
        result = evaluate_sensor(plan, sensor, analysis.site,
                                 parts_at(plan, sensor.position_m[None, :]))
    worst = result.worst
    return Spot(np.array(sensor.position_m), worst.budget_used_deg, worst.state,
                worst.budget_used_deg <= sensor.budget_deg, ())


def slice_map(plan, analysis, sensor, low_m, high_m, z_m, resolution=160):
    """Worst figure over a horizontal slice at height ``z_m``, for plotting.

    Returns x (nx,), y (ny,), figure (nx, ny) [deg] (inf inside conductors).
    """
    low, high = np.minimum(low_m, high_m), np.maximum(low_m, high_m)
    x = np.linspace(low[0], high[0], resolution) if high[0] > low[0] else np.array([low[0]])
    y = np.linspace(low[1], high[1], resolution) if high[1] > low[1] else np.array([low[1]])
    points = _points([x, y, np.array([z_m])])
    figure, _, _ = _figures_at(plan, sensor, analysis.site, points)
    return x, y, figure.reshape(len(x), len(y))
