"""Lengths with units, and conductor sizes (AWG and mm²) with their default pair spacing."""

from __future__ import annotations

import math
import re

#: Metres per unit.
LENGTH_UNITS = {"m": 1.0, "cm": 0.01, "mm": 0.001, "ft": 0.3048, "in": 0.0254}
IMPERIAL = ("ft", "in")

_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_UNSIGNED = r"(?:\d+(?:\.\d*)?|\.\d+)"
# Feet and inch marks as typed, and as spreadsheets and word processors "smarten" them
# (right single/double quotation marks, primes); two apostrophes are often typed for inches.
_FOOT_MARK = r"(?:'|\u2019|\u2032|ft\.?|feet|foot)"
_INCH_MARK = r"(?:\"|''|\u201d|\u2033|in\.?|inch|inches)"
_WITH_UNIT = re.compile(rf"^\s*({_NUMBER})\s*(mm|cm|m|ft|in|''|'|\"|\u2019|\u2032|\u201d|\u2033|"
                        r"feet|foot|inch|inches)?\s*$", re.I)
# Inches as a whole or decimal number, a fraction, or both: 6, 6.5, 1/2, 6 1/2 (or 6-1/2).
_INCHES = rf"(?:({_UNSIGNED})(?:(?:\s+|-)(\d+)/(\d+))?|(\d+)/(\d+))"
# After the sign: 2'-6", 2' 6", 2'6", 2 ft 6 in, 2'-6 1/2"; the dash after the foot mark only
# separates feet from inches; after a foot mark the inch mark may be left out (2'6).
_FEET_THEN_INCHES = re.compile(
    rf"^({_UNSIGNED})\s*{_FOOT_MARK}(?:\s*-?\s*{_INCHES}\s*{_INCH_MARK}?)?$", re.I)
_INCHES_ALONE = re.compile(rf"^{_INCHES}\s*{_INCH_MARK}$", re.I)
_ALIASES = {"'": "ft", '"': "in", "feet": "ft", "foot": "ft", "inch": "in", "inches": "in",
            "''": "in", "\u2019": "ft", "\u2032": "ft", "\u201d": "in", "\u2033": "in"}


class UnitError(ValueError):
    """A length or size that cannot be read; the message says what was expected."""


def parse_length(text, default_unit="m") -> float:
    """A length in metres from ``1.2 m``, ``35 cm``, ``850 mm``, ``4 ft``, ``18 in``, ``2'-6"``.

    Feet and inches are read as the trade writes them: ``2'-6"``, ``2' 6"``, ``2'6"``,
    ``2 ft 6 in``, ``6"``, ``2'``, fractions of an inch (``6 1/2"``, ``2'-6 1/2"``, ``1/2"``). The
    dash after the foot mark separates feet from inches; only a sign in front makes the whole
    length negative (``-2'-6"`` is -30 in).

    Parameters
    ----------
    text : str or float
        The length as written; a bare number is in ``default_unit``.
    default_unit : str
        One of ``LENGTH_UNITS``.

    Returns
    -------
    float
        The length [m].

    References
    ----------
    1 in = 0.0254 m and 1 ft = 12 in exactly (international yard and pound agreement, 1959).
    """
    if isinstance(text, bool):
        raise UnitError(f"{text!r} is not a length")
    if isinstance(text, (int, float)):
        value = float(text)
        if not math.isfinite(value):
            raise UnitError(f"{text!r} is not a finite length")
        return value * LENGTH_UNITS[default_unit]
    raw = str(text).strip()
    match = _WITH_UNIT.match(raw)
    if not match:
        metres = _feet_and_inches_m(raw)
        if metres is not None and not math.isfinite(metres):
            raise UnitError(f'"{raw}" is not a finite length')
        if metres is not None:
            return metres
        raise UnitError(f'"{raw}" is not a length (e.g. 1.2 m, 35 cm, 850 mm, 4 ft, 18 in, 2\'6")')
    unit = (match.group(2) or default_unit).lower()
    unit = _ALIASES.get(unit, unit)
    value = float(match.group(1)) * LENGTH_UNITS[unit]
    if not math.isfinite(value):
        raise UnitError(f'"{raw}" is not a finite length')
    return value


#: What separates the dimensions of an item: 600 x 400 x 500 mm, 0.6 m × 0.4 m, 1.2 m by 60 mm.
_TIMES = re.compile(r"\s*(?:[x×*]|\bby\b)\s*", re.I)
_TRAILING_UNIT = re.compile(r"^(.*?\d\.?)\s*(mm|cm|m|ft|in)\s*$", re.I)


def parse_sizes(text, default_unit="m") -> tuple[float, ...]:
    """Dimensions of an item in metres from ``600 x 400 x 500 mm``, ``0.6 m x 40 cm``, ``2'6" x 1'``.

    Parameters
    ----------
    text : str or float
        One or more lengths separated by ``x``, ``×``, ``*`` or ``by``. Each may carry its own
        unit; a unit written only after the last one applies to every bare number before it
        (the trade writes ``600 x 400 x 500 mm``); bare numbers otherwise are in
        ``default_unit``.
    default_unit : str

    Returns
    -------
    tuple of float [m]

    Raises
    ------
    UnitError
        A part that is not a length (the message names it).
    """
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        return (parse_length(text, default_unit),)
    raw = str(text).strip()
    parts = [p for p in _TIMES.split(raw)]
    if not raw or any(not p.strip() for p in parts):
        raise UnitError(f'"{raw}" is not a list of sizes (e.g. 600 x 400 x 500 mm, 1.2 m x 60 mm)')
    unit = default_unit
    last = _TRAILING_UNIT.match(parts[-1])
    if len(parts) > 1 and last and all(is_bare_number(p) for p in parts[:-1]):
        unit = last.group(2).lower()
    out = []
    for part in parts:
        try:
            out.append(parse_length(part, unit))
        except UnitError:
            raise UnitError(f'"{part.strip()}" in "{raw}" is not a length (sizes are written '
                            'e.g. 600 x 400 x 500 mm or 1.2 m x 60 mm)') from None
    return tuple(out)


def is_bare_number(text) -> bool:
    """Whether a cell is a number with no unit (read in the sheet's default unit)."""
    if isinstance(text, bool):
        return False
    if isinstance(text, (int, float)):
        return True
    return re.fullmatch(rf"\s*{_NUMBER}\s*", str(text)) is not None


def _feet_and_inches_m(raw):
    """Metres from feet and inches as the trade writes them, or None if ``raw`` is not that.

    Total inches times 0.0254 m (exact by definition), so 2'-6" is 30 in = 0.762 m exactly.
    """
    sign = -1.0 if raw.startswith("-") else 1.0
    body = raw[1:].lstrip() if raw[:1] in ("+", "-") else raw
    feet = 0.0
    match = _FEET_THEN_INCHES.match(body)
    if match:
        feet, inch_groups = float(match.group(1)), match.groups()[1:]
    else:
        match = _INCHES_ALONE.match(body)
        if not match:
            return None
        inch_groups = match.groups()
    whole, numerator, denominator, alone_numerator, alone_denominator = inch_groups
    numerator, denominator = numerator or alone_numerator, denominator or alone_denominator
    if denominator is not None and int(denominator) == 0:
        return None
    inches = float(whole) if whole else 0.0
    if denominator is not None:
        inches += int(numerator) / int(denominator)
    return sign * (feet * 12 + inches) * LENGTH_UNITS["in"]


def format_length(metres: float, unit_system: str) -> str:
    """A length for display in the plan's unit system (metric: m or mm; imperial: ft or in).

    Metric: under 10 mm with one decimal (``4.3 mm``), under 1 m in whole millimetres
    (``250 mm``), else metres with two decimals (``2.50 m``). Imperial: under 1 in with two
    decimals, under 24 in with one, else feet with two. The band is chosen by the value as
    shown, so a length never reads ``10.0 mm`` beside ``10 mm`` or ``1000 mm`` beside ``1.00 m``;
    and whatever shows as zero is written one way, ``0 mm`` or ``0 in`` (never ``0.0 mm`` or
    ``-0.00 in``).
    """
    if unit_system in IMPERIAL:
        inches = metres / LENGTH_UNITS["in"]
        size = abs(inches)
        if round(size, 2) == 0:
            return "0 in"
        if round(size, 2) < 1:
            return f"{inches:.2f} in"
        return f"{inches:.1f} in" if round(size, 1) < 24 else f"{inches / 12:.2f} ft"
    millimetres = metres * 1000
    size = abs(millimetres)
    if round(size, 1) == 0:
        return "0 mm"
    if round(size, 1) < 10:
        return f"{millimetres:.1f} mm"
    return f"{millimetres:.0f} mm" if round(size) < 1000 else f"{metres:.2f} m"


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

#: The tables above are from memory (±15 %): a given pair spacing is taken as closer than the
#: conductors' own diameter only below (1 - this) times the tabulated outer diameter.
OUTER_DIAMETER_TOLERANCE = 0.15

#: Allowable continuous current of one copper conductor with 105 °C insulation outside engine
#: spaces [A], by AWG gauge (0, 00, 000, 0000 as 0, -1, -2, -3). Source: 33 CFR 183.425 Table 5,
#: "Allowable amperage of conductors", 105 °C column (U.S. Coast Guard; ABYC E-11 tabulates the
#: same figures). 105 °C is the usual rating of boat cable; engine spaces allow 0.85 of these.
AWG_AMPACITY_105C_A = {18: 20, 16: 25, 14: 35, 12: 45, 10: 60, 8: 80, 6: 120, 4: 160, 3: 180,
                       2: 210, 1: 245, 0: 285, -1: 330, -2: 385, -3: 445}
#: A run whose largest current is more than this many times its size's allowable continuous
#: current is taken as a mistake in the plan (a slipped digit, milliamperes written as amperes, the
#: wrong size), not a load. 33 CFR 183.425(b) exempts "intermittent surges" from the table, and a
#: windlass or thruster start draws a few times its running current for a second or two, so the
#: factor leaves room for short peaks. The factor 3 is common practice, no source.
OVERCURRENT_FACTOR = 3.0

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


def allowable_current_a(bare_diameter_m: float) -> float:
    """Allowable continuous current of a copper conductor of this bare diameter [A].

    Parameters
    ----------
    bare_diameter_m : float
        Diameter of the copper cross-section [m] (as :func:`conductor_size` returns it).

    Returns
    -------
    float
        The 105 °C figure of ``AWG_AMPACITY_105C_A`` for an AWG size in the table; other sizes
        (metric ones, odd gauges) are read on the same table by cross-section, log-log between
        its rows and along its end rows' slope beyond them.

    References
    ----------
    33 CFR 183.425 Table 5 (allowable amperage of conductors); AWG cross-sections from ASTM B258.
    """
    area = math.pi / 4 * (bare_diameter_m * 1000) ** 2
    points = sorted((math.pi / 4 * awg_diameter_mm(g) ** 2, amps)
                    for g, amps in AWG_AMPACITY_105C_A.items())
    for row_area, amps in points:
        if math.isclose(area, row_area, rel_tol=1e-9):
            return float(amps)
    if area < points[0][0]:
        (x0, y0), (x1, y1) = points[0], points[1]
    elif area > points[-1][0]:
        (x0, y0), (x1, y1) = points[-2], points[-1]
    else:
        (x0, y0), (x1, y1) = next((a, b) for a, b in zip(points, points[1:])
                                  if a[0] <= area <= b[0])
    slope = math.log(y1 / y0) / math.log(x1 / x0)
    return y0 * (area / x0) ** slope
