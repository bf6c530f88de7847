"""Refits: a plan against its earlier version, and whether a new swing is due."""

from __future__ import annotations

import enum
from dataclasses import dataclass

import numpy as np

from .. import checking
from ..budget import asin_deg, item_effect
from ..errors import InputError, Problem
from ..physics import heading
from ..plan import Plan, frozen_array, name_key
from ..quantities import Unit
from .common import LOCATION_FIELD_CHANGE, SWING_THRESHOLD_DEG


@dataclass(frozen=True)
class Difference:
    """A run or item that differs between two versions of a plan, at one sensor in one state."""

    kind: str                          # "run" or "item"
    name: str
    how: tuple[str, ...]               # "added", "removed", "moved", "current changed", ...
    field_change_t: np.ndarray | None  # (3,) change of its field at the sensor (None: a bound)
    size_deg: float                    # asin(|change of the horizontal field| / H)


@dataclass(frozen=True)
class StateRefit:
    sensor: str
    state: str
    used: bool
    held_before: float                 # the held figures, in the unit of the sensor's budget
    held_after: float
    level_before_deg: float            # level deviation the compass shows, largest over headings
    level_after_deg: float
    card_change_deg: float             # largest change of the deviation card over headings
    swing_advised: bool
    differences: tuple[Difference, ...]
    unit: Unit = Unit.DEGREES          # the budget's: of held_before and held_after


class Change(str, enum.Enum):
    """What a refit did to a sensor or a state as a whole."""

    SENSOR_REMOVED = "sensor removed"      # only in the earlier plan
    SENSOR_ADDED = "sensor added"          # new: it needs adjusting and swinging
    SENSOR_MOVED = "sensor moved"          # it needs adjusting and swinging again
    STATE_REMOVED = "state removed"
    STATE_ADDED = "state added"            # no earlier figures to compare


#: Changes after which the sensor itself must be adjusted and swung (anew or again).
SWING_CHANGES = (Change.SENSOR_ADDED, Change.SENSOR_MOVED)


@dataclass(frozen=True)
class RefitNote:
    """A sensor or state only in one version of the plan, or a sensor that moved."""

    change: Change
    name: str                          # the sensor's or the state's

    @property
    def advises_swing(self) -> bool:
        return self.change in SWING_CHANGES


class SwingTrigger(str, enum.Enum):
    """An occasion on which a compass swing must be performed, in FAA AC 43.13-1B CHG 1,
    par. 12-37a (aircraft)."""

    ELECTRICAL = "electrical system changed"     # (6) whenever a change is made to the
    #                                              electrical system
    FERROUS = "ferrous items changed"            # (2) after any cockpit modification or major
    #                                              replacement involving ferrous metal
    LOCATION = "large change of location"        # (8) operation changed to a different
    #                                              geographic location with a major change


#: The paragraph of AC 43.13-1B CHG 1, 12-37a, naming each occasion.
TRIGGER_PARAGRAPHS = {SwingTrigger.ELECTRICAL: "12-37a(6)", SwingTrigger.FERROUS: "12-37a(2)",
                      SwingTrigger.LOCATION: "12-37a(8)"}


@dataclass(frozen=True)
class TriggerFound:
    """An occasion for a swing that a refit meets, with what meets it.

    runs, circuits : the runs and circuits that changed (electrical system)
    items : the magnetised and steel items added, removed, moved or changed (ferrous)
    horizontal_before_t, horizontal_after_t : [T] the sites' H (location)
    field_change : the larger relative change of H and of Z/H (location)
    card_change_deg : [deg] the largest change the new site alone makes to a direction
        indicator's card of the earlier installation (location)
    """

    trigger: SwingTrigger
    runs: tuple[str, ...] = ()
    circuits: tuple[str, ...] = ()
    items: tuple[str, ...] = ()
    horizontal_before_t: float | None = None
    horizontal_after_t: float | None = None
    field_change: float | None = None
    card_change_deg: float | None = None

    @property
    def paragraph(self) -> str:
        return TRIGGER_PARAGRAPHS[self.trigger]


@dataclass(frozen=True)
class Refit:
    old_source: str
    new_source: str
    threshold_deg: float
    states: tuple[StateRefit, ...]
    notes: tuple[RefitNote, ...]       # sensors or states only in one version, moved sensors
    triggers: tuple[TriggerFound, ...] = ()   # occasions for a swing the refit meets
    profile: str = "general"           # the new plan's: in "aviation" every trigger calls a swing

    @property
    def swing_advised(self) -> bool:
        """A new swing is due: the card of a used state moves beyond the threshold, a sensor is
        new or has moved, or (aviation profile) the refit meets an occasion of AC 43.13-1B
        par. 12-37a."""
        return any(s.swing_advised for s in self.states) or any(
            n.advises_swing for n in self.notes) or (self.profile == "aviation"
                                                     and bool(self.triggers))

    def to_frame(self):
        """One row per sensor and state: the held figures before and after (in the budget's
        unit, named in ``unit``), the level deviation before and after and the card change
        [deg], and whether a new swing is advised."""
        import pandas

        return pandas.DataFrame([{
            "sensor": st.sensor, "state": st.state, "used": st.used,
            "held_before": st.held_before, "held_after": st.held_after, "unit": st.unit.value,
            "level_before_deg": st.level_before_deg, "level_after_deg": st.level_after_deg,
            "card_change_deg": st.card_change_deg, "swing_advised": st.swing_advised}
            for st in self.states])


def _level_deg(st, seen_t, horizontal_t):
    """The level deviation a state shows, largest over headings: the residual's where the
    sensor is adjusted, else the vector sum's; from the field seen for a total-field sensor,
    which has no heading figures of its own."""
    for figure in (st.change_from_reference_deg, st.vector_deviation_deg):
        if figure is not None:
            return figure
    return float(asin_deg(heading.horizontal_disturbance(seen_t) / horizontal_t))


def _same_array(a, b):
    if a is None or b is None:
        return a is None and b is None
    a, b = np.asarray(a), np.asarray(b)
    return a.shape == b.shape and np.allclose(a, b, rtol=0, atol=1e-9)


def _run_differences(old_run, new_run):
    how = []
    g0, g1 = old_run.geometry, new_run.geometry
    if not _same_array(g0.route_m, g1.route_m):
        how.append("moved")
    if (g0.return_kind != g1.return_kind or not _same_array(g0.return_route_m, g1.return_route_m)
            or g0.spacing_m != g1.spacing_m or g0.lay_m != g1.lay_m
            or getattr(old_run, "lie", None) != getattr(new_run, "lie", None)):
        how.append("return changed")
    if g0.radius_m != g1.radius_m or old_run.size != new_run.size:
        how.append("size changed")
    return how


def _item_differences(old, new):
    how = []
    if not _same_array(old.position_m, new.position_m):
        how.append("moved")
    if (old.moment_am2 != new.moment_am2 or not _same_array(old.axis, new.axis)
            or old.safe_distance_m != new.safe_distance_m
            or old.safe_distance_for != new.safe_distance_for):
        how.append("moment or label changed")
    if old.states != new.states:
        how.append("states changed")
    return how


def _steel_differences(old, new):
    """How a steel item of the plan's ``steel`` sheet changed (any change is a change of ferrous
    metal for AC 43.13-1B par. 12-37a(2))."""
    how = []
    if not _same_array(old.position_m, new.position_m):
        how.append("moved")
    if (old.shape != new.shape or not _same_array(old.sizes_m, new.sizes_m)
            or not _same_array(old.rotation, new.rotation) or old.wall_m != new.wall_m):
        how.append("shape, size or axis changed")
    if old.mu_low != new.mu_low or old.mu_high != new.mu_high:
        how.append("permeability changed")
    if old.states != new.states:
        how.append("states changed")
    return how


def _circuit_changed(a, b) -> bool:
    def watts(c):
        return None if c.power_w is None else tuple(np.nan_to_num(c.power_w, nan=-1e300))

    return (not _same_array(a.currents_a, b.currents_a) or a.switching != b.switching
            or watts(a) != watts(b) or a.voltage_v != b.voltage_v or a.inverter != b.inverter)


def swing_triggers(old: Plan, new: Plan, before, after,
                   threshold_deg: float = SWING_THRESHOLD_DEG) -> tuple[TriggerFound, ...]:
    """The occasions for a compass swing of FAA AC 43.13-1B CHG 1, par. 12-37a, that a refit
    meets, as values.

    * (6) "whenever a change is made to the electrical system": any run added, removed, moved,
      re-sized, re-returned or carrying other circuits; any circuit added, removed, or with
      other currents, loads, voltage or switching, whatever its effect at a sensor;
    * (2) "after any cockpit modification or major replacement involving ferrous metal": any
      magnetised item (``equipment``) or steel item (``steel``) added, removed, moved or
      changed (the plan does not say where the cockpit ends, so every item counts);
    * (8) a "different geographic location with a major change": the site's H or Z/H changes by
      more than LOCATION_FIELD_CHANGE of its earlier value (rule of thumb, no published source),
      or the new site's field alone moves the card of the earlier installation by more than
      ``threshold_deg`` at some heading. The deviation of a vessel-fixed field b is
      atan2(b_E, H + b_N), so at another H it is that of b H'/H at H' (the same angle): the
      change is :func:`deviation.physics.heading.max_change_deg` of b and b H_new/H_old.
    """
    found = []
    old_runs = {name_key(r.name): r for r in old.runs}
    new_runs = {name_key(r.name): r for r in new.runs}
    runs = sorted({(new_runs.get(k) or old_runs[k]).name for k in old_runs.keys() | new_runs.keys()
                   if k not in old_runs or k not in new_runs
                   or _run_differences(old_runs[k], new_runs[k])
                   or tuple(map(name_key, old_runs[k].circuits))
                   != tuple(map(name_key, new_runs[k].circuits))})
    old_circuits = {name_key(c.name): c for c in old.circuits}
    new_circuits = {name_key(c.name): c for c in new.circuits}
    circuits = sorted({(new_circuits.get(k) or old_circuits[k]).name
                       for k in old_circuits.keys() | new_circuits.keys()
                       if k not in old_circuits or k not in new_circuits
                       or _circuit_changed(old_circuits[k], new_circuits[k])})
    if runs or circuits:
        found.append(TriggerFound(SwingTrigger.ELECTRICAL, runs=tuple(runs),
                                  circuits=tuple(circuits)))
    old_items = {name_key(e.name): e for e in old.equipment}
    new_items = {name_key(e.name): e for e in new.equipment}
    items = sorted({(new_items.get(k) or old_items[k]).name
                    for k in old_items.keys() | new_items.keys()
                    if k not in old_items or k not in new_items
                    or _item_differences(old_items[k], new_items[k])})
    old_steel = {name_key(s.name): s for s in old.steel}
    new_steel = {name_key(s.name): s for s in new.steel}
    items += sorted({(new_steel.get(k) or old_steel[k]).name
                     for k in old_steel.keys() | new_steel.keys()
                     if k not in old_steel or k not in new_steel
                     or _steel_differences(old_steel[k], new_steel[k])})
    if items:
        found.append(TriggerFound(SwingTrigger.FERROUS, items=tuple(items)))
    h0, h1 = before.site.horizontal_t, after.site.horizontal_t
    z0, z1 = before.site.vertical_t, after.site.vertical_t
    change = max(abs(h1 / h0 - 1.0), abs((z1 / h1) / (z0 / h0) - 1.0) if z0 else 0.0)
    card = 0.0
    new_sensors = {name_key(s.sensor.name) for s in after.sensors}
    for result in before.sensors:
        sensor = result.sensor
        if name_key(sensor.name) not in new_sensors or not sensor.budget.degrees:
            continue
        b_ref = (np.asarray(result.state(sensor.reference_state).field_t)
                 if sensor.reference_state else np.zeros(3))
        for st in result.states:
            seen = np.asarray(st.field_t) - b_ref
            card = max(card, float(heading.max_change_deg(seen * h1 / h0, seen, h1)))
    if change > LOCATION_FIELD_CHANGE or card > threshold_deg:
        found.append(TriggerFound(SwingTrigger.LOCATION, horizontal_before_t=float(h0),
                                  horizontal_after_t=float(h1), field_change=float(change),
                                  card_change_deg=card))
    return tuple(found)


def _check_comparable(old: Plan, new: Plan) -> None:
    """Two plans with no sensor or no state in common have nothing to compare: saying "no new
    swing is needed" of them would be a figure that flatters. Raises :class:`InputError`."""
    shared = {what: {name_key(n) for n in a} & {name_key(n) for n in b} for what, a, b in (
        ("sensor", [s.name for s in old.sensors], [s.name for s in new.sensors]),
        ("state", old.state_names, new.state_names))}
    if all(shared.values()):
        return
    lacking = " and no ".join(what for what, common in shared.items() if not common)
    listed = "; ".join(f"{what}s earlier: {', '.join(earlier) or 'none'}, now: "
                       f"{', '.join(now) or 'none'}"
                       for what, earlier, now in (
                           ("sensor", [s.name for s in old.sensors], [s.name for s in new.sensors]),
                           ("state", old.state_names, new.state_names))
                       if not shared[what])
    sites = ""
    a, b = old.site, new.site
    if (a.latitude_deg is not None and a.longitude_deg is not None and b.latitude_deg is not None
            and b.longitude_deg is not None
            and (abs(a.latitude_deg - b.latitude_deg) > 1
                 or abs(a.longitude_deg - b.longitude_deg) > 1)):
        sites = (f", and their sites lie apart ({a.latitude_deg:g}, {a.longitude_deg:g} and "
                 f"{b.latitude_deg:g}, {b.longitude_deg:g})")
    raise InputError(f"the two plans share no {lacking} ({listed}){sites}: they look like two "
                     "different installations, and a refit compares a plan with its own earlier "
                     "version; nothing was compared", kind=Problem.INCONSISTENT)


def refit(old: Plan, new: Plan, threshold_deg: float = SWING_THRESHOLD_DEG) -> Refit:
    """Compare a plan with its earlier version: per sensor and state, how the figures and the
    deviation card change, which runs and items cause it, and whether a new swing is due.

    Parameters
    ----------
    old, new : Plan
        The earlier and the current version; sensors, states, runs and items match by name.
    threshold_deg : float [deg]
        A new swing is advised where the deviation card changes by more than this at some
        heading, in a state the sensor is used in (default 1°, common practice, no source).

    Returns
    -------
    Refit

    Raises
    ------
    InputError
        The two plans have no sensor, or no operating state, in common (names compared case- and
        space-insensitively): there is nothing to compare.

    Notes
    -----
    The compass keeps the correctors set for the old installation: it still cancels the old
    reference state's field b_ref, so after the refit it shows the deviation of
    b_new - b_ref,old where it showed that of b_old - b_ref,old. The card change is the largest
    over headings of the difference of those two level deviations, found by
    :func:`deviation.physics.heading.max_change_deg`; both use the new plan's site field. The held
    figures are each plan's own (the new one as if adjusted afresh). Each run's or item's part
    is the size of the change of its own field at the sensor, asin(|Delta b_h|/H): the
    changes add as vectors, so the largest is the main cause, not a share of the total.
    """
    _check_comparable(old, new)
    before = checking.check_plan(old, remedies=False)
    after = checking.check_plan(new, remedies=False)
    h = after.site.horizontal_t
    notes = []
    old_sensors = {name_key(s.sensor.name): s for s in before.sensors}
    new_sensors = {name_key(s.sensor.name): s for s in after.sensors}
    for key in old_sensors.keys() - new_sensors.keys():
        notes.append(RefitNote(Change.SENSOR_REMOVED, old_sensors[key].sensor.name))
    for key in new_sensors.keys() - old_sensors.keys():
        notes.append(RefitNote(Change.SENSOR_ADDED, new_sensors[key].sensor.name))
    old_states = {name_key(s): s for s in old.state_names}
    new_states = {name_key(s): s for s in new.state_names}
    for key in old_states.keys() - new_states.keys():
        notes.append(RefitNote(Change.STATE_REMOVED, old_states[key]))
    for key in new_states.keys() - old_states.keys():
        notes.append(RefitNote(Change.STATE_ADDED, new_states[key]))
    old_runs = {name_key(r.name): i for i, r in enumerate(old.runs)}
    new_runs = {name_key(r.name): i for i, r in enumerate(new.runs)}
    run_names = {name_key(r.name): r.name for r in (*old.runs, *new.runs)}   # the new name wins
    old_items = {name_key(e.name): e for e in old.equipment}
    new_items = {name_key(e.name): e for e in new.equipment}
    old_currents, new_currents = old.run_currents_a, new.run_currents_a
    states = []
    for key, new_result in new_sensors.items():
        old_result = old_sensors.get(key)
        if old_result is None:
            continue
        sensor = new_result.sensor
        if not _same_array(old_result.sensor.position_m, sensor.position_m):
            notes.append(RefitNote(Change.SENSOR_MOVED, sensor.name))
        reference = old_result.sensor.reference_state
        b_ref = (np.asarray(old_result.state(reference).field_t) if reference
                 and reference in old.state_names else np.zeros(3))
        for state_key, state in new_states.items():
            if state_key not in old_states:
                continue
            old_state = old_states[state_key]
            st_old, st_new = old_result.state(old_state), new_result.state(state)
            k_old, k_new = old.state_index(old_state), new.state_index(state)
            seen_old = np.asarray(st_old.field_t) - b_ref
            seen_new = np.asarray(st_new.field_t) - b_ref
            card = float(heading.max_change_deg(seen_new, seen_old, h))
            differences = []
            for run_key in sorted(old_runs.keys() | new_runs.keys()):
                r0, r1 = old_runs.get(run_key), new_runs.get(run_key)
                f0 = (np.zeros(3) if r0 is None else
                      old_result.unit_fields_t[r0] * old_currents[r0, k_old])
                f1 = (np.zeros(3) if r1 is None else
                      new_result.unit_fields_t[r1] * new_currents[r1, k_new])
                if r0 is None:
                    how = ["added"]
                elif r1 is None:
                    how = ["removed"]
                else:
                    how = _run_differences(old.runs[r0], new.runs[r1])
                    if old_currents[r0, k_old] != new_currents[r1, k_new]:
                        how.append("current changed")
                if not how:
                    continue
                change = f1 - f0
                differences.append(Difference(
                    "run", run_names[run_key], tuple(how), frozen_array(change),
                    float(asin_deg(heading.horizontal_disturbance(change) / h))))
            for item_key in sorted(old_items.keys() | new_items.keys()):
                e0, e1 = old_items.get(item_key), new_items.get(item_key)
                how = (["added"] if e0 is None else ["removed"] if e1 is None
                       else _item_differences(e0, e1))
                if not how:
                    continue
                fields, bounds = [], []
                for item, plan_state in ((e0, old_state), (e1, state)):
                    if item is None or not item.present_in(plan_state):
                        fields.append(np.zeros(3))
                        bounds.append(0.0)
                        continue
                    field, bound, _ = item_effect(item, sensor.position_m[None, :], h)
                    fields.append(np.zeros(3) if field is None else field[0])
                    bounds.append(float(bound[0]))
                change = fields[1] - fields[0]
                size = heading.horizontal_disturbance(change) + abs(bounds[1] - bounds[0])
                bound_only = not np.any(change) and bounds[1] != bounds[0]
                differences.append(Difference(
                    "item", (e1.name if e1 is not None else e0.name if e0 is not None else ""),
                    tuple(how),
                    None if bound_only else frozen_array(change), float(asin_deg(size / h))))
            differences.sort(key=lambda d: (-d.size_deg, d.name))
            level = [_level_deg(st, seen, h) for st, seen in ((st_old, seen_old),
                                                              (st_new, seen_new))]
            states.append(StateRefit(
                sensor.name, state, st_new.used, st_old.held, st_new.held,
                float(level[0]), float(level[1]), card,
                bool(st_new.used and card > threshold_deg), tuple(differences),
                sensor.budget.unit))
    return Refit(old.source, new.source, float(threshold_deg), tuple(states), tuple(notes),
                 swing_triggers(old, new, before, after, threshold_deg), new.site.profile)
