"""One view of a check's rows, shared by the terminal, the xlsx and html reports and the JSON.

Each renderer formats these rows its own way, but none of them picks figures out of the results
itself, so they cannot drift apart.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..quantities import Budget, Status
from . import words

#: The style class of each status in the renderers.
STATUS_CLASS = {Status.WITHIN: "ok", Status.OVER: "over", Status.OVERWHELMED: "over",
                Status.NOT_USED: "unused"}


@dataclass(frozen=True)
class SummaryCell:
    state: str
    figure: float                     # the held figure, in the budget's unit
    text: str                         # "1.23", "5.96 nT", "overwhelmed"
    status: str                       # "ok", "over" or "unused"


@dataclass(frozen=True)
class SummaryRow:
    sensor: str
    kind: str
    budget: Budget
    reference_state: str | None
    max_heel_deg: float
    max_pitch_deg: float
    budget_text: str                  # with its unit: degrees, or nT (total-field)
    cells: tuple[SummaryCell, ...]
    within_budget: bool
    verdict: str
    adjustment_absorbs_deg: float | None


def summary_rows(analysis) -> tuple[SummaryRow, ...]:
    rows = []
    for result in analysis.sensors:
        s = result.sensor
        total_field = words.is_total_field(s)
        cells = tuple(SummaryCell(st.state, st.held,
                                  words.held_text(s, st) if total_field else
                                  words.degrees(st.held, st.overwhelmed),
                                  STATUS_CLASS[st.status])
                      for st in result.states)
        over = result.over_in
        verdict = "within budget" if not over else "over in " + ", ".join(over)
        rows.append(SummaryRow(s.name, s.kind, s.budget, s.reference_state, s.max_heel_deg,
                               s.max_pitch_deg, words.budget_text(s), cells,
                               result.within_budget, verdict,
                               None if total_field else result.adjustment_absorbs_deg))
    return tuple(rows)


@dataclass(frozen=True)
class BudgetRow:
    """A run or an item in a state's table."""

    name: str
    is_item: bool
    current_a: float | None
    nearest_m: float
    horizontal_t: float               # level horizontal size of its field (or bound)
    vertical_t: float | None          # None for a bound of unknown direction
    max_deviation_deg: float | None   # this row alone, absolute, level (heading sensors)
    change_deg: float | None          # its own residual (sensor with a reference state)
    counted: float                    # what it adds to the held figure, in the budget's unit
    share_of_budget: float
    bound: bool                       # a figure of unknown direction (an upper bound)
    compensated: bool = False


#: Runs below this share of the budget are summed on one line unless all runs are asked for.
NEGLIGIBLE_SHARE = 0.005


def budget_rows(sensor, st, all_runs=True) -> tuple[tuple[BudgetRow, ...], int]:
    """The rows of one state's table, and how many runs were left out as negligible."""
    rows = []
    runs = st.runs
    hidden = 0
    if not all_runs:
        # In the reference state the shares are zero by definition: show what is absorbed.
        key = (lambda r: sensor.budget.share(r.max_deviation_deg)) if (
            st.is_reference and sensor.budget.degrees) else (lambda r: r.share_of_budget)
        shown = [r for r in runs if key(r) >= NEGLIGIBLE_SHARE] or list(runs[:1])
        hidden = len(runs) - len(shown)
        runs = shown
    for r in runs:
        rows.append(BudgetRow(r.name, False, r.current_a, r.nearest_m,
                              float(np.hypot(r.field_t[0], r.field_t[1])), float(r.field_t[2]),
                              r.max_deviation_deg, r.change_from_reference_deg,
                              r.held, r.share_of_budget, r.bound_t > 0))
    for item in st.equipment:
        oriented = item.field_t is not None
        size = float(np.hypot(item.field_t[0], item.field_t[1])) if oriented else item.bound_t
        rows.append(BudgetRow(item.name, True, None, item.distance_m, size,
                              float(item.field_t[2]) if oriented else None,
                              item.max_deviation_deg, None if not sensor.reference_state else
                              item.held, item.held, sensor.budget.share(item.held), not oriented,
                              item.compensated))
    return tuple(rows), hidden


@dataclass(frozen=True)
class TotalRow:
    label: str
    value_deg: float | None
    held: bool = False                # the figure held against the budget


def total_rows(sensor, st) -> tuple[TotalRow, ...]:
    if words.is_total_field(sensor):
        return ()                       # no heading figures: see total_field_lines
    rows = [TotalRow("all together (vector sum), level", st.vector_deviation_deg),
            TotalRow("if every field lined up, level", st.magnitude_bound_deg)]
    if st.equipment_bound_t:
        rows.append(TotalRow("with equipment bounds, level", st.max_deviation_deg))
    if sensor.max_heel_deg or sensor.max_pitch_deg:
        rows.append(TotalRow("absolute, worst attitude", st.heeled_max_deviation_deg))
    if sensor.reference_state:
        rows.append(TotalRow("residual after adjustment, level", st.change_from_reference_deg))
    rows.append(TotalRow(f"held against the budget ({words.held_figure(sensor)})",
                         st.held, held=True))
    return tuple(rows)


def total_field_lines(sensor, st) -> tuple[str, ...]:
    """A total-field magnetometer's figures, in nT."""
    if not words.is_total_field(sensor) or st.total_field_error_t is None:
        return ()
    nt = 1e9
    return (f"total-field error over headings and attitude: {st.total_field_low_t * nt:+.2f} to "
            f"{st.total_field_high_t * nt:+.2f} nT; level heading error peak to peak "
            f"{st.heading_peak_to_peak_t * nt:.2f} nT",
            f"held against the budget ({words.held_figure(sensor)}): "
            f"{st.total_field_error_t * nt:.2f} nT of {words.budget_text(sensor)}")


def state_title(sensor, st) -> str:
    title = (f"{st.state}: {words.held_text(sensor, st)} of {words.budget_text(sensor)} — "
             f"{words.verdict(st)}")
    if st.is_reference and not words.is_total_field(sensor):
        title += (" (the reference state: the adjustment takes out "
                  f"{words.with_degree_sign(st.heeled_max_deviation_deg)})")
    if not st.used:
        title += " (the sensor is not relied on in this state)"
    return title
