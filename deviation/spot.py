"""Search for the mounting spot where a sensor's budget figure is smallest.

The figure is the one held against the sensor's budget (worst state, heel and reference-state
change, with equipment bounds), evaluated at candidate positions instead of the sensor's own.

A box is searched coarse to fine: a coarse grid finds the promising cells, a grid at the requested
step refines each of them, and the best few hundred fine candidates are ranked with the exact
figure. Where the sensor has a reference state, the coarse and fine stages screen with the
first-order change asin(|delta b_h|/H), which is exact in the limit of small disturbances, the very
places a good spot lies; only the final ranking uses the exact change over headings.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .analysis import budget_figures, equipment_arrays, run_fields_at
from .field import segment_field

#: Largest number of points in the coarse stage.
COARSE_POINTS = 40_000
#: Coarse cells refined at the fine step.
REFINED_CELLS = 24
#: Fine candidates ranked with the exact figure.
EXACT_CANDIDATES = 300
#: Points evaluated per call of the field kernel (bounds memory: P x K x 3 doubles).
CHUNK_POINTS = 200_000


@dataclass
class Spot:
    position_m: np.ndarray
    budget_used_deg: float
    worst_state: str
    within_budget: bool
    dominant_runs: list               # (run name, share of the figure) at this spot, largest first
    name: str | None = None           # the spots sheet's name for it, if any


@dataclass
class SpotSearch:
    sensor: object
    spots: list
    current: Spot | None              # the sensor's own position, for comparison
    evaluated: int                    # positions whose figure was computed
    grid_points: int                  # positions of the full grid at the requested step
    step_m: float | None
    region: tuple | None


def _figures_at(plan, sensor, site, conductors, currents, points, exact, progress=None):
    """Worst figure over states at each point (P,), its state index (P,), and inside mask (P,)."""
    worst = np.empty(len(points))
    which = np.empty(len(points), dtype=int)
    inside = np.zeros(len(points), dtype=bool)
    for p0 in range(0, len(points), CHUNK_POINTS):
        chunk = points[p0:p0 + CHUNK_POINTS]
        fields, hit = segment_field(conductors.start_m, conductors.end_m, currents, chunk,
                                    radius_m=conductors.radius_m, return_inside=True)
        oriented, bound, changing = equipment_arrays(plan, sensor, chunk, site.horizontal_t)
        figures = budget_figures(plan, sensor, site, fields + oriented, bound, changing,
                                 exact=exact)
        used = figures.budget_used_deg
        worst[p0:p0 + len(chunk)] = used.max(axis=1)
        which[p0:p0 + len(chunk)] = used.argmax(axis=1)
        inside[p0:p0 + len(chunk)] = hit
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


def _spot(plan, conductors, position, figure, state_index, budget, reference_state=None):
    unit, _ = run_fields_at(conductors, len(plan.runs), position[None, :])
    k = state_index
    per_run = unit[0] * plan.run_currents_a[:, k][:, None]
    if reference_state is not None:            # what counts is each run's change from it
        ref_k = plan.state_names.index(reference_state)
        per_run = per_run - unit[0] * plan.run_currents_a[:, ref_k][:, None]
    sizes = np.hypot(per_run[:, 0], per_run[:, 1])
    total = sizes.sum()
    order = np.argsort(-sizes)[:3]
    dominant = [(plan.runs[r].name, float(sizes[r] / total)) for r in order if total > 0
                and sizes[r] > 0]
    return Spot(position.copy(), float(figure), plan.state_names[k],
                bool(figure <= budget), dominant)


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
    site, conductors = analysis.site, analysis.conductors
    currents = conductors.segment_currents(plan.run_currents_a)
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
                              int((span > 0).sum()) if refine else 0) + EXACT_CANDIDATES
    advance = progress(expected) if progress else None

    exact_screen = sensor.reference_state is None
    figure, _, _ = _figures_at(plan, sensor, site, conductors, currents, coarse, exact_screen,
                               advance)
    candidates, candidate_figure = coarse, figure
    if refine:
        seeds = _distinct_best(coarse, figure, REFINED_CELLS, 1.5 * coarse_step)
        fine = []
        for i in seeds:
            lo = np.maximum(low, coarse[i] - coarse_step)
            hi = np.minimum(high, coarse[i] + coarse_step)
            axes = [a[(a >= l_ - 1e-12) & (a <= h_ + 1e-12)] for a, l_, h_ in zip(fine_axes, lo, hi)]
            fine.append(_points(axes))
        fine = np.unique(np.concatenate(fine), axis=0)
        fine_figure, _, _ = _figures_at(plan, sensor, site, conductors, currents, fine,
                                        exact_screen, advance)
        candidates = np.concatenate([coarse, fine])
        candidate_figure = np.concatenate([figure, fine_figure])
    best = np.argsort(candidate_figure, kind="stable")[:EXACT_CANDIDATES]
    best = best[np.isfinite(candidate_figure[best])]
    exact, state, _ = _figures_at(plan, sensor, site, conductors, currents, candidates[best],
                                  True, advance)
    pick = _distinct_best(candidates[best], exact, top, 2 * step_m - 1e-12)
    spots = [_spot(plan, conductors, candidates[best][i], exact[i], state[i], sensor.budget_deg,
                   sensor.reference_state) for i in pick]
    return SpotSearch(sensor, spots, _current(plan, analysis, sensor), len(candidates),
                      grid_points, step_m, (low, high))


def rank_positions(plan, analysis, sensor, positions_m, names=None):
    """Rank given candidate positions (e.g. a spots sheet) by the exact figure, best first."""
    site, conductors = analysis.site, analysis.conductors
    currents = conductors.segment_currents(plan.run_currents_a)
    positions = np.asarray(positions_m, dtype=float).reshape(-1, 3)
    figure, state, inside = _figures_at(plan, sensor, site, conductors, currents, positions, True)
    order = np.argsort(figure, kind="stable")
    spots = []
    for i in order:
        spot = _spot(plan, conductors, positions[i], figure[i], state[i], sensor.budget_deg,
                     sensor.reference_state)
        spot.name = names[i] if names else None
        spots.append(spot)
    return SpotSearch(sensor, spots, _current(plan, analysis, sensor), len(positions),
                      len(positions), None, None)


def _current(plan, analysis, sensor):
    result = next(r for r in analysis.sensors if r.sensor is sensor)
    worst = max(result.states, key=lambda s: s.budget_used_deg)
    return Spot(sensor.position_m.copy(), worst.budget_used_deg, worst.state,
                worst.budget_used_deg <= sensor.budget_deg, [])


def slice_map(plan, analysis, sensor, low_m, high_m, z_m, resolution=160):
    """Worst figure over a horizontal slice at height ``z_m``, for plotting.

    Returns x (nx,), y (ny,), figure (nx, ny) [deg] (inf inside conductors).
    """
    low, high = np.minimum(low_m, high_m), np.maximum(low_m, high_m)
    x = np.linspace(low[0], high[0], resolution) if high[0] > low[0] else np.array([low[0]])
    y = np.linspace(low[1], high[1], resolution) if high[1] > low[1] else np.array([low[1]])
    points = _points([x, y, np.array([z_m])])
    conductors = analysis.conductors
    currents = conductors.segment_currents(plan.run_currents_a)
    figure, _, _ = _figures_at(plan, sensor, analysis.site, conductors, currents, points,
                               sensor.reference_state is None)
    return x, y, figure.reshape(len(x), len(y))
