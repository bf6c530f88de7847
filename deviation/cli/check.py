"""``deviation check``: the deviation budget."""

from __future__ import annotations

import sys

import click

from .common import (
    console_for,
    echo_json,
    json_option,
    library_errors,
    main,
    plan_argument,
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
@click.option("--report", type=click.Path(dir_okay=False),
              help="Also write a report: FILE.xlsx, FILE.html or FILE.pdf.")
@click.option("--paper", type=click.Choice(["A4", "Letter"], case_sensitive=False),
              default=None, help="Paper of the report (default: Letter for a plan in feet or "
                                 "inches, else A4).")
@width_option
@library_errors
def check(plan, as_json, detail, all_runs, report, paper, width):
    """Print the deviation budget of every sensor in every operating state.

    Exit status: 0 every sensor within its budget in every state it is used in, 1 at least one
    over budget, 2 the plan or the command line is wrong.
    """
    from .. import api

    the_plan = api.read_plan(plan)
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    result = api.check(the_plan)
    from ..render.documents.check import check_document

    document = check_document(result, all_runs=all_runs)
    if report:
        from ..render.reports import write_report

        # Paper holds every run; the screen only the largest unless asked.
        paper_document = check_document(result, all_runs=True)
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
            click.echo(f"Report written to {report}")
    sys.exit(0 if result.within_budget else 1)
