"""The Earth's field at the site: from the plan's own figures where given, else WMM2025."""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass

from .constants import WMM_VALID_FROM, WMM_VALID_UNTIL
from .errors import DeviationError
from .physics.geomag import decimal_year, declination_uncertainty_deg, wmm_field, zone_of

#: Tesla per microtesla (plan figures are in µT, physics in T).
TESLA_PER_UT = 1e-6


@dataclass(frozen=True)
class SiteField:
    """The Earth's field at the site [T] and what it came from.

    ``source`` is "WMM2025" or "plan" (a measured H given in the site sheet); ``zone`` is "ok",
    "caution" (H below 6 µT) or "blackout" (H below 2 µT), after the WMM documentation.
    """

    horizontal_t: float
    vertical_t: float
    declination_deg: float | None
    inclination_deg: float
    source: str
    zone: str
    decimal_year: float
    date_text: str
    declination_uncertainty_deg: float | None
    latitude_deg: float | None = None
    longitude_deg: float | None = None
    altitude_m: float = 0.0
    declination_change_deg_per_year: float | None = None
    north_t: float | None = None
    east_t: float | None = None

    @property
    def total_t(self) -> float:
        return math.hypot(self.horizontal_t, self.vertical_t)

    def to_dict(self) -> dict:
        """The field in µT and degrees, as plain numbers (JSON-ready)."""
        def ut(value):
            return None if value is None else round(value / TESLA_PER_UT, 4)

        def deg(value):
            return None if value is None else round(value, 4)

        return {"latitude_deg": self.latitude_deg, "longitude_deg": self.longitude_deg,
                "altitude_m": self.altitude_m, "date": self.date_text,
                "decimal_year": round(self.decimal_year, 4), "source": self.source,
                "horizontal_ut": ut(self.horizontal_t), "vertical_ut": ut(self.vertical_t),
                "total_ut": ut(self.total_t), "north_ut": ut(self.north_t),
                "east_ut": ut(self.east_t), "declination_deg": deg(self.declination_deg),
                "declination_uncertainty_deg": deg(self.declination_uncertainty_deg),
                "declination_change_deg_per_year": deg(self.declination_change_deg_per_year),
                "inclination_deg": deg(self.inclination_deg), "zone": self.zone}


def model_field(latitude_deg: float, longitude_deg: float, date=None,
                altitude_m: float = 0.0) -> SiteField:
    """WMM2025 at a place and date.

    Parameters
    ----------
    latitude_deg, longitude_deg : float [deg]
        Geodetic (WGS-84), north and east positive.
    date : datetime.date, "YYYY-MM-DD", or a decimal year; None for today
    altitude_m : float [m]
        Height above the WGS-84 ellipsoid.

    Raises
    ------
    OutsideModelError
        For a date outside 2025.0-2030.0.
    """
    if date is None:
        date = dt.date.today()
    year = decimal_year(date)
    text = date.isoformat() if isinstance(date, dt.date) else str(date)
    f = wmm_field(latitude_deg, longitude_deg, year, altitude_m)
    h_nt = float(f.h_nt)
    return SiteField(h_nt * 1e-9, float(f.z_nt) * 1e-9, float(f.declination_deg),
                     float(f.inclination_deg), "WMM2025", str(f.zone), year, text,
                     float(declination_uncertainty_deg(h_nt)), latitude_deg, longitude_deg,
                     altitude_m, float(f.declination_dot_deg), float(f.x_nt) * 1e-9,
                     float(f.y_nt) * 1e-9)


def site_field(site) -> SiteField:
    """The field of a plan's site: its own H and Z where given, else WMM2025 at place and date."""
    model = None
    measured = site.horizontal_ut is not None and site.vertical_ut is not None
    in_model = WMM_VALID_FROM <= site.decimal_year <= WMM_VALID_UNTIL
    if site.latitude_deg is not None and site.longitude_deg is not None and (
            not measured or in_model):
        # Measured H and Z still take the model's declination when the date is in its window.
        model = wmm_field(site.latitude_deg, site.longitude_deg, site.decimal_year,
                          site.altitude_m)
    place = dict(latitude_deg=site.latitude_deg, longitude_deg=site.longitude_deg,
                 altitude_m=site.altitude_m)
    if site.horizontal_ut is not None:
        horizontal = site.horizontal_ut * TESLA_PER_UT
        vertical = (site.vertical_ut * TESLA_PER_UT if site.vertical_ut is not None else
                    float(model.z_nt) * 1e-9 if model is not None else 0.0)
        declination = float(model.declination_deg) if model is not None else None
        return SiteField(horizontal, vertical, declination,
                         math.degrees(math.atan2(vertical, horizontal)), "plan",
                         zone_of(horizontal * 1e9), site.decimal_year, site.date_text, None,
                         **place)
    if model is None:
        raise DeviationError("the site needs a latitude and longitude (for WMM2025) or a "
                             "measured horizontal_field_ut")
    horizontal = float(model.h_nt) * 1e-9
    vertical = (site.vertical_ut * TESLA_PER_UT if site.vertical_ut is not None
                else float(model.z_nt) * 1e-9)
    return SiteField(horizontal, vertical, float(model.declination_deg),
                     math.degrees(math.atan2(vertical, horizontal)), "WMM2025",
                     zone_of(horizontal * 1e9), site.decimal_year, site.date_text,
                     float(declination_uncertainty_deg(horizontal * 1e9)), **place,
                     declination_change_deg_per_year=float(model.declination_dot_deg))
