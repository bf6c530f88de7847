"""Command line: thin commands that parse, call one library function and render.

Heavy modules (numpy, rich, openpyxl, matplotlib, numba) are imported inside the commands, so that
``deviation --help`` answers at once.
"""

from __future__ import annotations

import functools
import json
import sys

import click

from . import __version__


class CommandProblem(click.ClickException):
    """A wrong command line or an impossible request: the message says what to do; exit 2."""

    exit_code = 2


class PlanProblem(click.ClickException):
    """Plan findings: one line each on stderr, exit status 2, nothing written."""

    exit_code = 2

    def __init__(self, findings, note="nothing was computed or written"):
        self.findings = findings
        count = len(findings)
        super().__init__(f"{count} problem{'s' if count != 1 else ''} in the plan; {note}.")

    def show(self, file=None):
        file = file or sys.stderr
        for finding in self.findings:
            click.echo(str(finding), file=file)
        click.echo(f"Error: {self.format_message()}", file=file)


def plan_errors(command):
    """Turn the library's own errors into clear messages with exit status 2."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        from .files import OutputError
        from .geomag import OutsideModelError
        from .plan import PlanError

        try:
            return command(*args, **kwargs)
        except PlanError as error:
            raise PlanProblem(error.findings) from None
        except (OutsideModelError, OutputError) as error:
            raise CommandProblem(str(error)) from None

    return wrapper


def find_sensor(plan, name):
    """The plan's sensor of this name (case and spaces ignored), or a clear error."""
    from .reader import key

    for sensor in plan.sensors:
        if key(sensor.name) == key(name):
            return sensor
    names = ", ".join(s.name for s in plan.sensors)
    raise CommandProblem(f'no sensor "{name}" in the plan; it has: {names}')


def load(plan_path):
    from .reader import read_plan

    return read_plan(plan_path)


def console_for(width):
    from .render.terminal import make_console

    return make_console(width=width)


width_option = click.option("--width", type=click.IntRange(60, 400), default=None,
                            help="Width of the printed tables in characters (default: the terminal's).")
json_option = click.option("--json", "as_json", is_flag=True,
                           help="Print the result as JSON on stdout, and nothing else.")
plan_argument = click.argument("plan", type=click.Path(exists=False, dir_okay=True))


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="deviation")
def main():
    """Check a DC wiring plan for the heading deviation it causes at compasses and magnetometers.

    A plan is an .xlsx workbook or a folder of .csv sheets; `deviation new PLAN.xlsx` writes a
    blank one to fill in. The figures plan an installation; they do not replace adjusting and
    swinging the compass after it.
    """


@main.command()
@plan_argument
@json_option
@click.option("--all-runs", is_flag=True, help="List every run, not only the largest ones.")
@click.option("--report", type=click.Path(dir_okay=False),
              help="Also write a report: FILE.xlsx or FILE.html.")
@width_option
@plan_errors
def check(plan, as_json, all_runs, report, width):
    """Print the deviation budget of every sensor in every operating state.

    Exit status: 0 every sensor within its budget in every state, 1 at least one over budget,
    2 the plan or the command line is wrong.
    """
    from .advice import advise
    from .analysis import analyse

    the_plan = load(plan)
    analysis = analyse(the_plan)
    findings = advise(analysis)
    if report:
        from .render.reports import write_report

        write_report(analysis, findings, report)
    if as_json:
        from .render.json_out import analysis_json

        click.echo(json.dumps(analysis_json(analysis, findings), indent=2, ensure_ascii=False))
    else:
        from .render.terminal import render_check

        render_check(analysis, console_for(width), all_runs=all_runs, findings=findings)
        if report:
            click.echo(f"Report written to {report}")
    sys.exit(0 if analysis.within_budget else 1)


@main.command()
@click.option("--lat", "latitude", type=click.FloatRange(-90, 90), required=True,
              help="Latitude in decimal degrees, north positive.")
@click.option("--lon", "longitude", type=click.FloatRange(-180, 360), required=True,
              help="Longitude in decimal degrees, east positive.")
@click.option("--date", default=None,
              help="YYYY-MM-DD or a decimal year such as 2027.5 (default: today).")
@click.option("--altitude-m", type=float, default=0.0, show_default=True,
              help="Height above the WGS-84 ellipsoid in metres.")
@json_option
@plan_errors
def site(latitude, longitude, date, altitude_m, as_json):
    """The local geomagnetic field from WMM2025: H, Z, F, declination, inclination, zone."""
    import datetime as dt

    from .geomag import declination_uncertainty_deg, decimal_year, wmm_field

    try:
        year = decimal_year(float(date) if date and date.replace(".", "", 1).isdigit()
                            else (date or dt.date.today()))
    except ValueError:
        raise click.BadParameter(f'"{date}" is not a date (YYYY-MM-DD or a decimal year)',
                                 param_hint="--date") from None
    f = wmm_field(latitude, longitude, year, altitude_m)
    h = float(f.h_nt)
    result = {
        "latitude_deg": latitude, "longitude_deg": longitude, "altitude_m": altitude_m,
        "decimal_year": round(year, 4), "model": "WMM2025",
        "horizontal_ut": round(h / 1000, 4), "vertical_ut": round(float(f.z_nt) / 1000, 4),
        "total_ut": round(float(f.f_nt) / 1000, 4),
        "north_ut": round(float(f.x_nt) / 1000, 4), "east_ut": round(float(f.y_nt) / 1000, 4),
        "declination_deg": round(float(f.declination_deg), 3),
        "inclination_deg": round(float(f.inclination_deg), 3),
        "declination_uncertainty_deg": round(float(declination_uncertainty_deg(h)), 3),
        "declination_change_deg_per_year": round(float(f.declination_dot_deg), 3),
        "zone": f.zone,
    }
    if as_json:
        click.echo(json.dumps(result, indent=2))
        return
    side = "E" if result["declination_deg"] >= 0 else "W"
    click.echo(f"WMM2025 at {latitude:.4f}°, {longitude:.4f}°, {altitude_m:g} m, {year:.2f}")
    click.echo(f"  horizontal H   {result['horizontal_ut']:9.3f} µT")
    click.echo(f"  vertical Z     {result['vertical_ut']:9.3f} µT (down positive)")
    click.echo(f"  total F        {result['total_ut']:9.3f} µT")
    click.echo(f"  declination    {abs(result['declination_deg']):9.2f}° {side} "
               f"± {result['declination_uncertainty_deg']:.2f}° "
               f"({result['declination_change_deg_per_year']:+.2f}°/year)")
    click.echo(f"  inclination    {result['inclination_deg']:9.2f}°")
    zone = {"ok": "ok", "caution": "CAUTION: H below 6 µT, compasses degrade",
            "blackout": "BLACKOUT: H below 2 µT, a magnetic compass is unreliable"}[f.zone]
    click.echo(f"  zone           {zone}")


@main.command()
@click.argument("plan", type=click.Path(dir_okay=False))
@click.option("--units", type=click.Choice(["m", "cm", "mm", "ft", "in"]), default="m",
              show_default=True, help="Length unit of bare numbers in the new plan.")
@click.option("--force", is_flag=True, help="Overwrite PLAN if it exists.")
@click.option("--from", "source", type=click.Path(), default=None,
              help="Instead of a blank plan, write this plan (e.g. a folder of .csv sheets) as a "
                   "workbook, lengths in metres.")
@plan_errors
def new(plan, units, force, source):
    """Write a blank plan workbook with every sheet, worked examples and drop-down lists."""
    from pathlib import Path

    from .template import write_plan, write_template

    path = Path(plan)
    if path.suffix.lower() != ".xlsx":
        raise click.BadParameter("the new plan must be an .xlsx file", param_hint="PLAN")
    if path.exists() and not force:
        raise CommandProblem(f"{path} exists; choose another name or add --force")
    if source:
        if Path(source).resolve() == path.resolve():
            raise CommandProblem(f"{path} is the plan to copy; write to another file")
        write_plan(load(source), path)
        click.echo(f"Wrote {path} from {source}.")
        return
    write_template(path, units)
    click.echo(f"Wrote {path}: fill in the sheets, then run `deviation check {path}`.")


@main.command()
@plan_argument
@click.option("--sensor", "sensor_name", default=None, help="Only this sensor (default: all).")
@click.option("--step", "step_deg", type=click.Choice(["5", "10", "15", "30", "45"]), default="15",
              show_default=True, help="Degrees of magnetic heading between rows.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="Draw the deviation curves of all states (FILE.png or FILE.svg; with several "
                   "sensors, one file each, named FILE-sensor.png).")
@json_option
@width_option
@plan_errors
def card(plan, sensor_name, step_deg, plot_path, as_json, width):
    """The predicted deviation card: deviation at each magnetic heading, and the compass heading
    to steer, per sensor and operating state."""
    from .analysis import analyse
    from .card import cards
    from .files import check_output

    the_plan = load(plan)
    if sensor_name:
        sensor_name = find_sensor(the_plan, sensor_name).name
    analysis = analyse(the_plan)
    made = cards(analysis, float(step_deg), sensor_name)
    if plot_path:
        from pathlib import Path

        from .render.plots import card_curves

        targets = [Path(plot_path)] if len(made) == 1 else [
            Path(plot_path).with_name(f"{Path(plot_path).stem}-{_slug(c.sensor.name)}"
                                      f"{Path(plot_path).suffix}") for c in made]
        for target, one in zip(targets, made):
            check_output(target, plan)
            card_curves(one, analysis.site, target)
    if as_json:
        from .render.json_out import cards_json

        click.echo(json.dumps(cards_json(made), indent=2, ensure_ascii=False))
        return
    from .render.terminal import render_cards

    render_cards(made, analysis, console_for(width))
    if plot_path:
        click.echo(f"Curves written to {plot_path}" if len(made) == 1 else
                   "Curves written: " + ", ".join(str(t) for t in targets))


def _slug(name):
    import re

    return re.sub(r"[^A-Za-z0-9]+", "-", name).strip("-").lower() or "sensor"


def _triple(text, unit, name):
    from .units import UnitError, parse_length

    parts = text.split(",")
    try:
        if len(parts) != 3:
            raise UnitError("three")
        return [parse_length(p, unit) for p in parts]
    except UnitError:
        raise click.BadParameter(f'"{text}" is not x,y,z (each a length, e.g. 1.2,-0.5,30cm)',
                                 param_hint=name) from None


@main.command()
@plan_argument
@click.option("--sensor", "sensor_name", required=True, help="The sensor to find a spot for.")
@click.option("--region", nargs=2, metavar="X0,Y0,Z0 X1,Y1,Z1",
              help="Opposite corners of the box to search (plan units unless a unit is given). "
                   "Without it, the plan's spots sheet is ranked.")
@click.option("--step", default=None,
              help="Grid resolution of the answer, e.g. 2cm or 1in (default 2 cm, or 1 in in an "
                   "imperial plan).")
@click.option("--top", type=click.IntRange(1, 100), default=10, show_default=True,
              help="Spots listed.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="Draw a map of the worst case over the region at the best spot's height "
                   "(FILE.png or FILE.svg).")
@json_option
@width_option
@plan_errors
def spot(plan, sensor_name, region, step, top, plot_path, as_json, width):
    """Find the mounting spot where a sensor's budget figure is smallest.

    Searches a box coarse to fine (the figure is the worst over states, heel and reference-state
    change, as the budget defines it), or ranks the candidates of the plan's spots sheet.
    """
    import time

    from .analysis import analyse
    from .files import check_output
    from .units import parse_length

    the_plan = load(plan)
    sensor = find_sensor(the_plan, sensor_name)
    if plot_path:
        check_output(plot_path, plan)
    unit = the_plan.site.units
    analysis = analyse(the_plan)
    started = time.perf_counter()
    if region:
        from .render.terminal import progress_bar
        from .spot import search_box

        low = _triple(region[0], unit, "--region")
        high = _triple(region[1], unit, "--region")
        default = "1 in" if the_plan.imperial else "2 cm"
        try:
            step_m = parse_length(step or default, unit)
        except ValueError as error:
            raise click.BadParameter(str(error), param_hint="--step") from None
        if step_m <= 0:
            raise click.BadParameter("the step must be more than zero", param_hint="--step")
        with progress_bar(enabled=not as_json) as progress:
            result = search_box(the_plan, analysis, sensor, low, high, step_m, progress=progress,
                                top=top)
    else:
        from .spot import rank_positions

        if not the_plan.spots:
            raise CommandProblem("give --region X0,Y0,Z0 X1,Y1,Z1, or add a spots sheet of "
                                 "candidate positions to the plan")
        names = [name for name, _ in the_plan.spots]
        result = rank_positions(the_plan, analysis, sensor, [p for _, p in the_plan.spots], names)
        result.spots = result.spots[:top]
    seconds = time.perf_counter() - started
    if plot_path:
        if not region:
            raise CommandProblem("--plot needs --region (a map of a box)")
        from .render.plots import spot_map
        from .spot import slice_map

        z = result.spots[0].position_m[2] if result.spots else sensor.position_m[2]
        x, y, figure = slice_map(the_plan, analysis, sensor, result.region[0], result.region[1], z)
        spot_map(the_plan, analysis, result, x, y, figure, plot_path)
    if as_json:
        from .render.json_out import spots_json

        click.echo(json.dumps(spots_json(result), indent=2, ensure_ascii=False))
        return
    from .render.terminal import render_spots

    render_spots(result, the_plan, console_for(width), seconds)
    if plot_path:
        click.echo(f"Map written to {plot_path}")


if __name__ == "__main__":  # pragma: no cover
    main()
