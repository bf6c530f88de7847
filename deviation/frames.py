"""A check's results as pandas DataFrames, for notebooks: filter, plot, export.

Columns carry their units in their names. pandas is imported here only, and only when a table is
asked for.
"""

from __future__ import annotations


def _pandas():
    import pandas

    return pandas


def _frame(rows, columns=None):
    """A DataFrame of ``rows`` (dicts) in which a figure that does not apply (None) is pandas'
    missing value ``<NA>`` in a nullable float column, never NaN: a NaN in a frame would be a
    figure that broke, and tests look for it (docs/robustness.md)."""
    import numpy as np

    pandas = _pandas()
    frame = pandas.DataFrame(rows, columns=columns)
    for column in frame.columns:
        values = [row.get(column) for row in rows]
        numbers = [v for v in values if v is not None]
        if len(numbers) < len(values) and all(
                isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool)
                for v in numbers):
            data = np.array([0.0 if v is None else float(v) for v in values])
            mask = np.array([v is None for v in values], dtype=bool)
            frame[column] = pandas.arrays.FloatingArray(data, mask)
    return frame


def summary_frame(analysis):
    """One row per sensor and state: the held figure and the figures behind it."""
    rows = []
    for result in analysis.sensors:
        s = result.sensor
        for st in result.states:
            rows.append({
                "sensor": s.name, "kind": s.kind, "state": st.state, "used": st.used,
                "reference_state": s.reference_state, "is_reference": st.is_reference,
                "budget": s.budget.value, "unit": s.budget.unit.value, "held": st.held,
                "status": st.status.value, "within_budget": st.within_budget,
                "overwhelmed": st.overwhelmed,
                "vector_deviation_deg": st.vector_deviation_deg,
                "max_deviation_deg": st.max_deviation_deg,
                "magnitude_bound_deg": st.magnitude_bound_deg,
                "heeled_max_deviation_deg": st.heeled_max_deviation_deg,
                "change_from_reference_deg": st.change_from_reference_deg,
                "attitude_change_deg": st.attitude_change_deg,
                "percent_of_total_field": st.fraction_of_total * 100,
                "field_x_ut": st.field_t[0] * 1e6, "field_y_ut": st.field_t[1] * 1e6,
                "field_z_ut": st.field_t[2] * 1e6,
                "equipment_bound_ut": st.equipment_bound_t * 1e6,
                "total_field_error_nt": (None if st.total_field_error_t is None
                                         else st.total_field_error_t * 1e9)})
    return _frame(rows)


def runs_frame(analysis):
    """One row per sensor, state and run or item."""
    rows = []
    for result in analysis.sensors:
        s = result.sensor
        for st in result.states:
            for r in st.runs:
                rows.append({"sensor": s.name, "state": st.state, "name": r.name, "is_item": False,
                             "return": r.return_kind, "current_a": r.current_a,
                             "nearest_m": r.nearest_m, "field_x_ut": r.field_t[0] * 1e6,
                             "field_y_ut": r.field_t[1] * 1e6, "field_z_ut": r.field_t[2] * 1e6,
                             "max_deviation_deg": r.max_deviation_deg,
                             "change_from_reference_deg": r.change_from_reference_deg,
                             "held": r.held, "unit": s.budget.unit.value,
                             "share_of_budget": r.share_of_budget, "bound": r.bound_t > 0,
                             "bound_ut": r.bound_t * 1e6})
            for e in st.equipment:
                oriented = e.field_t is not None
                rows.append({"sensor": s.name, "state": st.state, "name": e.name, "is_item": True,
                             "return": None, "current_a": None, "nearest_m": e.distance_m,
                             "field_x_ut": e.field_t[0] * 1e6 if oriented else None,
                             "field_y_ut": e.field_t[1] * 1e6 if oriented else None,
                             "field_z_ut": e.field_t[2] * 1e6 if oriented else None,
                             "max_deviation_deg": e.max_deviation_deg,
                             "change_from_reference_deg": None,
                             "held": e.held, "unit": s.budget.unit.value,
                             "share_of_budget": s.budget.share(e.held), "bound": e.bound,
                             "bound_ut": e.bound_t * 1e6})
    return _frame(rows)


def remedies_frame(analysis):
    """One row per remedy: its kind, run and the held figure before and after."""
    columns = ["sensor", "state", "kind", "run", "before", "after", "unit", "within_after",
               "spacing_m", "size", "lay_m", "clearance_m"]
    rows = [{c: result.sensor.budget.unit.value if c == "unit" else getattr(m, c)
             for c in columns}
            for result in analysis.sensors for st in result.states for m in st.remedies]
    return _frame(rows, columns)


def findings_frame(analysis):
    """One row per rule finding."""
    columns = ["sensor", "state", "rule", "subject", "distance_m", "limit_m", "fraction"]
    rows = [{c: getattr(f, c) for c in columns} for f in analysis.findings]
    return _frame(rows, columns)


def verdict_frame(analysis):
    """One row per sensor: its budget with its unit, the held figure in each state (NaN-free:
    every state has one) and its status, the verdict; what a notebook shows for a result."""
    rows = []
    for result in analysis.sensors:
        s = result.sensor
        row = {"sensor": s.name, "kind": s.kind, "budget": s.budget.value,
               "unit": s.budget.unit.value}
        for st in result.states:
            row[st.state] = st.held
            row[f"{st.state} status"] = st.status.value
        row["status"] = result.status.value
        row["over_in"] = ", ".join(result.over_in)
        rows.append(row)
    return _frame(rows)


def electronic_frame(reports):
    """One row per electronic sensor and state: interference [µT] and as a share of F, what
    current compensation leaves [µT, deg], the departures from the model, the model check; for
    a total-field magnetometer its errors [nT]."""
    rows = []
    for report in reports:
        s = report.sensor
        if report.states:
            for st in report.states:
                rows.append({
                    "sensor": s.name, "kind": s.kind, "state": st.state, "used": st.used,
                    "interference_ut": st.interference_t * 1e6,
                    "percent_of_total_field": st.interference_fraction * 100,
                    "compensated_horizontal_ut": (None if st.compensated_horizontal_t is None
                                                  else st.compensated_horizontal_t * 1e6),
                    "compensated_deg": st.compensated_deg,
                    "unknown_ut": st.unknown_t * 1e6,
                    "field_departure_ut": st.field_departure_t * 1e6,
                    "inclination_departure_deg": st.inclination_departure_deg,
                    "model_check_ok": st.model_ok,
                    "standing": None if report.grade is None else report.grade.standing.value})
        else:
            for st in report.state_results:
                rows.append({
                    "sensor": s.name, "kind": s.kind, "state": st.state, "used": st.used,
                    "total_field_low_nt": st.total_field_low_t * 1e9,
                    "total_field_high_nt": st.total_field_high_t * 1e9,
                    "total_field_error_nt": st.total_field_error_t * 1e9,
                    "heading_peak_to_peak_nt": st.heading_peak_to_peak_t * 1e9,
                    "status": st.status.value})
    return _frame(rows)


def per_ampere_frame(reports):
    """One row per electronic sensor and circuit: its field per ampere in the vessel's and the
    sensor's axes [µT/A], its size and the size of its part of unknown direction."""
    rows = []
    for report in reports:
        for row in report.per_ampere:
            vessel, own = row.vessel_t_per_a * 1e6, row.sensor_t_per_a * 1e6
            rows.append({
                "sensor": report.sensor.name, "circuit": row.circuit,
                "switching": row.switching, "peak_current_a": row.peak_current_a,
                "vessel_x_ut_per_a": vessel[0], "vessel_y_ut_per_a": vessel[1],
                "vessel_z_ut_per_a": vessel[2], "sensor_x_ut_per_a": own[0],
                "sensor_y_ut_per_a": own[1], "sensor_z_ut_per_a": own[2],
                "size_ut_per_a": row.size_t_per_a * 1e6,
                "unknown_ut_per_a": row.unknown_t_per_a * 1e6})
    return _frame(rows)


def area_frame(area):
    """One row per place and sensor: the place, its field, the sensor's worst held figure
    there (in its budget's unit) and its status."""
    rows = []
    for place in area.places:
        for result in place.analysis.sensors:
            rows.append({
                "place": place.name, "latitude_deg": place.latitude_deg,
                "longitude_deg": place.longitude_deg,
                "horizontal_ut": place.site.horizontal_t * 1e6,
                "vertical_ut": place.site.vertical_t * 1e6, "sensor": result.sensor.name,
                "held": result.worst.held, "unit": result.sensor.budget.unit.value,
                "worst_state": result.worst.state, "status": result.status.value})
    return _frame(rows)
