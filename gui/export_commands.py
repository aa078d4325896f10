"""The window's export commands: the map as a picture, the results as CSV tables and as one JSON document, and
the study report (HTML or PDF).

A mixin of gui.main_window.MainWindow. Every number written comes from core.results (the same document the
command line prints): this module only gathers what the window's analysis holds and picks file names. The
study report is computed as ``mixtype report`` computes it (core.results.report_results) on the "report" job
channel, off the GUI thread with progress and Cancel; its figures and file are then made on the GUI thread
(gui.report), from the study as it was when the report was asked for.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from core.results.certified import certified_document
from core.results.document import results_document
from core.results.report_results import compute_report_results
from core.results.tables import (
    boundary_columns,
    boundary_rows,
    characteristic_columns,
    characteristic_rows,
    pin_columns,
    pin_rows,
    pocket_columns,
    pocket_rows,
    write_csv,
    write_json,
)
from gui.export import PICTURE_FILTER, export_picture
from gui.report import REPORT_FILTER, check_report_path, write_report

__all__ = ["REPORT_CHANNEL", "TABLES", "ExportCommands"]

REPORT_CHANNEL = "report"

# table name -> menu text
TABLES = {"lines": "Type-change lines as CSV…", "characteristics": "Characteristics as CSV…",
          "pins": "Pins with readouts as CSV…", "pockets": "Hyperbolic pockets as CSV…"}


class ExportCommands:
    """Pictures, tables and the results document of the study window (mixed into MainWindow)."""

    def export_picture_dialog(self) -> None:
        path = self.choose_save_path("Export the map", PICTURE_FILTER, "type_map.png")
        if path:
            self.export_picture(path)

    def export_picture(self, path: str | Path) -> Path | None:
        if Path(path).suffix.lower() not in (".png", ".svg", ".pdf"):
            path = str(path) + ".png"
        try:
            written = export_picture(self.map_view, path, title=self.map_view.title.text())
        except (OSError, ValueError) as error:
            self.report_error("Could not export the map", str(error))
            return None
        self.statusBar().showMessage(f"Map written to {written}", 5000)
        return written

    def results_document(self, *, include_codes: bool = True) -> dict:
        """core.results.document.results_document of what the window holds now (results not yet computed
        are null), with the ``certified`` object (core.results.certified) when the certified layer is on."""
        document, analysis = self.document, self.analysis
        equation = document.equation
        pockets = None if analysis.pockets is None else analysis.pockets.pockets
        data = document.data
        result = results_document(
            equation=equation, domain=document.domain, parameters=equation.parameter_values(),
            tolerance=document.tolerance, type_map=analysis.type_map, boundaries=analysis.boundaries,
            pockets=pockets, pins=document.project.pins, probes=analysis.probes, trades=analysis.trade_readings,
            traced=[(traced.seed, traced.curves) for traced in analysis.traced],
            data=getattr(data, "sources", data), project_file=document.path, unsaved_changes=document.is_dirty,
            include_codes=include_codes)
        if document.project.view.certified.shown:
            result["certified"] = None if analysis.certified is None else certified_document(analysis.certified)
        return result

    def export_table(self, what: str, path: str | Path) -> int:
        """Write one CSV table (a key of TABLES); returns the number of rows."""
        variables = self.document.equation.variables
        if what == "lines":
            return write_csv(boundary_rows(self.analysis.boundaries, variables), path, boundary_columns(variables))
        if what == "characteristics":
            curves = [curve for traced in self.analysis.traced for curve in traced.curves]
            return write_csv(characteristic_rows(curves, variables), path, characteristic_columns(variables))
        if what in ("pins", "pockets"):
            document = self.results_document(include_codes=False)
            if what == "pins":
                rows = pin_rows(document["pins"], variables)
                return write_csv(rows, path, pin_columns(rows, variables))
            return write_csv(pocket_rows(document["pockets"] or [], variables), path, pocket_columns(variables))
        raise ValueError(f"unknown table {what!r}; expected {', '.join(TABLES)}")

    def export_table_dialog(self, what: str) -> None:
        path = self.choose_save_path(f"Export {what} as CSV", "CSV table (*.csv)", f"{what}.csv")
        if not path:
            return
        try:
            rows = self.export_table(what, path)
        except OSError as error:
            self.report_error("Could not export", str(error))
            return
        self.statusBar().showMessage(f"{rows} rows written to {path}", 5000)

    def export_json(self, path: str | Path) -> None:
        """Write the results document (with the type code of every grid node) as JSON."""
        write_json(self.results_document(), path)

    def export_json_dialog(self) -> None:
        path = self.choose_save_path("Export everything as JSON", "JSON (*.json)", "results.json")
        if path:
            try:
                self.export_json(path)
            except (OSError, ValueError) as error:
                self.report_error("Could not export", str(error))
                return
            self.statusBar().showMessage(f"Results written to {path}", 5000)

    # -- the study report ------------------------------------------------------------------------------------
    def export_report_dialog(self) -> None:
        path = self.choose_save_path("Export the study report", REPORT_FILTER, "study_report.html")
        if path:
            self.export_report(path)

    def export_report(self, path: str | Path) -> int | None:
        """Compute the study's report in the background and write it to ``path`` (.html or .pdf; another name
        gets .html) when done; returns the job number (None when the study cannot be reported now)."""
        if Path(path).suffix.lower() not in (".html", ".pdf"):
            path = str(path) + ".html"
        path = check_report_path(path)
        document, analysis = self.document, self.analysis
        if document.data_pending:
            self.report_error("Could not make the report", "the study's data files are still loading; export the "
                              "report once they are read")
            return None
        compiled = document.compiled
        if compiled is None:
            self.report_error("Could not make the report", document.compile_error or "the equation has an error")
            return None
        if not getattr(self, "_report_wired", False):
            self.runner.finished.connect(self._report_computed)
            self.runner.failed.connect(self._report_failed)
            self._report_wired = True
        project, equation, domain = document.project, document.equation, document.domain
        view = project.view
        known = analysis.certified if view.certified.shown and not self.runner.is_busy("certified") else None
        parameters, tolerance, data = equation.parameter_values(), document.tolerance, document.data
        self._report_pending = {"path": path, "project": project, "view": view, "file": document.path,
                                "dirty": document.is_dirty}

        def work(cancel, progress):
            with np.errstate(all="ignore"):
                return compute_report_results(
                    compiled, equation, domain, parameters=parameters, tolerance=tolerance, data=data,
                    pins=project.pins, seeds=project.seeds, bounces=view.characteristic_bounces, field=view.field,
                    certified=view.certified, known_certified=known, cancel=cancel, progress=progress)

        return self.runner.request(REPORT_CHANNEL, work, label="Making the study report")

    def _report_computed(self, channel: str, number: int, results: object) -> None:
        if channel != REPORT_CHANNEL:
            return
        pending = self._report_pending
        try:
            written = write_report(results, pending["path"], view=pending["view"], project=pending["project"],
                                   project_file=pending["file"], unsaved_changes=pending["dirty"])
        except (OSError, ValueError) as error:
            self.report_error("Could not write the report", str(error))
            return
        self.statusBar().showMessage(f"Study report written to {written}", 8000)

    def _report_failed(self, channel: str, number: int, text: str) -> None:
        if channel == REPORT_CHANNEL:
            self.report_error("Could not make the report", text)
