"""Output of the after-installation sheets: the switch-on test, its read-back, the swing fit,
the choice of swing state, refits and the deflection helper, as terminal tables, printable
.xlsx and .html sheets, pictures and JSON.

The sheets' words are made here once and shared by every form; the figures come from
:mod:`deviation.aftercare` and are never recomputed here.
"""

from __future__ import annotations

import datetime as dt
import html
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .. import __version__
from ..aftercare import NO_VISIBLE_CHANGE_DEG, SETTINGS_SHEET, TEST_SHEET
from ..physics.swing import COEFFICIENTS
from .words import CAUTIONS

#: What the read-back thresholds rest on, said on every sheet that uses them.
TOLERANCE_NOTE = ("A step differs when the observed change is further from the predicted than the "
                  "larger of {resolution:g}° (the reading resolution of a typical card) and "
                  "{fraction:.0%} of the predicted change; both are common practice, no source, "
                  "and can be set on the command line.")

#: What the card does when the reading rises or falls, seen from above (Compass = Magnetic -
#: Deviation; the card's north follows the needle).
CARD_TURNS = {1: "card turns anticlockwise, seen from above", -1: "card turns clockwise, seen "
                                                                  "from above"}


# Words -------------------------------------------------------------------------------------------

def signed(value, digits=2) -> str:
    """A signed figure with no '-0.00'."""
    if value is None:
        return ""
    text = f"{value:+.{digits}f}"
    return text.replace("-", "+") if float(text) == 0 else text


def reading_words(change_deg: float, sensor_kind: str, short: bool = False) -> str:
    """How the reading moves, for the person at the helm (``short``: for narrow tables, the
    card's turn without "seen from above")."""
    if abs(change_deg) < NO_VISIBLE_CHANGE_DEG:
        return "no visible change"
    way = "rises" if change_deg > 0 else "falls"
    turn = CARD_TURNS[1 if change_deg > 0 else -1]
    if short:
        turn = turn.replace(", seen from above", "")
    if sensor_kind == "magnetic compass":
        return f"{'' if short else 'reading '}{way} {abs(change_deg):.2f}° ({turn})"
    return f"heading shown {way} {abs(change_deg):.2f}°"


def _what(row) -> str:
    return row.name if row.kind == "circuit" else f"state: {row.name}"


def _current(value):
    return "" if value is None else f"{value:g}"


# A sheet: one description, three forms -----------------------------------------------------

@dataclass
class Block:
    """A table of a printable sheet: its xlsx sheet name, heading, columns, rows, notes."""

    sheet: str
    title: str
    headers: list
    rows: list
    notes: list = field(default_factory=list)
    formats: dict = field(default_factory=dict)      # column index -> xlsx number format
    write_in: tuple = ()                             # columns left blank for a pen
    image: bytes | None = None


def _xlsx(title, meta, blocks, settings=None):
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Border, Font, PatternFill, Side

    book = Workbook()
    bold = Font(bold=True)
    fill = PatternFill("solid", fgColor="DCE6F0")
    pen = PatternFill("solid", fgColor="FFFDE7")
    thin = Side(style="thin", color="9AA5B1")
    box = Border(left=thin, right=thin, top=thin, bottom=thin)
    first = True
    for block in blocks:
        sheet = book.active if first else book.create_sheet()
        first = False
        sheet.title = block.sheet[:31]
        for c, name in enumerate(block.headers, start=1):
            cell = sheet.cell(row=1, column=c, value=name)
            cell.font, cell.fill, cell.border = bold, fill, box
            cell.alignment = Alignment(wrap_text=True, vertical="top")
        for r, values in enumerate(block.rows, start=2):
            for c, value in enumerate(values, start=1):
                cell = sheet.cell(row=r, column=c, value=value)
                if isinstance(value, str):
                    cell.data_type = "s"             # names stay text, never a formula
                cell.border = box
                if c - 1 in block.formats and isinstance(value, (int, float)):
                    cell.number_format = block.formats[c - 1]
                if c - 1 in block.write_in:
                    cell.fill = pen
        for c, name in enumerate(block.headers, start=1):
            longest = max([len(str(name))] + [len(str(v[c - 1])) for v in block.rows
                                              if c - 1 < len(v) and v[c - 1] is not None])
            sheet.column_dimensions[sheet.cell(row=1, column=c).column_letter].width = min(
                max(10, longest + 2), 60)
        sheet.freeze_panes = "A2"
        sheet.oddHeader.center.text = f"{title}: {block.title}"
        sheet.page_setup.orientation = "landscape"
        sheet.page_setup.fitToWidth = 1
        sheet.print_title_rows = "1:1"
    if settings:
        sheet = book.create_sheet(SETTINGS_SHEET[:31])
        for c, name in enumerate(("setting", "value"), start=1):
            cell = sheet.cell(row=1, column=c, value=name)
            cell.font, cell.fill = bold, fill
        for r, (name, value) in enumerate(settings, start=2):
            sheet.cell(row=r, column=1, value=name).data_type = "s"
            cell = sheet.cell(row=r, column=2, value=value)
            if isinstance(value, str):
                cell.data_type = "s"
        sheet.column_dimensions["A"].width = 24
        sheet.column_dimensions["B"].width = 60
    notes = book.create_sheet("notes")
    notes.cell(row=1, column=1, value=title).font = Font(bold=True, size=13)
    lines = list(meta) + [""] + [n for b in blocks for n in b.notes] + [""] + list(CAUTIONS)
    for r, line in enumerate(lines, start=2):
        cell = notes.cell(row=r, column=1, value=line)
        cell.data_type = "s"
        cell.alignment = Alignment(wrap_text=True)
    notes.column_dimensions["A"].width = 110
    return book


STYLE = """
body { font: 10.5pt/1.4 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; color: #1a1a1a;
       max-width: 270mm; margin: 10mm auto; }
h1 { font-size: 16pt; margin: 0 0 2mm; } h2 { font-size: 12.5pt; margin: 6mm 0 2mm;
     border-bottom: 1.5px solid #345; }
table { border-collapse: collapse; width: 100%; margin: 1mm 0 2mm; font-size: 9pt; }
th, td { border: 1px solid #9aa5b1; padding: 1.4mm 1.8mm; text-align: right; vertical-align: top; }
th { background: #e4ebf3; } td.text, th.text { text-align: left; }
td.pen { background: #fffde7; min-width: 18mm; height: 7mm; }
.meta { color: #444; font-size: 9pt; } .note { font-size: 9pt; margin: 1mm 0; }
.caution { border: 1.5px solid #b26a00; background: #fff8ec; padding: 2mm 4mm; margin: 4mm 0;
           font-size: 9pt; }
figure { margin: 2mm 0; text-align: center; } img { max-width: 100%; height: auto; }
table, figure { break-inside: avoid; } @page { size: A4 landscape; margin: 10mm; }
@media print { body { margin: 0 auto; max-width: none; } }
"""


def _e(value):
    return html.escape("" if value is None else str(value), quote=True)


def _html(title, meta, blocks):
    import base64

    parts = [f"<!doctype html><html lang=en><head><meta charset=utf-8><title>{_e(title)}</title>"
             f"<style>{STYLE}</style></head><body><h1>{_e(title)}</h1>"]
    parts += [f"<p class=meta>{_e(line)}</p>" for line in meta]
    for block in blocks:
        parts.append(f"<h2>{_e(block.title)}</h2><table><tr>")
        for c, name in enumerate(block.headers):
            numeric = any(isinstance(r[c], (int, float)) for r in block.rows if c < len(r))
            parts.append(f"<th class={'num' if numeric else 'text'}>{_e(name)}</th>")
        parts.append("</tr>")
        for values in block.rows:
            cells = []
            for c, value in enumerate(values):
                kind = "pen" if c in block.write_in else (
                    "num" if isinstance(value, (int, float)) else "text")
                text = _format(value, block.formats.get(c))
                cells.append(f"<td class={kind}>{_e(text)}</td>")
            parts.append("<tr>" + "".join(cells) + "</tr>")
        parts.append("</table>")
        parts += [f"<p class=note>{_e(n)}</p>" for n in block.notes]
        if block.image is not None:
            data = base64.b64encode(block.image).decode("ascii")
            parts.append(f'<figure><img alt="{_e(block.title)}" '
                         f'src="data:image/png;base64,{data}"></figure>')
    parts.append("<div class=caution><b>Cautions.</b> " + " ".join(_e(c) for c in CAUTIONS)
                 + "</div></body></html>")
    return "".join(parts)


def _format(value, number_format):
    if value is None:
        return ""
    if isinstance(value, float):
        if number_format == "+0.00;-0.00;0.00":
            return signed(value)
        digits = len(number_format.split(".")[1]) if number_format and "." in number_format else 2
        return f"{value:.{digits}f}"
    return str(value)


def write_sheet(path, title, meta, blocks, settings=None):
    """Write a sheet as .xlsx or .html by the file's suffix, whole or not at all."""
    from ..files import OutputError, write_atomically

    path = Path(path)
    suffix = path.suffix.lower()
    if suffix == ".xlsx":
        book = _xlsx(title, meta, blocks, settings)
        write_atomically(path, lambda temporary: book.save(temporary))
    elif suffix in (".html", ".htm"):
        text = _html(title, meta, blocks)
        write_atomically(path, lambda temporary: Path(temporary).write_text(text,
                                                                            encoding="utf-8"))
    else:
        raise OutputError(f"{path}: a sheet is FILE.xlsx or FILE.html")


# Switch-on test ----------------------------------------------------------------------------------

TEST_HEADERS = ["step", "circuit", "state", "action", "current before [A]", "current on test [A]",
                "predicted change [°]", "how the reading moves", "reading before [°]",
                "reading after [°]", "observed change [°]", "note"]


def _test_meta(test):
    s = test.sensor
    start = ("every circuit off" if test.start_state == "all off"
             else f"the state {test.start_state!r}")
    adjusted = (f"correctors set in {s.reference_state!r} allowed for" if test.adjusted
                else "no correctors allowed for")
    return [f"plan {test.plan.source}; sensor {s.name} ({s.kind}); vessel lying on magnetic "
            f"heading {test.heading_deg:05.1f}°; starting from {start}; {adjusted}; H "
            f"{test.site.horizontal_t * 1e6:.2f} µT",
            f"made {dt.date.today().isoformat()} by deviation {__version__}"]


def _test_notes(test):
    notes = ["How to: with the vessel still at the berth, set the starting state, note the "
             "reading, make the step, wait for the card to settle, note the reading again, then "
             "return to the starting state before the next step. Predicted change: positive when "
             "the reading rises (Compass = Magnetic - Deviation, the heading fixed).",
             "Each circuit is predicted at the current in 'current on test'; where a clamp meter "
             "shows another current, write it over the figure and the read-back predicts at it.",
             "A state step sets every circuit as in that state, independent ones off."]
    if test.unknown_items:
        notes.append("Not in the prediction (direction unknown): " + ", ".join(test.unknown_items)
                     + ".")
    if test.overwhelmed:
        notes.append("The field at the sensor is at least the Earth's horizontal field here: the "
                     "sensor can point anywhere, and small changes of heading change everything.")
    return notes


def test_block(test) -> Block:
    rows = []
    for row in test.rows:
        rows.append([row.step, row.name if row.kind == "circuit" else None,
                     row.name if row.kind == "state" else None, row.action,
                     row.current_before_a, row.current_on_test_a,
                     round(row.predicted_change_deg, 3),
                     reading_words(row.predicted_change_deg, test.sensor.kind), None, None, None,
                     row.note or None])
    return Block(TEST_SHEET, "switch-on test", TEST_HEADERS, rows, _test_notes(test),
                 {4: "0.0##", 5: "0.0##", 6: "+0.00;-0.00;0.00"}, (8, 9, 10))


def test_settings(test):
    return [("plan", test.plan.source), ("sensor", test.sensor.name),
            ("magnetic heading [°]", test.heading_deg), ("start state", test.start_state),
            ("adjusted", "yes" if test.adjusted else "no"),
            ("made", f"{dt.date.today().isoformat()} by deviation {__version__}")]


def write_test_sheet(test, path):
    """The printable switch-on test sheet (.xlsx, read back as it is, or .html to print)."""
    write_sheet(path, "Switch-on test", _test_meta(test), [test_block(test)], test_settings(test))


def _console_table(console, title, columns):
    from rich import box
    from rich.table import Table
    from rich.text import Text

    table = Table(title=Text(title), title_justify="left", padding=(0, 1), pad_edge=False,
                  box=box.SIMPLE_HEAVY if console.is_terminal else box.ASCII2)
    for name, justify in columns:
        table.add_column(name, justify=justify, overflow="fold")
    return table


def render_test_sheet(test, console):
    from rich.text import Text

    console.print(Text("Switch-on test", style="bold"))
    for line in _test_meta(test)[:1]:
        console.print(Text(line))
    notes = any(row.note for row in test.rows)
    columns = [("step", "right"), ("switch", "left"), ("action", "left"), ("A", "right"),
               ("predicted", "right"), ("the reading", "left")] + ([("note", "left")] if notes
                                                                  else [])
    table = _console_table(console, "", columns)
    for row in test.rows:
        current = ("" if row.kind == "state" else
                   f"{_current(row.current_before_a)} → {_current(row.current_on_test_a)}")
        cells = [str(row.step), Text(_what(row)), row.action, current,
                 f"{signed(row.predicted_change_deg)}°",
                 reading_words(row.predicted_change_deg, test.sensor.kind, short=True)]
        table.add_row(*cells, *([Text(row.note)] if notes else []))
    console.print(table)
    if test.sensor.kind == "magnetic compass":
        console.print("  The card turns as seen from above; a rising reading is the card turning "
                      "anticlockwise.")
    for note in _test_notes(test):
        console.print(Text(f"  {note}"))


def test_json(test):
    return {"plan": test.plan.source, "sensor": test.sensor.name, "kind": test.sensor.kind,
            "magnetic_heading_deg": test.heading_deg, "start_state": test.start_state,
            "adjusted": test.adjusted, "horizontal_ut": round(test.site.horizontal_t * 1e6, 4),
            "not_predicted": list(test.unknown_items),
            "steps": [{"step": r.step, "kind": r.kind, "name": r.name, "action": r.action,
                       "current_before_a": r.current_before_a,
                       "current_on_test_a": r.current_on_test_a,
                       "current_from_state": r.current_from,
                       "predicted_change_deg": round(r.predicted_change_deg, 4),
                       "reading": reading_words(r.predicted_change_deg, test.sensor.kind),
                       "runs": list(r.runs), "note": r.note} for r in test.rows],
            "cautions": list(CAUTIONS)}


# Reading the test back ---------------------------------------------------------------------------

RESULT_HEADERS = ["sheet row", "circuit or state", "current [A]", "predicted [°]",
                  "observed [°]", "difference [°]", "allowed [°]", "verdict", "probable cause",
                  "runs"]


def _verdict(row):
    if row.status == "differs":
        return "DIFFERS: probable routing error" if row.kind == "circuit" else "DIFFERS"
    return row.status


def results_block(results) -> Block:
    rows = [[r.row, _what(r), None if r.kind == "state" else r.current_on_test_a,
             round(r.predicted_change_deg, 3),
             None if r.observed_change_deg is None else round(r.observed_change_deg, 3),
             None if r.difference_deg is None else round(r.difference_deg, 3),
             None if r.tolerance_deg is None else round(r.tolerance_deg, 3), _verdict(r),
             r.cause, ", ".join(r.runs) or None] for r in results.rows]
    return Block("switch-on results", "observed beside predicted", RESULT_HEADERS, rows,
                 [TOLERANCE_NOTE.format(resolution=results.resolution_deg,
                                        fraction=results.fraction)],
                 {3: "+0.00;-0.00;0.00", 4: "+0.00;-0.00;0.00", 5: "+0.00;-0.00;0.00",
                  6: "0.00"})


def render_test_results(results, console):
    from rich.text import Text

    test = results.test
    console.print(Text("Switch-on test read back", style="bold"))
    console.print(Text(f"{results.source}; " + _test_meta(test)[0]))
    table = _console_table(console, "", [("row", "right"), ("circuit or state", "left"),
                                         ("predicted", "right"), ("observed", "right"),
                                         ("allowed", "right"), ("verdict", "left")])
    for r in results.rows:
        style = "bold red" if r.status == "differs" else "green" if r.status == "agrees" else "dim"
        table.add_row(str(r.row), Text(_what(r)), f"{signed(r.predicted_change_deg)}°",
                      "" if r.observed_change_deg is None else f"{signed(r.observed_change_deg)}°",
                      "" if r.tolerance_deg is None else f"±{r.tolerance_deg:.2f}°",
                      Text(_verdict(r), style=style))
    console.print(table)
    console.print(Text("  " + TOLERANCE_NOTE.format(resolution=results.resolution_deg,
                                                    fraction=results.fraction)))
    suspects = results.suspects
    if suspects:
        console.print(Text("Probable routing errors", style="bold red"))
        for r in suspects:
            runs = f" (runs: {', '.join(r.runs)})" if r.runs else ""
            console.print(Text(f"  • {r.name}{runs}: observed {signed(r.observed_change_deg)}°, "
                               f"predicted {signed(r.predicted_change_deg)}°; {r.cause}"))
    elif results.agrees:
        console.print(Text("Every step read agrees with the plan.", style="green"))
    states = [r for r in results.rows if r.kind == "state" and r.status == "differs"]
    if states and not suspects:
        console.print(Text("  A whole state differs while its circuits agree: look for loads "
                           "the plan does not list, or circuits sharing a run."))


def results_json(results):
    return {"source": results.source, "sensor": results.test.sensor.name,
            "magnetic_heading_deg": results.test.heading_deg,
            "start_state": results.test.start_state,
            "resolution_deg": results.resolution_deg, "fraction": results.fraction,
            "agrees": results.agrees,
            "probable_routing_errors": [r.name for r in results.suspects],
            "rows": [{"row": r.row, "kind": r.kind, "name": r.name,
                      "current_before_a": r.current_before_a,
                      "current_on_test_a": r.current_on_test_a,
                      "predicted_change_deg": round(r.predicted_change_deg, 4),
                      "observed_change_deg": None if r.observed_change_deg is None
                      else round(r.observed_change_deg, 4),
                      "tolerance_deg": None if r.tolerance_deg is None
                      else round(r.tolerance_deg, 4),
                      "status": r.status, "probable_cause": r.cause, "runs": list(r.runs)}
                     for r in results.rows]}


def write_results(results, path):
    write_sheet(path, "Switch-on test read back", [results.source] + _test_meta(results.test),
                [results_block(results)])


# Swing -------------------------------------------------------------------------------------------

def _coefficients(values):
    return [None if values is None else round(float(v), 3) for v in
            (values if values is not None else [None] * 5)]


def swing_blocks(comparison, image=None):
    heading_name = f"{comparison.on} heading"
    rows = []
    for st in comparison.states:
        fit = st.fit
        rows.append([st.state, "swing", *_coefficients(fit.coefficients_deg),
                     round(fit.rms_residual_deg, 3), round(fit.max_residual_deg, 3), fit.headings])
        if fit.standard_error_deg is not None:
            rows.append([st.state, "standard error", *[f"±{v:.2f}" for v in
                                                        fit.standard_error_deg],
                         None, None, None])
        rows.append([st.state, "plan",
                     *(_coefficients(st.predicted_deg) if st.predicted_deg is not None
                       else ["overwhelmed"] * 5), None, None, None])
        rows.append([st.state, "not explained", *_coefficients(st.unexplained_deg),
                     None, None, None])
    headers = ["state", "", *[f"{c} [°]" for c in COEFFICIENTS], "rms [°]", "largest [°]",
               "readings"]
    signed_format = "+0.00;-0.00;0.00"
    formats = {i: signed_format for i in range(2, 7)} | {7: "0.00", 8: "0.00"}
    adjusted = (f"predictions are of the residual after adjustment in {comparison.adjusted_in!r}"
                if comparison.adjusted_in else "predictions are of the whole field (not adjusted)")
    notes = [f"delta = A + B sin ψ + C cos ψ + D sin 2ψ + E cos 2ψ, ψ the {heading_name}, east "
             "positive, least squares (NGA Handbook of Magnetic Compass Adjustment, ch. V); "
             + adjusted + ". swing: fitted to the readings (rms and largest: the readings' "
             "residuals about the curve); plan: the same five terms fitted to the plan's exact "
             "curve from the wiring and oriented items; not explained: swing minus plan.",
             "The plan knows the wiring and oriented items only: the vessel's own iron, the "
             "correctors and a lubber line out of line are in every swing and not in the plan, "
             "so the difference per state mixes them in; the change from one state to another "
             "cancels them."]
    if comparison.unknown_items:
        notes.append("Not in the prediction (direction unknown): "
                     + ", ".join(comparison.unknown_items) + ".")
    blocks = [Block("swing fit", "approximate coefficients per state", headers, rows, notes,
                    formats, image=image)]
    if comparison.changes:
        change_rows = []
        for ch in comparison.changes:
            label = f"{ch.state} − {ch.base}"
            change_rows.append([label, "swing", *_coefficients(ch.observed_deg)])
            if ch.standard_error_deg is not None:
                change_rows.append([label, "standard error",
                                    *[f"±{v:.2f}" for v in ch.standard_error_deg]])
            change_rows.append([label, "plan", *_coefficients(ch.predicted_deg)])
            change_rows.append([label, "not explained",
                                *_coefficients(ch.unexplained_deg)])
        blocks.append(Block("change between states", "change of the coefficients between states "
                            "(the wiring's part alone)", headers[:7], change_rows,
                            [], {i: signed_format for i in range(2, 7)}))
    readings = []
    for st in comparison.states:
        for i in range(len(st.headings_deg)):
            readings.append([st.state, int(st.rows[i]), round(float(st.headings_deg[i]), 2),
                             round(float(st.deviation_deg[i]), 3),
                             round(float(st.fit.residual_deg[i]), 3)])
    blocks.append(Block("swing readings", "readings and residuals", [
        "state", "sheet row", f"{heading_name} [°]", "deviation [°]", "residual [°]"], readings,
        [], {2: "0.0", 3: "+0.00;-0.00;0.00", 4: "+0.00;-0.00;0.00"}))
    return blocks


def swing_meta(comparison):
    s = comparison.sensor
    return [f"readings {comparison.source}; sensor {s.name} ({s.kind}); H "
            f"{comparison.site.horizontal_t * 1e6:.2f} µT",
            f"made {dt.date.today().isoformat()} by deviation {__version__}"]


def swing_plot(comparison, path=None):
    """Readings, the fitted curve and the plan's curve per state, against heading. PNG bytes."""
    from ..physics.swing import curve_deg
    from .plots import _pyplot, _save

    plt = _pyplot()
    panels = 2 if comparison.changes else 1
    fig, axes = plt.subplots(panels, 1, figsize=(7.5, 3.8 * panels), dpi=130, squeeze=False)
    ax = axes[0, 0]
    grid = np.arange(0.0, 360.5, 1.0)
    colours = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    for i, st in enumerate(comparison.states):
        colour = colours[i % len(colours)]
        ax.plot(st.headings_deg, st.deviation_deg, "o", color=colour, ms=4,
                label=f"{st.state}: readings")
        ax.plot(grid, curve_deg(st.fit.coefficients_deg, grid), color=colour, lw=1.5,
                label=f"{st.state}: fit (rms {st.fit.rms_residual_deg:.2f}°)")
        if st.predicted_deg is not None:
            ax.plot(grid, curve_deg(st.predicted_deg, grid), color=colour, lw=1.1, ls="--",
                    label=f"{st.state}: plan")
    ax.set_title(f"{comparison.sensor.name}: swing and plan")
    if comparison.changes:
        low = axes[1, 0]
        for i, ch in enumerate(comparison.changes):
            colour = colours[(i + 1) % len(colours)]
            low.plot(grid, curve_deg(ch.observed_deg, grid), color=colour, lw=1.5,
                     label=f"{ch.state} − {ch.base}: swing")
            if ch.predicted_deg is not None:
                low.plot(grid, curve_deg(ch.predicted_deg, grid), color=colour, lw=1.1, ls="--",
                         label=f"{ch.state} − {ch.base}: plan")
        low.set_title("change between states: the wiring's part alone")
    for one in axes[:, 0]:
        one.axhline(0, color="black", lw=0.6)
        one.set_xlim(0, 360)
        one.set_xticks(range(0, 361, 45))
        one.set_xlabel(f"{comparison.on} heading [deg]")
        one.set_ylabel("deviation [deg] (east +)")
        one.grid(alpha=0.3)
        one.legend(fontsize=6.5, ncol=2)
    fig.tight_layout()
    data = _save(fig, path)
    plt.close(fig)
    return data


def write_swing(comparison, path):
    image = swing_plot(comparison) if str(path).lower().endswith((".html", ".htm")) else None
    write_sheet(path, "Swing", swing_meta(comparison), swing_blocks(comparison, image))


def render_swing(comparison, console):
    from rich.text import Text

    console.print(Text("Swing: approximate coefficients", style="bold"))
    console.print(Text(swing_meta(comparison)[0]))
    blocks = swing_blocks(comparison)
    for block in blocks[:2]:
        table = _console_table(console, block.title, [(h, "left" if i < 2 else "right")
                                                      for i, h in enumerate(block.headers)])
        previous = None
        for values in block.rows:
            cells = [Text(_format(v, block.formats.get(i))) for i, v in enumerate(values)]
            if values[0] == previous:             # the state once per group
                cells[0] = Text("")
            previous = values[0]
            table.add_row(*cells)
        console.print(table)
    for note in blocks[0].notes:
        console.print(Text(f"  {note}"))


def swing_json(comparison):
    def coefficients(values):
        return None if values is None else {c: round(float(v), 4)
                                            for c, v in zip(COEFFICIENTS, values)}

    return {"source": comparison.source, "sensor": comparison.sensor.name,
            "heading": comparison.on, "adjusted_in": comparison.adjusted_in,
            "horizontal_ut": round(comparison.site.horizontal_t * 1e6, 4),
            "states": [{"state": st.state, "headings": st.fit.headings,
                        "fitted_deg": coefficients(st.fit.coefficients_deg),
                        "standard_error_deg": coefficients(st.fit.standard_error_deg),
                        "rms_residual_deg": round(st.fit.rms_residual_deg, 4),
                        "max_residual_deg": round(st.fit.max_residual_deg, 4),
                        "predicted_deg": coefficients(st.predicted_deg),
                        "unexplained_deg": coefficients(st.unexplained_deg)}
                       for st in comparison.states],
            "changes": [{"state": ch.state, "from": ch.base,
                         "observed_deg": coefficients(ch.observed_deg),
                         "standard_error_deg": coefficients(ch.standard_error_deg),
                         "predicted_deg": coefficients(ch.predicted_deg),
                         "unexplained_deg": coefficients(ch.unexplained_deg)}
                        for ch in comparison.changes],
            "not_predicted": list(comparison.unknown_items)}


# Which state to swing in -------------------------------------------------------------------------

def _deg(value, overwhelmed=False):
    from .words import with_degree_sign

    return with_degree_sign(value, overwhelmed)


def render_reference_choices(choices, console):
    from rich.text import Text

    console.print(Text("Which state to adjust and swing in", style="bold"))
    console.print("  For each candidate: the largest figure held against the budget in the other "
                  "states the sensor is used in, once adjusted in the candidate (the deviation of "
                  "b_state − b_ref, worst heading and attitude). Smallest first.")
    for sensor, rows in choices.items():
        table = _console_table(console, sensor, [("#", "right"), ("adjust and swing in", "left"),
                                                 ("worst held", "right"), ("in", "left"),
                                                 ("level", "right"), ("budget", "right"),
                                                 ("", "left")])
        for rank, c in enumerate(rows, start=1):
            table.add_row(str(rank), Text(c.reference_state + ("  (the plan's)" if c.in_plan
                                                               else "")),
                          Text(_deg(c.worst, c.overwhelmed),
                               style="green" if c.within_budget else "bold red"),
                          Text(c.worst_state or "—"), _deg(c.level_worst_deg, c.overwhelmed),
                          str(c.budget), "within" if c.within_budget else "OVER")
        console.print(table)


def choices_json(choices):
    return {"sensors": [{"sensor": sensor, "choices": [
        {"reference_state": c.reference_state, "worst_held": round(c.worst, 4),
         "worst_state": c.worst_state, "level_worst_deg": round(c.level_worst_deg, 4),
         "within_budget": c.within_budget, "overwhelmed": c.overwhelmed,
         "budget": {"value": c.budget.value, "unit": c.budget.unit.value},
         "in_plan": c.in_plan} for c in rows]}
        for sensor, rows in choices.items()]}


# Refits ------------------------------------------------------------------------------------------

def render_refit(result, console):
    from rich.text import Text

    console.print(Text(f"Refit: {result.old_source} → {result.new_source}", style="bold"))
    console.print("  held: each plan's own figure held against the budget (the new one as if "
                  "adjusted afresh); level: the level deviation the compass shows, largest over "
                  "headings; card change: the largest change of the deviation card over "
                  "headings, the correctors left as set for the earlier plan. A new swing is "
                  f"advised above {result.threshold_deg:g}° (common practice, no source).")
    for note in result.notes:
        console.print(Text(f"  • {note}", style="yellow"))
    table = _console_table(console, "", [("sensor", "left"), ("state", "left"),
                                         ("held", "right"), ("level", "right"),
                                         ("card change", "right"), ("new swing", "left")])
    for st in result.states:
        swing_style = "bold red" if st.swing_advised else "green"
        table.add_row(Text(st.sensor), Text(st.state + ("" if st.used else " (not used)")),
                      f"{_deg(st.held_before)} → {_deg(st.held_after)}",
                      f"{_deg(st.level_before_deg)} → {_deg(st.level_after_deg)}",
                      Text(f"{st.card_change_deg:.2f}°", style=swing_style),
                      Text("ADVISED" if st.swing_advised else "no", style=swing_style))
    console.print(table)
    console.print(Text("Caused by (each change's own field at the sensor, as a deviation)",
                       style="bold"))
    shown = False
    for st in result.states:
        causes = [d for d in st.differences if d.size_deg >= NO_VISIBLE_CHANGE_DEG / 10]
        if causes:
            shown = True
            listed = "; ".join(f"{d.name} ({', '.join(d.how)}): {d.size_deg:.2f}°"
                               for d in causes[:5])
            console.print(Text(f"  {st.sensor}, {st.state}: {listed}"))
    if not shown:
        console.print("  nothing at the sensors")
    console.print(Text("A new swing is advised." if result.swing_advised else
                       "No new swing is needed for the wiring changes.",
                       style="bold red" if result.swing_advised else "green"))


def refit_json(result):
    return {"old": result.old_source, "new": result.new_source,
            "threshold_deg": result.threshold_deg, "swing_advised": result.swing_advised,
            "notes": list(result.notes),
            "states": [{"sensor": st.sensor, "state": st.state, "used": st.used,
                        "held_before": round(st.held_before, 4),
                        "held_after": round(st.held_after, 4),
                        "level_before_deg": round(st.level_before_deg, 4),
                        "level_after_deg": round(st.level_after_deg, 4),
                        "card_change_deg": round(st.card_change_deg, 4),
                        "swing_advised": st.swing_advised,
                        "caused_by": [{"kind": d.kind, "name": d.name, "how": list(d.how),
                                       "size_deg": round(d.size_deg, 4)}
                                      for d in st.differences]}
                       for st in result.states]}


# Deflection --------------------------------------------------------------------------------------

def equipment_csv(row) -> str:
    """The equipment row as CSV under the sheet's header, ready to paste into equipment.csv."""
    import csv
    import io

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(list(row))
    writer.writerow([row[k] for k in row])
    return buffer.getvalue()


def render_deflection(row, moment_am2, deflection_deg, distance_m, position, horizontal_t,
                      console):
    from rich.text import Text

    console.print(Text(f"Magnetic moment from a {abs(deflection_deg):g}° deflection at "
                       f"{distance_m:g} m, {position}, H {horizontal_t * 1e6:.2f} µT: "
                       f"{moment_am2:.3g} A·m²", style="bold"))
    console.print("  tan δ = µ0 m / (2π r³ H) end-on, µ0 m / (4π r³ H) broadside (Gauss's "
                  "deflection method); the item taken as a point dipole, so r should be several "
                  "times its size.")
    console.print("  Equipment row (axis blank: the orientation aboard is not known, the worst "
                  "counts):")
    console.print(Text(equipment_csv(row).rstrip()))


def deflection_json(row, moment_am2, deflection_deg, distance_m, position, horizontal_t):
    return {"moment_am2": float(f"{moment_am2:.6g}"), "deflection_deg": deflection_deg,
            "distance_m": distance_m, "position": position,
            "horizontal_ut": round(horizontal_t * 1e6, 4), "equipment_row": row}
