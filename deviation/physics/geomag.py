"""The site's geomagnetic field from the World Magnetic Model 2025, evaluated in NumPy.

The model is a degree-12 spherical-harmonic expansion of the main field with linear secular
variation, valid 2025.0-2030.0. Inputs are geodetic (WGS-84) latitude, longitude and height above
the ellipsoid; outputs are in the local geodetic frame: X north, Y east, Z down, in nanotesla.
"""

from __future__ import annotations

import datetime as _dt
import functools
from dataclasses import dataclass
from importlib import resources

import numpy as np

from ..constants import (
    BLACKOUT_H_NT,
    CAUTION_H_NT,
    WGS84_A_KM,
    WGS84_F,
    WMM_REFERENCE_RADIUS_KM,
    WMM_VALID_FROM,
    WMM_VALID_UNTIL,
)
from ..errors import DeviationError

MAX_DEGREE = 12


class OutsideModelError(DeviationError, ValueError):
    """The date lies outside the model's validity window, where it is not to be trusted."""


@dataclass(frozen=True)
class Coefficients:
    """Gauss coefficients of a model, indexed ``[n, m]`` [nT] and their rates [nT/yr]."""

    epoch: float
    name: str
    g: np.ndarray
    h: np.ndarray
    g_dot: np.ndarray
    h_dot: np.ndarray


@dataclass(frozen=True)
class GeomagField:
    """The main field at one or many places (arrays broadcast from the inputs).

    X north, Y east, Z down, H horizontal, F total [nT]; declination east positive and
    inclination down positive [deg]; the ``*_dot`` attributes are their secular rates per year.
    """

    x_nt: np.ndarray
    y_nt: np.ndarray
    z_nt: np.ndarray
    h_nt: np.ndarray
    f_nt: np.ndarray
    declination_deg: np.ndarray
    inclination_deg: np.ndarray
    x_dot_nt: np.ndarray
    y_dot_nt: np.ndarray
    z_dot_nt: np.ndarray
    h_dot_nt: np.ndarray
    f_dot_nt: np.ndarray
    declination_dot_deg: np.ndarray
    inclination_dot_deg: np.ndarray
    decimal_year: np.ndarray

    @property
    def zone(self):
        """``"blackout"`` (H < 2000 nT), ``"caution"`` (H < 6000 nT) or ``"ok"``."""
        return zone_of(self.h_nt)


def zone_of(h_nt):
    """Compass zone of a horizontal field: blackout below 2000 nT, caution below 6000 nT.

    Parameters
    ----------
    h_nt : float or array [nT]

    Returns
    -------
    str or array of str

    References
    ----------
    WMM2025 technical report, "blackout zone" and "caution zone".
    """
    h = np.asarray(h_nt, dtype=float)
    zone = np.where(h < BLACKOUT_H_NT, "blackout", np.where(h < CAUTION_H_NT, "caution", "ok"))
    return str(zone) if zone.ndim == 0 else zone


@functools.lru_cache(maxsize=None)
def load_coefficients(text: str | None = None) -> Coefficients:
    """Read a WMM coefficient file (the official ``.COF`` layout); by default the packaged WMM2025."""
    if text is None:
        text = resources.files("deviation").joinpath("data/WMM2025.COF").read_text()
    lines = text.splitlines()
    head = lines[0].split()
    epoch, name = float(head[0]), head[1]
    shape = (MAX_DEGREE + 1, MAX_DEGREE + 1)
    g, h, g_dot, h_dot = (np.zeros(shape) for _ in range(4))
    for line in lines[1:]:
        parts = line.split()
        if len(parts) < 6 or parts[0].startswith("9999"):
            continue
        n, m = int(parts[0]), int(parts[1])
        g[n, m], h[n, m], g_dot[n, m], h_dot[n, m] = map(float, parts[2:6])
    return Coefficients(epoch, name, g, h, g_dot, h_dot)


def decimal_year(date) -> float:
    """Decimal year of a date: year + (day of year - 1) / days in year (WMM convention).

    Parameters
    ----------
    date : datetime.date, datetime.datetime, str (``YYYY-MM-DD``) or float
        A float is taken as already a decimal year.
    """
    if isinstance(date, (int, float, np.floating)):
        return float(date)
    if isinstance(date, str):
        date = _dt.date.fromisoformat(date.strip())
    if isinstance(date, _dt.datetime):
        date = date.date()
    start = _dt.date(date.year, 1, 1)
    days = (_dt.date(date.year + 1, 1, 1) - start).days
    return date.year + (date - start).days / days


def _geodetic_to_geocentric(lat_rad, height_km):
    """Geocentric latitude [rad] and radius [km] of a geodetic position (WGS-84)."""
    e2 = WGS84_F * (2 - WGS84_F)
    sin_lat = np.sin(lat_rad)
    prime_vertical = WGS84_A_KM / np.sqrt(1 - e2 * sin_lat ** 2)
    p = (prime_vertical + height_km) * np.cos(lat_rad)
    z = (prime_vertical * (1 - e2) + height_km) * sin_lat
    radius = np.hypot(p, z)
    return np.arcsin(z / radius), radius


def _legendre(cos_theta, sin_theta):
    """Schmidt semi-normalised associated Legendre functions P[n][m] and their theta derivatives."""
    shape = (MAX_DEGREE + 1, MAX_DEGREE + 1) + cos_theta.shape
    p = np.zeros(shape)
    dp = np.zeros(shape)
    p[0, 0] = 1.0
    p[1, 1] = sin_theta
    dp[1, 1] = cos_theta
    for n in range(2, MAX_DEGREE + 1):
        k = np.sqrt((2 * n - 1) / (2 * n))
        p[n, n] = k * sin_theta * p[n - 1, n - 1]
        dp[n, n] = k * (sin_theta * dp[n - 1, n - 1] + cos_theta * p[n - 1, n - 1])
    for m in range(0, MAX_DEGREE + 1):
        for n in range(m + 1, MAX_DEGREE + 1):
            root = np.sqrt(n * n - m * m)
            back = np.sqrt((n - 1) ** 2 - m * m) if n >= 2 else 0.0
            previous2 = p[n - 2, m] if n >= 2 else 0.0
            d_previous2 = dp[n - 2, m] if n >= 2 else 0.0
            p[n, m] = ((2 * n - 1) * cos_theta * p[n - 1, m] - back * previous2) / root
            dp[n, m] = ((2 * n - 1) * (cos_theta * dp[n - 1, m] - sin_theta * p[n - 1, m])
                        - back * d_previous2) / root
    return p, dp


def _synthesis(g, h, ratio, lon_rad, p, dp, sin_theta):
    """Geocentric X', Y', Z' [nT] of coefficients g, h (arrays [n, m])."""
    x = np.zeros_like(ratio)
    y = np.zeros_like(ratio)
    z = np.zeros_like(ratio)
    for n in range(1, MAX_DEGREE + 1):
        scale = ratio ** (n + 2)
        for m in range(0, n + 1):
            cos_m, sin_m = np.cos(m * lon_rad), np.sin(m * lon_rad)
            even = g[n, m] * cos_m + h[n, m] * sin_m
            odd = g[n, m] * sin_m - h[n, m] * cos_m
            x += scale * even * dp[n, m]
            y += scale * m * odd * p[n, m]
            z -= scale * (n + 1) * even * p[n, m]
    return x, y / sin_theta, z


def wmm_field(latitude_deg, longitude_deg, date, altitude_m=0.0, *, coefficients=None):
    """Main geomagnetic field from WMM2025 at geodetic places, vectorised over the inputs.

    Parameters
    ----------
    latitude_deg : float or array [deg]
        Geodetic latitude on WGS-84, north positive, in [-90, 90].
    longitude_deg : float or array [deg]
        Longitude, east positive.
    date : date, str ``YYYY-MM-DD`` or decimal year
        One date for all places.
    altitude_m : float or array [m]
        Height above the WGS-84 ellipsoid.
    coefficients : Coefficients, optional
        Another model in the same file layout; by default the packaged WMM2025.

    Returns
    -------
    GeomagField

    Raises
    ------
    OutsideModelError
        When the date lies outside 2025.0-2030.0: the linear secular variation is not to be
        extrapolated; measure H on site and give it in the plan instead.

    Notes
    -----
    Geodetic coordinates are converted to geocentric spherical ones; the field is the gradient of
    :math:`V = a\\sum_n (a/r)^{n+1}\\sum_m (g_n^m\\cos m\\lambda + h_n^m\\sin m\\lambda)
    P_n^m(\\cos\\theta)` with Schmidt semi-normalised :math:`P_n^m`, coefficients at time t
    :math:`g(t) = g + (t - t_0)\\dot g`, rotated back to the geodetic frame. At the geographic
    poles, where Y is a limit, latitude is held 1e-9 degree short of the pole.

    References
    ----------
    A. Chulliat et al., *The US/UK World Magnetic Model for 2025-2030: Technical Report*,
    NOAA NCEI / British Geological Survey, 2025, section 1.2 (equations 1-25).
    """
    coefficients = coefficients or load_coefficients()
    year = decimal_year(date)
    if not WMM_VALID_FROM <= year <= WMM_VALID_UNTIL:
        raise OutsideModelError(
            f"{year:.2f} is outside the validity of {coefficients.name} "
            f"({WMM_VALID_FROM:.1f}-{WMM_VALID_UNTIL:.1f}); give the site's field from a "
            "measurement or a current model instead")
    lat = np.radians(np.clip(np.asarray(latitude_deg, dtype=float), -90 + 1e-9, 90 - 1e-9))
    lon = np.radians(np.asarray(longitude_deg, dtype=float))
    height_km = np.asarray(altitude_m, dtype=float) / 1000.0
    lat, lon, height_km = np.broadcast_arrays(lat, lon, height_km)
    lat_c, radius = _geodetic_to_geocentric(lat, height_km)
    cos_theta, sin_theta = np.sin(lat_c), np.cos(lat_c)
    p, dp = _legendre(cos_theta, sin_theta)
    ratio = WMM_REFERENCE_RADIUS_KM / radius
    dt = year - coefficients.epoch
    g = coefficients.g + dt * coefficients.g_dot
    h = coefficients.h + dt * coefficients.h_dot
    xc, yc, zc = _synthesis(g, h, ratio, lon, p, dp, sin_theta)
    xd, yd, zd = _synthesis(coefficients.g_dot, coefficients.h_dot, ratio, lon, p, dp, sin_theta)
    turn = lat_c - lat
    cos_t, sin_t = np.cos(turn), np.sin(turn)
    x, z = xc * cos_t - zc * sin_t, xc * sin_t + zc * cos_t
    x_dot, z_dot = xd * cos_t - zd * sin_t, xd * sin_t + zd * cos_t
    y, y_dot = yc, yd
    horizontal = np.hypot(x, y)
    total = np.hypot(horizontal, z)
    h_dot = (x * x_dot + y * y_dot) / horizontal
    f_dot = (x * x_dot + y * y_dot + z * z_dot) / total
    return GeomagField(
        x_nt=x, y_nt=y, z_nt=z, h_nt=horizontal, f_nt=total,
        declination_deg=np.degrees(np.arctan2(y, x)),
        inclination_deg=np.degrees(np.arctan2(z, horizontal)),
        x_dot_nt=x_dot, y_dot_nt=y_dot, z_dot_nt=z_dot, h_dot_nt=h_dot, f_dot_nt=f_dot,
        declination_dot_deg=np.degrees((x * y_dot - y * x_dot) / horizontal ** 2),
        inclination_dot_deg=np.degrees((horizontal * z_dot - z * h_dot) / total ** 2),
        decimal_year=np.full(x.shape, year),
    )


def declination_uncertainty_deg(h_nt):
    """One-sigma uncertainty of the model's declination [deg] for a horizontal field.

    Parameters
    ----------
    h_nt : float or array [nT]

    Notes
    -----
    :math:`\\sigma_D = \\sqrt{0.26^2 + (5417/H)^2}` degrees, H in nT.

    References
    ----------
    WMM2025 technical report, table of uncertainty estimates (as restated by secondary sources).
    """
    return np.sqrt(0.26 ** 2 + (5417.0 / np.asarray(h_nt, dtype=float)) ** 2)
