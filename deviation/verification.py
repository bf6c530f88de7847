"""The tool's own verification: published check values, computed through the library's real
code paths, each with its source, tolerance and verdict.

Trusted calculation tools publish such a report so that a user can see, on their own install,
that the program reproduces values printed by others. Each row here is one published value
(or one derived directly from a published formula and its stated inputs), and its computation
goes through the code a plan's check uses: the router and the Biot-Savart kernel, the dipole
kernel and the deviation rule, the packaged WMM2025 model, the budget's equipment rules, the
swing fit. No row re-implements the formula it checks.

Adding a row is one entry: a function returning the computed value in the row's unit, decorated
with :func:`published`::

    @published("steel.sphere-d", group="Steel", what="D of a sphere 1 m ahead ...",
               source="...", expected=0.421, unit="°", tolerance=0.0005, decimals=3)
    def _sphere_d():
        return ...            # the library's computation

:func:`verify` runs every row; a row whose computation raises is a failed row that says why.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources

import numpy as np

#: The sources of the rows, cited in full.
GRIFFITHS = ("D. J. Griffiths, Introduction to Electrodynamics, 4th ed., ch. 5 (field of a "
             "straight current: mu0 I/(4 pi d)(sin t2 - sin t1); long wire mu0 I/(2 pi r))")
TWO_WIRE = ("Griffiths, ch. 5, two long wires with opposite currents superposed: |B| = "
            "mu0 I s/(2 pi r1 r2), exact for infinite wires")
DIPOLE = ("Griffiths, ch. 5, field of a magnetic dipole: mu0/(4 pi) (3(m.r)r - m)/r^3; a loop's "
          "moment m = I A")
WMM2025 = ("A. Chulliat et al., The US/UK World Magnetic Model for 2025-2030: Technical Report, "
           "NOAA NCEI / BGS, 2025, table of test values (printed to 0.1 nT and 0.01 deg)")
MOSER_SPENCER = ("J. R. Moser and R. F. Spencer, \"Predicting the magnetic fields from a "
                 "twisted-pair cable\", IEEE Trans. Electromagn. Compat. 10(3), 1968, abstract: "
                 "about 50 dB below a two-wire line at 1.5 lay lengths")
IEC60945 = ("IEC 60945, compass safe distance: at its label an item may cause 5.4/H degrees at a "
            "standard compass and 18/H at a steering compass, H in uT (restated in ISO 25862, "
            "Annex F)")
IEC60945_DIPOLE = (IEC60945 + "; beyond the label at least a dipole's 1/r^3 fall (Griffiths, "
                   "ch. 5)")
DEVIATION_RULE = ("Griffiths, ch. 5 (long wire mu0 I/(2 pi r)) with the largest deviation over "
                  "headings asin(|b_h|/H), from delta = atan2(b_E, H + b_N) (NGA, Handbook of "
                  "Magnetic Compass Adjustment, formerly Pub. 226: the needle lies along the "
                  "resultant of the Earth's and the ship's horizontal fields)")
PUB226_501 = ("NGA, Handbook of Magnetic Compass Adjustment (formerly Pub. 226), 2004, art. 501 "
              "\"Simple analysis\": deviations N 10.5E, NE 20.0E, E 11.5E, SE 1.2W, S 5.5W, "
              "SW 8.0W, W 12.5W, NW 6.8W; A is the mean of their algebraic sum, east plus")
GAUSS = ("C. F. Gauss, Intensitas vis magneticae terrestris ad mensuram absolutam revocata "
         "(1832), deflection method: tan(delta) = mu0 m/(2 pi r^3 H) end-on, mu0 m/(4 pi r^3 H) "
         "broadside (restated in Encyclopaedia Britannica, 11th ed., 1911, \"Magnetism, "
         "Terrestrial\")")

TESLA_PER_UT = 1e-6          # µT to T, at the edge


@dataclass(frozen=True)
class Check:
    """One published check value and how the library computes it.

    id : stable name, e.g. ``field.long-wire``
    group : the section it is shown in
    what : what is computed, with its inputs
    source : where the expected value comes from, cited in full
    expected : the published (or directly derived) value, in ``unit``
    unit : its unit as printed (µT, nT, °, dB, A·m², digits)
    tolerance : largest |computed - expected| that passes, in ``unit``
    decimals : decimals of the expected value as printed
    compute : runs the library's code path, returns the value in ``unit``
    """

    id: str
    group: str
    what: str
    source: str
    expected: float
    unit: str
    tolerance: float
    decimals: int
    compute: Callable[[], float]


@dataclass(frozen=True)
class Row:
    """One row of the report: a check and what the library computed for it."""

    id: str
    group: str
    what: str
    source: str
    expected: float
    unit: str
    tolerance: float
    decimals: int
    computed: float | None
    problem: str | None = None           # why nothing was computed

    @property
    def difference(self) -> float | None:
        return None if self.computed is None else self.computed - self.expected

    @property
    def passed(self) -> bool:
        difference = self.difference
        return difference is not None and math.isfinite(difference) and \
            abs(difference) <= self.tolerance


#: Every registered check, in the order of the report.
CHECKS: list[Check] = []


def published(id, *, group, what, source, expected, unit, tolerance, decimals):
    """Register the decorated function as the computation of one published check value."""

    def register(function):
        if any(c.id == id for c in CHECKS):
            raise ValueError(f"a check named {id!r} exists already")
        CHECKS.append(Check(id, group, what, source, float(expected), unit, float(tolerance),
                            int(decimals), function))
        return function

    return register


def run_check(check: Check) -> Row:
    """Compute one check; an error in the computation makes a failed row that names it."""
    base = (check.id, check.group, check.what, check.source, check.expected, check.unit,
            check.tolerance, check.decimals)
    try:
        computed = float(check.compute())
    except Exception as error:  # a failed row, never a traceback
        return Row(*base, computed=None, problem=f"{type(error).__name__}: {error}")
    return Row(*base, computed=computed)


def verify(checks=None) -> tuple[Row, ...]:
    """Every check's row (by default all of :data:`CHECKS`)."""
    return tuple(run_check(c) for c in (CHECKS if checks is None else checks))


# The library's code paths, shared by the rows -----------------------------------------------

def _field_of_run_t(route_m, return_kind, current_a, point_m, **geometry):
    """|B| at one point of a run, routed as a plan's run is and summed by the segment kernel."""
    from .physics import field, routing

    run = routing.RunGeometry("check", np.asarray(route_m, dtype=float), return_kind,
                              **geometry)
    start, end, sign = routing.route_run(run)
    b = field.segment_field(start, end, sign * current_a, np.asarray([point_m], dtype=float))
    return float(np.linalg.norm(b[0]))


def _check_plan(tables):
    """A plan given as tables, read and checked the way ``deviation check`` does."""
    from .analysis import analyse
    from .reader import plan_from_tables

    return analyse(plan_from_tables(tables, source="<verification>"))


_SITE_20_40 = [["setting", "value"], ["horizontal_field_ut", 20], ["vertical_field_ut", 40]]


# Earth's field: WMM2025 --------------------------------------------------------------------------

def _wmm_table():
    """The WMM2025 report's test values as shipped with the package (12 rows x 19 columns)."""
    text = resources.files("deviation").joinpath("data/WMM2025_report_test_values.txt")
    return np.loadtxt(text.open("r", encoding="ascii"), comments="#")


def _wmm_at(row):
    from .physics.geomag import wmm_field

    year, height_km, lat, lon = row[:4]
    return wmm_field(lat, lon, year, height_km * 1000.0)


def _place(row):
    year, height_km, lat, lon = row[:4]
    ns = "N" if lat > 0 else ("S" if lat < 0 else "")
    ew = "E" if lon <= 180 else "W"
    lon_text = lon if lon <= 180 else 360 - lon
    return f"{year:g}, {height_km:g} km, {abs(lat):g}°{ns} {lon_text:g}°{ew}"


def _register_wmm():
    for index, row in enumerate(_wmm_table(), start=1):
        place = _place(row)
        published(f"wmm2025.{index:02d}.H", group="Earth's field (WMM2025)",
                  what=f"H, horizontal intensity: {place}", source=WMM2025, expected=row[7],
                  unit="nT", tolerance=0.05, decimals=1)(
            lambda row=row: float(_wmm_at(row).h_nt))
        published(f"wmm2025.{index:02d}.D", group="Earth's field (WMM2025)",
                  what=f"D, declination: {place}", source=WMM2025, expected=row[10], unit="°",
                  tolerance=0.005, decimals=2)(
            lambda row=row: float(_wmm_at(row).declination_deg))


_register_wmm()

#: Columns of the test table and the model's attribute for each, with the printed step.
_WMM_COLUMNS = ((4, "x_nt", 0.1), (5, "y_nt", 0.1), (6, "z_nt", 0.1), (7, "h_nt", 0.1),
                (8, "f_nt", 0.1), (9, "inclination_deg", 0.01), (10, "declination_deg", 0.01),
                (12, "x_dot_nt", 0.1), (13, "y_dot_nt", 0.1), (14, "z_dot_nt", 0.1),
                (15, "h_dot_nt", 0.1), (16, "f_dot_nt", 0.1), (17, "inclination_dot_deg", 0.01),
                (18, "declination_dot_deg", 0.01))


@published("wmm2025.all", group="Earth's field (WMM2025)",
           what="Every printed value of the table (X Y Z H F I D and their yearly rates at the 12 "
                "places and dates, 168 values): the largest difference, in steps of the last "
                "printed digit", source=WMM2025, expected=0.0, unit="digits", tolerance=0.5,
                decimals=0)
def _wmm_everything():
    worst = 0.0
    for row in _wmm_table():
        model = _wmm_at(row)
        for column, name, step in _WMM_COLUMNS:
            worst = max(worst, abs(float(getattr(model, name)) - row[column]) / step)
    return worst


# Field of currents -------------------------------------------------------------------------------

@published("field.long-wire", group="Field of currents",
           what="10 A on a 2 km run laid forward (return elsewhere), 0.5 m below it: "
                "mu0 I/(2 pi r)", source=GRIFFITHS, expected=4.0, unit="µT", tolerance=1e-5,
           decimals=3)
def _long_wire():
    # The 2 km run is 1.25e-7 short of the infinite wire here, 5e-7 µT.
    return _field_of_run_t([[-1000.0, 0, 0], [1000.0, 0, 0]], "none", 10.0,
                           [0.0, 0.0, -0.5]) / TESLA_PER_UT


@published("field.finite-segment", group="Field of currents",
           what="1 A on a 1 m run, 1 m from its middle on the perpendicular: "
                "mu0 I/(4 pi d)(sin t2 - sin t1)", source=GRIFFITHS,
           expected=0.08944271909999159, unit="µT", tolerance=1e-9, decimals=6)
def _finite_segment():
    return _field_of_run_t([[-0.5, 0, 0], [0.5, 0, 0]], "none", 1.0,
                           [0.0, 1.0, 0.0]) / TESLA_PER_UT


@published("field.segment-beyond", group="Field of currents",
           what="1 A on a 1 m run from x = 0 to 1 m, seen from x = 1.5 m, 0.4 m off its line "
                "(both angles on one side): mu0 I/(4 pi d)(sin t2 - sin t1)", source=GRIFFITHS,
           expected=0.046341532539553976, unit="µT", tolerance=1e-9, decimals=6)
def _finite_segment_beyond():
    return _field_of_run_t([[0.0, 0, 0], [1.0, 0, 0]], "none", 1.0,
                           [1.5, 0.4, 0.0]) / TESLA_PER_UT


@published("field.two-wire", group="Field of currents",
           what="10 A out and back on a 2 km pair at 5 mm spacing, 0.5 m below the supply: "
                "mu0 I s/(2 pi r1 r2), r2 = sqrt(0.5^2 + 0.005^2)", source=TWO_WIRE,
           expected=0.03999800014998751, unit="µT", tolerance=1e-7, decimals=6)
def _two_wire():
    # The router lays a paired return beside the supply, to port of a run laid forward.
    return _field_of_run_t([[-1000.0, 0, 0], [1000.0, 0, 0]], "paired", 10.0,
                           [0.0, 0.0, -0.5], spacing_m=0.005) / TESLA_PER_UT


@published("clearance.two-wire", group="Field of currents",
           what="The clearance table's pair: 10 A, 5 mm spacing, 0.5 m from the centre line in "
                "the pair's plane: mu0 I s/(2 pi r1 r2), r1 r2 = 0.5^2 - 0.0025^2",
           source=TWO_WIRE, expected=0.04000100002500063, unit="µT", tolerance=1e-9,
           decimals=6)
def _clearance_pair():
    from .physics.clearance import pair_field_t

    return float(pair_field_t(10.0, 0.005, 0.5)) / TESLA_PER_UT


@published("field.square-loop", group="Field of currents",
           what="1 A round a 1 m square run, at its centre: 2 sqrt(2) mu0 I/(pi a)",
           source=GRIFFITHS, expected=1.131370849898476, unit="µT", tolerance=1e-9,
           decimals=5)
def _square_loop():
    square = [[0.0, 0, 0], [1.0, 0, 0], [1.0, 1.0, 0], [0.0, 1.0, 0], [0.0, 0, 0]]
    return _field_of_run_t(square, "none", 1.0, [0.5, 0.5, 0.0]) / TESLA_PER_UT


@published("field.dipole-axis", group="Field of currents",
           what="A 0.01 A·m² moment (a 0.1 m square loop, 1 A) 2 m along its axis: "
                "mu0 2m/(4 pi r^3)", source=DIPOLE, expected=2.5e-4, unit="µT",
           tolerance=1e-12, decimals=7)
def _dipole_axis():
    from .physics.field import dipole_field

    b = dipole_field([[0.0, 0.0, 0.01]], [[0.0, 0.0, 0.0]], [[0.0, 0.0, 2.0]])
    return float(np.linalg.norm(b[0])) / TESLA_PER_UT


@published("field.dipole-plane", group="Field of currents",
           what="The same moment 2 m away in its plane: mu0 m/(4 pi r^3)", source=DIPOLE,
           expected=1.25e-4, unit="µT", tolerance=1e-12, decimals=7)
def _dipole_plane():
    from .physics.field import dipole_field

    b = dipole_field([[0.0, 0.0, 0.01]], [[0.0, 0.0, 0.0]], [[2.0, 0.0, 0.0]])
    return float(np.linalg.norm(b[0])) / TESLA_PER_UT


# Twisted pairs -----------------------------------------------------------------------------------

_LAY_M, _SPACING_M, _LAYS = 0.05, 0.005, 200


def _around(centre, distance_m):
    """12 points at one distance from a line along x: 4 azimuths x 3 places along a lay."""
    return np.array([[centre[0] + _LAY_M * k / 3, centre[1] + distance_m * math.cos(a),
                      centre[2] + distance_m * math.sin(a)]
                     for a in 2 * np.pi * np.arange(4) / 4 + 0.3 for k in range(3)])


@published("twisted.moser-spencer", group="Twisted pairs",
           what="A twisted pair (50 mm lay, 5 mm spacing, 200 lays, helices as the router lays "
                "them) against the same pair untwisted, largest field 1.5 lays from the axis",
           source=MOSER_SPENCER, expected=50.0, unit="dB", tolerance=1.0, decimals=0)
def _twisted_attenuation():
    from .physics import field, routing

    length = _LAYS * _LAY_M
    run = routing.RunGeometry("twisted", np.array([[0.0, 0, 0], [length, 0, 0]]), "twisted",
                              spacing_m=_SPACING_M, lay_m=_LAY_M, untwisted_end_m=0.0)
    pair = routing.as_paired(run)

    def largest(geometry, centre):
        start, end, sign = routing.route_run(geometry)
        b = field.segment_field(start, end, sign, _around(centre, 1.5 * _LAY_M))
        return float(np.linalg.norm(b, axis=1).max())

    # The helices turn about the route; the untwisted pair's centre line is half a spacing to
    # port of it.
    twisted = largest(run, (length / 2, 0.0, 0.0))
    untwisted = largest(pair, (length / 2, _SPACING_M / 2, 0.0))
    return 20.0 * math.log10(untwisted / twisted)


@published("clearance.twist-floor", group="Twisted pairs",
           what="The clearance table's twist model at 1.5 lay lengths: its attenuation",
           source=MOSER_SPENCER, expected=50.0, unit="dB", tolerance=1e-9, decimals=0)
def _twist_model():
    from .physics.clearance import twist_attenuation

    return -20.0 * math.log10(float(twist_attenuation(1.5 * _LAY_M, _LAY_M)))


# Compass rules -----------------------------------------------------------------------------------

def _equipment_deviation(label, safe_distance_m, sensor_distance_m):
    """The largest deviation a labelled item causes in a checked plan, H = 20 µT."""
    analysis = _check_plan({
        "site": _SITE_20_40,
        "runs": [["run", "route", "return", "current_a"]],
        "sensors": [["sensor", "at", "kind", "budget_deg"],
                    ["compass", "0, 0, 0", "magnetic compass", 1]],
        "equipment": [["item", "at", "safe_distance", "safe_distance_for"],
                      ["item", f"{sensor_distance_m}, 0, 0", safe_distance_m, label]],
    })
    [item] = analysis.sensors[0].states[0].equipment
    return item.max_deviation_deg


@published("iec60945.standard", group="Compass rules",
           what="An item labelled for a standard compass, at its safe distance, H = 20 µT: "
                "5.4/H", source=IEC60945, expected=0.27, unit="°", tolerance=1e-9, decimals=2)
def _iec_standard():
    return _equipment_deviation("standard", 0.8, 0.8)


@published("iec60945.steering", group="Compass rules",
           what="An item labelled for a steering compass, at its safe distance, H = 20 µT: "
                "18/H", source=IEC60945, expected=0.90, unit="°", tolerance=1e-9, decimals=2)
def _iec_steering():
    return _equipment_deviation("steering", 0.5, 0.5)


@published("iec60945.beyond", group="Compass rules",
           what="The steering-compass item at twice its safe distance: asin(sin(18/H) / 8)",
           source=IEC60945_DIPOLE, expected=0.11249544595836168, unit="°", tolerance=1e-9,
           decimals=4)
def _iec_beyond():
    return _equipment_deviation("steering", 0.5, 1.0)


@published("check.long-wire", group="Compass rules",
           what="A whole check: 10 A on a 2 km run 0.5 m below a compass, H = 20 µT: "
                "asin(4 µT / 20 µT)", source=DEVIATION_RULE, expected=11.536959032815489,
           unit="°", tolerance=1e-4, decimals=3)
def _check_long_wire():
    analysis = _check_plan({
        "site": _SITE_20_40,
        "runs": [["run", "route", "return", "current_a"],
                 ["feed", "-1000, 0, -0.5 > 1000, 0, -0.5", "none", 10]],
        "sensors": [["sensor", "at", "kind", "budget_deg"],
                    ["compass", "0, 0, 0", "magnetic compass", 1]],
    })
    return analysis.sensors[0].states[0].max_deviation_deg


# The swing ---------------------------------------------------------------------------------------

@published("pub226.501-A", group="Swing",
           what="Coefficient A of the handbook's worked deviation curve (eight compass "
                "headings), by the swing fit: 8A = +8.0", source=PUB226_501, expected=1.0,
           unit="°", tolerance=0.05, decimals=1)
def _pub226_a():
    from .physics.swing import fit_coefficients

    deviations = [10.5, 20.0, 11.5, -1.2, -5.5, -8.0, -12.5, -6.8]
    return float(fit_coefficients(np.arange(0.0, 360.0, 45.0), deviations).coefficients_deg[0])


# Gauss's deflection ------------------------------------------------------------------------------

def _deflection_of_dipole(moment_am2, item_m, distance_m):
    """The deviation a point dipole pointing east-west causes a level compass heading north, by
    the dipole kernel and the deviation rule, H = 20 µT (vessel x forward = north, y port =
    west)."""
    from .physics.field import dipole_field
    from .physics.heading import deviation_deg

    position = np.asarray(item_m, dtype=float) * distance_m
    b = dipole_field([[0.0, moment_am2, 0.0]], [position], [[0.0, 0.0, 0.0]])[0]
    return abs(float(deviation_deg(b, 20.0 * TESLA_PER_UT, 0.0)))


@published("gauss.end-on", group="Gauss's deflection",
           what="1 A·m² east-west, 0.5 m due east of the needle, H = 20 µT: "
                "atan(mu0 m/(2 pi r^3 H)) = atan(0.08)", source=GAUSS,
           expected=4.573921259900861, unit="°", tolerance=1e-9, decimals=4)
def _gauss_end_on():
    return _deflection_of_dipole(1.0, (0.0, -1.0, 0.0), 0.5)


@published("gauss.broadside", group="Gauss's deflection",
           what="The same moment 0.5 m due north of the needle: atan(mu0 m/(4 pi r^3 H)) = "
                "atan(0.04)", source=GAUSS, expected=2.2906100426385296, unit="°",
           tolerance=1e-9, decimals=4)
def _gauss_broadside():
    return _deflection_of_dipole(1.0, (1.0, 0.0, 0.0), 0.5)


@published("gauss.moment", group="Gauss's deflection",
           what="The moment `deviation deflection` finds from a 4.5739° end-on deflection at "
                "0.5 m, H = 20 µT", source=GAUSS, expected=1.0, unit="A·m²", tolerance=1e-4,
           decimals=3)
def _gauss_moment():
    from .physics.swing import moment_from_deflection_am2

    return moment_from_deflection_am2(4.573921259900861, 0.5, 20.0 * TESLA_PER_UT, "end-on")


__all__ = ["CHECKS", "Check", "Row", "published", "run_check", "verify"]
