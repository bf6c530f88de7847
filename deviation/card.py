"""The predicted deviation card: deviation at every few degrees of magnetic heading, per state."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .physics import heading
from .plan import frozen_array

#: Heading step of the curves drawn in plots [deg].
CURVE_STEP_DEG = 1.0


@dataclass(frozen=True)
class CardState:
    state: str
    headings_deg: np.ndarray          # magnetic headings
    deviation_deg: np.ndarray         # what the sensor shows: east positive, level
    compass_deg: np.ndarray           # compass heading to steer for each magnetic heading
    unadjusted_deg: np.ndarray | None # for an adjusted sensor: the deviation before adjustment
    field_t: np.ndarray               # (3,) the field the card is drawn from (residual if adjusted)
    curve_headings_deg: np.ndarray    # every CURVE_STEP_DEG, for plots
    curve_deviation_deg: np.ndarray


@dataclass(frozen=True)
class Card:
    sensor: object
    states: tuple[CardState, ...]

    @property
    def steers(self) -> bool:
        """A heading to steer means something for a compass, not for a survey magnetometer."""
        return self.sensor.kind != "magnetometer"

    def to_frame(self):
        """One row per magnetic heading and state."""
        import pandas

        return pandas.DataFrame([{
            "sensor": self.sensor.name, "state": st.state, "magnetic_deg": float(psi),
            "deviation_deg": float(st.deviation_deg[i]),
            "compass_deg": float(st.compass_deg[i]) if self.steers else None,
            "unadjusted_deg": None if st.unadjusted_deg is None else float(st.unadjusted_deg[i])}
            for st in self.states for i, psi in enumerate(st.headings_deg)])


def deviation_card(analysis, sensor_result, step_deg=15.0) -> Card:
    """The card of one sensor: for each state, deviation at every ``step_deg`` of magnetic heading.

    Parameters
    ----------
    analysis : Analysis
    sensor_result : SensorResult
    step_deg : float [deg]
        Spacing of magnetic headings, dividing 360.

    Returns
    -------
    Card

    Notes
    -----
    The level deviation :math:`\\delta(\\psi) = \\operatorname{atan2}(b_E, H + b_N)`, east
    positive; Compass = Magnetic - Deviation. For a sensor adjusted in a reference state, b is the
    residual b_state - b_ref that the correctors or the calibration leave, so the card is the one
    to steer by after adjustment; the unadjusted deviation is kept beside it. Bounds of unknown
    direction (labelled safe distances, magnets of unknown orientation) have no heading
    dependence to draw and are not in the card; they are in the budget.

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (Pub. 226); Magnetic = Compass + Deviation
    (standard navigation practice).
    """
    headings = np.arange(0.0, 360.0, step_deg)
    curve = np.arange(0.0, 360.0 + CURVE_STEP_DEG / 2, CURVE_STEP_DEG)
    h = analysis.site.horizontal_t
    reference = sensor_result.sensor.reference_state
    b_ref = sensor_result.state(reference).field_t if reference else np.zeros(3)
    states = []
    for st in sensor_result.states:
        seen = np.asarray(st.field_t) - b_ref
        deviation = heading.deviation_deg(seen, h, headings)
        unadjusted = heading.deviation_deg(st.field_t, h, headings) if reference else None
        states.append(CardState(
            st.state, frozen_array(headings), frozen_array(deviation),
            frozen_array(heading.compass_from_magnetic(headings, deviation)),
            None if unadjusted is None else frozen_array(unadjusted), frozen_array(seen),
            frozen_array(curve), frozen_array(heading.deviation_deg(seen, h, curve))))
    return Card(sensor_result.sensor, tuple(states))


def cards(analysis, step_deg=15.0, sensor_name=None) -> tuple[Card, ...]:
    """Cards of every sensor (or of one, by name)."""
    chosen = analysis.sensors if sensor_name is None else (analysis.sensor(sensor_name),)
    return tuple(deviation_card(analysis, result, step_deg) for result in chosen)
