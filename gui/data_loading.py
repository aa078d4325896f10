"""Background data of the open study: opens its data files off the GUI thread and hands them to the document.

The study lists its data files (``Project.data_sources``, core.project.model.DataSourceRef, absolute in the
window). When that list changes, or the shown equation's variables do, core.project.data_files.open_project_data
runs as one background job ("data" channel: progress per file, cancellable between files) and its ProjectData
(one status per file: opened, changed, missing or unreadable) goes to the document and the window. Quantities of
files that could not be used read as NaN (ProjectData.quantity_source), so equations still compile and the map
shows them as undefined (grey). The loader keeps core's DataCache between loads, so adding, removing or renaming
one file does not read the others again. Files outside the study's folder are read (allow_outside): the user
confirmed them when the study was opened (gui.file_commands) or added them in the Data panel.
"""

from __future__ import annotations

import os
from dataclasses import replace

from PySide6.QtCore import QObject, QTimer, Signal

from core.data.sources import DataError, DataSet, load_data
from core.project.data_files import CHANGED, MISSING, OPENED, DataCache, ProjectData, open_project_data
from core.project.model import DataSourceRef
from gui.document import Document
from gui.jobs import JobRunner

__all__ = ["DATA_FILTER", "DataLoader", "problem_text"]

DATA_FILTER = ("Data files (*.csv *.npz *.nc *.nc4 *.cdf *.netcdf *.vtu *.vtk);;CSV tables (*.csv);;"
               "NumPy archives (*.npz);;NetCDF (*.nc *.nc4 *.cdf *.netcdf);;VTK meshes (*.vtu *.vtk);;All files (*)")


def problem_text(loaded: ProjectData) -> str:
    """One sentence per file that is not opened as recorded, for the window's data banner ('' when all are)."""
    sentences = []
    claimed = {q for status in loaded.statuses for q in status.quantities}
    unclaimed = [q for q in loaded.unavailable if q not in claimed]
    for status in loaded.statuses:
        name = os.path.basename(status.location)
        if status.state == OPENED:
            continue
        if status.state == MISSING:
            names = ", ".join(status.quantities or unclaimed) or "its quantities"
            sentences.append(f"Data file {name} is missing (looked for {status.location}): {names} read as "
                             "undefined (grey on the map). Remove it or add the file again in the Data panel.")
        elif status.state == CHANGED:
            sentences.append(f"Data file {name} changed since the study was saved: the map uses it as it is now "
                             "(accept the change in the Data panel).")
        else:
            sentences.append(f"Data file {name} cannot be used: {status.reason}")
    return " ".join(sentences)


class DataLoader(QObject):
    """Keeps the document's background data in step with the study's list of data files."""

    loaded = Signal(object)        # core.project.data_files.ProjectData
    added = Signal(str)            # path of a file added to the study
    message = Signal(str)          # one-line messages (a file that could not be added, cancelled loading)
    settled = Signal()             # loading ended (loaded, failed or cancelled): computations may go ahead

    def __init__(self, document: Document, runner: JobRunner, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.runner = runner
        self.result: ProjectData | None = None
        self._cache = DataCache()
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.reload)
        document.data_sources_changed.connect(self.schedule)
        document.project_replaced.connect(self.schedule)
        document.equation_changed.connect(self._equation_changed)
        runner.finished.connect(self._finished)
        runner.failed.connect(self._failed)
        runner.cancelled.connect(self._cancelled)

    def _variables(self) -> tuple[str, str]:
        return tuple(self.document.equation.variables)  # type: ignore[return-value]

    def _open(self, **options) -> ProjectData:
        """core's open_project_data on the study as it is now (paths in the window are absolute)."""
        label = self.document.path or "unsaved study"
        return open_project_data(self.document.project, label, variables=self._variables(), allow_outside=True,
                                 **options)

    def _equation_changed(self) -> None:
        if self.result is not None and self.result.variables != self._variables():
            self.schedule()

    def schedule(self) -> None:
        """Load the study's data files again soon; until then computations wait for them."""
        refs = self.document.project.data_sources
        if not refs:
            self._timer.stop()
            self.runner.cancel("data")
            self.result = self._open()
            was_pending = self.document.data_pending
            self.document.set_data_pending(False)
            self.document.set_data(None, ())
            self.loaded.emit(self.result)
            if was_pending:
                self.settled.emit()
            return
        self.document.set_data_pending(True)
        self._timer.start()
        if self.runner.synchronous:
            self.reload()

    def reload(self) -> None:
        """Request the background load of every data file of the study now."""
        self._timer.stop()
        if not self.document.project.data_sources:
            self.schedule()
            return
        project, label, variables = self.document.project, self.document.path or "unsaved study", self._variables()
        cache = self._cache.copy()     # the job fills its own copy; the loader keeps it once the job finishes

        def work(cancel, progress):
            opened = open_project_data(project, label, variables=variables, cache=cache, cancel=cancel,
                                       progress=progress, allow_outside=True)
            return opened, cache

        self.document.set_data_pending(True)
        self.runner.request("data", work, label="Loading data")

    def add_file(self, path: str) -> None:
        """Read ``path`` in the background; once it loads, add it to the study (an undoable edit)."""
        path = os.path.abspath(path)
        if any(os.path.normcase(s.path) == os.path.normcase(path) for s in self.document.project.data_sources):
            self.message.emit(f"{os.path.basename(path)} is already one of the study's data files.")
            return
        variables = self._variables()

        def work(cancel, progress):
            progress(0.0)
            try:
                return load_data(path, variables=variables), None
            except DataError as error:
                return None, str(error)

        self.runner.request("data-add", work, label=f"Reading {os.path.basename(path)}")

    # -- results --------------------------------------------------------------------------------------------
    def _finished(self, channel: str, number: int, payload: object) -> None:
        if channel == "data":
            opened, cache = payload
            cache.retain(opened)
            self._cache = cache
            self._apply(opened)
        elif channel == "data-add":
            dataset, problem = payload
            if dataset is None:
                self.message.emit(problem)
                return
            self._add_loaded(dataset)

    def _apply(self, opened: ProjectData) -> None:
        self.result = opened
        self.document.set_data_pending(False)
        source = opened.quantity_source
        self.document.set_data(source, source.names if source is not None else ())
        self.loaded.emit(opened)
        self.settled.emit()

    def _add_loaded(self, dataset: DataSet) -> None:
        ref = DataSourceRef(path=dataset.path, checksum=dataset.checksum)
        self._cache.put(dataset.path, ref, dataset)
        project = self.document.project
        if any(s.path == ref.path for s in project.data_sources):
            return
        self.document.edit(replace(project, data_sources=(*project.data_sources, ref)),
                           f"Add data file {os.path.basename(ref.path)}")
        self.added.emit(ref.path)

    def _failed(self, channel: str, number: int, text: str) -> None:
        if channel == "data":
            self.document.set_data_pending(False)
            self.message.emit(f"Loading data failed: {text}")
            self.settled.emit()
        elif channel == "data-add":
            self.message.emit(f"Could not read the data file: {text}")

    def _cancelled(self, channel: str, number: int) -> None:
        if channel == "data" and self.runner.latest("data") in (number, -1) and not self.runner.is_busy("data"):
            # What was read before stays in use; files not read yet count as unreadable until a reload.
            self._apply(self._open(cache=self._cache, cached_only=True))
            self.message.emit("Data loading cancelled: files not read yet are undefined until you reload them.")
