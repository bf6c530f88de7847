"""Generate the docs that must not drift from the code.

``python -m deviation.docs > docs/cli.md``: the command reference, from the commands' own help,
taken by running each command with ``--help`` through click's own test runner, so the reference
shows exactly what a user sees (program name and all).

``python -m deviation.docs verification > docs/verification.md``: the verification rows of
``deviation verify``, from their registry (:mod:`deviation.verification`).
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


_VERIFICATION_INTRO = """\
# Verification against published values

Generated from the rows' registry (`deviation/verification.py`) by
`python -m deviation.docs verification > docs/verification.md`; a test fails when this file is
stale.

Trusted calculation tools publish the cases a user can rerun to see that the program reproduces
values printed by others (CIGRE TB 880 does it for cable ratings, the NAFEMS benchmarks for
finite-element codes). `deviation verify` is that report for this program: one row per published
check value, with what is computed, its source, the expected value, what this install computes,
the difference, the tolerance and whether it passes. Exit status 0 when every row passes, 1
otherwise; `--json` carries the same rows.

Each row runs the code a plan's check runs: the router and the Biot-Savart segment kernel (a run
laid as a plan lays it), the dipole kernel and the deviation rule, the packaged WMM2025 model,
the budget's equipment rules through a whole check of a small plan, the swing fit, the clearance
table's formulas. No row re-implements the formula it checks. The rows check the program's
computations; they do not check a plan, an installation or a compass, and a plan is not a
compass swing.

A tolerance is the printed rounding of the source where it prints one (WMM2025: half the last
digit), the source's own precision where it states one (Moser & Spencer's "about 50 dB", read to
±1 dB), and otherwise what the geometry leaves (a 2 km run stands in for an infinite wire) or
rounding.

## The rows

| id | what | expected | tolerance | source |
|---|---|---|---|---|
"""

_VERIFICATION_OUTRO = """
## Adding a row

One entry in `deviation/verification.py`: a function that computes the value through the
library and returns it in the row's unit, decorated with `published(...)` giving its id, group,
what, source, expected value, unit, tolerance and printed decimals. `deviation verify`, its JSON
and this page pick it up; regenerate this page and run the tests.

Of the handbook's worked swing (NGA, *Handbook of Magnetic Compass Adjustment*, art. 501) only
coefficient A is a row: the article's eight deviations and its rule for A were read in the
printed text, its worked values of B, C, D and E could not be, and a row states only what its
source prints.
"""


def verification_reference() -> str:
    from .verification import CHECKS

    sources: dict[str, int] = {}
    for check in CHECKS:
        sources.setdefault(check.source, len(sources) + 1)
    lines = []
    for check in CHECKS:
        what = check.what.replace("|", "\\|")
        lines.append(f"| `{check.id}` | {what} | {check.expected:.{check.decimals}f} "
                     f"{check.unit} | ±{check.tolerance:g} | [{sources[check.source]}] |")
    listed = [f"{number}. {source}" for source, number in sources.items()]
    return (_VERIFICATION_INTRO + "\n".join(lines) + "\n\n## Sources\n\n" + "\n".join(listed)
            + "\n" + _VERIFICATION_OUTRO)


if __name__ == "__main__":  # pragma: no cover
    import sys

    if sys.argv[1:] == ["verification"]:
        print(verification_reference(), end="")
    else:
        print(cli_reference(), end="")
