"""``deviation swing-state``: which state to adjust and swing a compass in."""

from __future__ import annotations

import sys

import click

from .common import (
    json_option,
    library_errors,
    main,
    plan_argument,
    report_option,
    width_option,
    write_outputs,
)


@main.command("swing-state")
@plan_argument
@click.option("--sensor", "sensor_name", default=None, help="Only this sensor (default: all).")
@report_option
@json_option
@width_option
@library_errors
def swing_state(plan, sensor_name, report, as_json, width):
    """Rank the states to adjust and swing each sensor in: for each candidate, the worst figure
    the other states then hold against the budget (the deviation of b_state - b_ref over all
    headings, at the worst attitude), smallest first.

    Exit status: 0 for every sensor some state keeps all the others within budget, 1 for at
    least one sensor none does, 2 the plan or the command line is wrong.
    """
    from .. import api
    from ..aftercare import reference_choices
    from ..render.documents.aftercare import swing_state_document

    the_plan = api.read_plan(plan)
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    choices = reference_choices(the_plan, sensor_name)
    write_outputs(swing_state_document(choices, the_plan), report, plan, as_json, width)
    sys.exit(0 if all(rows and rows[0].within_budget for rows in choices.values()) else 1)
