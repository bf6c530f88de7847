"""What to do about it: rerouting hints with computed before/after figures, and rule findings.

Every hint is computed on the plan's own geometry: the run is re-routed as the remedy says, its
field at the sensor recomputed, and the sensor's whole budget evaluated again with everything else
unchanged. Nothing here is a rule of thumb except where a finding quotes a standard or practice.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .analysis import budget_figures, equipment_arrays, run_fields_at
from .constants import ISO25862_BIPOLAR_RADIUS_M, MAGNETOMETER_MAX_FRACTION
from .routing import route_runs
from .units import LENGTH_UNITS, conductor_size, format_length

#: A run is given hints where its own figure uses at least this share of the sensor's budget,
#: or where the sensor is over budget and the run uses at least HINT_SHARE_OVER.
HINT_SHARE = 0.25
HINT_SHARE_OVER = 0.10
#: Lay length assumed when a hint suggests twisting (common practice, no source: about 20 twists
#: per metre is easily done by hand or bought as twisted pair).
ASSUMED_LAY_M = 0.05
#: Spacing assumed for pairing a run whose size is not given: two 10 AWG boat cables side by side
#: (insulated diameter from memory, see units.AWG_OUTER_DIAMETER_MM).
ASSUMED_SPACING_M = 0.0043
#: Largest detour tried when solving for a clearance [m].
MAX_DETOUR_M = 10.0
HINTS_PER_STATE = 4
#: Runs given remedies per state: the largest culprits first.
CULPRITS_PER_STATE = 5


@dataclass(frozen=True)
class Hint:
    sensor: str
    state: str
    run: str | None
    action: str
    before_deg: float
    after_deg: float | None
    within_after: bool | None
    clearance_m: float | None = None

    def text(self):
        if self.after_deg is None:
            return self.action
        verdict = " (within budget)" if self.within_after else " (still over budget)"
        return f"{self.action}: {self.before_deg:.2f}° → {self.after_deg:.2f}°{verdict}"


@dataclass(frozen=True)
class RuleFinding:
    sensor: str | None
    state: str | None
    rule: str
    message: str
    source: str

    def __str__(self):
        where = f"{self.sensor}" + (f", {self.state}" if self.state else "")
        return f"{where}: {self.message} ({self.source})"

    def as_json(self):
        return {"sensor": self.sensor, "state": self.state, "rule": self.rule,
                "message": self.message, "source": self.source}


# Rule findings ------------------------------------------------------------------------------------

def rule_findings(analysis):
    """Findings that standards and practice give, for every sensor."""
    found = []
    plan = analysis.plan
    for result in analysis.sensors:
        sensor = result.sensor
        compass = sensor.kind == "magnetic compass"
        first = result.states[0]
        if compass:
            for run in first.runs:
                if run.return_kind in ("separate", "none") and \
                        run.nearest_m < ISO25862_BIPOLAR_RADIUS_M:
                    found.append(RuleFinding(
                        sensor.name, None, "bipolar-within-5m",
                        f'run "{run.name}" passes {run.nearest_m:.2f} m from the compass and is not '
                        "laid bipolar (return beside its supply)",
                        "ISO 25862 Annex E: DC wiring within 5 m of a magnetic compass laid bipolar"))
        for item in plan.equipment:
            distance = float(np.linalg.norm(item.position_m - sensor.position_m))
            if item.safe_distance_m is None and compass and distance < ISO25862_BIPOLAR_RADIUS_M:
                found.append(RuleFinding(
                    sensor.name, None, "unknown-safe-distance",
                    f'"{item.name}" has no labelled compass safe distance and is {distance:.2f} m '
                    "from the compass", "ISO 25862 Annex E: items of unknown safe distance kept at "
                    "least 5 m away"))
            if item.safe_distance_m is not None and distance < item.safe_distance_m:
                found.append(RuleFinding(
                    sensor.name, None, "inside-safe-distance",
                    f'"{item.name}" is {distance:.2f} m from the sensor, inside its labelled '
                    f"{item.safe_distance_for} compass safe distance of {item.safe_distance_m:.2f} m",
                    "IEC 60945 compass safe distance"))
        if sensor.kind == "magnetometer":
            for st in result.states:
                if st.fraction_of_total > MAGNETOMETER_MAX_FRACTION:
                    found.append(RuleFinding(
                        sensor.name, st.state, "magnetometer-30-percent",
                        f"the disturbance is {st.fraction_of_total * 100:.0f} % of the Earth's total "
                        "field; move the magnetometer", "common practice, no source: above about "
                        "30 % of the Earth's field"))
    return found


# Hints --------------------------------------------------------------------------------------------

class _Evaluator:
    """Re-evaluates one sensor's budget figures with one run's geometry replaced."""

    def __init__(self, analysis, index):
        self.plan = analysis.plan
        self.site = analysis.site
        self.sensor = analysis.sensors[index].sensor
        position = self.sensor.position_m[None, :]
        unit, _ = run_fields_at(analysis.conductors, len(self.plan.runs), position)
        self.unit = unit[0]                                            # (R, 3) [T/A]
        self.currents = self.plan.run_currents_a                       # (R, K)
        oriented, self.bound, self.changing = equipment_arrays(self.plan, self.sensor, position,
                                                               self.site.horizontal_t)
        self.totals = (self.unit.T @ self.currents).T[None] + oriented  # (1, K, 3)

    def with_run(self, r, geometry):
        """Figures (arrays (1, K)) with run ``r`` routed as ``geometry``, and its nearest distance."""
        unit, nearest = run_fields_at(route_runs([geometry]), 1, self.sensor.position_m[None, :])
        swap = np.outer(self.currents[r], unit[0, 0] - self.unit[r])   # (K, 3)
        figures = budget_figures(self.plan, self.sensor, self.site, self.totals + swap[None],
                                 self.bound, self.changing)
        return figures, float(nearest[0, 0])


def _pair_spacing(run):
    if run.size:
        return conductor_size(run.size)[2], f"{run.size}"
    return ASSUMED_SPACING_M, "two 10 AWG cables (size not given)"


def detour(route, sensor, offset_m):
    """The route with a bend pushed ``offset_m`` away from the sensor at its nearest point.

    The nearest point of the route becomes a waypoint moved straight away from the sensor, so the
    run keeps its source and load. Returns None when the nearest point is the source or the load.
    """
    from .field import point_segment_distance

    distance = point_segment_distance(route[:-1], route[1:], sensor[None, :])[0]
    i = int(np.argmin(distance))
    a, b = route[i], route[i + 1]
    ab = b - a
    t = float(np.clip(np.dot(sensor - a, ab) / np.dot(ab, ab), 0.0, 1.0))
    foot = a + t * ab
    if (i == 0 and t < 1e-9) or (i == len(route) - 2 and t > 1 - 1e-9):
        return None
    away = foot - sensor
    size = np.linalg.norm(away)
    if size == 0:
        away = np.cross(ab, [0.0, 0.0, 1.0])
        size = np.linalg.norm(away)
        if size == 0:
            away, size = np.array([0.0, 1.0, 0.0]), 1.0
    moved = foot + away / size * offset_m
    if 1e-9 < t < 1 - 1e-9:
        return np.vstack([route[:i + 1], moved, route[i + 1:]])
    j = i if t <= 1e-9 else i + 1
    out = route.copy()
    out[j] = moved
    return out


def _solve_clearance(evaluator, r, run, k, budget):
    """Smallest detour (bisection) that brings the sensor within budget in state k, if any."""
    route = run.geometry.route_m
    sensor = evaluator.sensor.position_m

    def attempt(offset):
        new_route = detour(route, sensor, offset)
        if new_route is None:
            return None
        back = run.geometry.return_route_m
        if run.geometry.return_kind == "separate":
            shifted = detour(back, sensor, offset)
            back = shifted if shifted is not None else back
        geometry = replace(run.geometry, route_m=new_route, return_route_m=back)
        figures, nearest = evaluator.with_run(r, geometry)
        return float(figures.budget_used_deg[0, k]), nearest

    far = attempt(MAX_DETOUR_M)
    if far is None or far[0] > budget:
        return None
    low, high = 0.0, MAX_DETOUR_M
    for _ in range(40):
        middle = (low + high) / 2
        if attempt(middle)[0] <= budget:
            high = middle
        else:
            low = middle
        if high - low < 1e-3:
            break
    figure, nearest = attempt(high)
    return figure, nearest


#: Half-size of the box the "move the sensor" hint proposes to search around it [m].
SPOT_BOX_HALF_M = 0.5


def _spot_command(plan, sensor):
    """A runnable spot-search command for a box around the sensor, in the plan's units."""
    scale = LENGTH_UNITS[plan.site.units]
    low = (sensor.position_m - SPOT_BOX_HALF_M) / scale
    high = (sensor.position_m + SPOT_BOX_HALF_M) / scale

    def corner(values):
        return ",".join(f"{v:.4g}" for v in values)

    return (f'or move the sensor: `deviation spot "{plan.source}" --sensor "{sensor.name}" '
            f"--region {corner(low)} {corner(high)}` searches ±{format_length(SPOT_BOX_HALF_M, plan.site.units)} "
            "around it")


def hints_for(analysis, index):
    """Hints for one sensor, attached to its state results."""
    result = analysis.sensors[index]
    sensor = result.sensor
    plan = analysis.plan
    evaluator = _Evaluator(analysis, index)
    by_name = {r.name: i for i, r in enumerate(plan.runs)}
    for k, st in enumerate(result.states):
        over = not st.within_budget
        candidates = [c for c in st.runs if c.share_of_budget >= HINT_SHARE
                      or (over and c.share_of_budget >= HINT_SHARE_OVER)][:CULPRITS_PER_STATE]
        hints = []
        for contribution in candidates:
            r = by_name[contribution.name]
            run = plan.runs[r]
            kind = run.geometry.return_kind
            spacing, size_text = _pair_spacing(run)
            units = plan.site.units
            remedies = []
            if kind in ("separate", "none"):
                remedies.append((f'route the return of "{run.name}" beside its supply '
                                 f"(paired, {format_length(spacing, units)} centres, {size_text})",
                                 replace(run.geometry, return_kind="paired", spacing_m=spacing,
                                         return_route_m=None)))
            if kind in ("separate", "none", "paired"):
                spacing_twist = run.geometry.spacing_m or spacing
                remedies.append((f'twist "{run.name}" with its return (lay '
                                 f"{format_length(ASSUMED_LAY_M, units)} assumed, "
                                 f"{format_length(spacing_twist, units)} centres)",
                                 replace(run.geometry, return_kind="twisted",
                                         spacing_m=spacing_twist, lay_m=ASSUMED_LAY_M,
                                         return_route_m=None)))
            for action, geometry in remedies:
                figures, _ = evaluator.with_run(r, geometry)
                hints.append(Hint(sensor.name, st.state, run.name, action, st.budget_used_deg,
                                  float(figures.budget_used_deg[0, k]),
                                  bool(figures.within_budget[0, k])))
            if over:
                solved = _solve_clearance(evaluator, r, run, k, sensor.budget_deg)
                if solved is not None:
                    figure, nearest = solved
                    clearance = format_length(nearest, plan.site.units)
                    hints.append(Hint(sensor.name, st.state, run.name,
                                      f'keep "{run.name}" at least {clearance} from the sensor '
                                      "(bend its nearest stretch away)", st.budget_used_deg,
                                      figure, figure <= sensor.budget_deg, clearance_m=nearest))
        # A remedy is only offered where it helps (fields of runs can cancel, so one that helps
        # a run's own figure may still raise the sensor's).
        hints = [h for h in hints if h.after_deg < h.before_deg - 0.005]
        hints.sort(key=lambda h: (h.after_deg, h.run or ""))
        chosen = hints[:HINTS_PER_STATE]
        if over:
            if not any(h.within_after for h in hints):
                chosen.append(Hint(sensor.name, st.state, None,
                                   "no rerouting of a single run brings the sensor within budget "
                                   "here; change several runs, or move the sensor", st.budget_used_deg,
                                   None, None))
            chosen.append(Hint(sensor.name, st.state, None, _spot_command(plan, sensor),
                               st.budget_used_deg, None, None))
        st.hints = chosen


def advise(analysis):
    """Attach hints to every state result and return the rule findings."""
    for index in range(len(analysis.sensors)):
        hints_for(analysis, index)
    return rule_findings(analysis)
