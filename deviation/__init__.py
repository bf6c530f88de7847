"""deviation: check a DC wiring plan for the heading deviation it causes at a compass or magnetometer.

The library::

    import deviation
    plan = deviation.read_plan("plan.xlsx")
    result = deviation.check(plan)
    result.to_frame()

Layers, lowest first: ``field``, ``routing``, ``geomag``, ``heading``, ``worst_case`` (physics on
arrays); ``schema``, ``plan``, ``reader`` (the workbook); ``budget``, ``analysis``, ``advice``,
``spot``, ``card`` (budgets, remedies, spots); ``api`` (the public functions); ``render`` and
``cli`` (output). Lower layers never import upper ones. Names below are imported on first use,
so that ``import deviation`` and ``deviation --help`` stay quick.
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.2.0"

_EXPORTS = {
    "read_plan": "api", "plan_from_tables": "api", "check": "api", "find_spots": "api",
    "rank_spots": "api", "deviation_cards": "api", "site_field": "api", "to_json": "api",
    "electronic_figures": "api", "operating_area": "api", "at_voltage": "api",
    "CheckResult": "api",
    "Plan": "plan", "Sensor": "plan", "Run": "plan", "Circuit": "plan", "Equipment": "plan",
    "Inverter": "plan", "StateCondition": "plan",
    "Site": "plan", "Finding": "plan", "PlanError": "plan",
    "DeviationError": "errors", "UnknownSensorError": "errors",
    "OutsideModelError": "physics.geomag", "OutputError": "files",
    "SiteField": "sitefield", "SpotSearch": "spot", "Card": "card",
    "Remedy": "advice", "RuleFinding": "advice",
}

__all__ = sorted(_EXPORTS) + ["__version__"]


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'deviation' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return __all__
