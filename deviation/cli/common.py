"""What every command shares: the group, the options, the errors and how they end a command."""

from __future__ import annotations

import functools
import json
import sys

import click

from .. import __version__


class CommandProblem(click.ClickException):
    """A wrong command line or an impossible request: the message says what to do; exit 2."""

    exit_code = 2


class PlanProblem(click.ClickException):
    """Plan findings: one line each on stderr, exit status 2, nothing written."""

    exit_code = 2

    def __init__(self, findings, note="nothing was computed or written"):
        self.findings = findings
        count = len(findings)
        super().__init__(f"{count} problem{'s' if count != 1 else ''} in the plan; {note}.")

    def show(self, file=None):
        file = file or sys.stderr
        for finding in self.findings:
            click.echo(str(finding), file=file)
        click.echo(f"Error: {self.format_message()}", file=file)


def library_errors(command):
    """Turn the library's own errors into clear messages with exit status 2."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        from ..errors import DeviationError
        from ..plan import PlanError

        try:
            return command(*args, **kwargs)
        except PlanError as error:
            raise PlanProblem(error.findings) from None
        except DeviationError as error:
            raise CommandProblem(str(error)) from None

    return wrapper


def console_for(width):
    from ..render.terminal import make_console

    return make_console(width=width)


def echo_json(document):
    click.echo(json.dumps(document, indent=2, ensure_ascii=False))


width_option = click.option("--width", type=click.IntRange(60, 400), default=None,
                            help="Width of the printed tables in characters (default: the "
                                 "terminal's).")
json_option = click.option("--json", "as_json", is_flag=True,
                           help="Print the result as JSON on stdout, and nothing else.")
plan_argument = click.argument("plan", type=click.Path(exists=False, dir_okay=True))
report_option = click.option("--report", type=click.Path(dir_okay=False),
                             help="Also write a printable report: FILE.xlsx, FILE.html or "
                                  "FILE.pdf.")


def write_outputs(document, report, plan_path, as_json, width, written=()):
    """The end of a command: the report written (if asked for), then the document as JSON or on
    the terminal, and a line for each file written.

    ``written`` lists further (path, what) pairs the command wrote itself.
    """
    if report:
        from ..render.reports import write_report

        write_report(document, report, plan_path)
    if as_json:
        echo_json(document.data)
        return
    from ..render.terminal import write_document

    write_document(document, console_for(width))
    for target, what in (*written, (report, "Report")):
        if target:
            click.echo(f"{what} written to {target}")


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="deviation")
def main():
    """Check a DC wiring plan for the heading deviation it causes at compasses and magnetometers.

    A plan is an .xlsx workbook or a folder of .csv sheets; `deviation new PLAN.xlsx` writes a
    blank one to fill in. The figures plan an installation; they do not replace adjusting and
    swinging the compass after it.
    """


#: The field units the electronic-sensor commands print (constants.FIELD_UNITS_T).
unit_option = click.option("--unit", "unit", type=click.Choice(["uT", "nT", "mG"],
                                                               case_sensitive=False),
                           default="uT", show_default=True,
                           help="Field unit of the printed vectors: uT (microtesla), nT or mG "
                                "(milligauss, 1 mG = 0.1 uT).")
sensor_option = click.option("--sensor", "sensor_name", default=None,
                             help="Only this sensor (default: every electronic sensor).")


def canonical_unit(unit):
    return {"ut": "uT", "nt": "nT", "mg": "mG"}[unit.lower()]


def electronic_reports(plan, sensor_name):
    """Read and check the plan; its electronic sensors' figures (a CommandProblem if none)."""
    from .. import api
    from ..electronic import ELECTRONIC_KINDS, electronic_report

    the_plan = api.read_plan(plan)
    analysis = api.check(the_plan, remedies=False)
    reports = electronic_report(analysis, sensor_name)
    if not reports:
        which = f'"{sensor_name}" is not' if sensor_name else "the plan has no sensor that is"
        raise CommandProblem(f"{which} an electronic sensor ({', '.join(ELECTRONIC_KINDS)})")
    return analysis, reports


class ReadingsProblem(PlanProblem):
    """Findings in a readings sheet: one line each on stderr, exit status 2, nothing written."""

    def __init__(self, findings):
        self.findings = findings
        count = len(findings)
        click.ClickException.__init__(self, f"{count} problem{'s' if count != 1 else ''} in the "
                                            "readings; nothing was computed or written.")


def readings_errors(command):
    """Turn a readings sheet's findings into one located line each, exit status 2."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        from ..aftercare import ReadingsError

        try:
            return command(*args, **kwargs)
        except ReadingsError as error:
            raise ReadingsProblem(error.findings) from None

    return wrapper
