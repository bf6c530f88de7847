"""``deviation refit``: what a changed plan does to the compass, and whether to swing again."""

from __future__ import annotations

import sys

import click

from .common import (
    InputPath,
    json_option,
    library_errors,
    main,
    report_option,
    width_option,
    write_outputs,
)


@main.command()
@click.argument("old", type=InputPath())
@click.argument("new", type=InputPath())
@click.option("--threshold", "threshold_deg", type=click.FloatRange(0, 90), default=1.0,
              show_default=True,
              help="Advise a new swing where the deviation card changes by more than this, "
                   "degrees (rule of thumb, no published source).")
@report_option
@json_option
@width_option
@library_errors
def refit(old, new, threshold_deg, report, as_json, width):
    """Compare a plan with its earlier version: per sensor and state, how the held figure, the
    level deviation and the deviation card change, which runs and items cause it (added,
    removed, moved, current changed), and whether a new swing is advised.

    The card change assumes the correctors stay as they were set for the earlier plan.

    Exit status: 0 no new swing is advised, 1 a new swing is advised, 2 a plan or the command
    line is wrong.
    """
    from .. import api
    from ..aftercare import refit as compare

    old_plan = api.read_plan(old)
    new_plan = api.read_plan(new)
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, new)
    result = compare(old_plan, new_plan, threshold_deg)
    from ..render.documents.aftercare import refit_document

    write_outputs(refit_document(result), report, new, as_json, width)
    sys.exit(1 if result.swing_advised else 0)
