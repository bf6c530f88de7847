"""Physical constants and published thresholds, each with its source, in one place."""

import math

#: Vacuum permeability [H/m]. CODATA 2018 gives 1.25663706212e-6; the pre-2019 exact value
#: 4e-7*pi differs from it by 5e-10 relative, far below anything a wiring plan resolves.
MU0 = 4e-7 * math.pi

#: mu0 / (4 pi) [T m/A], the Biot-Savart prefactor.
MU0_OVER_4PI = 1e-7

#: WMM2025 validity window [decimal years] (WMM2025 technical report).
WMM_VALID_FROM = 2025.0
WMM_VALID_UNTIL = 2030.0

#: Horizontal field below which compasses are unreliable ("blackout zone") [nT]
#: (WMM2025 documentation).
BLACKOUT_H_NT = 2000.0
#: Horizontal field below which compasses degrade ("caution zone") [nT] (WMM2025 documentation).
CAUTION_H_NT = 6000.0

#: IEC 60945, compass safe distance: equipment may cause at most 5.4/H degrees at a standard
#: compass and 18/H degrees at a steering compass, H in microtesla. As a horizontal disturbance
#: this is H*sin(k/H deg), which to first order is k*pi/180 microtesla whatever H is.
SAFE_DISTANCE_DEG_UT = {"standard": 5.4, "steering": 18.0}

#: ISO 25862 Annex E: DC wiring within this distance of a magnetic compass should be laid bipolar;
#: items of unknown safe distance kept at least this far away [m].
ISO25862_BIPOLAR_RADIUS_M = 5.0

#: Common practice, no source: a magnetic compass whose steel leaves the needle less than this
#: share lambda of the Earth's horizontal force (lambda = 1 + (a + e)/2, Poisson's rods; NGA
#: Handbook of Magnetic Compass Adjustment, ch. III) is sluggish. The handbook and the Admiralty
#: manual discuss lambda but give no figure; this one is a rule of thumb and said so to the user.
LOW_LAMBDA = 0.7

#: Common practice, no source: keep high-current DC cables about this far from a heading sensor [m].
PRACTICE_CLEARANCE_M = 1.0

#: WGS-84 ellipsoid (NIMA TR8350.2): semi-major axis [km] and flattening.
WGS84_A_KM = 6378.137
WGS84_F = 1 / 298.257223563

#: Geomagnetic reference radius of the WMM [km] (WMM2025 report).
WMM_REFERENCE_RADIUS_KM = 6371.2

#: Common practice, no source: length at each end of a twisted run that is not twisted [m]. At a
#: terminal the pair parts for two studs: about 40 mm of crimped lug, 50-80 mm of breaker or fuse
#: body, and some 30-50 mm of conductor fanned out before the twist closes; 0.15 m covers that.
UNTWISTED_END_M = 0.15

#: Moser & Spencer, "Predicting the magnetic fields from a twisted-pair cable", IEEE Trans. EMC
#: 10(3), 1968: the measured field of a twisted pair falls about exponentially with distance only
#: out to about 1.5 lay lengths, where it is ~50 dB below the same pair untwisted. Beyond what
#: measurement supports, a twisted run is counted as no weaker than this fraction of the same run
#: laid as an untwisted pair (routing.as_paired).
TWISTED_FLOOR_FRACTION = 10 ** (-50 / 20)
#: Distance off the axis, in lay lengths, to which that measurement supports the exponential fall.
TWISTED_MEASURED_LAYS = 1.5

#: Common practice, no source: the tightest lay stranded boat cable is twisted to, in outer
#: diameters of one conductor (see routing.minimum_lay_m for why it does not overbend the cable).
MIN_LAY_PER_OUTER_DIAMETER = 12.0
#: Common practice, no source: the lay a twisting hint proposes where the cable allows it [m],
#: about 20 twists per metre, easily done by hand or bought as twisted pair.
HINT_LAY_M = 0.05

#: A sanity check of the field an electronic sensor's host sees against the model before use
#: (common practice, no source; the figures from memory): its total field within 20 µT of the
#: model's and its inclination within 20 degrees of the model's.
MODEL_FIELD_TOLERANCE_T = 20e-6
MODEL_INCLINATION_TOLERANCE_DEG = 20.0

#: Total-field (scalar) survey magnetometers: a figure of merit of 1-2 nT is the usual aim of a
#: compensated airborne installation (common practice, no source).
SURVEY_FIGURE_OF_MERIT_NT = (1.0, 2.0)

#: Independent switchings tried one by one for the total-field worst case and the compensation
#: fit (2**12): beyond this the total-field figures score the zonotope's vertices
#: (physics.total_field.vertex_switchings) and the fit samples each circuit alone.
MAX_SWITCHINGS_ENUMERATED = 4096

#: Field units of the electronic-sensor outputs: tesla per unit (1 mG = 0.1 µT = 100 nT, since
#: 1 G = 1e-4 T by definition of the CGS gauss).
FIELD_UNITS_T = {"uT": 1e-6, "nT": 1e-9, "mG": 1e-7}

#: Deviation reported where the disturbance's horizontal part reaches H: the sensor can point
#: anywhere (renderers say "overwhelmed", never this number).
OVERWHELMED_DEG = 180.0

# What a plan may say: figures beyond these are typing slips or unit mistakes, and each is a
# located finding (docs/robustness.md, "Numbers within physics"). Common practice, no source:
# they are far beyond any vessel or vehicle, so that no real plan meets them.
#: Largest distance of a point from the plan's origin [m]: the largest ships are under 500 m
#: long; a coordinate beyond 10 km is a slip (1e300, or kilometres typed as metres twice).
MAX_COORDINATE_M = 10_000.0
#: Largest length of any kind (a spacing, a lay, an untwisted end) [m].
MAX_LENGTH_M = 10_000.0
#: Largest compass safe distance a label may give [m]: IEC 60945 labels of marine equipment
#: give well under 10 m.
MAX_SAFE_DISTANCE_M = 100.0
#: Largest magnetic moment of an item [A·m²]: a large loudspeaker is about 1, an engine block
#: some hundreds; a whole steel hull's permanent moment is of order 1e5.
MAX_MOMENT_AM2 = 1e6
#: Largest current of a circuit, a run or a reading [A]: a large DC system's main bus carries
#: some thousands of amperes.
MAX_CURRENT_A = 100_000.0
#: Ceilings of a check, where the work grows faster than the plan (measured with
#: bench/bench_limits.py; the figures are in docs/robustness.md). The worst combination of
#: independent circuits at the worst attitude grows about as their number cubed (200: seconds and
#: 200 MB); the remedies and the set of fixes re-check the whole budget for every candidate change
#: in every state, so they grow as the states squared and much faster with independent circuits
#: (100 states or 100 independent circuits: about a minute). Above the MAX_FIXES_* ceilings a
#: check runs without them (``--no-fixes``), or is refused.
MAX_STATES = 1000
MAX_INDEPENDENT_CIRCUITS = 200
MAX_FIXES_STATES = 100
MAX_FIXES_INDEPENDENT_CIRCUITS = 100

# Loads in watts --------------------------------------------------------------------------------
#: Highest DC voltage a circuit may have [V]: the upper limit of "low voltage" for direct
#: current in the EU Low Voltage Directive 2014/35/EU, Article 1 (75 to 1 500 V DC). A plan's
#: DC system above it is not one this tool is made for; more is a typing slip.
MAX_DC_VOLTAGE_V = 1500.0
#: Default efficiency of an inverter feeding an AC load from the DC system, where the plan gives
#: none. Rule of thumb, no published source: NREL's PVWatts inverter model (Dobos, "PVWatts
#: Version 5 Manual", NREL, 2014; pvlib's ``inverter.pvwatts``), with its
#: nominal efficiency 0.96, gives 0.92 to 0.96 from 10 % to 100 % of the inverter's rating; a
#: battery inverter on a boat or in a vehicle is seldom as efficient as a grid-tied PV inverter,
#: and a lower efficiency can only raise the DC current (the default never flatters).
DEFAULT_INVERTER_EFFICIENCY = 0.85
#: PVWatts inverter model (Dobos 2014, as above): eta = eta_nom/eta_ref (-0.0162 zeta
#: - 0.0059/zeta + 0.9858), zeta = P_dc/P_dc0, eta_ref = 0.9637; pvlib's default nominal
#: efficiency eta_nom = 0.96.
PVWATTS_COEFFICIENTS = (-0.0162, -0.0059, 0.9858)
PVWATTS_ETA_NOM = 0.96
#: The default idle draw of an inverter, where the plan gives none, is the DC power the PVWatts
#: curve draws at zero AC output (physics.loads.pvwatts_idle_share: 0.62 % of the AC rating),
#: with the inverter rated at the circuit's largest AC load. An inverter rated above its largest
#: load idles higher: give idle_w from its data sheet.

# Aviation profile ------------------------------------------------------------------------------
#: The compensated installation may not have a deviation, in level flight, greater than 10
#: degrees on any heading: 14 CFR 23.1327(a)(2) (Amdt. 23-20, 42 FR 36969, 1977; before
#: amendment 23-64), 14 CFR 25.1327(b) and 29.1327(b) [deg].
AVIATION_LIMIT_DEG = 10.0
#: Each calibration reading of the placard must be in terms of magnetic heading in not more than
#: 45 degree increments: 14 CFR 25.1547(d) (also 27.1547(d)) [deg].
AVIATION_MAX_STEP_DEG = 45.0
#: The aviation card's step [deg]: 30 degrees, within the 45 degree limit above (common practice,
#: no source).
AVIATION_CARD_STEP_DEG = 30.0
#: The card's step elsewhere [deg].
CARD_STEP_DEG = 15.0
