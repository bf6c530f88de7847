"""``deviation check``: the deviation budget."""

from __future__ import annotations

import sys

import click

from .common import (
    CommandProblem,
    OutputPath,
    console_for,
    echo_json,
    json_option,
    library_errors,
    main,
    plan_argument,
    say,
    width_option,
)


@main.command()
@plan_argument
@json_option
@click.option("--all-runs", is_flag=True, help="List every run, not only the largest ones.")
@click.option("--report", type=OutputPath(),
              help="Also write a report: FILE.xlsx or FILE.html.")
@click.option("--no-fixes", is_flag=True,
              help="Leave out the remedies and the set of fixes (the slowest part on big plans; "
                   "the budget, the verdict and the exit status are the same).")
@click.option("--fixes-for", "fixes_for", multiple=True, metavar="SENSOR",
              help="Remedies and the set of fixes only for this sensor (repeat for more).")
@width_option
@library_errors
def check(plan, as_json, all_runs, report, no_fixes, fixes_for, width):
    """Print the deviation budget of every sensor in every operating state.

    Exit status: 0 every sensor within its budget in every state it is used in, 1 at least one
    over budget, 2 the plan or the command line is wrong.
    """
    from .. import api

    if no_fixes and fixes_for:
        raise CommandProblem("give --no-fixes or --fixes-for, not both")
    the_plan = api.read_plan(plan)
    result = api.check(the_plan, remedies=not no_fixes, fixes_for=fixes_for or None)
    if report:
        from ..render.reports import write_report

        write_report(result, report)
    if as_json:
        echo_json(api.to_json(result))
    else:
        from ..render.terminal import render_check

        render_check(result, console_for(width), all_runs=all_runs)
        if report:
            say(f"Report written to {report}")
    sys.exit(0 if result.within_budget else 1)
