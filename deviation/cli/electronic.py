"""``deviation electronic``: grading, compensation residual and model checks of electronic
sensors, and the total-field error of scalar magnetometers."""

from __future__ import annotations

import sys

from .common import (
    canonical_unit,
    electronic_reports,
    json_option,
    library_errors,
    main,
    plan_argument,
    report_option,
    sensor_option,
    unit_option,
    width_option,
    write_outputs,
)


@main.command("electronic")
@plan_argument
@sensor_option
@unit_option
@report_option
@json_option
@width_option
@library_errors
def electronic(plan, sensor_name, unit, report, as_json, width):
    """How an electronic compass or magnetometer fares against its own budget: within as
    installed, within only with the current compensation its host can learn from the currents
    it measures, or over; the interference as a share of the Earth's field, as a plain number;
    what compensation leaves in each state, in degrees and % of F; and whether the field the
    sensor sees stays near the model's (total field and inclination) as a sanity check before
    use. For a total-field magnetometer: its total-field error in nT over headings and
    attitude, and its heading peak to peak, against its budget in nT.

    Exit status: 0 every sensor within its budget (compensated where its host measures
    currents), every model check passed; 1 otherwise; 2 the plan or the command line is wrong.
    """
    from ..electronic import is_acceptable
    from ..render.documents.electronic import electronic_document

    unit = canonical_unit(unit)
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    analysis, reports = electronic_reports(plan, sensor_name)
    document = electronic_document(analysis, reports, unit)
    write_outputs(document, report, plan, as_json, width)
    sys.exit(0 if all(is_acceptable(r) for r in reports) else 1)
