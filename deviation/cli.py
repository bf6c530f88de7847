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
        from .geomag import OutsideModelError
        from .plan import PlanError

        try:
            return command(*args, **kwargs)
        except PlanError as error:
            raise PlanProblem(error.findings) from None
        except OutsideModelError as error:
            raise CommandProblem(str(error)) from None

    return wrapper


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
def new(plan, units, force):
    """Write a blank plan workbook with every sheet, worked examples and drop-down lists."""
    from pathlib import Path

    from .template import write_template

    path = Path(plan)
    if path.suffix.lower() != ".xlsx":
        raise click.BadParameter("the new plan must be an .xlsx file", param_hint="PLAN")
    if path.exists() and not force:
        raise CommandProblem(f"{path} exists; choose another name or add --force")
    write_template(path, units)
    click.echo(f"Wrote {path}: fill in the sheets, then run `deviation check {path}`.")


if __name__ == "__main__":  # pragma: no cover
    main()
