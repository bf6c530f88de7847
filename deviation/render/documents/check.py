"""The check as one document: summary, each sensor (short, and every state in detail), the set of
fixes, findings, pictures and cards for paper, and the verdict recapped."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ...quantities import Budget, Status, Unit
from .. import words
from ..drawing import CULPRIT_SHARE, drawing_svg, two_views
from ..model import (
    TONE_OF,
    Block,
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
from .common import Lengths, amperes, field_cell, figure, paper_for, share, stamp

#: Runs below this share of the budget are summed on one line unless all runs are asked for.
NEGLIGIBLE_SHARE = 0.005
#: What an overwhelmed sensor is told.
OVERWHELMED_LINE = ("The disturbance is at least as strong as the Earth's horizontal field here: "
                    "the sensor can point anywhere.")
#: Runs named in a sensor's short account (the terminal's default), largest first.
SHORT_RUNS = 3


@dataclass(frozen=True)
class SummaryCell:
    state: str
    cell: Cell                         # the held figure as every writer shows it
    status: Status


@dataclass(frozen=True)
class SummaryRow:
    """A sensor's line of the summary: its budget, held figure per state and verdict."""

    sensor: str
    kind: str
    budget: Budget
    reference_state: str | None
    cells: tuple[SummaryCell, ...]
    status: Status
    verdict: str
    adjustment_absorbs_deg: float | None


def summary_rows(analysis) -> tuple[SummaryRow, ...]:
    """The summary, one row per sensor (what the contract test compares across outputs)."""
    rows = []
    for result in analysis.sensors:
        s = result.sensor
        cells = tuple(SummaryCell(st.state, figure(st.held, s.budget.unit,
                                                   overwhelmed=st.overwhelmed,
                                                   tone=TONE_OF[st.status],
                                                   bracket=not st.used), st.status)
                      for st in result.states)
        over = result.over_in
        verdict = "within budget" if not over else "over in " + ", ".join(over)
        rows.append(SummaryRow(s.name, s.kind, s.budget, s.reference_state, cells,
                               result.status, verdict,
                               result.adjustment_absorbs_deg if s.budget.degrees else None))
    return tuple(rows)


def _summary_section(analysis, rows):
    plan = analysis.plan
    columns = (Column("sensor", wrap=True), Column("budget", numeric=True),
               *(Column(state, numeric=True) for state in plan.state_names), Column("verdict",
                                                                                   wrap=True))
    table_rows = tuple(
        (cell(row.sensor), cell(row.budget.value, suffix=row.budget.unit.symbol),
         *(c.cell for c in row.cells),
         Cell(row.verdict, row.verdict, None, TONE_OF[row.status]))
        for row in rows)
    notes = []
    if any(c.status is Status.NOT_USED for row in rows for c in row.cells):
        notes.append("In brackets: a state the sensor is not relied on in; shown, not held "
                     "against its budget.")
    for row in rows:
        if row.adjustment_absorbs_deg is not None:
            notes.append(f"{row.sensor}: the adjustment in {row.reference_state!r} takes out "
                         f"{words.with_degree_sign(row.adjustment_absorbs_deg)}.")
    from .. import plots

    blocks: list[Block] = [
        Table(columns, table_rows, "Figure held against each budget", notes=tuple(notes)),
        Chart("held figure by state, as a share of each budget",
              lambda fmt: plots.budget_bars(analysis, fmt=fmt))]
    return Section("Summary", tuple(blocks), sheet="summary")


# The first page: a summary for the owner or surveyor ------------------------------------------

#: What a sensor's verdict says on the first page, by its status.
def _verdict_words(result):
    sensor = result.sensor
    worst = result.worst
    held = words.held_text(sensor, worst)
    if result.status is Status.WITHIN:
        return (f"within its budget of {sensor.budget} in every state it is relied on in "
                f"(at most {held}, in {worst.state})")
    others = [s for s in result.over_in if s != worst.state]
    also = f"; also over in {', '.join(others)}" if others else ""
    if worst.overwhelmed:
        return (f"over its budget of {sensor.budget}: overwhelmed in {worst.state}, it can point "
                f"anywhere{also}")
    return f"over its budget of {sensor.budget}: {held} in {worst.state}{also}"


def _owner_section(analysis, rows, digest):
    """Page 1: who and what the report is for, the plan file it came from, each sensor's
    verdict in words, the fixes that make the plan pass, a drawing with the culprit, and a line
    for whoever checks it."""
    plan = analysis.plan
    site = plan.site
    from pathlib import Path

    particulars = [("vessel or vehicle", site.vessel or ""), ("owner", site.owner or ""),
                   ("installer", site.installer or ""),
                   ("date of the plan", words.plan_date(site)),
                   ("plan file", Path(str(plan.source)).name),
                   ("plan SHA-256", digest or "not a file (built in Python)")]
    blocks: list = [Table((Column("", wrap=True), Column("", wrap=True)),
                          tuple((cell(a), cell(b)) for a, b in particulars),
                          pen=())]
    blocks.append(Table((Column("sensor", wrap=True), Column("verdict", wrap=True)),
                        tuple((cell(r.sensor.name),
                               Cell(_verdict_words(r), r.status.value, None, TONE_OF[r.status]))
                              for r in analysis.sensors), "Each sensor's verdict"))
    fixes: list[Block] = []
    for result in analysis.sensors:
        if result.status is Status.WITHIN or result.fixes is None:
            continue
        lines = words.fix_set_lines(result.fixes, site.units, result.sensor.budget.unit)
        fixes.append(Paragraph(f"To bring {result.sensor.name} within its budget:", Tone.STRONG))
        if lines:
            fixes.append(Bullets(tuple(lines), ordered=True))
        if result.fixes.reaches_budget:
            continue
        fixes.append(Paragraph(words.NO_FIX_SET, Tone.BAD))
        # Where rerouting does not reach the budget, the steel it cannot move, named where it
        # alone takes a culprit's share of the budget.
        budget = result.sensor.budget
        for item in sorted(result.worst.steel, key=lambda s: -s.held):
            if item.share_of_budget >= CULPRIT_SHARE:
                fixes.append(Paragraph(
                    f'Steel item "{item.name}" alone gives {"≤ " if item.bound else ""}'
                    f"{words.figure_text(item.held, budget.unit)} "
                    f"({item.share_of_budget * 100:.0f} % of the budget), which no rerouting "
                    "changes: move the sensor or the item.", Tone.BAD))
    if fixes:
        blocks += fixes
    over = [r for r in analysis.sensors if r.status is not Status.WITHIN]
    shown = max(over or analysis.sensors, key=lambda r: r.sensor.budget.share(r.worst.held))
    blocks.append(Table((Column("checked by", wrap=True), Column("date"),
                         Column("signature")), ((cell(""), cell(""), cell("")),),
                        pen=(0, 1, 2)))
    blocks.append(Paragraph(" ".join(words.CAUTIONS[:2]), Tone.MUTED))
    # Last, so that on paper it takes the room the page has left.
    blocks.append(Chart(f"profile and plan around {shown.sensor.name}, the culprits heavier "
                        "and named", lambda fmt: drawing_svg(plan, shown, width_mm=150,
                                                             views=two_views(plan)),
                        shrink=0.25))
    return Section("Summary for the owner or surveyor", tuple(blocks), screen=False,
                   workbook=False)


def checklist_section(analysis):
    """The installer's checklist of the fixes: a box to tick, and the lay, spacing and
    clearance each change must achieve (paper only)."""
    from ...units import format_length

    units = analysis.plan.site.units
    rows = []
    for result in analysis.sensors:
        if result.fixes is None:
            continue
        for step in result.fixes.steps:
            rows.append((cell("☐"), cell(result.sensor.name), cell(step.run),
                         cell({"pair": "return beside the supply", "twist": "twist with the "
                               "return", "clearance": "keep clear of the sensor"}.get(
                                   step.kind, step.kind)),
                         cell(format_length(step.lay_m, units) if step.lay_m else ""),
                         cell(format_length(step.spacing_m, units) if step.spacing_m else ""),
                         cell(f"at least {format_length(step.clearance_m, units)}"
                              if step.clearance_m else ""),
                         figure(step.after, result.sensor.budget.unit,
                                tone=Tone.GOOD if step.within_after else Tone.BAD)))
    if not rows:
        return None
    columns = (Column("done"), Column("sensor", wrap=True), Column("run", wrap=True),
               Column("change", wrap=True), Column("lay"), Column("centres"),
               Column("clearance", wrap=True), Column("then", numeric=True))
    return Section("Installer's checklist of the fixes", (
        Paragraph("Tick each change when it is made; the lay (one full twist), the centre "
                  "spacing of supply and return and the clearance from the sensor are what the "
                  "figures assume. 'then': the sensor's held figure with this change and those "
                  "above it made."),
        Table(columns, tuple(rows))), screen=False, sheet="checklist", new_page=True)


#: The words a report uses that a reader may not know, and what they mean.
GLOSSARY = (
    ("held against the budget", "the figure a sensor's verdict is judged by: the largest "
     "deviation (or total-field error) over every heading, in the worst switching of the loads "
     "that may be on, at the worst heel and pitch allowed, after adjustment where the sensor "
     "has a reference state"),
    ("level", "with the vessel upright: no heel or pitch"),
    ("residual after adjustment", "what is left once the compass is adjusted (or the sensor "
     "calibrated) in its reference state: the deviation of the field that changes from that "
     "state, not the difference of two deviations"),
    ("bound (≤)", "a figure that may be smaller but never larger: a part of unknown direction "
     "(a pair whose lie is not given, a twisted run's ends, a labelled safe distance) counted "
     "at its worst"),
    ("not relied on", "a state in which the sensor is not used (the plan's used_in column): its "
     "figure is shown in brackets and not held against the budget"),
    ("overwhelmed", "the disturbance is at least the Earth's horizontal field: the sensor can "
     "point anywhere"),
)


def glossary_section():
    return Section("Words used in this report", (Table(
        (Column("term", wrap=True), Column("meaning", wrap=True)),
        tuple((cell(a), cell(b)) for a, b in GLOSSARY)),), screen=False, sheet="words")


# A sensor ---------------------------------------------------------------------------------------

def _sensor_line(sensor, lengths):
    adjusted = (f"adjusted in {sensor.reference_state!r}, so the residual after adjustment counts"
                if sensor.reference_state else "not adjusted, so the absolute deviation counts")
    attitude = []
    if sensor.max_heel_deg:
        attitude.append(f"heel ±{sensor.max_heel_deg:g}°")
    if sensor.max_pitch_deg:
        attitude.append(f"pitch ±{sensor.max_pitch_deg:g}°")
    lines = [Paragraph(f"{sensor.kind} at {lengths.position(sensor.position_m)}; budget "
                       f"{sensor.budget}; {adjusted}"
                       + ("; " + ", ".join(attitude) if attitude else ""))]
    if sensor.used_in is not None:
        lines.append(Paragraph("relied on in: " + ", ".join(sensor.used_in)))
    return lines


def state_title(sensor, st) -> str:
    title = (f"{st.state}: {words.held_text(sensor, st)} of {sensor.budget} — "
             f"{words.verdict(st)}")
    if st.is_reference and sensor.budget.degrees:
        title += (" (the reference state: the adjustment takes out "
                  f"{words.with_degree_sign(st.heeled_max_deviation_deg)})")
    if not st.used:
        title += " (the sensor is not relied on in this state)"
    return title


def _shown_runs(sensor, st, all_runs):
    """The runs of a state's table, and how many were left out as negligible."""
    runs = list(st.runs)
    if all_runs:
        return runs, 0
    if st.is_reference and sensor.budget.degrees:
        # The shares are zero by definition in the reference state: show what is absorbed.
        key = lambda r: sensor.budget.share(r.max_deviation_deg)  # noqa: E731
    else:
        key = lambda r: r.share_of_budget  # noqa: E731
    shown = [r for r in runs if key(r) >= NEGLIGIBLE_SHARE] or runs[:1]
    return shown, len(runs) - len(shown)


def budget_table(sensor, st, lengths, all_runs=True, title=""):
    """One state's table of runs and items (the runs below NEGLIGIBLE_SHARE summed in a note
    unless ``all_runs``)."""
    unit = sensor.budget.unit
    degrees = unit is Unit.DEGREES
    adjusted = bool(sensor.reference_state) and degrees
    field_unit = "nT" if unit is Unit.NANOTESLA else "µT"
    columns = [Column("run / item", wrap=True), Column("A", numeric=True),
               Column(f"nearest {lengths.unit}", numeric=True),
               Column(f"horiz {field_unit}", numeric=True),
               Column(f"vert {field_unit}", numeric=True),
               Column("alone °" if degrees else
                      "residual nT" if sensor.reference_state else "alone nT", numeric=True)]
    if adjusted:
        columns.append(Column("residual °", numeric=True))
    columns.append(Column("of budget", numeric=True))
    runs, hidden = _shown_runs(sensor, st, all_runs)
    rows = []
    for r in runs:
        bound = r.bound_t > 0
        horizontal = float(np.hypot(r.field_t[0], r.field_t[1])) + r.bound_t
        vertical = abs(float(r.field_t[2])) + r.unknown_t if bound else float(r.field_t[2])
        row = [cell(r.name), amperes(r.current_a), lengths.cell(r.nearest_m),
               field_cell(horizontal, unit, bound=bound), field_cell(vertical, unit, bound=bound),
               figure(r.max_deviation_deg, unit, sign=False) if degrees else
               figure(r.held, unit, sign=False)]
        if adjusted:
            row.append(figure(r.change_from_reference_deg, unit, sign=False))
        row.append(share(r.share_of_budget, overwhelmed=degrees and r.held >= 180))
        rows.append(tuple(row))
    for item in st.equipment:
        oriented = item.field_t is not None
        horizontal = float(np.hypot(*item.field_t[:2])) if oriented else item.bound_t
        vertical = float(item.field_t[2]) if oriented else item.bound_t
        row = [cell(item.name), cell(None), lengths.cell(item.distance_m),
               field_cell(horizontal, unit, bound=not oriented),
               field_cell(vertical, unit, bound=not oriented),
               figure(item.max_deviation_deg, unit, sign=False) if degrees else
               figure(item.held, unit, sign=False)]
        if adjusted:
            row.append(Cell("adjusted", "adjusted") if item.compensated else
                       figure(item.held, unit, sign=False))
        row.append(share(sensor.budget.share(item.held),
                         overwhelmed=degrees and item.held >= 180))
        rows.append(tuple(row))
    for item in st.steel:
        bound = "≤ " if item.bound else ""
        alone = (cell(item.max_deviation_deg, 2, prefix=bound) if degrees else
                 cell(item.held, 2, prefix=bound))
        row = [cell(f"{item.name} (steel)"), cell(None), lengths.cell(item.distance_m),
               field_cell(item.horizontal_t, unit, bound=True),
               field_cell(item.vertical_t, unit, bound=True), alone]
        if adjusted:
            row.append(cell(item.held, 2, prefix=bound))
        row.append(share(item.share_of_budget, overwhelmed=degrees and item.held >= 180))
        rows.append(tuple(row))
    notes = []
    if hidden:
        notes.append(f"{hidden} more run{'s' if hidden != 1 else ''} below "
                     f"{NEGLIGIBLE_SHARE * 100:g} % of the budget each (--all-runs lists them).")
    if any(r.bound_t > 0 for r in runs) or any(e.field_t is None for e in st.equipment):
        notes.append("≤ an upper bound: a part of unknown direction (a pair whose lie the plan "
                     "does not say, a twisted run's ends and floor, a labelled safe distance "
                     "(IEC 60945), a magnet of unknown orientation), shown at its largest.")
    if st.steel:
        notes.append(words.STEEL_TABLE_NOTE)
    return Table(tuple(columns), tuple(rows), title, TONE_OF[st.status], tuple(notes))


def total_lines(sensor, st):
    """The totals under a state's table, and the held figure last."""
    if not sensor.budget.degrees:
        nt = 1e9
        return [Paragraph(f"total-field error over headings and attitude: "
                          f"{st.total_field_low_t * nt:+.2f} to {st.total_field_high_t * nt:+.2f}"
                          f" nT; level heading error peak to peak "
                          f"{st.heading_peak_to_peak_t * nt:.2f} nT"),
                Paragraph(f"held against the budget ({words.held_figure(sensor)}): "
                          f"{words.held_text(sensor, st)} of {sensor.budget} "
                          f"({sensor.budget.share(st.held) * 100:.0f} % of the budget)",
                          TONE_OF[st.status])]
    lines = [("all together (vector sum), level", st.vector_deviation_deg),
             ("if every field lined up, level", st.magnitude_bound_deg)]
    if st.equipment_bound_t:
        lines.append(("with equipment bounds, level", st.max_deviation_deg))
    if sensor.max_heel_deg or sensor.max_pitch_deg:
        lines.append(("absolute, worst attitude", st.heeled_max_deviation_deg))
    if sensor.reference_state:
        lines.append(("residual after adjustment, level", st.change_from_reference_deg))
    out = [Paragraph(f"{label}: {words.with_degree_sign(value)}") for label, value in lines]
    if st.lam_low is not None:
        out.append(Paragraph(words.lambda_line(st.lam_low, st.lam_high)))
    share_text = ("" if st.overwhelmed else
                  f" ({sensor.budget.share(st.held) * 100:.0f} % of the budget)")
    out.append(Paragraph(f"held against the budget ({words.held_figure(sensor)}): "
                         f"{words.held_text(sensor, st)} of {sensor.budget}{share_text}",
                         TONE_OF[st.status]))
    return out


def _state_blocks(sensor, st, analysis, lengths, all_runs):
    plan = analysis.plan
    blocks = [budget_table(sensor, st, lengths, all_runs), *total_lines(sensor, st)]
    if sensor.kind == "magnetometer":
        blocks.append(Paragraph(f"disturbance {st.fraction_of_total * 100:.1f} % of the Earth's "
                                f"total field ({analysis.site.total_t * 1e6:.1f} µT)"))
    if st.overwhelmed:
        blocks.append(Paragraph(OVERWHELMED_LINE, Tone.BAD))
    if st.remedies:
        blocks.append(Bullets(tuple("→ " + words.remedy_text(m, plan.site.units, plan.source,
                                                             sensor.budget.unit)
                                    for m in st.remedies)))
    return blocks


def _fix_blocks(result, plan):
    fixes = result.fixes
    if fixes is None or (not fixes.steps and fixes.reaches_budget):
        return []
    blocks: list[Block] = [Paragraph(
        "The set of fixes, each figure with the changes before it made (every state it is "
        "used in, worst attitude and switching):", Tone.STRONG)]
    lines = words.fix_set_lines(fixes, plan.site.units, result.sensor.budget.unit)
    if lines:
        blocks.append(Bullets(tuple(lines), ordered=True))
    if not fixes.reaches_budget:
        blocks.append(Paragraph(words.NO_FIX_SET, Tone.BAD))
    return blocks


def _short_blocks(result, analysis, lengths):
    """A sensor in a few lines: its worst state, the runs behind it, the fixes."""
    sensor = result.sensor
    worst = result.worst
    blocks = _sensor_line(sensor, lengths)
    blocks.append(Paragraph(f"worst state: {state_title(sensor, worst)}", TONE_OF[worst.status]))
    if worst.overwhelmed:
        blocks.append(Paragraph(OVERWHELMED_LINE, Tone.BAD))
    # Runs and steel items together, largest share first: (name, held, share, a bound).
    named = [(r.name, r.held, r.share_of_budget, r.bound_t > 0) for r in worst.runs]
    named += [(f"{s.name} (steel)", s.held, s.share_of_budget, s.bound) for s in worst.steel]
    ranked = sorted((n for n in named if n[2] >= NEGLIGIBLE_SHARE),
                    key=lambda n: -n[2])[:SHORT_RUNS]
    if ranked:
        unit = sensor.budget.unit
        def share_of(held, part, bound):
            if unit is Unit.DEGREES and held >= words.OVERWHELMED_DEG:
                return ""                     # no share of a figure that is not a figure
            return f" ({part * 100:.0f} %" + (", a bound" if bound else "") + ")"

        blocks.append(Paragraph("largest there: " + "; ".join(
            f"{name} {words.figure_text(held, unit)}{share_of(held, part, bound)}"
            for name, held, part, bound in ranked)))
    blocks += _fix_blocks(result, analysis.plan)
    return blocks


def _card_section(card):
    from .card import card_blocks

    return Section(f"Predicted deviation card: {card.sensor.name}", tuple(card_blocks(card)),
                   screen=False, sheet=f"card {card.sensor.name}", new_page=True)


def _site_section(site):
    """The site's field, for paper."""
    rows = [("horizontal field H", cell(site.horizontal_t * 1e6, 3), "µT"),
            ("vertical field Z (down +)", cell(site.vertical_t * 1e6, 3), "µT"),
            ("total field F", cell(site.total_t * 1e6, 3), "µT"),
            ("inclination", cell(site.inclination_deg, 2), "°")]
    if site.declination_deg is not None:
        rows.insert(3, ("declination (east +)", cell(site.declination_deg, 2), "°"))
    if site.declination_uncertainty_deg is not None:
        rows.insert(4, ("declination uncertainty", cell(site.declination_uncertainty_deg, 2),
                        "°"))
    rows += [("source", cell(f"{site.source}, {site.date_text}"), ""),
             ("zone", cell(site.zone), "")]
    table = Table((Column("quantity", wrap=True), Column("value", numeric=True),
                   Column("unit")), tuple((cell(a), b, cell(c)) for a, b, c in rows))
    return Section("Site", (table,), screen=False, sheet="site")



def _drawing_of(plan, result):
    """The drawing of the things around one sensor, for a chart (the same in every format)."""
    return lambda fmt: drawing_svg(plan, result)

def check_document(analysis, *, all_runs=False, digest=None, voltage_v=None) -> Document:
    """The check of a plan as one document (see :mod:`deviation.render.model`).

    ``digest``: the plan file's SHA-256 for the first page (default: worked out from the plan's
    source where it is a file or folder). ``voltage_v``: the plan is the what-if of its loads in
    watts at that DC voltage [V].
    """
    from ...card import cards
    from ...files import plan_digest
    from ..json_out import analysis_json

    plan = analysis.plan
    lengths = Lengths(plan)
    rows = summary_rows(analysis)
    if digest is None:
        digest = plan_digest(plan.source)
    summary = _summary_section(analysis, rows)
    sections = [_owner_section(analysis, rows, digest),
                Section(summary.title, summary.blocks, sheet=summary.sheet, new_page=True)]
    for result, one_card in zip(analysis.sensors, cards(analysis)):
        sensor = result.sensor
        tone = TONE_OF[result.status]
        blocks = (*_short_blocks(result, analysis, lengths),
                  Chart(f"where things are around {sensor.name}: profile, end view and plan, "
                        "runs coloured by their share of its budget",
                        _drawing_of(plan, result)))
        sections.append(Section(sensor.name, blocks, tone=tone, sheet=f"budget {sensor.name}",
                                new_page=True))
        for st in result.states:
            sections.append(Section(state_title(sensor, st),
                                    tuple(_state_blocks(sensor, st, analysis, lengths, all_runs)),
                                    tone=TONE_OF[st.status], level=3, detail=True))
        sections.append(_card_section(one_card))
    loads = loads_section(plan)
    if loads is not None:
        sections.insert(2, loads)                 # after the owner's page and the summary
    aviation = aviation_section(analysis)
    if aviation is not None:
        sections.insert(2, aviation)
    sections.append(_site_section(analysis.site))
    per_ampere = _per_ampere_section(analysis)
    if per_ampere is not None:
        sections.append(per_ampere)
    if analysis.findings:
        sections.append(Section("Findings", (Bullets(tuple(words.finding_text(f)
                                                          for f in analysis.findings)),),
                                sheet="findings"))
    checklist = checklist_section(analysis)
    if checklist is not None:
        sections.append(checklist)
    sections.append(glossary_section())
    meta = _meta(analysis) + ((f"plan SHA-256 {digest}",) if digest else ())
    if voltage_v is not None:
        meta += (f"what-if: every load given in watts drawn at {voltage_v:g} V, not at the "
                 "plan's own voltages",)
    return Document("check", "Deviation budget", meta, tuple(sections),
                    words.cautions(plan), _warnings(analysis),
                    _recap(rows) + _aviation_recap(analysis),
                    analysis_json(analysis),
                    stamp(), paper=paper_for(plan))


def aviation_section(analysis):
    """The aviation profile's verdict: every direction indicator in every state against 10° on
    any heading in level flight, beside (not instead of) its own budget."""
    from ...card import aviation_verdicts

    verdicts = aviation_verdicts(analysis)
    if not verdicts:
        return None
    columns = (Column("sensor", wrap=True), Column("state", wrap=True),
               Column("conditions", wrap=True), Column("level, worst heading", numeric=True),
               Column("limit", numeric=True), Column("verdict"))
    rows = []
    for v in verdicts:
        tone = (Tone.MUTED if not v.used else Tone.GOOD if v.limit.within else Tone.BAD)
        verdict = ("not relied on" if not v.used else "within" if v.limit.within else "OVER")
        rows.append((cell(v.sensor), cell(v.state),
                     cell(words.condition_words(v.condition) or "not stated"),
                     figure(v.limit.level_deg, Unit.DEGREES, tone=tone),
                     cell(v.limit.limit_deg, 0, suffix="°"), Cell(verdict, verdict, None, tone)))
    notes = (f"{words.LIMIT_SOURCE}. The compensated installation: the residual after "
             "adjustment where the sensor is adjusted in a reference state, else the absolute "
             "deviation; with the worst switching of the independent loads and every part of "
             "unknown direction.",)
    return Section("Aviation: 10° on any heading, level",
                   (Table(columns, tuple(rows), "Direction indicators against 10°", notes=notes),),
                   sheet="aviation")


def _aviation_recap(analysis):
    from ...card import aviation_verdicts

    over = [v for v in aviation_verdicts(analysis) if v.used and not v.limit.within]
    if not aviation_verdicts(analysis):
        return ()
    if not over:
        return (Paragraph("Aviation: every direction indicator within 10° on any heading in "
                          "level flight.", Tone.GOOD),)
    return (Paragraph("Aviation: over 10° in level flight — " + "; ".join(
        f"{v.sensor} in {v.state} ({words.with_degree_sign(v.limit.level_deg)})" for v in over)
        + ".", Tone.BAD),)


def _watts(value_w) -> Cell:
    """A power in W: whole watts from 100 W up, one decimal below."""
    return cell(value_w, 0 if abs(value_w) >= 100 or value_w == 0 else 1)


def loads_section(plan):
    """The load list, W and A side by side per state, where the plan gives any circuit a voltage
    or a load in watts: the watts as given (or V × I for a current with a voltage) and the DC
    current the budget counts."""
    shown = [c for c in plan.circuits if c.voltage_v is not None or c.in_watts]
    if not shown:
        return None
    columns = [Column("circuit", wrap=True), Column("V", numeric=True), Column("supply")]
    for state in plan.state_names:
        columns += [Column(f"{state} W", numeric=True), Column(f"{state} A", numeric=True)]
    rows = []
    for c in shown:
        row = [cell(c.name), cell(c.voltage_v, 0 if float(c.voltage_v).is_integer() else 1),
               cell("via inverter" if c.inverter else "DC")]
        for k, amps in enumerate(c.currents_a):
            given = c.power_w is not None and np.isfinite(c.power_w[k])
            if given:
                power = _watts(float(c.power_w[k]))
            elif c.inverter is None and amps:
                power = _watts(c.voltage_v * float(amps))
                power = Cell(power.text, power.value, power.digits, Tone.MUTED)
            else:
                power = cell(None)
            row += [power, amperes(float(amps)) if amps or given else cell(None)]
        rows.append(tuple(row))
    notes = ["W as the plan gives it; in grey, V × A for a current given in amperes. A is the "
             "DC current the budget counts."]
    for c in shown:
        if c.inverter is not None:
            efficiency = (f"{c.efficiency:g}" + (" (default: rule of thumb, no published source; "
                                                 "below NREL's PVWatts curve)"
                                                 if c.inverter.efficiency is None else ""))
            idle = (f"{c.idle_w:.1f} W" + (" (default: the PVWatts curve's draw at no output, "
                                           "0.62 % of the largest load)"
                                           if c.inverter.idle_w is None else ""))
            notes.append(f"{c.name}: via inverter, A = W / (V × efficiency) + idle / V with "
                         f"efficiency {efficiency} and idle draw {idle}, counted wherever a "
                         "power is given (blank: the inverter off).")
    return Section("Loads", (Table(tuple(columns), tuple(rows), "Loads in W and A",
                                   notes=tuple(notes)),), sheet="loads")


def _per_ampere_section(analysis):
    """The electronic sensors' per-ampere table, to key into a compensation setting (paper)."""
    from ...electronic import electronic_report
    from ..electronic import CSV_COLUMNS, per_ampere_records

    reports = electronic_report(analysis)
    if not reports:
        return None
    rows = tuple(tuple(cell(record.get(c), 6) if isinstance(record.get(c), float)
                       else cell(record.get(c)) for c in CSV_COLUMNS)
                 for record in per_ampere_records(reports, "uT"))
    columns = tuple(Column(c, numeric=c.endswith(("_a", "_per_a"))) for c in CSV_COLUMNS)
    return Section("Per-ampere interference (µT per A)", (Table(columns, rows),), screen=False,
                   sheet="per ampere")


def _meta(analysis):
    from ..words import site_line

    return (f"plan {analysis.plan.source}", f"site {site_line(analysis.site)}")


def _warnings(analysis):
    out = []
    zone = words.zone_warning(analysis.site)
    if zone:
        out.append(zone)
    examples = words.example_rows(analysis.plan.skipped_examples)
    if examples:
        out.append(examples[0].upper() + examples[1:] + ".")
    return tuple(out)


def _recap(rows):
    over = [row for row in rows if row.status is not Status.WITHIN]
    head = ("Verdict: every sensor within its budget in every state it is relied on in."
            if not over else f"Verdict: {len(over)} of {len(rows)} sensor"
            f"{'s' if len(rows) != 1 else ''} over budget.")
    lines = [Paragraph(head, Tone.GOOD if not over else Tone.BAD)]
    for row in rows:
        used = [c for c in row.cells if c.status is not Status.NOT_USED]
        worst = max(used, key=lambda c: c.cell.value if c.cell.numeric else float("inf"),
                    default=None)
        if worst is None:
            held = "not relied on in any state"
        elif worst.status is Status.OVERWHELMED:
            held = f"overwhelmed in {worst.state}: it can point anywhere"
        else:
            held = f"{worst.cell.text} of {row.budget} in {worst.state}"
        verdict = "within" if row.status is Status.WITHIN else "OVER"
        lines.append(Paragraph(f"{row.sensor}: {verdict} — {held}", TONE_OF[row.status],
                               indent=1))
    return tuple(lines)
