"""Drawings that show where things are: a profile (side elevation), a plan and an end view of
the runs around one sensor, as SVG (inline in html; read as vectors into the PDF).

The views are laid out as a general-arrangement drawing, bow to the right: the profile seen
from starboard on top (x forward to the right, z up), the plan seen from above below it (port
up the page), the end view seen from astern beside the profile (port on the left). All three
share one scale, so one scale bar serves them, and lengths are in the plan's own unit.

Runs are coloured by their share of the sensor's budget in its worst state; the culprits are
drawn heavier and named. Sensors, equipment, steel items (the outline of the box that holds
each, a sphere as its circle) and the points sheet's named points (as landmarks) are marked.
"""

from __future__ import annotations

import html
import math
from dataclasses import dataclass

import numpy as np

from ..constants import OVERWHELMED_DEG
from ..units import LENGTH_UNITS

#: Share-of-budget bands and the colour each run is drawn in (light to dark: more of the
#: budget). A run at or above CULPRIT_SHARE is drawn heavier and named.
SHARE_COLOURS = ((0.5, "#b2182b"), (0.2, "#e6550d"), (0.05, "#f2a33a"), (0.01, "#9e9ac8"),
                 (0.0, "#bdbdbd"))
CULPRIT_SHARE = 0.2
#: Most culprits named on one drawing (largest first).
MOST_NAMED = 4
FONT = "DejaVu Sans"
SENSOR_COLOUR = "#c0392b"
ITEM_COLOUR = "#6a3d9a"
STEEL_COLOUR = "#4d5a66"
STEEL_FILL = "#e3e6e9"
LANDMARK_COLOUR = "#8c8c8c"

#: The views: name, title, (page-right axis, sign), (page-up axis, sign). Axes: 0 x, 1 y, 2 z.
VIEWS = {"profile": ("Profile, seen from starboard", (0, 1), (2, 1)),
         "plan": ("Plan, seen from above", (0, 1), (1, 1)),
         "end": ("End view, seen from astern", (1, -1), (2, 1))}


@dataclass(frozen=True)
class DrawnRun:
    name: str
    points_m: np.ndarray               # (N, 3) the route (and the separate return after it)
    share: float                       # of the budget, in the sensor's worst state
    culprit: bool
    overwhelms: bool = False           # alone it overwhelms the sensor: no share to give


def share_colour(share) -> str:
    for low, colour in SHARE_COLOURS:
        if share >= low:
            return colour
    return SHARE_COLOURS[-1][1]


def _runs(plan, result):
    """The runs with their share of the budget in the sensor's worst state; culprits named."""
    worst = result.worst if result is not None else None
    shares = {r.name: r.share_of_budget for r in worst.runs} if worst is not None else {}
    # A run that alone overwhelms a compass has no share: its figure is not a number.
    overwhelming = ({r.name for r in worst.runs if r.held >= OVERWHELMED_DEG}
                    if worst is not None and result.sensor.budget.degrees else set())
    ranked = sorted(shares, key=lambda n: -shares[n])
    culprits = {n for n in ranked[:MOST_NAMED] if shares[n] >= CULPRIT_SHARE}
    out = []
    for run in plan.runs:
        g = run.geometry
        pieces = [np.asarray(g.route_m, dtype=float)]
        if g.return_kind == "separate" and g.return_route_m is not None:
            pieces.append(np.asarray(g.return_route_m, dtype=float))
        for piece in pieces:
            out.append(DrawnRun(run.name, piece, shares.get(run.name, 0.0),
                                run.name in culprits, run.name in overwhelming))
    return out


def _nice(length):
    """A round length (1, 2 or 5 times a power of ten) of about ``length``."""
    if length <= 0 or not math.isfinite(length):
        return 1.0
    power = 10 ** math.floor(math.log10(length))
    return min((m * power for m in (1, 2, 5, 10)), key=lambda v: abs(v - length))


class _Labels:
    """Labels placed greedily: one that would overlap a placed one, or leave its view, is tried
    below, above and to the left of its mark, or left out."""

    def __init__(self):
        self.boxes = []

    def place(self, x, y, text, size, frame):
        width, height = 0.56 * size * len(text), size
        fx, fy, fw, fh = frame
        left = x - width - 2 * size * 0.8                 # to the left of the mark
        for nx in (x, left):
            for dy in (0.0, size * 1.1, -size * 1.1):
                box = (nx, y + dy - height, nx + width, y + dy + 0.2 * size)
                inside = fx <= box[0] and box[2] <= fx + fw and fy <= box[1] and box[3] <= fy + fh
                if inside and not any(box[0] < b[2] and b[0] < box[2] and box[1] < b[3]
                                      and b[1] < box[3] for b in self.boxes):
                    self.boxes.append(box)
                    return nx, y + dy
        return None


def steel_corners(item) -> np.ndarray:
    """(8, 3) [m] the corners of the box that holds a steel item, in the vessel frame (its own
    axes turned by its rotation; a cylinder's axis is its own z)."""
    from ..physics.induced import solid_dimensions

    body, dims = solid_dimensions(item.shape, item.sizes_m)
    if body == "ellipsoid":
        half = np.asarray(dims, dtype=float)
    elif body == "box":
        half = np.asarray(dims, dtype=float) / 2.0
    else:                                             # cylinder: (length, diameter)
        half = np.array([dims[1] / 2.0, dims[1] / 2.0, dims[0] / 2.0])
    signs = np.array([[a, b, c] for a in (-1, 1) for b in (-1, 1) for c in (-1, 1)], float)
    return np.asarray(item.position_m, float) + (signs * half) @ np.asarray(item.rotation).T


def _hull(xs, ys):
    """The convex hull of points on the page, counter-clockwise (Andrew's monotone chain)."""
    points = sorted(set(zip(np.round(xs, 4).tolist(), np.round(ys, 4).tolist())))
    if len(points) <= 2:
        return points

    def cross(o, a, b):
        return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])

    lower: list = []
    for p in points:
        while len(lower) >= 2 and cross(lower[-2], lower[-1], p) <= 0:
            lower.pop()
        lower.append(p)
    upper: list = []
    for p in reversed(points):
        while len(upper) >= 2 and cross(upper[-2], upper[-1], p) <= 0:
            upper.pop()
        upper.append(p)
    return lower[:-1] + upper[:-1]


def two_views(plan):
    """The two views that keep a small drawing low: profile and plan for a long vessel, profile
    and end view for a broad one (a drone, a square frame)."""
    every = np.concatenate([np.asarray(r.geometry.route_m, dtype=float) for r in plan.runs]
                           + [s.position_m[None, :] for s in plan.sensors])
    span = np.ptp(every, axis=0)
    return ("profile", "plan") if span[1] < 0.5 * span[0] else ("profile", "end")


def drawing_svg(plan, result=None, *, width_mm=180.0, views=("profile", "end", "plan"),
                landmarks=True) -> bytes:
    """The runs, sensors, equipment and named points in profile, plan and end view, as SVG.

    Parameters
    ----------
    plan : Plan
    result : SensorResult or None
        The sensor the drawing is for: its runs coloured by their share of its budget in its
        worst state, culprits named. None: every run grey.
    width_mm : float
        Width of the drawing [mm]; its height follows from the plan's extent.
    views : sequence of "profile", "plan", "end"
        Which views (the profile and end view side by side, the plan below).
    landmarks : bool
        Mark and name the points sheet's points.
    """
    scale_unit = LENGTH_UNITS[plan.site.units]
    unit = plan.site.units
    runs = _runs(plan, result)
    things = [r.points_m for r in runs] + [s.position_m[None, :] for s in plan.sensors]
    things += [e.position_m[None, :] for e in plan.equipment]
    things += [steel_corners(item) for item in plan.steel]
    if landmarks:
        things += [p[None, :] for _, p in plan.points]
    every = np.concatenate([np.asarray(t, dtype=float).reshape(-1, 3) for t in things]) \
        / scale_unit
    low, high = every.min(axis=0), every.max(axis=0)
    span = np.maximum(high - low, 1e-9)
    margin = max(span.max() * 0.06, 1e-6)
    low, high = low - margin, high + margin
    span = high - low
    gap, title, pad = 6.0, 5.0, 2.0                          # mm
    top_views = [v for v in views if v in ("profile", "end")]
    widths = {"profile": span[0], "end": span[1], "plan": span[0]}
    heights = {"profile": span[2], "end": span[2], "plan": span[1]}
    row_width = sum(widths[v] for v in top_views)
    across = max(row_width, widths["plan"] if "plan" in views else 0.0)
    usable = width_mm - 2 * pad - gap * max(0, len(top_views) - 1)
    s = usable / across                                      # mm per plan unit
    frames = {}
    y = pad
    if top_views:
        x = pad
        for v in top_views:
            frames[v] = (x, y + title, widths[v] * s, heights[v] * s)
            x += widths[v] * s + gap
        y += title + max(heights[v] for v in top_views) * s + gap
    if "plan" in views:
        frames["plan"] = (pad, y + title, widths["plan"] * s, heights["plan"] * s)
        y += title + heights["plan"] * s + gap
    bar_y = y + 2.0
    height_mm = bar_y + 8.0
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width_mm:.1f}mm" '
           f'height="{height_mm:.1f}mm" viewBox="0 0 {width_mm:.2f} {height_mm:.2f}" '
           f'font-family="{FONT}">']
    labels = _Labels()

    def to_page(view, points):
        (ax, sx), (ay, sy) = VIEWS[view][1], VIEWS[view][2]
        fx, fy, fw, fh = frames[view]
        p = np.asarray(points, dtype=float).reshape(-1, 3) / scale_unit
        u = (p[:, ax] - low[ax]) if sx > 0 else (high[ax] - p[:, ax])
        w = (p[:, ay] - low[ay]) if sy > 0 else (high[ay] - p[:, ay])
        return fx + u * s, fy + fh - w * s

    def text(view, x, y, words, size, colour, weight="normal"):
        placed = labels.place(x, y, words, size, frames[view])
        if placed is None:
            return
        out.append(f'<text x="{placed[0]:.2f}" y="{placed[1]:.2f}" font-size="{size:.2f}" '
                   f'fill="{colour}" font-weight="{weight}">{html.escape(words)}</text>')

    for view, (fx, fy, fw, fh) in frames.items():
        out.append(f'<rect x="{fx:.2f}" y="{fy:.2f}" width="{fw:.2f}" height="{fh:.2f}" '
                   'fill="#fbfbf8" stroke="#9aa5b1" stroke-width="0.25"/>')
        labels.boxes.append((fx, fy - title, fx + fw, fy))
        out.append(f'<text x="{fx:.2f}" y="{fy - 1.3:.2f}" font-size="2.6" fill="#333">'
                   f'{html.escape(VIEWS[view][0])}</text>')
    # Steel items first, pale and solid (the PDF writer draws no transparency), so the runs
    # that pass by them are drawn on top.
    for steel in plan.steel:
        for view in frames:
            if steel.shape == "sphere":
                xs, ys = to_page(view, steel.position_m)
                radius = steel.sizes_m[0] / 2 / scale_unit * s
                out.append(f'<circle cx="{xs[0]:.2f}" cy="{ys[0]:.2f}" r="{radius:.2f}" '
                           f'fill="{STEEL_FILL}" stroke="{STEEL_COLOUR}" stroke-width="0.35"/>')
                continue
            xs, ys = to_page(view, steel_corners(steel))
            points = " ".join(f"{a:.2f},{b:.2f}" for a, b in _hull(xs, ys))
            out.append(f'<polygon points="{points}" fill="{STEEL_FILL}" '
                       f'stroke="{STEEL_COLOUR}" stroke-width="0.35"/>')
    # Runs: light first, so the culprits lie on top.
    for run in sorted(runs, key=lambda r: r.share):
        colour = share_colour(run.share)
        weight = 0.9 if run.culprit else 0.35
        for view in frames:
            xs, ys = to_page(view, run.points_m)
            points = " ".join(f"{a:.2f},{b:.2f}" for a, b in zip(xs, ys))
            out.append(f'<polyline points="{points}" fill="none" stroke="{colour}" '
                       f'stroke-width="{weight}" stroke-linejoin="round" '
                       'stroke-linecap="round"/>')
    if landmarks:
        for _name, position in plan.points:
            for view in frames:
                xs, ys = to_page(view, position)
                out.append(f'<circle cx="{xs[0]:.2f}" cy="{ys[0]:.2f}" r="0.45" '
                           f'fill="{LANDMARK_COLOUR}"/>')
    for item in plan.equipment:
        for view in frames:
            xs, ys = to_page(view, item.position_m)
            out.append(f'<rect x="{xs[0] - 0.9:.2f}" y="{ys[0] - 0.9:.2f}" width="1.8" '
                       f'height="1.8" fill="{ITEM_COLOUR}"/>')
    for sensor in plan.sensors:
        mine = result is not None and sensor.name == result.sensor.name
        for view in frames:
            xs, ys = to_page(view, sensor.position_m)
            fill = SENSOR_COLOUR if mine else "white"
            out.append(f'<circle cx="{xs[0]:.2f}" cy="{ys[0]:.2f}" r="1.3" fill="{fill}" '
                       f'stroke="{SENSOR_COLOUR}" stroke-width="0.4"/>')
    # Names: sensors, culprits, equipment, then landmarks where room is left.
    for sensor in plan.sensors:
        mine = result is not None and sensor.name == result.sensor.name
        for view in frames:
            xs, ys = to_page(view, sensor.position_m)
            text(view, xs[0] + 1.8, ys[0] - 1.2, sensor.name, 2.6 if mine else 2.2,
                 SENSOR_COLOUR, "bold" if mine else "normal")
    named = set()
    for run in runs:
        if not run.culprit or run.name in named:
            continue
        named.add(run.name)                      # once, on its route (not its separate return)
        for view in frames:
            xs, ys = to_page(view, run.points_m)
            i = int(np.argmax(np.hypot(np.diff(xs), np.diff(ys)))) if len(xs) > 1 else 0
            mx, my = (xs[i] + xs[min(i + 1, len(xs) - 1)]) / 2, (ys[i] + ys[min(i + 1,
                                                                                len(ys) - 1)]) / 2
            label = (f"{run.name}: overwhelms the sensor" if run.overwhelms
                     else f"{run.name} {run.share * 100:.0f} %")
            text(view, mx + 0.8, my - 0.8, label, 2.3, share_colour(run.share), "bold")
    for item in plan.equipment:
        for view in frames:
            xs, ys = to_page(view, item.position_m)
            text(view, xs[0] + 1.4, ys[0] + 2.6, item.name, 2.0, ITEM_COLOUR)
    for steel in plan.steel:
        for view in frames:
            xs, ys = to_page(view, steel_corners(steel))
            text(view, float(xs.max()) + 0.8, float(ys.min()) + 2.2, f"{steel.name} (steel)",
                 2.0, STEEL_COLOUR)
    if landmarks:
        # A point where a sensor or an item is mounted is named by it already.
        marked = [np.asarray(p, dtype=float) for p in
                  [s.position_m for s in plan.sensors] + [e.position_m for e in plan.equipment]
                  + [item.position_m for item in plan.steel]]
        for name, position in plan.points:
            if any(np.allclose(position, m, atol=1e-6) for m in marked):
                continue
            for view in frames:
                xs, ys = to_page(view, position)
                text(view, xs[0] + 0.8, ys[0] - 0.6, name, 1.8, LANDMARK_COLOUR)
    # The scale bar, and what the colours mean.
    bar = _nice(across / 5)
    bar_mm = bar * s
    out.append(f'<rect x="{pad:.2f}" y="{bar_y:.2f}" width="{bar_mm:.2f}" height="1.2" '
               'fill="#333"/>')
    out.append(f'<rect x="{pad + bar_mm / 2:.2f}" y="{bar_y:.2f}" width="{bar_mm / 2:.2f}" '
               'height="1.2" fill="#fff" stroke="#333" stroke-width="0.2"/>')
    out.append(f'<text x="{pad:.2f}" y="{bar_y + 4.6:.2f}" font-size="2.4" fill="#333">0</text>')
    out.append(f'<text x="{pad + bar_mm - 1:.2f}" y="{bar_y + 4.6:.2f}" font-size="2.4" '
               f'fill="#333">{bar:g} {unit}</text>')
    key_x, key_y = pad + bar_mm + 14, bar_y
    if result is not None:
        words = "share of the budget, worst state:"
        if key_x + 0.56 * 2.3 * len(words) + 5 * 20 > width_mm:     # the key on a line below
            key_x, key_y = pad, bar_y + 8.0
        out.append(f'<text x="{key_x:.2f}" y="{key_y + 1.4:.2f}" font-size="2.3" fill="#333">'
                   f'{words}</text>')
        key_x += 0.56 * 2.3 * len(words) + 2
        bands = [(0.5, "≥ 50 %"), (0.2, "20–50 %"), (0.05, "5–20 %"), (0.01, "1–5 %"),
                 (0.0, "< 1 %")]
        for low_share, band in bands:
            out.append(f'<rect x="{key_x:.2f}" y="{key_y - 0.6:.2f}" width="4" height="2.2" '
                       f'fill="{share_colour(low_share)}"/>')
            out.append(f'<text x="{key_x + 5:.2f}" y="{key_y + 1.4:.2f}" font-size="2.3" '
                       f'fill="#333">{html.escape(band)}</text>')
            key_x += 19
    height_mm = key_y + 8.0
    out[0] = (f'<svg xmlns="http://www.w3.org/2000/svg" width="{width_mm:.1f}mm" '
              f'height="{height_mm:.1f}mm" viewBox="0 0 {width_mm:.2f} {height_mm:.2f}" '
              f'font-family="{FONT}">')
    out.append("</svg>")
    return "\n".join(out).encode("utf-8")

