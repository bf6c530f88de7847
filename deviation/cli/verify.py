"""``deviation verify``: the program's own verification against published values."""

from __future__ import annotations

import sys

from .common import console_for, echo_json, json_option, main, width_option


@main.command()
@json_option
@width_option
def verify(as_json, width):
    """Check this install's computations against published values: WMM2025's official test
    values, textbook fields of currents and magnets, a twisted pair against Moser & Spencer,
    IEC 60945's compass safe distance, the compass-adjustment handbook's worked swing and
    Gauss's deflection. One row per value: what, source, expected, computed, difference,
    tolerance, pass. The list with its sources: docs/verification.md.

    Exit status: 0 every row passes, 1 at least one fails.
    """
    from ..verification import verify as run_every_check

    rows = run_every_check()
    if as_json:
        from ..render.verification import verification_json

        echo_json(verification_json(rows))
    else:
        from ..render.verification import render_verification

        render_verification(rows, console_for(width))
    sys.exit(0 if all(row.passed for row in rows) else 1)
