"""The jobs of a batch as plain data, and how one job runs: ``run_job(job) -> JobOutcome``.

A ``BatchJob`` is a frozen record of files and options, so it pickles to any worker (a local process or a
Dask worker) and its result is a pure function of the files it names: the project file, and for a sweep a
data file standing in for one of the project's data files. ``run_job`` builds the study exactly as
``mixtype classify FILE`` does (the classify command's own option defaults, core.cli.study) and returns the
document of core.results.classification, so a batch result is field by field what
``mixtype classify FILE --json`` prints (``mixtype classify FILE' --data DATA --json`` for a sweep job, FILE'
being FILE without the data source DATA replaces). ``run_job`` never raises: any failure becomes the
outcome's one-line ``error``, which names the file and, inside a project, the JSON path.
"""

from __future__ import annotations

import argparse
import json
import os
import re
import time
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

from core.batch.figures import document_figures
from core.cli.command import compiled_study
from core.cli.options import UsageError
from core.cli.printable import printable
from core.cli.registry import CLASSIFY
from core.cli.study import build_study, load_project_or_fail
from core.results.classification import classification_document, classify_study

__all__ = [
    "RESERVED_NAMES",
    "BatchJob",
    "JobOutcome",
    "job_name",
    "project_jobs",
    "run_job",
    "sweep_jobs",
    "unique_names",
    "with_unique_names",
]

RESERVED_NAMES = frozenset({"summary"})     # summary.json and summary.csv sit beside the results
MAX_NAME_LENGTH = 100
PROJECT_SUFFIXES = (".mixtype.json", ".json")


@dataclass(frozen=True)
class BatchJob:
    """One study of a batch.

    ``name`` is unique in its batch (the result is NAME.json); ``project`` is the project file and ``data``
    (sweeps only) a data file read in place of the project's data source recorded as ``in_place_of`` (None:
    added, for a project without data files), its quantities taken as ``names`` says ({name in the file:
    quantity name} pairs, None: every quantity). Paths are as the user gave them, relative to ``folder`` (an
    absolute folder; "" for the working folder). ``allow_outside_data`` and ``data_cap`` (bytes, None:
    default) are the options of every command that reads a project.
    """

    name: str
    project: str
    data: str | None = None
    in_place_of: str | None = None
    names: tuple[tuple[str, str], ...] | None = None
    folder: str = ""
    allow_outside_data: bool = False
    data_cap: int | None = None

    @property
    def sources(self) -> tuple[str, ...]:
        """The files the job reads from the command line: the project, then the sweep's data file."""
        return (self.project,) if self.data is None else (self.project, self.data)


@dataclass(frozen=True, eq=False)
class JobOutcome:
    """What one job gave: its classify document as ``mixtype classify --json`` prints it (``text``, one line
    and a newline) with the summary ``figures`` of it (core.batch.figures), both made where the job ran so
    that the batch's process only writes them; or, when it failed, the one-line ``error``. ``warnings`` (e.g.
    a data file changed since the project was saved) and the job's ``elapsed_s`` seconds on its worker."""

    name: str
    text: str | None
    figures: dict | None = None
    error: str | None = None
    warnings: tuple[str, ...] = ()
    elapsed_s: float = 0.0

    @property
    def ok(self) -> bool:
        return self.error is None

    def document(self) -> dict | None:
        """The classify document (None when the job failed)."""
        return None if self.text is None else json.loads(self.text)


# -- the job list ------------------------------------------------------------------------------------------
def _stem(path: str) -> str:
    name = Path(path).name
    for suffix in PROJECT_SUFFIXES:
        if name.lower().endswith(suffix) and len(name) > len(suffix):
            return name[: -len(suffix)]
    return Path(name).stem or name


def _safe(text: str) -> str:
    """``text`` as part of a file name on any system: letters, digits, '.', '_', '-' only, no leading dot."""
    return re.sub(r"[^A-Za-z0-9._-]", "_", text).lstrip(".")[:MAX_NAME_LENGTH] or "job"


def job_name(project: str, data: str | None = None) -> str:
    """A job's name before it is made unique: the project file's name without .mixtype.json, and for a
    sweep job ``PROJECT__DATA`` (the data file's name without its extension)."""
    if data is None:
        return _safe(_stem(project))
    return _safe(f"{_stem(project)}__{Path(data).stem or Path(data).name}")


def unique_names(names: Iterable[str]) -> list[str]:
    """``names`` made unique (also ignoring case, for case-insensitive file systems, and never "summary"):
    a repeated name gets ``-2``, ``-3``... in order."""
    taken = {reserved.lower() for reserved in RESERVED_NAMES}
    unique = []
    for name in names:
        candidate, number = name, 1
        while candidate.lower() in taken:
            number += 1
            candidate = f"{name}-{number}"
        taken.add(candidate.lower())
        unique.append(candidate)
    return unique


def with_unique_names(jobs: Sequence[BatchJob]) -> list[BatchJob]:
    """``jobs`` renamed where needed so that all their names are unique together (``unique_names``)."""
    return [job if job.name == name else replace(job, name=name)
            for job, name in zip(jobs, unique_names(job.name for job in jobs), strict=True)]


def _working_folder() -> str:
    return os.path.abspath(os.getcwd())


def project_jobs(projects: Sequence[str], *, allow_outside_data: bool = False, data_cap: int | None = None,
                 folder: str | None = None) -> list[BatchJob]:
    """One job per project file, named after the file (made unique); paths relative to ``folder``
    (default: the working folder)."""
    folder = _working_folder() if folder is None else folder
    names = unique_names(job_name(path) for path in projects)
    return [BatchJob(name, path, folder=folder, allow_outside_data=allow_outside_data, data_cap=data_cap)
            for name, path in zip(names, projects, strict=True)]


def sweep_jobs(project: str, data_files: Sequence[str], *, in_place_of: str | None = None,
               allow_outside_data: bool = False, data_cap: int | None = None,
               folder: str | None = None) -> list[BatchJob]:
    """One job per data file, each read in place of one of ``project``'s data files: the one recorded as
    ``in_place_of``, or the only one the project lists (a project without data files gets each file added).
    The data file is read with the replaced file's quantity names. Reads the project once to check it; a
    problem is a UsageError (the whole sweep would fail alike)."""
    folder = _working_folder() if folder is None else folder
    loaded = load_project_or_fail(_located(project, folder))
    recorded = [source.path for source in loaded.data_sources]
    if in_place_of is None and len(recorded) > 1:
        raise UsageError(f"{project} lists {len(recorded)} data files ({', '.join(map(repr, recorded))}): "
                         "say which one each sweep file stands in for with --in-place-of PATH")
    if in_place_of is not None and in_place_of not in recorded:
        listed = ", ".join(map(repr, recorded)) or "none"
        raise UsageError(f"--in-place-of {in_place_of!r}: {project} lists no such data file "
                         f"(it lists {listed})")
    replaced = in_place_of if in_place_of is not None else (recorded[0] if recorded else None)
    names = None
    if replaced is not None:
        mapping = loaded.data_source(replaced).names
        names = tuple(mapping.items()) or None
    unique = unique_names(job_name(project, path) for path in data_files)
    return [BatchJob(name, project, data=path, in_place_of=replaced, names=names, folder=folder,
                     allow_outside_data=allow_outside_data, data_cap=data_cap)
            for name, path in zip(unique, data_files, strict=True)]


# -- one job ---------------------------------------------------------------------------------------------
def _located(path: str, folder: str) -> str:
    """Where to read ``path`` from: as given when it is absolute or this process works in ``folder`` (the
    documents then name it exactly as a classify run there would), else inside ``folder``."""
    if not folder or os.path.isabs(path):
        return path
    try:
        if os.path.samefile(os.getcwd(), folder):
            return path
    except OSError:
        pass
    return os.path.join(folder, path)


def _classify_arguments(job: BatchJob) -> argparse.Namespace:
    """The options of ``mixtype classify PROJECT [--data DATA]``: classify's own defaults, so that the study
    is the one a classify run builds."""
    parser = argparse.ArgumentParser(add_help=False)
    CLASSIFY.add_arguments(parser)
    args = parser.parse_args([])
    args.file = _located(job.project, job.folder)
    if job.data is not None:
        args.data = [(_located(job.data, job.folder), None if job.names is None else dict(job.names))]
    args.allow_outside_data = job.allow_outside_data
    args.data_cap = job.data_cap
    args.json = True
    return args


def _classified(job: BatchJob) -> tuple[dict, tuple[str, ...]]:
    args = _classify_arguments(job)
    project = load_project_or_fail(args.file)
    if job.in_place_of is not None:
        try:
            project = project.without_data_source(job.in_place_of)
        except KeyError as error:
            raise UsageError(f"{args.file}: {error.args[0]}") from None
    study = build_study(args, project=project)
    compiled = compiled_study(study)
    classification = classify_study(compiled, study.equation, study.domain, parameters=study.parameters,
                                    tolerance=study.tolerance, data=study.data, refine=not args.raw)
    document = classification_document(classification, variables=compiled.variables, equation=study.equation,
                                       domain=study.domain, parameters=study.parameters,
                                       tolerance=study.tolerance, data=study.data, source=study.source)
    return document, tuple(study.warnings)


def _one_line(error: BaseException) -> str:
    return " ".join(str(error).split()) or type(error).__name__


def _message(error: BaseException, job: BatchJob) -> str:
    """One line saying what went wrong and where (the file, and inside a project its JSON path)."""
    if isinstance(error, UsageError):
        text = _one_line(error)
        # the sweep file is given to classify's --data: its messages name that option, not the batch's
        return text.removeprefix("--data: ") if job.data is not None else text
    if isinstance(error, OSError | ValueError):       # ValueError includes ExpressionError
        return _one_line(error)
    if isinstance(error, MemoryError):
        return "not enough memory for this study; use a smaller grid or smaller data files"
    if isinstance(error, RecursionError):
        return "the input is nested too deeply to handle"
    return f"internal error ({type(error).__name__}): {_one_line(error)}"


def run_job(job: BatchJob) -> JobOutcome:
    """Run one job; never raises (any failure is the outcome's ``error``)."""
    start = time.perf_counter()
    try:
        document, warnings = _classified(job)
        text = printable(json.dumps(document) + "\n")     # what classify writes with --json, to the byte
        figures = document_figures(document)
    except Exception as error:  # noqa: BLE001 - a failing job is a row of the summary, never the batch's end
        return JobOutcome(job.name, None, None, _message(error, job), (), time.perf_counter() - start)
    return JobOutcome(job.name, text, figures, None, warnings, time.perf_counter() - start)
