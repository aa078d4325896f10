"""A study report file from a study's results: the document, its figures, HTML or PDF, written atomically.

The command line (``mixtype report``, gui.report_command) and the window (File > Export > Study report,
gui.export_commands) both compute the study with core.results.report_results.compute_report_results and hand
the results here: core.results.report builds the document, gui.report_figures draws the figures (on the GUI
thread), core.results.report_html or gui.report_pdf writes the format the file's suffix asks for, and
core.project.safe_write puts the file in place whole, or leaves what was there untouched.
"""

from __future__ import annotations

import os
from datetime import datetime
from pathlib import Path

from core.project.model import ViewSettings
from core.project.safe_write import write_file_atomically
from core.results.report import report_document
from core.results.report_html import inline_svg, report_html
from core.results.report_results import ReportResults
from gui.report_figures import ReportFigures
from gui.report_pdf import report_pdf_bytes

__all__ = ["REPORT_FILTER", "REPORT_SUFFIXES", "check_report_path", "report_file_bytes", "write_report"]

# Equal to gui.launcher.REPORT_SUFFIXES (tests/gui/test_report.py checks), written there so --help loads no Qt.
REPORT_SUFFIXES = (".html", ".pdf")
REPORT_FILTER = "Web page, self-contained (*.html);;PDF document (*.pdf)"


def check_report_path(path: str | os.PathLike) -> Path:
    """``path`` when its suffix names a report format; ValueError saying which suffixes do otherwise."""
    path = Path(path)
    if path.suffix.lower() not in REPORT_SUFFIXES:
        raise ValueError(f"{path.name}: a report's name must end in {' or '.join(REPORT_SUFFIXES)}")
    return path


def report_file_bytes(report: dict, figures: dict[str, str], suffix: str) -> bytes:
    """The bytes of the report file: the HTML page (figures as inline SVG) for .html, the PDF for .pdf."""
    if suffix.lower() == ".html":
        inline = {name: inline_svg(svg, f"{name}-") for name, svg in figures.items()}
        return report_html(report, inline).encode("utf-8")
    if suffix.lower() == ".pdf":
        return report_pdf_bytes(report, figures)
    raise ValueError(f"a report's name must end in {' or '.join(REPORT_SUFFIXES)}, got {suffix!r}")


def write_report(results: ReportResults, out: str | os.PathLike, *, view: ViewSettings, project=None,
                 project_file: str | os.PathLike | None = None, unsaved_changes: bool = False,
                 created: datetime | None = None) -> Path:
    """Write the report of ``results`` to ``out`` (.html or .pdf) and return its path; ``view`` is the study's
    view settings (which layers the figures show), the rest as core.results.report.report_document takes them.
    Raises ValueError for another suffix and OSError when the file cannot be written (nothing is left half
    written: the file appears whole or not at all)."""
    out = check_report_path(out)
    report = report_document(results, project=project, project_file=project_file,
                             unsaved_changes=unsaved_changes, created=created)
    figures = ReportFigures()
    try:
        pictures = figures.draw(results, view)
    finally:
        figures.close()
    data = report_file_bytes(report, pictures, out.suffix)
    try:
        return write_file_atomically(out, data, backup=False)
    except OSError as error:
        raise OSError(f"could not write {out}: {error.strerror or error}") from None
