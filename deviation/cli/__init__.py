"""Command line: thin commands that parse, call one library function and render.

Each command lives in its own module here. Heavy modules (numpy, rich, openpyxl, matplotlib,
numba) are imported inside the commands, so that ``deviation --help`` answers at once.
"""

from __future__ import annotations

# The commands register themselves on main.
from . import (  # noqa: F401
    area,
    card,
    check,
    clearance,
    deflection,
    electronic,
    new,
    per_amp,
    refit,
    site,
    spot,
    swing,
    swing_state,
    test_results,
    test_sheet,
    verify,
)
from .common import main  # noqa: F401  (the entry point)

if __name__ == "__main__":  # pragma: no cover
    main()
