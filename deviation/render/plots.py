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


def spot_map(plan, search, x, y, figure, path):
    """Map of the worst-case figure over a horizontal slice, with runs, sensor and best spots."""
    plt = _pyplot()
    from matplotlib.colors import LogNorm

    sensor = search.sensor
    scale, unit = _scale(plan)
    x, y = x / scale, y / scale
    fig, ax = plt.subplots(figsize=(7, 8), dpi=130)
    shown = np.where(np.isfinite(figure), figure, np.nan)
    low = max(1e-3, float(np.nanmin(shown)) if np.isfinite(np.nanmin(shown)) else 1e-3)
    high = max(low * 10, float(np.nanmax(shown)))
    mesh = ax.pcolormesh(y, x, shown, norm=LogNorm(vmin=low, vmax=high), cmap="viridis_r",
                         shading="auto")
    if low < sensor.budget_deg < high:
        ax.contour(y, x, shown, levels=[sensor.budget_deg], colors="white", linewidths=1.2)
    bar = fig.colorbar(mesh, ax=ax, shrink=0.8)
    bar.set_label(f"figure held against the budget [deg] (white line: the {sensor.budget_deg:g}° "
                  "budget)")
    _draw_runs(ax, plan, scale=scale)
    here = sensor.position_m / scale
    ax.plot(here[1], here[0], marker="x", ms=10, mew=2, color="red", label="sensor now",
            clip_on=False)
    if search.spots:
        best = search.spots[0].position_m / scale
        ax.plot(best[1], best[0], marker="*", ms=16, color="orange", mec="black",
                label="best spot", clip_on=False, zorder=5)
    ax.set_xlim(y.max(), y.min())                      # port (+y) on the left
    ax.set_ylim(x.min(), x.max())
    ax.set_aspect("equal")
    ax.set_xlabel(f"y [{unit}]   (← port | starboard →)")
    ax.set_ylabel(f"x forward [{unit}]")
    z = (search.spots[0].position_m[2] if search.spots else sensor.position_m[2]) / scale
    screen = " (change, first order)" if sensor.reference_state else ""
    ax.set_title(f"{sensor.name}: worst case over states{screen} at z = {z:.3g} {unit}")
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


def plan_view(plan, path=None):
    """Plan view of the runs and sensors (x forward up the page, y port to the left)."""
    plt = _pyplot()
    scale, unit = _scale(plan)
    routes = [r.geometry.route_m for r in plan.runs] + [s.position_m[None] for s in plan.sensors]
    everything = np.concatenate(routes) / scale
    fig, ax = plt.subplots(figsize=(6, 7), dpi=130)
    _draw_runs(ax, plan, scale=scale)
    for sensor in plan.sensors:
        here = sensor.position_m / scale
        ax.plot(here[1], here[0], marker="o", ms=7, color="red")
        ax.annotate(sensor.name, (here[1], here[0]), fontsize=7, color="red", xytext=(4, 4),
                    textcoords="offset points")
    span = np.ptp(everything, axis=0).max() * 0.08 + 0.05 / scale
    ax.set_xlim(everything[:, 1].max() + span, everything[:, 1].min() - span)   # port left
    ax.set_ylim(everything[:, 0].min() - span, everything[:, 0].max() + span)
    ax.set_aspect("equal")
    ax.set_xlabel(f"y [{unit}]   (← port | starboard →)")
    ax.set_ylabel(f"x forward [{unit}]")
    ax.set_title("Plan view: runs (dashed: separate returns) and sensors")
    ax.grid(alpha=0.2)
    fig.tight_layout()
    data = _save(fig, path)
    plt.close(fig)
    return data


def budget_bars(analysis, path=None):
    """Each sensor's budget use by state, as percent of its budget."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(7, 3.4), dpi=130)
    states = analysis.plan.state_names
    width = 0.8 / max(1, len(analysis.sensors))
    for i, result in enumerate(analysis.sensors):
        used = [st.budget_used_deg / result.sensor.budget_deg * 100 for st in result.states]
        bars = ax.bar(np.arange(len(states)) + i * width, np.minimum(used, 300.0), width,
                      label=result.sensor.name)
        ax.bar_label(bars, labels=[f"{u:.0f} %" for u in used], fontsize=6, padding=1)
    ax.axhline(100, color="red", lw=1, ls="--")
    ax.set_ylim(0, 330)
    ax.set_xticks(np.arange(len(states)) + width * (len(analysis.sensors) - 1) / 2, states)
    ax.set_ylabel("budget used [%]")
    ax.set_title("Budget use by state (red: the budget; bars stop at 300 %)")
    ax.legend(fontsize=7)
    fig.tight_layout()
    data = _save(fig, path)
    plt.close(fig)
    return data


def _save(fig, path):
    """Write the figure to ``path`` (atomically) or return PNG/SVG bytes when path is None."""
    buffer = io.BytesIO()
    fmt = "svg" if path is not None and str(path).lower().endswith(".svg") else "png"
    fig.savefig(buffer, format=fmt)
    data = buffer.getvalue()
    if path is not None:
        from ..files import write_atomically

        def save(temporary):
            with open(temporary, "wb") as handle:
                handle.write(data)

        write_atomically(path, save)
    return data


def card_curves(card, path=None):
    """Deviation curves of one sensor's card, drawn every degree, all states."""
    curves = {st.state: st.curve_deviation_deg for st in card.states}
    return deviation_curves(card.sensor.name, card.states[0].curve_headings_deg, curves, path)
