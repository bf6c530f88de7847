"""Printable reports: a document written as a formatted .xlsx workbook, one self-contained
.html page or a .pdf, whole or not at all, and never onto the plan."""

from __future__ import annotations

from pathlib import Path

from ..files import OutputError, check_output, write_atomically

#: What a report may be, by its file's suffix.
REPORT_SUFFIXES = (".xlsx", ".html", ".htm", ".pdf")


def check_report_path(path, plan_path):
    """Refuse, before any work, a report that cannot be written as asked."""
    path = Path(path)
    if path.suffix.lower() not in REPORT_SUFFIXES:
        raise OutputError(f"{path}: a report is FILE.xlsx, FILE.html or FILE.pdf")
    check_output(path, plan_path)


def write_report(document, path, plan_path):
    """Write ``document`` (:mod:`deviation.render.model`) in the form the suffix names."""
    path = Path(path)
    check_report_path(path, plan_path)
    if path.suffix.lower() == ".xlsx":
        from .xlsx import workbook

        write_atomically(path, lambda temporary: workbook(document).save(temporary))
        return
    if path.suffix.lower() == ".pdf":
        from .pdf import pdf_bytes

        data = pdf_bytes(document)
        write_atomically(path, lambda temporary: Path(temporary).write_bytes(data))
        return
    from .html import page

    text = page(document)
    write_atomically(path, lambda temporary: Path(temporary).write_text(text, encoding="utf-8"))
