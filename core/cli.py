"""The ``mixtype`` command: the window, or headless classify / probe / trace over the same core functions.

Output formats are a contract: ``--json`` prints one JSON document on stdout; bad input exits with status 2
and a one-line message on stderr, never a traceback, and nothing the user typed is ever executed.
classify, probe and trace take the equation and domain inline or from a project FILE (inline options then
override the file's values); ``check FILE`` validates a project file and lists every problem in it.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from collections.abc import Sequence
from dataclasses import dataclass, replace

from core.classify import DEFAULT_TOLERANCE, TypeCode, classify_grid
from core.domain import Domain
from core.equation import Equation, Parameter, compile_equation
from core.expr import ExpressionError

__all__ = ["UsageError", "main"]

EXIT_OK = 0
EXIT_BAD_INPUT = 2


class UsageError(Exception):
    """Bad command-line input: reported as one line on stderr with exit status 2."""


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # one line, no usage dump
        raise UsageError(message)


@dataclass(frozen=True)
class Study:
    """What a headless command works on: an equation, a domain and the options around them."""

    equation: Equation
    domain: Domain
    parameters: dict[str, float]
    tolerance: float
    project: object | None = None    # the core.project.Project read from FILE, if one was given
    source: dict | None = None       # {"file", "equation", "domain"} when the study comes from a FILE


def _finite(text: str) -> float:
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


def _add_equation_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", nargs="?", metavar="FILE",
                        help="a project file (.mixtype.json) giving the equation and domain; options override it")
    group = parser.add_argument_group("equation and domain (a u_xx + b u_xy + c u_yy + ... = 0)")
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
                       help="a domain of FILE by name, or the rectangle (which overrides FILE's)")
    group.add_argument("--grid", nargs="+", type=int, metavar="N", help="N (square) or NX NY grid nodes")
    group.add_argument("--tolerance", type=_finite, default=None,
                       help=f"parabolic tolerance on |D|/(b^2+4|ac|) (default: FILE's, else {DEFAULT_TOLERANCE:g})")
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of a table")


def _build_parser() -> _Parser:
    parser = _Parser(prog="mixtype", description="Where is a second-order PDE elliptic, parabolic or "
                     "hyperbolic? Without a command, opens the window.")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    classify = commands.add_parser("classify", help="type map: area fractions and type-change lines")
    _add_equation_options(classify)
    classify.add_argument("--raw", action="store_true", help="skip refining lines onto D = 0")
    classify.add_argument("--save-project", metavar="FILE", help="also write a project file holding the "
                          "equation and domain used")
    probe = commands.add_parser("probe", help="everything known at one point (or at every pin of FILE)")
    _add_equation_options(probe)
    probe.add_argument("--at", nargs=2, type=_finite, metavar=("X", "Y"), help="the point (default: FILE's pins)")
    trace = commands.add_parser("trace", help="the two characteristics through a point (or FILE's seeds)")
    _add_equation_options(trace)
    trace.add_argument("--from", dest="seed", nargs=2, type=_finite, metavar=("X", "Y"),
                       help="the seed point (default: FILE's seeds)")
    check = commands.add_parser("check", help="validate a project file and list every problem in it")
    check.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    check.add_argument("--json", action="store_true", help="print one JSON document instead of text")
    render = commands.add_parser("render", help="draw the map (or the whole window) of a project to a PNG")
    render.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    render.add_argument("--out", required=True, metavar="PNG", help="the picture to write")
    render.add_argument("--window", action="store_true", help="draw the whole main window, not only the map")
    render.add_argument("--size", nargs=2, type=int, default=None, metavar=("W", "H"), help="size in pixels")
    return parser


def _parameter_value(name: str, text: str) -> float:
    try:
        return _finite(text)
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
        return [_finite(text) for text in args.domain]
    except argparse.ArgumentTypeError as error:
        raise UsageError(f"--domain: {error}") from None


def _study(args: argparse.Namespace) -> Study:
    """The equation and domain of a command; every problem is a UsageError naming the option."""
    if args.file:
        return _study_from_file(args)
    if args.equation is not None:
        raise UsageError("--equation NAME picks an equation of a project FILE, and no FILE was given")
    missing = [f"--{k}" for k in ("a", "b", "c") if getattr(args, k) is None]
    if missing:
        raise UsageError(f"missing {', '.join(missing)} (the coefficients of u_xx, u_xy, u_yy)")
    if args.domain is None:
        raise UsageError("missing --domain XMIN XMAX YMIN YMAX")
    rectangle = _rectangle(args)
    parameters = {name: Parameter(_parameter_value(name, text)) for name, text in args.param}
    definitions = dict(args.let)
    equation = Equation(a=args.a, b=args.b, c=args.c, variables=tuple(args.vars or ("x", "y")),
                        definitions=definitions, parameters=parameters)
    nx, ny = _grid(args, (201, 201))
    try:
        domain = Domain(*rectangle, nx=nx, ny=ny)
    except ValueError as error:
        raise UsageError(f"--domain/--grid: {error}") from None
    tolerance = DEFAULT_TOLERANCE if args.tolerance is None else args.tolerance
    return Study(equation, domain, {n: p.value for n, p in parameters.items()}, tolerance)


def _load_project(path: str):
    """The project at ``path``; a UsageError quoting its first problem otherwise."""
    from core.project_io import ProjectError, load_project

    try:
        return load_project(path)
    except ProjectError as error:
        more = len(error.problems) - 1
        tail = f" (and {more} more problem{'s' * (more > 1)}: run 'mixtype check {path}')" if more else ""
        raise UsageError(error.problems[0] + tail) from None


def _study_from_file(args: argparse.Namespace) -> Study:
    """The equation and domain of project FILE, with the inline options given beside it put in their place."""
    project = _load_project(args.file)
    try:
        equation = project.shown()[0] if args.equation is None else project.equation(args.equation)
        named = args.domain is not None and len(args.domain) == 1
        domain = project.domain(args.domain[0] if named else project.shown_domain)
    except KeyError as error:
        raise UsageError(f"{args.file}: {error.args[0]}") from None
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
    equation = replace(equation, **changes)
    rectangle = _rectangle(args)
    nx, ny = _grid(args, (domain.nx, domain.ny))
    try:
        bounds = rectangle or [domain.xmin, domain.xmax, domain.ymin, domain.ymax]
        domain = Domain(*bounds, nx=nx, ny=ny, name=domain.name)
    except ValueError as error:
        raise UsageError(f"--domain/--grid: {error}") from None
    tolerance = project.view.parabolic_tolerance if args.tolerance is None else args.tolerance
    return Study(equation, domain, equation.parameter_values(), tolerance, project=project,
                 source={"file": args.file, "equation": equation.name, "domain": domain.name})


def _compiled(study: Study):
    try:
        return compile_equation(study.equation)
    except ExpressionError as error:
        option = error.field.replace("definitions.", "--let ").replace("parameters.", "--param ")
        option = {"a": "--a", "b": "--b", "c": "--c", "variables": "--vars"}.get(option, option)
        raise UsageError(f"{option}: {error.message}" + (f" (column {error.column})" if error.column else ""))


def _json_number(value: float) -> float | None:
    return None if value is None or not math.isfinite(value) else float(value)


def _points(array) -> list[list[float]]:
    return [[float(x), float(y)] for x, y in array]


def _run_classify(args: argparse.Namespace, out) -> int:
    from core.boundary import find_type_boundaries

    study = _study(args)
    compiled = _compiled(study)
    type_map = classify_grid(compiled, study.domain, parameters=study.parameters, tolerance=study.tolerance)
    boundaries = find_type_boundaries(compiled, type_map, refine=not args.raw)
    if args.save_project:
        _save_study(study, args.save_project)
    document = {
        "variables": list(compiled.variables),
        "domain": [study.domain.xmin, study.domain.xmax, study.domain.ymin, study.domain.ymax],
        "grid": [study.domain.nx, study.domain.ny],
        "tolerance": study.tolerance,
        "fractions": {code.label: float(type_map.fractions[code.label]) for code in
                      (TypeCode.ELLIPTIC, TypeCode.PARABOLIC, TypeCode.HYPERBOLIC, TypeCode.UNDEFINED)},
        "boundaries": [
            {"points": _points(curve.points), "closed": bool(curve.closed),
             "left": TypeCode(curve.left_type).label, "right": TypeCode(curve.right_type).label}
            for curve in boundaries.curves
        ],
        "parabolic_regions": [
            {"outline": _points(region.outline), "area": float(region.area)}
            for region in boundaries.parabolic_regions
        ],
        "refined": bool(boundaries.refined),
    }
    if study.source:
        document["source"] = study.source
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    x, y = compiled.variables
    if study.source:
        out.write(f"equation {study.source['equation']!r} on domain {study.source['domain']!r} "
                  f"of {study.source['file']}\n")
    out.write(f"grid {study.domain.nx} x {study.domain.ny} over {x} in [{study.domain.xmin:g}, "
              f"{study.domain.xmax:g}], {y} in [{study.domain.ymin:g}, {study.domain.ymax:g}]\n")
    out.write("type         share of grid nodes\n")
    for label, share in document["fractions"].items():
        out.write(f"{label:<12} {100 * share:8.3f} %\n")
    out.write(f"type-change lines: {len(boundaries.curves)}"
              f" ({'refined onto D = 0' if boundaries.refined else 'raw contour'})\n")
    for index, curve in enumerate(boundaries.curves, 1):
        kind = "closed" if curve.closed else "open"
        out.write(f"  line {index}: {len(curve.points)} points, {kind}, "
                  f"{TypeCode(curve.left_type).label} on the left, {TypeCode(curve.right_type).label} on the right\n")
    for index, region in enumerate(boundaries.parabolic_regions, 1):
        out.write(f"  parabolic region {index}: area {region.area:.6g} (units of {x}*{y})\n")
    if args.save_project:
        out.write(f"saved the equation and domain as a project in {args.save_project}\n")
    return EXIT_OK


def _save_study(study: Study, path: str) -> None:
    """Write a new project file holding the study's equation, domain and tolerance."""
    from core.project import ViewSettings, new_project
    from core.project_io import ProjectError, save_project

    project = replace(new_project(study.equation, study.domain),
                      view=ViewSettings(parabolic_tolerance=study.tolerance))
    try:
        save_project(project, path)
    except ProjectError as error:
        raise UsageError(f"--save-project: {error.problems[0]}") from None
    except OSError as error:
        raise UsageError(f"--save-project {path}: {error.strerror or error}") from None


def _run_probe(args: argparse.Namespace, out) -> int:
    from core.probe import probe_point, probe_to_dict

    study = _study(args)
    compiled = _compiled(study)
    if args.at is None:
        if study.project is None:
            raise UsageError("missing --at X Y (or give a project FILE to probe its pins)")
        if not study.project.pins:
            raise UsageError(f"{args.file}: the project has no pins; give --at X Y")
        points = [(pin.x, pin.y, pin.label) for pin in study.project.pins]
    else:
        points = [(args.at[0], args.at[1], None)]
    results = [(probe_point(compiled, x, y, parameters=study.parameters, tolerance=study.tolerance,
                            domain=study.domain), label) for x, y, label in points]
    if args.json:
        if args.at is not None:
            document = probe_to_dict(results[0][0])
        else:
            document = {"pins": [{"label": label, **probe_to_dict(result)} for result, label in results]}
        if study.source:
            document["source"] = study.source
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    for index, (result, label) in enumerate(results):
        if label is not None:
            out.write(("\n" if index else "") + f"pin {index + 1}" + (f": {label}" if label else "") + "\n")
        _write_probe(result, out)
    return EXIT_OK


def _write_probe(result, out) -> None:
    rows = [("point", f"({result.point[0]:.9g}, {result.point[1]:.9g})"),
            ("type", TypeCode(result.type).label),
            ("a, b, c", f"{result.a:.9g}, {result.b:.9g}, {result.c:.9g}"),
            ("D = b^2 - 4ac", f"{result.discriminant:.9g}"),
            ("D / (b^2 + 4|ac|)", f"{result.normalized:.6g}")]
    if result.directions_deg:
        rows.append(("characteristic directions", ", ".join(f"{d:.6f} deg" for d in result.directions_deg)))
        rows.append(("slopes dy/dx", ", ".join("vertical" if s is None else f"{s:.9g}" for s in result.slopes)))
    if result.angle_between_deg is not None:
        rows.append(("angle between", f"{result.angle_between_deg:.6f} deg"))
    if result.principal_axes_deg is not None:
        rows.append(("principal axes", ", ".join(f"{d:.6f} deg" for d in result.principal_axes_deg)))
    if result.anisotropy is not None:
        rows.append(("anisotropy ratio", f"{result.anisotropy:.6g} (dimensionless)"))
    for name, value in result.definitions.items():
        rows.append((name, f"{value:.9g}"))
    if result.message:
        rows.append(("note", result.message))
    width = max(len(r[0]) for r in rows)
    for label, value in rows:
        out.write(f"{label:<{width}}  {value}\n")


def _run_trace(args: argparse.Namespace, out) -> int:
    from core.characteristics import trace_characteristics

    study = _study(args)
    compiled = _compiled(study)
    if args.seed is None:
        if study.project is None:
            raise UsageError("missing --from X Y (or give a project FILE to trace from its seeds)")
        return _trace_project_seeds(study, compiled, args, out)
    if not study.domain.contains(*args.seed):
        raise UsageError(f"--from ({args.seed[0]:g}, {args.seed[1]:g}) lies outside the domain")
    curves = trace_characteristics(compiled, study.domain, [args.seed], parameters=study.parameters)
    document = {"seed": list(args.seed), "curves": [_curve_document(curve) for curve in curves]}
    if study.source:
        document["source"] = study.source
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    _write_curves(curves, out)
    return EXIT_OK


def _curve_document(curve) -> dict:
    return {"family": int(curve.family), "points": _points(curve.points), "ends": list(curve.end_reasons)}


def _trace_project_seeds(study: Study, compiled, args: argparse.Namespace, out) -> int:
    """Trace the chosen families from every point of every seed of the project."""
    from core.characteristics import trace_characteristics

    if not study.project.seeds:
        raise UsageError(f"{args.file}: the project has no seeds; give --from X Y")
    traced = []
    for seed in study.project.seeds:
        points = seed.points()
        curves = trace_characteristics(compiled, study.domain, points, families=seed.families,
                                       parameters=study.parameters)
        traced.append((seed, points, curves))
    if args.json:
        document = {"seeds": [{"label": seed.label, "points": _points(points), "families": list(seed.families),
                               "curves": [_curve_document(curve) for curve in curves]}
                              for seed, points, curves in traced],
                    "source": study.source}
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    for index, (seed, points, curves) in enumerate(traced, 1):
        kind = f"{len(points)} points along a segment" if seed.is_segment else "one point"
        out.write(f"seed {index}" + (f" ({seed.label})" if seed.label else "") + f": {kind}, families "
                  f"{', '.join(map(str, seed.families))}\n")
        _write_curves(curves, out)
    return EXIT_OK


def _write_curves(curves, out) -> None:
    for curve in curves:
        first, last = curve.points[0], curve.points[-1]
        out.write(f"family {int(curve.family)}: {len(curve.points)} points from ({first[0]:.6g}, {first[1]:.6g})"
                  f" [{curve.end_reasons[0]}] to ({last[0]:.6g}, {last[1]:.6g}) [{curve.end_reasons[1]}]\n")
    if all(len(c.points) <= 1 for c in curves):
        out.write("no real characteristics through this point (the equation is not hyperbolic there)\n")


def _run_check(args: argparse.Namespace, out) -> int:
    """Validate a project file: a one-line summary, or every problem (exit status 2)."""
    from core.project_io import CURRENT_FORMAT_VERSION, ProjectError, load_project

    try:
        project = load_project(args.file)
    except ProjectError as error:
        if args.json:
            json.dump({"file": args.file, "valid": False, "problems": error.problems}, out)
            out.write("\n")
            return EXIT_BAD_INPUT
        raise UsageError(str(error)) from None
    with open(args.file, "rb") as stream:  # valid, hence small and a JSON object with a version number
        version = json.loads(stream.read())["format_version"]
    summary = {"file": args.file, "valid": True, "format_version": version,
               "equations": list(project.equation_names), "domains": list(project.domain_names),
               "pins": len(project.pins), "seeds": len(project.seeds),
               "shown": {"equation": project.shown_equation, "domain": project.shown_domain}}
    if args.json:
        json.dump(summary, out)
        out.write("\n")
        return EXIT_OK
    def count(n: int, what: str) -> str:
        return f"{n} {what}{'s' * (n != 1)}"
    upgrade = f" (saving writes format version {CURRENT_FORMAT_VERSION})" if version != CURRENT_FORMAT_VERSION else ""
    out.write(f"{args.file}: valid, format version {version}{upgrade}; {count(len(project.equations), 'equation')}, "
              f"{count(len(project.domains), 'domain')}, {count(len(project.pins), 'pin')}, "
              f"{count(len(project.seeds), 'seed')}; shows {project.shown_equation!r} on {project.shown_domain!r}\n")
    return EXIT_OK


def _run_render(args: argparse.Namespace, out) -> int:
    import os

    if args.size is not None and not all(100 <= v <= 8000 for v in args.size):
        raise UsageError(f"--size must be between 100 and 8000 pixels, got {args.size[0]} {args.size[1]}")
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # headless: no display needed
    try:
        from gui.render import render_project
    except ImportError as error:
        raise UsageError(f"rendering needs the window's libraries ({error})") from None
    render_project(args.file, args.out, whole_window=args.window,
                   size=tuple(args.size) if args.size else None)
    out.write(f"wrote {args.out}\n")
    return EXIT_OK


_COMMANDS = {"classify": _run_classify, "probe": _run_probe, "trace": _run_trace, "render": _run_render,
             "check": _run_check}


def _open_window(argv: Sequence[str]) -> int:
    try:
        from gui.app import main as window_main
    except ImportError as error:  # the window is optional for headless installs
        print(f"mixtype: the window is unavailable ({error}); see 'mixtype --help'", file=sys.stderr)
        return EXIT_BAD_INPUT
    return window_main(list(argv))


_EXPRESSION_OPTIONS = frozenset({"--a", "--b", "--c", "--let", "--param"})


def _glue_expression_values(argv: list[str]) -> list[str]:
    """Let an expression start with a minus sign: ``--b -2*x`` becomes ``--b=-2*x``.

    (argparse would otherwise read ``-2*x`` as an unknown option.)
    """
    glued: list[str] = []
    index = 0
    while index < len(argv):
        token = argv[index]
        if token in _EXPRESSION_OPTIONS and index + 1 < len(argv) and argv[index + 1].startswith("-") \
                and not argv[index + 1].startswith("--"):
            glued.append(f"{token}={argv[index + 1]}")
            index += 2
            continue
        glued.append(token)
        index += 1
    return glued


def main(argv: Sequence[str] | None = None, *, out=None, err=None) -> int:
    """Entry point of the ``mixtype`` script; returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    out = out or sys.stdout
    err = err or sys.stderr
    if not argv or (argv[0] not in _COMMANDS and not argv[0].startswith("-")):
        return _open_window(argv)
    try:
        args = _build_parser().parse_args(_glue_expression_values(argv))
        return _COMMANDS[args.command](args, out)
    except UsageError as error:
        for line in str(error).splitlines() or [""]:  # 'check' lists every problem, one per line
            err.write(f"mixtype: {line}\n")
        return EXIT_BAD_INPUT
    except ExpressionError as error:
        err.write(f"mixtype: {error}\n")
        return EXIT_BAD_INPUT
    except SystemExit as exit_request:  # --help
        return int(exit_request.code or 0)
    except (OSError, ValueError) as error:
        err.write(f"mixtype: {error}\n")
        return EXIT_BAD_INPUT
    except Exception as error:  # noqa: BLE001 - never a traceback in the user's face
        err.write(f"mixtype: internal error ({type(error).__name__}): {error}\n")
        return 1


if __name__ == "__main__":
    sys.exit(main())
