"""The spot search as one document: the best spots ranked in the budget's unit, where the
sensor is now, what limited the search, and the verdict."""

from __future__ import annotations

from .. import words
from ..model import Cell, Column, Document, Paragraph, Section, Table, Tone, cell
from .common import Lengths, figure, paper_for, stamp

#: The faces of a searched box in the words of a vessel's plan (x forward, y port, z up).
FACE_WORDS = {"x low": "aft", "x high": "forward", "y low": "starboard", "y high": "port",
              "z low": "bottom", "z high": "top"}

#: What the figure of a spot is, said under every ranking.
FIGURE_NOTE = ("The figure is the one held against the budget: the worst state the sensor is used "
               "in, at the worst attitude, after adjustment where it has a reference state. Check "
               "the spot for vibration, heat, access and equipment not in the plan before "
               "mounting.")


def _tone(within):
    return Tone.GOOD if within else Tone.BAD


def spots_table(search, plan) -> Table:
    """The ranking: position in the plan's unit, the held figure in the budget's, the worst
    state and the runs that dominate there."""
    lengths = Lengths(plan)
    unit = search.sensor.budget.unit
    named = any(s.name for s in search.spots)
    columns = [Column("#", numeric=True)]
    if named:
        columns.append(Column("spot", wrap=True))
    columns += [Column(f"{axis} {lengths.unit}", numeric=True) for axis in "xyz"]
    columns += [Column(f"held {unit.label}", numeric=True), Column("worst state", wrap=True),
                Column("dominated by", wrap=True)]
    rows = []
    for rank, s in enumerate(search.spots, start=1):
        row = [cell(rank, 0)]
        if named:
            row.append(cell(s.name or ""))
        row += [lengths.cell(v) for v in s.position_m]
        row += [figure(s.held, unit, sign=False, tone=_tone(s.within_budget)),
                cell(s.worst_state),
                cell("; ".join(f"{name} {share * 100:.0f} %" for name, share in s.dominant_runs)
                     or "—")]
        rows.append(tuple(row))
    return Table(tuple(columns), tuple(rows))


def _edge_line(search):
    faces = [FACE_WORDS[f] for f in search.edge_faces]
    listed = " and ".join([", ".join(faces[:-1]), faces[-1]] if len(faces) > 1 else faces)
    plural = "s" if len(faces) > 1 else ""
    return (f"The best spot lies on the edge of the searched box: the box may be too small (the "
            f"spot is on its {listed} face{plural}).")


def spots_data(search) -> dict:
    """The result of ``spot --json`` (positions in metres, figures in the budget's unit)."""
    from ..json_out import spots_json

    data = spots_json(search)
    data.update({
        "within_budget": search.within_budget, "best_on_edge": search.best_on_edge,
        "edge_faces": list(search.edge_faces),
        "volumes": [{"volume": v.name, "kind": v.kind} for v in search.volumes],
        "excluded": [{"spot": name, "reason": why} for name, why in search.excluded]})
    return data


#: What a search over a grid does with steel items in the plan, said under its ranking.
STEEL_SEARCH_NOTE = ("With steel in the plan, the grid is ranked by a quicker bound that is never "
                     "below the exact figure (near steel it can be several times larger), and only "
                     "the best of that ranking are worked out exactly and ranked again: each "
                     "figure shown is exact, but a better spot may lie among the positions not "
                     "worked out exactly.")


def spots_document(search, plan, seconds=None) -> Document:
    """``deviation spot``: the ranked spots of one sensor (see :mod:`deviation.render.model`)."""
    sensor = search.sensor
    unit = sensor.budget.unit
    lengths = Lengths(plan)
    blocks: list = [spots_table(search, plan)]
    if search.best_on_edge:
        blocks.append(Paragraph(_edge_line(search), Tone.WARN))
    if search.volumes:
        kinds = [(kind, [v.name for v in search.volumes if v.kind == kind])
                 for kind in ("mount in", "keep out")]
        blocks.append(Paragraph("Volumes honoured: " + "; ".join(
            f"{kind} " + ", ".join(f'"{n}"' for n in names) for kind, names in kinds if names)
            + "."))
    if search.excluded:
        blocks.append(Paragraph("Left out by the volumes: " + "; ".join(
            f"{name} ({why})" for name, why in search.excluded) + "."))
    if search.current is not None:
        now = search.current
        inside = [v.name for v in search.volumes
                  if v.kind == "keep out" and v.contains(now.position_m)[0]]
        where = f' (inside keep-out "{inside[0]}")' if inside else ""
        blocks.append(Paragraph(f"Where it is now, {lengths.position(now.position_m)}{where}: "
                                f"{words.figure_text(now.held, unit)} in {now.worst_state}",
                                _tone(now.within_budget)))
    if search.step_m:
        timing = f" in {seconds:.1f} s" if seconds is not None else ""
        blocks.append(Paragraph(
            f"Searched {search.evaluated:,} positions for a {search.grid_points:,}-point grid at "
            f"{lengths.text(search.step_m)} steps{timing}."))
        if plan.steel:
            blocks.append(Paragraph(STEEL_SEARCH_NOTE))
    blocks.append(Paragraph(FIGURE_NOTE))
    title = f"Best spots for {sensor.name}"
    section = Section(f"{sensor.name} ({sensor.kind}), budget {sensor.budget}", tuple(blocks),
                      sheet="spots")
    return Document("spot", title, (f"plan {plan.source}",
                                    f"sensor {sensor.name}: {sensor.kind}, budget "
                                    f"{sensor.budget}; {words.held_figure(sensor)}"),
                    (section,), words.cautions(plan), recap=_recap(search, lengths),
                    data=spots_data(search), stamp=stamp(), paper=paper_for(plan))


def _recap(search, lengths):
    unit = search.sensor.budget.unit
    if not search.spots:
        return ()
    best = search.spots[0]
    held = words.figure_text(best.held, unit)
    where = lengths.position(best.position_m)
    if search.within_budget:
        return (Paragraph(f"Best spot: {where}: {held} of {search.sensor.budget} in "
                          f"{best.worst_state} — within budget.", Tone.GOOD),)
    return (Paragraph(f"No spot meets the {search.sensor.budget} budget: the best found uses "
                      f"{held} at {where} in {best.worst_state}.", Tone.BAD),)


def spot_cell(spot, unit) -> Cell:
    """A spot's held figure as every writer shows it."""
    return figure(spot.held, unit, sign=False, tone=_tone(spot.within_budget))
