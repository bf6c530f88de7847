"""``deviation test-sheet``: the switch-on test sheet, predicted from the plan."""

from __future__ import annotations

import click

from .common import (
    OutputPath,
    json_option,
    library_errors,
    main,
    plan_argument,
    width_option,
    write_outputs,
)


@main.command("test-sheet")
@plan_argument
@click.option("--sensor", "sensor_name", required=True, help="The compass or sensor watched.")
@click.option("--heading", "heading_deg", type=click.FloatRange(0, 360), required=True,
              help="Magnetic heading the vessel lies on at the berth, degrees (true heading from "
                   "the chart minus the variation).")
@click.option("--from", "start_state", default=None, metavar="STATE",
              help='The state to start each step from and return to (default: "all off", every '
                   "circuit off).")
@click.option("--adjusted", is_flag=True,
              help="The compass already has its correctors set (or is calibrated) in its "
                   "reference state.")
@click.option("--sheet", "sheet_path", type=OutputPath(),
              help="Also write the printable sheet: FILE.xlsx (fill it in and read it back with "
                   "test-results), FILE.html or FILE.pdf (to print).")
@json_option
@width_option
@library_errors
def test_sheet(plan, sensor_name, heading_deg, start_state, adjusted, sheet_path, as_json, width):
    """The switch-on test: how the compass reading should move when each circuit alone, and
    each operating state, is switched on with the vessel lying still at the berth.

    The predicted change is exact for the plan's fields at that heading (Compass = Magnetic -
    Deviation, the heading fixed), positive when the reading rises. The sheet has blank columns
    for the readings before and after each step.

    Exit status: 0 the test was predicted (and the sheet written), 2 the plan or the command
    line is wrong.
    """
    from .. import api
    from ..aftercare import switch_on_test

    the_plan = api.read_plan(plan)
    if sheet_path:
        from ..render.reports import check_report_path

        check_report_path(sheet_path, plan)
    test = switch_on_test(the_plan, sensor_name, heading_deg, start_state, adjusted)
    from ..render.documents.aftercare import test_sheet_document

    document = test_sheet_document(test)
    if sheet_path:
        from ..render.reports import write_report

        write_report(document, sheet_path, plan)
    write_outputs(document, None, plan, as_json, width, [(sheet_path, "Sheet")])
