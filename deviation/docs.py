"""Generate the command reference from the commands' own help: ``python -m deviation.docs``.

The help is taken by running each command with ``--help`` through click's own test runner, so
the reference shows exactly what a user sees (program name and all).
"""

from __future__ import annotations

from click.testing import CliRunner

from .cli import main


def _help(*args: str) -> str:
    result = CliRunner().invoke(main, [*args, "--help"], prog_name="deviation",
                                terminal_width=100)
    if result.exit_code != 0:
        raise RuntimeError(f"deviation {' '.join(args)} --help failed: {result.output}")
    return result.output.rstrip()


def cli_reference() -> str:
    lines = ["# Command reference", "",
             "Generated from `--help` by `python -m deviation.docs > docs/cli.md`; a test fails "
             "when this file is stale.", ""]
    lines += ["## deviation", "", "```", _help(), "```", ""]
    for name in sorted(main.commands):
        lines += [f"## deviation {name}", "", "```", _help(name), "```", ""]
    return "\n".join(lines)


if __name__ == "__main__":  # pragma: no cover
    print(cli_reference(), end="")
