"""What every command shares: the group, the options, the errors and how they end a command.

The exit status is one contract for every command (``EXIT_STATUS``): 0 within budget (or the
command's job done), 1 over budget (or the command's own "not met"), 2 a wrong plan or command
line, 3 a file that could not be read or written (standard output too), 130 interrupted (Ctrl-C),
128 + the signal's number when terminated (143 for SIGTERM), 70 a fault of the tool itself. It is
kept here, in one place:

- :class:`Commands` runs a command, turns every error into one line on stderr and its status,
  flushes standard output and checks that it was written whole;
- :class:`Command` checks each output file before the work starts, and writes ``-o FILE``;
- outputs are written by :func:`deviation.files.write_atomically`, whole or not at all.
"""

from __future__ import annotations

import contextlib
import functools
import io
import json
import os
import signal
import sys
from typing import IO, cast

import click

from .. import __version__

#: The exit statuses (see the module's docstring).
EXIT_OK, EXIT_NOT_MET, EXIT_BAD_INPUT, EXIT_FILE, EXIT_INTERRUPTED = 0, 1, 2, 3, 130
#: A fault of the tool itself (sysexits.h EX_SOFTWARE): never 1, which a script reads as a
#: verdict. The traceback is shown only with DEVIATION_TRACEBACK=1.
EXIT_INTERNAL = 70

#: Appended to every command's help: the part of the exit status all commands share.
EXIT_STATUS = ("Exit status 3: a file could not be read or written, standard output included "
               "(one line names it and the reason; an output is written whole or not at all). "
               "130: interrupted (Ctrl-C); 143: terminated (SIGTERM).")

OUTPUT_KEY, FORCE_KEY = "deviation.output", "deviation.force"


class CommandProblem(click.ClickException):
    """A wrong command line or an impossible request: the message says what to do; exit 2."""

    exit_code = EXIT_BAD_INPUT


class FileProblem(click.ClickException):
    """A file that could not be read or written: one line naming it and the reason; exit 3."""

    exit_code = EXIT_FILE


class OutputUnwritten(Exception):
    """Standard output could not be written whole (a full disk, a closed pipe)."""

    def __init__(self, error):
        from ..files import reason_of

        super().__init__(f"cannot write standard output: {reason_of(error)}; what was printed "
                         "is incomplete")


class Terminated(BaseException):
    """The process was told to stop (SIGTERM, SIGHUP); raised so that cleanup runs."""

    def __init__(self, signum):
        super().__init__(signum)
        self.signum = signum


class PlanProblem(click.ClickException):
    """Plan findings: one line each on stderr, exit status 2, nothing written."""

    exit_code = EXIT_BAD_INPUT

    def __init__(self, findings, note="nothing was computed or written"):
        self.findings = findings
        count = len(findings)
        super().__init__(f"{count} problem{'s' if count != 1 else ''} in the plan; {note}.")

    def show(self, file=None):
        file = file or sys.stderr
        for finding in self.findings:
            click.echo(str(finding), file=file)
        click.echo(f"Error: {self.format_message()}", file=file)


class _Checked:
    """A text stream whose failed writes raise :class:`OutputUnwritten` (never a traceback)."""

    def __init__(self, stream):
        self.stream = stream
        self.failed = False

    def write(self, text):
        try:
            return self.stream.write(text)
        except OSError as error:
            self.failed = True
            raise OutputUnwritten(error) from None

    def flush(self):
        try:
            self.stream.flush()
        except OSError as error:
            self.failed = True
            raise OutputUnwritten(error) from None

    def __getattr__(self, name):
        return getattr(self.stream, name)


def _clean_stderr() -> IO[str]:
    return cast(IO[str], _Clean(sys.stderr))      # it writes like the stream it wraps


class _Clean:
    """A text stream that shows control characters as U+FFFD (for messages on stderr)."""

    def __init__(self, stream):
        self.stream = stream

    def write(self, text):
        from ..text import terminal_text

        return self.stream.write(terminal_text(text))

    def __getattr__(self, name):
        return getattr(self.stream, name)


def _tell(text):
    """One message on stderr, control characters made harmless; a broken stderr is ignored."""
    with contextlib.suppress(OSError, ValueError):
        click.echo(text, file=_clean_stderr())


@contextlib.contextmanager
def _termination_raises():
    """While a command runs, SIGTERM and SIGHUP raise :class:`Terminated`, so that temporary
    files are removed on the way out (a second signal while stopping is ignored)."""
    def stop(signum, frame):
        for name in ("SIGTERM", "SIGHUP"):
            with contextlib.suppress(AttributeError, ValueError):
                signal.signal(getattr(signal, name), signal.SIG_IGN)
        raise Terminated(signum)

    previous = {}
    for name in ("SIGTERM", "SIGHUP"):
        number = getattr(signal, name, None)
        if number is None:
            continue
        try:
            previous[number] = signal.signal(number, stop)
        except ValueError:                              # not the main thread: leave as is
            break
    try:
        yield
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)


def _status(call):
    """Run ``call``; its exit status, every error told in one line on stderr."""
    from ..files import FileError, file_error

    try:
        result = call()
        return result if isinstance(result, int) and not isinstance(result, bool) else EXIT_OK
    except SystemExit as done:
        code = done.code
        return EXIT_OK if code is None else code if isinstance(code, int) else EXIT_BAD_INPUT
    except OutputUnwritten as error:
        _tell(f"Error: {error}")
        return EXIT_FILE
    except click.ClickException as problem:
        with contextlib.suppress(OSError, ValueError):
            problem.show(file=_clean_stderr())
        return problem.exit_code
    except click.Abort as abort:
        if isinstance(abort.__cause__, EOFError):
            _tell("Error: no input")
            return EXIT_BAD_INPUT
        _tell("Error: interrupted; no file was left half-written")
        return EXIT_INTERRUPTED
    except KeyboardInterrupt:
        _tell("Error: interrupted; no file was left half-written")
        return EXIT_INTERRUPTED
    except Terminated as stopped:
        name = signal.Signals(stopped.signum).name
        _tell(f"Error: terminated ({name}); no file was left half-written")
        return 128 + stopped.signum
    except FileError as error:
        _tell(f"Error: {error}")
        return EXIT_FILE
    except OSError as error:
        _tell(f"Error: {file_error(error, action='read or write')}")
        return EXIT_FILE
    except MemoryError:
        _tell("Error: not enough memory for this plan; see docs/robustness.md for the limits")
        return EXIT_INTERNAL
    except Exception as error:
        if os.environ.get("DEVIATION_TRACEBACK"):
            raise
        _tell(f"Error: an internal error of deviation ({type(error).__name__}: {error}); "
              "please report it with the plan (DEVIATION_TRACEBACK=1 shows where)")
        return EXIT_INTERNAL


def _finish(stdout, status):
    """Flush standard output; a short write turns any status into 3 (told once)."""
    try:
        if not stdout.failed:
            stdout.flush()
    except OutputUnwritten as error:
        _tell(f"Error: {error}")
    if stdout.failed:
        # Nothing more can reach it: let the interpreter's last flush go nowhere, quietly.
        with contextlib.suppress(AttributeError, OSError, ValueError, io.UnsupportedOperation):
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, stdout.stream.fileno())
            os.close(devnull)
        return EXIT_FILE
    return status


class Command(click.Command):
    """A command whose output files are checked before the work starts.

    Parameters of type :class:`OutputPath` (``--report``, ``--plot``, ``--sheet``, ``--csv``,
    ``-o``) are outputs; every other path is an input. Before the command runs, each output is
    refused if it is an input, if its folder is missing or cannot be written, if the disk is
    full, or if it exists read-only (unless ``--force``). With ``-o FILE`` what the command
    prints is written to FILE instead (whole or not at all, and only when the command ends with
    0 or 1); FILE.json implies ``--json``.
    """

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.epilog = f"{self.epilog}\n\n{EXIT_STATUS}" if self.epilog else EXIT_STATUS

    def invoke(self, ctx):
        from ..files import FileError, OutputError

        output = ctx.meta.get(OUTPUT_KEY)
        if output and output.lower().endswith(".json") and "as_json" in ctx.params:
            ctx.params["as_json"] = True
        inputs = [ctx.params[p.name] for p in self.params
                  if isinstance(p.type, click.Path) and not isinstance(p.type, OutputPath)
                  and ctx.params.get(p.name)]
        outputs = [ctx.params[p.name] for p in self.params
                   if isinstance(p.type, OutputPath) and ctx.params.get(p.name)]
        try:
            for path in outputs + ([output] if output else []):
                prepare_output(path, *inputs)
            with _progress_shown(not ctx.params.get("as_json")):
                if not output:
                    return super().invoke(ctx)
                return self._into(output, ctx)
        except FileError as error:
            raise FileProblem(str(error)) from None
        except OutputError as error:
            raise CommandProblem(str(error)) from None
        except OSError as error:
            from ..files import file_error

            raise FileProblem(str(file_error(error, action=_action(error, inputs)))) from None

    def _into(self, output, ctx):
        from pathlib import Path

        from ..files import write_atomically

        printed = io.StringIO()

        def save():
            text = printed.getvalue()
            write_atomically(Path(output), lambda temporary: Path(temporary).write_text(
                text, encoding="utf-8"))

        try:
            with contextlib.redirect_stdout(printed):
                result = super().invoke(ctx)
        except SystemExit as done:
            if done.code in (None, EXIT_OK, EXIT_NOT_MET):
                save()
            raise
        save()
        return result


def _action(error, inputs):
    """"read" for an error on one of the inputs (or a file in an input folder), else "read or
    write"."""
    from pathlib import Path

    name = getattr(error, "filename", None)
    if name:
        target = Path(name).absolute()
        for source in inputs:
            source = Path(source).absolute()
            if target == source or source in target.parents:
                return "read"
    return "read or write"


@contextlib.contextmanager
def _progress_shown(enabled):
    """Progress lines on stderr while the command runs: only on a terminal, never with --json
    (see :class:`deviation.render.terminal.TerminalProgress`)."""
    stderr = sys.stderr
    if not enabled or not (hasattr(stderr, "isatty") and stderr.isatty()):
        yield
        return
    from ..progress import reporting
    from ..render.terminal import TerminalProgress

    reporter = TerminalProgress()
    try:
        with reporting(reporter):
            yield
    finally:
        reporter.close()


class InputPath(click.Path):
    """A file or folder the command reads. Not tested for existence or access here: the reader
    says what is wrong with it (a finding, exit 2; a file it may not read, exit 3)."""

    def __init__(self):
        super().__init__(exists=False, dir_okay=True, readable=False)


class OutputPath(click.Path):
    """A file the command writes: checked before the work starts (see :class:`Command`)."""

    def __init__(self):
        super().__init__(dir_okay=False)


def prepare_output(path, *inputs):
    """Refuse, before any work, an output that is one of the inputs or could not be written
    (read-only unless ``--force``); see :func:`deviation.files.check_writable`."""
    from ..files import check_output, check_writable

    for source in inputs:
        check_output(path, source)
    context = click.get_current_context(silent=True)
    force = bool(context and context.meta.get(FORCE_KEY))
    check_writable(path, force=force)


def remember(key):
    """A callback keeping an option's value in the context for the shared machinery."""
    def callback(ctx, param, value):
        if value:
            ctx.meta[key] = value
        return value
    return callback


class Commands(click.Group):
    """The command group: runs a command under the exit-status contract (module docstring)."""

    command_class = Command

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        original = sys.stdout
        with _buffered(original) as stream:
            stdout = _Checked(stream)
            sys.stdout = stdout
            try:
                with _termination_raises():
                    status = _status(lambda: super(Commands, self).main(
                        args, prog_name, complete_var, standalone_mode=False, **extra))
                    status = _finish(stdout, status)
            finally:
                sys.stdout = original
        sys.exit(status)


@contextlib.contextmanager
def _buffered(stream):
    """``stream``, buffered if it is not (``python -u``, PYTHONUNBUFFERED).

    Unbuffered, a text stream hands each write to the file once: a short write (a file-size
    limit, a disk filling up) loses the rest without an error. A buffered writer writes the rest
    again and so meets the error. Lines still go out one by one.
    """
    raw = getattr(stream, "buffer", None)
    if not isinstance(raw, io.RawIOBase):
        yield stream
        return
    wrapper = io.TextIOWrapper(io.BufferedWriter(raw), encoding=stream.encoding,
                               errors=stream.errors, line_buffering=True)
    try:
        yield wrapper
    finally:
        with contextlib.suppress(OSError, ValueError):
            wrapper.flush()
        # Hand the file back open: detaching keeps the wrappers from closing it.
        with contextlib.suppress(OSError, ValueError):
            wrapper.detach().detach()


def library_errors(command):
    """Turn the library's own errors into clear messages with exit status 2."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        from ..errors import DeviationError
        from ..files import FileError
        from ..plan import PlanError

        try:
            return command(*args, **kwargs)
        except FileError:
            raise
        except PlanError as error:
            raise PlanProblem(error.findings) from None
        except DeviationError as error:
            raise CommandProblem(str(error)) from None

    return wrapper


def console_for(width):
    from ..render.terminal import make_console

    return make_console(width=width)


def echo_json(document):
    """The document as JSON on standard output (characters a terminal acts on escaped)."""
    from ..text import json_text

    click.echo(json_text(json.dumps(document, indent=2, ensure_ascii=False)))


def say(text):
    """One line on standard output, control characters made harmless."""
    from ..text import terminal_text

    click.echo(terminal_text(text))


width_option = click.option("--width", type=click.IntRange(60, 400), default=None,
                            help="Width of the printed tables in characters (default: the "
                                 "terminal's).")
force_option = click.option("--force", is_flag=True, expose_value=False,
                            callback=remember(FORCE_KEY),
                            help="Replace output files even where they are read-only.")
_output_option = click.option(
    "-o", "--output", type=OutputPath(), expose_value=False, callback=remember(OUTPUT_KEY),
    help="Write what would be printed (the tables, or the JSON with --json) to FILE instead, "
         "whole or not at all; FILE.json implies --json.")
_json_flag = click.option("--json", "as_json", is_flag=True,
                          help="Print the result as JSON on stdout, and nothing else.")


def json_option(command):
    """--json, -o FILE and --force: the output options every command with a result has."""
    return _json_flag(_output_option(force_option(command)))


plan_argument = click.argument("plan", type=InputPath())
report_option = click.option("--report", type=OutputPath(),
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
            say(f"{what} written to {target}")


@click.group(cls=Commands, context_settings={"help_option_names": ["-h", "--help"]})
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
