"""Generate the command reference from the commands' own help: ``python -m deviation.docs``."""

from __future__ import annotations

import click

from .cli import main


def cli_reference() -> str:
    lines = ["# Command reference", "",
             "Generated from `--help` by `python -m deviation.docs > docs/cli.md`; a test fails "
             "when this file is stale.", ""]
    context = click.Context(main, info_name="deviation", terminal_width=100, **main.context_settings)
    lines += ["## deviation", "", "```", main.get_help(context).rstrip(), "```", ""]
    for name in sorted(main.commands):
        command = main.commands[name]
        sub = click.Context(command, info_name=f"deviation {name}", parent=context,
                            terminal_width=100)
        lines += [f"## deviation {name}", "", "```", command.get_help(sub).rstrip(), "```", ""]
    return "\n".join(lines)


if __name__ == "__main__":  # pragma: no cover
    print(cli_reference(), end="")
