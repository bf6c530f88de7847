"""``deviation swing``: a swing fitted to the approximate coefficients, beside the plan's."""

from __future__ import annotations

import click

from .common import (
    InputPath,
    OutputPath,
    json_option,
    library_errors,
    main,
    plan_argument,
    readings_errors,
    width_option,
    write_outputs,
)


@main.command()
@plan_argument
@click.argument("readings", type=InputPath())
@click.option("--sensor", "sensor_name", required=True, help="The compass that was swung.")
@click.option("--state", default=None,
              help="The state of readings whose state cell is blank (needed when the plan has "
                   "several states and the sheet names none).")
@click.option("--on", type=click.Choice(["compass", "magnetic"]), default="compass",
              show_default=True,
              help="Write the coefficients against compass headings (the handbook's way) or "
                   "magnetic headings.")
@click.option("--adjusted-in", default=None, metavar="STATE",
              help="The state the correctors were set in before the swing (default: the "
                   "sensor's reference state in the plan).")
@click.option("--not-adjusted", is_flag=True,
              help="No correctors were set: compare with the whole field of the wiring.")
@click.option("--plot", "plot_path", type=OutputPath(),
              help="Draw readings, fitted and predicted curves: FILE.png or FILE.svg.")
@click.option("--report", type=OutputPath(),
              help="Also write the fit: FILE.xlsx, or FILE.html or FILE.pdf (with the curves).")
@json_option
@width_option
@library_errors
@readings_errors
def swing(plan, readings, sensor_name, state, on, adjusted_in, not_adjusted, plot_path, report,
          as_json, width):
    """Fit a compass swing to the approximate coefficients A-E per state and set the plan's
    own coefficients beside them; the difference is what the plan does not explain.

    READINGS: a .csv file, a workbook (sheet "swing" or its only sheet) or a folder with
    swing.csv; per row the compass heading and the deviation (3.5E, 2W or signed, east
    positive), or the compass and the magnetic heading, and the state. Five or more distinct
    headings per state; least squares, which on the eight cardinal and quadrantal headings gives
    the handbook's A, D and E (NGA Handbook of Magnetic Compass Adjustment, ch. V).

    Exit status: 0 fitted, 2 the plan, the readings or the command line is wrong.
    """
    from .. import api
    from ..aftercare import read_swing, swing_comparison
    from .common import CommandProblem

    if not_adjusted and adjusted_in:
        raise CommandProblem("give --adjusted-in or --not-adjusted, not both")
    the_plan = api.read_plan(plan)
    sensor = the_plan.sensor(sensor_name)
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    data = read_swing(readings, the_plan, state)
    comparison = swing_comparison(the_plan, sensor, data, on=on,
                                  adjusted_in=None if not_adjusted else adjusted_in or "reference")
    if plot_path:
        from ..render.aftercare import swing_plot

        swing_plot(comparison, plot_path)
    from ..render.documents.aftercare import swing_document

    write_outputs(swing_document(comparison), report, plan, as_json, width,
                  [(plot_path, "Curves")])
