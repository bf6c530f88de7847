"""``deviation card``: the predicted deviation card."""

from __future__ import annotations

import re
from pathlib import Path

import click

from .common import (
    OutputPath,
    console_for,
    echo_json,
    json_option,
    library_errors,
    main,
    plan_argument,
    prepare_output,
    say,
    width_option,
)


def _slug(name):
    return re.sub(r"[^A-Za-z0-9]+", "-", name).strip("-").lower() or "sensor"


@main.command()
@plan_argument
@click.option("--sensor", "sensor_name", default=None, help="Only this sensor (default: all).")
@click.option("--step", "step_deg", type=click.Choice(["5", "10", "15", "30", "45"]), default=None,
              help="Degrees of magnetic heading between rows (default 15; 30 in the aviation "
                   "profile).")
@click.option("--plot", "plot_path", type=OutputPath(),
              help="Draw the deviation curves of all states (FILE.png or FILE.svg; with several "
                   "sensors, one file each, named FILE-sensor.png).")
@json_option
@width_option
@library_errors
def card(plan, sensor_name, step_deg, plot_path, as_json, width):
    """The predicted deviation card: deviation at each magnetic heading, the band that parts of
    unknown direction allow, and the compass heading to steer, per sensor and operating state
    (after adjustment, for a sensor adjusted in a reference state), with each state's held
    figure. A total-field magnetometer gets its total-field error against heading in nT."""
    from .. import api
    the_plan = api.read_plan(plan)
    chosen = [the_plan.sensor(sensor_name)] if sensor_name else list(the_plan.sensors)
    targets = []
    if plot_path:                                     # refuse a bad output before any work
        targets = [Path(plot_path)] if len(chosen) == 1 else [
            Path(plot_path).with_name(f"{Path(plot_path).stem}-{_slug(s.name)}"
                                      f"{Path(plot_path).suffix}") for s in chosen]
        for target in targets:
            prepare_output(target, plan)
    result = api.check(the_plan, remedies=False)
    made = api.deviation_cards(result, sensor_name, None if step_deg is None else float(step_deg))
    if plot_path:
        from ..render.plots import card_curves

        for target, one in zip(targets, made):
            card_curves(one, target)
    from ..render.documents.card import cards_document

    document = cards_document(result, made)
    if as_json:
        echo_json(document.data)
        return
    from ..render.terminal import write_document

    write_document(document, console_for(width))
    if targets:
        say(f"Curves written to {targets[0]}" if len(targets) == 1 else
                   "Curves written: " + ", ".join(str(t) for t in targets))
