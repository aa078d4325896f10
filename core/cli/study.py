"""What a ``mixtype`` command works on: the equation, domain and background data, from options or a FILE.

The equation comes inline (``--a/--b/--c/--let/--param``), from a template (``--template NAME``, which the
inline options then override) or from a project FILE (inline options override its values too). Background
data come from FILE's data sources (paths relative to FILE) and from ``--data PATH[:NAMES]`` (paths
relative to the working directory), all read for the equation's two variables. Every problem is a
UsageError whose text is one line for the user. The options themselves are declared in core.cli.options.
The data readers, templates and project files are imported only by the studies that use them: an inline
equation never needs them, and they are a third of what its command imports beyond numpy and sympy
(measured with python -X importtime: 25 ms with cached bytecode, 50 ms without).
"""

from __future__ import annotations

import argparse
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

from core.analysis.classify import DEFAULT_TOLERANCE
from core.cli.options import UsageError, finite
from core.data.limits import data_cap_raised
from core.domain import Domain
from core.equations.equation import Equation, Parameter

if TYPE_CHECKING:
    from core.data.sources import DataSet, DataSources
    from core.equations.templates import Template
    from core.project.model import Project

__all__ = ["PLACEHOLDER_DOMAIN", "DataFile", "Study", "build_study", "load_project_or_fail"]

DEFAULT_GRID = (201, 201)
PLACEHOLDER_DOMAIN = (-1.0, 1.0, -1.0, 1.0)   # the rectangle of a study whose command needs none


@dataclass(frozen=True)
class DataFile:
    """A data file a study reads: where it is now, which quantities (None: all) and its format (None: from
    the extension); ``note`` carries a project's note along to a saved project."""

    location: str
    names: dict[str, str] | None = None
    format: str | None = None
    note: str = ""


@dataclass(frozen=True)
class Study:
    """What a headless command works on: an equation, a domain and the options and data around them."""

    equation: Equation
    domain: Domain
    parameters: dict[str, float]
    tolerance: float
    project: Project | None = None   # the project read from FILE, if one was given
    source: dict | None = None       # {"file", "equation", "domain"} when the study comes from a FILE
    data: DataSources | None = None  # every data set read (FILE's and --data), None when there are none
    data_files: tuple[DataFile, ...] = ()
    warnings: tuple[str, ...] = ()   # e.g. a data file changed since FILE was saved


def _parameter_value(name: str, text: str) -> float:
    try:
        return finite(text)
    except argparse.ArgumentTypeError as error:
        raise UsageError(f"--param {name}: {error}") from None


def _grid(args: argparse.Namespace, default: tuple[int, int]) -> tuple[int, int]:
    grid = args.grid or list(default)
    if len(grid) not in (1, 2):
        raise UsageError(f"--grid takes N or NX NY, got {len(grid)} numbers")
    return (grid[0], grid[0]) if len(grid) == 1 else (grid[0], grid[1])


def _rectangle(args: argparse.Namespace) -> list[float] | None:
    """The four numbers of --domain XMIN XMAX YMIN YMAX, or None when --domain names a domain or is absent."""
    if args.domain is None or (len(args.domain) == 1 and args.file):
        return None
    if len(args.domain) == 1:
        raise UsageError(f"--domain {args.domain[0]}: a domain NAME picks a domain of a project FILE, and no FILE "
                         "was given (or give XMIN XMAX YMIN YMAX)")
    if len(args.domain) != 4:
        raise UsageError(f"--domain takes XMIN XMAX YMIN YMAX{', or a domain NAME of FILE' if args.file else ''}, "
                         f"got {len(args.domain)} value{'s' * (len(args.domain) != 1)}")
    try:
        return [finite(text) for text in args.domain]
    except argparse.ArgumentTypeError as error:
        raise UsageError(f"--domain: {error}") from None


def _overridden(equation: Equation, args: argparse.Namespace) -> Equation:
    """``equation`` with the inline --a/--b/--c/--vars/--let/--param put in place of its values."""
    changes: dict[str, object] = {k: getattr(args, k) for k in ("a", "b", "c") if getattr(args, k) is not None}
    if args.vars:
        changes["variables"] = tuple(args.vars)
    if args.let:
        changes["definitions"] = {**equation.definitions, **dict(args.let)}
    if args.param:
        parameters = dict(equation.parameters)
        for name, text in args.param:
            value = _parameter_value(name, text)
            old = parameters.get(name, Parameter(value))
            inside = (old.minimum is None or old.minimum <= value) and (old.maximum is None or value <= old.maximum)
            parameters[name] = replace(old, value=value) if inside else replace(old, value=value, minimum=None,
                                                                                maximum=None)
        changes["parameters"] = parameters
    return replace(equation, **changes)


def _read_data(files: list[DataFile], variables: tuple[str, str]) -> list[DataSet]:
    if not files:
        return []
    from core.data.sources import DataError, load_data  # only with data (module docstring: measured)

    datasets = []
    for item in files:
        try:
            datasets.append(load_data(item.location, variables=variables, names=item.names, format=item.format))
        except DataError as error:
            raise UsageError(f"--data: {error}") from None
    return datasets


def _combined(datasets: list[DataSet]) -> DataSources | None:
    if not datasets:
        return None
    from core.data.sources import DataError, DataSources  # only with data (module docstring: measured)

    try:
        return DataSources(datasets)
    except DataError as error:
        raise UsageError(f"--data: {error}") from None


def build_study(args: argparse.Namespace, *, project: Project | None = None,
                domain_required: bool = True) -> Study:
    """The equation, domain and data of a command; every problem is a UsageError naming the option.

    ``project`` is FILE's project when the caller has read it already (``mixtype batch`` passes it without
    the data source a sweep file stands in for); None reads FILE. A command that works on the formulas alone
    (analyze) passes ``domain_required=False``: without --domain, FILE or a template the study then holds
    PLACEHOLDER_DOMAIN, which such a command never reads.
    """
    with data_cap_raised(args.data_cap):
        return _build_study(args, project, domain_required)


def _build_study(args: argparse.Namespace, project: Project | None, domain_required: bool = True) -> Study:
    if args.file:
        if args.template:
            raise UsageError("--template starts an equation without a project FILE; it cannot be combined with "
                             "FILE (use --equation NAME to pick one of FILE's equations)")
        return _study_from_file(args, project)
    if args.equation is not None:
        raise UsageError("--equation NAME picks an equation of a project FILE, and no FILE was given")
    template = _template(args.template) if args.template else None
    if template is None:
        missing = [f"--{k}" for k in ("a", "b", "c") if getattr(args, k) is None]
        if missing:
            raise UsageError(f"missing {', '.join(missing)} (the coefficients of u_xx, u_xy, u_yy; or start from "
                             "--template NAME)")
    variables = tuple(args.vars) if args.vars else (template.equation.variables if template else ("x", "y"))
    files = [DataFile(path, names) for path, names in args.data]
    data = _combined(_read_data(files, variables))
    if template is not None:
        from core.equations.templates import TemplateError  # only with a template (module docstring)

        try:
            base = template.equation_with_data(data.names if data else ())
        except TemplateError as error:
            raise UsageError(f"--template {args.template}: {error}") from None
    else:
        base = Equation(a=args.a, b=args.b, c=args.c)
    equation = _overridden(base, args)
    rectangle = _rectangle(args)
    suggested = template.domain if template is not None else None
    if rectangle is None and suggested is None:
        if domain_required:
            raise UsageError("missing --domain XMIN XMAX YMIN YMAX")
        rectangle = list(PLACEHOLDER_DOMAIN)
    if rectangle is None:
        rectangle = [suggested.xmin, suggested.xmax, suggested.ymin, suggested.ymax]
    nx, ny = _grid(args, (suggested.nx, suggested.ny) if suggested is not None else DEFAULT_GRID)
    try:
        domain = Domain(*rectangle, nx=nx, ny=ny)
    except ValueError as error:
        raise UsageError(f"--domain/--grid: {error}") from None
    tolerance = DEFAULT_TOLERANCE if args.tolerance is None else args.tolerance
    return Study(equation, domain, equation.parameter_values(), tolerance, data=data, data_files=tuple(files))


def _template(name: str) -> Template:
    from core.equations.templates import TemplateError, load_template  # only with a template (docstring)

    try:
        return load_template(name)
    except TemplateError as error:
        raise UsageError(f"--template: {error}") from None


def load_project_or_fail(path: str) -> Project:
    """The project at ``path``; a UsageError quoting its first problem otherwise."""
    from core.project.io import ProjectError, load_project  # only with a FILE (module docstring: measured)

    try:
        return load_project(path)
    except ProjectError as error:
        raise UsageError(_first_of(error.problems, path)) from None


def _first_of(problems, path: str) -> str:
    more = len(problems) - 1
    tail = f" (and {more} more problem{'s' * (more > 1)}: run 'mixtype check {path}')" if more else ""
    return problems[0] + tail


def _study_from_file(args: argparse.Namespace, project: Project | None) -> Study:
    """The equation and domain of project FILE (``project``: FILE's, read already), with the inline options
    given beside it put in their place."""
    from core.project.data_files import open_project_data, unprovided_names_problem  # only with a FILE

    if project is None:
        project = load_project_or_fail(args.file)
    try:
        equation = project.shown()[0] if args.equation is None else project.equation(args.equation)
        named = args.domain is not None and len(args.domain) == 1
        domain = project.domain(args.domain[0] if named else project.shown_domain)
    except KeyError as error:
        raise UsageError(f"{args.file}: {error.args[0]}") from None
    equation = _overridden(equation, args)
    rectangle = _rectangle(args)
    nx, ny = _grid(args, (domain.nx, domain.ny))
    try:
        bounds = rectangle or [domain.xmin, domain.xmax, domain.ymin, domain.ymax]
        domain = Domain(*bounds, nx=nx, ny=ny, name=domain.name)
    except ValueError as error:
        raise UsageError(f"--domain/--grid: {error}") from None
    variables = tuple(equation.variables)
    opened = open_project_data(project, args.file, variables=variables, allow_outside=args.allow_outside_data)
    blocking = [s.message for s in opened.statuses if not s.usable]
    if blocking:
        raise UsageError(_first_of(blocking, args.file))
    files = [DataFile(str(s.location), dict(s.source.names) or None, s.source.format, s.source.note)
             for s in opened.statuses]
    inline = [DataFile(path, names) for path, names in args.data]
    datasets = [s.dataset for s in opened.statuses if s.usable]
    data = _combined(datasets + _read_data(inline, variables))
    problem = unprovided_names_problem(equation, sorted(data.names) if data else ())
    if problem and (project.data_sources or args.data):
        raise UsageError(f"{args.file}: {problem}")
    tolerance = project.view.parabolic_tolerance if args.tolerance is None else args.tolerance
    return Study(equation, domain, equation.parameter_values(), tolerance, project=project,
                 source={"file": args.file, "equation": equation.name, "domain": domain.name},
                 data=data, data_files=tuple(files + inline), warnings=opened.changed)
