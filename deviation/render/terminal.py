"""The deviation budget as rich tables in a terminal, or plain text when piped."""

from __future__ import annotations

import numpy as np
from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from ..units import format_length
from .common import CAUTIONS, degrees, verdict

def make_console(file=None, width=None):
    console = Console(file=file, width=width, highlight=False)
    return console


def _box(console):
    return box.SIMPLE_HEAVY if console.is_terminal else box.ASCII2


def _style(ok):
    return "green" if ok else "bold red"


def site_line(site, units_system):
    parts = [f"H {site.horizontal_t * 1e6:.2f} µT", f"Z {site.vertical_t * 1e6:.2f} µT",
             f"F {site.total_t * 1e6:.2f} µT"]
    if site.declination_deg is not None:
        side = "E" if site.declination_deg >= 0 else "W"
        unc = (f" ±{site.declination_uncertainty_deg:.2f}°"
               if site.declination_uncertainty_deg is not None else "")
        parts.append(f"declination {abs(site.declination_deg):.2f}° {side}{unc}")
    parts.append(f"inclination {site.inclination_deg:.1f}°")
    source = "WMM2025" if site.source == "WMM2025" else "from the plan"
    parts.append(f"{source}, {site.date_text}")
    return "  ".join(parts)


def zone_warning(site):
    if site.zone == "blackout":
        return ("The site is in the blackout zone (H below 2 µT): a magnetic compass is unreliable "
                "here whatever the wiring.")
    if site.zone == "caution":
        return ("The site is in the caution zone (H below 6 µT): compasses degrade here and small "
                "disturbances give large deviations.")
    return None


def _where(position, unit):
    return ", ".join(f"{axis} {format_length(v, unit)}" for axis, v in zip("xyz", position))


def render_check(analysis, console, *, all_runs=False, findings=(), hints=True):
    plan = analysis.plan
    unit = plan.site.units
    console.print(Text(f"Deviation budget · {plan.source}", style="bold"))
    console.print(f"Site  {site_line(analysis.site, unit)}")
    warning = zone_warning(analysis.site)
    if warning:
        console.print(Text(warning, style="bold yellow"))
    console.print()

    summary = Table(title="Figure held against each budget [deg]", box=_box(console),
                    title_justify="left")
    summary.add_column("sensor")
    summary.add_column("budget", justify="right")
    for state in plan.state_names:
        summary.add_column(state, justify="right")
    summary.add_column("verdict")
    for result in analysis.sensors:
        cells = [result.sensor.name, f"{result.sensor.budget_deg:g}"]
        for st in result.states:
            cells.append(Text(degrees(st.budget_used_deg, st.overwhelmed),
                              style=_style(st.within_budget)))
        over = [st.state for st in result.states if not st.within_budget]
        cells.append(Text("within budget" if not over else "over in " + ", ".join(over),
                          style=_style(not over)))
        summary.add_row(*cells)
    console.print(summary)

    for result in analysis.sensors:
        _render_sensor(result, analysis, console, unit, all_runs, hints)

    if findings:
        console.print(Text("Findings", style="bold"))
        for finding in findings:
            console.print(f"  • {finding}")
        console.print()
    console.print(Text("Cautions", style="bold"))
    for caution in CAUTIONS:
        console.print(f"  • {caution}")


#: Runs below this share of the budget are summed on one line unless all runs are asked for.
NEGLIGIBLE_SHARE = 0.005


def _render_sensor(result, analysis, console, unit, all_runs, hints):
    sensor = result.sensor
    console.print()
    adjusted = (f"adjusted in {sensor.reference_state!r}, so the change from it counts"
                if sensor.reference_state else "not adjusted, so the absolute deviation counts")
    heel = f"; heel ±{sensor.max_heel_deg:g}°" if sensor.max_heel_deg else ""
    console.print(Text(f"{sensor.name}", style="bold underline"))
    console.print(f"  {sensor.kind} at {_where(sensor.position_m, unit)}; budget "
                  f"{sensor.budget_deg:g}°; {adjusted}{heel}")
    for st in result.states:
        _render_state(st, sensor, analysis, console, unit, all_runs, hints)


def _render_state(st, sensor, analysis, console, unit, all_runs, hints):
    reference = sensor.reference_state
    is_reference = reference == st.state
    title = (f"{st.state}: {degrees(st.budget_used_deg, st.overwhelmed)}° of "
             f"{sensor.budget_deg:g}° — {verdict(st, sensor.budget_deg)}"
             + (" (the reference state)" if is_reference else ""))
    console.print()
    console.print(Text(title, style=_style(st.within_budget)))
    table = Table(box=_box(console), padding=(0, 1), pad_edge=False)
    table.add_column("run / item", ratio=1, overflow="fold")
    for name in ("A", "nearest", "horiz µT", "vert µT", "max °"):
        table.add_column(name, justify="right", no_wrap=True)
    if reference:
        table.add_column("change °", justify="right", no_wrap=True)
    table.add_column("budget", justify="right", no_wrap=True)
    if all_runs:
        shown, hidden = st.runs, []
    else:
        shown = [r for r in st.runs if r.share_of_budget >= NEGLIGIBLE_SHARE] or st.runs[:1]
        hidden = [r for r in st.runs if r not in shown]
    for run in shown:
        horiz = float(np.hypot(run.field_t[0], run.field_t[1]))
        row = [run.name, f"{run.current_a:g}", format_length(run.nearest_m, unit),
               f"{horiz * 1e6:.3f}", f"{run.field_t[2] * 1e6:.3f}",
               degrees(run.max_deviation_deg)]
        if reference:
            row.append(degrees(run.change_from_reference_deg))
        row.append(f"{run.share_of_budget * 100:.0f} %")
        table.add_row(*row)
    for item in st.equipment:
        oriented = item.field_t is not None
        size = float(np.hypot(item.field_t[0], item.field_t[1])) if oriented else item.bound_t
        counted = 0.0 if item.compensated else item.max_deviation_deg
        table.add_row(item.name + ("" if oriented else " ≤"), "", format_length(item.distance_m, unit),
                      f"{size * 1e6:.3f}", f"{item.field_t[2] * 1e6:.3f}" if oriented else "",
                      degrees(item.max_deviation_deg),
                      *(["adjusted" if item.compensated else degrees(counted)] if reference else []),
                      f"{counted / sensor.budget_deg * 100:.0f} %")
    console.print(table)
    if hidden:
        console.print(f"  {len(hidden)} more run(s) below {NEGLIGIBLE_SHARE * 100:g} % of the "
                      "budget each (--all-runs lists them)")
    if any(item.field_t is None for item in st.equipment):
        console.print("  ≤ an upper bound: labelled safe distance (IEC 60945) or a magnet of "
                      "unknown orientation")
    lined_up = f"; if every field lined up {degrees(st.magnitude_bound_deg)}°"
    bounds = (f"; with equipment bounds {degrees(st.max_deviation_deg)}°"
              if st.equipment_bound_t else "")
    console.print(f"  all together (vector sum) {degrees(st.vector_deviation_deg)}°{lined_up}"
                  f"{bounds}")
    figure = f"change from {reference!r}" if reference else "absolute deviation"
    heel_word = f", worst heel ±{sensor.max_heel_deg:g}°" if sensor.max_heel_deg else ""
    share = "" if st.overwhelmed else f" ({st.budget_used_deg / sensor.budget_deg * 100:.0f} %)"
    console.print(Text(f"  held against the budget ({figure}{heel_word}): "
                       f"{degrees(st.budget_used_deg, st.overwhelmed)}° of "
                       f"{sensor.budget_deg:g}°{share}", style=_style(st.within_budget)))
    if sensor.kind == "magnetometer":
        console.print(f"  disturbance {st.fraction_of_total * 100:.1f} % of the Earth's total "
                      f"field ({analysis.site.total_t * 1e6:.1f} µT)")
    if st.overwhelmed:
        console.print(Text("  The disturbance is at least as strong as the Earth's horizontal "
                           "field here: the sensor can point anywhere.", style="bold red"))
    if hints:
        for hint in st.hints:
            console.print(f"  → {hint.text()}")


class progress_bar:
    """A context giving the spot search a progress callback; draws only on a terminal."""

    def __init__(self, enabled=True, minimum=200_000):
        self.enabled = enabled
        self.minimum = minimum
        self.progress = None

    def __enter__(self):
        def start(total):
            console = Console(stderr=True)
            if not (self.enabled and console.is_terminal and total >= self.minimum):
                return None
            from rich.progress import Progress

            self.progress = Progress(console=console, transient=True)
            self.progress.start()
            task = self.progress.add_task("searching", total=total)
            return lambda n: self.progress.advance(task, n)

        return start

    def __exit__(self, *exc):
        if self.progress is not None:
            self.progress.stop()
        return False


def render_spots(search, plan, console, seconds):
    unit = plan.site.units
    sensor = search.sensor
    table = Table(title=f"Best spots for {sensor.name} (budget {sensor.budget_deg:g}°)",
                  box=_box(console), title_justify="left")
    table.add_column("#", justify="right")
    if any(s.name for s in search.spots):
        table.add_column("spot")
    for axis in "xyz":
        table.add_column(axis, justify="right", no_wrap=True)
    table.add_column("figure °", justify="right")
    table.add_column("worst state")
    table.add_column("dominated by", overflow="fold")
    for rank, s in enumerate(search.spots, start=1):
        named = [s.name or ""] if any(x.name for x in search.spots) else []
        runs = ", ".join(f"{name} {share * 100:.0f} %" for name, share in s.dominant_runs)
        table.add_row(str(rank), *named, *(format_length(v, unit) for v in s.position_m),
                      Text(degrees(s.budget_used_deg), style=_style(s.within_budget)),
                      s.worst_state, runs or "—")
    console.print(table)
    if search.current is not None:
        now = search.current
        console.print(f"Where it is now ({_where(now.position_m, unit)}): "
                      f"{degrees(now.budget_used_deg)}° in {now.worst_state}")
    if search.step_m:
        console.print(f"Searched {search.evaluated:,} positions for a {search.grid_points:,}-point "
                      f"grid at {format_length(search.step_m, unit)} steps in {seconds:.1f} s.")
    console.print("The figure is the one held against the budget: the worst state, heel and "
                  "change from the reference state. Check the spot for vibration, heat, access "
                  "and equipment not in the plan before mounting.")


def _signed(deviation):
    side = "E" if deviation > 0.005 else "W" if deviation < -0.005 else " "
    return f"{abs(deviation):.2f}°{side}"


def render_cards(cards, analysis, console):
    console.print(Text("Predicted deviation card", style="bold"))
    console.print(f"Site  {site_line(analysis.site, analysis.plan.site.units)}")
    console.print("Level, from the plan's wiring and oriented magnets; east positive. Steer the "
                  "compass heading to make good the magnetic heading.")
    for card in cards:
        sensor = card.sensor
        console.print()
        reference = sensor.reference_state
        note = f"; change from {reference!r} in brackets" if reference else ""
        table = Table(title=f"{sensor.name} ({sensor.kind}){note}", title_justify="left",
                      box=_box(console), padding=(0, 1), pad_edge=False)
        table.add_column("magnetic", justify="right", no_wrap=True)
        for st in card.states:
            table.add_column(f"{st.state}\ndeviation", justify="right", no_wrap=True)
            table.add_column("steer", justify="right", no_wrap=True)
        for i, psi in enumerate(card.states[0].headings_deg):
            cells = [f"{psi:03.0f}°"]
            for st in card.states:
                text = _signed(st.deviation_deg[i])
                if st.change_deg is not None and st.state != reference:
                    text += f" ({st.change_deg[i]:+.2f})"
                cells += [text, f"{st.compass_deg[i]:05.1f}°"]
            table.add_row(*cells)
        console.print(table)
    console.print()
    console.print(Text("Cautions", style="bold"))
    for caution in CAUTIONS:
        console.print(f"  • {caution}")
