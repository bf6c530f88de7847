"""``deviation new``: a blank plan workbook, or an existing plan written as one."""

from __future__ import annotations

from pathlib import Path

import click

from .common import FORCE_KEY, CommandProblem, InputPath, OutputPath, library_errors, main, remember, say


@main.command()
@click.argument("plan", type=OutputPath())
@click.option("--units", type=click.Choice(["m", "cm", "mm", "ft", "in"]), default="m",
              show_default=True, help="Length unit of bare numbers in the new plan.")
@click.option("--force", is_flag=True, callback=remember(FORCE_KEY),
              help="Overwrite PLAN if it exists (even if it is read-only).")
@click.option("--from", "source", type=InputPath(), default=None,
              help="Instead of a blank plan, write this plan (e.g. a folder of .csv sheets) as a "
                   "workbook, in its own units, names and notes.")
@library_errors
def new(plan, units, force, source):
    """Write a blank plan workbook with every sheet, worked examples and drop-down lists."""
    from .. import api
    from ..template import write_plan, write_template

    path = Path(plan)
    if path.suffix.lower() != ".xlsx":
        raise click.BadParameter("the new plan must be an .xlsx file", param_hint="PLAN")
    if path.exists() and not force:
        raise CommandProblem(f"{path} exists; choose another name or add --force")
    if source:
        if Path(source).resolve() == path.resolve():
            raise CommandProblem(f"{path} is the plan to copy; write to another file")
        write_plan(api.read_plan(source), path)
        say(f"Wrote {path} from {source}.")
        return
    write_template(path, units)
    say(f"Wrote {path}: fill in the sheets, then run `deviation check {path}`.")
