"""The predicted deviation card: deviation at every few degrees of magnetic heading, per state,
with the band that the parts of unknown direction may add and the figure the budget holds.

A card is drawn level, for the field of known direction in the state's worst switching of the
independent loads; the parts the plan does not fix (a pair's lie, a twist's floor and untwisted
ends, equipment of unknown orientation) may move it anywhere within the band at each heading.
The card carries the state's held figure too, which also counts the worst attitude, so a card
never looks smaller than what the budget holds. A total-field magnetometer gets its total-field
error against heading instead, in nT.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .budget import TESLA_PER_NT, circuit_currents, equipment_fields
from .constants import (
    AVIATION_CARD_STEP_DEG,
    AVIATION_LIMIT_DEG,
    AVIATION_MAX_STEP_DEG,
    CARD_STEP_DEG,
    OVERWHELMED_DEG,
)
from .errors import InputError, Problem
from .physics import heading
from .plan import Sensor, StateCondition, frozen_array
from .quantities import Status, Unit

#: Sensor kinds with no heading to steer by (survey and flight-controller magnetometers).
NOT_STEERED = ("magnetometer", "total-field magnetometer")
#: Heading step of the curves drawn in plots [deg].
CURVE_STEP_DEG = 1.0
#: Kinds held to the 10 degree limit of the aviation profile: direction indicators, magnetic or
#: electronic (14 CFR 23.1327 speaks of magnetic direction indicators, stabilized or not).
DIRECTION_INDICATORS = ("magnetic compass", "electronic compass")


def card_step_deg(plan) -> float:
    """The card's step for the plan's profile [deg]: 30 for aviation, else 15."""
    return AVIATION_CARD_STEP_DEG if plan.site.aviation else CARD_STEP_DEG


@dataclass(frozen=True)
class LevelLimit:
    """Where a state stands against a regulation's limit on a direction indicator: the largest
    deviation in level flight on any heading, of the compensated installation.

    level_deg : [deg] the largest over headings, level, with every part of unknown direction
        and the worst switching of the independent loads; the residual after adjustment where
        the sensor is adjusted in a reference state (the compensated installation), else the
        absolute deviation (OVERWHELMED_DEG where it can point anywhere)
    limit_deg : [deg] the limit (AVIATION_LIMIT_DEG)
    switched_on : the independent circuits on in that worst case, (name, sign)
    """

    level_deg: float
    limit_deg: float
    switched_on: tuple[tuple[str, int], ...] = ()

    @property
    def within(self) -> bool:
        return self.level_deg <= self.limit_deg and self.level_deg < OVERWHELMED_DEG


def level_limit(plan, sensor, state_result) -> LevelLimit | None:
    """The aviation profile's limit for one sensor in one state; None outside the profile or for
    a sensor that is no direction indicator (a magnetometer)."""
    if not plan.site.aviation or sensor.kind not in DIRECTION_INDICATORS:
        return None
    level = (state_result.change_from_reference_deg if sensor.reference_state
             else state_result.max_deviation_deg)
    return LevelLimit(float(level), AVIATION_LIMIT_DEG, tuple(state_result.switched_on))


@dataclass(frozen=True)
class LimitVerdict:
    """A direction indicator in one state against the aviation profile's limit."""

    sensor: str
    state: str
    used: bool
    condition: StateCondition | None
    limit: LevelLimit


def aviation_verdicts(analysis) -> tuple[LimitVerdict, ...]:
    """Every direction indicator in every state against the 10 degree limit (empty outside the
    aviation profile)."""
    out = []
    plan = analysis.plan
    for result in analysis.sensors:
        for st in result.states:
            limit = level_limit(plan, result.sensor, st)
            if limit is not None:
                out.append(LimitVerdict(result.sensor.name, st.state, st.used,
                                        plan.condition(st.state), limit))
    return tuple(out)


def within_aviation_limit(analysis) -> bool:
    """Every direction indicator within the limit in every state it is relied on in (True
    outside the aviation profile)."""
    return all(v.limit.within for v in aviation_verdicts(analysis) if v.used)


@dataclass(frozen=True)
class CardState:
    """One state's card.

    headings_deg : magnetic headings of the rows
    deviation_deg : what the sensor shows at each, east positive, level (heading sensors; for a
        total-field magnetometer its total-field error in nT)
    band : at each heading, how far the parts of unknown direction may move that figure either
        way (degrees, or nT); the true figure lies in deviation +- band
    compass_deg : the compass heading to steer for each magnetic heading (compasses)
    unadjusted_deg : for an adjusted sensor, the deviation before adjustment (no band)
    field_t : (3,) [T] the field of known direction the card is drawn from (residual if adjusted)
    unknown_t : [T] the size of the parts of unknown direction (the band's source)
    held : the state's figure held against the budget (budget's unit), at the worst attitude
    status : where the held figure stands (not used: shown, not held)
    curve_headings_deg, curve_deviation_deg, curve_band : every CURVE_STEP_DEG, for plots
    condition : what the state stands for on a placard (engines, generator, radio receivers),
        from the plan's conditions sheet; None where it does not say
    limit : the aviation profile's 10 degree limit and where the state stands (None outside it)
    used : the sensor is relied on in this state
    switched_on : the independent circuits on in the worst case, (name, sign)
    """

    state: str
    headings_deg: np.ndarray
    deviation_deg: np.ndarray
    band: np.ndarray
    compass_deg: np.ndarray | None
    unadjusted_deg: np.ndarray | None
    field_t: np.ndarray
    unknown_t: float
    held: float
    status: Status
    overwhelmed: bool
    curve_headings_deg: np.ndarray
    curve_deviation_deg: np.ndarray
    curve_band: np.ndarray
    condition: StateCondition | None = None
    limit: LevelLimit | None = None
    used: bool = True
    switched_on: tuple[tuple[str, int], ...] = ()

    @property
    def level_worst(self) -> float:
        """The largest figure the card allows at any heading, level: max |figure| + band."""
        return float(np.max(np.abs(self.curve_deviation_deg) + self.curve_band))


@dataclass(frozen=True)
class PlacardLine:
    """One state's line of a compass placard, as values (the words are the renderer's): what
    the state stands for, the step of the readings, and where its level figure stands against
    the limit (14 CFR 25.1547: calibration in level flight with the engines operating, radio
    receivers on or off, readings in not more than 45 degree increments; 27.1547(e): the loads
    that would cause more than 10 degrees when turned on)."""

    state: str
    condition: StateCondition | None
    step_deg: float
    limit: LevelLimit | None
    used: bool

    @property
    def radios_stated(self) -> bool:
        return self.condition is not None and self.condition.radios is not None


@dataclass(frozen=True)
class Card:
    sensor: Sensor
    states: tuple[CardState, ...]
    profile: str = "general"
    step_deg: float = CARD_STEP_DEG

    @property
    def aviation(self) -> bool:
        return self.profile == "aviation"

    @property
    def placard(self) -> tuple[PlacardLine, ...]:
        """The placard's lines, one per state (aviation profile; empty elsewhere)."""
        if not self.aviation or self.sensor.kind not in DIRECTION_INDICATORS:
            return ()
        return tuple(PlacardLine(st.state, st.condition, self.step_deg, st.limit, st.used)
                     for st in self.states)

    @property
    def unit(self) -> Unit:
        return self.sensor.budget.unit

    @property
    def steers(self) -> bool:
        """A heading to steer means something for a compass, not for a survey magnetometer."""
        return self.sensor.kind not in NOT_STEERED

    def to_frame(self):
        """One row per magnetic heading and state."""
        import pandas

        name = "deviation_deg" if self.unit is Unit.DEGREES else "total_field_error_nt"
        band = "band_deg" if self.unit is Unit.DEGREES else "band_nt"
        return pandas.DataFrame([{
            "sensor": self.sensor.name, "state": st.state, "magnetic_deg": float(psi),
            name: float(st.deviation_deg[i]), band: float(st.band[i]),
            "compass_deg": float(st.compass_deg[i]) if st.compass_deg is not None else None,
            "unadjusted_deg": None if st.unadjusted_deg is None else float(st.unadjusted_deg[i]),
            "held": st.held, "status": st.status.value}
            for st in self.states for i, psi in enumerate(st.headings_deg)])


def _band_deg(b_t, unknown_t, horizontal_t, headings_deg):
    """How far a horizontal disturbance of size at most ``unknown_t`` may turn the needle at each
    heading [deg]: the needle lies along H + b_h, and adding e with |e| <= beta turns it by at
    most asin(beta / |H + b_h|) (180 where beta reaches |H + b_h|: it can point anywhere).
    Over all headings the largest |delta| + band is asin((|b_h| + beta)/H), the budget's own
    level figure (NGA Pub. 226, semicircular deviation, with the bound added as in the budget).
    """
    north, east = heading.level_disturbance(b_t, headings_deg)[..., :2].T
    length = np.hypot(horizontal_t + north, east)
    ratio = np.divide(unknown_t, length, out=np.full_like(length, np.inf), where=length > 0)
    return np.where(ratio < 1.0, np.degrees(np.arcsin(np.clip(ratio, 0.0, 1.0))), 180.0)


def _total_field_nt(b_t, horizontal_t, vertical_t, headings_deg):
    """Level total-field error |F + C(psi) b| - |F| at each heading [nT]."""
    north, east, down = heading.level_disturbance(b_t, headings_deg).T
    total = np.hypot(horizontal_t, vertical_t)
    seen = np.sqrt((horizontal_t + north) ** 2 + east ** 2 + (vertical_t + down) ** 2)
    return (seen - total) / TESLA_PER_NT


def _steel_curve(st, h, z, headings, beta, scalar, unadjusted_matrix):
    """A state's card with steel items: the figure of the worst choice (its fixed field and the
    steel's matrix as the sensor sees them, :class:`~deviation.analysis.StateResult`) at each
    heading, level, and the band the parts of unknown direction may add there."""
    from .physics import soft_iron

    fixed, matrix = np.asarray(st.steel_fixed_t), np.asarray(st.steel_matrix)
    b = soft_iron.level_disturbance(matrix, fixed, h, z, headings)
    if scalar:
        total = np.hypot(h, z)
        seen = np.sqrt((h + b[..., 0]) ** 2 + b[..., 1] ** 2 + (z + b[..., 2]) ** 2)
        return (seen - total) / TESLA_PER_NT, np.full(len(headings), beta / TESLA_PER_NT), None
    figure = np.degrees(np.arctan2(b[..., 1], h + b[..., 0]))
    length = np.hypot(h + b[..., 0], b[..., 1])
    ratio = np.divide(beta, length, out=np.full_like(length, np.inf), where=length > 0)
    band = np.where(ratio < 1.0, np.degrees(np.arcsin(np.clip(ratio, 0.0, 1.0))), 180.0)
    unadjusted = None
    if unadjusted_matrix is not None:
        unadjusted = soft_iron.deviation_curve_deg(unadjusted_matrix, np.asarray(st.field_t), h,
                                                   z, headings)
    return figure, band, unadjusted


def deviation_card(analysis, sensor_result, step_deg=None) -> Card:
    """The card of one sensor: for each state, the figure at every ``step_deg`` of heading.

    Parameters
    ----------
    analysis : Analysis
    sensor_result : SensorResult
    step_deg : float [deg], optional
        Spacing of magnetic headings, dividing 360; default 15, or 30 in the aviation profile,
        where more than 45 is refused (14 CFR 25.1547(d)).

    Returns
    -------
    Card

    Notes
    -----
    The level deviation :math:`\\delta(\\psi) = \\operatorname{atan2}(b_E, H + b_N)`, east
    positive; Compass = Magnetic - Deviation. b is the field of known direction in the state's
    worst switching of independent loads; for a sensor adjusted in a reference state it is the
    residual b - b_ref that the correctors or the calibration leave (b_ref with the independent
    loads off, as adjusted), so the card is the one to steer by after adjustment. The band at
    each heading is the most that the parts of unknown direction (size beta, counted as the
    budget counts them: each pair's lies and twisted ends by the triangle inequality, floors,
    equipment bounds) can turn the needle there. A total-field magnetometer's card is its level
    total-field error |F + C b| - |F| in nT, +- beta.

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (Pub. 226); Magnetic = Compass + Deviation
    (standard navigation practice).
    """
    plan, site = analysis.plan, analysis.site
    sensor = sensor_result.sensor
    step_deg = card_step_deg(plan) if step_deg is None else float(step_deg)
    if plan.site.aviation and step_deg > AVIATION_MAX_STEP_DEG:
        raise InputError(f"a card in {step_deg:g}° steps: the placard's readings are in not more "
                         f"than {AVIATION_MAX_STEP_DEG:g}° increments of magnetic heading (14 CFR "
                         "25.1547(d)); the aviation profile takes 30°", kind=Problem.OUT_OF_RANGE)
    headings = np.arange(0.0, 360.0, step_deg)
    curve = np.arange(0.0, 360.0 + CURVE_STEP_DEG / 2, CURVE_STEP_DEG)
    h, z = site.horizontal_t, site.vertical_t
    split = circuit_currents(plan)
    parts = sensor_result.parts
    items = equipment_fields(plan, sensor, sensor.position_m[None, :], h)
    base = parts.unit_t[0].T @ split.base_a + items.oriented[0].T          # (3, K)
    reference = sensor.reference_state
    k_ref = plan.state_index(reference) if reference else None
    b_ref = base[:, k_ref] if reference else np.zeros(3)
    # Each run's parts of unknown direction per ampere, as sizes (triangle inequality).
    per_ampere = parts.bound_t[0] + np.linalg.norm(parts.spread_t[0], axis=-1).sum(axis=-1)
    unknown = per_ampere @ split.scale_a(k_ref) + (items.changing[0] if reference
                                                  else items.bound[0])      # (K,)
    scalar = sensor.budget.unit is Unit.NANOTESLA
    states = []
    for k, st in enumerate(sensor_result.states):
        seen = np.asarray(st.field_t) - b_ref
        # What rounding leaves of a field equal to the reference is no field at all.
        scale = max(float(np.linalg.norm(st.field_t)), float(np.linalg.norm(b_ref)))
        seen = np.where(np.abs(seen) <= 1e-12 * scale, 0.0, seen)
        beta = float(unknown[k]) + st.steel_spread_t * float(np.hypot(h, z))
        if st.steel_matrix is not None:
            # Steel items: the disturbance turns with the Earth's field (deviation.physics.
            # soft_iron.level_disturbance), drawn for the worst choice of switching and band.
            absolute = st.steel_absolute_matrix if reference else None
            figure, band, unadjusted = _steel_curve(st, h, z, headings, beta, scalar, absolute)
            curve_figure, curve_band, _ = _steel_curve(st, h, z, curve, beta, scalar, None)
            compass = (np.round(heading.compass_from_magnetic(headings, figure), 9) % 360.0
                       if sensor.kind not in NOT_STEERED and not scalar else None)
            seen = np.asarray(st.steel_fixed_t)
        elif scalar:
            figure = _total_field_nt(seen, h, z, headings)
            curve_figure = _total_field_nt(seen, h, z, curve)
            band = np.full(len(headings), beta / TESLA_PER_NT)
            curve_band = np.full(len(curve), beta / TESLA_PER_NT)
            compass = unadjusted = None
        else:
            figure = heading.deviation_deg(seen, h, headings)
            curve_figure = heading.deviation_deg(seen, h, curve)
            band = _band_deg(seen, beta, h, headings)
            curve_band = _band_deg(seen, beta, h, curve)
            # A heading within rounding of 360 is steered as 000.
            compass = (np.round(heading.compass_from_magnetic(headings, figure), 9) % 360.0
                       if sensor.kind not in NOT_STEERED else None)
            unadjusted = heading.deviation_deg(st.field_t, h, headings) if reference else None
        states.append(CardState(
            st.state, frozen_array(headings), frozen_array(figure), frozen_array(band),
            None if compass is None else frozen_array(compass),
            None if unadjusted is None else frozen_array(unadjusted), frozen_array(seen), beta,
            st.held, st.status, st.overwhelmed, frozen_array(curve),
            frozen_array(curve_figure), frozen_array(curve_band), plan.condition(st.state),
            level_limit(plan, sensor, st), st.used, tuple(st.switched_on)))
    return Card(sensor, tuple(states), plan.site.profile, step_deg)


def cards(analysis, step_deg=None, sensor_name=None) -> tuple[Card, ...]:
    """Cards of every sensor (or of one, by name)."""
    chosen = analysis.sensors if sensor_name is None else (analysis.sensor(sensor_name),)
    return tuple(deviation_card(analysis, result, step_deg) for result in chosen)
