"""A blank plan workbook: every sheet and column, a worked example, comments and drop-down lists."""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from decimal import Decimal

import numpy as np

from .files import write_atomically
from .plan import name_key
from .schema import SCHEMA, SITE_SETTINGS
from .text import xlsx_value
from .units import IMPERIAL, LENGTH_UNITS, UnitError, conductor_size

#: The mark that begins the first cell of every worked example row (see reader.is_example_row).
EXAMPLE = "e.g. "
#: Said in the comment on each sheet's first column.
EXAMPLE_NOTE = (' Rows whose first cell begins with "e.g." are the template\'s examples: they are '
                "never read; overwrite or delete them.")


def _plain(text):
    """Explanations as a spreadsheet comment shows them: no Markdown backticks."""
    return re.sub(r"`([^`]*)`", r'"\1"', text)


#: (column, explanation) per sheet, in order, from the one schema the reader uses too.
SHEET_COLUMNS = {name: [(c.name, _plain(c.explanation)) for c in spec.columns]
                 for name, spec in SCHEMA.items()}

#: The site sheet: every setting on its own row, to be filled in; examples only in the notes, so
#: an unfilled latitude is reported, never taken from the template.
SITE_ROWS = [{"setting": "units", "value": "m",
              "note": "length unit of bare numbers: m, cm, mm, ft, in"},
             {"setting": "latitude", "note": "decimal degrees, north positive, e.g. 50.8"},
             {"setting": "longitude", "note": "decimal degrees, east positive, e.g. -1.3"},
             {"setting": "date", "note": "YYYY-MM-DD or a decimal year, e.g. 2027-06-01 "
                                         "(blank: today)"},
             {"setting": "altitude_m", "note": "height above the WGS-84 ellipsoid, m (blank: 0)"},
             {"setting": "horizontal_field_ut",
              "note": "optional: measured H in µT, overrides the model"},
             {"setting": "vertical_field_ut", "note": "optional: measured Z in µT, positive down"},
             {"setting": "vessel", "note": "optional: the vessel or vehicle, for the reports' "
                                           "first page and the deviation card"},
             {"setting": "owner", "note": "optional: its owner, for the reports' first page"},
             {"setting": "installer", "note": "optional: who installs the wiring, for the "
                                              "reports' first page"},
             {"setting": "profile", "note": "optional: general (blank) or aviation (the card "
                                            "in 30° steps with the placard's conditions, the "
                                            "10° limit on any heading)"}]

#: Worked examples, by column; the template writes them under each sheet's header. Each one's
#: first cell begins with EXAMPLE, so the reader skips it and ``check`` says it is still there.
EXAMPLE_ROWS: dict[str, Sequence[Mapping[str, object]]] = {
    "site": SITE_ROWS,
    "points": [{"point": EXAMPLE + "battery", "x": 3.0, "y": -0.5, "z": 0.3,
                "note": "example: house battery"},
               {"point": EXAMPLE + "helm", "x": 1.5, "y": 0.0, "z": 1.8,
                "note": "example: compass position"}],
    "runs": [{"run": EXAMPLE + "helm instruments", "circuits": "instruments",
              "route": "battery > 2.0, 0, 0.8 > 1.5, 0.1, 1.5", "return": "paired",
              "size": "16 AWG", "note": "example: the route names the point battery"}],
    "states": [{"circuit": EXAMPLE + "instruments", "harbour": 1.5, "night motoring": 3.0,
                "note": "example circuit"},
               {"circuit": EXAMPLE + "windlass", "harbour": 80, "switching": "independent",
                "note": "example: on or off in any state"},
               {"circuit": EXAMPLE + "microwave", "harbour": "1500 W", "voltage": "12 V",
                "supply": "via inverter", "efficiency": 0.88,
                "note": "example: an AC load in watts through an inverter"}],
    "conditions": [{"state": EXAMPLE + "night motoring", "engines": "running",
                    "generator": "charging", "radios": "on",
                    "note": "example: what the state stands for on a placard"}],
    "sensors": [{"sensor": EXAMPLE + "steering compass", "at": "helm", "kind": "magnetic compass",
                 "budget_deg": 1.0, "reference_state": "harbour", "max_heel_deg": 20,
                 "note": "example"}],
    "equipment": [{"item": EXAMPLE + "speaker", "at": "1.2, 0.4, 1.4", "safe_distance": "0.8 m",
                   "safe_distance_for": "standard", "note": "example"}],
    "steel": [{"item": EXAMPLE + "engine block", "at": "3.4, 0, 0.45", "shape": "box",
               "size": "600 x 500 x 550 mm", "note": "example: a small diesel, cast iron"},
              {"item": EXAMPLE + "water tank", "at": "2.5, 0.5, 0.3", "shape": "hollow box",
               "size": "500 x 400 x 300 mm", "wall": "3 mm", "mu_low": 100, "mu_high": 2000,
               "note": "example: steel tank, band from the maker's steel grade"}],
    "spots": [{"spot": EXAMPLE + "bulkhead", "at": "1.5, 0.3, 1.8",
               "for_sensor": "steering compass", "note": "example candidate"}],
    "volumes": [{"volume": EXAMPLE + "engine space", "kind": "keep out", "from": "2.5, -1, 0",
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
            cell = sheet.cell(row=1, column=c, value=xlsx_value(column))
            cell.font, cell.fill = header_font, header_fill
            note = explanation + (EXAMPLE_NOTE if c == 1 and name != "site" else "")
            cell.comment = Comment(note, "deviation")
            sheet.column_dimensions[cell.column_letter].width = max(12, min(40, len(column) + 14))
        order = [c for c, _ in columns]
        for r, example in enumerate(EXAMPLE_ROWS[name], start=2):
            if name == "site" and example["setting"] == "units":
                example = {**example, "value": units}
            row = [example.get(column) for column in order]
            for c, value in enumerate(row, start=1):
                cell = sheet.cell(row=r, column=c, value=xlsx_value(value))
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


#: A length written with more significant digits than this is not one a person typed; another
#: unit is tried, and full precision in metres is the last resort.
TYPED_DIGITS = 12


def shortest_number(value_m, unit):
    """The shortest decimal ``x`` that reads back exactly: ``float(x) * LENGTH_UNITS[unit]`` is
    ``value_m`` to the last bit (as the reader computes it), or None.

    Positional, never with an exponent (``1200000``, ``0.00001``); "-0" is written "0".
    """
    scale = LENGTH_UNITS[unit]
    value = float(value_m) / scale
    for digits in range(1, 18):
        text = f"{value:.{digits}g}"
        if float(text) * scale == value_m:
            if "e" in text:
                text = format(Decimal(text), "f")
            return "0" if float(text) == 0 else text
    return None


def _digits(text):
    """Significant digits of a decimal, leading and trailing zeros not counted."""
    return len(text.lstrip("-").replace(".", "").strip("0")) or 1


#: Units tried, in this order, for a length with no short decimal in the plan's own unit.
OTHER_UNITS = ("mm", "m", "cm", "in", "ft")


def length_text(value_m, unit, bare=True):
    """A length as a person would type it, reading back to the same float.

    In ``unit`` with the shortest decimal (``13.6`` in a plan in feet, not ``4.1452800000000005``
    m); bare when ``bare`` (the cell's bare numbers are in ``unit``), else with the unit
    (``25 mm``). When no short decimal in ``unit`` reads back exactly, the one of fewest
    significant digits in another unit (``OTHER_UNITS`` breaks ties), with that unit (``850 mm``
    in a plan in feet); failing that, metres at full precision.
    """
    text = shortest_number(value_m, unit)
    if text is not None and _digits(text) <= TYPED_DIGITS:
        return text if bare else f"{text} {unit}"
    found = [(_digits(t), order, f"{t} {u}") for order, u in enumerate(OTHER_UNITS) if u != unit
             for t in [shortest_number(value_m, u)] if t is not None and _digits(t) <= TYPED_DIGITS]
    return min(found)[2] if found else f"{float(value_m)!r} m"


def number_cell(value):
    """A number for a cell: the number itself when the workbook keeps it exactly (openpyxl writes
    16 significant digits), else its full-precision text, which the reader reads the same."""
    if value is None:
        return None
    value = float(value)
    if float(f"{value:.16g}") != value:
        return repr(value)
    return int(value) if value.is_integer() and abs(value) < 1e15 else value


class _Places:
    """Positions written as the plan's own point names where a position is exactly a point."""

    def __init__(self, plan):
        self.unit = plan.site.units
        self.names: dict[tuple[float, ...], str] = {}
        for name, position in plan.points:
            self.names.setdefault(tuple(float(v) for v in position), name)
        self.keys = {name_key(name) for name, _ in plan.points}

    def coordinates(self, position):
        text = ", ".join(length_text(v, self.unit) for v in position)
        if name_key(text) in self.keys:          # a point is named like these coordinates
            text = ", ".join(length_text(v, self.unit, bare=False) for v in position)
        return text

    def at(self, position, in_route=False):
        name = self.names.get(tuple(float(v) for v in position))
        if name is not None and not (in_route and ">" in name):
            return name
        return self.coordinates(position)

    def route(self, points):
        return " > ".join(self.at(p, in_route=True) for p in points)


def _table(sheet, records):
    """Rows of a sheet in the schema's column order: header, then one row per record (dict)."""
    columns = [c for c, _ in SHEET_COLUMNS[sheet]]
    return [columns] + [[record.get(c) for c in columns] for record in records]


def _coordinate_cell(value_m, unit):
    """A coordinate of the points sheet: a workbook number in the plan's unit where it can be
    (its text has at most TYPED_DIGITS digits, which the workbook keeps), else text with a unit."""
    text = length_text(value_m, unit)
    return text if " " in text else number_cell(float(text))


def _spacing(run, small):
    """A run's spacing as written, or blank where it is its size's default (one diameter)."""
    spacing = run.geometry.spacing_m
    if spacing is None:
        return None
    if run.size is not None:
        try:
            if conductor_size(run.size)[2] == spacing:
                return None
        except UnitError:
            pass
    return length_text(spacing, small, bare=False)


def _site_rows(site):
    notes = dict(site.notes)
    rows = [["setting", "value", "note"], ["units", site.units, notes.get("units")]]
    date = site.date_text if re.fullmatch(r"\d{4}-\d{2}-\d{2}", site.date_text) else None
    values = {"latitude": site.latitude_deg, "longitude": site.longitude_deg,
              "date": date or site.decimal_year,
              # Written where the model is used (it needs the height), or where it is not 0.
              "altitude_m": site.altitude_m if site.altitude_m or site.latitude_deg is not None
              else None,
              "horizontal_field_ut": site.horizontal_ut, "vertical_field_ut": site.vertical_ut,
              "vessel": site.vessel, "owner": site.owner, "installer": site.installer}
    if site.profile != "general":
        values["profile"] = site.profile
    for name in SITE_SETTINGS[1:]:
        if name == "place" or (name == "profile" and name not in values):
            continue
        value = values[name]
        if value is None and name not in notes:
            continue
        rows.append([name, value if isinstance(value, str) else number_cell(value),
                     notes.get(name)])
    for name, latitude, longitude in site.places:        # the operating area, one row each
        rows.append(["place", f"{latitude!r}, {longitude!r}", name])
    return rows


def watts_text(power_w):
    """A load in watts as a person types it: 1500 W (the shortest decimal that reads back)."""
    return f"{shortest_number(power_w, 'm')} W"


def _states_rows(plan):
    """The states sheet: each circuit's cells as given (amperes, or watts as 1500 W), and the
    circuit's voltage, supply, efficiency and idle draw where any circuit has them."""
    supplied = any(c.voltage_v is not None or c.inverter is not None for c in plan.circuits)
    extra = ["voltage", "supply", "efficiency", "idle_w"] if supplied else []
    states = [["circuit", *plan.state_names, "switching", *extra, "note"]]
    for circuit in plan.circuits:
        cells = []
        for k, amps in enumerate(circuit.currents_a):
            power = None if circuit.power_w is None else float(circuit.power_w[k])
            if power is not None and np.isfinite(power):
                cells.append(watts_text(power))
            elif circuit.inverter is not None:
                cells.append(None)                    # the inverter off
            else:
                cells.append(number_cell(amps))
        inverter = circuit.inverter
        own = [number_cell(circuit.voltage_v),
               "via inverter" if inverter is not None else None,
               None if inverter is None else number_cell(inverter.efficiency),
               None if inverter is None else number_cell(inverter.idle_w)] if supplied else []
        states.append([circuit.name, *cells, circuit.switching if circuit.independent else None,
                       *own, circuit.note or None])
    return states


def plan_rows(plan):
    """The plan's content as rows per sheet, in the workbook layout, as a person would type it.

    Names, notes, circuits, switching, points and the site's notes are kept; routes and positions
    name a point wherever they are exactly at one. Lengths are in the plan's own units with the
    shortest decimal that reads back to the same float (:func:`length_text`); other numbers are
    workbook numbers where the workbook keeps them exactly, else full-precision text. A plan with
    no states sheet is written with a current per run and no states sheet again.
    """
    unit = plan.site.units
    small = "in" if unit in IMPERIAL else "mm"
    places = _Places(plan)
    notes = plan.item_notes or {}
    point_notes = notes.get("points", {})
    rows = {"site": _site_rows(plan.site)}
    rows["points"] = _table("points", [{
        "point": name, **{axis: _coordinate_cell(v, unit) for axis, v in zip("xyz", p)},
        "note": point_notes.get(name_key(name))} for name, p in plan.points])
    own = plan.circuits_from_runs
    currents = {name_key(c.name): c.currents_a for c in plan.circuits}
    rows["runs"] = _table("runs", [{
        "run": run.name, "circuits": None if own else "; ".join(run.circuits),
        "route": places.route(g.route_m), "return": g.return_kind,
        "return_route": places.route(g.return_route_m) if g.return_route_m is not None else None,
        "spacing": _spacing(run, small),
        "lay": None if g.lay_m is None else length_text(g.lay_m, small, bare=False),
        "lie": run.lie if g.return_kind == "paired" and run.lie != "not known" else None,
        "untwisted_ends": None if g.untwisted_end_m is None else
        length_text(g.untwisted_end_m, small, bare=False),
        "size": run.size,
        "current_a": number_cell(currents[name_key(run.name)][0]) if own else None,
        "note": run.note or None}
        for run in plan.runs for g in [run.geometry]])
    if not own:
        rows["states"] = _states_rows(plan)
    rows["sensors"] = _table("sensors", [{
        "sensor": s.name, "at": places.at(s.position_m), "kind": s.kind,
        "budget_deg": number_cell(s.budget.value) if s.budget.degrees else None,
        "budget_nt": None if s.budget.degrees else number_cell(s.budget.value),
        "axes": s.axes_text,
        "measured_currents": None if s.measured_currents is None
        else "; ".join(s.measured_currents),
        "reference_state": s.reference_state,
        "used_in": "; ".join(s.used_in) if s.used_in is not None else None,
        "max_heel_deg": number_cell(s.max_heel_deg) if s.max_heel_deg else None,
        "max_pitch_deg": number_cell(s.max_pitch_deg) if s.max_pitch_deg else None,
        "note": s.note or None} for s in plan.sensors])
    rows["equipment"] = _table("equipment", [{
        "item": e.name, "at": places.at(e.position_m),
        "safe_distance": None if e.safe_distance_m is None else
        length_text(e.safe_distance_m, unit, bare=False),
        "safe_distance_for": e.safe_distance_for, "moment_am2": number_cell(e.moment_am2),
        "axis": ", ".join(shortest_number(v, "m") for v in e.axis) if e.axis is not None
        else None,
        "states": "; ".join(e.states) if e.states is not None else None, "note": e.note or None}
        for e in plan.equipment])
    rows["steel"] = _table("steel", [{
        "item": item.name, "at": places.at(item.position_m), "shape": item.shape,
        "size": _sizes_text(item.sizes_m, unit), "axis": item.axis_text,
        "wall": None if item.wall_m is None else length_text(item.wall_m, small, bare=False),
        "mu_low": _permeability_cell(item.mu_low), "mu_high": _permeability_cell(item.mu_high),
        "states": "; ".join(item.states) if item.states is not None else None,
        "note": item.note or None} for item in plan.steel])
    spot_notes = notes.get("spots", {})
    rows["spots"] = _table("spots", [{
        "spot": p.name, "at": places.at(p.position_m), "for_sensor": p.for_sensor,
        "note": spot_notes.get(name_key(p.name))} for p in plan.spots])
    rows["conditions"] = _table("conditions", [{
        "state": c.state, "engines": c.engines, "generator": c.generator, "radios": c.radios,
        "note": c.note or None} for c in plan.conditions])
    rows["volumes"] = _table("volumes", [{
        "volume": v.name, "kind": v.kind, "from": places.at(v.low_m), "to": places.at(v.high_m),
        "for_sensor": v.for_sensor, "note": v.note or None} for v in plan.volumes])
    return rows


def _sizes_text(sizes_m, unit):
    """An item's sizes as typed: bare numbers in the plan's unit, or each with its unit where
    one needs it (a unit after the last size alone would apply to every bare one)."""
    texts = [length_text(v, unit) for v in sizes_m]
    if any(" " in t for t in texts):
        texts = [length_text(v, unit, bare=False) for v in sizes_m]
    return " x ".join(texts)


def _permeability_cell(mu):
    return "inf" if mu == float("inf") else number_cell(mu)


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
                cell = sheet.cell(row=r, column=c, value=xlsx_value(value))
                if isinstance(value, str):
                    cell.data_type = "s"
                if r == 1:
                    cell.font = Font(bold=True)
        sheet.freeze_panes = "A2"
    write_atomically(path, book.save)
