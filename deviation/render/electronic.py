"""Electronic-sensor outputs: the per-ampere table (terminal, CSV, JSON), the compensation and
model checks (terminal, JSON), and the operating-area summary.

Field units are chosen by the caller: "uT", "nT" or "mG" (constants.FIELD_UNITS_T).
"""

from __future__ import annotations

import csv
import io
import math

from rich.markup import escape
from rich.table import Table

from ..constants import (
    FIELD_UNITS_T,
    MODEL_FIELD_TOLERANCE_T,
    MODEL_INCLINATION_TOLERANCE_DEG,
    SURVEY_FIGURE_OF_MERIT_NT,
)
from ..schema import TOTAL_FIELD_KIND
from . import words
from .terminal import _box
from .words import CAUTIONS

#: How each field unit is printed.
UNIT_LABEL = {"uT": "µT", "nT": "nT", "mG": "mG"}

#: Columns of the per-ampere CSV, in order (docs/electronic-sensors.md explains each).
CSV_COLUMNS = ("sensor", "row_kind", "name", "switching", "peak_current_a", "unit",
               "vessel_x_per_a", "vessel_y_per_a", "vessel_z_per_a",
               "sensor_x_per_a", "sensor_y_per_a", "sensor_z_per_a", "size_per_a",
               "unknown_size_per_a", "total_field_low_nt_per_a", "total_field_high_nt_per_a")


def _in(value_t, unit):
    return float(value_t) / FIELD_UNITS_T[unit]


def _round(value, digits=6):
    return None if value is None else round(float(value), digits) + 0.0


def _vec(vector_t, unit, digits=6):
    return [_round(_in(v, unit), digits) for v in vector_t]


def axes_words(sensor) -> str:
    if sensor.axes_text is None:
        return "the vessel's axes (x forward, y to port, z up)"
    return f"{sensor.axes_text} (sensor x, y, z along vessel {_axes_letters(sensor.axes)})"


def _axes_letters(axes):
    out = []
    for row in axes:
        i = max(range(3), key=lambda j: abs(row[j]))
        out.append(("+" if row[i] > 0 else "-") + "xyz"[i])
    return ", ".join(out)


# Per-ampere table ---------------------------------------------------------------------------------

def per_ampere_records(reports, unit):
    """Rows of the per-ampere table as dicts (CSV_COLUMNS), circuits then compensation."""
    label = f"{unit}/A"
    records = []
    for report in reports:
        name = report.sensor.name
        for row in report.per_ampere:
            low, high = row.total_field_per_a if row.total_field_per_a else (None, None)
            records.append({
                "sensor": name, "row_kind": "circuit", "name": row.circuit,
                "switching": row.switching, "peak_current_a": _round(row.peak_current_a),
                "unit": label,
                **dict(zip(CSV_COLUMNS[6:9], _vec(row.vessel_t_per_a, unit))),
                **dict(zip(CSV_COLUMNS[9:12], _vec(row.sensor_t_per_a, unit))),
                "size_per_a": _round(_in(row.size_t_per_a, unit)),
                "unknown_size_per_a": _round(_in(row.unknown_t_per_a, unit)),
                "total_field_low_nt_per_a": None if low is None else _round(low * 1e9),
                "total_field_high_nt_per_a": None if high is None else _round(high * 1e9)})
        comp = report.compensation
        if comp is not None:
            for j, channel in enumerate(comp.measured):
                vessel = comp.coefficients_t_per_a[j]
                records.append({
                    "sensor": name, "row_kind": "compensation", "name": channel,
                    "switching": None, "peak_current_a": None, "unit": label,
                    **dict(zip(CSV_COLUMNS[6:9], _vec(vessel, unit))),
                    **dict(zip(CSV_COLUMNS[9:12], _vec(comp.sensor_coefficients_t_per_a[j],
                                                       unit))),
                    "size_per_a": _round(_in(math.sqrt(float(vessel @ vessel)), unit)),
                    "unknown_size_per_a": None, "total_field_low_nt_per_a": None,
                    "total_field_high_nt_per_a": None})
    return records


def per_ampere_csv(reports, unit) -> str:
    """The per-ampere table as CSV text (header CSV_COLUMNS)."""
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=CSV_COLUMNS, lineterminator="\n")
    writer.writeheader()
    for record in per_ampere_records(reports, unit):
        writer.writerow({k: "" if v is None else v for k, v in record.items()})
    return out.getvalue()


def per_ampere_json(analysis, reports, unit):
    return {"plan": analysis.plan.source, "unit": f"{unit}/A",
            "rows": per_ampere_records(reports, unit),
            "sensors": [{"sensor": r.sensor.name, "kind": r.sensor.kind,
                         "axes": r.sensor.axes_text,
                         "measured_currents": None if r.sensor.measured_currents is None
                         else list(r.sensor.measured_currents)} for r in reports]}


def _num(value, digits=3):
    return "—" if value is None else words.number(value, digits)


def _triple(vector_t, unit):
    return ", ".join(_num(v, 4) for v in _vec(vector_t, unit))


def render_per_ampere(analysis, reports, console, unit):
    label = UNIT_LABEL[unit]
    for report in reports:
        sensor = report.sensor
        console.print(f"[bold]{escape(sensor.name)}[/bold] ({sensor.kind}), axes: "
                      f"{escape(axes_words(sensor))}")
        table = Table(box=_box(console),
                      title=escape(f"Field per ampere at the sensor [{label}/A]"))
        for column in ("circuit", "switching", "peak [A]", "vessel x, y, z", "sensor x, y, z",
                       "size", "± unknown"):
            table.add_column(escape(column), justify="left" if column in ("circuit", "switching")
                             else "right")
        scalar = sensor.kind == TOTAL_FIELD_KIND
        if scalar:
            table.add_column("total field [nT/A]", justify="right")
        for row in report.per_ampere:
            cells = [row.circuit, row.switching, f"{row.peak_current_a:g}",
                     _triple(row.vessel_t_per_a, unit), _triple(row.sensor_t_per_a, unit),
                     _num(_in(row.size_t_per_a, unit), 4),
                     _num(_in(row.unknown_t_per_a, unit), 4)]
            if scalar:
                low, high = row.total_field_per_a
                cells.append(f"{low * 1e9:+.3f} to {high * 1e9:+.3f}")
            table.add_row(*(escape(c) for c in cells))
        console.print(table)
        comp = report.compensation
        if comp is not None:
            fitted = Table(box=_box(console), title=escape(
                f"Compensation to key in [{label}/A], per ampere of each measured current"))
            for column in ("measured current", "sensor x, y, z", "vessel x, y, z", "size"):
                fitted.add_column(escape(column), justify="left" if column == "measured current"
                                  else "right")
            for j, channel in enumerate(comp.measured):
                vessel = comp.coefficients_t_per_a[j]
                fitted.add_row(escape(channel if channel != "total" else "total (every circuit)"),
                               _triple(comp.sensor_coefficients_t_per_a[j], unit),
                               _triple(vessel, unit),
                               _num(_in(math.sqrt(float(vessel @ vessel)), unit), 4))
            console.print(fitted)
            console.print(f"Fitted over {comp.samples} samples (states x switchings"
                          f"{'' if comp.exhaustive else ', each independent circuit alone'}); "
                          "the host subtracts these times the measured currents.")
        console.print()
    console.print("Vectors are the part of known direction. ± unknown is the size of what the plan "
                  "leaves open (which side of its supply a pair's return lies, how a twisted "
                  "run's untwisted ends lie, its floor): give a run whose vector matters a "
                  "separate return route, or measure "
                  "the compensation after installation.")


# Compensation, grading and model checks -----------------------------------------------------------

def electronic_json(analysis, reports, unit):
    """The result of ``electronic --json``."""
    out = []
    for report in reports:
        sensor = report.sensor
        item = {"sensor": sensor.name, "kind": sensor.kind, "axes": sensor.axes_text,
                "measured_currents": None if sensor.measured_currents is None
                else list(sensor.measured_currents), "unit": unit}
        if sensor.kind == TOTAL_FIELD_KIND:
            item["budget_nt"] = sensor.budget.value
            item["states"] = [{
                "state": s.state, "used": s.used,
                "total_field_high_nt": _round(s.total_field_high_t * 1e9, 4),
                "total_field_low_nt": _round(s.total_field_low_t * 1e9, 4),
                "total_field_error_nt": _round(s.total_field_error_t * 1e9, 4),
                "heading_peak_to_peak_nt": _round(s.heading_peak_to_peak_t * 1e9, 4),
                "bound_nt": _round(s.total_field_bound_t * 1e9, 4),
                "within_budget": s.within_budget} for s in report.state_results]
        else:
            grade = report.grade
            item["grade"] = None if grade is None else {
                "grade": grade.grade, "percent_of_total_field": _round(grade.fraction * 100, 4),
                "state": grade.state,
                "words": words.interference_words(grade.grade, grade.fraction, grade.state)}
            item["states"] = [{
                "state": s.state, "used": s.used,
                "interference": _round(_in(s.interference_t, unit), 6),
                "interference_percent_of_total_field": _round(s.interference_fraction * 100, 4),
                "compensated_horizontal": None if s.compensated_horizontal_t is None
                else _round(_in(s.compensated_horizontal_t, unit), 6),
                "compensated_deviation_deg": _round(s.compensated_deg, 4),
                "compensated_percent_of_total_field": None if s.compensated_fraction is None
                else _round(s.compensated_fraction * 100, 4),
                "unknown_direction": _round(_in(s.unknown_t, unit), 6),
                "compensated_bound": None if s.compensated_bound_t is None
                else _round(_in(s.compensated_bound_t, unit), 6),
                "field_departure": _round(_in(s.field_departure_t, unit), 6),
                "inclination_departure_deg": _round(s.inclination_departure_deg, 4),
                "model_check_ok": s.model_ok} for s in report.states]
        out.append(item)
    return {"plan": analysis.plan.source, "unit": unit,
            "model_tolerances": {"field": _round(_in(MODEL_FIELD_TOLERANCE_T, unit)),
                                 "inclination_deg": MODEL_INCLINATION_TOLERANCE_DEG},
            "sensors": out, "cautions": list(CAUTIONS)}


def render_electronic(analysis, reports, console, unit):
    label = UNIT_LABEL[unit]
    site = analysis.site
    console.print(f"Earth's field: F {_in(site.total_t, unit):.2f} {label}, H "
                  f"{_in(site.horizontal_t, unit):.2f} {label}, inclination "
                  f"{site.inclination_deg:.1f}° ({site.source})")
    for report in reports:
        sensor = report.sensor
        console.print(f"\n[bold]{escape(sensor.name)}[/bold] ({sensor.kind})")
        if sensor.kind == TOTAL_FIELD_KIND:
            _render_total_field(report, console)
            continue
        grade = report.grade
        if grade is not None:
            style = {"acceptable": "green", "marginal": "yellow", "move": "bold red"}[grade.grade]
            console.print(f"[{style}]{grade.grade.upper()}[/{style}]: "
                          + escape(words.interference_words(grade.grade, grade.fraction,
                                                            grade.state)))
        comp = report.compensation
        table = Table(box=_box(console))
        columns = ["state", f"interference [{label}]", "% of F"]
        if comp is not None:
            columns += [f"compensated |b_h| [{label}]", "compensated [°]", "compensated % of F",
                        f"of which bounds [{label}]"]
        columns += [f"field vs model [{label}]", "inclination vs model [°]", "model check"]
        for column in columns:
            table.add_column(escape(column), justify="left" if column == "state" else "right")
        for s in report.states:
            cells = [escape(s.state + ("" if s.used else " (not used)")),
                     _num(_in(s.interference_t, unit)),
                     f"{s.interference_fraction * 100:.1f}"]
            if comp is not None:
                cells += [_num(_in(s.compensated_horizontal_t, unit)),
                          words.degrees(s.compensated_deg), f"{s.compensated_fraction * 100:.1f}",
                          _num(_in(s.compensated_bound_t, unit))]
            cells += [_num(_in(s.field_departure_t, unit)),
                      f"{s.inclination_departure_deg:.2f}", "ok" if s.model_ok else "FAILS"]
            table.add_row(*cells)
        console.print(table)
        if comp is not None:
            console.print("Compensated figures count what the fit leaves of every part the plan "
                          "does not fix (a pair's lie, a twisted run's ends, equipment of unknown "
                          "orientation) at its worst: where that is not zero they are bounds, "
                          "and 'of which bounds' is its share.")
            console.print(f"Compensation from the measured current(s) "
                          f"{', '.join(comp.measured)}: see `deviation per-amp` for the figures "
                          "to key in.")
        console.print(f"Model check: the field the host sees (calibrated"
                      f"{', compensated' if comp is not None else ''}) within "
                      f"{_in(MODEL_FIELD_TOLERANCE_T, unit):g} {label} of the model's total field "
                      f"and {MODEL_INCLINATION_TOLERANCE_DEG:g}° of its inclination, over every "
                      "heading and attitude (common practice, from memory).")
    console.print()
    for caution in CAUTIONS:
        console.print(f"[dim]{caution}[/dim]")


def _render_total_field(report, console):
    sensor = report.sensor
    low_fom, high_fom = SURVEY_FIGURE_OF_MERIT_NT
    table = Table(box=_box(console), title=escape(f"Total-field error [nT], budget "
                                                  f"{sensor.budget}"))
    for column in ("state", "largest", "smallest", "held |error|", "heading peak to peak",
                   "of which bounds", "verdict"):
        table.add_column(escape(column), justify="left" if column == "state" else "right")
    for s in report.state_results:
        verdict = "not used" if not s.used else ("within" if s.within_budget else "OVER")
        table.add_row(escape(s.state), f"{s.total_field_high_t * 1e9:+.3f}",
                      f"{s.total_field_low_t * 1e9:+.3f}", f"{s.total_field_error_t * 1e9:.3f}",
                      f"{s.heading_peak_to_peak_t * 1e9:.3f}",
                      f"{s.total_field_bound_t * 1e9:.3f}", verdict)
    console.print(table)
    console.print(f"Over every heading and attitude within heel ±{sensor.max_heel_deg:g}° and "
                  f"pitch ±{sensor.max_pitch_deg:g}°, the worst switching of the independent "
                  f"loads; a compensated survey installation aims at a figure of merit of "
                  f"{low_fom:g}-{high_fom:g} nT (common practice).")


# The operating area -------------------------------------------------------------------------------

def area_json(area, unit="uT"):
    return {"plan": area.plan.source, "unit": unit,
            "places": [{"place": p.name, "latitude_deg": p.latitude_deg,
                        "longitude_deg": p.longitude_deg,
                        "horizontal": _round(_in(p.site.horizontal_t, unit), 4),
                        "total": _round(_in(p.site.total_t, unit), 4),
                        "inclination_deg": _round(p.site.inclination_deg, 4),
                        "zone": p.site.zone, "within_budget": p.within_budget}
                       for p in area.places],
            "verdict_changes": area.verdict_changes,
            "within_budget_everywhere": area.within_budget,
            "worst": [{"sensor": w.sensor, "figure": w.figure, "value": _round(w.value, 6),
                       "unit": w.unit, "place": w.place, "within_everywhere": w.within}
                      for w in area.worst]}


def render_area(area, console, unit="uT"):
    label = UNIT_LABEL[unit]
    table = Table(box=_box(console), title="Places of the operating area")
    for column in ("place", "lat", "lon", f"H [{label}]", f"F [{label}]", "incl. [°]", "zone",
                   "verdict"):
        table.add_column(escape(column), justify="left" if column in ("place", "zone", "verdict")
                         else "right")
    for p in area.places:
        table.add_row(escape(p.name), f"{p.latitude_deg:.3f}", f"{p.longitude_deg:.3f}",
                      f"{_in(p.site.horizontal_t, unit):.2f}", f"{_in(p.site.total_t, unit):.2f}",
                      f"{p.site.inclination_deg:.1f}", p.site.zone,
                      "within" if p.within_budget else "OVER")
    console.print(table)
    worst = Table(box=_box(console), title="Worst over the area")
    for column in ("sensor", "figure", "worst", "where"):
        worst.add_column(escape(column), justify="right" if column == "worst" else "left")
    for w in area.worst:
        worst.add_row(escape(w.sensor), w.figure, f"{w.value:.3f} {w.unit}", escape(w.place))
    console.print(worst)
    if area.verdict_changes:
        console.print("[bold]The verdict changes across the area:[/bold] " + escape(
            "within budget at " + ", ".join(p.name for p in area.places if p.within_budget)
            + "; over at " + ", ".join(p.name for p in area.places if not p.within_budget) + "."))
    else:
        console.print("The verdict is the same everywhere in the area: "
                      + ("within budget." if area.within_budget else "over budget."))
