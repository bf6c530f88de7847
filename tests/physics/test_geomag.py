"""WMM2025 against the official test values of its report and against pygeomag."""

import datetime as dt
from pathlib import Path

import numpy as np
import pytest

from deviation.physics import geomag
from deviation.physics.geomag import OutsideModelError, decimal_year, wmm_field

REFERENCE = Path(__file__).resolve().parents[1] / "data" / "WMM2025_report_test_values.txt"

# The official test-value table of the WMM2025 report (NOAA NCEI / BGS), copied verbatim.
TABLE = np.loadtxt(REFERENCE, comments="#")


@pytest.mark.parametrize("row", TABLE.tolist(), ids=lambda r: f"{r[0]}-{r[1]}km-{r[2]}-{r[3]}")
def test_every_row_of_the_wmm2025_report_table(row):
    year, height_km, lat, lon = row[:4]
    f = wmm_field(lat, lon, year, height_km * 1000)
    # The table prints nT to 0.1 and degrees to 0.01: match to half a unit of the last digit.
    for got, expected in [(f.x_nt, row[4]), (f.y_nt, row[5]), (f.z_nt, row[6]), (f.h_nt, row[7]),
                          (f.f_nt, row[8]), (f.x_dot_nt, row[12]), (f.y_dot_nt, row[13]),
                          (f.z_dot_nt, row[14]), (f.h_dot_nt, row[15]), (f.f_dot_nt, row[16])]:
        assert float(got) == pytest.approx(expected, abs=0.05 + 1e-9)
    for got, expected in [(f.inclination_deg, row[9]), (f.declination_deg, row[10]),
                          (f.inclination_dot_deg, row[17]), (f.declination_dot_deg, row[18])]:
        assert float(got) == pytest.approx(expected, abs=0.005 + 1e-9)


def test_matches_pygeomag_at_random_places_and_dates():
    # Oracle: pygeomag, an independent port of the WMM, with its WMM2025 coefficients.
    pygeomag = pytest.importorskip("pygeomag")
    model = pygeomag.GeoMag(coefficients_file="wmm/WMM_2025.COF")
    rng = np.random.default_rng(7)
    for _ in range(40):
        lat, lon = rng.uniform(-89, 89), rng.uniform(-180, 180)
        alt_km, year = rng.uniform(0, 10), rng.uniform(2025.0, 2030.0)
        ref = model.calculate(lat, lon, alt_km, year)
        f = wmm_field(lat, lon, year, alt_km * 1000)
        np.testing.assert_allclose([f.x_nt, f.y_nt, f.z_nt], [ref.x, ref.y, ref.z], atol=0.01)
        assert float(f.declination_deg) == pytest.approx(ref.d, abs=1e-4)
        assert float(f.inclination_deg) == pytest.approx(ref.i, abs=1e-4)


def test_vectorised_over_places_equals_one_at_a_time():
    lats, lons = np.array([10.0, -33.9, 60.2]), np.array([20.0, 151.2, 24.9])
    many = wmm_field(lats, lons, "2026-06-01")
    for i in range(3):
        one = wmm_field(lats[i], lons[i], "2026-06-01")
        assert float(one.h_nt) == pytest.approx(many.h_nt[i], rel=1e-14)


def test_decimal_year_is_day_of_year_over_days_in_year():
    # WMM convention: year + (day of year - 1) / days in year.
    assert decimal_year(dt.date(2026, 1, 1)) == 2026.0
    assert decimal_year("2028-07-02") == pytest.approx(2028 + 183 / 366)   # leap year
    assert decimal_year(2027.5) == 2027.5


def test_dates_outside_the_model_are_refused():
    with pytest.raises(OutsideModelError, match="outside the validity"):
        wmm_field(45, 0, 2031.0)
    with pytest.raises(OutsideModelError):
        wmm_field(45, 0, "2024-12-31")


def test_zones_flag_blackout_and_caution():
    # WMM2025 documentation: blackout H < 2000 nT, caution H < 6000 nT.
    assert geomag.zone_of(1999.0) == "blackout"
    assert geomag.zone_of(5999.0) == "caution"
    assert geomag.zone_of(6000.0) == "ok"
    near_pole = wmm_field(86.0, 150.0, 2026.0)       # near the north magnetic pole in 2026
    assert near_pole.zone == "blackout"


def test_declination_uncertainty_matches_pygeomag_error_model():
    # pygeomag (an independent WMM implementation, test-only oracle) carries the WMM2025 error
    # model; its declination uncertainty at real places must equal ours for the H there.
    pygeomag = pytest.importorskip("pygeomag")
    model = pygeomag.GeoMag(coefficients_file="wmm/WMM_2025.COF")
    for lat, lon in ((50.0, 0.0), (-33.9, 18.4), (70.0, -40.0), (5.0, 100.0)):
        result = model.calculate(glat=lat, glon=lon, alt=0, time=2026.5)
        expected = result.calculate_uncertainty().d
        assert geomag.declination_uncertainty_deg(result.h) == pytest.approx(expected, rel=1e-9)
    # Far from the poles the constant term dominates: 0.26 deg (WMM2025 report, error model).
    assert geomag.declination_uncertainty_deg(1e9) == pytest.approx(0.26, abs=1e-6)
