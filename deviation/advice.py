"""What to do about it: rerouting hints with computed before/after figures, and rule findings.

Every hint is computed on the plan's own geometry: the run is re-routed as the remedy says, its
field at the sensor recomputed, and the sensor's whole budget evaluated again with everything else
unchanged. Nothing here is a rule of thumb except where a finding quotes a standard or practice.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .budget import RunParts, circuit_currents, equipment_fields, parts_of_runs, sensor_figures
from .constants import ISO25862_BIPOLAR_RADIUS_M
from .electronic import Standing, electronic_sensor
from .physics.routing import hint_lay_m
from .progress import counter
from .schema import VECTOR_ELECTRONIC_KINDS
from .spot import search_box_around
from .units import conductor_size

#: A run is given remedies where its own figure uses at least this share of the sensor's budget,
#: or where the sensor is over budget and the run uses at least HINT_SHARE_OVER.
HINT_SHARE = 0.25
HINT_SHARE_OVER = 0.10
#: Spacing assumed for pairing a run whose size is not given: two 10 AWG boat cables side by side
#: (insulated diameter from memory, see units.AWG_OUTER_DIAMETER_MM).
ASSUMED_SPACING_M = 0.0043
#: Largest detour tried when solving for a clearance [m].
MAX_DETOUR_M = 10.0
REMEDIES_PER_STATE = 4
#: Runs given remedies per state: the largest culprits first.
CULPRITS_PER_STATE = 5
#: Half-size of the box the "move the sensor" remedy proposes to search around it [m].
SPOT_BOX_HALF_M = 0.5
#: A clearance is solved to leave this share of the budget, not to land on it (common practice,
#: no source: routes move by a few centimetres when cables are laid, and a fifth of the budget
#: kept free covers that at the distances clearances come out at).
CLEARANCE_MARGIN = 0.8
#: Runs considered for the set of fixes: those using at least this share of the budget in a
#: state the sensor is used in, the FIX_SET_RUNS largest of them; clearances are tried for the
#: FIX_SET_CLEARANCE_RUNS largest; a set stops after MAX_FIX_STEPS changes.
FIX_SET_SHARE = 0.01
FIX_SET_RUNS = 12
FIX_SET_CLEARANCE_RUNS = 4
MAX_FIX_STEPS = 8
#: A change must lower the held figure by more than this, in the budget's unit, to count: half
#: the last digit printed (0.01 degrees, 0.01 nT), so an offered remedy always shows a gain.
SMALLEST_GAIN = 0.005

#: Kinds of remedy (the renderers' words for each live in render/words.py).
REMEDY_KINDS = ("pair", "twist", "clearance", "no single fix", "move sensor")


@dataclass(frozen=True)
class Remedy:
    """One computed remedy for a sensor in a state.

    ``kind`` is one of REMEDY_KINDS. The figures are the sensor's held figure before and after
    the change, everything else unchanged, in the unit of the sensor's budget (degrees, or nT
    for a total-field magnetometer); ``after`` is None for the kinds that carry no figure ("no
    single fix", "move sensor").
    """

    sensor: str
    state: str
    kind: str
    run: str | None
    before: float
    after: float | None = None
    within_after: bool | None = None
    spacing_m: float | None = None
    size: str | None = None           # the conductor size the spacing comes from; None: assumed
    lay_m: float | None = None
    clearance_m: float | None = None
    box_low_m: tuple[float, float, float] | None = None
    box_high_m: tuple[float, float, float] | None = None


@dataclass(frozen=True)
class RuleFinding:
    """A finding that a standard or a practice gives (its words are in render/words.py).

    ``rule`` is the finding's id; ``subject`` the run or item it is about; ``distance_m`` how far
    it is from the sensor; ``limit_m`` the distance the rule or label asks for; ``fraction`` a
    share of the Earth's field where the rule is about that; ``figure`` and ``within`` a
    computed figure (budget's unit) and whether it is within the sensor's budget.
    """

    sensor: str | None
    state: str | None
    rule: str
    subject: str | None = None
    distance_m: float | None = None
    limit_m: float | None = None
    fraction: float | None = None
    label: str | None = None
    figure: float | None = None
    within: bool | None = None


# Rule findings ------------------------------------------------------------------------------------

#: The source each rule finding rests on.
RULE_SOURCES = {
    "bipolar-within-5m": "ISO 25862 Annex E: DC wiring within 5 m of a magnetic compass laid "
                         "bipolar",
    "unknown-safe-distance": "ISO 25862 Annex E: items of unknown safe distance kept at least "
                             "5 m away",
    "inside-safe-distance": "IEC 60945 compass safe distance",
    "compensation": "computed: the least-squares current compensation the host can learn from "
                    "the currents the plan says it measures",
}


def rule_findings(analysis) -> tuple[RuleFinding, ...]:
    """Findings that standards and practice give, for every sensor."""
    found = []
    plan = analysis.plan
    for result in analysis.sensors:
        sensor = result.sensor
        compass = sensor.kind == "magnetic compass"
        if compass:
            for r, run in enumerate(plan.runs):
                nearest = float(result.nearest_m[r])
                if run.geometry.return_kind in ("separate", "none") and \
                        nearest < ISO25862_BIPOLAR_RADIUS_M:
                    found.append(RuleFinding(sensor.name, None, "bipolar-within-5m", run.name,
                                             nearest, ISO25862_BIPOLAR_RADIUS_M))
        for item in plan.equipment:
            distance = float(np.linalg.norm(item.position_m - sensor.position_m))
            if item.safe_distance_m is None and compass and distance < ISO25862_BIPOLAR_RADIUS_M:
                found.append(RuleFinding(sensor.name, None, "unknown-safe-distance", item.name,
                                         distance, ISO25862_BIPOLAR_RADIUS_M))
            if item.safe_distance_m is not None and distance < item.safe_distance_m:
                found.append(RuleFinding(sensor.name, None, "inside-safe-distance", item.name,
                                         distance, item.safe_distance_m,
                                         label=item.safe_distance_for))
        if sensor.kind in VECTOR_ELECTRONIC_KINDS and sensor.measured_currents and \
                not result.within_budget:
            # Over as installed: would the host's current compensation bring it within?
            grade = electronic_sensor(analysis, result).grade
            if grade is not None and grade.compensated is not None:
                found.append(RuleFinding(sensor.name, grade.compensated_state, "compensation",
                                         figure=grade.compensated,
                                         within=grade.standing is Standing.WITHIN_COMPENSATED))
    return tuple(found)


# Remedies -----------------------------------------------------------------------------------------

class _Evaluator:
    """Re-evaluates one sensor's budget figures with one run re-routed."""

    def __init__(self, analysis, result):
        self.plan = analysis.plan
        self.site = analysis.site
        self.horizontal_t = analysis.site.horizontal_t
        self.sensor = result.sensor
        self.currents = circuit_currents(self.plan)
        self.parts = result.parts                                      # P = 1
        self.items = equipment_fields(self.plan, self.sensor, self.sensor.position_m[None, :],
                                      self.horizontal_t)
        self._cache = {}

    def with_run(self, r, run, others=None):
        """Figures (:class:`~deviation.budget.SensorFigures`, P = 1) with run ``r`` replaced by
        ``run`` (and the runs in ``others``, {index: Run}, replaced too), and the new run's
        nearest distance."""
        changes = dict(others or {})
        changes[r] = run
        unit, spread = self.parts.unit_t.copy(), self.parts.spread_t.copy()
        bound = self.parts.bound_t.copy()
        nearest = 0.0
        for index, changed in changes.items():
            new = self._parts(changed)
            unit[:, index], spread[:, index], bound[:, index] = (new.unit_t[:, 0],
                                                                 new.spread_t[:, 0],
                                                                 new.bound_t[:, 0])
            if index == r:
                nearest = float(new.nearest_m[0, 0])
        parts = RunParts(unit, spread, bound, self.parts.nearest_m, self.parts.inside)
        figures = sensor_figures(self.plan, self.sensor, self.site, parts, items=self.items,
                                 currents=self.currents)
        return figures, nearest

    def _parts(self, run):
        key = id(run)
        cached = self._cache.get(key)
        if cached is None or cached[0] is not run:
            cached = (run, parts_of_runs([run], self.sensor.position_m[None, :]))
            self._cache[key] = cached
        return cached[1]

    def held(self, figures):
        """The held figure over the states the sensor is used in, and whether all are within."""
        used = [k for k, state in enumerate(self.plan.state_names)
                if self.sensor.used_in_state(state)]
        return (max(float(figures.held[0, k]) for k in used),
                all(bool(figures.within[0, k]) for k in used))


def _pair_spacing(run):
    """Spacing for pairing a run: one insulated diameter of its size, or an assumed one."""
    if run.size:
        return conductor_size(run.size)[2], run.size
    return ASSUMED_SPACING_M, None


def detour(route, sensor, offset_m):
    """The route with a bend pushed ``offset_m`` away from the sensor at its nearest point.

    The nearest point of the route becomes a waypoint moved straight away from the sensor, so the
    run keeps its source and load. Returns None when the nearest point is the source or the load.
    """
    from .physics.field import point_segment_distance

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
    out = np.array(route, dtype=float)
    out[j] = moved
    return out


def _solve_clearance(evaluator, r, run, figure_of, target, others=None):
    """Smallest detour (bisection, to 1 mm) of run ``r`` that brings ``figure_of(figures)`` to
    at most ``target``, with the runs in ``others`` already changed; None if none does.

    Returns (figure, nearest distance, the re-routed run)."""
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
        moved = replace(run, geometry=replace(run.geometry, route_m=new_route,
                                              return_route_m=back))
        figures, nearest = evaluator.with_run(r, moved, others)
        return figure_of(figures), nearest, moved

    far = attempt(MAX_DETOUR_M)
    if far is None or far[0] > target:
        return None
    low, high = 0.0, MAX_DETOUR_M
    for _ in range(40):
        middle = (low + high) / 2
        if attempt(middle)[0] <= target:
            high = middle
        else:
            low = middle
        if high - low < 1e-3:
            break
    return attempt(high)


def _reroutings(run):
    """(kind, run, spacing, size, lay) of the single-run reroutings that apply to a run.

    A pair is proposed with its lie not known (the worst orientation counts), a twist at the lay
    the cable allows (routing.hint_lay_m), with the default untwisted ends at each terminal.
    """
    kind = run.geometry.return_kind
    spacing, size = _pair_spacing(run)
    out = []
    if kind in ("separate", "none"):
        out.append(("pair", replace(run, lie="not known", geometry=replace(
            run.geometry, return_kind="paired", spacing_m=spacing, return_route_m=None)),
            spacing, size, None))
    if kind in ("separate", "none", "paired"):
        spacing_twist = run.geometry.spacing_m or spacing
        outer = conductor_size(run.size)[2] if run.size else spacing_twist
        lay = hint_lay_m(outer)
        out.append(("twist", replace(run, geometry=replace(
            run.geometry, return_kind="twisted", spacing_m=spacing_twist, lay_m=lay,
            return_route_m=None)), spacing_twist, size, lay))
    return out


def remedies_for(analysis, result) -> dict[str, tuple[Remedy, ...]]:
    """Remedies for one sensor, by state name, best first."""
    sensor = result.sensor
    plan = analysis.plan
    evaluator = _Evaluator(analysis, result)
    by_name = {r.name: i for i, r in enumerate(plan.runs)}
    out = {}
    tick = counter(f"remedies for {sensor.name}, state by state", len(result.states))
    for k, st in enumerate(result.states):
        tick()
        if not st.used:
            out[st.state] = ()
            continue
        over = not st.within_budget
        candidates = [c for c in st.runs if c.share_of_budget >= HINT_SHARE
                      or (over and c.share_of_budget >= HINT_SHARE_OVER)][:CULPRITS_PER_STATE]
        found = []
        for contribution in candidates:
            r = by_name[contribution.name]
            run = plan.runs[r]
            for kind, rerouted, spacing, size, lay in _reroutings(run):
                figures, _ = evaluator.with_run(r, rerouted)
                found.append(Remedy(sensor.name, st.state, kind, run.name, st.held,
                                    float(figures.held[0, k]),
                                    bool(figures.within[0, k]), spacing_m=spacing,
                                    size=size, lay_m=lay))
            if over:
                solved = _solve_clearance(evaluator, r, run,
                                          lambda f, k=k: float(f.held[0, k]),
                                          sensor.budget.value * CLEARANCE_MARGIN)
                if solved is not None:
                    figure, nearest, _ = solved
                    found.append(Remedy(sensor.name, st.state, "clearance", run.name,
                                        st.held, figure, figure <= sensor.budget.value,
                                        clearance_m=nearest))
        # A remedy is only offered where it helps (fields of runs can cancel, so one that helps
        # a run's own figure may still raise the sensor's).
        found = [m for m in found if m.after < m.before - SMALLEST_GAIN]
        found.sort(key=lambda m: (m.after, m.run or ""))
        chosen = found[:REMEDIES_PER_STATE]
        if over:
            if not any(m.within_after for m in found):
                chosen.append(Remedy(sensor.name, st.state, "no single fix", None, st.held))
            # A box around the sensor, cut to the plan's extent and its mount-in volumes.
            box_low, box_high = search_box_around(plan, sensor, SPOT_BOX_HALF_M)
            low = tuple(float(v) for v in box_low)
            high = tuple(float(v) for v in box_high)
            chosen.append(Remedy(sensor.name, st.state, "move sensor", None, st.held,
                                 box_low_m=low, box_high_m=high))
        out[st.state] = tuple(chosen)
    tick.done()
    return out


@dataclass(frozen=True)
class FixStep:
    """One change in a set of fixes, and the sensor's held figure once it and those before it
    are made (the worst state the sensor is used in)."""

    kind: str                         # "pair", "twist" or "clearance"
    run: str
    after: float                      # in the unit of the sensor's budget
    within_after: bool
    spacing_m: float | None = None
    size: str | None = None
    lay_m: float | None = None
    clearance_m: float | None = None


@dataclass(frozen=True)
class FixSet:
    """The ordered changes that bring a sensor within budget in every state it is used in, or
    ``reaches_budget`` False when no combination of rerouting does (move the sensor)."""

    before: float                     # in the unit of the sensor's budget
    steps: tuple[FixStep, ...]
    reaches_budget: bool


def fix_set(analysis, result) -> FixSet:
    """The shortest set of rerouting changes found to bring a sensor within budget.

    Greedy over the FIX_SET_RUNS largest culprits, checking every alternative at each step:
    each candidate (pairing or twisting a run, or, to finish, the clearance that brings the
    sensor to CLEARANCE_MARGIN of its budget) is evaluated in the full budget (every state the
    sensor is used in, heel and pitch, the worst switching of independent circuits, with the
    changes already chosen), and the one that leaves the smallest held figure is taken. One
    change per run.
    """
    sensor = result.sensor
    plan = analysis.plan
    evaluator = _Evaluator(analysis, result)
    worst = result.worst
    before = worst.held
    if result.within_budget:
        return FixSet(before, (), True)
    used = [st for st in result.states if st.used]
    largest = {}
    for st in used:
        for c in st.runs:
            largest[c.name] = max(largest.get(c.name, 0.0), c.share_of_budget)
    by_name = {run.name: i for i, run in enumerate(plan.runs)}
    ranked = sorted((name for name, share in largest.items() if share >= FIX_SET_SHARE),
                    key=lambda name: (-largest[name], name))[:FIX_SET_RUNS]
    runs = [by_name[name] for name in ranked]
    target = sensor.budget.value * CLEARANCE_MARGIN

    def held_of(figures):
        return evaluator.held(figures)[0]

    tick = counter(f"the set of fixes for {sensor.name}, change by change", MAX_FIX_STEPS)
    try:
        return _grow_fix_set(evaluator, plan, sensor, runs, before, target, held_of, tick)
    finally:
        tick.done()


def _grow_fix_set(evaluator, plan, sensor, runs, before, target, held_of, tick):
    """The greedy loop of :func:`fix_set`; ``tick`` counts the changes."""
    changed, steps, figure = {}, [], before
    while True:
        tick()
        options = []                       # (finishes, held, run index, changed run, step)
        for r in runs:
            if r in changed:
                continue
            run = plan.runs[r]
            for kind, rerouted, spacing, size, lay in _reroutings(run):
                figures, _ = evaluator.with_run(r, rerouted, changed)
                held, within = evaluator.held(figures)
                options.append((within, held, r, rerouted,
                                FixStep(kind, run.name, held, within, spacing, size, lay)))
        if not any(option[0] for option in options):
            # No pairing or twist finishes it: a clearance may, with the margin kept free.
            for r in [r for r in runs if r not in changed][:FIX_SET_CLEARANCE_RUNS]:
                solved = _solve_clearance(evaluator, r, plan.runs[r], held_of, target, changed)
                if solved is not None:
                    held, nearest, moved = solved
                    within = held <= sensor.budget.value
                    options.append((within, held, r, moved, FixStep(
                        "clearance", plan.runs[r].name, held, within, clearance_m=nearest)))
        finishing = [o for o in options if o[0]]
        pool = finishing or options
        if not pool:
            return FixSet(before, tuple(steps), False)
        within, held, r, rerouted, step = min(pool, key=lambda o: (o[1], o[4].run, o[4].kind))
        if not within and held >= figure - SMALLEST_GAIN:
            return FixSet(before, tuple(steps), False)
        changed[r] = rerouted
        steps.append(step)
        figure = held
        if within:
            return FixSet(before, tuple(steps), True)
        if len(steps) == MAX_FIX_STEPS:
            return FixSet(before, tuple(steps), False)


def with_remedies(analysis, sensors_named=None):
    """The analysis with every state's remedies and each sensor's set of fixes attached (a new
    value); with ``sensors_named``, only for the sensors of those names (the others keep none)."""
    sensors = []
    for result in analysis.sensors:
        if sensors_named is not None and result.sensor.name not in sensors_named:
            sensors.append(result)
            continue
        remedies = remedies_for(analysis, result)
        states = tuple(replace(st, remedies=remedies[st.state]) for st in result.states)
        fixes = None if result.within_budget else fix_set(analysis, result)
        sensors.append(replace(result, states=states, fixes=fixes))
    return replace(analysis, sensors=tuple(sensors))
