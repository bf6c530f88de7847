"""The electronic-sensor reports as documents: the grading, compensation and model checks
(``electronic``), the field per ampere (``per-amp``) and the plan over its operating area
(``area``). Field vectors are in the unit asked for (µT, nT or mG); a total-field
magnetometer's figures are in nT, its budget's unit."""

from __future__ import annotations

import math

from ...constants import (
    FIELD_UNITS_T,
    MODEL_FIELD_TOLERANCE_T,
    MODEL_INCLINATION_TOLERANCE_DEG,
    SURVEY_FIGURE_OF_MERIT_NT,
)
from ...quantities import Status
from ...schema import TOTAL_FIELD_KIND
from .. import words
from ..model import TONE_OF, Block, Cell, Column, Document, Paragraph, Section, Table, Tone, cell
from .common import amperes, paper_for, stamp
from .common import figure as figure_cell

#: How each field unit is written.
UNIT_LABEL = {"uT": "µT", "nT": "nT", "mG": "mG"}
#: Decimals of a field in each unit: about a nanotesla.
FIELD_DIGITS = {"uT": 3, "nT": 1, "mG": 2}
#: Decimals of a field per ampere in each unit.
PER_AMPERE_DIGITS = {"uT": 4, "nT": 2, "mG": 3}


def _in(value_t, unit):
    return float(value_t) / FIELD_UNITS_T[unit]


def field_cell(value_t, unit, digits=None, *, tone=Tone.PLAIN, prefix="") -> Cell:
    if value_t is None:
        return Cell("—", None)
    return cell(_in(value_t, unit), FIELD_DIGITS[unit] if digits is None else digits, tone=tone,
                prefix=prefix)


def nanotesla(value_t, *, signed=False, tone=Tone.PLAIN) -> Cell:
    value = float(value_t) * 1e9
    return cell(value, 2, tone=tone, prefix="+" if signed and value >= 0.005 else "")


def _status_cell(status, words_of=None) -> Cell:
    text = (words_of or words.STATUS_WORDS)[status]
    return Cell(text, text, None, TONE_OF[status])


# electronic ---------------------------------------------------------------------------------------

def _total_field_status(s):
    return s.status


def _total_field_blocks(report):
    sensor = report.sensor
    low_fom, high_fom = SURVEY_FIGURE_OF_MERIT_NT
    columns = (Column("state", wrap=True), Column("largest nT", numeric=True),
               Column("smallest nT", numeric=True), Column("held nT", numeric=True),
               Column("heading peak to peak nT", numeric=True),
               Column("of which bounds nT", numeric=True), Column("verdict"))
    rows = []
    for s in report.state_results:
        tone = TONE_OF[s.status]
        rows.append((cell(s.state + ("" if s.used else " (not relied on)")),
                     nanotesla(s.total_field_high_t, signed=True),
                     nanotesla(s.total_field_low_t, signed=True),
                     nanotesla(s.total_field_error_t, tone=tone),
                     nanotesla(s.heading_peak_to_peak_t), nanotesla(s.total_field_bound_t),
                     _status_cell(s.status)))
    return [Table(columns, tuple(rows), f"Total-field error, budget {sensor.budget}"),
            Paragraph(f"Over every heading and attitude within heel ±{sensor.max_heel_deg:g}° and "
                      f"pitch ±{sensor.max_pitch_deg:g}°, the worst switching of the independent "
                      f"loads; a compensated survey installation aims at a figure of merit of "
                      f"{low_fom:g}-{high_fom:g} nT (rule of thumb, no published source).")]


#: How each standing is toned.
STANDING_TONE = {"within": Tone.GOOD, "within compensated": Tone.WARN, "over": Tone.BAD}


def _vector_blocks(report, unit):
    label = UNIT_LABEL[unit]
    blocks: list[Block] = []
    grade = report.grade
    if grade is not None:
        blocks.append(Paragraph(f"{grade.standing.value.upper()}: " + words.standing_words(grade),
                                STANDING_TONE[grade.standing.value]))
    comp = report.compensation
    columns = [Column("state", wrap=True), Column(f"interference {label}", numeric=True),
               Column("% of F", numeric=True)]
    if comp is not None:
        columns += [Column(f"compensated horizontal {label}", numeric=True),
                    Column("compensated °", numeric=True),
                    Column("compensated % of F", numeric=True),
                    Column(f"of which bounds {label}", numeric=True)]
    columns += [Column(f"field vs model {label}", numeric=True),
                Column("inclination vs model °", numeric=True), Column("model check")]
    rows = []
    for s in report.states:
        row = [cell(s.state + ("" if s.used else " (not relied on)")),
               field_cell(s.interference_t, unit), cell(s.interference_fraction * 100, 1)]
        if comp is not None:
            row += [field_cell(s.compensated_horizontal_t, unit),
                    cell(s.compensated_deg, 2), cell(s.compensated_fraction * 100, 1),
                    field_cell(s.compensated_bound_t, unit)]
        ok = Cell("ok", "ok", None, Tone.GOOD) if s.model_ok else Cell("FAILS", "FAILS", None,
                                                                      Tone.BAD)
        row += [field_cell(s.field_departure_t, unit), cell(s.inclination_departure_deg, 2),
                ok if s.used else Cell(ok.text, ok.value, None, Tone.MUTED)]
        rows.append(tuple(row))
    blocks.append(Table(tuple(columns), tuple(rows), "Interference, compensation and the model "
                                                      "check, by state"))
    if comp is not None:
        blocks.append(Paragraph(
            "Compensated figures count what the fit leaves of every part the plan does not fix "
            "(a pair's lie, a twisted run's ends, equipment of unknown orientation) at its worst: "
            "where that is not zero they are bounds, and 'of which bounds' is its share."))
        blocks.append(Paragraph(f"Compensation from the measured current(s) "
                                f"{', '.join(comp.measured)}: `deviation per-amp` gives the "
                                "figures to key in."))
    blocks.append(Paragraph(
        f"Model check: the field the host sees (calibrated"
        f"{', compensated' if comp is not None else ''}) within "
        f"{_in(MODEL_FIELD_TOLERANCE_T, unit):g} {label} of the model's total field and "
        f"{MODEL_INCLINATION_TOLERANCE_DEG:g}° of its inclination, over every heading and "
        "attitude (rule of thumb, no published source)."))
    return blocks


def electronic_verdict(report):
    """A sensor's line of the summary: its headline figure and verdict, as a status."""
    from ...electronic import is_acceptable

    sensor = report.sensor
    if sensor.kind == TOTAL_FIELD_KIND:
        used = [s for s in report.state_results if s.used] or list(report.state_results)
        worst = max(used, key=lambda s: s.held)
        figure = cell(worst.held, 2, suffix=" nT", tone=TONE_OF[worst.status])
        what = f"held in {worst.state}"
    else:
        grade = report.grade
        figure = (figure_cell(grade.held, sensor.budget.unit,
                              tone=STANDING_TONE[grade.standing.value])
                  if grade is not None else Cell("—", None))
        what = ""
        if grade is not None:
            what = f"held in {grade.state}"
            if grade.compensated is not None:
                what += (f"; {words.with_degree_sign(grade.compensated)} after compensation in "
                         f"{grade.compensated_state}")
    acceptable = is_acceptable(report)
    status = Status.WITHIN if acceptable else Status.OVER
    if sensor.kind == TOTAL_FIELD_KIND:
        verdict = "within budget" if acceptable else "over budget"
    elif report.grade is None:
        verdict = "within" if acceptable else "model check fails"
    elif not acceptable and report.grade.standing.value != "over":
        verdict = "model check fails"
    else:
        verdict = report.grade.standing.value
    return figure, what, status, verdict


def _electronic_summary(reports):
    columns = (Column("sensor", wrap=True), Column("kind", wrap=True),
               Column("budget", numeric=True), Column("figure", numeric=True),
               Column("what", wrap=True), Column("verdict", wrap=True))
    rows = []
    for report in reports:
        figure, what, status, verdict = electronic_verdict(report)
        rows.append((cell(report.sensor.name), cell(report.sensor.kind),
                     cell(str(report.sensor.budget)), figure, cell(what),
                     Cell(verdict, verdict, None, TONE_OF[status])))
    return Table(columns, tuple(rows))


def _recap(reports, noun="sensor"):
    lines = []
    bad = []
    for report in reports:
        figure, what, status, verdict = electronic_verdict(report)
        if status is not Status.WITHIN:
            bad.append(report.sensor.name)
        lines.append(Paragraph(f"{report.sensor.name}: {verdict} — {figure.text}"
                               + (f" ({what})" if what else ""), TONE_OF[status], indent=1))
    head = (f"Verdict: every electronic {noun} within its budget." if not bad else
            f"Verdict: {len(bad)} of {len(reports)} electronic {noun}"
            f"{'s' if len(reports) != 1 else ''} over budget or failing the model check.")
    return (Paragraph(head, Tone.GOOD if not bad else Tone.BAD), *lines)


def _site_meta(analysis, unit):
    site = analysis.site
    label = UNIT_LABEL[unit]
    return (f"plan {analysis.plan.source}",
            f"Earth's field: F {_in(site.total_t, unit):.2f} {label}, H "
            f"{_in(site.horizontal_t, unit):.2f} {label}, inclination "
            f"{site.inclination_deg:.1f}° ({site.source})")


def electronic_document(analysis, reports, unit="uT") -> Document:
    """``deviation electronic``: each electronic sensor's interference, compensation residual
    and model check; a total-field magnetometer's error in nT."""
    from ..electronic import electronic_json

    sections = [Section("Summary", (_electronic_summary(reports),), sheet="summary")]
    for report in reports:
        sensor = report.sensor
        blocks = (_total_field_blocks(report) if sensor.kind == TOTAL_FIELD_KIND
                  else _vector_blocks(report, unit))
        sections.append(Section(f"{sensor.name} ({sensor.kind})", tuple(blocks),
                                sheet=sensor.name))
    return Document("electronic", "Electronic compasses and magnetometers",
                    _site_meta(analysis, unit), tuple(sections), words.cautions(analysis.plan),
                    recap=_recap(reports), data=electronic_json(analysis, reports, unit),
                    stamp=stamp(), paper=paper_for(analysis.plan), landscape=True)


# per-amp ------------------------------------------------------------------------------------------

def _vector_cells(vector_t, unit):
    return [field_cell(v, unit, PER_AMPERE_DIGITS[unit]) for v in vector_t]


def per_ampere_document(analysis, reports, unit="uT") -> Document:
    """``deviation per-amp``: each circuit's field per ampere at every electronic sensor, and
    the compensation its host would learn."""
    from ..electronic import axes_words, per_ampere_json

    label = UNIT_LABEL[unit]
    sections = []
    for report in reports:
        sensor = report.sensor
        scalar = sensor.kind == TOTAL_FIELD_KIND
        columns = [Column("circuit", wrap=True), Column("switching", wrap=True),
                   Column("peak A", numeric=True),
                   *(Column(f"vessel {a}", numeric=True) for a in "xyz"),
                   *(Column(f"sensor {a}", numeric=True) for a in "xyz"),
                   Column("size", numeric=True), Column("± unknown", numeric=True)]
        if scalar:
            columns += [Column("total field low nT/A", numeric=True),
                        Column("total field high nT/A", numeric=True)]
        rows = []
        for row in report.per_ampere:
            cells = [cell(row.circuit), cell(row.switching), amperes(row.peak_current_a),
                     *_vector_cells(row.vessel_t_per_a, unit),
                     *_vector_cells(row.sensor_t_per_a, unit),
                     field_cell(row.size_t_per_a, unit, PER_AMPERE_DIGITS[unit]),
                     field_cell(row.unknown_t_per_a, unit, PER_AMPERE_DIGITS[unit])]
            if scalar:
                low, high = row.total_field_per_a
                cells += [cell(low * 1e9, 3), cell(high * 1e9, 3)]
            rows.append(tuple(cells))
        blocks: list = [Paragraph(f"axes: {axes_words(sensor)}"),
                        Table(tuple(columns), tuple(rows),
                              f"Field per ampere at the sensor, {label}/A")]
        comp = report.compensation
        if comp is not None:
            fitted = []
            for j, channel in enumerate(comp.measured):
                vessel = comp.coefficients_t_per_a[j]
                fitted.append((cell(channel if channel != "total" else "total (every circuit)"),
                               *_vector_cells(comp.sensor_coefficients_t_per_a[j], unit),
                               *_vector_cells(vessel, unit),
                               field_cell(math.sqrt(float(vessel @ vessel)), unit,
                                          PER_AMPERE_DIGITS[unit])))
            blocks.append(Table(
                (Column("measured current", wrap=True),
                 *(Column(f"sensor {a}", numeric=True) for a in "xyz"),
                 *(Column(f"vessel {a}", numeric=True) for a in "xyz"),
                 Column("size", numeric=True)), tuple(fitted),
                f"Compensation to key in, {label}/A per ampere of each measured current"))
            blocks.append(Paragraph(
                f"Fitted over {comp.samples} samples (states x switchings"
                f"{'' if comp.exhaustive else ', each independent circuit alone'}); the host "
                "subtracts these times the measured currents."))
        sections.append(Section(f"{sensor.name} ({sensor.kind})", tuple(blocks),
                                sheet=sensor.name))
    sections.append(Section("What the columns mean", (Paragraph(
        "Vectors are the part of known direction. ± unknown is the size of what the plan leaves "
        "open (which side of its supply a pair's return lies, how a twisted run's untwisted ends "
        "lie, its floor): give a run whose vector matters a separate return route, or measure "
        "the compensation after installation."),) + ((Paragraph(
        "Steel items are not in these tables: the field the Earth's field induces in them does "
        "not depend on the currents, so current compensation leaves it whole; it turns with the "
        "heading and is in the held figures of deviation check and deviation electronic."),)
        if analysis.plan.steel else ())))
    return Document("per-amp", "Field per ampere at the electronic sensors",
                    (f"plan {analysis.plan.source}", f"unit {label}/A"), tuple(sections),
                    words.cautions(analysis.plan), data=per_ampere_json(analysis, reports, unit),
                    stamp=stamp(),
                    paper=paper_for(analysis.plan), landscape=True)


# area ---------------------------------------------------------------------------------------------

def _steel_sections(area):
    """A plan with steel: each heading sensor's coefficients at each place, the induced B and C
    beside Z/H (nothing without steel)."""
    if not area.steel:
        return ()
    columns = (Column("sensor", wrap=True), Column("place", wrap=True), Column("state", wrap=True),
               Column("Z/H", numeric=True), Column("λ", numeric=True), Column("A °", numeric=True),
               Column("B °", numeric=True), Column("of it induced °", numeric=True),
               Column("C °", numeric=True), Column("D °", numeric=True),
               Column("E °", numeric=True), Column("held °", numeric=True))
    rows = tuple(
        (cell(c.sensor), cell(c.place), cell(c.state), cell(c.z_over_h, 2), cell(c.lam, 3),
         *(cell(v, 2, prefix="+" if v > 0 else "") for v in c.coefficients_deg[:2]),
         cell(c.b_induced_deg, 2, prefix="+" if c.b_induced_deg > 0 else ""),
         *(cell(v, 2, prefix="+" if v > 0 else "") for v in c.coefficients_deg[2:]),
         cell(c.held, 2))
        for c in area.steel)
    notes = ("Archibald Smith's coefficients of what the sensor sees in its worst state (after "
             "adjustment where it is adjusted), read as degrees. The steel's induced B and C grow "
             "with Z/H (cZ/λH, fZ/λH); D and E do not change with the place (NGA Pub. 226, "
             "ch. III). A sensor adjusted at the plan's site keeps c(Z − Z_adj)/λH elsewhere.",)
    return (Section("Steel: the coefficients at each place",
                    (Table(columns, rows, notes=notes),), sheet="steel"),)


def area_document(area, unit="uT") -> Document:
    """``deviation area``: the plan at each place of its operating area, and every figure at its
    worst with the place that sets it."""
    from ..electronic import area_json

    label = UNIT_LABEL[unit]
    places = tuple(
        (cell(p.name), cell(p.latitude_deg, 3), cell(p.longitude_deg, 3),
         cell(_in(p.site.horizontal_t, unit), 2), cell(_in(p.site.total_t, unit), 2),
         cell(p.site.inclination_deg, 1), cell(p.site.zone),
         Cell("within" if p.within_budget else "OVER", "within" if p.within_budget else "OVER",
              None, Tone.GOOD if p.within_budget else Tone.BAD))
        for p in area.places)
    place_table = Table((Column("place", wrap=True), Column("lat °", numeric=True),
                         Column("lon °", numeric=True), Column(f"H {label}", numeric=True),
                         Column(f"F {label}", numeric=True), Column("incl. °", numeric=True),
                         Column("zone"), Column("verdict")), places)
    unit_text = {"deg": "°", "nT": " nT", "%": " %"}
    worst = tuple(
        (cell(w.sensor), cell(w.figure), cell(w.value, 2, suffix=unit_text.get(w.unit,
                                                                                " " + w.unit)),
         cell(w.place), Cell("within" if w.within else "OVER somewhere",
                             "within" if w.within else "OVER somewhere", None,
                             Tone.GOOD if w.within else Tone.BAD))
        for w in area.worst)
    worst_table = Table((Column("sensor", wrap=True), Column("figure", wrap=True),
                         Column("worst", numeric=True), Column("where", wrap=True),
                         Column("sensor's verdict over the area", wrap=True)), worst)
    if area.verdict_changes:
        line = Paragraph("The verdict changes across the area: within budget at "
                         + ", ".join(p.name for p in area.places if p.within_budget)
                         + "; over at " + ", ".join(p.name for p in area.places
                                                    if not p.within_budget) + ".", Tone.BAD)
    else:
        line = Paragraph("The verdict is the same everywhere in the area: "
                         + ("within budget." if area.within_budget else "over budget."),
                         Tone.GOOD if area.within_budget else Tone.BAD)
    sections = (Section("Places of the operating area", (place_table,), sheet="places"),
                *_steel_sections(area),
                Section("Worst over the area", (worst_table,), sheet="worst"))
    recap = (line,)
    return Document("area", "The plan over its operating area", (f"plan {area.plan.source}",),
                    sections, words.cautions(area.plan), recap=recap, data=area_json(area, unit),
                    stamp=stamp(), paper=paper_for(area.plan))
