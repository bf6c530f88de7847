"""``deviation deflection``: an item's magnetic moment from the deflection of a compass."""

from __future__ import annotations

import click

from .common import (
    CommandProblem,
    InputPath,
    json_option,
    library_errors,
    main,
    width_option,
    write_outputs,
)


@main.command()
@click.option("--angle", "deflection_deg", type=click.FloatRange(-89.9, 89.9), required=True,
              help="How far the needle moved when the item was brought up, degrees.")
@click.option("--distance", required=True,
              help="From the needle's pivot to the item's centre, e.g. 0.5, 50cm, 20in "
                   "(bare numbers in metres).")
@click.option("--position", type=click.Choice(["end-on", "broadside"]), required=True,
              help="end-on: the item due east or west of the needle, its axis pointing at it; "
                   "broadside: due north or south, its axis east-west.")
@click.option("--field-ut", "field_ut", type=click.FloatRange(0.1, 100), default=None,
              help="The horizontal field H where the test was made, µT.")
@click.option("--plan", "plan_path", type=InputPath(), default=None,
              help="Take H from this plan's site instead.")
@click.option("--item", default="item", show_default=True, help="Name for the equipment row.")
@click.option("--at", "at", default="", help="Where it will be mounted: a point name or x, y, z.")
@json_option
@width_option
@library_errors
def deflection(deflection_deg, distance, position, field_ut, plan_path, item, at, as_json, width):
    """An item's magnetic moment from how far it deflects a hand-bearing compass (Gauss's
    method), as a row for the plan's equipment sheet.

    Ashore, away from iron: let the needle settle, bring the item up with its magnetic axis
    east-west, end-on or broadside, and read the deflection. tan(delta) = mu0 m / (2 pi r^3 H)
    end-on, mu0 m / (4 pi r^3 H) broadside. Turn the item to find its largest deflection; the row
    leaves the axis blank, so the worst orientation aboard counts.

    Exit status: 0 the moment was worked out, 2 the command line (or the plan) is wrong.
    """
    from ..units import UnitError, parse_length

    try:
        distance_m = parse_length(distance, "m")
    except UnitError as error:
        raise click.BadParameter(str(error), param_hint="--distance") from None
    if distance_m <= 0:
        raise click.BadParameter("the distance must be more than zero", param_hint="--distance")
    if (field_ut is None) == (plan_path is None):
        raise CommandProblem("give the horizontal field: --field-ut H, or --plan PLAN for the "
                             "site's")
    if plan_path is not None:
        from .. import api
        from ..sitefield import site_field

        horizontal_t = site_field(api.read_plan(plan_path).site).horizontal_t
    else:
        horizontal_t = field_ut * 1e-6                 # µT to T, at the edge
    from ..aftercare import deflection_item
    from ..physics.swing import moment_from_deflection_am2

    moment = moment_from_deflection_am2(deflection_deg, distance_m, horizontal_t, position)
    row = deflection_item(item, at, deflection_deg, distance_m, horizontal_t, position)
    from ..render.documents.aftercare import deflection_document

    write_outputs(deflection_document(row, moment, deflection_deg, distance_m, position,
                                      horizontal_t), None, None, as_json, width)
