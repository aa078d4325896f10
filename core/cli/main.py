"""The ``mixtype`` command: the window, or headless classify / probe / trace over the same core functions.

Output formats are a contract: ``--json`` prints one JSON document on stdout; bad input exits with status 2
and a one-line message on stderr, never a traceback, and nothing the user typed is ever executed.
classify, probe and trace take the equation and domain inline, from a template (``--template NAME``) or from
a project FILE (inline options then override), plus background data files (``--data PATH[:NAMES]``, added to
FILE's); see core.cli.study. ``check FILE`` validates a project file, lists every problem in it and opens
its data files: a missing or unreadable data file exits with status 2, a data file changed since the project
was saved only prints a warning on stderr. ``templates`` lists the templates.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from collections.abc import Sequence
from dataclasses import replace

from core.analysis.classify import TypeCode, classify_grid
from core.cli.study import Study, UsageError, add_equation_options, build_study, finite
from core.equations.parser import ExpressionError

__all__ = ["UsageError", "main"]

EXIT_OK = 0
EXIT_BAD_INPUT = 2
MAX_POCKET_ROWS = 20


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # one line, no usage dump
        raise UsageError(message)


def _build_parser() -> _Parser:
    parser = _Parser(prog="mixtype", description="Where is a second-order PDE elliptic, parabolic or "
                     "hyperbolic? Without a command, opens the window.")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    classify = commands.add_parser("classify", help="type map: area fractions, type-change lines and "
                                   "hyperbolic pockets")
    add_equation_options(classify)
    classify.add_argument("--raw", action="store_true", help="skip refining lines onto D = 0")
    classify.add_argument("--save-project", metavar="FILE", help="also write a project file holding the "
                          "equation, domain and data files used (data paths recorded relative to FILE)")
    probe = commands.add_parser("probe", help="everything known at one point (or at every pin of FILE)")
    add_equation_options(probe)
    probe.add_argument("--at", nargs=2, type=finite, metavar=("X", "Y"), help="the point (default: FILE's pins)")
    trace = commands.add_parser("trace", help="the two characteristics through a point (or FILE's seeds)")
    add_equation_options(trace)
    trace.add_argument("--from", dest="seed", nargs=2, type=finite, metavar=("X", "Y"),
                       help="the seed point (default: FILE's seeds)")
    check = commands.add_parser("check", help="validate a project file and open its data files",
                                description="Validate a project file and list every problem in it, then open "
                                "the data files it lists. Exit status 2 when the file is invalid or a data file "
                                "is missing or unreadable; a data file that changed since the project was saved "
                                "is a warning on stderr (exit status 0).")
    check.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    check.add_argument("--json", action="store_true", help="print one JSON document instead of text")
    render = commands.add_parser("render", help="draw the map (or the whole window) of a project to a PNG")
    render.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    render.add_argument("--out", required=True, metavar="PNG", help="the picture to write")
    render.add_argument("--window", action="store_true", help="draw the whole main window, not only the map")
    render.add_argument("--size", nargs=2, type=int, default=None, metavar=("W", "H"), help="size in pixels")
    templates = commands.add_parser("templates", help="list the equation templates --template accepts")
    templates.add_argument("--json", action="store_true", help="print one JSON document instead of a table")
    return parser


def _study(args: argparse.Namespace, err) -> Study:
    study = build_study(args)
    for line in study.warnings:
        err.write(f"mixtype: warning: {line}\n")
    return study


def _compiled(study: Study):
    from core.project.data_files import compile_with_data

    try:
        return compile_with_data(study.equation, study.data)
    except ExpressionError as error:
        option = error.field.replace("definitions.", "--let ").replace("parameters.", "--param ")
        option = {"a": "--a", "b": "--b", "c": "--c", "variables": "--vars"}.get(option, option)
        hint = ""
        if error.message.startswith("unknown name") and study.data is None:
            hint = " (if it is a data quantity, give its file with --data)"
        raise UsageError(f"{option}: {error.message}" + (f" (column {error.column})" if error.column else "")
                         + hint) from None


def _json_number(value: float) -> float | None:
    return None if value is None or not math.isfinite(value) else float(value)


def _points(array) -> list[list[float]]:
    return [[float(x), float(y)] for x, y in array]


def _data_document(study: Study) -> list[dict]:
    """Which data files a result was computed from: path, checksum, quantities."""
    if study.data is None:
        return []
    return [{"path": dataset.path, "checksum": dataset.checksum, "quantities": list(dataset.quantities)}
            for dataset in study.data.datasets]


def _peak_quantity(study: Study, compiled) -> str | None:
    """The equation's peak quantity when pockets can report it (a definition, coefficient or data quantity)."""
    name = study.equation.peak_quantity
    usable = {*compiled.definition_order, "a", "b", "c", *(study.data.names if study.data else ())}
    return name if name in usable else None


def _pocket_document(pocket) -> dict:
    peak = None
    if pocket.peak is not None:
        peak = {"quantity": pocket.quantity, "value": _json_number(pocket.peak), "at": list(pocket.peak_at)}
    return {"area": float(pocket.area), "centroid": list(pocket.centroid), "bounding_box": list(pocket.bounding_box),
            "nodes": int(pocket.node_count), "touches_boundary": bool(pocket.touches_boundary), "peak": peak}


def _run_classify(args: argparse.Namespace, out, err) -> int:
    from core.analysis.type_change_lines import find_type_boundaries
    from core.analysis.pockets import pocket_statistics

    study = _study(args, err)
    compiled = _compiled(study)
    type_map = classify_grid(compiled, study.domain, parameters=study.parameters, data=study.data,
                             tolerance=study.tolerance)
    boundaries = find_type_boundaries(compiled, type_map, parameters=study.parameters, data=study.data,
                                      refine=not args.raw)
    pockets = pocket_statistics(compiled, type_map, quantity=_peak_quantity(study, compiled),
                                parameters=study.parameters, data=study.data)
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
        "pockets": [_pocket_document(pocket) for pocket in pockets],
    }
    if study.data is not None:
        document["data"] = _data_document(study)
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
    for dataset in (study.data.datasets if study.data else ()):
        out.write(f"data {dataset.path}: {', '.join(dataset.quantities)}\n")
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
    _write_pockets(pockets, x, y, out)
    if args.save_project:
        files = len(study.data_files)
        listed = f" (with {files} data file{'s' * (files != 1)})" if files else ""
        out.write(f"saved the equation and domain as a project in {args.save_project}{listed}\n")
    return EXIT_OK


def _write_pockets(pockets, x: str, y: str, out) -> None:
    out.write(f"hyperbolic pockets: {len(pockets)} (areas in units of {x}*{y}, largest first)\n")
    for index, pocket in enumerate(pockets[:MAX_POCKET_ROWS], 1):
        x0, x1, y0, y1 = pocket.bounding_box
        edge = ", reaches the domain's edge" if pocket.touches_boundary else ""
        line = (f"  pocket {index}: area {pocket.area:.6g}, centroid ({pocket.centroid[0]:.6g}, "
                f"{pocket.centroid[1]:.6g}), {x} in [{x0:.6g}, {x1:.6g}], {y} in [{y0:.6g}, {y1:.6g}]{edge}")
        if pocket.peak is not None:
            line += (f"; peak {pocket.quantity} = {pocket.peak:.6g} at ({pocket.peak_at[0]:.6g}, "
                     f"{pocket.peak_at[1]:.6g})")
        out.write(line + "\n")
    if len(pockets) > MAX_POCKET_ROWS:
        out.write(f"  ... and {len(pockets) - MAX_POCKET_ROWS} smaller pockets (see --json)\n")


def _save_study(study: Study, path: str) -> None:
    """Write a new project file holding the study's equation, domain, tolerance and data files."""
    from core.data.sources import DataError
    from core.project.model import ViewSettings, new_project
    from core.project.data_files import data_source_ref
    from core.project.io import ProjectError, save_project

    project = replace(new_project(study.equation, study.domain),
                      view=ViewSettings(parabolic_tolerance=study.tolerance))
    try:
        for item in study.data_files:
            project = project.with_data_source(data_source_ref(item.location, path, names=item.names,
                                                               format=item.format, note=item.note))
    except DataError as error:
        raise UsageError(f"--save-project: {error}") from None
    try:
        save_project(project, path)
    except ProjectError as error:
        raise UsageError(f"--save-project: {error.problems[0]}") from None
    except OSError as error:
        raise UsageError(f"--save-project {path}: {error.strerror or error}") from None


def _trade_values(study: Study, compiled, x: float, y: float) -> dict[str, float] | None:
    """The equation's trade readouts at (x, y), or None when it names none."""
    from core.equations.trade import readout_at

    if not study.equation.trade:
        return None
    try:
        return readout_at(study.equation.trade, compiled, x, y, parameters=study.parameters, data=study.data)
    except KeyError as error:
        raise UsageError(f"trade readout: {error.args[0]}") from None


def _trade_document(values: dict[str, float] | None) -> dict:
    from core.equations.trade import READOUT_UNITS

    if values is None:
        return {}
    return {"trade": {name: _json_number(value) for name, value in values.items()},
            "trade_units": {name: READOUT_UNITS.get(name, "") for name in values}}


def _run_probe(args: argparse.Namespace, out, err) -> int:
    from core.analysis.probe import probe_point, probe_to_dict

    study = _study(args, err)
    compiled = _compiled(study)
    if args.at is None:
        if study.project is None:
            raise UsageError("missing --at X Y (or give a project FILE to probe its pins)")
        if not study.project.pins:
            raise UsageError(f"{args.file}: the project has no pins; give --at X Y")
        points = [(pin.x, pin.y, pin.label) for pin in study.project.pins]
    else:
        points = [(args.at[0], args.at[1], None)]
    results = [(probe_point(compiled, x, y, parameters=study.parameters, data=study.data,
                            tolerance=study.tolerance, domain=study.domain), label,
                _trade_values(study, compiled, x, y)) for x, y, label in points]
    if args.json:
        if args.at is not None:
            document = {**probe_to_dict(results[0][0]), **_trade_document(results[0][2])}
        else:
            document = {"pins": [{"label": label, **probe_to_dict(result), **_trade_document(trade)}
                                 for result, label, trade in results]}
        if study.data is not None:
            document["data"] = _data_document(study)
        if study.source:
            document["source"] = study.source
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    for index, (result, label, trade) in enumerate(results):
        if label is not None:
            out.write(("\n" if index else "") + f"pin {index + 1}" + (f": {label}" if label else "") + "\n")
        _write_probe(result, trade, out)
    return EXIT_OK


def _write_probe(result, trade: dict[str, float] | None, out) -> None:
    from core.equations.trade import READOUT_UNITS

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
    for name, value in (trade or {}).items():
        shown = f"{value:.9g}" if math.isfinite(value) else "does not exist here"
        rows.append((name.replace("_", " ").removesuffix(" deg"), f"{shown} ({READOUT_UNITS.get(name, '')})"))
    if result.message:
        rows.append(("note", result.message))
    width = max(len(r[0]) for r in rows)
    for label, value in rows:
        out.write(f"{label:<{width}}  {value}\n")


def _run_trace(args: argparse.Namespace, out, err) -> int:
    from core.analysis.characteristics import trace_characteristics

    study = _study(args, err)
    compiled = _compiled(study)
    if args.seed is None:
        if study.project is None:
            raise UsageError("missing --from X Y (or give a project FILE to trace from its seeds)")
        return _trace_project_seeds(study, compiled, args, out)
    if not study.domain.contains(*args.seed):
        raise UsageError(f"--from ({args.seed[0]:g}, {args.seed[1]:g}) lies outside the domain")
    curves = trace_characteristics(compiled, study.domain, [args.seed], parameters=study.parameters,
                                   data=study.data)
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
    from core.analysis.characteristics import trace_characteristics

    if not study.project.seeds:
        raise UsageError(f"{args.file}: the project has no seeds; give --from X Y")
    traced = []
    for seed in study.project.seeds:
        points = seed.points()
        curves = trace_characteristics(compiled, study.domain, points, families=seed.families,
                                       parameters=study.parameters, data=study.data)
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


def _run_check(args: argparse.Namespace, out, err) -> int:
    """Validate a project file and open its data: a summary, or every problem (exit status 2).

    A data file that changed since the save is a warning line on stderr; the status stays 0.
    """
    from core.project.data_files import open_project_data
    from core.project.io import CURRENT_FORMAT_VERSION, ProjectError, load_project

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
    opened = open_project_data(project, args.file)
    summary = {"file": args.file, "valid": True, "format_version": version,
               "equations": list(project.equation_names), "domains": list(project.domain_names),
               "pins": len(project.pins), "seeds": len(project.seeds),
               "shown": {"equation": project.shown_equation, "domain": project.shown_domain},
               "data": {"files": len(project.data_sources), "quantities": list(opened.names),
                        "problems": list(opened.problems), "changed": list(opened.changed)}}
    status = EXIT_BAD_INPUT if opened.problems else EXIT_OK
    if args.json:
        json.dump(summary, out)
        out.write("\n")
        return status
    def count(n: int, what: str) -> str:
        return f"{n} {what}{'s' * (n != 1)}"
    upgrade = f" (saving writes format version {CURRENT_FORMAT_VERSION})" if version != CURRENT_FORMAT_VERSION else ""
    files = f", {count(len(project.data_sources), 'data file')}" if project.data_sources else ""
    out.write(f"{args.file}: valid, format version {version}{upgrade}; {count(len(project.equations), 'equation')}, "
              f"{count(len(project.domains), 'domain')}, {count(len(project.pins), 'pin')}, "
              f"{count(len(project.seeds), 'seed')}{files}; shows {project.shown_equation!r} on "
              f"{project.shown_domain!r}\n")
    for line in opened.changed:
        err.write(f"mixtype: warning: {line}\n")
    for line in opened.problems:
        err.write(f"mixtype: {line}\n")
    return status


def _run_templates(args: argparse.Namespace, out, err) -> int:
    from core.equations.templates import TemplateError, list_templates, load_template

    try:
        templates = [load_template(name) for name in list_templates()]
    except TemplateError as error:
        raise UsageError(str(error)) from None
    if args.json:
        json.dump({"templates": [{"name": t.name, "title": t.title, "variables": list(t.equation.variables),
                                  "data_quantities": list(t.quantities), "trade": list(t.trade),
                                  "peak_quantity": t.peak_quantity} for t in templates]}, out)
        out.write("\n")
        return EXIT_OK
    width = max((len(t.name) for t in templates), default=0)
    for t in templates:
        data = f" (data: {', '.join(t.quantities)})" if t.quantities else ""
        out.write(f"{t.name:<{width}}  {t.title}{data}\n")
    return EXIT_OK


def _run_render(args: argparse.Namespace, out, err) -> int:
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
             "check": _run_check, "templates": _run_templates}


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
        if args.command is None:
            raise UsageError("missing COMMAND (see 'mixtype --help')")
        return _COMMANDS[args.command](args, out, err)
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
