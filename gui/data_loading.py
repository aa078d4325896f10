"""Background data of the open study: loads its data files off the GUI thread and hands them to the document.

The study lists its data files (``Project.data_sources``, core.project.model.DataSourceRef, absolute in the window).
When that list changes, or the shown equation's variables do, the files are read with core.data.sources.load_data as one
background job ("data" channel: progress per file, cancellable between files) and each gets a status:

* ``ok``: loaded, and the file is the one the study was saved with (same SHA-256);
* ``changed``: loaded, but the file changed since the study recorded it (the map uses it as it is now);
* ``missing``: no file at the recorded path;
* ``error``: the file cannot be used (core's one-line DataError message, or a quantity name clash).

Quantities of files that are missing or unusable stay known by name (from the file's recorded renames, or
the names the equation uses but does not define) and read as NaN, so equations still compile and the map
shows them as undefined (grey) instead of failing. Loaded files are cached by path, size and modification
time, so adding, removing or renaming one file does not read the others again.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, replace

import numpy as np
from PySide6.QtCore import QObject, QTimer, Signal

from core.data.sources import DataError, DataSet, DataSources, load_data, parse_quantity_key
from core.progress import Cancelled
from core.project.checks import equation_data_names
from gui.document import Document
from gui.jobs import JobRunner

__all__ = ["DATA_FILTER", "DataLoader", "DataStatus", "LoadedData", "PartialData", "load_study_data",
           "problem_text"]

DATA_FILTER = ("Data files (*.csv *.npz *.nc *.nc4 *.cdf *.netcdf *.vtu *.vtk);;CSV tables (*.csv);;"
               "NumPy archives (*.npz);;NetCDF (*.nc *.nc4 *.cdf *.netcdf);;VTK meshes (*.vtu *.vtk);;All files (*)")
STATES = ("ok", "changed", "missing", "error")


@dataclass(frozen=True)
class DataStatus:
    """One data file of the study: its reference, what became of it and the quantities it stands for."""

    ref: object                      # core.project.model.DataSourceRef (absolute path)
    state: str                       # one of STATES
    message: str = ""                # why it is missing, changed or unusable (one line)
    dataset: DataSet | None = None   # the loaded data (also for 'error' when only the names clash)
    quantities: tuple[str, ...] = ()


@dataclass(frozen=True, eq=False)
class LoadedData:
    """The outcome of one load: per-file statuses, the source equations sample and every name they may use."""

    statuses: tuple[DataStatus, ...]
    source: object                   # PartialData, or None without data files
    names: tuple[str, ...]
    variables: tuple[str, str]

    @property
    def problems(self) -> tuple[DataStatus, ...]:
        return tuple(s for s in self.statuses if s.state != "ok")


class PartialData:
    """A core QuantitySource over the loaded files, reading NaN for quantities of files that are unusable."""

    def __init__(self, sources: DataSources, unavailable: tuple[str, ...] = ()) -> None:
        self.sources = sources
        self.unavailable = tuple(n for n in unavailable if n not in sources.names)

    @property
    def names(self) -> tuple[str, ...]:
        return (*self.sources.names, *self.unavailable)

    def sample(self, key: str, x, y) -> np.ndarray:
        quantity, _ = parse_quantity_key(key)
        if quantity in self.unavailable:
            return np.full(np.broadcast_shapes(np.shape(x), np.shape(y)), np.nan)
        return self.sources.sample(key, x, y)


def _cache_key(ref, variables: tuple[str, str]) -> tuple | None:
    try:
        stat = os.stat(ref.path)
    except OSError:
        return None
    return (ref.path, ref.format, tuple(sorted(dict(ref.names).items())), variables, stat.st_size,
            stat.st_mtime_ns)


def _load_one(ref, variables: tuple[str, str], cache: dict, read: bool) -> tuple[DataSet | None, str]:
    """(dataset, problem) for one reference; reads the file (with ``read``) unless the cache holds it."""
    if not os.path.isfile(ref.path):
        return None, f"{os.path.basename(ref.path)} is missing (looked for {ref.path})"
    key = _cache_key(ref, variables)
    if key is not None and key in cache:
        return cache[key], ""
    if not read:
        return None, f"{os.path.basename(ref.path)} was not read: loading was cancelled (Reload to try again)"
    try:
        dataset = load_data(ref.path, variables=variables, names=dict(ref.names) or None, format=ref.format)
    except DataError as error:
        return None, str(error)
    if key is not None:
        cache[key] = dataset
    return dataset, ""


def load_study_data(refs, variables: tuple[str, str], equations=(), *, cache: dict | None = None,
                    read: bool = True, cancel=None, progress=None) -> LoadedData:
    """Read every data file of ``refs`` for the equation ``variables`` and sort out the names.

    ``equations`` (the study's) say which names the quantities of unusable files had, when their references
    do not list them. ``cache`` maps file keys to loaded DataSets and is updated in place; without ``read``
    only cached files are used and the others count as unusable (after a cancelled load).
    """
    cache = {} if cache is None else cache
    statuses: list[DataStatus] = []
    usable: list[DataSet] = []
    for index, ref in enumerate(refs):
        if cancel is not None and cancel():
            raise Cancelled("data loading cancelled")
        dataset, problem = _load_one(ref, variables, cache, read)
        if dataset is None:
            state = "missing" if not os.path.isfile(ref.path) else "error"
            statuses.append(DataStatus(ref, state, problem, None, tuple(dict(ref.names).values())))
        else:
            try:
                DataSources((*usable, dataset))
            except DataError as error:
                statuses.append(DataStatus(ref, "error", str(error), dataset, dataset.quantities))
            else:
                usable.append(dataset)
                changed = dataset.checksum != ref.checksum
                message = (f"{os.path.basename(ref.path)} changed since the study recorded it; the map uses it "
                           "as it is now" if changed else "")
                statuses.append(DataStatus(ref, "changed" if changed else "ok", message, dataset,
                                           dataset.quantities))
        if progress is not None:
            progress((index + 1) / max(1, len(refs)))
    sources = DataSources(usable)
    unavailable: dict[str, None] = {}
    if any(s.state in ("missing", "error") for s in statuses):
        for status in statuses:
            if status.state in ("missing", "error"):
                unavailable.update(dict.fromkeys(status.quantities))
        for equation in equations:
            if tuple(equation.variables) == tuple(variables):
                unavailable.update(dict.fromkeys(equation_data_names(equation)))
    source = PartialData(sources, tuple(unavailable)) if refs else None
    names = source.names if source is not None else ()
    return LoadedData(statuses=tuple(statuses), source=source, names=names, variables=tuple(variables))


def problem_text(loaded: LoadedData) -> str:
    """One sentence per file that is not ok, for the window's data banner ('' when all are fine)."""
    sentences = []
    claimed = {q for status in loaded.statuses for q in status.quantities}
    unclaimed = [q for q in getattr(loaded.source, "unavailable", ()) if q not in claimed]
    for status in loaded.problems:
        name = os.path.basename(status.ref.path)
        if status.state == "missing":
            names = ", ".join(status.quantities or unclaimed) or "its quantities"
            sentences.append(f"Data file {name} is missing (looked for {status.ref.path}): {names} read as "
                             "undefined (grey on the map). Remove it or add the file again in the Data panel.")
        elif status.state == "changed":
            sentences.append(f"Data file {name} changed since the study was saved: the map uses it as it is now "
                             "(accept the change in the Data panel).")
        else:
            sentences.append(f"Data file {name} cannot be used: {status.message}")
    return " ".join(sentences)


class DataLoader(QObject):
    """Keeps the document's background data in step with the study's list of data files."""

    loaded = Signal(object)        # LoadedData
    added = Signal(str)            # path of a file added to the study
    message = Signal(str)          # one-line messages (a file that could not be added, cancelled loading)
    settled = Signal()             # loading ended (loaded, failed or cancelled): computations may go ahead

    def __init__(self, document: Document, runner: JobRunner, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.runner = runner
        self.result: LoadedData | None = None
        self._cache: dict = {}
        self._wanted: tuple | None = None
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

    def _equation_changed(self) -> None:
        if self.result is not None and self.result.variables != self._variables():
            self.schedule()

    def schedule(self) -> None:
        """Load the study's data files again soon; until then computations wait for them."""
        refs = self.document.project.data_sources
        if not refs:
            self._timer.stop()
            self.runner.cancel("data")
            self.result = LoadedData((), None, (), self._variables())
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
        project = self.document.project
        refs, variables, equations = project.data_sources, self._variables(), project.equations
        if not refs:
            self.schedule()
            return
        cache = dict(self._cache)

        def work(cancel, progress):
            return load_study_data(refs, variables, equations, cache=cache, cancel=cancel, progress=progress), cache

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
            loaded, cache = payload
            used = {_cache_key(s.ref, loaded.variables) for s in loaded.statuses}
            self._cache = {key: value for key, value in cache.items() if key in used}
            self._apply(loaded)
        elif channel == "data-add":
            dataset, problem = payload
            if dataset is None:
                self.message.emit(problem)
                return
            self._add_loaded(dataset)

    def _apply(self, loaded: LoadedData) -> None:
        self.result = loaded
        self.document.set_data_pending(False)
        self.document.set_data(loaded.source, loaded.names)
        self.loaded.emit(loaded)
        self.settled.emit()

    def _add_loaded(self, dataset: DataSet) -> None:
        from core.project.model import DataSourceRef

        ref = DataSourceRef(path=dataset.path, checksum=dataset.checksum)
        key = _cache_key(ref, dataset.variables)
        if key is not None:
            self._cache[key] = dataset
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
            # What was read before stays in use; files not read yet count as unusable until a reload.
            project = self.document.project
            self._apply(load_study_data(project.data_sources, self._variables(), project.equations,
                                        cache=self._cache, read=False))
            self.message.emit("Data loading cancelled: files not read yet are undefined until you reload them.")
