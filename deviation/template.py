"""A blank plan workbook: every sheet and column, a worked example, comments and drop-down lists."""

from __future__ import annotations

import re

from .files import write_atomically
from .plan import SAFE_DISTANCE_FOR, SENSOR_KINDS
from .routing import RETURN_KINDS
from .units import LENGTH_UNITS

# (column, explanation) per sheet, in order. The explanations become header comments.
SHEET_COLUMNS = {
    "site": [
        ("setting", "Name of the setting (see the rows below)."),
        ("value", "Its value."),
        ("note", "Free text."),
    ],
    "points": [
        ("point", "Name of a place to route through or mount at; used in routes and 'at' cells."),
        ("x", "Forward of the datum (bare numbers in the plan's units; or e.g. 1.2 m, 4 ft)."),
        ("y", "To port (left) of the datum; starboard is negative."),
        ("z", "Up from the datum."),
        ("note", "Free text."),
    ],
    "runs": [
        ("run", "Unique name of the cable run."),
        ("circuits", "Circuit(s) whose current this run carries, as named in the states sheet, "
                     "separated by ;"),
        ("route", "Waypoints from the source to the load, separated by >; each a point name or "
                  "x, y, z."),
        ("return", "paired (return beside the supply), twisted, separate (own route) or none."),
        ("return_route", "For separate: waypoints from the load back to the source."),
        ("spacing", "Centre-to-centre distance of supply and return (paired, twisted); bare "
                    "numbers in mm (in for imperial plans). Blank: one insulated diameter of size."),
        ("lay", "Twisted: length of one full twist; bare numbers in mm (in for imperial plans)."),
        ("size", "Conductor size, e.g. 10 AWG, 2/0 AWG, 16 mm2."),
        ("current_a", "Current in amperes, used only when the plan has no states sheet."),
        ("note", "Free text."),
    ],
    "states": [
        ("circuit", "Circuit name. Every other column except note is an operating state; each cell "
                    "is the circuit's current in A in that state (blank: off; negative: reversed, "
                    "e.g. charging)."),
        ("harbour", "An operating state: rename, add or remove state columns freely."),
        ("night motoring", "Another operating state."),
        ("note", "Free text."),
    ],
    "sensors": [
        ("sensor", "Unique name of the compass or magnetometer."),
        ("at", "Point name or x, y, z of its centre."),
        ("kind", "magnetic compass, electronic compass or magnetometer."),
        ("budget_deg", "Deviation in degrees this sensor may take from the wiring and equipment."),
        ("reference_state", "State in which it will be adjusted or calibrated (blank: none, the "
                            "absolute deviation counts)."),
        ("max_heel_deg", "Largest heel to check, degrees (blank: 0)."),
        ("note", "Free text."),
    ],
    "equipment": [
        ("item", "Name of a magnetised item (speaker, motor, instrument)."),
        ("at", "Point name or x, y, z."),
        ("safe_distance", "Compass safe distance from its label (IEC 60945)."),
        ("safe_distance_for", "Which compass the label is for: standard or steering."),
        ("moment_am2", "Or: its magnetic moment in A·m²."),
        ("axis", "Direction of the moment, x, y, z (blank: the worst orientation)."),
        ("states", "States it is present or powered in, separated by ; (blank: all)."),
        ("note", "Free text."),
    ],
    "spots": [
        ("spot", "Name of a candidate mounting position for `deviation spot` to rank."),
        ("at", "Point name or x, y, z."),
        ("note", "Free text."),
    ],
}

EXAMPLE_ROWS = {
    "site": [["units", "m", "length unit of bare numbers: m, cm, mm, ft, in"],
             ["latitude", 50.8, "decimal degrees, north positive"],
             ["longitude", -1.3, "decimal degrees, east positive"],
             ["date", "2027-06-01", "YYYY-MM-DD or a decimal year (blank: today)"],
             ["altitude_m", 0, "height above the WGS-84 ellipsoid, m"],
             ["horizontal_field_ut", None, "optional: measured H in µT, overrides the model"],
             ["vertical_field_ut", None, "optional: measured Z in µT, positive down"]],
    "points": [["battery", 3.0, -0.5, 0.3, "example: house battery"],
               ["helm", 1.5, 0.0, 1.8, "example: compass position"]],
    "runs": [["helm instruments", "instruments", "battery > 2.0, 0, 0.8 > 1.5, 0.1, 1.5",
              "paired", None, None, None, "16 AWG", None, "example row: replace with your runs"]],
    "states": [["instruments", 1.5, 3.0, "example circuit"]],
    "sensors": [["steering compass", "helm", "magnetic compass", 1.0, "harbour", 20, "example"]],
    "equipment": [["speaker", "1.2, 0.4, 1.4", "0.8 m", "standard", None, None, None, "example"]],
    "spots": [["bulkhead", "1.5, 0.3, 1.8", "example candidate"]],
}

CHOICES = {
    ("runs", "return"): RETURN_KINDS,
    ("sensors", "kind"): SENSOR_KINDS,
    ("equipment", "safe_distance_for"): SAFE_DISTANCE_FOR,
}


def write_template(path, units="m"):
    """Write the blank plan to ``path`` atomically (whole or not at all)."""
    from openpyxl import Workbook
    from openpyxl.comments import Comment
    from openpyxl.styles import Font, PatternFill
    from openpyxl.worksheet.datavalidation import DataValidation

    book = Workbook()
    book.remove(book.active)
    header_font = Font(bold=True)
    header_fill = PatternFill("solid", fgColor="DCE6F0")
    for name, columns in SHEET_COLUMNS.items():
        sheet = book.create_sheet(name)
        for c, (column, explanation) in enumerate(columns, start=1):
            cell = sheet.cell(row=1, column=c, value=column)
            cell.font, cell.fill = header_font, header_fill
            cell.comment = Comment(explanation, "deviation")
            sheet.column_dimensions[cell.column_letter].width = max(12, min(40, len(column) + 14))
        for r, row in enumerate(EXAMPLE_ROWS[name], start=2):
            if name == "site" and row[0] == "units":
                row = [row[0], units, row[2]]
            for c, value in enumerate(row, start=1):
                cell = sheet.cell(row=r, column=c, value=value)
                if isinstance(value, str):
                    cell.data_type = "s"          # text stays text, never a formula
        sheet.freeze_panes = "A2"
        for (sheet_name, column), options in CHOICES.items():
            if sheet_name != name:
                continue
            letter = sheet.cell(row=1, column=[c for c, _ in columns].index(column) + 1).column_letter
            rule = DataValidation(type="list", formula1='"' + ",".join(options) + '"',
                                  allow_blank=True, showErrorMessage=True,
                                  error=f"Choose one of: {', '.join(options)}")
            rule.add(f"{letter}2:{letter}500")
            sheet.add_data_validation(rule)
        if name == "site":
            rule = DataValidation(type="list", formula1='"' + ",".join(LENGTH_UNITS) + '"',
                                  allow_blank=True)
            rule.add("B2")
            sheet.add_data_validation(rule)
    write_atomically(path, book.save)


def _xyz(position):
    """A position cell that reads back exactly: metres with full float precision."""
    return ", ".join(f"{float(v)!r} m" for v in position)


def _route_text(points):
    return " > ".join(_xyz(p) for p in points)


def plan_rows(plan):
    """The plan's content as rows per sheet, in the workbook layout, lengths in metres.

    Lengths are written as text with full float precision, so they read back exactly; other
    numbers are workbook numbers, which keep 15 significant digits (the xlsx number format).
    """
    site = plan.site
    rows = {"site": [["setting", "value", "note"], ["units", "m", "written by deviation"]]}
    date = site.date_text if re.fullmatch(r"\d{4}-\d{2}-\d{2}", site.date_text) else None
    if date:
        rows["site"].append(["date", date, None])
    for name, value in (("latitude", site.latitude_deg), ("longitude", site.longitude_deg),
                        ("date", None if date else site.decimal_year),
                        ("altitude_m", site.altitude_m),
                        ("horizontal_field_ut", site.horizontal_ut),
                        ("vertical_field_ut", site.vertical_ut)):
        if value is not None:
            rows["site"].append([name, float(value), None])
    rows["points"] = [["point", "x", "y", "z", "note"]]
    runs = [["run", "circuits", "route", "return", "return_route", "spacing", "lay", "size",
             "current_a", "note"]]
    for r, run in enumerate(plan.runs):
        g = run.geometry
        runs.append([run.name, f"run {r + 1}", _route_text(g.route_m), g.return_kind,
                     _route_text(g.return_route_m) if g.return_route_m is not None else None,
                     f"{g.spacing_m!r} m" if g.spacing_m is not None else None,
                     f"{g.lay_m!r} m" if g.lay_m is not None else None,
                     run.size, None, run.note or None])
    rows["runs"] = runs
    # One circuit per run keeps every run's current in every state exactly.
    rows["states"] = [["circuit", *plan.state_names, "note"]] + [
        [f"run {r + 1}", *(float(c) for c in plan.run_currents_a[r]), None]
        for r in range(len(plan.runs))]
    rows["sensors"] = [["sensor", "at", "kind", "budget_deg", "reference_state", "max_heel_deg",
                        "note"]] + [[s.name, _xyz(s.position_m), s.kind, float(s.budget_deg),
                                     s.reference_state, float(s.max_heel_deg), s.note or None]
                                    for s in plan.sensors]
    rows["equipment"] = [["item", "at", "safe_distance", "safe_distance_for", "moment_am2", "axis",
                          "states", "note"]] + [
        [e.name, _xyz(e.position_m),
         f"{e.safe_distance_m!r} m" if e.safe_distance_m is not None else None,
         e.safe_distance_for, e.moment_am2,
         ", ".join(repr(float(v)) for v in e.axis) if e.axis is not None else None,
         "; ".join(e.states) if e.states is not None else None, e.note or None]
        for e in plan.equipment]
    rows["spots"] = [["spot", "at", "note"]] + [[name, _xyz(p), None] for name, p in plan.spots]
    return rows


def write_plan(plan, path):
    """Write a plan as a workbook in the template's layout (atomically); it reads back unchanged."""
    from openpyxl import Workbook
    from openpyxl.styles import Font

    book = Workbook()
    book.remove(book.active)
    for name, rows in plan_rows(plan).items():
        sheet = book.create_sheet(name)
        for r, row in enumerate(rows, start=1):
            for c, value in enumerate(row, start=1):
                cell = sheet.cell(row=r, column=c, value=value)
                if isinstance(value, str):
                    cell.data_type = "s"
                if r == 1:
                    cell.font = Font(bold=True)
        sheet.freeze_panes = "A2"
    write_atomically(path, book.save)
