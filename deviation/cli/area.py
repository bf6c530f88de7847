"""``deviation area``: the plan over its whole operating area."""

from __future__ import annotations

import sys

from .common import (
    canonical_unit,
    json_option,
    library_errors,
    main,
    plan_argument,
    report_option,
    unit_option,
    width_option,
    write_outputs,
)


@main.command("area")
@plan_argument
@unit_option
@report_option
@json_option
@width_option
@library_errors
def area(plan, unit, report, as_json, width):
    """Check the plan at its site and at every place of its operating area (the site sheet's
    place rows), with the Earth's field from WMM2025 at each, and give every figure at its
    worst with the place that sets it; say whether the verdict changes across the area.

    Exit status: 0 within budget at every place, 1 over budget somewhere, 2 the plan or the
    command line is wrong.
    """
    from .. import api
    from ..area import area_check
    from ..render.documents.electronic import area_document

    unit = canonical_unit(unit)
    the_plan = api.read_plan(plan)
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    result = area_check(the_plan)
    write_outputs(area_document(result, unit), report, plan, as_json, width)
    sys.exit(0 if result.within_budget else 1)
