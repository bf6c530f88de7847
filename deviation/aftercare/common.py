"""What the after-installation sheets share: thresholds, the readings error, the plan's fields at a
sensor."""

from __future__ import annotations

import numpy as np

from .. import checking
from ..budget import item_effect
from ..errors import DeviationError
from ..plan import Plan
from ..sheets import MAX_ROWS, MAX_WORKBOOK_BYTES  # noqa: F401  (the limits of every sheet)

#: The starting state of a switch-on test in which every circuit is off.
ALL_OFF = "all off"

#: Reading resolution of a typical compass card [deg] (common practice, no source): a change
#: smaller than this cannot be told from the card's graduation and the eye.
READING_RESOLUTION_DEG = 0.5
#: Share of the predicted change an observed change may differ by before a circuit is named
#: (common practice, no source): currents at the berth and cable positions vary this much.
CHANGE_FRACTION = 0.25
#: Change of the deviation card, at any heading, beyond which a new swing is advised [deg]
#: (common practice, no source).
SWING_THRESHOLD_DEG = 1.0
#: Change of the site's horizontal field H, or of the ratio Z/H that sets the induced part of
#: coefficient B (NGA Pub. 226), beyond which a new site is "a different geographic location with
#: a major change" (FAA AC 43.13-1B CHG 1, par. 12-37a(8), which gives no figure): a share of the
#: earlier value (rule of thumb, no published source).
LOCATION_FIELD_CHANGE = 0.2
#: A change of reading below this is shown as no visible change [deg] (a tenth of the card's
#: resolution).
NO_VISIBLE_CHANGE_DEG = 0.05

#: Largest deviation a reading may show [deg]: a compass whose card lies more than a right angle
#: from the magnetic heading points nowhere useful, so a reading that far off is a slip of the
#: pen or of the heading (rule of thumb, no published source).
MAX_READ_DEVIATION_DEG = 90.0

TEST_SHEET = "switch-on test"
SETTINGS_SHEET = "switch-on settings"
SWING_SHEET = "swing"


class ReadingsError(DeviationError):
    """A readings sheet with problems; ``findings`` lists all of them, each located."""

    def __init__(self, findings):
        self.findings = tuple(findings)
        super().__init__("\n".join(str(f) for f in self.findings))




def _checked(plan, analysis=None):
    return analysis if analysis is not None else checking.check_plan(plan, remedies=False)


def _items_field(plan, sensor, horizontal_t, present):
    """Vector field of the oriented items for which ``present(item)`` is true [T], and the names
    of the present items whose direction is not known (bounds only)."""
    total = np.zeros(3)
    unknown = []
    for item in plan.equipment:
        if not present(item):
            continue
        field, _bound, _ = item_effect(item, sensor.position_m[None, :], horizontal_t)
        if field is None:
            unknown.append(item.name)
        else:
            total += field[0]
    return total, tuple(unknown)


def circuit_fields_t(plan: Plan, sensor_result) -> np.ndarray:
    """Field of each circuit at unit current at a sensor, (C, 3) [T/A]: the sum of the runs that
    carry it (a run may carry several circuits; its field per ampere is the same for each)."""
    return plan.circuit_matrix.T @ np.asarray(sensor_result.unit_fields_t)


