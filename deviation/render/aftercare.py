"""The after-installation sheets' data and words shared by their documents
(:mod:`deviation.render.documents.aftercare`): the JSON of each command, how a reading moves in
words, and the swing's picture. The figures come from :mod:`deviation.aftercare` and are never
recomputed here.
"""

from __future__ import annotations

import numpy as np

from ..aftercare import NO_VISIBLE_CHANGE_DEG
from ..physics.swing import COEFFICIENTS
from . import words
from .words import CAUTIONS

TOLERANCE_NOTE = ("A step differs when the observed change is further from the predicted than the "
                  "larger of {resolution:g}° (the reading resolution of a typical card) and "
                  "{fraction:.0%} of the predicted change; both are rules of thumb, no published "
                  "source, and can be set on the command line.")

#: What the card does when the reading rises or falls, seen from above (Compass = Magnetic -
#: Deviation; the card's north follows the needle).


CARD_TURNS = {1: "card turns anticlockwise, seen from above", -1: "card turns clockwise, seen "
                                                                  "from above"}


# Words -------------------------------------------------------------------------------------------


def signed(value, digits=2) -> str:
    """A signed figure with no '-0.00'."""
    if value is None:
        return ""
    text = f"{value:+.{digits}f}"
    return text.replace("-", "+") if float(text) == 0 else text


def reading_words(change_deg: float, sensor_kind: str, short: bool = False) -> str:
    """How the reading moves, for the person at the helm (``short``: for narrow tables, the
    card's turn without "seen from above")."""
    if abs(change_deg) < NO_VISIBLE_CHANGE_DEG:
        return "no visible change"
    way = "rises" if change_deg > 0 else "falls"
    turn = CARD_TURNS[1 if change_deg > 0 else -1]
    if short:
        turn = turn.replace(", seen from above", "")
    if sensor_kind == "magnetic compass":
        return f"{'' if short else 'reading '}{way} {abs(change_deg):.2f}° ({turn})"
    return f"heading shown {way} {abs(change_deg):.2f}°"


def test_json(test):
    return {"plan": test.plan.source, "sensor": test.sensor.name, "kind": test.sensor.kind,
            "magnetic_heading_deg": test.heading_deg, "start_state": test.start_state,
            "adjusted": test.adjusted, "horizontal_ut": round(test.site.horizontal_t * 1e6, 4),
            "not_predicted": list(test.unknown_items),
            "steps": [{"step": r.step, "kind": r.kind, "name": r.name, "action": r.action,
                       "current_before_a": r.current_before_a,
                       "current_on_test_a": r.current_on_test_a,
                       "current_from_state": r.current_from,
                       "predicted_change_deg": round(r.predicted_change_deg, 4),
                       "reading": reading_words(r.predicted_change_deg, test.sensor.kind),
                       "runs": list(r.runs), "note": r.note} for r in test.rows],
            "cautions": list(CAUTIONS)}


# Reading the test back ---------------------------------------------------------------------------


def results_json(results):
    return {"source": results.source, "sensor": results.test.sensor.name,
            "magnetic_heading_deg": results.test.heading_deg,
            "start_state": results.test.start_state,
            "resolution_deg": results.resolution_deg, "fraction": results.fraction,
            "agrees": results.agrees,
            "probable_routing_errors": [r.name for r in results.suspects],
            "rows": [{"row": r.row, "kind": r.kind, "name": r.name,
                      "current_before_a": r.current_before_a,
                      "current_on_test_a": r.current_on_test_a,
                      "predicted_change_deg": round(r.predicted_change_deg, 4),
                      "observed_change_deg": None if r.observed_change_deg is None
                      else round(r.observed_change_deg, 4),
                      "tolerance_deg": None if r.tolerance_deg is None
                      else round(r.tolerance_deg, 4),
                      "status": r.status, "probable_cause": r.cause, "runs": list(r.runs)}
                     for r in results.rows]}


def swing_json(comparison):
    def coefficients(values):
        return None if values is None else {c: round(float(v), 4)
                                            for c, v in zip(COEFFICIENTS, values)}

    return {"source": comparison.source, "sensor": comparison.sensor.name,
            "heading": comparison.on, "adjusted_in": comparison.adjusted_in,
            "horizontal_ut": round(comparison.site.horizontal_t * 1e6, 4),
            "states": [{"state": st.state, "headings": st.fit.headings,
                        "fitted_deg": coefficients(st.fit.coefficients_deg),
                        "standard_error_deg": coefficients(st.fit.standard_error_deg),
                        "rms_residual_deg": round(st.fit.rms_residual_deg, 4),
                        "max_residual_deg": round(st.fit.max_residual_deg, 4),
                        "predicted_deg": coefficients(st.predicted_deg),
                        "unexplained_deg": coefficients(st.unexplained_deg)}
                       for st in comparison.states],
            "changes": [{"state": ch.state, "from": ch.base,
                         "observed_deg": coefficients(ch.observed_deg),
                         "standard_error_deg": coefficients(ch.standard_error_deg),
                         "predicted_deg": coefficients(ch.predicted_deg),
                         "unexplained_deg": coefficients(ch.unexplained_deg)}
                        for ch in comparison.changes],
            "not_predicted": list(comparison.unknown_items)}


# Which state to swing in -------------------------------------------------------------------------


def swing_plot(comparison, path=None, fmt=None):
    """Readings, the fitted curve and the plan's curve per state, against heading: the bytes
    (PNG, or ``fmt`` "svg"/"pdf"), written to ``path`` when given."""
    from ..physics.swing import curve_deg
    from .plots import _pyplot, _save

    plt = _pyplot()
    panels = 2 if comparison.changes else 1
    fig, axes = plt.subplots(panels, 1, figsize=(7.5, 3.8 * panels), dpi=130, squeeze=False)
    ax = axes[0, 0]
    grid = np.arange(0.0, 360.5, 1.0)
    colours = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    for i, st in enumerate(comparison.states):
        colour = colours[i % len(colours)]
        ax.plot(st.headings_deg, st.deviation_deg, "o", color=colour, ms=4,
                label=f"{st.state}: readings")
        ax.plot(grid, curve_deg(st.fit.coefficients_deg, grid), color=colour, lw=1.5,
                label=f"{st.state}: fit (rms {st.fit.rms_residual_deg:.2f}°)")
        if st.predicted_deg is not None:
            ax.plot(grid, curve_deg(st.predicted_deg, grid), color=colour, lw=1.1, ls="--",
                    label=f"{st.state}: plan")
    ax.set_title(f"{comparison.sensor.name}: swing and plan")
    if comparison.changes:
        low = axes[1, 0]
        for i, ch in enumerate(comparison.changes):
            colour = colours[(i + 1) % len(colours)]
            low.plot(grid, curve_deg(ch.observed_deg, grid), color=colour, lw=1.5,
                     label=f"{ch.state} − {ch.base}: swing")
            if ch.predicted_deg is not None:
                low.plot(grid, curve_deg(ch.predicted_deg, grid), color=colour, lw=1.1, ls="--",
                         label=f"{ch.state} − {ch.base}: plan")
        low.set_title("change between states: the wiring's part alone")
    for one in axes[:, 0]:
        one.axhline(0, color="black", lw=0.6)
        one.set_xlim(0, 360)
        one.set_xticks(range(0, 361, 45))
        one.set_xlabel(f"{comparison.on} heading [deg]")
        one.set_ylabel("deviation [deg] (east +)")
        one.grid(alpha=0.3)
        one.legend(fontsize=6.5, ncol=2)
    fig.tight_layout()
    data = _save(fig, path, fmt)
    plt.close(fig)
    return data


def choices_json(choices):
    return {"sensors": [{"sensor": sensor, "choices": [
        {"reference_state": c.reference_state, "worst_held": round(c.worst, 4),
         "worst_state": c.worst_state, "level_worst_deg": round(c.level_worst_deg, 4),
         "within_budget": c.within_budget, "overwhelmed": c.overwhelmed,
         "budget": {"value": c.budget.value, "unit": c.budget.unit.value},
         "in_plan": c.in_plan} for c in rows]}
        for sensor, rows in choices.items()]}


# Refits ------------------------------------------------------------------------------------------


def refit_json(result):
    return {"old": result.old_source, "new": result.new_source,
            "threshold_deg": result.threshold_deg, "swing_advised": result.swing_advised,
            "notes": [{"change": n.change.value, "name": n.name,
                       "advises_swing": n.advises_swing, "text": refit_note_text(n)}
                      for n in result.notes],
            "profile": result.profile,
            "triggers": [{"trigger": t.trigger.value, "paragraph": t.paragraph,
                          "runs": list(t.runs), "circuits": list(t.circuits),
                          "items": list(t.items),
                          "horizontal_before_ut": None if t.horizontal_before_t is None
                          else round(t.horizontal_before_t * 1e6, 4),
                          "horizontal_after_ut": None if t.horizontal_after_t is None
                          else round(t.horizontal_after_t * 1e6, 4),
                          "field_change": None if t.field_change is None
                          else round(t.field_change, 4),
                          "card_change_deg": None if t.card_change_deg is None
                          else round(t.card_change_deg, 4),
                          "text": words.trigger_text(t)} for t in result.triggers],
            "states": [{"sensor": st.sensor, "state": st.state, "used": st.used,
                        "held_before": round(st.held_before, 4),
                        "held_after": round(st.held_after, 4),
                        "level_before_deg": round(st.level_before_deg, 4),
                        "level_after_deg": round(st.level_after_deg, 4),
                        "card_change_deg": round(st.card_change_deg, 4),
                        "swing_advised": st.swing_advised, "unit": st.unit.value,
                        "caused_by": [{"kind": d.kind, "name": d.name, "how": list(d.how),
                                       "size_deg": round(d.size_deg, 4)}
                                      for d in st.differences]}
                       for st in result.states]}


# Deflection --------------------------------------------------------------------------------------


def equipment_csv(row) -> str:
    """The equipment row as CSV under the sheet's header, ready to paste into equipment.csv."""
    import csv
    import io

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(list(row))
    writer.writerow([row[k] for k in row])
    return buffer.getvalue()


def deflection_json(row, moment_am2, deflection_deg, distance_m, position, horizontal_t):
    return {"moment_am2": float(f"{moment_am2:.6g}"), "deflection_deg": deflection_deg,
            "distance_m": distance_m, "position": position,
            "horizontal_ut": round(horizontal_t * 1e6, 4), "equipment_row": row}


def refit_note_text(note) -> str:
    """A refit note in words."""
    from .documents.aftercare import CHANGE_WORDS

    return CHANGE_WORDS[note.change].format(note.name)
