"""What a ``mixtype`` command works on: the equation, domain and background data, from options or a FILE.

The equation comes inline (``--a/--b/--c/--let/--param``), from a template (``--template NAME``, which the
inline options then override) or from a project FILE (inline options override its values too). Background
data come from FILE's data sources (paths relative to FILE) and from ``--data PATH[:NAMES]`` (paths
relative to the working directory), all read for the equation's two variables. Every problem is a
UsageError whose text is one line for the user.
"""

from __future__ import annotations

import argparse
import math
import os
import re
from dataclasses import dataclass, replace

from core.analysis.classify import DEFAULT_TOLERANCE
from core.data.sources import DataError, DataSet, DataSources, load_data
from core.domain import Domain
from core.equations.equation import Equation, Parameter
from core.equations.templates import Template, TemplateError, load_template
from core.project.data_files import open_project_data, unprovided_names_problem
from core.project.io import ProjectError, load_project
from core.project.model import Project

__all__ = ["DataFile", "Study", "UsageError", "add_equation_options", "build_study", "load_project_or_fail",
           "parse_data_option"]

DEFAULT_GRID = (201, 201)


class UsageError(Exception):
    """Bad command-line input: reported as one line on stderr with exit status 2."""


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


def finite(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not math.isfinite(value):
        raise argparse.ArgumentTypeError(f"{text!r} is not a finite number")
    return value


def _assignment(text: str) -> tuple[str, str]:
    name, sep, value = text.partition("=")
    if not sep or not name.strip():
        raise argparse.ArgumentTypeError(f"expected NAME=VALUE, got {text!r}")
    return name.strip(), value.strip()


_NAME = r"[A-Za-z][A-Za-z0-9_]*"
_NAMES_SPEC = re.compile(rf"^\s*{_NAME}\s*(=\s*{_NAME}\s*)?(,\s*{_NAME}\s*(=\s*{_NAME}\s*)?)*$")


def parse_data_option(text: str) -> tuple[str, dict[str, str] | None]:
    """``PATH`` or ``PATH:NAMES`` -> (path, {name in the file: quantity name} or None for every quantity).

    NAMES is a comma-separated list of ``NAME`` (take it as it is) or ``OLD=NEW`` (take OLD, call it NEW),
    after the last ':' of the text. A text naming an existing file is always a plain path.
    """
    head, sep, tail = text.rpartition(":")
    if not sep or not head or os.path.isfile(text) or not _NAMES_SPEC.match(tail):
        if not text.strip():
            raise argparse.ArgumentTypeError("expected a data file PATH[:NAMES], got an empty text")
        return text, None
    names: dict[str, str] = {}
    for item in tail.split(","):
        old, _, new = (part.strip() for part in item.partition("="))
        if old in names:
            raise argparse.ArgumentTypeError(f"{text!r}: {old!r} is named twice")
        names[old] = new or old
    return head, names


def add_equation_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", nargs="?", metavar="FILE",
                        help="a project file (.mixtype.json) giving the equation, domain and data; options "
                             "override it")
    group = parser.add_argument_group("equation and domain (a u_xx + b u_xy + c u_yy + ... = 0)")
    group.add_argument("--template", metavar="NAME",
                       help="start the equation and domain from a template (list them with 'mixtype templates');"
                            " the options below override it")
    group.add_argument("--equation", metavar="NAME", help="which equation of FILE (default: the one it shows)")
    group.add_argument("--vars", nargs=2, metavar=("X", "Y"), help="names of the two variables (default x y)")
    group.add_argument("--a", metavar="EXPR", help="coefficient of u_xx")
    group.add_argument("--b", metavar="EXPR", help="coefficient of u_xy")
    group.add_argument("--c", metavar="EXPR", help="coefficient of u_yy")
    group.add_argument("--let", action="append", type=_assignment, default=[], metavar="NAME=EXPR",
                       help="a named definition usable in a, b, c and other definitions (repeatable)")
    group.add_argument("--param", action="append", type=_assignment, default=[], metavar="NAME=VALUE",
                       help="a named number (repeatable)")
    group.add_argument("--domain", nargs="+", metavar="NAME | XMIN XMAX YMIN YMAX",
                       help="a domain of FILE by name, or the rectangle (which overrides FILE's or the template's)")
    group.add_argument("--grid", nargs="+", type=int, metavar="N", help="N (square) or NX NY grid nodes")
    group.add_argument("--tolerance", type=finite, default=None,
                       help=f"parabolic tolerance on |D|/(b^2+4|ac|) (default: FILE's, else {DEFAULT_TOLERANCE:g})")
    data = parser.add_argument_group("background data")
    data.add_argument("--data", action="append", type=parse_data_option, default=[], metavar="PATH[:NAMES]",
                      help="a data file (CSV, NumPy .npz, NetCDF, VTK .vtu/.vtk) whose quantities the equation "
                           "uses by name, read for the equation's two variables (repeatable; added to FILE's). "
                           "Without NAMES every usable quantity is taken under its own name; NAMES is a comma-"
                           "separated list of NAME (take it) and OLD=NEW (take OLD and call it NEW), e.g. "
                           "--data flow.vtu:velocity_x=u,velocity_y=v. With --template, quantities the template "
                           "knows replace its formulas (e.g. u and v for full_potential).")
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of a table")


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
    try:
        return DataSources(datasets)
    except DataError as error:
        raise UsageError(f"--data: {error}") from None


def build_study(args: argparse.Namespace) -> Study:
    """The equation, domain and data of a command; every problem is a UsageError naming the option."""
    if args.file:
        if args.template:
            raise UsageError("--template starts an equation without a project FILE; it cannot be combined with "
                             "FILE (use --equation NAME to pick one of FILE's equations)")
        return _study_from_file(args)
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
        raise UsageError("missing --domain XMIN XMAX YMIN YMAX")
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
    try:
        return load_template(name)
    except TemplateError as error:
        raise UsageError(f"--template: {error}") from None


def load_project_or_fail(path: str) -> Project:
    """The project at ``path``; a UsageError quoting its first problem otherwise."""
    try:
        return load_project(path)
    except ProjectError as error:
        raise UsageError(_first_of(error.problems, path)) from None


def _first_of(problems, path: str) -> str:
    more = len(problems) - 1
    tail = f" (and {more} more problem{'s' * (more > 1)}: run 'mixtype check {path}')" if more else ""
    return problems[0] + tail


def _study_from_file(args: argparse.Namespace) -> Study:
    """The equation and domain of project FILE, with the inline options given beside it put in their place."""
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
    opened = open_project_data(project, args.file, variables=variables)
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
