"""After installation: the switch-on test at the berth, the swing, and refits, over a plan.

Once the cables are in, each load is switched on alone at the berth while someone watches the
compass; later the compass is swung and the swing worked into the approximate coefficients A-E.
This module predicts the first, reads both back, and sets the plan's figures beside what was
observed:

* :func:`switch_on_test` predicts the change of the compass reading when each circuit alone,
  and each operating state, is switched on at the berth; :func:`read_switch_on_results` reads the
  filled-in sheet back and names the circuits whose change differs (probable routing errors).
* :func:`read_swing` and :func:`swing_comparison` fit the approximate coefficients to a swing per
  state and set the plan's own coefficients beside them.
* :func:`reference_choices` ranks the states a sensor could be adjusted and swung in.
* :func:`deflection_item` turns a hand-bearing compass's deflection by an item into a moment
  for the plan's equipment sheet (Gauss's method).
* :func:`refit` compares a plan with its earlier version and says whether a new swing is due.

Everything here works through the public API (:mod:`deviation.api`), the budget's own rules
(:mod:`deviation.budget`) and the pure functions of :mod:`deviation.physics.swing` and
:mod:`deviation.physics.heading`; a wrong cell in a file it reads is located by file, sheet, row and
column.
"""

from __future__ import annotations

from .common import (  # noqa: F401
    ALL_OFF,
    CHANGE_FRACTION,
    MAX_ROWS,
    MAX_WORKBOOK_BYTES,
    NO_VISIBLE_CHANGE_DEG,
    READING_RESOLUTION_DEG,
    SETTINGS_SHEET,
    SWING_SHEET,
    SWING_THRESHOLD_DEG,
    TEST_SHEET,
    ReadingsError,
    circuit_fields_t,
)
from .deflection import (  # noqa: F401
    deflection_item,
)
from .readings import (  # noqa: F401
    Table,
    canonical,
    read_table,
)
from .refit import (  # noqa: F401
    Change,
    Difference,
    Refit,
    RefitNote,
    StateRefit,
    refit,
)
from .swing import (  # noqa: F401
    ReferenceChoice,
    StateChange,
    StateSwing,
    SwingComparison,
    SwingReadings,
    read_swing,
    reference_choices,
    swing_comparison,
)
from .switch_on import (  # noqa: F401
    ResultRow,
    SwitchOnResults,
    SwitchOnRow,
    SwitchOnTest,
    probable_cause,
    read_switch_on_results,
    switch_on_test,
)
