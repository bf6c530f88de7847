"""The set of fixes: no longer than a brute-force search over every subset of the candidate
fixes, each subset checked as a what-if plan through the whole library."""

import dataclasses
import itertools

import deviation
from deviation.advice import _reroutings


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
        assert again.sensors[0].worst.held == step.after


def test_no_combination_of_rerouting_is_said_plainly():
    # A magnet of unknown orientation right beside the compass: no rerouting helps.
    plan = three_feeds()
    items = (deviation.Equipment("speaker", plan.sensors[0].position_m + [0, 0.12, 0], None, None,
                                 0.5, None, None, "", None),)
    result = deviation.check(dataclasses.replace(plan, equipment=items))
    assert not result.sensors[0].fixes.reaches_budget
