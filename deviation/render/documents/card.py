"""The predicted deviation card as a document: one table per state, the band of unknown
direction beside each figure, and the held figure under each table."""

from __future__ import annotations

import math

from ...quantities import Unit
from .. import words
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
from .common import figure, microtesla, paper_for, stamp


def east_west(deviation_deg, digits=2) -> Cell:
    """A deviation as the trade writes it: 1.20°E, 0.35°W (east positive)."""
    half = 0.5 * 10 ** -digits
    side = "E" if deviation_deg >= half else "W" if deviation_deg <= -half else ""
    return cell(deviation_deg, digits, text=f"{abs(deviation_deg):.{digits}f}°{side}")


def _held_line(card, st):
    sensor = card.sensor
    unit = card.unit
    held = words.figure_text(st.held, unit, st.overwhelmed)
    unknown = (f"; ± is what parts of unknown direction, up to {microtesla(st.unknown_t).text} "
               "µT, may add" if st.unknown_t > 0 else "")
    largest = words.figure_text(st.level_worst, unit)
    return Paragraph(f"held against the budget: {held} of {sensor.budget} "
                     f"({words.held_figure(sensor)}); this level card reaches {largest} at most"
                     f"{unknown}.", TONE_OF[st.status])


def card_blocks(card):
    """The card's tables and picture, one table per state."""
    from .. import plots

    scalar = card.unit is Unit.NANOTESLA
    blocks: list[Block] = [Paragraph(
        "Level total-field error |F + b| - |F| against magnetic heading, in nT; ± the most "
        "parts of unknown direction may add." if scalar else
        "Level; east positive; ± the most that parts of unknown direction may turn the needle "
        "at that heading. Steer the compass heading to make good the magnetic heading."
        + (" After adjustment in "
           f"{card.sensor.reference_state!r} (before it, in its own column)."
           if card.sensor.reference_state else ""))]
    for st in card.states:
        columns = [Column("magnetic", numeric=True),
                   Column("error nT" if scalar else "deviation", numeric=True),
                   Column("±", numeric=True)]
        if st.compass_deg is not None and card.steers:
            columns.append(Column("steer", numeric=True))
        if st.unadjusted_deg is not None:
            columns.append(Column("before adj.", numeric=True))
        rows = []
        for i, psi in enumerate(st.headings_deg):
            row = [cell(float(psi), 0, text=f"{psi:03.0f}°")]
            if scalar:
                row.append(cell(float(st.deviation_deg[i]), 2, prefix="+" if
                                st.deviation_deg[i] > 0 else ""))
                row.append(cell(float(st.band[i]), 2))
            else:
                row.append(east_west(float(st.deviation_deg[i])))
                band = float(st.band[i])
                row.append(cell(band, 2) if band < 180 else Cell("any", "any"))
            if st.compass_deg is not None and card.steers:
                row.append(cell(float(st.compass_deg[i]), 1,
                                text=f"{st.compass_deg[i]:05.1f}°"))
            if st.unadjusted_deg is not None:
                row.append(east_west(float(st.unadjusted_deg[i])))
            rows.append(tuple(row))
        conditions = words.condition_words(st.condition)
        title = (st.state + (f" — {conditions}" if conditions else "")
                 + ("" if st.status.value != "not used" else
                    " (the sensor is not relied on in this state)"))
        blocks.append(Table(tuple(columns), tuple(rows), title, TONE_OF[st.status]))
        blocks.append(_held_line(card, st))
        if st.limit is not None:
            blocks.append(Paragraph(f"{words.limit_text(st.limit)} ({words.LIMIT_SOURCE}).",
                                    Tone.GOOD if st.limit.within else Tone.BAD))
    if card.placard:
        blocks += placard_blocks(card)
    blocks.append(Chart(f"{'total-field error' if scalar else 'deviation'} curves of "
                        f"{card.sensor.name}", lambda fmt: plots.card_curves(card, fmt=fmt)))
    return blocks


def placard_blocks(card):
    """The placard's lines (aviation profile), with where each requirement comes from."""
    lines = card.placard
    stated = all(line.radios_stated for line in lines)
    blocks = [Paragraph(f"Placard lines for {card.sensor.name} ({words.PLACARD_SOURCE}):",
                        Tone.STRONG),
              Bullets(tuple(words.placard_text(line) for line in lines))]
    if any(line.limit is not None and not line.limit.within for line in lines):
        blocks.append(Paragraph(f"Over the limit: {words.OVER_LIMIT_SOURCE}.", Tone.BAD))
    blocks.append(Paragraph(words.PLACARD_CAUTION, Tone.PLAIN if stated else Tone.WARN))
    return blocks


def cards_document(analysis, cards) -> Document:
    """``deviation card``: every card asked for."""
    from ..json_out import cards_json

    sections = tuple(Section(f"{c.sensor.name} ({c.sensor.kind})", tuple(card_blocks(c)))
                     for c in cards)
    return Document("card", "Predicted deviation card",
                    (f"plan {analysis.plan.source}", f"site {words.site_line(analysis.site)}"),
                    sections, words.cautions(analysis.plan), data=cards_json(cards, analysis.plan),
                    stamp=stamp(),
                    paper=paper_for(analysis.plan))


# The postable card -------------------------------------------------------------------------------

#: Sizes a postable card prints on.
CARD_PAPERS = ("A5", "A6")


def half_degrees(value_deg) -> float:
    """A deviation rounded to the nearest half degree, halves away from zero (the trade posts
    deviations to ½°)."""
    size = math.floor(abs(float(value_deg)) * 2 + 0.5) / 2
    return math.copysign(size, value_deg) if size else 0.0


def _halves(value) -> str:
    """7.5 -> "7½", 0.5 -> "½", 3.0 -> "3"."""
    whole = int(abs(value))
    half = abs(value) - whole >= 0.25
    return (str(whole) if whole or not half else "") + ("½" if half else "")


def east_west_half(deviation_deg) -> Cell:
    """A deviation as posted: 1½°E, ½°W, 0°."""
    value = half_degrees(deviation_deg)
    side = "E" if value > 0 else "W" if value < 0 else ""
    return Cell(f"{_halves(value)}°{side}", value, 1)


def _steer(magnetic_deg, deviation_deg) -> Cell:
    """The compass course to steer for a magnetic heading: Compass = Magnetic - Deviation, with
    the deviation as posted (to ½°), so the card agrees with itself."""
    course = (magnetic_deg - half_degrees(deviation_deg)) % 360.0
    whole = int(course)
    return Cell(f"{whole:03d}{'½' if course - whole >= 0.25 else ''}°", course, 1)


def _state_words(state):
    return state[:1].upper() + state[1:]


def postable_section(card, plan) -> Section:
    """One sensor's card to post beside the compass: the ship's head magnetic, the deviation
    E/W to ½° and the compass course to steer for each state it is relied on in, lines for the
    vessel, compass, date and adjuster, and each state's held figure under it."""
    states = [st for st in card.states if st.status.value != "not used"] or list(card.states)
    columns = [Column("magnetic heading" if card.aviation else "ship's head magnetic",
                      numeric=True)]
    for st in states:
        columns += [Column(f"{_state_words(st.state)}: deviation", numeric=True),
                    Column(f"{_state_words(st.state)}: steer", numeric=True)]
    rows = []
    for i, psi in enumerate(states[0].headings_deg):
        row = [cell(float(psi), 0, text=f"{psi:03.0f}°")]
        for st in states:
            row += [east_west_half(st.deviation_deg[i]), _steer(float(psi), st.deviation_deg[i])]
        rows.append(tuple(row))
    sensor = card.sensor
    held_row = [Cell("held", "held", None, Tone.STRONG)]
    unknown_row = [Cell("± unknown", "± unknown", None, Tone.MUTED)]
    for st in states:
        band = float(max(st.band)) if len(st.band) else 0.0
        held_row += [figure(st.held, card.unit, overwhelmed=st.overwhelmed,
                            tone=TONE_OF[st.status]),
                     Cell(words.STATUS_WORDS[st.status], words.STATUS_WORDS[st.status], None,
                          TONE_OF[st.status])]
        unknown_row += [Cell("any", "any", None, Tone.MUTED) if band >= 180 else
                        cell(band, 1 if band >= 0.1 else 2, prefix="± ", suffix="°",
                             tone=Tone.MUTED), Cell("", None)]
    rows += [tuple(held_row), tuple(unknown_row)]
    particulars = Table((Column("vessel", wrap=True), Column("compass", wrap=True),
                         Column("date"), Column("adjuster", wrap=True)),
                        ((cell(plan.site.vessel or ""), cell(sensor.name), cell(""), cell("")),),
                        pen=(2, 3))
    adjusted = (f" Adjusted in {sensor.reference_state!r}." if sensor.reference_state else "")
    how = Paragraph("From the plan, level, not a swing. Deviation E: the compass reads low. "
                    f"held: the figure held against the {sensor.budget} budget; ± unknown: what "
                    f"parts of unknown direction may add.{adjusted} Replace with the adjuster's "
                    "card once swung.", Tone.MUTED)
    placard = ((Bullets(tuple(words.placard_text(line) for line in card.placard
                              if line.state in {st.state for st in states})),)
               if card.placard else ())
    return Section(f"{sensor.name}", (particulars, Table(tuple(columns), tuple(rows)),
                                      *placard, how), new_page=True)


def postable_document(analysis, cards, paper="A5") -> Document:
    """``deviation card --sheet``: a card per compass to post beside it (A5 or A6)."""
    from ..json_out import cards_json

    steered = [c for c in cards if c.steers]
    sections = tuple(postable_section(c, analysis.plan) for c in steered)
    return Document("postable card", "Deviation card", (), sections, (),
                    data=cards_json(cards, analysis.plan), stamp=stamp(), paper=paper,
                    landscape=paper == "A6")
