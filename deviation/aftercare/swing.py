"""The swing: coefficients fitted per state beside the plan's own, and which state to swing in."""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .. import checking
from ..errors import DeviationError, Problem
from ..physics import heading, swing
from ..plan import Finding, Plan, Sensor, frozen_array
from ..quantities import Budget
from ..sitefield import SiteField
from .common import MAX_READ_DEVIATION_DEG, SWING_SHEET, ReadingsError, _checked, _items_field
from .readings import _heading, _signed_deviation, _state_named, _suggest, read_table
from .switch_on import _state_field


@dataclass(frozen=True)
class SwingReadings:
    """A swing's readings per state: compass and magnetic headings and the deviation [deg]."""

    source: str
    states: dict                       # state -> (rows (n,), compass (n,), magnetic (n,), dev (n,))


def read_swing(path, plan: Plan, state: str | None = None) -> SwingReadings:
    """Read swing readings: per row a compass heading and the deviation, or a compass and a
    magnetic heading (or all three, which must agree), and the state the vessel was in.

    Parameters
    ----------
    path : str or PathLike
        A .csv file, a workbook (sheet "swing", or its only sheet) or a folder with swing.csv.
    plan : Plan
        For the state names.
    state : str, optional
        The state of rows that name none (needed when the plan has several states).

    Raises
    ------
    ReadingsError
        With every bad cell located; also a state with fewer than five distinct headings.
    """
    table = read_table(path, (SWING_SHEET,), any_single=True)
    findings: list[Finding] = []
    columns = set(table.columns)
    aliases = {"compass": ("compass", "compass_heading", "compass_deg"),
               "magnetic": ("magnetic", "magnetic_heading", "magnetic_deg"),
               "deviation": ("deviation", "deviation_deg")}
    found = {key: next((c for c in names if c in columns), None) for key, names in aliases.items()}
    if sum(v is not None for v in found.values()) < 2:
        raise ReadingsError([table.finding(None, None, "two of the columns compass (heading), "
                                           "magnetic (heading) and deviation are needed")])
    default = None
    if state is not None:
        default = _state_named(plan, state)
        if default is None:
            raise ReadingsError([Finding(table.file, table.sheet, None, None,
                                         f'"{state}" is not a state of the plan'
                                         f"{_suggest(state, plan.state_names)}")])
    elif len(plan.state_names) == 1:
        default = plan.state_names[0]
    per_state: dict[str, list[tuple]] = {}    # (row, compass, magnetic, deviation)
    for number, row in table.rows:
        bad = len(findings)
        named = row.get("state")
        if named is not None:
            chosen = _state_named(plan, named)
            if chosen is None:
                findings.append(table.finding(number, "state", f'"{named}" is not a state of the '
                                              f"plan{_suggest(str(named), plan.state_names)}"))
        else:
            chosen = default
            if chosen is None:
                findings.append(table.finding(number, "state", "which state was the vessel in? "
                                              "name it here, or give --state"))
        compass = (_heading(table, number, found["compass"], row.get(found["compass"]), findings)
                   if found["compass"] else None)
        magnetic = (_heading(table, number, found["magnetic"], row.get(found["magnetic"]),
                             findings) if found["magnetic"] else None)
        deviation = (_signed_deviation(table, number, found["deviation"],
                                       row.get(found["deviation"]), findings)
                     if found["deviation"] else None)
        if len(findings) > bad:
            continue
        given = [v is not None for v in (compass, magnetic, deviation)]
        if sum(given) < 2:
            if any(given):
                findings.append(table.finding(number, found["deviation"] or found["magnetic"],
                                              "two of compass, magnetic and deviation are needed"))
            continue
        if compass is None:
            compass = float(heading.compass_from_magnetic(magnetic, deviation))
        elif magnetic is None:
            magnetic = float(heading.magnetic_from_compass(compass, deviation))
        elif deviation is None:
            deviation = float(swing.wrap_deg(magnetic - compass))
            if abs(deviation) > MAX_READ_DEVIATION_DEG:
                findings.append(table.finding(
                    number, found["magnetic"], f"compass {compass:g}° and magnetic {magnetic:g}° "
                    f"are a deviation of {deviation:+.1f}°, more than the "
                    f"{MAX_READ_DEVIATION_DEG:g}° a compass that can still be read shows (rule of "
                    "thumb, no published source); check the two headings", Problem.OUT_OF_RANGE))
                continue
        elif abs(off := float(swing.wrap_deg(magnetic - compass - deviation))) > 0.05:
            findings.append(table.finding(number, found["deviation"], "compass + deviation is not "
                                          f"the magnetic heading (off by {off:+.2f}°)"))
            continue
        per_state.setdefault(chosen, []).append((number, compass, magnetic, deviation))
    for chosen, readings in per_state.items() if not findings else ():
        distinct = len({round(r[1], 6) for r in readings})
        if distinct < swing.MIN_HEADINGS:
            findings.append(Finding(table.file, table.sheet, readings[0][0], None,
                                    f'state "{chosen}" has {distinct} distinct compass heading'
                                    f"{'s' if distinct != 1 else ''}; at least "
                                    f"{swing.MIN_HEADINGS} are needed for five coefficients"))
    if not per_state and not findings:
        findings.append(Finding(table.file, table.sheet, None, None, "no readings in the sheet"))
    if findings:
        raise ReadingsError(findings)
    states = {s: tuple(np.array(values) for values in zip(*per_state[s]))
              for s in plan.state_names if s in per_state}
    return SwingReadings(f"{table.file}, sheet {table.sheet}", states)


@dataclass(frozen=True)
class StateSwing:
    """One state's swing: the fit beside the plan's own coefficients."""

    state: str
    rows: np.ndarray                   # sheet rows of the readings
    headings_deg: np.ndarray           # the heading fitted against (compass or magnetic)
    deviation_deg: np.ndarray
    fit: swing.CoefficientFit
    predicted_deg: np.ndarray | None   # (5,) from the plan; None where the field overwhelms
    field_t: np.ndarray                # (3,) the field the prediction is drawn from

    @property
    def unexplained_deg(self) -> np.ndarray | None:
        """Observed minus predicted coefficients: what the plan does not explain."""
        if self.predicted_deg is None:
            return None
        return self.fit.coefficients_deg - self.predicted_deg


@dataclass(frozen=True)
class StateChange:
    """The change of the coefficients from one swung state to another: the vessel's own iron
    and the correctors are the same in both, so this is the wiring's part alone."""

    state: str
    base: str
    observed_deg: np.ndarray
    predicted_deg: np.ndarray | None
    standard_error_deg: np.ndarray | None = None   # of the observed change, both fits together

    @property
    def unexplained_deg(self) -> np.ndarray | None:
        return None if self.predicted_deg is None else self.observed_deg - self.predicted_deg


@dataclass(frozen=True)
class SwingComparison:
    sensor: Sensor
    site: SiteField
    on: str                            # "compass" or "magnetic"
    adjusted_in: str | None            # predictions are of the residual after adjustment here
    source: str
    states: tuple[StateSwing, ...]
    changes: tuple[StateChange, ...]
    unknown_items: tuple[str, ...]
    steel_items: tuple[str, ...] = ()  # in the prediction: their induced magnetism


def swing_comparison(plan: Plan, sensor, readings: SwingReadings, *, on: str = "compass",
                     adjusted_in: str | None = "reference", analysis=None) -> SwingComparison:
    """Fit the approximate coefficients to each state's swing and set the plan's beside them.

    Parameters
    ----------
    plan : Plan
    sensor : str or Sensor
    readings : SwingReadings
    on : "compass" or "magnetic"
        The heading the coefficients are written against (the handbook: compass).
    adjusted_in : str or None
        The state the compass was adjusted in before the swing: the plan's prediction is then of
        the residual field b_state - b_adjusted. "reference" (default): the sensor's reference
        state in the plan, if any; None: not adjusted, the absolute field.

    Returns
    -------
    SwingComparison

    Notes
    -----
    The plan knows the wiring, oriented items and the magnetism the Earth's field induces in its
    steel items (the middle of each item's permeability band; the curve of a disturbance that
    turns with the heading, fitted like a swing's,
    :func:`deviation.physics.swing.turning_coefficients_deg`). The permanent magnetism of the
    vessel's steel, steel the plan leaves out, the correctors and a misaligned lubber line are
    part of every swing and not of the prediction, so the
    difference per state mixes them in. Between two swung states they are the same, so the
    change of the coefficients from one state to another is the wiring's part alone, and that
    is set beside the plan's change too. On compass headings a vessel-fixed field gives no A, D
    or E (see :func:`deviation.physics.swing.deviation_on_compass_heading_deg`).

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (formerly Pub. 226), chapter V.
    """
    chosen = plan.sensor(sensor) if isinstance(sensor, str) else sensor
    checked = _checked(plan, analysis)
    result = checked.sensor(chosen.name)
    h = checked.site.horizontal_t
    if adjusted_in == "reference":
        adjusted_in = chosen.reference_state
    elif adjusted_in is not None:
        named = _state_named(plan, adjusted_in)
        if named is None:
            raise DeviationError(f'"{adjusted_in}" is not a state of the plan; it has: '
                                 + ", ".join(plan.state_names))
        adjusted_in = named
    correction = _state_field(plan, result, adjusted_in) if adjusted_in else np.zeros(3)
    steel = _steel_seen(plan, chosen, checked.site, adjusted_in)
    states = []
    unknown = set()
    for state, (rows, compass, magnetic, deviation) in readings.states.items():
        psi = compass if on == "compass" else magnetic
        try:
            fit = swing.fit_coefficients(psi, deviation)
        except swing.SwingFitError as error:
            raise ReadingsError([Finding(readings.source, None, int(rows[0]), None,
                                         f'state "{state}": {error}')]) from None
        seen = _state_field(plan, result, state) - correction
        if steel is None:
            predicted = swing.field_coefficients_deg(seen, h, on)
        else:
            k = plan.state_index(state)
            matrix, fixed = steel[k]
            seen = seen + fixed
            predicted = swing.turning_coefficients_deg(matrix, seen, h, checked.site.vertical_t,
                                                       on)
        _, missing = _items_field(plan, chosen, h, lambda item, s=state: item.present_in(s))
        unknown.update(missing)
        states.append(StateSwing(state, rows, psi, deviation, fit,
                                 None if predicted is None else frozen_array(predicted),
                                 frozen_array(seen)))
    changes = []
    if len(states) > 1:
        base = next((s for s in states if s.state == adjusted_in), states[0])
        for other in states:
            if other is base:
                continue
            predicted = (None if other.predicted_deg is None or base.predicted_deg is None
                         else frozen_array(other.predicted_deg - base.predicted_deg))
            errors = (None if other.fit.standard_error_deg is None
                      or base.fit.standard_error_deg is None else frozen_array(np.hypot(
                          other.fit.standard_error_deg, base.fit.standard_error_deg)))
            changes.append(StateChange(other.state, base.state, frozen_array(
                other.fit.coefficients_deg - base.fit.coefficients_deg), predicted, errors))
    return SwingComparison(chosen, checked.site, on, adjusted_in, readings.source, tuple(states),
                           tuple(changes), tuple(sorted(unknown)),
                           tuple(item.name for item in plan.steel))


def _steel_seen(plan, sensor, site, adjusted_in):
    """Per state, the steel's matrix and its fixed part as the sensor sees it after adjustment
    in ``adjusted_in`` (or not adjusted), at the middle of each item's band: a prediction to set
    beside a swing, not a bound. None for a plan without steel."""
    from ..budget import adjusting_vertical_t
    from ..budget.steel import seen_steel, steel_parts_at

    parts = steel_parts_at(plan, sensor.position_m[None, :])
    if parts is None:
        return None
    adjusted = replace(sensor, reference_state=adjusted_in)
    z_adj = adjusting_vertical_t(plan, site)
    out = []
    for k in range(len(plan.state_names)):
        seen = seen_steel(plan, adjusted, parts, k, z_adj, adjusted=adjusted_in is not None)
        out.append((seen.matrix[0], seen.fixed[0]))
    return out




@dataclass(frozen=True)
class ReferenceChoice:
    """One candidate state to adjust and swing a sensor in, with what the others then keep."""

    sensor: str
    reference_state: str
    worst: float                       # largest held figure over the other states it is used in
    worst_state: str | None
    level_worst_deg: float             # the same, level: the deviation of b_state - b_ref
    within_budget: bool
    budget: Budget
    in_plan: bool                      # the plan's own reference state
    overwhelmed: bool


def reference_choices(plan: Plan, sensor: str | None = None) -> dict:
    """For each sensor, every state as the one to adjust and swing in, best first.

    Parameters
    ----------
    plan : Plan
    sensor : str, optional
        Only this sensor.

    Returns
    -------
    dict of sensor name -> tuple of ReferenceChoice, smallest worst figure first

    Notes
    -----
    For each candidate r the plan is checked again with r as the sensor's reference state; the
    figure is the one :func:`deviation.check` holds against the budget: the deviation of the
    residual b_state - b_r, largest over headings (asin(|b_h|/H), NGA Pub. 226), at the worst
    attitude, with the bounds of items that change, in the worst of the other states the sensor
    is used in.
    """
    sensors = plan.sensors if sensor is None else (plan.sensor(sensor),)
    names = {s.name for s in sensors}
    choices: dict[str, list[ReferenceChoice]] = {s.name: [] for s in sensors}
    for state in plan.state_names:
        trial = replace(plan, sensors=tuple(
            replace(s, reference_state=state) if s.name in names else s for s in plan.sensors))
        checked = checking.check_plan(trial, remedies=False)
        for result in checked.sensors:
            s = result.sensor
            if s.name not in names:
                continue
            others = [st for st in result.states if st.used and st.state != state]
            original = next(o for o in sensors if o.name == s.name)
            if others:
                worst = max(others, key=lambda st: st.held)
                figure, worst_state = worst.held, worst.state
                level = max(st.change_from_reference_deg or 0.0 for st in others)
                over = any(st.overwhelmed for st in others)
                within = all(st.within_budget for st in others)
            else:
                figure, worst_state, level, over, within = 0.0, None, 0.0, False, True
            choices[s.name].append(ReferenceChoice(
                s.name, state, float(figure), worst_state, float(level), within, s.budget,
                original.reference_state == state, over))
    return {name: tuple(sorted(found, key=lambda c: (c.worst, c.reference_state)))
            for name, found in choices.items()}


