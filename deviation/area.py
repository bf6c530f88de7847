"""A plan over its whole operating area: checked at each place, the worst figure and where.

The site sheet names the places (its ``place`` rows, beside the site's own latitude and
longitude). At each place the plan is rebuilt with that latitude and longitude (the date and
height stay the plan's) and checked again; the Earth's field there comes from WMM2025, so a
field measured at the site (``horizontal_field_ut``) is not carried to the other places.

Why it matters: a vessel-fixed disturbance b deviates a heading sensor by asin(|b_h|/H), so
the same wiring costs more degrees where H is weaker, and its share of F changes with F. Steel
changes most: the part of its induced field that the vertical field Z makes is vessel-fixed at
one place and gives the coefficients B and C, cZ/(lambda H) and fZ/(lambda H), which grow with
Z/H as the vessel goes towards a magnetic pole, while D and E do not change (NGA Pub. 226,
ch. III). The sensors stay adjusted where they were adjusted (the plan's own site): what the
correctors took out of the induced B there comes back as c (Z - Z_adj)/(lambda H) elsewhere.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .analysis import Analysis
from .errors import DeviationError
from .plan import Plan
from .quantities import Unit
from .sitefield import SiteField


@dataclass(frozen=True)
class PlaceResult:
    """The plan checked at one place."""

    name: str
    latitude_deg: float
    longitude_deg: float
    site: SiteField
    analysis: Analysis
    reports: tuple                   # electronic.ElectronicSensor
    within_budget: bool


@dataclass(frozen=True)
class Worst:
    """One figure of one sensor at its worst over the area, and the place that sets it."""

    sensor: str
    figure: str
    value: float
    unit: str
    place: str
    within: bool                     # the sensor is within its budget at every place


@dataclass(frozen=True)
class SteelCoefficients:
    """A heading sensor's coefficients at one place, in its worst used state, from what it sees
    with the steel (the residual after adjustment where it has a reference state): Archibald
    Smith's exact coefficients read as degrees (:func:`deviation.physics.soft_iron.coefficients`).
    ``b_induced_deg`` and ``c_induced_deg`` are the parts the steel's induced field makes, cZ and
    fZ over lambda H, less what the correctors took out at the adjusting site (c Z_adj, f Z_adj)
    for a sensor adjusted in a reference state."""

    sensor: str
    place: str
    state: str
    z_over_h: float
    lam: float
    coefficients_deg: tuple[float, float, float, float, float]      # A, B, C, D, E
    b_induced_deg: float
    c_induced_deg: float
    held: float


@dataclass(frozen=True)
class AreaResult:
    plan: Plan
    places: tuple[PlaceResult, ...]
    worst: tuple[Worst, ...]
    verdict_changes: bool            # within at some places, over at others
    within_budget: bool              # within at every place
    steel: tuple[SteelCoefficients, ...] = ()   # heading sensors near steel, at every place

    def to_frame(self):
        """One row per place and sensor (see :func:`deviation.frames.area_frame`)."""
        from .frames import area_frame

        return area_frame(self)


def plan_at(plan, latitude_deg: float, longitude_deg: float):
    """The plan moved to another place: the model's field there, nothing else changed; its
    sensors stay adjusted at the plan's own site (its adjusting site)."""
    site = replace(plan.site, latitude_deg=float(latitude_deg), longitude_deg=float(longitude_deg),
                   horizontal_ut=None, vertical_ut=None, places=())
    return replace(plan, site=site, adjusting_site=plan.adjusting_site or plan.site)


def steel_coefficients(place) -> list[SteelCoefficients]:
    """Each heading sensor's coefficients at a place, where the plan has steel."""
    from .budget import adjusting_vertical_t
    from .budget.steel import seen_steel, steel_parts_at
    from .physics import soft_iron

    out = []
    plan, site = place.analysis.plan, place.site
    h, z = site.horizontal_t, site.vertical_t
    z_adj = adjusting_vertical_t(plan, site)
    for result in place.analysis.sensors:
        worst = result.worst
        sensor = result.sensor
        if worst.steel_matrix is None or not sensor.budget.degrees:
            continue
        matrix = np.asarray(worst.steel_matrix)
        found = soft_iron.coefficients(matrix, np.asarray(worst.steel_fixed_t), h, z)
        deg = found.degrees()
        # The steel's own fixed part (the correctors' share), at the middle of its bands.
        parts = steel_parts_at(plan, sensor.position_m[None, :])
        assert parts is not None    # the worst has a steel matrix: the plan has steel
        own = seen_steel(plan, sensor, parts, plan.state_index(worst.state), z_adj).fixed[0]
        steel_only = soft_iron.coefficients(matrix, own, h, z)
        out.append(SteelCoefficients(
            sensor.name, place.name, worst.state, z / h, float(found.lam),
            (float(deg["a"]), float(deg["b"]), float(deg["c"]), float(deg["d"]), float(deg["e"])),
            float(np.degrees(steel_only.b)),
            float(np.degrees(steel_only.c)), worst.held))
    return out


def places_of(plan) -> list[tuple[str, float, float, Plan]]:
    """(name, latitude, longitude, plan) of the site and every place of the area."""
    site = plan.site
    out = []
    if site.latitude_deg is not None and site.longitude_deg is not None:
        out.append((f"site ({site.latitude_deg:g}, {site.longitude_deg:g})", site.latitude_deg,
                    site.longitude_deg, plan))
    for name, latitude, longitude in site.places:
        out.append((name, latitude, longitude, plan_at(plan, latitude, longitude)))
    return out


def _figures(place):
    """(sensor, figure, value, unit) of one place's result."""
    out = []
    for result in place.analysis.sensors:
        name = result.sensor.name
        unit = result.sensor.budget.unit
        out.append((name, "total-field error" if unit is Unit.NANOTESLA else "held figure",
                    result.worst.held, unit.value))
    for report in place.reports:
        if report.grade is None:
            continue
        name = report.sensor.name
        used = [s for s in report.states if s.used] or list(report.states)
        out.append((name, "interference share of F", report.grade.fraction * 100, "%"))
        if report.compensation is not None:
            out.append((name, "deviation after compensation",
                        max(s.compensated_deg for s in used), "deg"))
        out.append((name, "inclination vs model", max(s.inclination_departure_deg for s in used),
                    "deg"))
    return out


def area_check(plan) -> AreaResult:
    """Check the plan at the site and at every place of its area.

    Raises
    ------
    DeviationError
        When the plan names no place (neither latitude and longitude nor place rows).
    """
    from .checking import check_plan as check
    from .electronic import electronic_report

    listed = places_of(plan)
    if not listed:
        raise DeviationError("the plan names no place: give the site's latitude and longitude, "
                             "and the other places of the area as place rows (value: latitude, "
                             "longitude; note: its name) in the site sheet")
    places = []
    for name, latitude, longitude, moved in listed:
        analysis = check(moved, remedies=False)
        places.append(PlaceResult(name, latitude, longitude, analysis.site, analysis,
                                  electronic_report(analysis), analysis.within_budget))
    worst: dict[tuple[str, str], tuple[float, str, str]] = {}
    for place in places:
        for sensor, figure, value, unit in _figures(place):
            key = (sensor, figure)
            if key not in worst or value > worst[key][0]:
                worst[key] = (value, unit, place.name)
    within_sensor = {s.sensor.name: all(p.analysis.sensor(s.sensor.name).within_budget
                                        for p in places) for s in places[0].analysis.sensors}
    rows = tuple(Worst(sensor, figure, value, unit, where, within_sensor[sensor])
                 for (sensor, figure), (value, unit, where) in worst.items())
    verdicts = {p.within_budget for p in places}
    steel = tuple(row for place in places for row in steel_coefficients(place))
    return AreaResult(plan, tuple(places), rows, len(verdicts) > 1, all(verdicts), steel)
