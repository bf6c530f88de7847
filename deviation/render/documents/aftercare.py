"""The after-installation sheets as documents: the switch-on test and its read-back, the swing
fit, the choice of swing state, the deflection helper and refits. Figures come from
:mod:`deviation.aftercare`; only their words and layout are made here."""

from __future__ import annotations

from ...aftercare import NO_VISIBLE_CHANGE_DEG, SETTINGS_SHEET, TEST_SHEET, Change
from ...physics.swing import COEFFICIENTS
from ...quantities import Status, Unit
from .. import words
from ..aftercare import (
    TOLERANCE_NOTE,
    choices_json,
    deflection_json,
    reading_words,
    refit_json,
    refit_note_text,
    results_json,
    swing_json,
    test_json,
)
from ..model import (
    TONE_OF,
    Bullets,
    Cell,
    Chart,
    Column,
    Document,
    Paragraph,
    Section,
    Table,
    Tone,
    cell,
)
from .common import amperes, figure, paper_for, stamp

# The switch-on test -------------------------------------------------------------------------------

#: The columns of the printed test sheet; test-results reads them back by these names.
TEST_COLUMNS = (Column("step", numeric=True), Column("circuit", wrap=True),
                Column("state", wrap=True), Column("action", wrap=True),
                Column("current before [A]", numeric=True),
                Column("current on test [A]", numeric=True),
                Column("predicted change [°]", numeric=True),
                Column("how the reading moves", wrap=True),
                Column("reading before [°]", numeric=True),
                Column("reading after [°]", numeric=True),
                Column("observed change [°]", numeric=True), Column("note", wrap=True))
#: Columns left blank for a pen.
TEST_PEN = (8, 9, 10)


def _test_line(test):
    s = test.sensor
    start = ("every circuit off" if test.start_state == "all off"
             else f"the state {test.start_state!r}")
    adjusted = (f"correctors set in {s.reference_state!r} allowed for" if test.adjusted
                else "no correctors allowed for")
    return (f"sensor {s.name} ({s.kind}); vessel lying on magnetic heading "
            f"{test.heading_deg:05.1f}°; starting from {start}; {adjusted}; H "
            f"{test.site.horizontal_t * 1e6:.2f} µT")


def _test_notes(test):
    notes = ["How to: with the vessel still at the berth, set the starting state, note the "
             "reading, make the step, wait for the card to settle, note the reading again, then "
             "return to the starting state before the next step. Predicted change: positive when "
             "the reading rises (Compass = Magnetic - Deviation, the heading fixed).",
             "Each circuit is predicted at the current in 'current on test'; where a clamp meter "
             "shows another current, write it over the figure and the read-back predicts at it.",
             "A state step sets every circuit as in that state, independent ones off."]
    if test.sensor.kind == "magnetic compass":
        notes.append("The card turns as seen from above; a rising reading is the card turning "
                     "anticlockwise.")
    if test.unknown_items:
        notes.append("Not in the prediction (direction unknown): " + ", ".join(test.unknown_items)
                     + ".")
    if test.overwhelmed:
        notes.append("The field at the sensor is at least the Earth's horizontal field here: the "
                     "sensor can point anywhere, and small changes of heading change everything.")
    return tuple(notes)


def _blank():
    return Cell("", None)


def test_sheet_document(test) -> Document:
    """``deviation test-sheet``: the steps, the predicted change of the reading at each, and
    blank columns for the readings; a second sheet holds the settings test-results reads."""
    rows = []
    for row in test.rows:
        change = row.predicted_change_deg
        rows.append((cell(row.step, 0), cell(row.name if row.kind == "circuit" else ""),
                     cell(row.name if row.kind == "state" else ""), cell(row.action),
                     amperes(row.current_before_a), amperes(row.current_on_test_a),
                     cell(change, 2, signed=True),
                     cell(reading_words(change, test.sensor.kind)), _blank(), _blank(), _blank(),
                     cell(row.note or "")))
    steps = Table(TEST_COLUMNS, tuple(rows), notes=_test_notes(test), pen=TEST_PEN)
    settings = Table((Column("setting"), Column("value", wrap=True)), (
        (cell("plan"), cell(test.plan.source)), (cell("sensor"), cell(test.sensor.name)),
        (cell("magnetic heading [°]"), cell(test.heading_deg, 1)),
        (cell("start state"), cell(test.start_state)),
        (cell("adjusted"), cell("yes" if test.adjusted else "no")),
        (cell("made"), cell(stamp()))))
    sections = (Section("Switch-on test", (steps,), sheet=TEST_SHEET),
                Section("Settings (test-results reads them)", (settings,), sheet=SETTINGS_SHEET,
                        screen=False))
    return Document("test-sheet", "Switch-on test", (f"plan {test.plan.source}",
                                                     _test_line(test)),
                    sections, words.CAUTIONS, data=test_json(test), stamp=stamp(),
                    landscape=True, paper=paper_for(test.plan))


# Reading the test back ----------------------------------------------------------------------------

#: The read-back status of a step, in words and tone.
RESULT_WORDS = {"agrees": ("agrees", Tone.GOOD), "differs": ("DIFFERS", Tone.BAD),
                "not read": ("not read", Tone.MUTED)}


def _what(row) -> str:
    return row.name if row.kind == "circuit" else f"state: {row.name}"


def _verdict_cell(row):
    text, tone = RESULT_WORDS[row.status]
    if row.status == "differs" and row.kind == "circuit":
        text = "DIFFERS: probable routing error"
    return Cell(text, text, None, tone)


def _degrees_or_blank(value, digits=2, signed=True, prefix=""):
    return _blank() if value is None else cell(value, digits, signed=signed, prefix=prefix)


def test_results_document(results) -> Document:
    """``deviation test-results``: each observed change beside the predicted one, the circuits
    that differ named as probable routing errors."""
    test = results.test
    rows = tuple(
        (cell(r.row, 0), cell(_what(r)),
         _blank() if r.kind == "state" else amperes(r.current_on_test_a),
         cell(r.predicted_change_deg, 2, signed=True),
         _degrees_or_blank(r.observed_change_deg), _degrees_or_blank(r.difference_deg),
         _degrees_or_blank(r.tolerance_deg, signed=False, prefix="± "), _verdict_cell(r),
         cell(r.cause or ""), cell(", ".join(r.runs)))
        for r in results.rows)
    columns = (Column("sheet row", numeric=True), Column("circuit or state", wrap=True),
               Column("current A", numeric=True), Column("predicted °", numeric=True),
               Column("observed °", numeric=True), Column("difference °", numeric=True),
               Column("allowed °", numeric=True), Column("verdict", wrap=True),
               Column("probable cause", wrap=True), Column("runs", wrap=True))
    note = TOLERANCE_NOTE.format(resolution=results.resolution_deg, fraction=results.fraction)
    blocks: list = [Table(columns, rows, notes=(note,))]
    if results.suspects:
        blocks.append(Paragraph("Circuits that differ: probable routing errors", Tone.BAD))
        blocks.append(Bullets(tuple(
            f"{r.name}" + (f" (runs: {', '.join(r.runs)})" if r.runs else "")
            + f": observed {r.observed_change_deg:+.2f}°, predicted "
              f"{r.predicted_change_deg:+.2f}°; {r.cause}" for r in results.suspects), Tone.BAD))
    states = [r for r in results.rows if r.kind == "state" and r.status == "differs"]
    if states and not results.suspects:
        blocks.append(Paragraph("A whole state differs while its circuits agree: look for loads "
                                "the plan does not list, or circuits sharing a run.", Tone.WARN))
    differing = [r for r in results.rows if r.status == "differs"]
    read = [r for r in results.rows if r.status != "not read"]
    if differing:
        recap = (Paragraph(f"Verdict: {len(differing)} of {len(read)} steps read differ from the "
                           "plan" + (": " + ", ".join(r.name for r in results.suspects)
                                     if results.suspects else "") + ".", Tone.BAD),)
    else:
        recap = (Paragraph(f"Verdict: every step read ({len(read)}) agrees with the plan.",
                           Tone.GOOD),)
    return Document("test-results", "Switch-on test read back",
                    (f"plan {test.plan.source}", f"readings {results.source}", _test_line(test)),
                    (Section("Observed beside predicted", tuple(blocks),
                             sheet="switch-on results"),),
                    words.CAUTIONS, recap=recap, data=results_json(results), stamp=stamp(),
                    landscape=True, paper=paper_for(test.plan))


# The swing ----------------------------------------------------------------------------------------

def _coefficient_cells(values):
    if values is None:
        return [Cell("overwhelmed", "overwhelmed")] * len(COEFFICIENTS)
    return [cell(float(v), 2, signed=True) for v in values]


def swing_document(comparison) -> Document:
    """``deviation swing``: the approximate coefficients fitted per state beside the plan's,
    the change between states (the wiring's part alone), the readings and their residuals."""
    from ..aftercare import swing_plot

    heading_name = f"{comparison.on} heading"
    coefficient_columns = tuple(Column(f"{c} °", numeric=True) for c in COEFFICIENTS)
    rows = []
    for st in comparison.states:
        fit = st.fit
        rows.append((cell(st.state), cell("swing"), *_coefficient_cells(fit.coefficients_deg),
                     cell(fit.rms_residual_deg, 2), cell(fit.max_residual_deg, 2),
                     cell(fit.headings, 0)))
        if fit.standard_error_deg is not None:
            rows.append((cell(st.state), cell("standard error"),
                         *(cell(float(v), 2, prefix="± ") for v in fit.standard_error_deg),
                         _blank(), _blank(), _blank()))
        rows.append((cell(st.state), cell("plan"), *_coefficient_cells(st.predicted_deg),
                     _blank(), _blank(), _blank()))
        rows.append((cell(st.state), cell("not explained"),
                     *_coefficient_cells(st.unexplained_deg), _blank(), _blank(), _blank()))
    columns = (Column("state", wrap=True), Column("", wrap=True), *coefficient_columns,
               Column("rms °", numeric=True), Column("largest °", numeric=True),
               Column("readings", numeric=True))
    adjusted = (f"predictions are of the residual after adjustment in {comparison.adjusted_in!r}"
                if comparison.adjusted_in else "predictions are of the whole field (not adjusted)")
    notes = [f"delta = A + B sin ψ + C cos ψ + D sin 2ψ + E cos 2ψ, ψ the {heading_name}, east "
             "positive, least squares (NGA Handbook of Magnetic Compass Adjustment, ch. V); "
             + adjusted + ". swing: fitted to the readings (rms and largest: the readings' "
             "residuals about the curve); plan: the same five terms fitted to the plan's exact "
             "curve from the wiring and oriented items; not explained: swing minus plan.",
             "The plan knows the wiring and oriented items only: the vessel's own iron, the "
             "correctors and a lubber line out of line are in every swing and not in the plan, "
             "so the difference per state mixes them in; the change from one state to another "
             "cancels them."]
    if comparison.unknown_items:
        notes.append("Not in the prediction (direction unknown): "
                     + ", ".join(comparison.unknown_items) + ".")
    if comparison.steel_items:
        notes.append("The plan's prediction includes the magnetism the Earth's field induces in "
                     "its steel items (" + ", ".join(comparison.steel_items) + "; the middle of "
                     "each permeability band). What is not explained is then mostly the "
                     "permanent magnetism of the vessel's steel, which no plan can know, and "
                     "steel the plan leaves out.")
    sections = [Section("Approximate coefficients per state", (
        Table(columns, tuple(rows), notes=tuple(notes)),
        Chart(f"readings, fitted and predicted curves of {comparison.sensor.name}",
              lambda fmt: swing_plot(comparison, fmt=fmt))), sheet="swing fit")]
    if comparison.changes:
        change_rows = []
        for ch in comparison.changes:
            label = f"{ch.state} − {ch.base}"
            change_rows.append((cell(label), cell("swing"), *_coefficient_cells(ch.observed_deg)))
            if ch.standard_error_deg is not None:
                change_rows.append((cell(label), cell("standard error"),
                                    *(cell(float(v), 2, prefix="± ")
                                      for v in ch.standard_error_deg)))
            change_rows.append((cell(label), cell("plan"), *_coefficient_cells(ch.predicted_deg)))
            change_rows.append((cell(label), cell("not explained"),
                                *_coefficient_cells(ch.unexplained_deg)))
        sections.append(Section("Change of the coefficients between states (the wiring's part "
                                "alone)", (Table(columns[:7], tuple(change_rows)),),
                                sheet="change between states"))
    readings = tuple(
        (cell(st.state), cell(int(st.rows[i]), 0), cell(float(st.headings_deg[i]), 1),
         cell(float(st.deviation_deg[i]), 2, signed=True),
         cell(float(st.fit.residual_deg[i]), 2, signed=True))
        for st in comparison.states for i in range(len(st.headings_deg)))
    sections.append(Section("Readings and residuals", (Table(
        (Column("state", wrap=True), Column("sheet row", numeric=True),
         Column(f"{heading_name} °", numeric=True), Column("deviation °", numeric=True),
         Column("residual °", numeric=True)), readings),), sheet="swing readings", detail=True))
    s = comparison.sensor
    return Document("swing", "Swing: approximate coefficients",
                    (f"readings {comparison.source}", f"sensor {s.name} ({s.kind}); H "
                     f"{comparison.site.horizontal_t * 1e6:.2f} µT"),
                    tuple(sections), words.CAUTIONS, data=swing_json(comparison), stamp=stamp(),
                    landscape=True)


# Which state to swing in --------------------------------------------------------------------------

def swing_state_document(choices, plan) -> Document:
    """``deviation swing-state``: for each sensor, every state to adjust and swing in, ranked by
    the worst figure the other states then hold against the budget."""
    sections = []
    recap = []
    for sensor, rows in choices.items():
        table_rows = []
        for rank, c in enumerate(rows, start=1):
            unit = c.budget.unit
            status = Status.WITHIN if c.within_budget else (
                Status.OVERWHELMED if c.overwhelmed else Status.OVER)
            table_rows.append((
                cell(rank, 0), cell(c.reference_state + ("  (the plan's)" if c.in_plan else "")),
                figure(c.worst, unit, overwhelmed=c.overwhelmed, tone=TONE_OF[status]),
                cell(c.worst_state or "—"),
                (figure(c.level_worst_deg, Unit.DEGREES, overwhelmed=c.overwhelmed)
                 if unit is Unit.DEGREES else Cell("—", None)),
                cell(str(c.budget)), Cell(words.STATUS_WORDS[status],
                                          words.STATUS_WORDS[status], None, TONE_OF[status])))
        columns = (Column("#", numeric=True), Column("adjust and swing in", wrap=True),
                   Column("worst held", numeric=True), Column("in", wrap=True),
                   Column("level", numeric=True), Column("budget", numeric=True),
                   Column("verdict"))
        sections.append(Section(sensor, (Table(columns, tuple(table_rows)),), sheet=sensor))
        best = rows[0] if rows else None
        if best is not None:
            recap.append(Paragraph(
                f"{sensor}: adjust and swing in {best.reference_state!r} — worst "
                f"{words.figure_text(best.worst, best.budget.unit, best.overwhelmed)} of "
                f"{best.budget}" + (f" in {best.worst_state}" if best.worst_state else "")
                + (" (within budget)" if best.within_budget else " (OVER whatever the state)"),
                Tone.GOOD if best.within_budget else Tone.BAD, indent=1))
    every = all(rows and rows[0].within_budget for rows in choices.values())
    head = Paragraph("Verdict: " + ("for every sensor some state keeps all the others within "
                                    "budget." if every else "for at least one sensor no state "
                                    "keeps all the others within budget."),
                     Tone.GOOD if every else Tone.BAD)
    explain = Paragraph(
        "For each candidate: the largest figure held against the budget in the other states the "
        "sensor is used in, once adjusted in the candidate (the deviation of b_state − b_ref, "
        "worst heading and attitude); level: the same, level. Smallest first.")
    first = sections[0] if sections else Section("Which state", ())
    sections[0:1] = [Section(first.title, (explain, *first.blocks), sheet=first.sheet)]
    return Document("swing-state", "Which state to adjust and swing in",
                    (f"plan {plan.source}",), tuple(sections), words.CAUTIONS,
                    recap=(head, *recap), data=choices_json(choices), stamp=stamp(),
                    paper=paper_for(plan))


# Deflection ---------------------------------------------------------------------------------------

def deflection_document(row, moment_am2, deflection_deg, distance_m, position,
                        horizontal_t, induced=None) -> Document:
    """``deviation deflection``: an item's moment from a compass's deflection, as an equipment
    row."""
    from ..aftercare import equipment_csv

    headline = Table((Column("item", wrap=True), Column("deflection °", numeric=True),
                      Column("distance m", numeric=True), Column("position"),
                      Column("H µT", numeric=True), Column("moment A·m²", numeric=True)),
                     ((cell(row["item"]), cell(abs(deflection_deg), 1), cell(distance_m, 3),
                       cell(position), cell(horizontal_t * 1e6, 2),
                       cell(float(f"{moment_am2:.3g}"), text=f"{moment_am2:.3g}")),))
    blocks: tuple = (headline, Paragraph(
        "tan δ = µ0 m / (2π r³ H) end-on, µ0 m / (4π r³ H) broadside (Gauss's deflection "
        "method); the item taken as a point dipole, so r should be several times its size."),
        Paragraph("Equipment row (axis blank: the orientation aboard is not known, the worst "
                  "counts), ready to paste into equipment.csv:"),
        Paragraph(equipment_csv(row).rstrip()))
    if induced is not None:
        from ..aftercare import STEEL_DEFLECTION

        blocks += (Paragraph(STEEL_DEFLECTION.format(shape=induced[0], low=induced[1],
                                                     high=induced[2])),)
    return Document("deflection", "Magnetic moment from a deflection", (),
                    (Section("Moment", blocks, sheet="moment"),), words.CAUTIONS,
                    recap=(Paragraph(f"{row['item']}: {moment_am2:.3g} A·m²", Tone.STRONG),),
                    data=deflection_json(row, moment_am2, deflection_deg, distance_m, position,
                                         horizontal_t, induced), stamp=stamp())


# Refits -------------------------------------------------------------------------------------------

#: Each kind of refit note in words.
CHANGE_WORDS = {
    Change.SENSOR_REMOVED: 'sensor "{}" is only in the earlier plan',
    Change.SENSOR_ADDED: 'sensor "{}" is new: adjust and swing it',
    Change.SENSOR_MOVED: 'sensor "{}" moved: adjust and swing it again',
    Change.STATE_REMOVED: 'state "{}" is only in the earlier plan',
    Change.STATE_ADDED: 'state "{}" is new: no earlier figures to compare',
}


def refit_document(result) -> Document:
    """``deviation refit``: per sensor and state how the figures and the card change, what
    causes it, and whether a new swing is advised."""
    rows = []
    for st in result.states:
        unit = st.unit
        tone = Tone.BAD if st.swing_advised else (Tone.GOOD if st.used else Tone.MUTED)
        advised = "ADVISED" if st.swing_advised else "no"
        rows.append((cell(st.sensor), cell(st.state + ("" if st.used else " (not used)")),
                     figure(st.held_before, unit), figure(st.held_after, unit),
                     figure(st.level_before_deg, Unit.DEGREES),
                     figure(st.level_after_deg, Unit.DEGREES),
                     cell(st.card_change_deg, 2, suffix="°", tone=tone),
                     Cell(advised, advised, None, tone)))
    columns = (Column("sensor", wrap=True), Column("state", wrap=True),
               Column("held before", numeric=True), Column("held after", numeric=True),
               Column("level before", numeric=True), Column("level after", numeric=True),
               Column("card change", numeric=True), Column("new swing"))
    blocks: list = [Paragraph(
        "held: each plan's own figure held against the budget (the new one as if adjusted "
        "afresh); level: the level deviation the compass shows, largest over headings; card "
        "change: the largest change of the deviation card over headings, the correctors left as "
        f"set for the earlier plan. A new swing is advised above {result.threshold_deg:g}° (rule "
        "of thumb, no published source).")]
    if result.notes:
        blocks.append(Bullets(tuple(refit_note_text(n) for n in result.notes), Tone.WARN))
    if result.triggers:
        aviation = result.profile == "aviation"
        blocks.append(Paragraph(
            "Occasions for a swing the refit meets (FAA AC 43.13-1B CHG 1, par. 12-37a"
            + ("): each calls a new swing." if aviation else
               ", for aircraft; in this plan's profile the card change decides):")))
        blocks.append(Bullets(tuple(words.trigger_text(t) for t in result.triggers),
                              Tone.WARN if aviation else Tone.PLAIN))
    blocks.append(Table(columns, tuple(rows)))
    causes = []
    for st in result.states:
        found = [d for d in st.differences if d.size_deg >= NO_VISIBLE_CHANGE_DEG / 10]
        if found:
            causes.append(f"{st.sensor}, {st.state}: " + "; ".join(
                f"{d.name} ({', '.join(d.how)}): {d.size_deg:.2f}°" for d in found[:5]))
    cause_blocks = (Bullets(tuple(causes)),) if causes else (Paragraph("nothing at the sensors"),)
    advised = result.swing_advised
    recap = (Paragraph("A new swing is advised." if advised else
                       "No new swing is needed for the wiring changes.",
                       Tone.BAD if advised else Tone.GOOD),)
    sections = (Section("Per sensor and state", tuple(blocks), sheet="refit"),
                Section("Caused by (each change's own field at the sensor, as a deviation)",
                        cause_blocks, sheet="causes"))
    return Document("refit", "Refit", (f"earlier plan {result.old_source}",
                                       f"new plan {result.new_source}"), sections,
                    words.CAUTIONS, recap=recap, data=refit_json(result), stamp=stamp())
