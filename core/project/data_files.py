"""Opening the background data a project lists: paths relative to the project file, checksums compared.

A project records each data file as a ``core.project.model.DataSourceRef``: its path relative to the project file's
folder and the SHA-256 of its bytes when the project was saved. ``open_project_data`` finds the files from
wherever the project file now lies (not from the working directory), reads them with core.data.sources, and says
plainly what is wrong: a missing or unreadable file, or a data quantity an equation uses that no file
provides, is a problem; a file whose bytes changed since the save is only a warning (it is loaded, so the
user can look and accept it with ``accept_changed_data``). Every message is one line
``PROJECT: JSON-PATH: what``, like the messages of core.project.io.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path, PurePosixPath, PureWindowsPath

from core.data.sources import DataError, DataSet, DataSources, file_checksum, load_data
from core.equations.equation import CompiledEquation, Equation, compile_equation
from core.project.checks import equation_data_names
from core.project.form_checks import json_path
from core.project.model import DataSourceRef, Project

__all__ = [
    "DataSourceStatus",
    "ProjectData",
    "accept_changed_data",
    "compile_with_data",
    "data_source_ref",
    "open_project_data",
    "relative_data_path",
    "resolve_data_path",
]

# states of a data source once opened
OPENED, CHANGED, MISSING, UNREADABLE = "opened", "changed", "missing", "unreadable"


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
    """One listed data file once looked for: ``state`` is "opened", "changed" (loaded, but its checksum
    differs from the recorded one), "missing" or "unreadable"; ``checksum`` is the file's checksum now
    (None when missing); ``dataset`` the loaded data (None unless opened or changed)."""

    index: int
    source: DataSourceRef
    location: Path
    state: str
    checksum: str | None
    dataset: DataSet | None
    message: str = ""


@dataclass(frozen=True, eq=False)
class ProjectData:
    """The data of a project, opened.

    ``sources`` combines every file that loaded (None when the project lists no data source);
    ``problems`` are lines for what blocks computing (missing or unreadable files, data quantities no file
    provides); ``changed`` are warning lines for files whose checksum differs from the recorded one (those
    files are loaded all the same); ``statuses`` holds one DataSourceStatus per listed file, in order.
    """

    sources: DataSources | None
    problems: tuple[str, ...]
    changed: tuple[str, ...]
    statuses: tuple[DataSourceStatus, ...] = ()

    @property
    def names(self) -> tuple[str, ...]:
        """Every data quantity loaded (empty when none)."""
        return () if self.sources is None else self.sources.names

    @property
    def ok(self) -> bool:
        """True when nothing blocks computing (changed files only warn)."""
        return not self.problems


def open_project_data(project: Project, project_path: str | os.PathLike, *,
                      variables: Sequence[str] | None = None) -> ProjectData:
    """Find, check and load every data file ``project`` lists; never raises for a bad file.

    Paths resolve against the folder of ``project_path`` (the project file as named: the working
    directory does not matter). ``variables`` are the names the data are read for (default: the shown
    equation's); equations with these variables must find every data quantity they use.
    """
    label = os.fspath(project_path)
    variables = tuple(project.shown()[0].variables if variables is None else variables)
    if not project.data_sources:
        return ProjectData(None, (), (), ())
    problems: list[str] = []
    changed: list[str] = []
    statuses: list[DataSourceStatus] = []
    for index, source in enumerate(project.data_sources):
        where = f"{label}: {json_path(['data_sources', index])}"
        location = resolve_data_path(source, project_path)
        if not location.is_file():
            message = f"{where}: file {source.path!r} is missing (looked in {location})"
            problems.append(message)
            statuses.append(DataSourceStatus(index, source, location, MISSING, None, None, message))
            continue
        try:
            checksum = file_checksum(location)
            dataset = load_data(location, variables=variables, names=dict(source.names) or None,
                                format=source.format)
        except DataError as error:
            message = f"{where}: {error}"
            problems.append(message)
            statuses.append(DataSourceStatus(index, source, location, UNREADABLE, None, None, message))
            continue
        state, message = OPENED, ""
        if checksum != source.checksum:
            state = CHANGED
            message = (f"{where}: file {source.path!r} has changed since the project was saved (checksum "
                       f"recorded {source.checksum[:12]}..., now {checksum[:12]}...)")
            changed.append(message)
        statuses.append(DataSourceStatus(index, source, location, state, checksum, dataset, message))
    loaded = [s.dataset for s in statuses if s.dataset is not None]
    try:
        sources = DataSources(loaded)
    except DataError as error:
        problems.append(f"{label}: $.data_sources: {error}")
        sources = DataSources(())
    if not problems:
        problems += _unprovided_names(project, sources, variables, label)
    return ProjectData(sources, tuple(problems), tuple(changed), tuple(statuses))


def _unprovided_names(project: Project, sources: DataSources, variables: tuple[str, ...],
                      label: str) -> list[str]:
    problems = []
    provided = set(sources.names)
    for index, equation in enumerate(project.equations):
        if tuple(equation.variables) != variables:
            continue
        absent = [name for name in equation_data_names(equation) if name not in provided]
        if absent:
            listed = ", ".join(repr(n) for n in absent)
            offered = ", ".join(sources.names) or "none"
            problems.append(f"{label}: {json_path(['equations', index])}: equation {equation.name!r} uses "
                            f"{listed}, which no data source provides (the data provide {offered})")
    return problems


def accept_changed_data(project: Project, project_data: ProjectData) -> Project:
    """``project`` with the checksums of its changed data files set to their current values."""
    for status in project_data.statuses:
        if status.state == CHANGED and status.checksum is not None:
            project = project.with_data_source(replace(status.source, checksum=status.checksum))
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
