"""``deviation clearance``: how far from a compass a cable must run, before any plan exists."""

from __future__ import annotations

import math

import click

from .common import (
    CommandProblem,
    console_for,
    echo_json,
    json_option,
    library_errors,
    main,
    width_option,
)

#: Defaults of the pair's centre spacing and the twist's lay length [m] (common practice, no
#: source: two small boat cables side by side, about 20 twists per metre).
DEFAULT_SPACING_M = 0.005
DEFAULT_LAY_M = 0.05
#: Units the table may be printed in, and the unit of a bare --spacing or --lay number in each.
TABLE_UNITS = {"m": "mm", "ft": "in"}


def _currents(text):
    from ..physics.clearance import DEFAULT_CURRENTS_A

    if text is None:
        return list(DEFAULT_CURRENTS_A)
    currents = []
    for part in text.split(","):
        try:
            value = float(part.strip().removesuffix("A").removesuffix("a").strip())
        except ValueError:
            value = math.nan
        if not (math.isfinite(value) and value > 0):
            raise click.BadParameter(f'"{part.strip()}" is not a current of more than zero '
                                     "amperes; give a list such as 1,5,10,50",
                                     param_hint="--currents")
        currents.append(value)
    return currents


def _length(text, bare_unit, name):
    from ..units import UnitError, parse_length

    try:
        value = parse_length(text, bare_unit)
    except UnitError as error:
        raise click.BadParameter(str(error), param_hint=name) from None
    if not value > 0:
        raise click.BadParameter(f'"{text}" must be more than zero', param_hint=name)
    return value


def _field(latitude, longitude, date, altitude_m, horizontal_ut):
    """(H [T], the model's SiteField or None, zone)."""
    from .. import api
    from ..physics.geomag import zone_of

    by_place = latitude is not None or longitude is not None
    if by_place and horizontal_ut is not None:
        raise CommandProblem("give either --lat and --lon (the field from WMM2025) or "
                             "--horizontal-ut (a measured field), not both")
    if horizontal_ut is not None:
        if date is not None or altitude_m is not None:
            raise CommandProblem("--date and --altitude-m go with --lat and --lon; a given "
                                 "--horizontal-ut needs neither")
        return horizontal_ut * 1e-6, None, zone_of(horizontal_ut * 1e3)
    if latitude is None or longitude is None:
        raise CommandProblem("give --lat and --lon (the field from WMM2025), or --horizontal-ut "
                             "(the horizontal field in µT, e.g. measured on site)")
    when = float(date) if date and date.replace(".", "", 1).isdigit() else date
    try:
        site = api.site_field(latitude, longitude, when, altitude_m or 0.0)
    except ValueError as error:
        from ..physics.geomag import OutsideModelError

        if isinstance(error, OutsideModelError):
            raise
        raise click.BadParameter(f'"{date}" is not a date (YYYY-MM-DD or a decimal year)',
                                 param_hint="--date") from None
    return site.horizontal_t, site, site.zone


def assumptions(table, unit):
    """What each column assumes, in words, one sentence each."""
    from ..physics.clearance import TWIST_ATTENUATION_DB, TWIST_VERIFIED_LAYS
    from ..units import format_length

    spacing = format_length(table.spacing_m, unit)
    lay = format_length(table.lay_m, unit)
    reach = format_length(TWIST_VERIFIED_LAYS * table.lay_m, unit)
    return (
        "Every column: one long straight cable alone, the compass level, at the worst heading "
        "(deviation asin(b/H), largest when the cable's field is at right angles to the field "
        "the compass sees); the budget is taken as this one cable's whole allowance.",
        "single conductor: a conductor whose return is far away (a separate route, or a hull or "
        "chassis return); the distance is from its axis, by µ0 I / (2π r).",
        f"pair: supply and return side by side at {spacing} centres, at the pair's worst "
        "orientation about its axis (the compass in the plane of the two conductors); the "
        "distance is from the pair's centre line.",
        f"twisted pair: the twisted middle of a run of {lay} lay, on a cautious model: the "
        f"field falls exponentially towards {TWIST_ATTENUATION_DB:g} dB below the pair's at "
        f"{TWIST_VERIFIED_LAYS:g} lay lengths ({reach}), the farthest distance measured (Moser "
        f"and Spencer 1968), and stays at that {TWIST_ATTENUATION_DB:g} dB floor beyond.",
        "The untwisted ends of a twisted run (at lugs, breakers and terminals) count as a pair: "
        "keep them at the pair's distance.",
    )


@main.command()
@click.option("--lat", "latitude", type=click.FloatRange(-90, 90), default=None,
              help="Latitude in decimal degrees, north positive (with --lon: H from WMM2025).")
@click.option("--lon", "longitude", type=click.FloatRange(-180, 360), default=None,
              help="Longitude in decimal degrees, east positive.")
@click.option("--date", default=None,
              help="With --lat/--lon: YYYY-MM-DD or a decimal year such as 2027.5 (default: "
                   "today).")
@click.option("--altitude-m", type=float, default=None,
              help="With --lat/--lon: height above the WGS-84 ellipsoid in metres (default 0).")
@click.option("--horizontal-ut", type=click.FloatRange(0, 100, min_open=True), default=None,
              help="Or: the horizontal field H in µT (e.g. measured on site).")
@click.option("--budget-deg", type=float, required=True,
              help="Deviation the compass may take from this cable, degrees (more than 0, less "
                   "than 90).")
@click.option("--currents", default=None, metavar="A,A,...",
              help="Currents in amperes, one row each (default 1,2,5,10,20,50,100,200,500).")
@click.option("--spacing", default=None,
              help="Centre spacing of the pair's two conductors, e.g. 5mm or 0.2in; a bare "
                   "number is mm (in with --units ft). Default 5 mm.")
@click.option("--lay", default=None,
              help="Length of one full twist of the twisted pair, e.g. 50mm or 2in; a bare "
                   "number is mm (in with --units ft). Default 50 mm.")
@click.option("--units", "unit", type=click.Choice(tuple(TABLE_UNITS)), default="m",
              show_default=True, help="Units of the printed distances.")
@json_option
@width_option
@library_errors
def clearance(latitude, longitude, date, altitude_m, horizontal_ut, budget_deg, currents,
              spacing, lay, unit, as_json, width):
    """How far from a compass a cable must run to stay within a deviation budget.

    Prints, per current, the least distance for a single conductor, a pair at the given spacing
    and a twisted pair, from the horizontal field at the site (WMM2025 at --lat/--lon, or
    --horizontal-ut) and the budget. A rule of thumb before the plan exists: the plan's own check
    counts every cable, its route and the equipment together.

    Exit status: 0, or 2 for a wrong command line.
    """
    from ..physics.clearance import allowed_field_t, clearance_table

    horizontal_t, site, zone = _field(latitude, longitude, date, altitude_m, horizontal_ut)
    try:
        allowed_field_t(budget_deg, horizontal_t)
    except ValueError as error:
        raise click.BadParameter(str(error), param_hint="--budget-deg") from None
    bare = TABLE_UNITS[unit]
    spacing_m = (_length(spacing, bare, "--spacing") if spacing is not None
                 else DEFAULT_SPACING_M)
    lay_m = _length(lay, bare, "--lay") if lay is not None else DEFAULT_LAY_M
    table = clearance_table(_currents(currents), budget_deg, horizontal_t, spacing_m, lay_m)
    notes = assumptions(table, unit)
    if as_json:
        from dataclasses import asdict

        from ..render.words import CAUTIONS

        echo_json({
            "horizontal_ut": round(horizontal_t * 1e6, 6),
            "field_source": "WMM2025" if site is not None else "given",
            "site": site.to_dict() if site is not None else None,
            "zone": zone, "budget_deg": table.budget_deg,
            "allowed_ut": round(table.allowed_t * 1e6, 6),
            "spacing_m": table.spacing_m, "lay_m": table.lay_m,
            "rows": [asdict(row) for row in table],
            "assumptions": list(notes), "cautions": list(CAUTIONS)})
        return
    from ..render.terminal import render_clearance

    if site is not None:
        source = (f"WMM2025 at {site.latitude_deg:.4f}°, {site.longitude_deg:.4f}°, "
                  f"{site.altitude_m:g} m, {site.date_text}")
    else:
        source = "as given"
    from types import SimpleNamespace

    from ..render.words import zone_warning

    render_clearance(table, console_for(width), unit, source, notes,
                     zone_warning(site or SimpleNamespace(zone=zone)))
