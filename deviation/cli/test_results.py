"""``deviation test-results``: the switch-on test read back against the plan."""

from __future__ import annotations

import sys

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


@main.command("test-results")
@plan_argument
@click.argument("readings", type=InputPath())
@click.option("--sensor", "sensor_name", default=None,
              help="The sensor watched (default: the sheet's settings).")
@click.option("--heading", "heading_deg", type=click.FloatRange(0, 360), default=None,
              help="Magnetic heading the vessel lay on (default: the sheet's settings).")
@click.option("--from", "start_state", default=None, metavar="STATE",
              help="The starting state (default: the sheet's settings, else all off).")
@click.option("--adjusted/--not-adjusted", default=None,
              help="Correctors were set in the reference state (default: the sheet's settings, "
                   "else not).")
@click.option("--resolution", "resolution_deg", type=click.FloatRange(0, 10), default=0.5,
              show_default=True,
              help="Reading resolution of the card, degrees (rule of thumb, no published source).")
@click.option("--fraction", type=click.FloatRange(0, 1), default=0.25, show_default=True,
              help="Share of the predicted change allowed (rule of thumb, no published source).")
@click.option("--report", type=OutputPath(),
              help="Also write the comparison: FILE.xlsx, FILE.html or FILE.pdf.")
@json_option
@width_option
@library_errors
@readings_errors
def test_results(plan, readings, sensor_name, heading_deg, start_state, adjusted,
                 resolution_deg, fraction, report, as_json, width):
    """Read a filled-in switch-on test back: each observed change beside the predicted, and the
    circuits that differ named as probable routing errors.

    READINGS is the sheet test-sheet wrote, filled in; or a plan workbook or folder with a
    "switch-on test" sheet; or a .csv file of it (columns circuit or state, reading before and
    reading after, or observed change). A step differs when the observed change is further from
    the predicted than max(resolution, fraction x predicted).

    Exit status: 0 every step read agrees, 1 at least one differs, 2 the plan, the readings or
    the command line is wrong (each bad cell named by sheet, row and column).
    """
    from .. import api
    from ..aftercare import read_switch_on_results

    the_plan = api.read_plan(plan)
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    results = read_switch_on_results(the_plan, readings, sensor=sensor_name,
                                     heading_deg=heading_deg, start_state=start_state,
                                     adjusted=adjusted, resolution_deg=resolution_deg,
                                     fraction=fraction)
    from ..render.documents.aftercare import test_results_document

    write_outputs(test_results_document(results), report, plan, as_json, width)
    sys.exit(0 if results.agrees else 1)
