"""What every document shares: lengths in the plan's own unit, figures in the budget's unit,
fields and currents with sensible digits, the site's line and the cautions."""

from __future__ import annotations

import datetime as dt
import math

from ... import __version__
from ...quantities import Unit
from ...units import LENGTH_UNITS
from .. import words
from ..model import Cell, Tone, cell

#: Decimals of a length shown in each unit of a plan: about a millimetre, or a tenth of an inch.
LENGTH_DIGITS = {"m": 3, "cm": 1, "mm": 0, "ft": 2, "in": 1}


def paper_for(plan) -> str:
    """Letter for a plan in feet or inches, A4 for a metric one (a report can be asked for on
    the other)."""
    return "Letter" if plan.site.units in ("ft", "in") else "A4"


def stamp() -> str:
    """When and by what a report was made (paper only)."""
    return f"made {dt.date.today().isoformat()} by deviation {__version__}"


class Lengths:
    """Lengths in one unit for a whole report: the plan's own."""

    def __init__(self, plan):
        self.unit = plan.site.units
        self.scale = LENGTH_UNITS[self.unit]
        self.digits = LENGTH_DIGITS[self.unit]

    def cell(self, metres, *, tone=Tone.PLAIN) -> Cell:
        if metres is None or not math.isfinite(metres):
            return cell(None)
        return cell(metres / self.scale, self.digits, tone=tone)

    def text(self, metres) -> str:
        return f"{self.cell(metres).text} {self.unit}"

    def position(self, position_m) -> str:
        """(x, y, z) in the plan's unit."""
        return ("(" + ", ".join(self.cell(v).text for v in position_m) + f") {self.unit}")


def significant_digits(value, figures=3, most=4) -> int:
    """Decimals that show ``figures`` significant figures of ``value`` (at most ``most``)."""
    if value == 0 or not math.isfinite(value):
        return 0
    return int(min(most, max(0, figures - 1 - math.floor(math.log10(abs(value))))))


def microtesla(value_t, *, bound=False, tone=Tone.PLAIN) -> Cell:
    """A field in µT to three significant figures; an upper bound shown as "≤ 0.35"."""
    value = value_t * 1e6
    return cell(value, significant_digits(value), tone=tone, prefix="≤ " if bound else "")


def field_cell(value_t, unit, *, bound=False, tone=Tone.PLAIN) -> Cell:
    """A field in the unit a sensor's figures are read in: nT beside a budget in nT (a survey
    magnetometer resolves fractions of a nT), else µT; three significant figures."""
    if unit is Unit.NANOTESLA:
        value = value_t * 1e9
        return cell(value, significant_digits(value, most=3), tone=tone,
                    prefix="≤ " if bound else "")
    return microtesla(value_t, bound=bound, tone=tone)


def amperes(value_a) -> Cell:
    """A current: two significant figures under 1 A, one decimal under 100 A, whole above."""
    if value_a is None:
        return cell(None)
    size = abs(value_a)
    digits = 0 if size >= 100 or size == 0 else 1 if size >= 1 else significant_digits(value_a, 2)
    return cell(value_a, digits)


def figure(value, unit, *, overwhelmed=False, tone=Tone.PLAIN, bracket=False,
           sign=True) -> Cell:
    """A figure held against a budget, in its unit: "1.20°", "5.96 nT", or "overwhelmed"
    (``bracket``: a state not held, "(1.20°)"; ``sign``: with the unit after the number)."""
    if value is None:
        return cell(None)
    if unit is Unit.DEGREES and (overwhelmed or value >= words.OVERWHELMED_DEG):
        return Cell(f"({words.OVERWHELMED})" if bracket else words.OVERWHELMED,
                    words.OVERWHELMED, None, tone)
    suffix = unit.symbol if sign else ""
    return cell(value, 2, tone=tone, prefix="(" if bracket else "",
                suffix=suffix + (")" if bracket else ""))


def share(share_of_budget, *, overwhelmed=False, tone=Tone.PLAIN) -> Cell:
    """A share of a budget in per cent ("—" where the figure is overwhelmed)."""
    if overwhelmed:
        return Cell("—", None, None, tone)
    return cell(share_of_budget * 100, 0, tone=tone, suffix=" %")
