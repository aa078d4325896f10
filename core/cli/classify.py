"""``mixtype classify``: the type map's area fractions, type-change lines and hyperbolic pockets."""

from __future__ import annotations

import argparse
import json
from dataclasses import replace
from typing import TextIO

from core.analysis.classify import TypeCode
from core.cli.command import compiled_study, read_study
from core.cli.options import EXIT_OK, UsageError
from core.cli.study import Study
from core.results.classification import classification_document, classify_study

__all__ = ["MAX_POCKET_ROWS", "run"]

MAX_POCKET_ROWS = 20


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Classify the study's grid and report it (options: core.cli.registry); returns the exit status."""
    if (args.data or args.out_of_core or args.stride or args.block_mib or args.codes_out) and _out_of_core(args):
        # Here, not at the top: only studies with data can go out of core (see core/cli/study.py)
        from core.cli.out_of_core import run_out_of_core

        return run_out_of_core(args, out, err)
    study = read_study(args, err)
    compiled = compiled_study(study)
    classification = classify_study(compiled, study.equation, study.domain, parameters=study.parameters,
                                    tolerance=study.tolerance, data=study.data, refine=not args.raw)
    type_map, boundaries = classification.type_map, classification.boundaries
    certified = None
    if args.certify:
        # Here, not at the top: the certified-map modules take 10 to 25 ms to import (python -X importtime),
        # a fifth of what an inline classify may add to numpy and sympy (bench/bench_startup.py).
        from core.cli.certified import certify_study

        certified = certify_study(args, study, compiled, type_map)
    if args.save_project:
        _save_study(study, args.save_project)
    # the one document builder of classify and batch (core.results.classification)
    document = classification_document(classification, variables=compiled.variables, equation=study.equation,
                                       domain=study.domain, parameters=study.parameters,
                                       tolerance=study.tolerance, data=study.data, source=study.source)
    if certified is not None:
        from core.results.certified import certified_document  # with --certify only (see above)

        document["certified"] = certified_document(certified)
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    x, y = compiled.variables
    if study.source:
        out.write(f"equation {study.source['equation']!r} on domain {study.source['domain']!r} "
                  f"of {study.source['file']}\n")
    out.writelines(f"data {dataset.path}: {', '.join(dataset.quantities)}\n" for dataset in (study.data.datasets if study.data else ()))
    out.write(f"grid {study.domain.nx} x {study.domain.ny} over {x} in [{study.domain.xmin:g}, "
              f"{study.domain.xmax:g}], {y} in [{study.domain.ymin:g}, {study.domain.ymax:g}]\n")
    out.write("type         share of grid nodes\n")
    out.writelines(f"{label:<12} {100 * share:8.3f} %\n" for label, share in document["fractions"].items())
    out.write(f"type-change lines: {len(boundaries.curves)}"
              f" ({'refined onto D = 0' if boundaries.refined else 'raw contour'})\n")
    for index, curve in enumerate(boundaries.curves, 1):
        kind = "closed" if curve.closed else "open"
        out.write(f"  line {index}: {len(curve.points)} points, {kind}, "
                  f"{TypeCode(curve.left_type).label} on the left, {TypeCode(curve.right_type).label} on the right\n")
    for index, region in enumerate(boundaries.parabolic_regions, 1):
        out.write(f"  parabolic region {index}: area {region.area:.6g} (units of {x}*{y})\n")
    _write_pockets(document["pockets"], x, y, out)
    if certified is not None:
        from core.cli.certified import write_certified  # with --certify only (see above)

        write_certified(certified, x, y, out)
    if args.save_project:
        files = len(study.data_files)
        listed = f" (with {files} data file{'s' * (files != 1)})" if files else ""
        out.write(f"saved the equation and domain as a project in {args.save_project}{listed}\n")
    return EXIT_OK


def _out_of_core(args: argparse.Namespace) -> bool:
    from core.cli.out_of_core import wants_out_of_core  # with data only (see run)

    return wants_out_of_core(args)


def _write_pockets(pockets: list[dict], x: str, y: str, out: TextIO) -> None:
    """The pockets (their documents, core.results.document.pocket_document: coordinates without rounding
    noise) as text lines, largest first, at most MAX_POCKET_ROWS of them."""
    out.write(f"hyperbolic pockets: {len(pockets)} (areas in units of {x}*{y}, largest first)\n")
    for index, pocket in enumerate(pockets[:MAX_POCKET_ROWS], 1):
        x0, x1, y0, y1 = pocket["bounding_box"]
        cx, cy = pocket["centroid"]
        edge = ", reaches the domain's edge" if pocket["touches_boundary"] else ""
        line = (f"  pocket {index}: area {pocket['area']:.6g}, centroid ({cx:.6g}, {cy:.6g}), "
                f"{x} in [{x0:.6g}, {x1:.6g}], {y} in [{y0:.6g}, {y1:.6g}]{edge}")
        peak = pocket["peak"]
        if peak is not None:
            value = "undefined" if peak["value"] is None else f"{peak['value']:.6g}"
            line += f"; peak {peak['quantity']} = {value} at ({peak['at'][0]:.6g}, {peak['at'][1]:.6g})"
        out.write(line + "\n")
    if len(pockets) > MAX_POCKET_ROWS:
        out.write(f"  ... and {len(pockets) - MAX_POCKET_ROWS} smaller pockets (see --json)\n")


def _save_study(study: Study, path: str) -> None:
    """Write a new project file holding the study's equation, domain, tolerance and data files."""
    # Here, not at the top: the project files load only when one is written (see core/cli/study.py)
    from core.data.raw import DataError
    from core.project.data_files import data_source_ref
    from core.project.io import ProjectError, save_project
    from core.project.model import ViewSettings, new_project

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
