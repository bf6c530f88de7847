"""``deviation card``: the predicted deviation card."""

from __future__ import annotations

import re
from pathlib import Path

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
@click.option("--sheet", "sheet_path", type=OutputPath(),
              help="Also write a card to post beside each compass: FILE.pdf or FILE.html "
                   "(deviation E/W to half a degree, the course to steer, per state).")
@click.option("--paper", type=click.Choice(["A5", "A6"], case_sensitive=False), default="A5",
              show_default=True,
              help="The size of the posted card (A6 is printed sideways, a row every 45 degrees "
                   "at least).")
@json_option
@width_option
@library_errors
def card(plan, sensor_name, step_deg, plot_path, sheet_path, paper, as_json, width):
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
    if sheet_path:
        from ..render.reports import check_report_path

        check_report_path(sheet_path, plan)
    result = api.check(the_plan, remedies=False)
    made = api.deviation_cards(result, sensor_name, None if step_deg is None else float(step_deg))
    if plot_path:
        from ..render.plots import card_curves

        for target, one in zip(targets, made):
            card_curves(one, target)
    from ..render.documents.card import cards_document

    document = cards_document(result, made)
    if sheet_path:
        from ..render.documents.card import postable_document
        from ..render.reports import write_report

        # An A6 card (turned sideways) holds a row every 45 degrees.
        step = made[0].step_deg if made else 0.0
        posted = made if paper.upper() == "A5" or step >= 45 else \
            api.deviation_cards(result, sensor_name, 45.0)
        postable = postable_document(result, posted, paper.upper())
        if not postable.sections:
            raise CommandProblem("no compass to post a card for: a magnetometer is not steered "
                                 "by (its card is the figure against heading)")
        write_report(postable, sheet_path, plan)
    if as_json:
        echo_json(document.data)
        return
    from ..render.terminal import write_document

    write_document(document, console_for(width))
    if sheet_path:
        click.echo(f"Card written to {sheet_path}")
    if targets:
        say(f"Curves written to {targets[0]}" if len(targets) == 1 else
                   "Curves written: " + ", ".join(str(t) for t in targets))
