"""``deviation spot``: where a sensor's budget figure is smallest."""

from __future__ import annotations

import sys
import time

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


def _triple(text, unit, name):
    from ..units import UnitError, parse_length

    parts = text.split(",")
    try:
        if len(parts) != 3:
            raise UnitError("three")
        return [parse_length(p, unit) for p in parts]
    except UnitError:
        raise click.BadParameter(f'"{text}" is not x,y,z (each a length, e.g. 1.2,-0.5,30cm)',
                                 param_hint=name) from None


def _step(step, plan):
    from ..units import UnitError, parse_length

    try:
        step_m = parse_length(step or ("1 in" if plan.imperial else "2 cm"), plan.site.units)
    except UnitError as error:
        raise click.BadParameter(str(error), param_hint="--step") from None
    if step_m <= 0:
        raise click.BadParameter("the step must be more than zero", param_hint="--step")
    return step_m


def _no_spot(plan, sensor, result, region):
    """Why the volumes leave no spot, as a command problem (exit 2)."""
    from ..spot import volumes_for

    mount, keep = volumes_for(plan, sensor)
    if not region:
        left_out = "; ".join(f"{name} ({why})" for name, why in result.excluded)
        return CommandProblem(f'the volumes sheet leaves no spot of the spots sheet for '
                              f'"{sensor.name}": {left_out}')
    boxes = []
    if mount:
        boxes.append("mount in " + ", ".join(f'"{v.name}"' for v in mount))
    if keep:
        boxes.append("keep out " + ", ".join(f'"{v.name}"' for v in keep))
    return CommandProblem(f'the volumes sheet allows no position in the searched box for '
                          f'"{sensor.name}" ({"; ".join(boxes)}); search a box that meets a '
                          "mount-in volume and lies outside the keep-out ones")


@main.command()
@plan_argument
@click.option("--sensor", "sensor_name", required=True, help="The sensor to find a spot for.")
@click.option("--region", nargs=2, metavar="X0,Y0,Z0 X1,Y1,Z1",
              help="Opposite corners of the box to search (plan units unless a unit is given). "
                   "Without it, the plan's spots sheet is ranked (the spots for this sensor and "
                   "those for every sensor).")
@click.option("--step", default=None,
              help="Grid resolution of the answer, e.g. 2cm or 1in (default 2 cm, or 1 in in an "
                   "imperial plan).")
@click.option("--top", type=click.IntRange(1, 100), default=10, show_default=True,
              help="Spots listed.")
@click.option("--plot", "plot_path", type=OutputPath(),
              help="Draw a map of the worst case over the region at the best spot's height "
                   "(FILE.png or FILE.svg).")
@click.option("--report", type=OutputPath(),
              help="Also write the ranking: FILE.xlsx, FILE.html or FILE.pdf.")
@json_option
@width_option
@library_errors
def spot(plan, sensor_name, region, step, top, plot_path, report, as_json, width):
    """Find the mounting spot where a sensor's budget figure is smallest.

    Searches a box coarse to fine (the figure is the one held against the budget: the worst
    state the sensor is used in, at the worst attitude, after adjustment where it has a reference
    state), or ranks the candidates of the plan's spots sheet. The plan's volumes sheet is
    honoured: no spot inside a keep-out volume and, where the sensor has mount-in volumes, only
    spots inside one of them. A best spot on the edge of the searched box is flagged: the box may
    be too small.

    Exit status: 0 the best spot meets the sensor's budget, 1 no spot found meets it, 2 the plan
    or the command line is wrong (or the volumes leave no spot to rank).
    """
    from .. import api
    from ..analysis import analyse
    from ..spot import spots_for

    the_plan = api.read_plan(plan)
    sensor = the_plan.sensor(sensor_name)
    if plot_path:
        if not region:
            raise CommandProblem("--plot needs --region (a map of a box)")
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    candidates = spots_for(the_plan, sensor)
    if not region and not candidates:
        if the_plan.spots:
            raise CommandProblem(f'the spots sheet has no spot for "{sensor.name}" (each names '
                                 "another sensor in for_sensor); give --region X0,Y0,Z0 "
                                 "X1,Y1,Z1, or add spots for it")
        raise CommandProblem("give --region X0,Y0,Z0 X1,Y1,Z1, or add a spots sheet of "
                             "candidate positions to the plan")
    analysis = analyse(the_plan)
    started = time.perf_counter()
    if region:
        unit = the_plan.site.units
        low = _triple(region[0], unit, "--region")
        high = _triple(region[1], unit, "--region")
        step_m = _step(step, the_plan)
        result = api.find_spots(the_plan, sensor, low, high, step_m, top=top, analysis=analysis)
    else:
        from dataclasses import replace

        result = api.rank_spots(the_plan, sensor, [s.position_m for s in candidates],
                                [s.name for s in candidates], analysis=analysis)
        result = replace(result, spots=result.spots[:top])
    seconds = time.perf_counter() - started
    if not result.spots:
        raise _no_spot(the_plan, sensor, result, region)
    if plot_path:
        from ..render.plots import spot_map
        from ..spot import slice_map

        z = result.spots[0].position_m[2]
        x, y, figure = slice_map(the_plan, analysis, sensor, low, high, z)   # --plot needs --region
        spot_map(the_plan, result, x, y, figure, plot_path, z_m=z)
    from ..render.documents.spot import spots_document

    document = spots_document(result, the_plan, seconds)
    if report:
        from ..render.reports import write_report

        write_report(document, report, plan)
    if as_json:
        echo_json(document.data)
    else:
        from ..render.terminal import write_document

        write_document(document, console_for(width))
        for target, what in ((plot_path, "Map"), (report, "Report")):
            if target:
                say(f"{what} written to {target}")
    sys.exit(0 if result.within_budget else 1)
