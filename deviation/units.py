"""Lengths with units, and conductor sizes (AWG and mm²) with their default pair spacing."""

from __future__ import annotations

import math
import re

#: Metres per unit.
LENGTH_UNITS = {"m": 1.0, "cm": 0.01, "mm": 0.001, "ft": 0.3048, "in": 0.0254}
IMPERIAL = ("ft", "in")

_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_WITH_UNIT = re.compile(rf"^\s*({_NUMBER})\s*(mm|cm|m|ft|in|'|\"|feet|foot|inch|inches)?\s*$", re.I)
_FEET_INCHES = re.compile(rf"^\s*([-+]?)\s*({_NUMBER})\s*(?:'|ft)\s*({_NUMBER})\s*(?:\"|in)\s*$", re.I)
_ALIASES = {"'": "ft", '"': "in", "feet": "ft", "foot": "ft", "inch": "in", "inches": "in"}


class UnitError(ValueError):
    """A length or size that cannot be read; the message says what was expected."""


def parse_length(text, default_unit="m") -> float:
    """A length in metres from ``1.2 m``, ``35 cm``, ``850 mm``, ``4 ft``, ``18 in``, ``2'6"``.

    A bare number is in ``default_unit``.
    """
    if isinstance(text, bool):
        raise UnitError(f"{text!r} is not a length")
    if isinstance(text, (int, float)):
        value = float(text)
        if not math.isfinite(value):
            raise UnitError(f"{text!r} is not a finite length")
        return value * LENGTH_UNITS[default_unit]
    raw = str(text).strip()
    match = _FEET_INCHES.match(raw)
    if match:
        sign = -1.0 if match.group(1) == "-" else 1.0
        return sign * (float(match.group(2)) * 0.3048 + float(match.group(3)) * 0.0254)
    match = _WITH_UNIT.match(raw)
    if not match:
        raise UnitError(f'"{raw}" is not a length (e.g. 1.2 m, 35 cm, 850 mm, 4 ft, 18 in, 2\'6")')
    unit = (match.group(2) or default_unit).lower()
    unit = _ALIASES.get(unit, unit)
    value = float(match.group(1)) * LENGTH_UNITS[unit]
    if not math.isfinite(value):
        raise UnitError(f'"{raw}" is not a finite length')
    return value


def format_length(metres: float, unit_system: str) -> str:
    """A length for display in the plan's unit system (metric: m or mm; imperial: ft or in)."""
    if metres == 0:
        return "0 in" if unit_system in IMPERIAL else "0 mm"
    if unit_system in IMPERIAL:
        inches = metres / 0.0254
        if abs(inches) < 1:
            return f"{inches:.2f} in"
        return f"{inches:.1f} in" if abs(inches) < 24 else f"{inches / 12:.2f} ft"
    if abs(metres) < 0.01:
        return f"{metres * 1000:.1f} mm"
    return f"{metres * 1000:.0f} mm" if abs(metres) < 1 else f"{metres:.2f} m"


def awg_diameter_mm(gauge: int) -> float:
    """Bare conductor diameter of an AWG gauge; 0, 00, 000, 0000 are given as 0, -1, -2, -3.

    References
    ----------
    ASTM B258: d = 0.127 mm x 92^((36 - n)/39).
    """
    return 0.127 * 92 ** ((36 - gauge) / 39)


#: Insulated outer diameter of single-core boat cable [mm], from memory (±15 %), by AWG gauge.
AWG_OUTER_DIAMETER_MM = {16: 3.0, 14: 3.3, 12: 3.8, 10: 4.3, 8: 6.6, 6: 7.6, 4: 8.9, 2: 10.4,
                         1: 11.4, 0: 12.4, -1: 13.5, -2: 14.7, -3: 16.3}
#: Insulated outer diameter of metric flexible single core [mm], from memory (±15 %), by mm².
METRIC_OUTER_DIAMETER_MM = {1.5: 3.1, 2.5: 3.7, 4: 4.4, 6: 5.0, 10: 6.6, 16: 8.0, 25: 9.8,
                            35: 11.3, 50: 13.5, 70: 15.6, 95: 18.0}

_AWG = re.compile(r"^\s*(\d{1,2}|[1-4]/0|0{1,4})\s*(?:awg|ga|gauge)\s*$", re.I)
_METRIC = re.compile(rf"^\s*({_NUMBER})\s*(?:mm2|mm²|mm\^2|sq\s*mm|sqmm)\s*$", re.I)


def _gauge(text):
    if "/" in text:
        return 1 - int(text.split("/")[0])          # 1/0 -> 0, 2/0 -> -1, ...
    if set(text) == {"0"}:
        return 1 - len(text)                         # 0 -> 0, 00 -> -1, ...
    return int(text)


def conductor_size(text):
    """Read a size: ``10 AWG``, ``2/0 AWG``, ``16 mm2``.

    Returns
    -------
    (label, bare_diameter_m, outer_diameter_m)
        The outer (insulated) diameter is the default centre spacing of a pair; it is
        interpolated in the tables above (log-log) for sizes between their rows.
    """
    raw = str(text).strip()
    match = _AWG.match(raw)
    if match:
        gauge = _gauge(match.group(1))
        if not -3 <= gauge <= 40:
            raise UnitError(f'"{raw}" is not an AWG size between 4/0 and 40')
        bare = awg_diameter_mm(gauge)
        outer = _interpolate(AWG_OUTER_DIAMETER_MM, gauge, bare, by_gauge=True)
        return raw, bare / 1000, outer / 1000
    match = _METRIC.match(raw)
    if match:
        area = float(match.group(1))
        if not 0.05 <= area <= 1000:
            raise UnitError(f'"{raw}" is not a conductor cross-section between 0.05 and 1000 mm²')
        bare = 2 * math.sqrt(area / math.pi)
        outer = _interpolate(METRIC_OUTER_DIAMETER_MM, area, bare, by_gauge=False)
        return raw, bare / 1000, outer / 1000
    raise UnitError(f'"{raw}" is not a conductor size (e.g. 10 AWG, 2/0 AWG, 16 mm2)')


def _interpolate(table, key, bare_mm, by_gauge):
    """Outer diameter from a table; outside it, the nearest row's insulation thickness is kept."""
    if key in table:
        return table[key]
    keys = sorted(table)
    # Work in bare diameter, which is monotonic for both tables.
    bare_of = (lambda k: awg_diameter_mm(k)) if by_gauge else (lambda k: 2 * math.sqrt(k / math.pi))
    points = sorted((bare_of(k), table[k]) for k in keys)
    if bare_mm <= points[0][0]:
        return bare_mm + (points[0][1] - points[0][0])
    if bare_mm >= points[-1][0]:
        return bare_mm + (points[-1][1] - points[-1][0])
    for (x0, y0), (x1, y1) in zip(points, points[1:]):
        if x0 <= bare_mm <= x1:
            w = (math.log(bare_mm) - math.log(x0)) / (math.log(x1) - math.log(x0))
            return math.exp(math.log(y0) + w * (math.log(y1) - math.log(y0)))
    raise AssertionError("unreachable")
