"""Between the window's Study and core's project document: conversion, files, the starting study.

core.project names the shown equation and domain; the window indexes them. Data files are recorded in the
project file relative to the file's folder; in the window they are absolute, so that a study can be saved
elsewhere (or not saved yet) without its data references breaking.
"""

from __future__ import annotations

import os
from dataclasses import replace
from pathlib import Path, PurePosixPath

from core.domain import Domain
from core.equation import Equation, Parameter
from core.project_data import relative_data_path, resolve_data_path
from gui.study import Layers, PinMark, SeedLine, Study

__all__ = [
    "PROJECT_FILTER",
    "StudyFileError",
    "load_study",
    "project_from_study",
    "save_study",
    "scratch_study",
    "starting_study",
    "study_from_project",
]

PROJECT_FILTER = "Mixtype studies (*.mixtype.json);;JSON files (*.json);;All files (*)"


class StudyFileError(Exception):
    """A study could not be read or written; the message is for the user (one line per problem)."""


def _absolute(recorded: str, project_path: str | Path | None) -> str:
    """A recorded data path made absolute: against the project file's folder, or the working folder when
    there is no file."""
    if project_path is None:
        return os.path.abspath(Path(*PurePosixPath(recorded).parts))
    return str(resolve_data_path(recorded, project_path))


def _recorded(path: str, project_path: str | Path | None) -> str:
    """An absolute data path as the project file records it (relative to the file when there is one)."""
    return Path(path).as_posix() if project_path is None else relative_data_path(path, project_path)


def study_from_project(project, project_path: str | Path | None = None) -> Study:
    """A Study showing the project's shown equation and domain (data paths made absolute)."""
    equations = tuple(project.equations)
    domains = tuple(project.domains)
    view = project.view
    layers = Layers(type_map=view.show_type_map, type_lines=view.show_type_change_lines,
                    family_1=view.show_characteristics_family_1, family_2=view.show_characteristics_family_2,
                    pins=view.show_pins, seeds=view.show_characteristics, legend=view.show_legend)
    sources = tuple(replace(s, path=_absolute(s.path, project_path))
                    for s in getattr(project, "data_sources", ()))
    return Study(
        equations=equations,
        domains=domains,
        shown_equation=[e.name for e in equations].index(project.shown_equation),
        shown_domain=[d.name for d in domains].index(project.shown_domain),
        pins=tuple(PinMark(p.x, p.y, p.label) for p in project.pins),
        seeds=tuple(SeedLine(tuple(s.start), tuple(s.end) if s.end is not None else None, s.curves,
                             tuple(s.families), s.label) for s in project.seeds),
        layers=layers,
        tolerance=float(view.parabolic_tolerance),
        notes=project.notes,
        metadata=project.metadata,
        data_sources=sources,
    )


def project_from_study(study: Study, project_path: str | Path | None = None):
    """The core Project for a Study, data paths relative to ``project_path``'s folder (raises ValueError
    when names collide, as core requires)."""
    from core.project import Metadata, Pin, Project, Seed, ViewSettings, utc_timestamp

    layers = study.layers
    view = ViewSettings(show_type_map=layers.type_map, show_type_change_lines=layers.type_lines,
                        show_characteristics_family_1=layers.family_1,
                        show_characteristics_family_2=layers.family_2, show_pins=layers.pins,
                        show_legend=layers.legend, parabolic_tolerance=study.tolerance)
    metadata = study.metadata
    if metadata is None:
        stamp = utc_timestamp()
        metadata = Metadata(created=stamp, modified=stamp)
    return Project(
        equations=study.equations,
        domains=study.domains,
        shown_equation=study.equation.name,
        shown_domain=study.domain.name,
        pins=tuple(Pin(p.x, p.y, p.label) for p in study.pins),
        seeds=tuple(Seed(s.start, s.end, s.curves, tuple(s.families), s.label) for s in study.seeds),
        view=view,
        notes=study.notes,
        metadata=metadata,
        data_sources=tuple(replace(s, path=_recorded(s.path, project_path)) for s in study.data_sources),
    )


def load_study(path: str | Path) -> Study:
    """Read a project file into a Study; StudyFileError with core's problems otherwise."""
    try:
        from core.project_io import ProjectError, load_project
    except ImportError as error:
        raise StudyFileError(f"project files are not available in this build ({error})") from None
    try:
        return study_from_project(load_project(path), path)
    except ProjectError as error:
        raise StudyFileError(str(error)) from None
    except (OSError, ValueError, KeyError) as error:
        raise StudyFileError(f"{path}: {error}") from None


def save_study(study: Study, path: str | Path) -> Study:
    """Write a Study atomically; returns it with the metadata as written. StudyFileError on failure."""
    try:
        from core.project_io import ProjectError, save_project
    except ImportError as error:
        raise StudyFileError(f"project files are not available in this build ({error})") from None
    try:
        written = save_project(project_from_study(study, path), path)
    except ProjectError as error:
        raise StudyFileError(str(error)) from None
    except (OSError, ValueError, KeyError) as error:
        raise StudyFileError(f"{path}: {error}") from None
    return replace(study, metadata=written.metadata)


def scratch_study() -> Study:
    """A small study of Mixtype's own for an empty window: flow speeding up over a smooth hump.

    The local Mach number rises above the free-stream value near the hump, so a pocket where
    (1 - M^2) u_xx + u_yy changes from elliptic to hyperbolic appears as M_inf approaches 1.
    """
    equation = Equation(
        a="1 - M**2", b="0", c="1",
        definitions={"M": "M_inf*(1 + 0.35*exp(-(x**2 + 4*y**2)))"},
        parameters={"M_inf": Parameter(0.8, 0.3, 1.2, "", "free-stream Mach number (dimensionless)")},
        name="hump flow", description="small-disturbance flow over a smooth hump (demo scenario)")
    domain = Domain(-3.0, 3.0, -2.0, 2.0, 401, 401, name="near field")
    return Study(equations=(equation,), domains=(domain,))


def starting_study() -> tuple[Study, Path | None]:
    """The shipped demo study when it is present and readable, else the scratch study."""
    try:
        from core.project import demo_project_path

        path = demo_project_path()
        return load_study(path), None
    except Exception:  # noqa: BLE001 - any trouble with the demo falls back to the built-in study
        return scratch_study(), None
