"""The figures held against a sensor's budget, vectorised over positions and states.

One place for every rule that turns fields into the number a budget is judged by: deviation over
all headings, heel and pitch, the change from the reference state, equipment bounds (IEC 60945
compass safe distance, magnets of unknown orientation). ``check``, the advice, the spot search and
the card all use these functions, so they cannot disagree.

Where the plan does not say, the worst case counts: an item of unknown orientation points the
worst way, the attitude is the worst within the stated heel and pitch. Figures that rest on such a
worst case are bounds, and the results say so.
"""


from __future__ import annotations

from .currents import CircuitCurrents, circuit_currents  # noqa: F401
from .equipment import (  # noqa: F401
    OVERWHELMED_DEG,
    EquipmentFields,
    asin_deg,
    equipment_fields,
    item_effect,
    safe_distance_disturbance_t,
)
from .figures import (  # noqa: F401
    TESLA_PER_NT,
    RunFigures,
    SensorFigures,
    adjusting_vertical_t,
    sensor_figures,
)
from .held import (  # noqa: F401
    Figures,
    _attitude_size,
    _held,
    _worst,
    budget_figures,
)
from .runs import (  # noqa: F401
    KNOWN_LIE_TURNS_DEG,
    MAX_EXACT_GENERATORS_ATTITUDE,
    MAX_EXACT_GENERATORS_LEVEL,
    SPREAD_GENERATORS,
    RunParts,
    fields_routed_in_turn,
    nearest_by_run,
    parts_of_runs,
    run_fields_at,
    turn_cover,
    twisted_floor,
)
from .total import (  # noqa: F401
    TotalFieldFigures,
    sensor_field_parts,
    total_field_figures,
)
