"""``deviation area``: the plan over its whole operating area."""

from __future__ import annotations

import sys

from .common import (
    canonical_unit,
    console_for,
    echo_json,
    json_option,
    library_errors,
    main,
    plan_argument,
    unit_option,
    width_option,
)


@main.command("area")
@plan_argument
@unit_option
@json_option
@width_option
@library_errors
def area(plan, unit, as_json, width):
    """Check the plan at its site and at every place of its operating area (the site sheet's
    place rows), with the Earth's field from WMM2025 at each, and give every figure at its
    worst with the place that sets it; say whether the verdict changes across the area.

    Exit status: 0 within budget at every place, 1 over budget somewhere, 2 the plan or the
    command line is wrong.
    """
    from .. import api
    from ..area import area_check
    from ..render.electronic import area_json, render_area

    unit = canonical_unit(unit)
    result = area_check(api.read_plan(plan))
    if as_json:
        echo_json(area_json(result, unit))
    else:
        render_area(result, console_for(width), unit)
    sys.exit(0 if result.within_budget else 1)
