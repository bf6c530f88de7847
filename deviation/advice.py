"""What to do about it: rerouting hints with computed before/after figures, and rule findings.

Every hint is computed on the plan's own geometry: the run is re-routed as the remedy says, its
field at the sensor recomputed, and the sensor's whole budget evaluated again with everything else
unchanged. Nothing here is a rule of thumb except where a finding quotes a standard or practice.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .budget import (
    MAX_EXACT_GENERATORS_ATTITUDE,
    MAX_EXACT_GENERATORS_LEVEL,
    RunParts,
    _attitude_size,
    _worst,
    asin_deg,
    circuit_currents,
    equipment_fields,
    parts_of_runs,
    sensor_figures,
)
from .constants import ISO25862_BIPOLAR_RADIUS_M, LOW_LAMBDA
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
    "low-lambda": f"λ below {LOW_LAMBDA}: rule of thumb, no published source; λ = 1 + (a + e)/2 "
                  "of Poisson's equations (NGA Handbook of Magnetic Compass Adjustment, ch. III)",
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
        if compass:
            # The steel's induced field cuts the needle's directive force to lambda H: the least
            # lambda over the bands in a state the compass is used in.
            lows = [s for s in result.states if s.used and s.lam_low is not None]
            if lows:
                least = min(lows, key=lambda s: s.lam_low)
                if least.lam_low < LOW_LAMBDA:
                    found.append(RuleFinding(sensor.name, least.state, "low-lambda",
                                             fraction=float(least.lam_low),
                                             figure=float(least.lam_low
                                                          * analysis.site.horizontal_t)))
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
    """One sensor's held figure with some runs re-routed, for many candidate changes at once.

    Only what a change moves is evaluated again: the re-routed run's field (computed once per
    re-routed run and kept) and the sums that depend on it, updated by the difference; the
    worst switching and attitude, which are not linear, are searched again for every candidate
    in one vectorised call. The rules are those of :func:`deviation.budget.budget_figures` for
    the figure held against a heading sensor's budget (the residual from the reference state,
    the spread generators searched exactly and the rest counted apart, the equipment bounds);
    tests/analysis/test_fix_set.py holds the two to each other on every candidate. A
    total-field magnetometer's candidates, and every candidate of a plan with steel items (whose
    field turns with the heading), go through :func:`deviation.budget.sensor_figures` whole, one
    by one (with steel: the held figure alone).
    """

    def __init__(self, analysis, result):
        plan, sensor = analysis.plan, result.sensor
        self.plan, self.sensor, self.site = plan, sensor, analysis.site
        self.horizontal_t = analysis.site.horizontal_t
        self.used = np.array([sensor.used_in_state(s) for s in plan.state_names], dtype=bool)
        self.result = result
        self.currents = split = circuit_currents(plan)
        self.items = items = equipment_fields(plan, sensor, sensor.position_m[None, :],
                                              self.horizontal_t)
        self._cache = {}
        self._committed = None
        self.incremental = sensor.budget.degrees and not plan.steel
        if not self.incremental:
            return
        parts = result.parts                                                 # P = 1
        self.unit, self.bound = parts.unit_t[0], parts.bound_t[0]          # (R, 3), (R,)
        self.base_a = split.base_a                                          # (R, K)
        self.to_circuit = split.incidence                                   # (R, Ci)
        self.circuit_a = split.switched_a.T                                 # (K, Ci)
        self.reversing = split.reversing
        # The sums as budget_figures makes them, for the plan as it is.
        self.base = (np.einsum("prj,rk->pkj", parts.unit_t, self.base_a) + items.oriented)[0]
        self.circuit_unit = np.einsum("prj,rc->pcj", parts.unit_t, self.to_circuit)[0]
        self.reference = (None if sensor.reference_state is None
                          else plan.state_index(sensor.reference_state))
        self.scale = split.scale_a(self.reference)                          # (R, K)
        self.scalar = (parts.bound_t @ self.scale
                       + (items.bound if self.reference is None else items.changing))[0]
        heel, pitch = sensor.max_heel_deg, sensor.max_pitch_deg
        self.heel, self.pitch = (heel, pitch) if heel or pitch else (0.0, 0.0)
        cap = MAX_EXACT_GENERATORS_ATTITUDE if heel or pitch else MAX_EXACT_GENERATORS_LEVEL
        self.room = max(0, cap - len(self.reversing))
        # Spread generators: their weights (which are searched exactly), and each one's share
        # counted apart when it is not.
        self.scale_peak = np.abs(self.scale).max(axis=1)                    # (R,)
        self.n_generators = parts.spread_t.shape[2]
        self.spread = parts.spread_t[0]                                     # (R, G, 3)
        self.weight, self.term = self._generators(self.spread, np.arange(len(self.unit)))
        self.order = np.argsort(-self.weight.reshape(-1), kind="stable")
        self.term_total = self.term.reshape(-1, self.term.shape[-1]).sum(axis=0)   # (K,)

    def _generators(self, spread, runs):
        """Weights (n, G) and apart terms (n, G, K) of the spread generators of some runs."""
        weight = np.linalg.norm(spread, axis=-1) * self.scale_peak[runs][:, None]
        size = _attitude_size(spread, self.heel, self.pitch)                 # (n, G)
        return weight, size[..., None] * np.abs(self.scale[runs])[:, None, :]

    def parts(self, run):
        """The run's own :class:`RunParts` at the sensor, computed once per run value."""
        key = id(run)
        cached = self._cache.get(key)
        if cached is None or cached[0] is not run:
            cached = (run, parts_of_runs([run], self.sensor.position_m[None, :]))
            self._cache[key] = cached
        return cached[1]

    def reroutings(self, r):
        """:func:`_reroutings` of run ``r``, made once (so each re-routed run's field is too)."""
        key = ("reroutings", r)
        if key not in self._cache:
            self._cache[key] = _reroutings(self.plan.runs[r])
        return self._cache[key]

    def _apply(self, changes, start=None):
        """The sums with the runs in ``changes`` ({index: Run}) re-routed, on top of ``start``
        (sums from :meth:`_apply`; the plan as it is if None)."""
        if start is None:
            start = (self.base, self.circuit_unit, self.scalar, self.term_total, {})
        base, circuit_unit, scalar, rest, new = start
        base, circuit_unit = base.copy(), circuit_unit.copy()
        scalar, rest, new = scalar.copy(), rest.copy(), dict(new)
        for r, run in changes.items():
            own = self.parts(run)
            change = own.unit_t[0, 0] - self.unit[r]
            base += self.base_a[r][:, None] * change[None, :]
            circuit_unit += self.to_circuit[r][:, None] * change[None, :]
            scalar += (own.bound_t[0, 0] - self.bound[r]) * self.scale[r]
            weight, term = self._generators(own.spread_t[0, 0][None], np.array([r]))
            rest += term[0].sum(axis=0) - self.term[r].sum(axis=0)
            new[r] = (own.spread_t[0, 0], weight[0], term[0])
        return base, circuit_unit, scalar, rest, new

    def _kept(self, new):
        """The spread generators searched exactly, largest weight first (ties by run, then
        generator), with ``new`` ({run: (spread, weight, term)}) replacing those runs' own:
        (vectors (n, 3), runs (n,), terms (n, K))."""
        g = self.n_generators
        prefix = self.order[:self.room + g * len(new)]
        prefix = prefix[~np.isin(prefix // g, list(new))]
        flat = np.concatenate([prefix] + [r * g + np.arange(g) for r in new])
        weight = np.concatenate([self.weight.reshape(-1)[prefix]]
                                + [item[1] for item in new.values()])
        order = np.lexsort((flat, -weight))[:self.room]
        order = order[weight[order] > 0]
        index = flat[order]
        runs, which = index // g, index % g
        vectors = np.empty((len(index), 3))
        terms = np.empty((len(index), self.term.shape[-1]))
        for i, (r, j) in enumerate(zip(runs, which)):
            spread, _, term = new[r] if r in new else (self.spread[r], None, self.term[r])
            vectors[i], terms[i] = spread[j], term[j]
        return vectors, runs, terms

    def figures(self, candidates, others=None, *, quick=False):
        """The figure held against the budget in every state, for each candidate change.

        Parameters
        ----------
        candidates : list of (int, Run)
            Run index and the re-routed run, each evaluated with the runs in ``others`` also
            changed.
        others : dict {int: Run} or None
        quick : bool
            With steel, the quicker proven bound instead of the exact worst (never less).

        Returns
        -------
        held : (B, K) array
            The held figure of :func:`deviation.budget.sensor_figures`, in the budget's unit.
        within : (B, K) bool array
        """
        n_k = len(self.plan.state_names)
        if not candidates:
            return np.zeros((0, n_k)), np.zeros((0, n_k), dtype=bool)
        others = dict(others or {})
        if not self.incremental:
            rows = [self._whole({**others, r: run}, quick) for r, run in candidates]
            return np.stack([row[0] for row in rows]), np.stack([row[1] for row in rows])
        key = tuple(sorted((r, id(run)) for r, run in others.items()))
        if self._committed is None or self._committed[0] != key:
            self._committed = (key, self._apply(others))
        rows = []
        for r, run in candidates:
            if r in others:                     # a committed change replaced: start afresh
                sums = self._apply({**others, r: run})
            else:                               # one more change on top of the committed ones
                sums = self._apply({r: run}, self._committed[1])
            base, circuit_unit, scalar, rest, new = sums
            vectors, runs, terms = self._kept(new)
            rows.append((base, circuit_unit, scalar + (rest - terms.sum(axis=0)), vectors, runs))
        n_kept = max(len(row[4]) for row in rows)
        fields = np.stack([row[0] for row in rows])                          # (B, K, 3)
        switched = (np.stack([row[1] for row in rows])[:, None, :, :]
                    * self.circuit_a[None, :, :, None])                       # (B, K, Ci, 3)
        kept = np.zeros((len(rows), n_k, n_kept, 3))
        for b, (_, _, _, vectors, runs) in enumerate(rows):
            kept[b, :, :len(runs)] = vectors[None, :, :] * np.abs(self.scale[runs]).T[:, :, None]
        apart = np.stack([row[2] for row in rows])                           # (B, K)
        if self.reference is not None:
            fields = fields - fields[:, self.reference:self.reference + 1, :]
        generators = np.concatenate([switched, kept], axis=2)
        reversing = np.concatenate([self.reversing, np.ones(n_kept, dtype=bool)])
        size, _ = _worst(fields, generators, reversing, self.heel, self.pitch)
        held = size + apart
        held_deg = asin_deg(held / self.horizontal_t)
        within = (held_deg <= self.sensor.budget.value) & ~(held >= self.horizontal_t)
        return held_deg, within

    def _whole(self, changes, quick=False):
        """(held (K,), within (K,)) by the budget's one entry, every run summed afresh."""
        parts = self.result.parts
        unit, spread = parts.unit_t.copy(), parts.spread_t.copy()
        bound = parts.bound_t.copy()
        for index, changed in changes.items():
            new = self.parts(changed)
            unit[:, index], spread[:, index], bound[:, index] = (new.unit_t[:, 0],
                                                                 new.spread_t[:, 0],
                                                                 new.bound_t[:, 0])
        figures = sensor_figures(self.plan, self.sensor, self.site,
                                 RunParts(unit, spread, bound, parts.nearest_m, parts.inside),
                                 items=self.items, currents=self.currents, held_only=True,
                                 steel_exact=not quick)
        return figures.held[0], figures.within[0]

    def held(self, held, within):
        """The held figure over the states the sensor is used in (one candidate's (K,) rows),
        and whether all are within."""
        return float(held[self.used].max()), bool(within[self.used].all())


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
    """Smallest detour (bisection, to 1 mm) of run ``r`` that brings ``figure_of(held,
    within)`` (a candidate's (K,) rows, see :meth:`_Evaluator.figures`) to at most ``target``,
    with the runs in ``others`` already changed; None if none does.

    Returns (figure, nearest distance, the re-routed run)."""
    route = run.geometry.route_m
    sensor = evaluator.sensor.position_m

    def attempt(offset, quick=False):
        new_route = detour(route, sensor, offset)
        if new_route is None:
            return None
        back = run.geometry.return_route_m
        if run.geometry.return_kind == "separate":
            shifted = detour(back, sensor, offset)
            back = shifted if shifted is not None else back
        moved = replace(run, geometry=replace(run.geometry, route_m=new_route,
                                              return_route_m=back))
        held, within = evaluator.figures([(r, moved)], others, quick=quick)
        nearest = float(evaluator.parts(moved).nearest_m[0, 0])
        return figure_of(held[0], within[0]), nearest, moved

    # With steel the bisection runs on the quicker bound (never below the exact figure), so the
    # clearance it finds is enough; the exact figure is worked out for it alone. Without steel
    # both are the same figure.
    far = attempt(MAX_DETOUR_M, quick=True)
    if far is None or far[0] > target:
        return None
    low, high = 0.0, MAX_DETOUR_M
    for _ in range(40):
        middle = (low + high) / 2
        if attempt(middle, quick=True)[0] <= target:
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
    tick = counter(f"remedies for {sensor.name}, state by state", len(result.states))
    culprits = {}
    for st in result.states:
        if st.used:
            over = not st.within_budget
            culprits[st.state] = [
                by_name[c.name] for c in st.runs if c.share_of_budget >= HINT_SHARE
                or (over and c.share_of_budget >= HINT_SHARE_OVER)][:CULPRITS_PER_STATE]
    # Every rerouting of every culprit, evaluated once for all states together.
    options = {r: evaluator.reroutings(r) for r in sorted(set().union(*culprits.values()))}
    flat = [(r, option) for r in options for option in options[r]]
    held, within = evaluator.figures([(r, option[1]) for r, option in flat])
    row = {(r, id(option[1])): i for i, (r, option) in enumerate(flat)}
    out = {}
    for k, st in enumerate(result.states):
        tick()
        if not st.used:
            out[st.state] = ()
            continue
        over = not st.within_budget
        found = []
        for r in culprits[st.state]:
            run = plan.runs[r]
            for kind, rerouted, spacing, size, lay in options[r]:
                i = row[r, id(rerouted)]
                found.append(Remedy(sensor.name, st.state, kind, run.name, st.held,
                                    float(held[i, k]), bool(within[i, k]),
                                    spacing_m=spacing, size=size, lay_m=lay))
            if over:
                solved = _solve_clearance(evaluator, r, run,
                                          lambda figure, _, k=k: float(figure[k]),
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

    def held_of(figure, within):
        return evaluator.held(figure, within)[0]

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
        tried = [(r, option) for r in runs if r not in changed
                 for option in evaluator.reroutings(r)]
        figures, verdicts = evaluator.figures([(r, option[1]) for r, option in tried], changed)
        for i, (r, (kind, rerouted, spacing, size, lay)) in enumerate(tried):
            held, within = evaluator.held(figures[i], verdicts[i])
            options.append((within, held, r, rerouted,
                            FixStep(kind, plan.runs[r].name, held, within, spacing, size, lay)))
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
