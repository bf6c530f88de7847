"""Pictures: the spot-search map, deviation curves, plan views (matplotlib, imported lazily).

Plan views put x (forward) up the page and y (port) to the left, as a plan drawing of a vessel.
"""

from __future__ import annotations

import io

import numpy as np


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _scale(plan):
    """Metres per plotted unit, and the unit's name: plan views are drawn in the plan's unit."""
    from ..units import LENGTH_UNITS

    return LENGTH_UNITS[plan.site.units], plan.site.units


def _draw_runs(axes, plan, alpha=0.9, scale=1.0):
    for run in plan.runs:
        route = run.geometry.route_m / scale
        axes.plot(route[:, 1], route[:, 0], lw=1.4, alpha=alpha, color="#333333")
        if run.geometry.return_kind == "separate":
            back = run.geometry.return_route_m / scale
            axes.plot(back[:, 1], back[:, 0], lw=1.0, ls="--", alpha=alpha, color="#666666")
        middle = route[len(route) // 2]
        axes.annotate(run.name, (middle[1], middle[0]), fontsize=6, color="#333333", alpha=0.8)


def _draw_volumes(axes, plan, volumes, scale, z_m=None):
    """Outlines of volumes in plan (y, x): keep-out hatched red, mount-in dashed green. With
    ``z_m`` [m], only those the horizontal slice at that height cuts."""
    from matplotlib.patches import Rectangle

    labelled = set()
    for volume in volumes:
        if z_m is not None and not volume.low_m[2] - 1e-9 <= z_m <= volume.high_m[2] + 1e-9:
            continue
        low, high = volume.low_m / scale, volume.high_m / scale
        keep_out = volume.kind == "keep out"
        label = ("keep-out volume" if keep_out else "mount-in volume")
        patch = Rectangle((low[1], low[0]), high[1] - low[1], high[0] - low[0], fill=False,
                          edgecolor="#c0392b" if keep_out else "#1e8449",
                          hatch="//" if keep_out else None, ls="-" if keep_out else "--",
                          lw=1.2, label=None if label in labelled else label, zorder=4)
        labelled.add(label)
        axes.add_patch(patch)
        axes.annotate(volume.name, (high[1], high[0]), fontsize=6, xytext=(2, -8),
                      textcoords="offset points",
                      color="#c0392b" if keep_out else "#1e8449")


def spot_map(plan, search, x, y, figure, path, z_m=None):
    """Map of the worst-case figure over a horizontal slice, with runs, sensor and best spots.

    Parameters
    ----------
    plan, search : the plan and the spot search drawn
    x, y : (nx,), (ny,) arrays [m]
    figure : (nx, ny) array
        The held figure over the slice, in the unit of the sensor's budget
        (:func:`deviation.spot.slice_map`).
    path : str
        FILE.png or FILE.svg.
    z_m : float [m], optional
        Height of the slice (default: the best spot's, or the sensor's). The title and the colour
        bar state it; the sensor's marker is hollow, and the legend says how far, when the
        sensor is not in the slice.
    """
    plt = _pyplot()
    from matplotlib.colors import LogNorm

    from ..units import format_length

    sensor = search.sensor
    scale, unit = _scale(plan)
    if z_m is None:
        z_m = search.spots[0].position_m[2] if search.spots else sensor.position_m[2]
    slice_text = f"z = {z_m / scale:.3g} {unit}"
    x, y = x / scale, y / scale
    fig, ax = plt.subplots(figsize=(7, 8), dpi=130)
    shown = np.where(np.isfinite(figure), figure, np.nan)
    low = max(1e-3, float(np.nanmin(shown)) if np.isfinite(np.nanmin(shown)) else 1e-3)
    high = max(low * 10, float(np.nanmax(shown)))
    mesh = ax.pcolormesh(y, x, shown, norm=LogNorm(vmin=low, vmax=high), cmap="viridis_r",
                         shading="auto")
    budget = sensor.budget
    if low < budget.value < high:
        ax.contour(y, x, shown, levels=[budget.value], colors="white", linewidths=1.2)
    bar = fig.colorbar(mesh, ax=ax, shrink=0.8)
    bar.set_label(f"figure held against the budget at {slice_text} [{budget.unit.label}]\n"
                  f"(white line: the {budget} budget)")
    _draw_runs(ax, plan, scale=scale)
    _draw_volumes(ax, plan, search.volumes, scale, z_m)
    here = sensor.position_m / scale
    # The sensor is in the slice when it is within half a grid step of it.
    tolerance_m = (search.step_m or 0.002) / 2
    above_m = float(sensor.position_m[2] - z_m)
    if abs(above_m) <= tolerance_m:
        ax.plot(here[1], here[0], marker="x", ms=10, mew=2, color="red",
                label="sensor now (in this slice)", clip_on=False, zorder=6)
    else:
        side = "above" if above_m > 0 else "below"
        ax.plot(here[1], here[0], marker="o", ms=10, mew=1.6, mfc="none", mec="red",
                ls="none", clip_on=False, zorder=6,
                label=f"sensor now, {format_length(abs(above_m), unit)} {side} this slice")
    if search.spots:
        best = search.spots[0].position_m / scale
        ax.plot(best[1], best[0], marker="*", ms=16, color="orange", mec="black",
                label="best spot", clip_on=False, zorder=5)
    ax.set_xlim(y.max(), y.min())                      # port (+y) on the left
    ax.set_ylim(x.min(), x.max())
    ax.set_aspect("equal")
    ax.set_xlabel(f"y [{unit}]   (← port | starboard →)")
    ax.set_ylabel(f"x forward [{unit}]")
    screen = " (change, first order)" if sensor.reference_state else ""
    ax.set_title(f"{sensor.name}: worst case over states{screen}\nin the horizontal slice at "
                 f"{slice_text}")
    ax.legend(loc="lower right", fontsize=7)
    fig.tight_layout()
    _save(fig, path)
    plt.close(fig)


def deviation_curves(sensor_name, headings_deg, curves, path=None, ylabel="deviation [deg]"):
    """Deviation (or change) against magnetic heading, one curve per state. Returns PNG bytes."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(7, 3.6), dpi=130)
    for state, values in curves.items():
        ax.plot(headings_deg, values, label=state, lw=1.6)
    ax.axhline(0, color="black", lw=0.6)
    ax.set_xlim(0, 360)
    ax.set_xticks(range(0, 361, 45))
    ax.set_xlabel("magnetic heading [deg]")
    ax.set_ylabel(ylabel + " (east +)")
    ax.set_title(sensor_name)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7)
    fig.tight_layout()
    data = _save(fig, path)
    plt.close(fig)
    return data


def _stretches(points_m, scale):
    """Consecutive (y, x) segments of a polyline for a LineCollection, and each one's mean z."""
    points = points_m / scale
    segments = np.stack([points[:-1][:, [1, 0]], points[1:][:, [1, 0]]], axis=1)
    return segments, (points[:-1, 2] + points[1:, 2]) / 2


def plan_view(plan, path=None, fmt=None):
    """Plan view of the runs, sensors, equipment and volumes (x forward up the page, y port to
    the left).

    Each straight stretch of a run is coloured by its height (the mean z of its ends), with a
    colour bar, and each run's label gives its length-weighted mean height; sensors and
    equipment are labelled with their heights. Equipment with a labelled safe distance has it
    drawn as a dashed circle.
    """
    plt = _pyplot()
    from matplotlib.collections import LineCollection
    from matplotlib.colors import Normalize

    from ..spot import plan_extent

    scale, unit = _scale(plan)
    low, high = (v / scale for v in plan_extent(plan, margin_m=0.0))
    fig, ax = plt.subplots(figsize=(6.6, 7), dpi=130)
    pieces = []
    for run in plan.runs:
        pieces.append((_stretches(run.geometry.route_m, scale), "-", 1.6))
        if run.geometry.return_kind == "separate":
            pieces.append((_stretches(run.geometry.return_route_m, scale), "--", 1.1))
    heights = np.concatenate([z for (_, z), _, _ in pieces]) if pieces else np.zeros(1)
    z_low, z_high = float(heights.min()), float(heights.max())
    if z_high - z_low < 1e-9:                        # a flat plan: a colour bar of some width
        z_low, z_high = z_low - 0.5, z_high + 0.5
    norm = Normalize(z_low, z_high)
    lines = None
    for (segments, z), style, width in pieces:
        lines = LineCollection(segments, cmap="plasma", norm=norm, linestyles=style,
                               linewidths=width)
        lines.set_array(z)
        ax.add_collection(lines)
    for run in plan.runs:
        route = run.geometry.route_m / scale
        lengths = np.linalg.norm(np.diff(route, axis=0), axis=1)
        mean_z = float(((route[:-1, 2] + route[1:, 2]) / 2 * lengths).sum() / lengths.sum())
        middle = route[len(route) // 2]
        ax.annotate(f"{run.name} (z {mean_z:.2f})", (middle[1], middle[0]), fontsize=6,
                    color="#333333", alpha=0.85)
    if lines is not None:
        bar = fig.colorbar(lines, ax=ax, shrink=0.7)
        bar.set_label(f"height z of each stretch of run (mean of its ends) [{unit}]")
    for i, sensor in enumerate(plan.sensors):
        here = sensor.position_m / scale
        ax.plot(here[1], here[0], marker="o", ms=7, color="red", ls="none",
                label="sensor" if i == 0 else None, zorder=5)
        ax.annotate(f"{sensor.name} (z {here[2]:.2f})", (here[1], here[0]), fontsize=7,
                    color="red", xytext=(4, 4), textcoords="offset points")
    for i, item in enumerate(plan.equipment):
        here = item.position_m / scale
        ax.plot(here[1], here[0], marker="s", ms=6, color="#7d3c98", ls="none",
                label="equipment" if i == 0 else None, zorder=5)
        ax.annotate(f"{item.name} (z {here[2]:.2f})", (here[1], here[0]), fontsize=6,
                    color="#7d3c98", xytext=(4, -9), textcoords="offset points")
        if item.safe_distance_m:
            ax.add_patch(plt.Circle((here[1], here[0]), item.safe_distance_m / scale, fill=False,
                                    ls=":", lw=0.9, color="#7d3c98"))
    _draw_volumes(ax, plan, plan.volumes, scale)
    span = np.ptp(np.stack([low, high]), axis=0).max() * 0.08 + 0.05 / scale
    ax.set_xlim(high[1] + span, low[1] - span)        # port left
    ax.set_ylim(low[0] - span, high[0] + span)
    ax.set_aspect("equal")
    ax.set_xlabel(f"y [{unit}]   (← port | starboard →)")
    ax.set_ylabel(f"x forward [{unit}]")
    ax.set_title("Plan view: runs coloured by height (dashed: separate returns),\nsensors, "
                 f"equipment (dotted: labelled safe distance); heights z in {unit}", fontsize=9)
    ax.grid(alpha=0.2)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(loc="lower right", fontsize=7)
    fig.tight_layout()
    data = _save(fig, path, fmt)
    plt.close(fig)
    return data


def budget_bars(analysis, path=None, fmt=None):
    """Each sensor's held figure by state, as percent of its own budget (degrees or nT alike).

    States a sensor is not relied on in are drawn pale and outlined, and the legend says so: their
    figure is shown, not held against the budget.
    """
    plt = _pyplot()
    from matplotlib.colors import to_rgb
    from matplotlib.patches import Patch

    fig, ax = plt.subplots(figsize=(7, 3.6), dpi=130)
    states = analysis.plan.state_names
    width = 0.8 / max(1, len(analysis.sensors))
    colours = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    for i, result in enumerate(analysis.sensors):
        colour = colours[i % len(colours)]
        used = [result.sensor.budget.share(st.held) * 100 for st in result.states]
        bars = ax.bar(np.arange(len(states)) + i * width, np.minimum(used, 300.0), width,
                      color=colour, label=f"{result.sensor.name} ({result.sensor.budget})")
        # Pale by a lighter solid colour and an outline, not by transparency or hatching: the PDF
        # writer reads the chart as vectors and draws neither (a hatched bar came out empty).
        pale = tuple(0.35 * c + 0.65 for c in to_rgb(colour))
        for bar, st in zip(bars, result.states):
            if not st.used:
                bar.set_facecolor(pale)
                bar.set_edgecolor(colour)
                bar.set_linewidth(0.8)
        ax.bar_label(bars, labels=[f"{u:.0f} %" + ("" if st.used else "\nnot used")
                                   for u, st in zip(used, result.states)],
                     fontsize=6, padding=1)
    ax.axhline(100, color="red", lw=1, ls="--")
    ax.set_ylim(0, 340)
    ax.set_xticks(np.arange(len(states)) + width * (len(analysis.sensors) - 1) / 2, states)
    ax.set_ylabel("held figure [% of budget]")
    ax.set_title("Held figure by state (red: the budget; bars stop at 300 %)", fontsize=9)
    handles, _ = ax.get_legend_handles_labels()
    handles.append(Patch(facecolor="#d9d9d9", edgecolor="grey",
                         label="state not relied on (not held): pale, outlined"))
    ax.legend(handles=handles, fontsize=7)
    fig.tight_layout()
    data = _save(fig, path, fmt)
    plt.close(fig)
    return data


def _save(fig, path, fmt=None):
    """Write the figure to ``path`` (atomically) or return its bytes when path is None, as
    ``fmt`` ("png", "svg" or "pdf"; default: by the path's suffix, else PNG)."""
    buffer = io.BytesIO()
    if fmt is None:
        suffix = str(path).lower().rsplit(".", 1)[-1] if path is not None else "png"
        fmt = suffix if suffix in ("svg", "pdf") else "png"
    fig.savefig(buffer, format=fmt)
    data = buffer.getvalue()
    if path is not None:
        from ..files import write_atomically

        def save(temporary):
            with open(temporary, "wb") as handle:
                handle.write(data)

        write_atomically(path, save)
    return data


def card_curves(card, path=None, fmt=None):
    """One sensor's card drawn every degree, all states: the figure of known direction, the band
    the parts of unknown direction allow (shaded), and each used state's held figure as dashed
    lines (it also counts the worst attitude); states not relied on drawn thin and dashed."""
    plt = _pyplot()
    scalar = not card.sensor.budget.degrees
    fig, ax = plt.subplots(figsize=(7, 3.8), dpi=130)
    colours = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    for i, st in enumerate(card.states):
        colour = colours[i % len(colours)]
        used = st.status.value != "not used"
        values = st.curve_deviation_deg
        band = np.minimum(st.curve_band, 180.0)
        ax.plot(st.curve_headings_deg, values, lw=1.6 if used else 0.9, color=colour,
                ls="-" if used else "--",
                label=st.state + ("" if used else " (not relied on)"))
        if np.any(band > 0):
            ax.fill_between(st.curve_headings_deg, values - band, values + band, color=colour,
                            alpha=0.15 if used else 0.07, lw=0)
        if used and np.isfinite(st.held) and (scalar or st.held < 180):
            for sign in (1, -1):
                ax.axhline(sign * st.held, color=colour, lw=0.8, ls=":")
    ax.axhline(0, color="black", lw=0.6)
    ax.set_xlim(0, 360)
    ax.set_xticks(range(0, 361, 45))
    ax.set_xlabel("magnetic heading [deg]")
    ax.set_ylabel("total-field error [nT]" if scalar else "deviation [deg] (east +)")
    ax.set_title(f"{card.sensor.name}: shaded, what unknown directions allow; dotted, the held "
                 "figure", fontsize=9)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7)
    fig.tight_layout()
    data = _save(fig, path, fmt)
    plt.close(fig)
    return data
