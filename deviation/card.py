"""The predicted deviation card: deviation at every few degrees of magnetic heading, per state."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import heading


@dataclass
class CardState:
    state: str
    headings_deg: np.ndarray          # magnetic headings
    deviation_deg: np.ndarray         # east positive, level, from the vector sum
    compass_deg: np.ndarray           # compass heading to steer for each magnetic heading
    change_deg: np.ndarray | None     # deviation minus the reference state's, if any
    field_t: np.ndarray               # (3,) the vessel-frame disturbance the card is drawn from


@dataclass
class Card:
    sensor: object
    states: list


def deviation_card(analysis, sensor_result, step_deg=15.0):
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
    The level deviation from the vessel-fixed vector sum, :math:`\\delta(\\psi) =
    \\operatorname{atan2}(b_E, H + b_N)`, east positive; Compass = Magnetic - Deviation. Bounds of
    unknown direction (labelled safe distances, magnets of unknown orientation) have no heading
    dependence to draw and are not in the card; they are in the budget.

    References
    ----------
    NGA, *Handbook of Magnetic Compass Adjustment* (Pub. 226); Magnetic = Compass + Deviation
    (standard navigation practice).
    """
    headings = np.arange(0.0, 360.0, step_deg)
    h = analysis.site.horizontal_t
    reference = sensor_result.sensor.reference_state
    by_state = {st.state: st for st in sensor_result.states}
    states = []
    for st in sensor_result.states:
        deviation = heading.deviation_deg(st.field_t, h, headings)
        change = None
        if reference:
            change = deviation - heading.deviation_deg(by_state[reference].field_t, h, headings)
            change = (change + 180.0) % 360.0 - 180.0
        states.append(CardState(st.state, headings, deviation,
                                heading.compass_from_magnetic(headings, deviation), change,
                                st.field_t))
    return Card(sensor_result.sensor, states)


def cards(analysis, step_deg=15.0, sensor_name=None):
    """Cards of every sensor (or of one, by name)."""
    from .reader import key

    return [deviation_card(analysis, result, step_deg) for result in analysis.sensors
            if sensor_name is None or key(result.sensor.name) == key(sensor_name)]
