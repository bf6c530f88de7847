"""The plan workbook's sheets and columns, in one place.

The reader, the blank template and the plan writer all work from this table, so a column added
here is read, explained in the template's header comment, offered as a drop-down where it has
choices, and written back by ``new --from``.
"""

from __future__ import annotations

from dataclasses import dataclass

#: Return kinds of a run (see routing).
RETURN_KINDS = ("paired", "twisted", "separate", "none")
SENSOR_KINDS = ("magnetic compass", "electronic compass", "magnetometer",
                "total-field magnetometer")
#: The scalar survey magnetometer: judged by its total-field error in nT (budget_nt).
TOTAL_FIELD_KIND = "total-field magnetometer"
#: Kinds that read a field vector electronically: axes, per-ampere vectors, compensation.
VECTOR_ELECTRONIC_KINDS = ("electronic compass", "magnetometer")
SAFE_DISTANCE_FOR = ("standard", "steering")
#: How the two conductors of a paired run lie about its axis; "not known" counts the worst.
PAIR_LIES = ("not known", "side by side", "one above the other")
#: How a circuit switches: with the operating states, or on its own on top of any state.
SWITCHING = ("with states", "independent", "independent reversing")
#: Kinds of box in the volumes sheet.
VOLUME_KINDS = ("mount in", "keep out")
#: How a circuit's load is fed: straight from the DC system, or an AC load through an inverter.
SUPPLIES = ("DC", "via inverter")
#: Columns of the states sheet that describe the circuit, not an operating state.
STATES_CIRCUIT_COLUMNS = ("switching", "voltage", "supply", "efficiency", "idle_w")
#: Column names of the states sheet that are free text or describe the circuit, never an
#: operating state.
STATES_TEXT_COLUMNS = ("note", "notes", "comment", "comments") + STATES_CIRCUIT_COLUMNS
#: What the plan is for (the site's profile setting).
PROFILES = ("general", "aviation")
#: The placard's conditions of an operating state (the conditions sheet).
ENGINES = ("running", "stopped")
GENERATOR = ("charging", "not charging")
RADIOS = ("on", "off")


@dataclass(frozen=True)
class Column:
    name: str
    explanation: str
    required: bool = False
    choices: tuple[str, ...] = ()


@dataclass(frozen=True)
class SheetSpec:
    name: str
    columns: tuple[Column, ...]

    @property
    def required(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.columns if c.required)

    @property
    def known(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.columns)


def _sheet(name, *columns):
    return SheetSpec(name, tuple(Column(*c) if isinstance(c, tuple) else c for c in columns))


NOTE = Column("note", "Free text.")

SCHEMA: dict[str, SheetSpec] = {s.name: s for s in (
    _sheet("site",
           ("setting", "Name of the setting (see the rows below).", True),
           ("value", "Its value.", True),
           NOTE),
    _sheet("points",
           ("point", "Name of a place to route through or mount at; used in routes and 'at' "
                     "cells.", True),
           ("x", "Forward of the datum (bare numbers in the plan's units; or e.g. 1.2 m, 4 ft).",
            True),
           ("y", "To port (left) of the datum; starboard is negative.", True),
           ("z", "Up from the datum.", True),
           NOTE),
    _sheet("runs",
           ("run", "Unique name of the cable run.", True),
           ("circuits", "Circuit(s) whose current this run carries, as named in the states "
                        "sheet, separated by ;"),
           ("route", "Waypoints from the source to the load, separated by >; each a point name "
                     "or x, y, z.", True),
           ("return", "paired (return beside the supply), twisted, separate (own route) or none.",
            True, RETURN_KINDS),
           ("return_route", "For separate: waypoints from the load back to the source."),
           ("spacing", "Centre-to-centre distance of supply and return (paired, twisted); bare "
                       "numbers in mm (in for imperial plans). Blank: one insulated diameter of "
                       "size."),
           ("lay", "Twisted: length of one full twist; bare numbers in mm (in for imperial "
                   "plans)."),
           ("lie", "Paired: how the two conductors lie about the run's axis: side by side, one "
                   "above the other, or not known (blank: not known, the worst orientation "
                   "counts, a bound).", False, PAIR_LIES),
           ("untwisted_ends", "Twisted: length left untwisted at each end (lugs, breakers, "
                              "terminals), counted as a pair (blank: the documented default)."),
           ("size", "Conductor size, e.g. 10 AWG, 2/0 AWG, 16 mm2."),
           ("current_a", "Current in amperes, used only when the plan has no states sheet."),
           NOTE),
    _sheet("states",
           ("circuit", "Circuit name. Every other column except switching, voltage, supply, "
                       "efficiency, idle_w and note is an operating state; each cell is the "
                       "circuit's current in A in that state, or its load in watts as 1500 W or "
                       "1.5 kW with the voltage column filled (blank: off; negative: reversed, "
                       "e.g. charging).", True),
           ("harbour", "An operating state: rename, add or remove state columns freely."),
           ("night motoring", "Another operating state."),
           ("switching", "with states (blank), or independent: the load may be on or off on top "
                         "of any state (windlass, thruster, a radio transmitting), at the current "
                         "its cell gives; independent reversing: either way round. The budget "
                         "takes the worst combination.", False, SWITCHING),
           ("voltage", "The circuit's DC voltage, e.g. 12 or 24 V; needed where a cell is in "
                       "watts (an inverter's DC input for a load via inverter)."),
           ("supply", "DC (blank): the watts are drawn from the DC system; via inverter: an AC "
                      "load fed through an inverter, its cells in watts of AC output (blank: "
                      "the inverter off; 0 W: on and idling).", False, SUPPLIES),
           ("efficiency", "Via inverter: the inverter's efficiency, 0.88 or 88 % (blank: 0.85, "
                          "rule of thumb, no published source; below NREL's PVWatts curve)."),
           ("idle_w", "Via inverter: the inverter's own draw in W when on, from its data sheet "
                      "(blank: 0.62 % of the largest load, the PVWatts curve at zero output)."),
           NOTE),
    _sheet("sensors",
           ("sensor", "Unique name of the compass or magnetometer.", True),
           ("at", "Point name or x, y, z of its centre.", True),
           ("kind", "magnetic compass, electronic compass or magnetometer.", True, SENSOR_KINDS),
           ("budget_deg", "Compass, electronic compass or magnetometer: the deviation in "
                          "degrees this sensor may take from the wiring and equipment (a "
                          "total-field magnetometer gives budget_nt instead)."),
           ("reference_state", "State in which it will be adjusted or calibrated (blank: none, "
                               "the absolute deviation counts)."),
           ("used_in", "States in which the sensor is relied on, separated by ; (blank: every "
                       "state). Its verdict comes only from these."),
           ("max_heel_deg", "Largest heel to check, degrees (blank: 0)."),
           ("max_pitch_deg", "Largest pitch or trim to check, degrees (blank: 0)."),
           NOTE,
           ("budget_nt", "Total-field magnetometer only: the total-field error in nT it may take "
                         "from the wiring and equipment (leave its budget_deg blank)."),
           ("axes", "Electronic compass or magnetometer: which way its own x, y, z axes point in "
                    "the vessel frame, e.g. x+ y- (its x forward, its y to starboard, so its z "
                    "down), or forward left up / forward right down (blank: the vessel's axes)."),
           ("measured_currents", "Electronic compass or magnetometer: the currents its host "
                                 "measures for current compensation: total (every circuit's "
                                 "current summed) or circuit names separated by ;.")),
    _sheet("equipment",
           ("item", "Name of a magnetised item (speaker, motor, instrument).", True),
           ("at", "Point name or x, y, z.", True),
           ("safe_distance", "Compass safe distance from its label (IEC 60945)."),
           ("safe_distance_for", "Which compass the label is for: standard or steering.", False,
            SAFE_DISTANCE_FOR),
           ("moment_am2", "Or: its magnetic moment in A·m²."),
           ("axis", "Direction of the moment, x, y, z (blank: the worst orientation)."),
           ("states", "States it is present or powered in, separated by ; (blank: all)."),
           NOTE),
    _sheet("spots",
           ("spot", "Name of a candidate mounting position for `deviation spot` to rank.", True),
           ("at", "Point name or x, y, z.", True),
           ("for_sensor", "The sensor it is a candidate for, as named in the sensors sheet "
                          "(blank or all: every sensor)."),
           NOTE),
    _sheet("volumes",
           ("volume", "Name of a box where a sensor may be mounted, or must not be.", True),
           ("kind", "mount in (spots only inside such boxes) or keep out (never a spot inside).",
            True, VOLUME_KINDS),
           ("from", "One corner of the box: point name or x, y, z.", True),
           ("to", "The opposite corner: point name or x, y, z.", True),
           ("for_sensor", "The sensor it applies to (blank or all: every sensor)."),
           NOTE),
    _sheet("conditions",
           ("state", "An operating state, as named in the states sheet: what it stands for on "
                     "a compass placard (aviation profile).", True),
           ("engines", "running or stopped.", False, ENGINES),
           ("generator", "charging or not charging.", False, GENERATOR),
           ("radios", "Radio receivers on or off (14 CFR 25.1547(c): the placard states which).",
            False, RADIOS),
           NOTE))}

SHEETS = tuple(SCHEMA)
REQUIRED_SHEETS = ("runs", "sensors")
SITE_SETTINGS = ("units", "latitude", "longitude", "date", "altitude_m", "horizontal_field_ut",
                 "vertical_field_ut", "place", "vessel", "owner", "installer",
                 "profile")
#: Site settings that are free text, shown on a report's first page and the deviation card.
SITE_TEXT_SETTINGS = ("vessel", "owner", "installer")


def columns_of(sheet: str) -> dict[str, tuple[str, ...]]:
    """The reader's view of a sheet: its required and known columns."""
    spec = SCHEMA[sheet]
    known = spec.known
    if sheet == "states":                 # state columns are the user's own; only these are fixed
        known = ("circuit", "note") + STATES_CIRCUIT_COLUMNS
    return {"required": spec.required, "known": known}
