"""Electronic-sensor data: the per-ampere table (CSV, JSON), the compensation and model checks
(JSON), and the operating-area summary (JSON); the documents are in
:mod:`deviation.render.documents.electronic`.

Field units are chosen by the caller: "uT", "nT" or "mG" (constants.FIELD_UNITS_T).
"""

from __future__ import annotations

import csv
import io
import math

from ..constants import (
    FIELD_UNITS_T,
    MODEL_FIELD_TOLERANCE_T,
    MODEL_INCLINATION_TOLERANCE_DEG,
)
from ..schema import TOTAL_FIELD_KIND
from . import words

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
    """The per-ampere table as CSV text (header CSV_COLUMNS); text that a spreadsheet would run
    as a formula gets a leading ' (:func:`deviation.text.csv_cell`), numbers stay numbers."""
    from ..text import csv_cell

    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=CSV_COLUMNS, lineterminator="\n")
    writer.writeheader()
    for record in per_ampere_records(reports, unit):
        writer.writerow({k: "" if v is None else csv_cell(v) for k, v in record.items()})
    return out.getvalue()


def per_ampere_json(analysis, reports, unit):
    return {"plan": analysis.plan.source, "unit": f"{unit}/A",
            "rows": per_ampere_records(reports, unit),
            "sensors": [{"sensor": r.sensor.name, "kind": r.sensor.kind,
                         "axes": r.sensor.axes_text,
                         "measured_currents": None if r.sensor.measured_currents is None
                         else list(r.sensor.measured_currents)} for r in reports]}


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
                "standing": grade.standing.value, "held_deg": _round(grade.held, 4),
                "state": grade.state, "compensated_deg": _round(grade.compensated, 4),
                "compensated_state": grade.compensated_state,
                "percent_of_total_field": _round(grade.fraction * 100, 4),
                "loudest_state": grade.fraction_state, "words": words.standing_words(grade)}
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
            "sensors": out, "cautions": list(words.cautions(analysis.plan))}


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
                      for w in area.worst],
            "steel": [{"sensor": c.sensor, "place": c.place, "state": c.state,
                       "z_over_h": _round(c.z_over_h, 6), "lambda": _round(c.lam, 6),
                       **{f"{k}_deg": _round(v, 6) for k, v in zip("ABCDE", c.coefficients_deg)},
                       "b_induced_deg": _round(c.b_induced_deg, 6),
                       "c_induced_deg": _round(c.c_induced_deg, 6), "held": _round(c.held, 6)}
                      for c in area.steel],
            "cautions": list(words.cautions(area.plan))}
