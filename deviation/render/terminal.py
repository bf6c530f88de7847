"""The deviation budget as rich tables in a terminal, or plain text when piped."""

from __future__ import annotations

from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from ..units import LENGTH_UNITS, format_length
from . import view, words
from .words import CAUTIONS, degrees

#: Width of tables written to a file or a pipe, where no terminal says how wide it is.
PIPED_WIDTH = 120


def make_console(file=None, width=None):
    console = Console(file=file, width=width, highlight=False)
    if width is None and not console.is_terminal:
        console = Console(file=file, width=PIPED_WIDTH, highlight=False)
    return console


def _box(console):
    return box.SIMPLE_HEAVY if console.is_terminal else box.ASCII2


def _style(status):
    return {"ok": "green", "over": "bold red", "unused": "dim"}[status]


def _ok(flag):
    return _style("ok" if flag else "over")


def site_line(site):
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


def render_site(site, console):
    """The site's field, one quantity a line."""
    side = "E" if site.declination_deg >= 0 else "W"
    when = site.date_text if not site.date_text.replace(".", "", 1).isdigit() else (
        f"{site.decimal_year:.2f} (decimal year)")
    console.print(Text(f"WMM2025 at {site.latitude_deg:.4f}°, {site.longitude_deg:.4f}°, "
                       f"{site.altitude_m:g} m, {when}"))
    lines = [("horizontal H", f"{site.horizontal_t * 1e6:9.3f} µT"),
             ("vertical Z", f"{site.vertical_t * 1e6:9.3f} µT (down positive)"),
             ("total F", f"{site.total_t * 1e6:9.3f} µT"),
             ("declination", f"{abs(site.declination_deg):9.2f}° {side} "
                             f"± {site.declination_uncertainty_deg:.2f}° "
                             f"({site.declination_change_deg_per_year:+.2f}°/year)"),
             ("inclination", f"{site.inclination_deg:9.2f}°"),
             ("zone", {"ok": "ok", "caution": "CAUTION: H below 6 µT, compasses degrade",
                       "blackout": "BLACKOUT: H below 2 µT, a magnetic compass is unreliable"}
              [site.zone])]
    for label, value in lines:
        console.print(Text(f"  {label:<14} {value}"))


def render_check(analysis, console, *, all_runs=False, hints=True):
    plan = analysis.plan
    unit = plan.site.units
    console.print(Text(f"Deviation budget · {plan.source}", style="bold"))
    console.print(Text(f"Site  {site_line(analysis.site)}"))
    warning = words.zone_warning(analysis.site)
    if warning:
        console.print(Text(warning, style="bold yellow"))
    examples = words.example_rows(plan.skipped_examples)
    if examples:
        console.print(Text(examples[0].upper() + examples[1:] + ".", style="bold yellow"))
    console.print()

    summary = Table(title=Text("Figure held against each budget (degrees; nT for a total-field "
                               "magnetometer)"), box=_box(console),
                    title_justify="left")
    summary.add_column("sensor")
    summary.add_column("budget", justify="right")
    for state in plan.state_names:
        summary.add_column(Text(state), justify="right")
    summary.add_column("verdict")
    rows = view.summary_rows(analysis)
    for row in rows:
        cells = [Text(row.sensor), row.budget_text]
        for cell in row.cells:
            text = cell.text if cell.status != "unused" else f"({cell.text})"
            cells.append(Text(text, style=_style(cell.status)))
        cells.append(Text(row.verdict, style=_ok(row.within_budget)))
        summary.add_row(*cells)
    console.print(summary)
    if any(c.status == "unused" for row in rows for c in row.cells):
        console.print("  (in brackets: a state the sensor is not relied on in; not held against "
                      "its budget)")
    for row in rows:
        if row.adjustment_absorbs_deg is not None:
            console.print(Text(f"  {row.sensor}: the adjustment in {row.reference_state!r} takes "
                               f"out {words.with_degree_sign(row.adjustment_absorbs_deg)}"))

    for result in analysis.sensors:
        _render_sensor(result, analysis, console, unit, all_runs, hints)

    if analysis.findings:
        console.print(Text("Findings", style="bold"))
        for finding in analysis.findings:
            console.print(Text(f"  • {words.finding_text(finding)}"))
        console.print()
    console.print(Text("Cautions", style="bold"))
    for caution in CAUTIONS:
        console.print(f"  • {caution}")


def _render_sensor(result, analysis, console, unit, all_runs, hints):
    sensor = result.sensor
    console.print()
    adjusted = (f"adjusted in {sensor.reference_state!r}, so the residual after adjustment counts"
                if sensor.reference_state else "not adjusted, so the absolute deviation counts")
    attitude = []
    if sensor.max_heel_deg:
        attitude.append(f"heel ±{sensor.max_heel_deg:g}°")
    if sensor.max_pitch_deg:
        attitude.append(f"pitch ±{sensor.max_pitch_deg:g}°")
    console.print(Text(f"{sensor.name}", style="bold underline"))
    console.print(Text(f"  {sensor.kind} at {words.position(sensor.position_m, unit)}; budget "
                       f"{words.budget_text(sensor)}; {adjusted}"
                       + ("; " + ", ".join(attitude) if attitude else "")))
    if sensor.used_in is not None:
        console.print(Text("  relied on in: " + ", ".join(sensor.used_in)))
    for st in result.states:
        _render_state(st, sensor, analysis, console, unit, all_runs, hints)
    lines = words.fix_set_lines(result.fixes, unit, sensor.budget.unit) if hints else []
    if lines:
        console.print()
        console.print(Text(f"{sensor.name}: the set of fixes, each figure with the changes "
                           "before it made (every state it is used in, worst attitude and "
                           "switching)", style="bold"))
        for line in lines:
            console.print(Text(f"  {line}"))


def _render_state(st, sensor, analysis, console, unit, all_runs, hints):
    reference = sensor.reference_state
    status = view.STATUS_CLASS[st.status]
    console.print()
    console.print(Text(view.state_title(sensor, st), style=_style(status)))
    table = Table(box=_box(console), padding=(0, 1), pad_edge=False)
    table.add_column("run / item", ratio=1, overflow="fold")
    figure_unit = sensor.budget.unit
    degrees_shown = sensor.budget.degrees
    for name in ("A", "nearest", "horiz µT", "vert µT") + (
            ("alone °",) if degrees_shown else (f"alone {figure_unit.label}",)):
        table.add_column(name, justify="right", no_wrap=True)
    if reference and degrees_shown:
        table.add_column("residual °", justify="right", no_wrap=True)
    table.add_column("of budget", justify="right", no_wrap=True)
    rows, hidden = view.budget_rows(sensor, st, all_runs=all_runs)
    for row in rows:
        cells = [Text(row.name + (" ≤" if row.bound else "")),
                 "" if row.current_a is None else f"{row.current_a:g}",
                 format_length(row.nearest_m, unit), words.microtesla(row.horizontal_t),
                 "" if row.vertical_t is None else words.microtesla(row.vertical_t),
                 degrees(row.max_deviation_deg) if degrees_shown
                 else words.figure_number(row.counted, figure_unit)]
        if reference and degrees_shown:
            cells.append("adjusted" if row.compensated else degrees(row.change_deg))
        cells.append(words.share(row.share_of_budget, row.counted, figure_unit))
        table.add_row(*cells)
    console.print(table)
    if hidden:
        console.print(f"  {hidden} more run(s) below {view.NEGLIGIBLE_SHARE * 100:g} % of the "
                      "budget each (--all-runs lists them)")
    if any(row.bound for row in rows):
        console.print("  ≤ includes an upper bound: a labelled safe distance (IEC 60945), a magnet "
                      "of unknown orientation, a pair whose lie the plan does not say, or a twisted "
                      "run's untwisted ends and floor")
    for total in view.total_rows(sensor, st):
        line = f"  {total.label}: {words.with_degree_sign(total.value_deg)}"
        if total.held:
            share = ("" if st.overwhelmed else
                     f" ({sensor.budget.share(st.held) * 100:.0f} % of the budget)")
            console.print(Text(f"  {total.label}: {words.held_text(sensor, st)} of "
                               f"{words.budget_text(sensor)}{share}", style=_style(status)))
        else:
            console.print(Text(line))
    for line in view.total_field_lines(sensor, st):
        console.print(Text(f"  {line}", style=_style(status) if "held" in line else ""))
    if sensor.kind == "magnetometer":
        console.print(f"  disturbance {st.fraction_of_total * 100:.1f} % of the Earth's total "
                      f"field ({analysis.site.total_t * 1e6:.1f} µT)")
    if st.overwhelmed:
        console.print(Text("  The disturbance is at least as strong as the Earth's horizontal "
                           "field here: the sensor can point anywhere.", style="bold red"))
    if hints:
        for remedy in st.remedies:
            text = words.remedy_text(remedy, unit, analysis.plan.source, sensor.budget.unit)
            console.print(Text(f"  → {text}"))


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
    figure_unit = sensor.budget.unit
    table = Table(title=Text(f"Best spots for {sensor.name} (budget {words.budget_text(sensor)})"),
                  box=_box(console), title_justify="left")
    table.add_column("#", justify="right")
    if any(s.name for s in search.spots):
        table.add_column("spot")
    # One unit for the three coordinates of a spot, as words.position writes a position.
    axis_unit, axis_digits = ("in", 1) if unit in ("ft", "in") else ("m", 3)
    for axis in "xyz":
        table.add_column(f"{axis} {axis_unit}", justify="right", no_wrap=True)
    table.add_column(f"figure {figure_unit.label}", justify="right")
    table.add_column("worst state")
    table.add_column("dominated by", overflow="fold")
    for rank, s in enumerate(search.spots, start=1):
        named = [s.name or ""] if any(x.name for x in search.spots) else []
        runs = ", ".join(f"{name} {share * 100:.0f} %" for name, share in s.dominant_runs)
        coordinates = (words.number(v / LENGTH_UNITS[axis_unit], axis_digits)
                       for v in s.position_m)
        table.add_row(str(rank), *(Text(n) for n in named), *coordinates,
                      Text(words.figure_number(s.held, figure_unit), style=_ok(s.within_budget)),
                      Text(s.worst_state), Text(runs or "—"))
    if search.spots and not search.within_budget:
        table.caption = Text(f"No spot meets the {words.budget_text(sensor)} budget: the best "
                             f"found uses {words.figure_text(search.spots[0].held, figure_unit)}.",
                             style="bold red")
        table.caption_justify = "left"
    console.print(table)
    if search.best_on_edge:
        # The faces in the words of a vessel's plan (x forward, y port, z up).
        named = {"x low": "aft", "x high": "forward", "y low": "starboard", "y high": "port",
                 "z low": "bottom", "z high": "top"}
        faces = [named[f] for f in search.edge_faces]
        faces = " and ".join([", ".join(faces[:-1]), faces[-1]] if len(faces) > 1 else faces)
        plural = "s" if len(search.edge_faces) > 1 else ""
        console.print(Text(f"The best spot lies on the edge of the searched box: the box may be "
                           f"too small (the spot is on its {faces} face{plural}).",
                           style="yellow"))
    if search.volumes:
        kinds = [(kind, [v.name for v in search.volumes if v.kind == kind])
                 for kind in ("mount in", "keep out")]
        listed = "; ".join(f"{kind} " + ", ".join(f'"{n}"' for n in names)
                           for kind, names in kinds if names)
        console.print(Text(f"Volumes honoured: {listed}."))
    if search.excluded:
        console.print(Text("Left out by the volumes: " + "; ".join(
            f"{name} ({why})" for name, why in search.excluded) + "."))
    if search.current is not None:
        now = search.current
        inside = [v.name for v in search.volumes
                  if v.kind == "keep out" and v.contains(now.position_m)[0]]
        where = f' (inside keep-out "{inside[0]}")' if inside else ""
        console.print(Text(f"Where it is now {words.position(now.position_m, unit)}{where}: "
                           f"{words.figure_text(now.held, figure_unit)} in {now.worst_state}"))
    if search.step_m:
        console.print(Text(f"Searched {search.evaluated:,} positions for a {search.grid_points:,}-point "
                      f"grid at {format_length(search.step_m, unit)} steps in {seconds:.1f} s."))
    console.print("The figure is the one held against the budget: the worst state it is used "
                  "in, at the worst attitude, after adjustment where it has a reference state. "
                  "Check the spot for vibration, heat, access and equipment not in the plan "
                  "before mounting.")


def render_clearance(table, console, unit, source, notes, warning=None):
    """The clearance table: least distance per current, then what it assumes and the cautions.

    Parameters
    ----------
    table : deviation.physics.clearance.ClearanceTable
    console : rich Console
    unit : str
        Units of the distances printed ("m" or "ft").
    source : str
        Where the horizontal field came from, in words.
    notes : sequence of str
        What each column assumes, one sentence each.
    warning : str, optional
        The site's zone warning, if any.
    """
    console.print(Text(f"Least distance from a compass for a {table.budget_deg:g}° budget",
                       style="bold"))
    console.print(Text(f"H {table.horizontal_t * 1e6:.3f} µT ({source}); allowed disturbance "
                       f"H sin {table.budget_deg:g}° = {table.allowed_t * 1e6:.4f} µT"))
    if warning:
        console.print(Text(warning, style="bold red"))
    out = Table(box=_box(console))
    out.add_column("current A", justify="right")
    out.add_column("single conductor", justify="right")
    out.add_column(Text(f"pair at {format_length(table.spacing_m, unit)}"), justify="right")
    out.add_column(Text(f"twisted pair, {format_length(table.lay_m, unit)} lay"),
                   justify="right")
    for row in table:
        out.add_row(f"{row.current_a:g}", format_length(row.single_m, unit),
                    format_length(row.pair_m, unit), format_length(row.twisted_m, unit))
    console.print(out)

    def bullets(lines):              # wrapped lines stay indented under their bullet
        grid = Table.grid(padding=(0, 1))
        grid.add_column(width=3, justify="right")
        grid.add_column()
        for line in lines:
            grid.add_row("•", Text(line))
        console.print(grid)

    bullets(notes)
    console.print()
    console.print(Text("Cautions", style="bold"))
    bullets(CAUTIONS)


def _signed(deviation):
    side = "E" if deviation > 0.005 else "W" if deviation < -0.005 else " "
    return f"{abs(deviation):.2f}°{side}"


def render_cards(cards, analysis, console):
    console.print(Text("Predicted deviation card", style="bold"))
    console.print(Text(f"Site  {site_line(analysis.site)}"))
    console.print("Level, from the plan's wiring and oriented magnets; east positive. Steer the "
                  "compass heading to make good the magnetic heading.")
    for card in cards:
        sensor = card.sensor
        console.print()
        reference = sensor.reference_state
        note = (f"; after adjustment in {reference!r} (before it, in brackets)" if reference
                else "")
        table = Table(title=Text(f"{sensor.name} ({sensor.kind}){note}"), title_justify="left",
                      box=_box(console), padding=(0, 1), pad_edge=False)
        table.add_column("magnetic", justify="right", no_wrap=True)
        for st in card.states:
            table.add_column(Text(f"{st.state}\ndeviation"), justify="right", no_wrap=True)
            if card.steers:
                table.add_column("steer", justify="right", no_wrap=True)
        for i, psi in enumerate(card.states[0].headings_deg):
            cells = [f"{psi:03.0f}°"]
            for st in card.states:
                text = _signed(st.deviation_deg[i])
                if st.unadjusted_deg is not None:
                    text += f" ({_signed(st.unadjusted_deg[i])})"
                cells.append(text)
                if card.steers:
                    cells.append(f"{st.compass_deg[i]:05.1f}°")
            table.add_row(*cells)
        console.print(table)
    console.print()
    console.print(Text("Cautions", style="bold"))
    for caution in CAUTIONS:
        console.print(f"  • {caution}")
