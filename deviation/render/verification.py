"""The verification report (:mod:`deviation.verification`) as a terminal table and as JSON.

The table numbers each source once and lists them under it, so that it reads at 80 columns as
well as at 120; the JSON carries every row with its source in full.
"""

from __future__ import annotations

from rich.padding import Padding
from rich.text import Text

from .. import __version__

#: What the report is and is not, shown under it.
SCOPE = ("These rows check the program's own computations against published values; they do "
         "not check a plan, an installation or a compass. A plan is not a compass swing.")


def _number(value, decimals):
    if value is None:
        return "—"
    return f"{value:.{decimals}f}"


def _difference(row):
    difference = row.difference
    if difference is None:
        return "—"
    return "0" if difference == 0 else f"{difference:+.2g}"


def _tolerance(row):
    return f"±{row.tolerance:g}"


def summary_line(rows) -> str:
    failed = [r.id for r in rows if not r.passed]
    if not failed:
        return f"All {len(rows)} checks pass."
    return (f"{len(rows) - len(failed)} of {len(rows)} checks pass; failed: "
            f"{', '.join(failed)}.")


def _cells(row):
    computed_decimals = row.decimals + 2 if row.unit != "digits" else 2
    return (row.id, f"{_number(row.expected, row.decimals)} {row.unit}",
            _number(row.computed, computed_decimals), _difference(row), _tolerance(row),
            "pass" if row.passed else "FAIL")


def render_verification(rows, console):
    """The report: per check a line of figures and, under it, what was computed with its source
    number (wrapped to the console's width); the sources in full under the table."""
    console.print(Text(f"deviation {__version__}: verification against published values",
                       style="bold"))
    sources: dict[str, int] = {}
    for row in rows:
        sources.setdefault(row.source, len(sources) + 1)
    header = ("check", "expected", "computed", "diff.", "tol.", "")
    cells = [_cells(r) for r in rows]
    widths = [max(len(c[i]) for c in [header, *cells]) for i in range(len(header))]

    def line(values):
        first = values[0].ljust(widths[0])
        rest = "  ".join(v.rjust(w) for v, w in zip(values[1:-1], widths[1:-1]))
        return f"{first}  {rest}  "

    console.print(Text(line(header).rstrip(), style="bold"), overflow="ignore", crop=False)
    group = None
    for row, values in zip(rows, cells):
        if row.group != group:
            group = row.group
            console.print(Text(f"\n{group}", style="bold underline"))
        text = Text(line(values))
        text.append(values[-1], style="green" if row.passed else "bold red")
        console.print(text, overflow="ignore", crop=False)
        what = Text(f"{row.what} [{sources[row.source]}]", style="dim")
        if row.problem:
            what.append(f" {row.problem}", style="red")
        console.print(Padding(what, (0, 0, 0, 2), expand=False))
    console.print()
    console.print(Text(summary_line(rows),
                       style="bold green" if all(r.passed for r in rows) else "bold red"))
    console.print(Text("Sources:", style="bold"))
    for source, number in sources.items():
        console.print(Text(f"[{number}] {source}"))
    console.print(Text(SCOPE))


def verification_json(rows) -> dict:
    """The same rows as JSON: every field of each, the source in full."""
    return {
        "version": __version__,
        "all_pass": all(r.passed for r in rows),
        "passed": sum(r.passed for r in rows),
        "failed": sum(not r.passed for r in rows),
        "rows": [{"id": r.id, "group": r.group, "what": r.what, "source": r.source,
                  "expected": r.expected, "computed": r.computed, "difference": r.difference,
                  "tolerance": r.tolerance, "unit": r.unit, "pass": r.passed,
                  "problem": r.problem} for r in rows],
        "scope": SCOPE,
    }
