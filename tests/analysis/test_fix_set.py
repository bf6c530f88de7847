"""The set of fixes: no longer than a brute-force search over every subset of the candidate
fixes, each subset checked as a what-if plan through the whole library; and the incremental
evaluation behind it equal to full re-evaluation of every candidate."""

import dataclasses
import itertools

import numpy as np
import pytest

import deviation
from conftest import SAMPLES
from deviation import advice
from deviation.advice import _reroutings
from deviation.analysis import analyse, parts_at
from deviation.budget import sensor_figures


def three_feeds():
    # Three single conductors under a compass, currents chosen so that each is about 0.6 deg
    # alone and they add: no single change brings 1.8 deg within 1 deg, two do.
    runs = [{"run": f"feed {i}", "circuits": f"c{i}", "route": route, "return": "none",
             "size": "12 AWG"}
            for i, route in enumerate(["-20, 0.5, -0.6 > 20, 0.5, -0.6",
                                       "-20, -0.4, -0.7 > 20, -0.4, -0.7",
                                       "-20, 0.1, -0.8 > 20, 0.1, -0.8"])]
    states = [{"circuit": f"c{i}", "on": a} for i, a in enumerate([1.07, 0.97, 0.85])]
    return deviation.plan_from_tables({
        "site": [{"setting": "horizontal_field_ut", "value": 20},
                 {"setting": "vertical_field_ut", "value": 40}],
        "runs": runs, "states": states,
        "sensors": [{"sensor": "compass", "at": "0, 0, 0", "kind": "magnetic compass",
                     "budget_deg": 1.0}]})


def test_fix_set_is_no_longer_than_brute_force_over_every_subset():
    plan = three_feeds()
    result = deviation.check(plan)
    fixes = result.sensors[0].fixes
    assert not result.within_budget
    assert not any(m.within_after for st in result.sensors[0].states for m in st.remedies
                   if m.kind in ("pair", "twist"))                  # no single change is enough
    options = [[None] + [rerouted for _, rerouted, *_ in _reroutings(run)] for run in plan.runs]
    shortest = None
    for choice in itertools.product(*options):
        runs = tuple(c if c is not None else run for c, run in zip(choice, plan.runs))
        what_if = deviation.check(dataclasses.replace(plan, runs=runs), remedies=False)
        if what_if.within_budget:
            size = sum(c is not None for c in choice)
            shortest = size if shortest is None else min(shortest, size)
    assert shortest == 2
    assert fixes.reaches_budget and len(fixes.steps) <= shortest
    assert fixes.steps[-1].within_after and fixes.steps[-1].after <= 1.0
    # Each step's figure is the sensor's held figure with that step and those before it made.
    runs = list(plan.runs)
    for step in fixes.steps:
        r = next(i for i, run in enumerate(plan.runs) if run.name == step.run)
        runs[r] = next(rerouted for kind, rerouted, *_ in _reroutings(plan.runs[r])
                       if kind == step.kind)
        again = deviation.check(dataclasses.replace(plan, runs=tuple(runs)), remedies=False)
        # (equal to rounding: the set of fixes updates the sums by differences)
        assert again.sensors[0].worst.held == pytest.approx(step.after, rel=1e-12)


def test_no_combination_of_rerouting_is_said_plainly():
    # A magnet of unknown orientation right beside the compass: no rerouting helps.
    plan = three_feeds()
    items = (deviation.Equipment("speaker", plan.sensors[0].position_m + [0, 0.12, 0], None, None,
                                 0.5, None, None, "", None),)
    result = deviation.check(dataclasses.replace(plan, equipment=items))
    assert not result.sensors[0].fixes.reaches_budget


# --- the incremental evaluator against full re-evaluation -------------------------------------



def random_plan(seed=5, n_runs=40):
    """Every return kind and lie, independent circuits (some reversing), a reference state,
    heel and pitch, equipment of known and unknown orientation, four sensors over budget (one
    a total-field magnetometer, held in nT)."""
    rng = np.random.default_rng(seed)
    kinds = ["paired", "paired", "separate", "none", "twisted"]
    lies = ["not known", "side by side", "one above the other", ""]
    runs, states = [], []
    for i in range(n_runs):
        a = rng.uniform(-2.5, 2.5, 3)
        b = a + rng.normal(size=3)
        kind = kinds[i % len(kinds)]
        route = f"{a[0]:.3f}, {a[1]:.3f}, {a[2]:.3f} > {b[0]:.3f}, {b[1]:.3f}, {b[2]:.3f}"
        back = (f"{b[0]:.3f}, {b[1]:.3f}, {b[2] - 0.2:.3f} > {a[0]:.3f}, {a[1]:.3f}, "
                f"{a[2] - 0.2:.3f}") if kind == "separate" else ""
        runs.append({"run": f"run {i}", "circuits": f"c{i % 12}", "route": route,
                     "return": kind, "return_route": back, "size": "10 AWG",
                     "lie": lies[i % 4] if kind == "paired" else "",
                     "lay": "30 mm" if kind == "twisted" else ""})
    for c in range(12):
        switching = ("independent reversing" if c % 5 == 0 else
                     "independent" if c % 3 == 0 else "")
        states.append({"circuit": f"c{c}", "harbour": round(rng.uniform(0, 8), 2),
                       "under way": round(rng.uniform(0, 15), 2), "night": round(rng.uniform(0, 15), 2),
                       "switching": switching})
    sensors = [{"sensor": "compass", "at": "0, 0, 0.4", "kind": "magnetic compass",
                "budget_deg": 1, "reference_state": "harbour", "max_heel_deg": 20,
                "max_pitch_deg": 10},
               {"sensor": "level compass", "at": "1.1, -0.3, 0.9", "kind": "magnetic compass",
                "budget_deg": 2},
               {"sensor": "heading sensor", "at": "-1.0, 0.5, 0.2", "kind": "electronic compass",
                "budget_deg": 1.5, "max_heel_deg": 30},
               {"sensor": "survey head", "at": "0.3, 1.2, 1.4", "kind": "total-field magnetometer",
                "budget_nt": 5, "max_heel_deg": 10}]
    return deviation.plan_from_tables({
        "site": [{"setting": "horizontal_field_ut", "value": 18},
                 {"setting": "vertical_field_ut", "value": 44}],
        "runs": runs, "states": states, "sensors": sensors,
        "equipment": [{"item": "speaker", "at": "0.6, 0.2, 0.4", "moment_am2": 0.05},
                      {"item": "motor", "at": "-0.8, -0.6, 0.1", "moment_am2": 0.3,
                       "axis": "0, 0, 1", "states": "under way"}]})


def sample_plans():
    return [deviation.read_plan(SAMPLES / name) for name in
            ("cruising_sailboat", "survey_boom", "survey_drone", "camper_van")]


def _full_figures(plan, result, changes, site, quick=False):
    """The budget's one entry on the plan with ``changes`` ({index: Run}) made, every run
    routed and summed afresh: the full re-evaluation the evaluator must equal (``quick``: with
    steel, the quicker proven bound the evaluator's bisection runs on)."""
    runs = list(plan.runs)
    for r, run in changes.items():
        runs[r] = run
    changed = dataclasses.replace(plan, runs=tuple(runs))
    sensor = result.sensor
    # With steel the evaluator asks the budget for the held figure alone (the exact worst in
    # the states the sensor is used in, the quick bound elsewhere): the same question here, on
    # the plan re-routed from scratch (test_steel_budget holds that figure to a swing).
    figures = sensor_figures(changed, sensor, site, parts_at(changed, sensor.position_m[None, :]),
                             steel_exact=not quick, held_only=bool(plan.steel))
    return figures.held[0], figures.within[0]


@pytest.mark.slow
@pytest.mark.parametrize("plan", sample_plans() + [random_plan()],
                         ids=["sailboat", "boom", "drone", "van", "random"])
def test_every_candidate_figure_equals_full_re_evaluation(plan):
    # Oracle: the package's own full path (route every run, budget_figures), on the plan with
    # the change made; the evaluator updates only the changed run's sums. Equal to rounding
    # (1e-12 relative, far below the printed 0.01 degree) and the same within-budget verdicts.
    analysis = analyse(plan)
    for result in analysis.sensors:
        evaluator = advice._Evaluator(analysis, result)
        # The runs of largest field and those of largest spread (whose generators the exact
        # search keeps: a change can move others into or out of it).
        ranked = list(np.argsort(-np.linalg.norm(result.parts.unit_t[0], axis=1))[:8])
        spread = np.linalg.norm(result.parts.spread_t[0], axis=-1).sum(axis=-1)
        ranked += [r for r in np.argsort(-spread)[:6] if r not in ranked]
        options = [(int(r), option[1]) for r in ranked for option in evaluator.reroutings(r)]
        committed = {options[0][0]: options[0][1]} if options else {}
        for others in ({}, committed):
            tried = [(r, run) for r, run in options if r not in others]
            used_deg, within = evaluator.figures(tried, others)
            for (r, run), used_row, within_row in zip(tried, used_deg, within):
                expected, expected_within = _full_figures(plan, result, {**others, r: run},
                                                          analysis.site)
                np.testing.assert_allclose(used_row, expected, rtol=1e-12, atol=1e-12)
                assert within_row.tolist() == expected_within.tolist()


class FullEvaluator(advice._Evaluator):
    """The evaluator's interface answered by full re-evaluation of every candidate (the way the
    set of fixes was computed before it was incremental)."""

    def figures(self, candidates, others=None, *, quick=False):
        rows = [_full_figures(self.plan, self.result, {**(others or {}), r: run}, self.site,
                              quick)
                for r, run in candidates]
        k = len(self.plan.state_names)
        return (np.array([row[0] for row in rows]).reshape(-1, k),
                np.array([row[1] for row in rows], dtype=bool).reshape(-1, k))


@pytest.mark.slow
@pytest.mark.parametrize("plan", sample_plans() + [random_plan(seed=9, n_runs=24)],
                         ids=["sailboat", "boom", "drone", "van", "random"])
def test_remedies_and_fix_set_equal_those_of_full_re_evaluation(plan, monkeypatch):
    # Oracle: the same greedy search fed by full re-evaluation of every candidate. The same
    # steps, runs, kinds and verdicts; the figures equal to rounding.
    analysis = analyse(plan)
    fast = advice.with_remedies(analysis)

    monkeypatch.setattr(advice, "_Evaluator", FullEvaluator)
    slow = advice.with_remedies(analysis)
    # The drone's leads (4 to 16 cm) are shorter than two untwisted ends, so twisting them
    # changes nothing (each end counts at its worst turn) and no step helps there.
    assert any(s.fixes is not None and s.fixes.steps for s in slow.sensors) \
        or plan.sensors[0].name in ("dash compass", "mast magnetometer")
    for a, b in zip(fast.sensors, slow.sensors):
        assert (a.fixes is None) == (b.fixes is None)
        if a.fixes is not None:
            assert a.fixes.reaches_budget == b.fixes.reaches_budget
            assert [(s.kind, s.run, s.within_after) for s in a.fixes.steps] == \
                [(s.kind, s.run, s.within_after) for s in b.fixes.steps]
            for s, t in zip(a.fixes.steps, b.fixes.steps):
                assert s.after == pytest.approx(t.after, rel=1e-12)
                assert s.clearance_m == (None if t.clearance_m is None
                                         else pytest.approx(t.clearance_m, rel=1e-12))
        for st_a, st_b in zip(a.states, b.states):
            assert [(m.kind, m.run, m.within_after) for m in st_a.remedies] == \
                [(m.kind, m.run, m.within_after) for m in st_b.remedies]
            for m, n in zip(st_a.remedies, st_b.remedies):
                assert m.after == (None if n.after is None
                                   else pytest.approx(n.after, rel=1e-12))
                assert m.clearance_m == (None if n.clearance_m is None
                                         else pytest.approx(n.clearance_m, rel=1e-12))
