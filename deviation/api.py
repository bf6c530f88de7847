"""The public library: read a plan, check it, find spots, draw cards, look up the site's field.

Everything here is also reachable as ``deviation.<name>``, imported on first use so that
``import deviation`` stays quick::

    import deviation

    plan = deviation.read_plan("sample_installs/cruising_sailboat")
    result = deviation.check(plan)
    table = result.to_frame()
    table[~table.within_budget]

A plan is a frozen value: make a what-if with :func:`dataclasses.replace` and check it again;
nothing computed for the old plan is reused. Errors the library raises on purpose derive from
:class:`deviation.DeviationError`; a bad plan raises :class:`deviation.PlanError` with every
located finding.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from os import PathLike

import numpy as np

from .analysis import Analysis, analyse
from .card import Card, cards
from .plan import Plan, Sensor
from .plan import at_voltage as _at_voltage
from .sitefield import SiteField, model_field
from .spot import SpotSearch, rank_positions, search_box

#: The result of :func:`check`.
CheckResult = Analysis


def read_plan(path: str | PathLike) -> Plan:
    """Read and validate a plan: an .xlsx workbook or a folder of .csv sheets.

    Raises
    ------
    PlanError
        With every finding, each naming the file, sheet, row and column.
    """
    from .reader import read_plan as read

    return read(path)


def plan_from_tables(tables: Mapping[str, object], source: str = "<tables>") -> Plan:
    """Make and validate a plan from tables in Python (DataFrames, lists of dicts or of rows),
    one per sheet, in the workbook's layout (docs/plan-format.md)."""
    from .reader import plan_from_tables as make

    return make(tables, source)


def check(plan: Plan, *, remedies: bool = True,
          fixes_for: Sequence[str] | None = None) -> CheckResult:
    """The deviation budget of every sensor in every state, with remedies and rule findings.

    Parameters
    ----------
    plan : Plan
    remedies : bool
        Compute the rerouting remedies and the set of fixes (the slowest part on big plans).
    fixes_for : sequence of str, optional
        Compute them only for these sensors (names in the plan).

    Returns
    -------
    CheckResult
        Frozen; ``within_budget``, ``sensors[i].states[k]`` and the tables ``to_frame()``,
        ``runs_frame()``, ``remedies_frame()``, ``findings_frame()``.
    """
    from .checking import check_plan

    return check_plan(plan, remedies=remedies, fixes_for=fixes_for)


def at_voltage(plan: Plan, voltage_v: float) -> Plan:
    """The plan with every load given in watts drawn at the DC voltage ``voltage_v`` [V]
    ("what if we went to 24 V?"); loads given in amperes stay as they are. Check the plan it
    returns: ``deviation.check(deviation.at_voltage(plan, 24))``.

    Raises
    ------
    InputError
        The voltage is not more than 0 and at most 1 500 V, or no load is given in watts.
    """
    return _at_voltage(plan, voltage_v)


def _sensor(plan: Plan, sensor: str | Sensor) -> Sensor:
    return plan.sensor(sensor) if isinstance(sensor, str) else sensor


def find_spots(plan: Plan, sensor: str | Sensor, low_m: Sequence[float],
               high_m: Sequence[float], step_m: float = 0.02, *, top: int = 10,
               progress=None, analysis: Analysis | None = None) -> SpotSearch:
    """The best mounting spots for a sensor in the box [low_m, high_m] at ``step_m`` resolution.

    ``sensor`` is a name in the plan or a :class:`Sensor` (e.g. a what-if one made with
    ``dataclasses.replace``). The figure minimised is the sensor's held figure.
    """
    chosen = _sensor(plan, sensor)
    return search_box(plan, analysis or analyse(plan), chosen, np.asarray(low_m, dtype=float),
                      np.asarray(high_m, dtype=float), step_m, progress=progress, top=top)


def rank_spots(plan: Plan, sensor: str | Sensor, positions_m=None, names=None, *,
               analysis: Analysis | None = None) -> SpotSearch:
    """Rank candidate positions by the sensor's held figure, best first (default: the plan's
    spots sheet)."""
    from .spot import spots_for

    chosen = _sensor(plan, sensor)
    if positions_m is None:
        candidates = spots_for(plan, chosen)
        positions_m = [s.position_m for s in candidates]
        names = [s.name for s in candidates]
    return rank_positions(plan, analysis or analyse(plan), chosen, positions_m, names)


def deviation_cards(plan_or_result: Plan | Analysis, sensor: str | None = None,
                    step_deg: float | None = None) -> tuple[Card, ...]:
    """Predicted deviation cards (deviation and the compass heading to steer at each magnetic
    heading), per sensor and state; ``sensor`` limits them to one. ``step_deg`` defaults to 15°,
    or 30° in the aviation profile (which refuses more than 45°, 14 CFR 25.1547(d)); there each
    card carries its placard lines and the 10° limit (``Card.placard``, ``CardState.limit``)."""
    analysis = (plan_or_result if isinstance(plan_or_result, Analysis)
                else analyse(plan_or_result))
    return cards(analysis, step_deg, sensor)


def site_field(latitude_deg: float, longitude_deg: float, date=None,
               altitude_m: float = 0.0) -> SiteField:
    """The geomagnetic field from WMM2025 at a place and date (default: today)."""
    return model_field(latitude_deg, longitude_deg, date, altitude_m)


def electronic_figures(plan_or_result: Plan | Analysis, sensor: str | None = None):
    """Every electronic compass's and magnetometer's figures (per ampere, compensation, grade,
    model check; total-field error for a scalar one), each with ``to_frame()`` and
    ``per_ampere_frame()``; ``sensor`` limits them to one."""
    from .electronic import electronic_report

    analysis = (plan_or_result if isinstance(plan_or_result, Analysis)
                else check(plan_or_result, remedies=False))
    return electronic_report(analysis, sensor)


def operating_area(plan: Plan):
    """The plan at every place of its operating area (the site sheet's place rows), with
    ``to_frame()``: where each sensor's figure is worst."""
    from .area import area_check

    return area_check(plan)


def to_json(result: CheckResult) -> dict:
    """A check's result as the JSON document ``check --json`` prints (docs/plan-format.md)."""
    from .render.json_out import analysis_json

    return analysis_json(result)
