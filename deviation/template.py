"""A blank plan workbook: every sheet and column, a worked example, comments and drop-down lists."""

from __future__ import annotations

import re

from .files import write_atomically
from .schema import SCHEMA
from .units import LENGTH_UNITS

#: (column, explanation) per sheet, in order, from the one schema the reader uses too.
SHEET_COLUMNS = {name: [(c.name, c.explanation) for c in spec.columns]
                 for name, spec in SCHEMA.items()}

#: Worked examples, by column; the template writes them under each sheet's header.
EXAMPLE_ROWS = {
    "site": [{"setting": "units", "value": "m",
              "note": "length unit of bare numbers: m, cm, mm, ft, in"},
             {"setting": "latitude", "value": 50.8, "note": "decimal degrees, north positive"},
             {"setting": "longitude", "value": -1.3, "note": "decimal degrees, east positive"},
             {"setting": "date", "value": "2027-06-01",
              "note": "YYYY-MM-DD or a decimal year (blank: today)"},
             {"setting": "altitude_m", "value": 0, "note": "height above the WGS-84 ellipsoid, m"},
             {"setting": "horizontal_field_ut",
              "note": "optional: measured H in µT, overrides the model"},
             {"setting": "vertical_field_ut", "note": "optional: measured Z in µT, positive down"}],
    "points": [{"point": "battery", "x": 3.0, "y": -0.5, "z": 0.3, "note": "example: house battery"},
               {"point": "helm", "x": 1.5, "y": 0.0, "z": 1.8, "note": "example: compass position"}],
    "runs": [{"run": "helm instruments", "circuits": "instruments",
              "route": "battery > 2.0, 0, 0.8 > 1.5, 0.1, 1.5", "return": "paired",
              "size": "16 AWG", "note": "example row: replace with your runs"}],
    "states": [{"circuit": "instruments", "harbour": 1.5, "night motoring": 3.0,
                "note": "example circuit"},
               {"circuit": "windlass", "harbour": 80, "switching": "independent",
                "note": "example: on or off in any state"}],
    "sensors": [{"sensor": "steering compass", "at": "helm", "kind": "magnetic compass",
                 "budget_deg": 1.0, "reference_state": "harbour", "max_heel_deg": 20,
                 "note": "example"}],
    "equipment": [{"item": "speaker", "at": "1.2, 0.4, 1.4", "safe_distance": "0.8 m",
                   "safe_distance_for": "standard", "note": "example"}],
    "spots": [{"spot": "bulkhead", "at": "1.5, 0.3, 1.8", "for_sensor": "steering compass",
               "note": "example candidate"}],
    "volumes": [{"volume": "engine space", "kind": "keep out", "from": "2.5, -1, 0",
                 "to": "4.5, 1, 1", "note": "example: no sensor here"}],
}

#: Drop-down lists, from the schema's choices.
CHOICES = {(name, c.name): c.choices for name, spec in SCHEMA.items() for c in spec.columns
           if c.choices}


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
        order = [c for c, _ in columns]
        for r, example in enumerate(EXAMPLE_ROWS[name], start=2):
            if name == "site" and example["setting"] == "units":
                example = {**example, "value": units}
            row = [example.get(column) for column in order]
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


def _table(sheet, records):
    """Rows of a sheet in the schema's column order: header, then one row per record (dict)."""
    columns = [c for c, _ in SHEET_COLUMNS[sheet]]
    return [columns] + [[record.get(c) for c in columns] for record in records]


def _metres(value):
    return None if value is None else f"{float(value)!r} m"


def plan_rows(plan):
    """The plan's content as rows per sheet, in the workbook layout, lengths in metres.

    Names, points, circuits, switching and notes are kept. Lengths are written as text with full
    float precision, so they read back exactly; other numbers are workbook numbers, which keep
    15 significant digits (the xlsx number format).
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
    rows["points"] = _table("points", [{"point": name, "x": _metres(p[0]), "y": _metres(p[1]),
                                        "z": _metres(p[2])} for name, p in plan.points])
    rows["runs"] = _table("runs", [{
        "run": run.name, "circuits": "; ".join(run.circuits), "route": _route_text(g.route_m),
        "return": g.return_kind,
        "return_route": _route_text(g.return_route_m) if g.return_route_m is not None else None,
        "spacing": _metres(g.spacing_m), "lay": _metres(g.lay_m),
        "lie": run.lie if g.return_kind == "paired" else None,
        "untwisted_ends": _metres(g.untwisted_end_m), "size": run.size, "note": run.note or None}
        for run in plan.runs for g in [run.geometry]])
    states = [["circuit", *plan.state_names, "switching", "note"]]
    for circuit in plan.circuits:
        states.append([circuit.name, *(float(a) for a in circuit.currents_a),
                       circuit.switching if circuit.independent else None, circuit.note or None])
    rows["states"] = states
    rows["sensors"] = _table("sensors", [{
        "sensor": s.name, "at": _xyz(s.position_m), "kind": s.kind,
        "budget_deg": float(s.budget_deg), "reference_state": s.reference_state,
        "used_in": "; ".join(s.used_in) if s.used_in is not None else None,
        "max_heel_deg": float(s.max_heel_deg), "max_pitch_deg": float(s.max_pitch_deg),
        "note": s.note or None} for s in plan.sensors])
    rows["equipment"] = _table("equipment", [{
        "item": e.name, "at": _xyz(e.position_m), "safe_distance": _metres(e.safe_distance_m),
        "safe_distance_for": e.safe_distance_for, "moment_am2": e.moment_am2,
        "axis": ", ".join(repr(float(v)) for v in e.axis) if e.axis is not None else None,
        "states": "; ".join(e.states) if e.states is not None else None, "note": e.note or None}
        for e in plan.equipment])
    rows["spots"] = _table("spots", [{"spot": p.name, "at": _xyz(p.position_m)}
                                     for p in plan.spots])
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
