"""The one place for the words every renderer shows: cautions, verdicts, remedies, findings.

The analysis returns figures and kinds; this module turns them into sentences, so the terminal,
the reports and the JSON say the same thing in the same words.
"""

from __future__ import annotations

import datetime as _dt
import re

from ..constants import OVERWHELMED_DEG
from ..quantities import Status, Unit
from ..units import LENGTH_UNITS, format_length

CAUTIONS = (
    "A plan is not a compass swing: these figures come from the routes, currents and sizes in "
    "the plan, and cables laid differently give different fields.",
    "After installation have the compass adjusted and swung by a qualified compass adjuster, and "
    "calibrate electronic compasses and magnetometers as their makers direct, in the final "
    "installation.",
    "Electrical work per ISO 10133 (small craft, extra-low-voltage DC) or ABYC E-11, and local "
    "codes, by licensed or competent people.",
)

#: Said once more when a plan has steel items.
STEEL_CAUTION = ("Steel items count only the magnetism the Earth's field induces in them, from "
                 "their shape, size, place and permeability band; their permanent magnetism "
                 "(from how they were built, welded, hammered, or lay on one heading) cannot be "
                 "known from a plan, and neither can steel the plan leaves out: the compass must "
                 "still be swung after installation, and the swing finds what no plan can.")
#: Under a budget table with steel rows.
STEEL_TABLE_NOTE = ("Steel: the field the Earth's field induces in the item, which turns with "
                    "the heading; its own worst over headings, attitude and its permeability "
                    "band. ≤ where the item's shape (box, plate, cylinder, rod, hollow) makes the "
                    "band's ends proven bounds rather than exact (spheres and ellipsoids are "
                    "exact); its µT columns are bounds over every heading.")


def cautions(plan) -> tuple[str, ...]:
    """The cautions of a report on this plan: :data:`CAUTIONS`, and the steel one where the plan
    has steel items."""
    return CAUTIONS + ((STEEL_CAUTION,) if getattr(plan, "steel", ()) else ())


def lambda_line(low, high) -> str:
    """Lambda, the part of the Earth's horizontal force the needle keeps, over the bands."""
    shown = f"{low:.3f}" if abs(high - low) < 5e-4 else f"{low:.3f} to {high:.3f}"
    return (f"λ (the share of the Earth's horizontal force the needle keeps, with the steel): "
            f"{shown}")


OVERWHELMED = "overwhelmed"


def degrees(value, overwhelmed=False) -> str:
    """A deviation for display; 'overwhelmed' where the sensor can point anywhere."""
    if value is None:
        return "—"
    if overwhelmed or value >= OVERWHELMED_DEG:
        return OVERWHELMED
    return f"{value:.2f}"


def with_degree_sign(value, overwhelmed=False) -> str:
    """'1.23°', or 'overwhelmed' with no degree sign."""
    text = degrees(value, overwhelmed)
    return text if text in (OVERWHELMED, "—") else text + "°"


def number(value, digits=3) -> str:
    """A fixed-point number that never reads "-0.000"."""
    text = f"{value:.{digits}f}"
    return text[1:] if text.startswith("-") and float(text) == 0 else text


def microtesla(value_t) -> str:
    return number(value_t * 1e6, 3)


#: A status in the words of a state's line.
STATUS_WORDS = {Status.WITHIN: "within", Status.OVER: "OVER", Status.OVERWHELMED: "OVERWHELMED",
                Status.NOT_USED: "not used"}


def verdict(state_result) -> str:
    return STATUS_WORDS[state_result.status]


def is_total_field(sensor) -> bool:
    return not sensor.budget.degrees


def budget_text(sensor) -> str:
    """A sensor's budget with its unit: degrees, or nT for a total-field magnetometer."""
    return str(sensor.budget)


def figure_text(value, unit, overwhelmed=False) -> str:
    """A figure held against a budget, with the budget's unit: '1.23°', '5.96 nT', or
    'overwhelmed'."""
    if unit is Unit.NANOTESLA:
        return "—" if value is None else f"{value:.2f} nT"
    return with_degree_sign(value, overwhelmed)


def figure_number(value, unit, overwhelmed=False) -> str:
    """The same without the unit (for a column headed with it)."""
    if unit is Unit.NANOTESLA:
        return "—" if value is None else f"{value:.2f}"
    return degrees(value, overwhelmed)


def held_text(sensor, state_result) -> str:
    """The held figure with its unit."""
    return figure_text(state_result.held, sensor.budget.unit, state_result.overwhelmed)


def held_figure(sensor) -> str:
    """What the held figure is, in words."""
    if is_total_field(sensor):
        figure = ("total-field error |F + b| - |F| of the residual after compensation in "
                  f"{sensor.reference_state!r}" if sensor.reference_state else
                  "total-field error |F + b| - |F|")
    else:
        figure = (f"deviation of the residual after adjustment in {sensor.reference_state!r}"
                  if sensor.reference_state else "absolute deviation")
    limits = []
    if sensor.max_heel_deg:
        limits.append(f"heel ±{sensor.max_heel_deg:g}°")
    if sensor.max_pitch_deg:
        limits.append(f"pitch ±{sensor.max_pitch_deg:g}°")
    attitude = f", worst attitude within {' and '.join(limits)}" if limits else ", level"
    return figure + attitude


def example_rows(skipped) -> str | None:
    """The line a check prints while the plan still holds the template's example rows.

    Parameters
    ----------
    skipped : sequence of (sheet, row)
        ``Plan.skipped_examples``.
    """
    if not skipped:
        return None
    count = len(skipped)
    rows = ", ".join(f"{sheet} row {row}" for sheet, row in skipped)
    return (f"the plan still has {count} example row{'s' if count != 1 else ''} from the "
            f"template ({rows}); {'they were' if count != 1 else 'it was'} not counted — "
            f"delete {'them' if count != 1 else 'it'}")


def share(share_of_budget, figure, unit=Unit.DEGREES) -> str:
    """A share of the budget in per cent; "—" where a deviation is "overwhelmed" (its share
    would only repeat the placeholder figure)."""
    if unit is Unit.DEGREES and figure is not None and figure >= OVERWHELMED_DEG:
        return "—"
    return f"{share_of_budget * 100:.0f} %"


def position(position_m, unit_system) -> str:
    """A position in one unit for all three coordinates."""
    unit = "in" if unit_system in ("ft", "in") else "m"
    scale = LENGTH_UNITS[unit]
    digits = 1 if unit == "in" else 3
    return "(" + ", ".join(f"{v / scale:.{digits}f}" for v in position_m) + f") {unit}"


def _spot_command(plan_source, remedy, unit_system):
    scale = LENGTH_UNITS[unit_system]

    def corner(values):
        return ",".join(f"{v / scale:.4g}" for v in values)

    return (f'deviation spot "{plan_source}" --sensor "{remedy.sensor}" --region '
            f"{corner(remedy.box_low_m)} {corner(remedy.box_high_m)}")


def remedy_action(remedy, unit_system, plan_source="PLAN") -> str:
    """What to do, in words."""
    run = remedy.run
    if remedy.kind == "pair":
        size = remedy.size or "two 10 AWG cables (size not given)"
        return (f'route the return of "{run}" beside its supply (paired, '
                f"{format_length(remedy.spacing_m, unit_system)} centres, {size}; the worst lie "
                "of the pair counted)")
    if remedy.kind == "twist":
        return (f'twist "{run}" with its return (lay {format_length(remedy.lay_m, unit_system)} '
                "assumed, no tighter than 12 cable diameters; "
                f"{format_length(remedy.spacing_m, unit_system)} centres; untwisted ends counted)")
    if remedy.kind == "clearance":
        return (f'keep "{run}" at least {format_length(remedy.clearance_m, unit_system)} from the '
                "sensor (bend its nearest stretch away)")
    if remedy.kind == "no single fix":
        return ("no rerouting of a single run brings the sensor within budget here; change "
                "several runs, or move the sensor")
    if remedy.kind == "move sensor":
        return (f"or move the sensor: {_spot_command(plan_source, remedy, unit_system)} searches "
                "around it, within the plan's extent")
    raise ValueError(f"unknown remedy kind {remedy.kind!r}")


def fix_step_action(step, unit_system) -> str:
    """One change of a set of fixes, in the words of the single-run remedy."""
    return remedy_action(step, unit_system)


#: What a set of fixes that does not reach the budget ends with.
NO_FIX_SET = "no combination of rerouting the largest culprits fixes it; move the sensor"


def fix_set_lines(fixes, unit_system, unit=Unit.DEGREES) -> list[str]:
    """A sensor's set of fixes, one line per change in order, with the held figure after each
    (the numbering is the writer's); see :data:`NO_FIX_SET` for how one that falls short ends."""
    if fixes is None:
        return []
    return [f"{fix_step_action(step, unit_system)}: then {figure_text(step.after, unit)}"
            + (" (within budget)" if step.within_after else "") for step in fixes.steps]


def remedy_text(remedy, unit_system, plan_source="PLAN", unit=Unit.DEGREES) -> str:
    """The action and, where computed, the figure before and after (in the budget's unit)."""
    action = remedy_action(remedy, unit_system, plan_source)
    if remedy.after is None:
        return action
    result = "within budget" if remedy.within_after else "still over budget"
    return (f"{action}: {figure_text(remedy.before, unit)} → "
            f"{figure_text(remedy.after, unit)} ({result})")


def finding_message(finding) -> str:
    """A rule finding in words, without its source."""
    rule = finding.rule
    if rule == "bipolar-within-5m":
        return (f'run "{finding.subject}" passes {finding.distance_m:.2f} m from the compass and '
                "is not laid bipolar (return beside its supply)")
    if rule == "unknown-safe-distance":
        return (f'"{finding.subject}" has no labelled compass safe distance and is '
                f"{finding.distance_m:.2f} m from the compass")
    if rule == "inside-safe-distance":
        return (f'"{finding.subject}" is {finding.distance_m:.2f} m from the sensor, inside its '
                f"labelled {finding.label} compass safe distance of {finding.limit_m:.2f} m")
    if rule == "low-lambda":
        return (f"its steel items leave the needle only λ = {finding.fraction:.2f} of the Earth's "
                f"horizontal force ({finding.figure * 1e6:.1f} µT of directive force): the "
                "compass will be sluggish, slow to settle and easily swung by motion; mount it "
                "further from the steel (deviation spot)")
    if rule == "compensation":
        outcome = ("within its budget: give the host the current measurement and learn the "
                   "compensation after installation, then check the residual"
                   if finding.within else "still over its budget: move the sensor "
                   "(deviation spot) or reroute the culprit runs")
        return (f"with the current compensation its host can learn from the currents it "
                f"measures, {with_degree_sign(finding.figure)} would remain: {outcome}")
    raise ValueError(f"unknown finding {rule!r}")


#: How an electronic sensor's standing reads.
STANDING_WORDS = {"within": "within its budget as installed",
                  "within compensated": "within its budget only with current compensation",
                  "over": "over its budget, even with the compensation its host can learn"}


def standing_words(grade) -> str:
    """An electronic sensor's grade, in words, with the share of F beside it as a number."""
    text = (f"{STANDING_WORDS[grade.standing.value]} (held {with_degree_sign(grade.held)} in "
            f"{grade.state!r}")
    if grade.compensated is not None:
        text += f"; {with_degree_sign(grade.compensated)} after compensation"
    return (text + f"); the interference reaches {grade.fraction * 100:.0f} % of the Earth's "
            f"field in {grade.fraction_state!r}")


def finding_source(finding) -> str:
    from ..advice import RULE_SOURCES

    return RULE_SOURCES[finding.rule]


def finding_text(finding) -> str:
    where = f"{finding.sensor}" + (f", {finding.state}" if finding.state else "")
    return f"{where}: {finding_message(finding)} ({finding_source(finding)})"


def zone_warning(site) -> str | None:
    if site.zone == "blackout":
        return ("The site is in the blackout zone (H below 2 µT): a magnetic compass is unreliable "
                "here whatever the wiring.")
    if site.zone == "caution":
        return ("The site is in the caution zone (H below 6 µT): compasses degrade here and small "
                "disturbances give large deviations.")
    return None


def site_line(site):
    parts = [f"H {site.horizontal_t * 1e6:.2f} µT", f"Z {site.vertical_t * 1e6:.2f} µT",
             f"F {site.total_t * 1e6:.2f} µT"]
    if site.declination_deg is not None:
        side = "E" if site.declination_deg >= 0 else "W"
        unc = (f" ±{site.declination_uncertainty_deg:.2f}°"
               if site.declination_uncertainty_deg is not None else "")
        parts.append(f"declination {abs(site.declination_deg):.2f}° {side}{unc}")
    parts.append(f"inclination {site.inclination_deg:.1f}°")
    source = "WMM2025" if site.source == "WMM2025" else "from the plan"
    parts.append(f"{source}, {site.date_text}")
    return "  ".join(parts)


# The aviation profile ---------------------------------------------------------------------------

#: Where the 10 degree limit and the placard's content come from, as the reports cite them.
LIMIT_SOURCE = ("14 CFR 23.1327(a)(2) (Amdt. 23-20, before amendment 23-64) and 25.1327(b): the "
                "compensated installation may not have a deviation, in level flight, greater than "
                "10° on any heading")
PLACARD_SOURCE = ("14 CFR 25.1547: a placard on or near the magnetic direction indicator shows "
                  "its calibration in level flight with the engines operating, states whether it "
                  "was made with radio receivers on or off, in not more than 45° increments of "
                  "magnetic heading")
OVER_LIMIT_SOURCE = ("14 CFR 27.1547(e) (and 23.1547(e), to which 23.1327(b) refers): the "
                     "placard states which electrical loads would cause a deviation of more than "
                     "10° when turned on")
PLACARD_CAUTION = ("Predicted, for planning: the placard is made from the compass swing, by the "
                   "person who adjusts the compass.")

_ENGINES = {"running": "engines running", "stopped": "engines stopped"}
_GENERATOR = {"charging": "generator charging", "not charging": "generator not charging"}
_RADIOS = {"on": "radio receivers on", "off": "radio receivers off"}


def condition_words(condition) -> str | None:
    """What a state stands for, in the placard's words: "engines running, generator charging,
    radio receivers on"; None where the plan says nothing of it."""
    if condition is None:
        return None
    parts = [table[value] for table, value in ((_ENGINES, condition.engines),
                                              (_GENERATOR, condition.generator),
                                              (_RADIOS, condition.radios)) if value is not None]
    return ", ".join(parts) or None


def _switched(switched_on) -> str:
    names = [name + (" (reversed)" if sign < 0 else "") for name, sign in switched_on]
    return f" with {', '.join(names)} on" if names else ""


def limit_text(limit) -> str:
    """A state's level figure against the 10 degree limit, in words."""
    level = with_degree_sign(limit.level_deg)
    if limit.within:
        return f"{level} in level flight on the worst heading: within {limit.limit_deg:g}°"
    return (f"{level} in level flight on the worst heading{_switched(limit.switched_on)}: OVER "
            f"{limit.limit_deg:g}°")


def placard_text(line) -> str:
    """A state's line of the placard: the conditions and the step, and the loads to name where
    the state is over the limit."""
    conditions = condition_words(line.condition)
    radios = "" if line.radios_stated else (
        "; radio receivers on or off: not stated in the plan (give the state a row in the "
        "conditions sheet)")
    text = (f"{line.state}: calibration in level flight"
            + (f", {conditions}" if conditions else "") + radios
            + f"; readings every {line.step_deg:g}° of magnetic heading")
    if line.limit is not None and not line.limit.within:
        text += (f"; more than {line.limit.limit_deg:g}° when on: {line.state}"
                 f"{_switched(line.limit.switched_on)}")
    return text + "."


#: The occasions for a swing in FAA AC 43.13-1B CHG 1, par. 12-37a, in its words, by trigger
#: value (aftercare.refit.SwingTrigger).
TRIGGER_WORDS = {
    "electrical system changed": "whenever a change is made to the electrical system",
    "ferrous items changed": "after any cockpit modification or major replacement involving "
                             "ferrous metal",
    "large change of location": "when an aircraft operation is changed to a different "
                                "geographic location with a major change in magnetic deviation",
}


def _names(label, names, most=6):
    if not names:
        return ""
    shown = ", ".join(names[:most]) + (f" and {len(names) - most} more" if len(names) > most
                                       else "")
    return f"{label} {shown}"


def trigger_text(found) -> str:
    """An occasion for a swing a refit meets: AC 43.13-1B's words, and what meets it."""
    head = (f"FAA AC 43.13-1B CHG 1 par. {found.paragraph}: a compass swing must be performed "
            f"{TRIGGER_WORDS[found.trigger.value]}")
    if found.trigger.value == "large change of location":
        what = (f"H {found.horizontal_before_t * 1e6:.2f} → {found.horizontal_after_t * 1e6:.2f} "
                f"µT ({found.field_change * 100:.0f} % change of H or Z/H); the new field alone "
                f"moves the earlier card by up to {with_degree_sign(found.card_change_deg)}")
    else:
        what = "; ".join(part for part in (_names("runs", list(found.runs)),
                                           _names("circuits", list(found.circuits)),
                                           _names("items", list(found.items))) if part)
    return f"{head} — {what}."


def plan_date(site) -> str:
    """The site's date for a reader: as given, or a decimal year (2028.30) as the calendar day
    it stands for (the inverse of WMM's year + (day of year - 1) / days in year), said to be
    about that day with the decimal year beside it."""
    text = site.date_text
    if not re.fullmatch(r"\d{4}(\.\d+)?", text):
        return text
    year = int(site.decimal_year)
    start = _dt.date(year, 1, 1)
    days = (_dt.date(year + 1, 1, 1) - start).days
    day = start + _dt.timedelta(days=min(days - 1, round((site.decimal_year - year) * days)))
    return f"about {day.isoformat()} ({text} as a decimal year)"
