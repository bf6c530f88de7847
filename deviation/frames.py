"""A check's results as pandas DataFrames, for notebooks: filter, plot, export.

Columns carry their units in their names. pandas is imported here only, and only when a table is
asked for.
"""

from __future__ import annotations


def _pandas():
    import pandas

    return pandas


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
    return _pandas().DataFrame(rows)


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
    return _pandas().DataFrame(rows)


def remedies_frame(analysis):
    """One row per remedy: its kind, run and the held figure before and after."""
    columns = ["sensor", "state", "kind", "run", "before", "after", "unit", "within_after",
               "spacing_m", "size", "lay_m", "clearance_m"]
    rows = [{c: result.sensor.budget.unit.value if c == "unit" else getattr(m, c)
             for c in columns}
            for result in analysis.sensors for st in result.states for m in st.remedies]
    return _pandas().DataFrame(rows, columns=columns)


def findings_frame(analysis):
    """One row per rule finding."""
    columns = ["sensor", "state", "rule", "subject", "distance_m", "limit_m", "fraction"]
    rows = [{c: getattr(f, c) for c in columns} for f in analysis.findings]
    return _pandas().DataFrame(rows, columns=columns)
