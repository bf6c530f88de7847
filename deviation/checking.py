"""The check as a use case: analyse a plan, add the remedies and the rule findings.

The public :func:`deviation.check` and every later use (the after-installation sheets, the
operating area) call :func:`check_plan`, so no module reaches up to the library layer.
"""

from __future__ import annotations

from dataclasses import replace

from .analysis import Analysis, analyse, check_ceilings
from .plan import Plan


def check_plan(plan: Plan, *, remedies: bool = True, fixes_for=None) -> Analysis:
    """The deviation budget of every sensor in every state, with remedies and rule findings.

    Parameters
    ----------
    plan : Plan
    remedies : bool
        Compute the rerouting remedies and the set of fixes (the slowest part on big plans).
    fixes_for : iterable of str, optional
        With ``remedies``, only for these sensors (names in the plan; an unknown one raises
        :class:`~deviation.errors.UnknownSensorError`).
    """
    from .advice import rule_findings, with_remedies

    named = None
    if fixes_for is not None:
        named = {plan.sensor(name).name for name in fixes_for}
    if remedies:
        check_ceilings(plan, fixes=True)
    analysis = analyse(plan)
    if remedies:
        analysis = with_remedies(analysis, named)
    return replace(analysis, findings=rule_findings(analysis))
