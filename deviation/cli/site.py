"""``deviation site``: the local geomagnetic field."""

from __future__ import annotations

import click

from .common import console_for, echo_json, json_option, library_errors, main


@main.command()
@click.option("--lat", "latitude", type=click.FloatRange(-90, 90), required=True,
              help="Latitude in decimal degrees, north positive.")
@click.option("--lon", "longitude", type=click.FloatRange(-180, 360), required=True,
              help="Longitude in decimal degrees, east positive.")
@click.option("--date", default=None,
              help="YYYY-MM-DD or a decimal year such as 2027.5 (default: today).")
@click.option("--altitude-m", type=float, default=0.0, show_default=True,
              help="Height above the WGS-84 ellipsoid in metres.")
@json_option
@library_errors
def site(latitude, longitude, date, altitude_m, as_json):
    """The local geomagnetic field from WMM2025: H, Z, F, declination, inclination, zone."""
    from .. import api
    from ..physics.geomag import OutsideModelError

    when = float(date) if date and date.replace(".", "", 1).isdigit() else date
    try:
        field = api.site_field(latitude, longitude, when, altitude_m)
    except OutsideModelError:
        raise
    except ValueError:
        raise click.BadParameter(f'"{date}" is not a date (YYYY-MM-DD or a decimal year)',
                                 param_hint="--date") from None
    if as_json:
        echo_json(field.to_dict())
        return
    from ..render.terminal import render_site

    render_site(field, console_for(None))
