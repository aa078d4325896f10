"""Opening the background data a project lists: paths relative to the project file, checksums compared.

A project records each data file as a ``core.project.model.DataSourceRef``: its path relative to the project
file's folder and the SHA-256 of its bytes when the project was saved. ``open_project_data`` finds the files
from wherever the project file now lies (not from the working directory), reads them with core.data.sources,
and gives each a status: opened, changed (loaded, but its bytes differ from the recorded checksum: the user can
look and accept it with ``accept_changed_data``), missing, unreadable (also a file whose quantities clash
with an earlier file's) or refused.

A project file is untrusted input: it may come from someone else. A data file whose real location (symbolic
links resolved) is outside the project file's folder, by an absolute path or by climbing out with '../', is
refused, not read, unless the caller allows it (``allow_outside``: the command line's --allow-outside-data,
the window after the user confirmed the paths ``outside_data_paths`` lists). Messages name a file and say
what is wrong with it; they never quote what it holds. A missing or unreadable file, or a data quantity an equation uses that no file
provides, is a problem; a changed file only warns. Every message is one line ``PROJECT: JSON-PATH: what``,
like those of core.project.io. The window and the command line open data through this one function: a
``DataCache`` the caller keeps spares reading unchanged files again, and ``cancel``/``progress`` hooks let it
run off the GUI thread.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path, PurePosixPath, PureWindowsPath

import numpy as np

from core.data.limits import check_file_size
from core.data.raw import failure_reason
from core.data.sources import DataError, DataSet, DataSources, file_checksum, load_data, parse_quantity_key
from core.equations.compiled import CompiledEquation, compile_equation
from core.equations.equation import Equation
from core.progress import CancelCheck, Cancelled, ProgressReport
from core.project.checks import equation_data_names
from core.project.form_checks import json_path
from core.project.model import DataSourceRef, Project

__all__ = [
    "CHANGED",
    "MISSING",
    "OPENED",
    "REFUSED",
    "UNREADABLE",
    "DataCache",
    "DataSourceStatus",
    "PartialData",
    "ProjectData",
    "accept_changed_data",
    "compile_with_data",
    "data_source_ref",
    "open_project_data",
    "outside_data_paths",
    "relative_data_path",
    "resolve_data_path",
    "unprovided_names_problem",
]

# states of a data source once opened
OPENED, CHANGED, MISSING, UNREADABLE = "opened", "changed", "missing", "unreadable"
REFUSED = "refused"    # outside the project's folder, and reading outside it was not allowed


def _folder(project_path: str | os.PathLike) -> Path:
    return Path(os.path.abspath(os.fspath(project_path))).parent


def _is_absolute(path: str) -> bool:
    return PurePosixPath(path).is_absolute() or PureWindowsPath(path).is_absolute()


def resolve_data_path(source: DataSourceRef | str, project_path: str | os.PathLike) -> Path:
    """The absolute location of a data file recorded relative to the project file at ``project_path``."""
    recorded = source.path if isinstance(source, DataSourceRef) else os.fspath(source)
    if _is_absolute(recorded):
        return Path(recorded)
    return Path(os.path.normpath(_folder(project_path) / Path(*PurePosixPath(recorded).parts)))


def _inside(location: str | os.PathLike, folder: str) -> bool:
    """True when ``location``, symbolic links resolved, is ``folder`` (already resolved) or inside it."""
    try:
        real = os.path.realpath(location)
        return os.path.commonpath([real, folder]) == folder
    except (OSError, ValueError):          # another drive, an embedded NUL: not inside
        return False


def _real_folder(project_path: str | os.PathLike) -> str:
    return os.path.realpath(_folder(project_path))


def outside_data_paths(project: Project, project_path: str | os.PathLike) -> tuple[str, ...]:
    """The recorded paths of ``project``'s data files whose real location (symbolic links resolved) is
    outside the folder of the project file at ``project_path``: what needs the user's leave to be read."""
    folder = _real_folder(project_path)
    outside = []
    for source in project.data_sources:
        try:
            location = resolve_data_path(source, project_path)
        except (OSError, ValueError):
            outside.append(source.path)
            continue
        if not _inside(location, folder):
            outside.append(source.path)
    return tuple(outside)


def relative_data_path(path: str | os.PathLike, project_path: str | os.PathLike) -> str:
    """``path`` as a project records it: relative to the project file's folder, '/' between folders.

    Absolute (still with '/') only when no relative path exists, i.e. the file is on another drive.
    """
    target = os.path.abspath(os.fspath(path))
    try:
        relative = os.path.relpath(target, _folder(project_path))
    except ValueError:  # another drive (Windows)
        return Path(target).as_posix()
    return Path(relative).as_posix()


def data_source_ref(path: str | os.PathLike, project_path: str | os.PathLike, *,
                    names: Sequence[str] | Mapping[str, str] | None = None, format: str | None = None,
                    note: str = "") -> DataSourceRef:
    """The record of the data file at ``path`` (relative to the working directory) for a project to be saved
    at ``project_path``: its relative path and its checksum now.

    ``names`` as in core.data.sources.load_data: a list of quantities to take, or {name in the file: quantity name}.
    Raises DataError when the file cannot be read.
    """
    if isinstance(names, str):
        raise DataError(f"{os.fspath(path)}: names must be a list of names or a mapping, not the string {names!r}")
    mapping = {} if names is None else dict(names) if isinstance(names, Mapping) else {n: n for n in names}
    checksum = file_checksum(path)
    try:
        return DataSourceRef(path=relative_data_path(path, project_path), checksum=checksum, format=format,
                             names=mapping, note=note)
    except ValueError as error:
        raise DataError(str(error)) from None


@dataclass(frozen=True, eq=False)
class DataSourceStatus:
    """One listed data file once looked for.

    ``state`` is OPENED, CHANGED (loaded, but its checksum differs from the recorded one), MISSING,
    UNREADABLE or REFUSED (outside the project's folder, not allowed); ``checksum`` is the file's checksum now (None unless loaded); ``dataset`` the loaded data
    (None when missing or unreadable, except for a file whose quantities clash with an earlier file's: read,
    not used).
    ``message`` is the whole line with its place (PROJECT: JSON-PATH: what), ``reason`` only the what.
    """

    index: int
    source: DataSourceRef
    location: Path
    state: str
    checksum: str | None
    dataset: DataSet | None
    message: str = ""
    reason: str = ""

    @property
    def usable(self) -> bool:
        """True when equations read this file's quantities (opened or changed)."""
        return self.state in (OPENED, CHANGED)

    @property
    def quantities(self) -> tuple[str, ...]:
        """The quantities the file provides, or those its record renames to when it was not read."""
        return self.dataset.quantities if self.dataset is not None else tuple(self.source.names.values())


class PartialData:
    """A core QuantitySource over the files that loaded; the ``unavailable`` quantities read as NaN.

    With it equations that use quantities of a missing or unreadable file still compile, and are undefined
    (core.analysis.classify's UNDEFINED) where those quantities are needed.
    """

    def __init__(self, sources: DataSources, unavailable: Sequence[str] = ()) -> None:
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


@dataclass(frozen=True, eq=False)
class ProjectData:
    """The data of a project, opened.

    ``sources`` combines every file that loaded (None when the project lists no data source);
    ``problems`` are lines for what blocks computing (missing or unreadable files, data quantities no file
    provides); ``changed`` are warning lines for files whose checksum differs from the recorded one (those
    files are loaded all the same); ``statuses`` holds one DataSourceStatus per listed file, in order;
    ``variables`` are the names the files were read for; ``unavailable`` the quantities of files that could
    not be used (and, then, the names equations use that no loaded file provides), which ``quantity_source``
    reads as NaN.
    """

    sources: DataSources | None
    problems: tuple[str, ...]
    changed: tuple[str, ...]
    statuses: tuple[DataSourceStatus, ...] = ()
    variables: tuple[str, ...] = ()
    unavailable: tuple[str, ...] = ()

    @property
    def names(self) -> tuple[str, ...]:
        """Every data quantity loaded (empty when none)."""
        return () if self.sources is None else self.sources.names

    @property
    def ok(self) -> bool:
        """True when nothing blocks computing (changed files only warn)."""
        return not self.problems

    @property
    def quantity_source(self) -> PartialData | None:
        """What equations sample: the loaded quantities, NaN for the unavailable ones (None without data)."""
        if self.sources is None:
            return None
        return PartialData(self.sources, self.unavailable)


class DataCache:
    """Data sets already read, kept by the caller so that opening a study again reads only what changed.

    An entry is found again while the file keeps its absolute path, size and modification time and is read
    the same way (format, renamed quantities, variables). ``hits`` counts data sets found here, ``reads``
    files read by open_project_data. Not thread-safe: give a background job its own ``copy()``.
    """

    def __init__(self) -> None:
        self._entries: dict[tuple, DataSet] = {}
        self.hits = 0
        self.reads = 0

    def __len__(self) -> int:
        return len(self._entries)

    @staticmethod
    def _key(location: str | os.PathLike, source: DataSourceRef, variables: Sequence[str]) -> tuple | None:
        path = os.path.abspath(os.fspath(location))
        try:
            stat = os.stat(path)
        except OSError:
            return None
        return (path, stat.st_size, stat.st_mtime_ns, source.format, tuple(sorted(source.names.items())),
                tuple(variables))

    def get(self, location: str | os.PathLike, source: DataSourceRef, variables: Sequence[str]
            ) -> DataSet | None:
        """The data set read from the file at ``location`` as ``source`` says, if held and still current."""
        dataset = self._entries.get(self._key(location, source, variables))  # type: ignore[arg-type]
        if dataset is not None:
            self.hits += 1
        return dataset

    def put(self, location: str | os.PathLike, source: DataSourceRef, dataset: DataSet) -> None:
        """Keep ``dataset``, read from the file at ``location`` as ``source`` says, for its variables."""
        key = self._key(location, source, dataset.variables)
        if key is not None:
            self._entries[key] = dataset

    def retain(self, project_data: ProjectData) -> None:
        """Forget every data set but those of ``project_data``'s files (a study keeps what it uses)."""
        keep = {self._key(s.location, s.source, project_data.variables) for s in project_data.statuses}
        self._entries = {key: value for key, value in self._entries.items() if key in keep}

    def copy(self) -> DataCache:
        """A cache holding the same data sets (and counts), to be filled apart from this one."""
        other = DataCache()
        other._entries = dict(self._entries)
        other.hits, other.reads = self.hits, self.reads
        return other


def _read(source: DataSourceRef, location: Path, variables: tuple[str, ...], cache: DataCache | None,
          cached_only: bool) -> tuple[str, DataSet | None, str]:
    """(state, dataset, reason) for one listed file: MISSING, UNREADABLE or OPENED (changes not judged)."""
    if not location.is_file():
        return MISSING, None, f"file {source.path!r} is missing (looked in {location})"
    dataset = cache.get(location, source, variables) if cache is not None else None
    if dataset is not None:
        return OPENED, dataset, ""
    if cached_only:
        return UNREADABLE, None, (f"file {source.path!r} was not read: loading was cancelled "
                                  "(reload to read it)")
    try:
        check_file_size(str(location))     # before the checksum reads a huge file through
        dataset = load_data(location, variables=variables, names=dict(source.names) or None,
                            format=source.format)
    except DataError as error:
        return UNREADABLE, None, str(error)
    if cache is not None:
        cache.reads += 1
        cache.put(location, source, dataset)
    return OPENED, dataset, ""


def _looked_up(source: DataSourceRef, project_path: str | os.PathLike, folder: str, variables: tuple[str, ...],
               cache: DataCache | None, cached_only: bool, allow_outside: bool
               ) -> tuple[Path, str, DataSet | None, str]:
    """(location, state, dataset, reason) for one listed file; every failure becomes its state."""
    location = Path(source.path)
    try:
        location = resolve_data_path(source, project_path)
        if not allow_outside and not _inside(location, folder):
            return location, REFUSED, None, (f"file {source.path!r} is outside the project's folder, so it is not "
                                             "read unless allowed (--allow-outside-data on the command line)")
        return (location, *_read(source, location, variables, cache, cached_only))
    except Cancelled:
        raise
    except MemoryError:
        return location, UNREADABLE, None, f"file {source.path!r} needs more memory than is free to read it"
    except Exception as error:  # noqa: BLE001 - documented never to raise: any failure is the file's status
        return location, UNREADABLE, None, f"file {source.path!r} cannot be read ({failure_reason(error)})"


def open_project_data(project: Project, project_path: str | os.PathLike, *,
                      variables: Sequence[str] | None = None, cache: DataCache | None = None,
                      cached_only: bool = False, cancel: CancelCheck | None = None,
                      progress: ProgressReport | None = None, allow_outside: bool = False) -> ProjectData:
    """Find, check and load every data file ``project`` lists; never raises (but Cancelled).

    Paths resolve against the folder of ``project_path`` (the project file as named: the working
    directory does not matter). ``variables`` are the names the data are read for (default: the shown
    equation's); equations with these variables must find every data quantity they use. ``cache`` (the
    caller's) gives back files read before and keeps those read now; with ``cached_only`` nothing is read and
    files the cache lacks count as unreadable (after a cancelled open). ``cancel`` is polled before each file
    (raises core.progress.Cancelled); ``progress`` gets the fraction of files done. A file outside the project
    file's folder is REFUSED unless ``allow_outside``; any failure of a file is its status, never an exception.
    """
    label = os.fspath(project_path)
    variables = tuple(project.shown()[0].variables if variables is None else variables)
    if not project.data_sources:
        if progress is not None:
            progress(1.0)
        return ProjectData(None, (), (), (), variables)
    statuses: list[DataSourceStatus] = []
    usable: list[DataSet] = []
    folder = _real_folder(project_path)
    count = len(project.data_sources)
    for index, source in enumerate(project.data_sources):
        if cancel is not None and cancel():
            raise Cancelled("opening the data files was cancelled")
        where = f"{label}: {json_path(['data_sources', index])}"
        location, state, dataset, reason = _looked_up(source, project_path, folder, variables, cache,
                                                      cached_only, allow_outside)
        checksum = None if dataset is None else dataset.checksum
        if dataset is not None:
            try:
                DataSources((*usable, dataset))
            except DataError as error:
                state, reason = UNREADABLE, str(error)
            else:
                usable.append(dataset)
                if checksum != source.checksum:
                    state = CHANGED
                    reason = (f"file {source.path!r} has changed since the project was saved (checksum "
                              f"recorded {source.checksum[:12]}..., now {checksum[:12]}...)")
        message = f"{where}: {reason}" if reason else ""
        statuses.append(DataSourceStatus(index, source, location, state, checksum, dataset, message, reason))
        if progress is not None:
            progress((index + 1) / count)
    sources = DataSources(usable)
    problems = [s.message for s in statuses if not s.usable]
    changed = [s.message for s in statuses if s.state == CHANGED]
    unavailable: dict[str, None] = {}
    if problems:
        for status in statuses:
            if not status.usable:
                unavailable.update(dict.fromkeys(status.quantities))
    for index, equation in enumerate(project.equations):
        if tuple(equation.variables) != variables:
            continue
        try:
            if problems:
                unavailable.update(dict.fromkeys(equation_data_names(equation)))
                continue
            problem = unprovided_names_problem(equation, sources.names)
        except Exception as error:  # noqa: BLE001 - documented never to raise
            problem = f"equation {equation.name!r} cannot be matched with the data ({failure_reason(error)})"
        if problem:
            problems.append(f"{label}: {json_path(['equations', index])}: {problem}")
    return ProjectData(sources, tuple(problems), tuple(changed), tuple(statuses), variables,
                       tuple(n for n in unavailable if n not in sources.names))


def unprovided_names_problem(equation: Equation, provided: Sequence[str]) -> str:
    """Which data quantities ``equation`` uses that are not among ``provided``, as one line ('' when none)."""
    absent = [name for name in equation_data_names(equation) if name not in provided]
    if not absent:
        return ""
    listed = ", ".join(repr(name) for name in absent)
    offered = ", ".join(provided) or "none"
    return (f"equation {equation.name!r} uses {listed}, which no data source provides "
            f"(the data provide {offered})")


def accept_changed_data(project: Project, project_data: ProjectData, *,
                        indices: Sequence[int] | None = None) -> Project:
    """``project`` with the checksums of its changed data files set to their current values.

    ``indices`` picks files of ``project.data_sources`` (default: every changed one). A file is accepted only
    while the project still lists it at the same place; its other fields (names, note) are the project's.
    """
    for status in project_data.statuses:
        wanted = indices is None or status.index in indices
        if status.state != CHANGED or status.checksum is None or not wanted:
            continue
        if status.index < len(project.data_sources):
            current = project.data_sources[status.index]
            if current.path == status.source.path:
                project = project.with_data_source(replace(current, checksum=status.checksum))
    return project


def compile_with_data(equation: Equation, data: ProjectData | DataSources | Sequence[str] | None
                      ) -> CompiledEquation:
    """``compile_equation`` with the loaded data quantities the equation does not define itself.

    (A project may hold a formula equation that defines ``u`` beside one that reads ``u`` from data.)
    Raises ExpressionError as compile_equation does.
    """
    names = getattr(data, "names", data) or ()
    own = {*equation.variables, *equation.definitions, *equation.parameters}
    return compile_equation(equation, data_names=tuple(n for n in names if n not in own))
