"""The check as a use case: analyse a plan, add the remedies and the rule findings.

The public :func:`deviation.check` and every later use (the after-installation sheets, the
operating area) call :func:`check_plan`, so no module reaches up to the library layer.
"""

from __future__ import annotations

from dataclasses import replace

from .analysis import Analysis, analyse
from .plan import Plan


def check_plan(plan: Plan, *, remedies: bool = True) -> Analysis:
    """The deviation budget of every sensor in every state, with remedies and rule findings.

    Parameters
    ----------
    plan : Plan
    remedies : bool
        Compute the rerouting remedies and the set of fixes (the slowest part on big plans).
    """
    from .advice import rule_findings, with_remedies

    analysis = analyse(plan)
    if remedies:
        analysis = with_remedies(analysis)
    return replace(analysis, findings=rule_findings(analysis))
