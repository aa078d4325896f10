"""Project files for the window: reading and writing with core.project.io, and the starting project.

Data files are recorded in the project file relative to the file's folder; in the window they are absolute,
so that a project can be saved elsewhere (or not saved yet) without its data references breaking.
"""

from __future__ import annotations

import os
from dataclasses import replace
from pathlib import Path, PurePosixPath

from core.domain import Domain
from core.equations.equation import Equation, Parameter
from core.project.data_files import relative_data_path, resolve_data_path
from core.project.io import ProjectError, load_project, save_project
from core.project.model import Project, demo_project_path, new_project

__all__ = [
    "PROJECT_FILTER",
    "ProjectFileError",
    "open_project_file",
    "save_project_file",
    "scratch_project",
    "starting_project",
    "with_absolute_data_paths",
]

PROJECT_FILTER = "Mixtype studies (*.mixtype.json);;JSON files (*.json);;All files (*)"


class ProjectFileError(Exception):
    """A project could not be read or written; the message is for the user (one line per problem)."""


def _absolute(recorded: str, project_path: str | Path | None) -> str:
    """A recorded data path made absolute: against the project file's folder, or the working folder when
    there is no file."""
    if project_path is None:
        return os.path.abspath(Path(*PurePosixPath(recorded).parts))
    return str(resolve_data_path(recorded, project_path))


def with_absolute_data_paths(project: Project, project_path: str | Path | None = None) -> Project:
    """The project with its data paths made absolute (against ``project_path``'s folder, or the working
    folder when None), as the window keeps them."""
    return replace(project, data_sources=tuple(replace(s, path=_absolute(s.path, project_path))
                                               for s in project.data_sources))


def open_project_file(path: str | Path) -> Project:
    """Read a project file for the window (data paths absolute); ProjectFileError with core's problems."""
    try:
        return with_absolute_data_paths(load_project(path), path)
    except ProjectError as error:
        raise ProjectFileError(str(error)) from None
    except (OSError, ValueError, KeyError) as error:
        raise ProjectFileError(f"{path}: {error}") from None


def save_project_file(project: Project, path: str | Path) -> Project:
    """Write the window's project atomically, data paths relative to the file; returns it (paths still
    absolute) with the metadata as written. ProjectFileError on failure."""
    try:
        recorded = replace(project, data_sources=tuple(replace(s, path=relative_data_path(s.path, path))
                                                       for s in project.data_sources))
        written = save_project(recorded, path)
    except ProjectError as error:
        raise ProjectFileError(str(error)) from None
    except (OSError, ValueError, KeyError) as error:
        raise ProjectFileError(f"{path}: {error}") from None
    return replace(project, metadata=written.metadata)


def scratch_project() -> Project:
    """A small project of Mixtype's own for an empty window: flow speeding up over a smooth hump.

    The local Mach number rises above the free-stream value near the hump, so a pocket where
    (1 - M^2) u_xx + u_yy changes from elliptic to hyperbolic appears as M_inf approaches 1.
    """
    equation = Equation(
        a="1 - M**2", b="0", c="1",
        definitions={"M": "M_inf*(1 + 0.35*exp(-(x**2 + 4*y**2)))"},
        parameters={"M_inf": Parameter(0.8, 0.3, 1.2, "", "free-stream Mach number (dimensionless)")},
        name="hump flow", description="small-disturbance flow over a smooth hump (demo scenario)")
    domain = Domain(-3.0, 3.0, -2.0, 2.0, 401, 401, name="near field")
    return new_project(equation, domain)


def starting_project() -> tuple[Project, Path | None]:
    """The shipped demo project when it is present and readable, else the scratch project."""
    try:
        return open_project_file(demo_project_path()), None
    except Exception:  # noqa: BLE001 - any trouble with the demo falls back to the built-in project
        return scratch_project(), None
