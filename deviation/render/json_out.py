"""The machine-readable result of ``check --json`` (layout in docs/plan-format.md)."""

from __future__ import annotations

import math

from ..constants import AVIATION_LIMIT_DEG
from . import view, words
from .words import CAUTIONS


def _ut(vector_t):
    return [round(float(v) * 1e6, 6) + 0.0 for v in vector_t]      # + 0.0: no "-0.0"


def _deg(value):
    return None if value is None else round(float(value), 4)


def _held(value):
    """A figure in a budget's unit (degrees or nT): four decimals, as the degrees are."""
    return None if value is None else round(float(value), 4) + 0.0


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
        "date": site.date_text,
        "decimal_year": round(site.decimal_year, 4),
        "declination_uncertainty_deg": _deg(site.declination_uncertainty_deg),
    }


def state_json(sensor, state, unit_system, plan_source):
    rows, _ = view.budget_rows(sensor, state, all_runs=True)
    runs = [r for r in rows if not r.is_item]
    items = [r for r in rows if r.is_item]
    by_run = {r.name: r for r in state.runs}
    by_item = {e.name: e for e in state.equipment}
    return {
        "state": state.state,
        "used": state.used,
        "is_reference": state.is_reference,
        "field_ut": _ut(state.field_t),
        "vector_deviation_deg": _deg(state.vector_deviation_deg),
        "max_deviation_deg": _deg(state.max_deviation_deg),
        "change_from_reference_deg": _deg(state.change_from_reference_deg),
        "heeled_max_deviation_deg": _deg(state.heeled_max_deviation_deg),
        "attitude_change_deg": _deg(state.attitude_change_deg),
        "held": _held(state.held),
        "status": state.status.value,
        "within_budget": state.within_budget,
        "overwhelmed": state.overwhelmed,
        "magnitude_bound_deg": _deg(state.magnitude_bound_deg),
        "percent_of_total_field": round(state.fraction_of_total * 100, 4),
        "bound_ut": round(state.bound_t * 1e6, 6),
        "switched_on": [{"circuit": name, "sign": sign} for name, sign in state.switched_on],
        "totals": [{"figure": t.label, "deg": _deg(t.value_deg), "held": t.held}
                   for t in view.total_rows(sensor, state)],
        "runs": [{"run": r.name, "current_a": round(by_run[r.name].current_a, 6),
                  "field_ut": _ut(by_run[r.name].field_t),
                  "max_deviation_deg": _deg(r.max_deviation_deg), "nearest_m": _m(r.nearest_m),
                  "change_from_reference_deg": _deg(r.change_deg),
                  "bound_ut": round(by_run[r.name].bound_t * 1e6, 6),
                  "untwisted_ends_share": (None if by_run[r.name].ends_share is None
                                           else round(by_run[r.name].ends_share, 4)),
                  "held": _held(r.counted),
                  "share_of_budget": round(r.share_of_budget, 6)} for r in runs],
        "equipment": [{"item": r.name, "distance_m": _m(r.nearest_m), "kind": by_item[r.name].kind,
                       "field_ut": None if r.bound else _ut(by_item[r.name].field_t),
                       "bound_ut": round(by_item[r.name].bound_t * 1e6, 6),
                       "max_deviation_deg": _deg(r.max_deviation_deg),
                       "held": _held(r.counted), "adjusted_out": r.compensated,
                       "inside_safe_distance": by_item[r.name].inside_safe_distance}
                      for r in items],
        "hints": [remedy_json(m, unit_system, plan_source) for m in state.remedies],
        **_total_field_json(state),
        **_steel_json(state),
    }


def _steel_json(state):
    """Steel items (nothing for a plan without them): each alone, and lambda's range."""
    if state.lam_low is None:
        return {}
    return {"lambda_low": round(state.lam_low, 6), "lambda_high": round(state.lam_high, 6),
            "steel": [{"item": s.name, "shape": s.shape, "distance_m": _m(s.distance_m),
                       "max_deviation_deg": _deg(s.max_deviation_deg), "held": _held(s.held),
                       "share_of_budget": round(s.share_of_budget, 6), "is_bound": s.bound,
                       "horizontal_bound_ut": round(s.horizontal_t * 1e6, 6),
                       "vertical_bound_ut": round(s.vertical_t * 1e6, 6),
                       "adjusted": s.adjusted} for s in state.steel]}


def _total_field_json(state):
    """A total-field magnetometer's figures in nT (nothing for the other kinds)."""
    if state.total_field_error_t is None:
        return {}

    def nt(value_t):
        return round(float(value_t) * 1e9, 4) + 0.0

    return {"total_field_high_nt": nt(state.total_field_high_t),
            "total_field_low_nt": nt(state.total_field_low_t),
            "total_field_error_nt": nt(state.total_field_error_t),
            "heading_peak_to_peak_nt": nt(state.heading_peak_to_peak_t),
            "total_field_bound_nt": nt(state.total_field_bound_t)}


def remedy_json(remedy, unit_system, plan_source):
    return {"run": remedy.run, "kind": remedy.kind,
            "action": words.remedy_action(remedy, unit_system, plan_source),
            "before": _held(remedy.before), "after": _held(remedy.after),
            "within_budget_after": remedy.within_after, "clearance_m": _m(remedy.clearance_m),
            "spacing_m": _m(remedy.spacing_m), "lay_m": _m(remedy.lay_m)}


def fix_set_json(fixes, unit_system):
    if fixes is None:
        return None
    return {"before": _held(fixes.before), "reaches_budget": fixes.reaches_budget,
            "steps": [{"kind": step.kind, "run": step.run,
                       "action": words.fix_step_action(step, unit_system),
                       "after": _held(step.after), "within_budget_after": step.within_after,
                       "spacing_m": _m(step.spacing_m), "lay_m": _m(step.lay_m),
                       "clearance_m": _m(step.clearance_m)} for step in fixes.steps]}


def finding_json(finding):
    return {"sensor": finding.sensor, "state": finding.state, "rule": finding.rule,
            "message": words.finding_message(finding), "source": words.finding_source(finding)}


def _number_or_null(value):
    return None if value is None or not math.isfinite(value) else round(float(value), 6)


def loads_json(plan):
    """Every circuit's load per state: the watts as given (null where given in A or blank) and
    the DC current the budget counts, with its voltage and supply."""
    return [{
        "circuit": c.name, "voltage_v": c.voltage_v,
        "supply": "via inverter" if c.inverter is not None else "DC",
        "efficiency": c.efficiency if c.inverter is not None else None,
        "idle_w": _number_or_null(c.idle_w) if c.inverter is not None else None,
        "states": [{"state": state,
                    "power_w": None if c.power_w is None else _number_or_null(c.power_w[k]),
                    "current_a": round(float(c.currents_a[k]), 6)}
                   for k, state in enumerate(plan.state_names)]}
        for c in plan.circuits]


def analysis_json(analysis):
    """The whole result as a JSON-ready dict."""
    plan = analysis.plan
    summary = {row.sensor: row for row in view.summary_rows(analysis)}
    return {
        "plan": plan.source,
        "site": site_json(analysis.site),
        "within_budget": analysis.within_budget,
        "sensors": [{
            "sensor": s.sensor.name,
            "kind": s.sensor.kind,
            "position_m": [round(float(v), 6) for v in s.sensor.position_m],
            "budget": {"value": s.sensor.budget.value, "unit": s.sensor.budget.unit.value},
            "reference_state": s.sensor.reference_state,
            "used_in": None if s.sensor.used_in is None else list(s.sensor.used_in),
            "max_heel_deg": s.sensor.max_heel_deg,
            "max_pitch_deg": s.sensor.max_pitch_deg,
            "axes": s.sensor.axes_text,
            "measured_currents": (None if s.sensor.measured_currents is None
                                  else list(s.sensor.measured_currents)),
            "adjustment_absorbs_deg": _deg(summary[s.sensor.name].adjustment_absorbs_deg),
            "within_budget": s.within_budget,
            "status": s.status.value,
            "over_in": list(s.over_in),
            "verdict": summary[s.sensor.name].verdict,
            "states": [state_json(s.sensor, st, plan.site.units, plan.source) for st in s.states],
            "fix_set": fix_set_json(s.fixes, plan.site.units),
        } for s in analysis.sensors],
        "loads": loads_json(plan),
        "profile": plan.site.profile,
        "aviation": aviation_json(analysis),
        "findings": [finding_json(f) for f in analysis.findings],
        "skipped_examples": [{"sheet": sheet, "row": row}
                             for sheet, row in plan.skipped_examples],
        "cautions": list(words.cautions(plan)),
    }


def spot_json(spot):
    return {"position_m": [round(float(v), 6) for v in spot.position_m],
            "held": _held(spot.held), "worst_state": spot.worst_state,
            "within_budget": spot.within_budget, "name": spot.name,
            "dominant_runs": [{"run": name, "share": round(share, 4)}
                              for name, share in spot.dominant_runs]}


def spots_json(search):
    """The result of ``spot --json``: best first."""
    budget = search.sensor.budget
    return {"sensor": search.sensor.name,
            "budget": {"value": budget.value, "unit": budget.unit.value},
            "spots": [spot_json(s) for s in search.spots],
            "current": spot_json(search.current) if search.current else None,
            "evaluated": search.evaluated, "grid_points": search.grid_points,
            "step_m": search.step_m}


def cards_json(cards, plan=None):
    """The result of ``card --json``: per sensor and state, the figure at each heading with the
    band parts of unknown direction allow, and the state's held figure (in the budget's unit)."""
    out = []
    for c in cards:
        scalar = not c.sensor.budget.degrees
        name, band = (("total_field_error_nt", "band_nt") if scalar else
                      ("deviation_deg", "band_deg"))
        out.append({
            "sensor": c.sensor.name,
            "reference_state": c.sensor.reference_state,
            "budget": {"value": c.sensor.budget.value, "unit": c.sensor.budget.unit.value},
            "states": [{
                "state": st.state, "status": st.status.value, "held": _held(st.held),
                "unknown_ut": round(st.unknown_t * 1e6, 6), "level_worst": _held(st.level_worst),
                "headings": [{"heading_deg": float(psi), name: _held(st.deviation_deg[i]),
                              band: _held(min(float(st.band[i]), 180.0)),
                              "compass_deg": (_deg(st.compass_deg[i])
                                              if st.compass_deg is not None else None),
                              "unadjusted_deviation_deg": None if st.unadjusted_deg is None
                              else _deg(st.unadjusted_deg[i])}
                             for i, psi in enumerate(st.headings_deg)],
                "condition": condition_json(st.condition), "limit": limit_json(st.limit)}
                for st in c.states],
            "profile": c.profile, "step_deg": c.step_deg,
            "placard": [words.placard_text(line) for line in c.placard]})
    return {"sensors": out,
            "cautions": list(CAUTIONS if plan is None else words.cautions(plan))}


def condition_json(condition):
    """What a state stands for on a placard, or null."""
    if condition is None:
        return None
    return {"engines": condition.engines, "generator": condition.generator,
            "radios": condition.radios}


def limit_json(limit):
    """A state against the aviation profile's 10 degree limit, or null outside it."""
    if limit is None:
        return None
    return {"level_deg": _held(limit.level_deg), "limit_deg": limit.limit_deg,
            "within": limit.within,
            "switched_on": [{"circuit": name, "sign": sign} for name, sign in limit.switched_on]}


def aviation_json(analysis):
    """The aviation profile's verdicts (null outside it): every direction indicator in every
    state against 10 degrees on any heading, level."""
    from ..card import aviation_verdicts, within_aviation_limit

    if not analysis.plan.site.aviation:
        return None
    return {"limit_deg": AVIATION_LIMIT_DEG, "source": words.LIMIT_SOURCE,
            "within_limit": within_aviation_limit(analysis),
            "states": [{"sensor": v.sensor, "state": v.state, "used": v.used,
                        "condition": condition_json(v.condition), **limit_json(v.limit)}
                       for v in aviation_verdicts(analysis)]}
