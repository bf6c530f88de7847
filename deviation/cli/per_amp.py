"""``deviation per-amp``: each circuit's field per ampere at the electronic sensors."""

from __future__ import annotations

import click

from .common import (
    OutputPath,
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


@main.command("per-amp")
@plan_argument
@sensor_option
@unit_option
@click.option("--csv", "csv_path", type=OutputPath(),
              help="Also write the table as FILE.csv (columns in docs/electronic-sensors.md).")
@report_option
@json_option
@width_option
@library_errors
def per_amp(plan, sensor_name, unit, csv_path, report, as_json, width):
    """Each circuit's field per ampere at every electronic compass and magnetometer, in the
    vessel's axes and the sensor's own (its axes column), and the current compensation its
    host would learn from the currents it measures (its measured_currents column).

    The vectors are what a linear current-compensation setting takes: per ampere of a circuit,
    or of a measured current. For a total-field magnetometer the change of its reading per
    ampere (nT/A) over headings and attitudes is given too.

    Exit status: 0 the table was made (and written), 2 the plan or the command line is wrong.
    """
    from ..render.documents.electronic import per_ampere_document
    from ..render.electronic import per_ampere_csv

    unit = canonical_unit(unit)
    if report:
        from ..render.reports import check_report_path

        check_report_path(report, plan)
    analysis, reports = electronic_reports(plan, sensor_name)
    if csv_path:
        from pathlib import Path

        from ..files import write_atomically

        text = per_ampere_csv(reports, unit)
        write_atomically(Path(csv_path), lambda temporary: Path(temporary).write_text(
            text, encoding="utf-8"))
    write_outputs(per_ampere_document(analysis, reports, unit), report, plan, as_json, width,
                  [(csv_path, "Table")])
