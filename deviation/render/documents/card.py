"""The predicted deviation card as a document: one table per state, the band of unknown
direction beside each figure, and the held figure under each table."""

from __future__ import annotations

from ...quantities import Unit
from .. import words
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
from .common import microtesla, stamp


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
    blocks = [Paragraph(
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
                    sections, words.CAUTIONS, data=cards_json(cards), stamp=stamp())
