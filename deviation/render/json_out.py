"""The machine-readable result of ``check --json`` (layout in docs/plan-format.md)."""

from __future__ import annotations

import math

from .common import CAUTIONS


def _ut(vector_t):
    return [round(float(v) * 1e6, 6) + 0.0 for v in vector_t]      # + 0.0: no "-0.0"


def _deg(value):
    return None if value is None else round(float(value), 4)


def _m(value):
    return None if value is None or not math.isfinite(value) else round(float(value), 4)


def site_json(site):
    return {
        "horizontal_ut": round(site.horizontal_t * 1e6, 4),
        "vertical_ut": round(site.vertical_t * 1e6, 4),
        "total_ut": round(site.total_t * 1e6, 4),
        "declination_deg": _deg(site.declination_deg),
        "inclination_deg": _deg(site.inclination_deg),
        "source": site.source,
        "zone": site.zone,
        "decimal_year": round(site.decimal_year, 4),
        "declination_uncertainty_deg": _deg(site.declination_uncertainty_deg),
    }


def state_json(state):
    return {
        "state": state.state,
        "field_ut": _ut(state.field_t),
        "max_deviation_deg": _deg(state.max_deviation_deg),
        "change_from_reference_deg": _deg(state.change_from_reference_deg),
        "heeled_max_deviation_deg": _deg(state.heeled_max_deviation_deg),
        "budget_used_deg": _deg(state.budget_used_deg),
        "within_budget": state.within_budget,
        "overwhelmed": state.overwhelmed,
        "magnitude_bound_deg": _deg(state.magnitude_bound_deg),
        "percent_of_total_field": round(state.fraction_of_total * 100, 4),
        "runs": [{"run": r.name, "current_a": round(r.current_a, 6), "field_ut": _ut(r.field_t),
                  "max_deviation_deg": _deg(r.max_deviation_deg), "nearest_m": _m(r.nearest_m),
                  "change_from_reference_deg": _deg(r.change_from_reference_deg),
                  "share_of_budget": round(r.share_of_budget, 6)} for r in state.runs],
        "equipment": [{"item": e.name, "distance_m": _m(e.distance_m), "kind": e.kind,
                       "field_ut": None if e.field_t is None else _ut(e.field_t),
                       "bound_ut": round(e.bound_t * 1e6, 6),
                       "max_deviation_deg": _deg(e.max_deviation_deg),
                       "inside_safe_distance": e.inside_safe_distance} for e in state.equipment],
        "hints": [hint_json(h) for h in state.hints],
    }


def hint_json(hint):
    return {"run": hint.run, "action": hint.action, "before_deg": _deg(hint.before_deg),
            "after_deg": _deg(hint.after_deg), "within_budget_after": hint.within_after,
            "clearance_m": _m(hint.clearance_m)}


def analysis_json(analysis, findings=()):
    """The whole result as a JSON-ready dict."""
    return {
        "plan": analysis.plan.source,
        "site": site_json(analysis.site),
        "within_budget": analysis.within_budget,
        "sensors": [{
            "sensor": s.sensor.name,
            "kind": s.sensor.kind,
            "position_m": [round(float(v), 6) for v in s.sensor.position_m],
            "budget_deg": s.sensor.budget_deg,
            "reference_state": s.sensor.reference_state,
            "max_heel_deg": s.sensor.max_heel_deg,
            "within_budget": s.within_budget,
            "states": [state_json(st) for st in s.states],
        } for s in analysis.sensors],
        "findings": [f.as_json() for f in findings],
        "cautions": list(CAUTIONS),
    }


def spot_json(spot):
    return {"position_m": [round(float(v), 6) for v in spot.position_m],
            "budget_used_deg": _deg(spot.budget_used_deg), "worst_state": spot.worst_state,
            "within_budget": spot.within_budget, "name": spot.name,
            "dominant_runs": [{"run": name, "share": round(share, 4)}
                              for name, share in spot.dominant_runs]}


def spots_json(search):
    """The result of ``spot --json``: best first."""
    return {"sensor": search.sensor.name,
            "spots": [spot_json(s) for s in search.spots],
            "current": spot_json(search.current) if search.current else None,
            "evaluated": search.evaluated, "grid_points": search.grid_points,
            "step_m": search.step_m}


def cards_json(cards):
    """The result of ``card --json``."""
    return {"sensors": [{
        "sensor": c.sensor.name,
        "reference_state": c.sensor.reference_state,
        "states": [{
            "state": st.state,
            "headings": [{"heading_deg": float(psi), "deviation_deg": _deg(d),
                          "compass_deg": _deg(cmp),
                          "change_from_reference_deg": None if st.change_deg is None
                          else _deg(st.change_deg[i])}
                         for i, (psi, d, cmp) in enumerate(zip(st.headings_deg, st.deviation_deg,
                                                               st.compass_deg))]}
            for st in c.states]} for c in cards],
        "cautions": list(CAUTIONS)}
