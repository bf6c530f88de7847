"""Printable reports of a check: a formatted .xlsx workbook or one self-contained .html file.

Both hold the same content: the summary, each sensor's budget in every state with the runs,
equipment, totals and hints, the deviation cards, the findings, the site and the cautions. Reports
are written whole or not at all, and never onto the plan.
"""

from __future__ import annotations

import base64
import datetime as dt
import html
import re
from pathlib import Path

from .. import __version__
from ..budget import OVERWHELMED_DEG
from ..card import cards
from ..files import check_output, write_atomically
from ..units import LENGTH_UNITS
from . import view, words
from .words import CAUTIONS, degrees


class ReportError(ValueError):
    """A report that cannot be written as asked."""


def write_report(analysis, path):
    """Write the report chosen by the file's suffix (.xlsx or .html)."""
    path = Path(path)
    check_output(path, analysis.plan.source)
    suffix = path.suffix.lower()
    if suffix == ".xlsx":
        write_atomically(path, lambda temporary: _xlsx(analysis).save(temporary))
    elif suffix in (".html", ".htm"):
        text = html_report(analysis)

        def save(temporary):
            Path(temporary).write_text(text, encoding="utf-8")

        write_atomically(path, save)
    else:
        from ..files import OutputError

        raise OutputError(f"{path}: a report is FILE.xlsx or FILE.html")


# Shared content ------------------------------------------------------------------------------------

def _length(plan, metres):
    """A length as a number in the plan's unit."""
    return float(metres) / LENGTH_UNITS[plan.site.units]


def _figure(value_deg):
    """A deviation as a number, or the word "overwhelmed" in place of the placeholder figure."""
    if value_deg is not None and value_deg >= OVERWHELMED_DEG:
        return words.OVERWHELMED
    return value_deg


def _run_rows(plan, sensor, st, all_runs=True):
    """(name, current A, nearest, horiz µT, vert µT, alone, residual, share %) per row;
    "overwhelmed" for a figure the field overwhelms, and "—" for its share."""
    rows, _ = view.budget_rows(sensor, st, all_runs=all_runs)
    degrees_shown = sensor.budget.degrees
    return [[r.name + (" (bound)" if r.bound else ""), r.current_a, _length(plan, r.nearest_m),
             r.horizontal_t * 1e6, None if r.vertical_t is None else r.vertical_t * 1e6,
             _figure(r.max_deviation_deg) if degrees_shown else r.counted,
             ("adjusted" if r.compensated else _figure(r.change_deg))
             if sensor.reference_state and degrees_shown else None,
             "—" if degrees_shown and r.counted >= OVERWHELMED_DEG else r.share_of_budget * 100]
            for r in rows]


#: Number formats of the run table's columns after the name, in the html report.
HTML_FORMATS = ("{:g}", "{:.3f}", "{:.3f}", "{:.3f}", "{:.2f}", "{:.2f}", "{:.0f}")

RUN_HEADERS = ["run / item", "current [A]", "nearest [{u}]", "horizontal [µT]", "vertical [µT]",
               "alone [°]", "residual after adjustment [°]", "share of budget [%]"]


# xlsx -----------------------------------------------------------------------------------------------

def _sheet_name(name, taken):
    clean = re.sub(r"[\[\]:*?/\\]", " ", name).strip() or "sensor"
    base = clean[:31]
    candidate, n = base, 2
    while candidate.lower() in taken:
        suffix = f" ({n})"
        candidate, n = base[:31 - len(suffix)] + suffix, n + 1
    taken.add(candidate.lower())
    return candidate


def _xlsx(analysis):
    findings = analysis.findings
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font, PatternFill

    plan = analysis.plan
    unit = plan.site.units
    bold = Font(bold=True)
    title_font = Font(bold=True, size=13)
    header_fill = PatternFill("solid", fgColor="DCE6F0")
    over_font = Font(bold=True, color="B00020")
    ok_font = Font(color="1B5E20")
    book = Workbook()
    taken = set()

    def put(sheet, row, column, value, number_format=None, font=None):
        cell = sheet.cell(row=row, column=column, value=value)
        if isinstance(value, str):
            cell.data_type = "s"                      # plan text stays text, never a formula
        if number_format:
            cell.number_format = number_format
        if font:
            cell.font = font
        return cell

    def header(sheet, row, names):
        for c, name in enumerate(names, start=1):
            cell = put(sheet, row, c, name, font=bold)
            cell.fill = header_fill
            cell.alignment = Alignment(wrap_text=True, vertical="top")

    def widths(sheet, values):
        for letter, width in values.items():
            sheet.column_dimensions[letter].width = width

    summary = book.active
    summary.title = _sheet_name("summary", taken)
    put(summary, 1, 1, "Deviation budget", font=title_font)
    put(summary, 2, 1, f"plan: {plan.source}")
    put(summary, 3, 1, f"made {dt.date.today().isoformat()} by deviation {__version__}")
    examples = words.example_rows(plan.skipped_examples)
    if examples:
        put(summary, 4, 1, examples[0].upper() + examples[1:] + ".", font=over_font)
    header(summary, 5, ["sensor", "kind", "budget", "unit", "reference state", "max heel [°]",
                        *plan.state_names, "verdict"])
    grey = Font(color="777777", italic=True)
    for i, row in enumerate(view.summary_rows(analysis), start=6):
        values = [row.sensor, row.kind, row.budget.value, row.budget.unit.label,
                  row.reference_state or "", row.max_heel_deg]
        for c, v in enumerate(values, start=1):
            put(summary, i, c, v, "0.00" if isinstance(v, float) else None)
        for c, cell in enumerate(row.cells, start=len(values) + 1):
            put(summary, i, c, words.OVERWHELMED if cell.text == words.OVERWHELMED else
                cell.figure, "0.00", font={"ok": ok_font, "over": over_font,
                                           "unused": grey}[cell.status])
        put(summary, i, len(values) + len(row.cells) + 1, row.verdict,
            font=ok_font if row.within_budget else over_font)
    put(summary, 5 + len(analysis.sensors) + 2, 1, "Grey italic: a state the sensor is not "
        "relied on in; shown, not held against its budget.")
    summary.freeze_panes = "A6"
    widths(summary, {"A": 26, "B": 20, "C": 11, "D": 18, "E": 12})

    for result in analysis.sensors:
        s = result.sensor
        sheet = book.create_sheet(_sheet_name(f"budget {s.name}", taken))
        put(sheet, 1, 1, f"{s.name}: {s.kind}, budget {words.budget_text(s)}", font=title_font)
        put(sheet, 2, 1, "position [{u}]: ".format(u=unit) + ", ".join(
            f"{_length(plan, v):.3f}" for v in s.position_m))
        header(sheet, 4, [h.format(u=unit) for h in RUN_HEADERS])
        sheet.freeze_panes = "A5"
        row = 5
        for st in result.states:
            put(sheet, row, 1, view.state_title(s, st),
                font=ok_font if st.within_budget or not st.used else over_font)
            row += 1
            for values in _run_rows(plan, s, st):
                for c, v in enumerate(values, start=1):
                    put(sheet, row, c, v, None if c == 1 or isinstance(v, str) else "0.000")
                row += 1
            for total in view.total_rows(s, st):
                put(sheet, row, 1, total.label, font=bold)
                value = total.value_deg
                put(sheet, row, 6, value if value is not None and value < 180 else degrees(value),
                    "0.00", font=bold)
                row += 1
            for remedy in st.remedies:
                put(sheet, row, 1, "remedy: " + words.remedy_text(remedy, unit, plan.source,
                                                                  s.budget.unit))
                row += 1
            row += 1
        widths(sheet, {"A": 40, "B": 12, "C": 13, "D": 15, "E": 13, "F": 16, "G": 22, "H": 16})

    card_sheet = book.create_sheet(_sheet_name("deviation cards", taken))
    put(card_sheet, 1, 1, "Predicted deviation cards (level; east positive; steer = compass "
        "heading for the magnetic heading)", font=title_font)
    row = 3
    for one in cards(analysis, 15.0):
        put(card_sheet, row, 1, one.sensor.name, font=bold)
        row += 1
        names = ["magnetic heading [°]"]
        for st in one.states:
            names.append(f"{st.state} deviation [°]")
            if one.steers:
                names.append(f"{st.state} steer [°]")
            if st.unadjusted_deg is not None:
                names.append(f"{st.state} before adjustment [°]")
        header(card_sheet, row, names)
        row += 1
        for i, psi in enumerate(one.states[0].headings_deg):
            values = [float(psi)]
            for st in one.states:
                values.append(float(st.deviation_deg[i]))
                if one.steers:
                    values.append(float(st.compass_deg[i]))
                if st.unadjusted_deg is not None:
                    values.append(float(st.unadjusted_deg[i]))
            for c, v in enumerate(values, start=1):
                put(card_sheet, row, c, v, "0" if c == 1 else "0.00")
            row += 1
        row += 1
    card_sheet.column_dimensions["A"].width = 20

    notes = book.create_sheet(_sheet_name("hints and findings", taken))
    header(notes, 1, ["sensor", "state", "run", "remedy or finding", "before [°]", "after [°]",
                      "source"])
    row = 2
    for result in analysis.sensors:
        for st in result.states:
            for remedy in st.remedies:
                for c, v in enumerate([result.sensor.name, st.state, remedy.run or "",
                                       words.remedy_action(remedy, unit, plan.source),
                                       _figure(remedy.before), _figure(remedy.after),
                                       "computed"], start=1):
                    put(notes, row, c, v, "0.00" if isinstance(v, float) else None)
                row += 1
    for result in analysis.sensors:
        for line in words.fix_set_lines(result.fixes, unit, result.sensor.budget.unit):
            for c, v in enumerate([result.sensor.name, "", "", "set of fixes: " + line],
                                  start=1):
                put(notes, row, c, v)
            row += 1
    for finding in findings:
        for c, v in enumerate([finding.sensor or "", finding.state or "", finding.subject or "",
                               words.finding_message(finding), None, None,
                               words.finding_source(finding)], start=1):
            put(notes, row, c, v)
        row += 1
    notes.freeze_panes = "A2"
    widths(notes, {"A": 22, "B": 18, "C": 22, "D": 80, "E": 11, "F": 11, "G": 50})

    site_sheet = book.create_sheet(_sheet_name("site", taken))
    header(site_sheet, 1, ["quantity", "value", "unit"])
    site = analysis.site
    rows = [("horizontal field H", site.horizontal_t * 1e6, "µT"),
            ("vertical field Z (down +)", site.vertical_t * 1e6, "µT"),
            ("total field F", site.total_t * 1e6, "µT"),
            ("declination (east +)", site.declination_deg, "°"),
            ("declination uncertainty", site.declination_uncertainty_deg, "°"),
            ("inclination", site.inclination_deg, "°"),
            ("source", site.source, ""), ("date", site.date_text, ""), ("zone", site.zone, "")]
    for r, values in enumerate(rows, start=2):
        for c, v in enumerate(values, start=1):
            put(site_sheet, r, c, v, "0.000" if isinstance(v, float) else None)
    widths(site_sheet, {"A": 28, "B": 14, "C": 8})

    from ..electronic import electronic_report
    from .electronic import CSV_COLUMNS, per_ampere_records

    reports = electronic_report(analysis)
    if reports:                      # the per-ampere table, to key into a compensation setting
        amps = book.create_sheet(_sheet_name("per ampere", taken))
        header(amps, 1, list(CSV_COLUMNS))
        for r, record in enumerate(per_ampere_records(reports, "uT"), start=2):
            for c, column in enumerate(CSV_COLUMNS, start=1):
                put(amps, r, c, record.get(column),
                    "0.000000" if isinstance(record.get(column), float) else None)
        amps.freeze_panes = "A2"

    caution_sheet = book.create_sheet(_sheet_name("cautions", taken))
    put(caution_sheet, 1, 1, "Cautions", font=title_font)
    for r, caution in enumerate(CAUTIONS, start=2):
        cell = put(caution_sheet, r, 1, caution)
        cell.alignment = Alignment(wrap_text=True)
    caution_sheet.column_dimensions["A"].width = 110
    return book


# html -----------------------------------------------------------------------------------------------

STYLE = """
body { font: 10.5pt/1.4 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; color: #1a1a1a;
       max-width: 190mm; margin: 12mm auto; }
h1 { font-size: 17pt; margin: 0 0 2mm; } h2 { font-size: 13pt; margin: 8mm 0 2mm;
     border-bottom: 1.5px solid #345; } h3 { font-size: 11pt; margin: 5mm 0 1.5mm; }
table { border-collapse: collapse; width: 100%; margin: 1mm 0 2mm; font-size: 9pt; }
th, td { border: 1px solid #c8ced6; padding: 1.2mm 1.8mm; text-align: right; vertical-align: top; }
th { background: #e4ebf3; } td:first-child, th:first-child { text-align: left; }
tr.total td { font-weight: 600; background: #f5f7fa; }
.over { color: #b00020; font-weight: 700; } .ok { color: #1b5e20; } .unused { color: #777; }
.meta { color: #555; font-size: 9pt; } .hint { margin: 0.5mm 0 0.5mm 4mm; }
.caution { border: 1.5px solid #b26a00; background: #fff8ec; padding: 2mm 4mm; margin: 4mm 0; }
figure { margin: 2mm 0; text-align: center; } img { max-width: 100%; height: auto; }
section.sensor { break-before: page; }
table, figure, .caution { break-inside: avoid; }
@page { margin: 12mm; }
@media print { body { margin: 0 auto; max-width: none; } a { color: inherit; } }
"""


def _e(value):
    return html.escape(str(value), quote=True)


def _img(png_bytes, alt):
    data = base64.b64encode(png_bytes).decode("ascii")
    return f'<figure><img alt="{_e(alt)}" src="data:image/png;base64,{data}"></figure>'


def _num(value, fmt="{:.2f}"):
    if value is None:
        return ""
    if isinstance(value, str):
        return _e(value)
    text = fmt.format(value)
    if re.fullmatch(r"-0(\.0*)?", text):               # a tiny negative: no "-0.00"
        text = text.replace("-", "+" if "+" in fmt else "")
    return text


def html_report(analysis):
    findings = analysis.findings
    """The report as one self-contained HTML document (styles and pictures inline)."""
    from . import plots

    plan = analysis.plan
    unit = plan.site.units
    site = analysis.site
    parts = [f"<!doctype html><html lang=en><head><meta charset=utf-8>"
             f"<title>Deviation budget: {_e(plan.source)}</title><style>{STYLE}</style></head><body>"]
    parts.append(f"<h1>Deviation budget</h1><p class=meta>plan {_e(plan.source)} · made "
                 f"{dt.date.today().isoformat()} by deviation {__version__}</p>")
    examples = words.example_rows(plan.skipped_examples)
    if examples:
        parts.append(f"<p class=over>{_e(examples[0].upper() + examples[1:])}.</p>")
    side = "" if site.declination_deg is None else (
        f" · declination {abs(site.declination_deg):.2f}° "
        f"{'E' if site.declination_deg >= 0 else 'W'}")
    parts.append(f"<p>Site: H {site.horizontal_t * 1e6:.2f} µT · Z {site.vertical_t * 1e6:.2f} µT "
                 f"· F {site.total_t * 1e6:.2f} µT{side} · inclination {site.inclination_deg:.1f}° "
                 f"· {_e(site.source)}, {_e(site.date_text)} · zone {_e(site.zone)}</p>")
    parts.append('<div class=caution><b>Cautions.</b> ' + " ".join(_e(c) for c in CAUTIONS)
                 + "</div>")
    parts.append("<h2>Summary</h2><table><tr><th>sensor</th><th>budget</th>"
                 + "".join(f"<th>{_e(s)}</th>" for s in plan.state_names)
                 + "<th>verdict</th></tr>")
    for row in view.summary_rows(analysis):
        cells = "".join(f"<td class={c.status}>{_e(c.text)}</td>" for c in row.cells)
        parts.append(f"<tr><td>{_e(row.sensor)}</td><td>{_e(row.budget_text)}</td>"
                     f"{cells}<td class={'ok' if row.within_budget else 'over'}>"
                     f"{_e(row.verdict)}</td></tr>")
    parts.append("</table>")
    parts.append(_img(plots.budget_bars(analysis), "budget use by state"))
    parts.append(_img(plots.plan_view(plan), "plan view of runs and sensors"))

    card_list = cards(analysis, 15.0)
    for result, one in zip(analysis.sensors, card_list):
        s = result.sensor
        parts.append(f"<section class=sensor><h2>{_e(s.name)}</h2><p>{_e(s.kind)} at "
                     f"{_e(words.position(s.position_m, unit))}; budget {_e(words.budget_text(s))}; "
                     f"held figure: {_e(words.held_figure(s))}</p>")
        for st in result.states:
            cls = view.STATUS_CLASS[st.status]
            parts.append(f"<h3 class={cls}>{_e(view.state_title(s, st))}</h3>")
            parts.append("<table><tr>" + "".join(f"<th>{_e(h.format(u=unit))}</th>"
                                                 for h in RUN_HEADERS) + "</tr>")
            for values in _run_rows(plan, s, st, all_runs=False):
                cells = "".join(f"<td>{_num(v, fmt)}</td>" for v, fmt in zip(values[1:], HTML_FORMATS))
                parts.append(f"<tr><td>{_e(values[0])}</td>{cells}</tr>")
            for total in view.total_rows(s, st):
                parts.append(f"<tr class=total><td colspan=5>{_e(total.label)}</td>"
                             f"<td>{degrees(total.value_deg)}</td><td colspan=2></td></tr>")
            parts.append("</table><p class=meta>Runs below 0.5 % of the budget are omitted.</p>")
            for remedy in st.remedies:
                text = words.remedy_text(remedy, unit, plan.source, s.budget.unit)
                parts.append(f"<p class=hint>→ {_e(text)}"
                             "</p>")
        lines = words.fix_set_lines(result.fixes, unit, s.budget.unit)
        if lines:
            parts.append("<h3>The set of fixes</h3><ol>" + "".join(
                f"<li>{_e(line.split('. ', 1)[1] if line[0].isdigit() else line)}</li>"
                for line in lines) + "</ol>")
        parts.append("<h3>Predicted deviation card</h3>")
        parts.append(_img(plots.card_curves(one), f"deviation curves of {s.name}"))
        parts.append("<table><tr><th>magnetic [°]</th>"
                     + "".join(f"<th>{_e(st.state)} deviation [°]</th>"
                               + ("<th>steer [°]</th>" if one.steers else "")
                               for st in one.states) + "</tr>")
        for i, psi in enumerate(one.states[0].headings_deg):
            parts.append(f"<tr><td>{psi:03.0f}</td>" + "".join(
                f"<td>{_num(st.deviation_deg[i], '{:+.2f}')}</td>"
                + (f"<td>{st.compass_deg[i]:05.1f}</td>" if one.steers else "")
                for st in one.states) + "</tr>")
        parts.append("</table></section>")

    parts.append("<section><h2>Findings</h2>")
    if findings:
        parts.append("<ul>" + "".join(f"<li>{_e(words.finding_text(f))}</li>" for f in findings)
                     + "</ul>")
    else:
        parts.append("<p>No rule findings.</p>")
    parts.append("<h2>Cautions</h2><ul>" + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
                 + "</ul></section></body></html>")
    return "".join(parts)
