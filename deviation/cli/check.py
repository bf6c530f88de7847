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
@click.option("--detail", is_flag=True,
              help="Every state's table, totals and remedies (default: a short account of each "
                   "sensor).")
@click.option("--all-runs", is_flag=True, help="List every run, not only the largest ones "
                                                "(with --detail; reports list every run).")
@click.option("--report", type=OutputPath(),
              help="Also write a report: FILE.xlsx, FILE.html or FILE.pdf.")
@click.option("--paper", type=click.Choice(["A4", "Letter"], case_sensitive=False),
              default=None, help="Paper of the report (default: Letter for a plan in feet or "
                                 "inches, else A4).")
@click.option("--no-fixes", is_flag=True,
              help="Leave out the remedies and the set of fixes (the slowest part on big plans; "
                   "the budget, the verdict and the exit status are the same).")
@click.option("--fixes-for", "fixes_for", multiple=True, metavar="SENSOR",
              help="Remedies and the set of fixes only for this sensor (repeat for more).")
@click.option("--voltage", "voltage_v", type=float, metavar="VOLTS",
              help="Check the plan with every load given in watts drawn at this DC voltage "
                   "(what if the system were 24 V?); loads in amperes stay as they are.")
@width_option
@library_errors
def check(plan, as_json, detail, all_runs, report, paper, no_fixes, fixes_for, voltage_v,
          width):
    """Print the deviation budget of every sensor in every operating state.

    Exit status: 0 every sensor within its budget in every state it is used in (and, in the
    aviation profile, every direction indicator within 10° on any heading in level flight), 1 at
    least one over, 2 the plan or the command line is wrong.
    """
    from .. import api

    if no_fixes and fixes_for:
        raise CommandProblem("give --no-fixes or --fixes-for, not both")
    the_plan = api.read_plan(plan)
    if voltage_v is not None:
        from ..errors import InputError

        try:
            the_plan = api.at_voltage(the_plan, voltage_v)
        except InputError as error:
            raise CommandProblem(f"--voltage {voltage_v:g}: {error}") from None
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    result = api.check(the_plan, remedies=not no_fixes, fixes_for=fixes_for or None)
    from ..render.documents.check import check_document

    document = check_document(result, all_runs=all_runs, voltage_v=voltage_v)
    if report:
        from ..render.reports import write_report

        # Paper holds every run; the screen only the largest unless asked.
        paper_document = check_document(result, all_runs=True, voltage_v=voltage_v)
        if paper:
            from dataclasses import replace

            paper_document = replace(paper_document,
                                     paper="Letter" if paper.lower() == "letter" else "A4")
        write_report(paper_document, report, plan)
    if as_json:
        echo_json(document.data)
    else:
        from ..render.terminal import write_document

        write_document(document, console_for(width), detail=detail)
        if report:
            say(f"Report written to {report}")
    from ..card import within_aviation_limit

    sys.exit(0 if result.within_budget and within_aviation_limit(result) else 1)
