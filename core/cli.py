"""The ``mixtype`` command: the window, or headless classify / probe / trace over the same core functions.

Output formats are a contract: ``--json`` prints one JSON document on stdout; bad input exits with status 2
and a one-line message on stderr, never a traceback, and nothing the user typed is ever executed.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from collections.abc import Sequence
from dataclasses import dataclass

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
    group = parser.add_argument_group("equation and domain (a u_xx + b u_xy + c u_yy + ... = 0)")
    group.add_argument("--vars", nargs=2, metavar=("X", "Y"), help="names of the two variables (default x y)")
    group.add_argument("--a", metavar="EXPR", help="coefficient of u_xx")
    group.add_argument("--b", metavar="EXPR", help="coefficient of u_xy")
    group.add_argument("--c", metavar="EXPR", help="coefficient of u_yy")
    group.add_argument("--let", action="append", type=_assignment, default=[], metavar="NAME=EXPR",
                       help="a named definition usable in a, b, c and other definitions (repeatable)")
    group.add_argument("--param", action="append", type=_assignment, default=[], metavar="NAME=VALUE",
                       help="a named number (repeatable)")
    group.add_argument("--domain", nargs=4, type=_finite, metavar=("XMIN", "XMAX", "YMIN", "YMAX"))
    group.add_argument("--grid", nargs="+", type=int, metavar="N", help="N (square) or NX NY grid nodes")
    group.add_argument("--tolerance", type=_finite, default=DEFAULT_TOLERANCE,
                       help=f"parabolic tolerance on |D|/(b^2+4|ac|) (default {DEFAULT_TOLERANCE:g})")
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of a table")


def _build_parser() -> _Parser:
    parser = _Parser(prog="mixtype", description="Where is a second-order PDE elliptic, parabolic or "
                     "hyperbolic? Without a command, opens the window.")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    classify = commands.add_parser("classify", help="type map: area fractions and type-change lines")
    _add_equation_options(classify)
    classify.add_argument("--raw", action="store_true", help="skip refining lines onto D = 0")
    probe = commands.add_parser("probe", help="everything known at one point")
    _add_equation_options(probe)
    probe.add_argument("--at", nargs=2, type=_finite, required=True, metavar=("X", "Y"))
    trace = commands.add_parser("trace", help="the two characteristics through a point")
    _add_equation_options(trace)
    trace.add_argument("--from", dest="seed", nargs=2, type=_finite, required=True, metavar=("X", "Y"))
    render = commands.add_parser("render", help="draw the map (or the whole window) of a project to a PNG")
    render.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    render.add_argument("--out", required=True, metavar="PNG", help="the picture to write")
    render.add_argument("--window", action="store_true", help="draw the whole main window, not only the map")
    render.add_argument("--size", nargs=2, type=int, default=None, metavar=("W", "H"), help="size in pixels")
    return parser


def _study(args: argparse.Namespace) -> Study:
    """The inline equation and domain of a command; every problem is a UsageError naming the option."""
    missing = [f"--{k}" for k in ("a", "b", "c") if getattr(args, k) is None]
    if missing:
        raise UsageError(f"missing {', '.join(missing)} (the coefficients of u_xx, u_xy, u_yy)")
    if args.domain is None:
        raise UsageError("missing --domain XMIN XMAX YMIN YMAX")
    parameters: dict[str, Parameter] = {}
    for name, text in args.param:
        try:
            parameters[name] = Parameter(_finite(text))
        except argparse.ArgumentTypeError as error:
            raise UsageError(f"--param {name}: {error}") from None
    definitions = dict(args.let)
    equation = Equation(a=args.a, b=args.b, c=args.c, variables=tuple(args.vars or ("x", "y")),
                        definitions=definitions, parameters=parameters)
    grid = args.grid or [201]
    if len(grid) not in (1, 2):
        raise UsageError(f"--grid takes N or NX NY, got {len(grid)} numbers")
    nx, ny = (grid[0], grid[0]) if len(grid) == 1 else grid
    try:
        domain = Domain(*args.domain, nx=nx, ny=ny)
    except ValueError as error:
        raise UsageError(f"--domain/--grid: {error}") from None
    return Study(equation, domain, {n: p.value for n, p in parameters.items()}, args.tolerance)


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
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    x, y = compiled.variables
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
    return EXIT_OK


def _run_probe(args: argparse.Namespace, out) -> int:
    from core.probe import probe_point, probe_to_dict

    study = _study(args)
    compiled = _compiled(study)
    result = probe_point(compiled, *args.at, parameters=study.parameters, tolerance=study.tolerance,
                         domain=study.domain)
    document = probe_to_dict(result)
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
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
    return EXIT_OK


def _run_trace(args: argparse.Namespace, out) -> int:
    from core.characteristics import trace_characteristics

    study = _study(args)
    compiled = _compiled(study)
    if not study.domain.contains(*args.seed):
        raise UsageError(f"--from ({args.seed[0]:g}, {args.seed[1]:g}) lies outside the domain")
    curves = trace_characteristics(compiled, study.domain, [args.seed], parameters=study.parameters)
    document = {"seed": list(args.seed), "curves": [
        {"family": int(curve.family), "points": _points(curve.points), "ends": list(curve.end_reasons)}
        for curve in curves]}
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    for curve in curves:
        first, last = curve.points[0], curve.points[-1]
        out.write(f"family {int(curve.family)}: {len(curve.points)} points from ({first[0]:.6g}, {first[1]:.6g})"
                  f" [{curve.end_reasons[0]}] to ({last[0]:.6g}, {last[1]:.6g}) [{curve.end_reasons[1]}]\n")
    if all(len(c.points) <= 1 for c in curves):
        out.write("no real characteristics through this point (the equation is not hyperbolic there)\n")
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


_COMMANDS = {"classify": _run_classify, "probe": _run_probe, "trace": _run_trace, "render": _run_render}


def _open_window(argv: Sequence[str]) -> int:
    try:
        from gui.app import main as window_main
    except ImportError as error:  # the window is optional for headless installs
        print(f"mixtype: the window is unavailable ({error}); see 'mixtype --help'", file=sys.stderr)
        return EXIT_BAD_INPUT
    return window_main(list(argv))


def main(argv: Sequence[str] | None = None, *, out=None, err=None) -> int:
    """Entry point of the ``mixtype`` script; returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    out = out or sys.stdout
    err = err or sys.stderr
    if not argv or (argv[0] not in _COMMANDS and not argv[0].startswith("-")):
        return _open_window(argv)
    try:
        args = _build_parser().parse_args(argv)
        return _COMMANDS[args.command](args, out)
    except UsageError as error:
        err.write(f"mixtype: {error}\n")
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
