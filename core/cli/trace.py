"""``mixtype trace``: the two characteristics through a point, or from every seed of a project FILE.

``--bounces N`` lets each half of a curve go on through up to N reflections at the domain edge and turns at
the type-change line (core.analysis.tracing); from a FILE its own setting is used unless the option is given.
"""

from __future__ import annotations

import argparse
import json
from typing import TextIO

from core.analysis.tracing import trace_characteristics
from core.cli.command import compiled_study, read_study, source_fields
from core.cli.options import EXIT_OK, UsageError
from core.cli.study import Study
from core.results.document import curve_document, seed_document, study_fields
from core.results.readable import point_without_noise

__all__ = ["MAX_CURVES", "run"]

MAX_CURVES = 100_000   # curves one trace command may ask for (seed points x families): about 5 s and 120 MB


def _bounces_used(study: Study, args: argparse.Namespace) -> int:
    """--bounces when given, else the project FILE's setting, else 0."""
    if args.bounces is not None:
        return args.bounces
    return study.project.view.characteristic_bounces if study.project is not None else 0


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Trace from the seed (or FILE's seeds) and report it (options: core.cli.registry); returns the exit status."""
    study = read_study(args, err)
    compiled = compiled_study(study)
    if args.seed is None:
        if study.project is None:
            raise UsageError("missing --from X Y (or give a project FILE to trace from its seeds)")
        return _trace_project_seeds(study, compiled, args, out)
    if not study.domain.contains(*args.seed):
        raise UsageError(f"--from ({args.seed[0]:g}, {args.seed[1]:g}) lies outside the domain")
    curves = trace_characteristics(compiled, study.domain, [args.seed], parameters=study.parameters,
                                   data=study.data, bounces=_bounces_used(study, args))
    document = {"seed": list(args.seed), "curves": [curve_document(curve, study.domain) for curve in curves],
                **study_fields(study.equation, study.parameters)}
    document.update(source_fields(study))
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    _write_curves(curves, study.domain, out)
    return EXIT_OK


def _trace_project_seeds(study: Study, compiled, args: argparse.Namespace, out: TextIO) -> int:
    """Trace the chosen families from every point of every seed of the project, one seed at a time: each
    seed's curves are written before the next seed is traced, so memory holds one seed's curves."""
    seeds = study.project.seeds
    if not seeds:
        raise UsageError(f"{args.file}: the project has no seeds; give --from X Y")
    requested = sum(len(seed.points()) * len(seed.families) for seed in seeds)
    if requested > MAX_CURVES:
        raise UsageError(f"{args.file}: its seeds ask for {requested} curves; trace at most {MAX_CURVES} at once "
                         f"(fewer seeds or fewer points along the segments)")

    def traced():
        for seed in seeds:
            seed_points = seed.points()
            yield seed, seed_points, trace_characteristics(
                compiled, study.domain, seed_points, families=seed.families, parameters=study.parameters,
                data=study.data, bounces=_bounces_used(study, args))

    if args.json:
        rest = {**study_fields(study.equation, study.parameters), "source": study.source, **source_fields(study)}
        out.write('{"seeds": [')
        out.writelines((", " if index else "") + json.dumps(seed_document(seed, seed_points, curves, study.domain)) for index, (seed, seed_points, curves) in enumerate(traced()))
        out.write("], " + json.dumps(rest)[1:] + "\n")       # the same document as one json.dump of it all
        return EXIT_OK
    for index, (seed, seed_points, curves) in enumerate(traced(), 1):
        kind = f"{len(seed_points)} points along a segment" if seed.is_segment else "one point"
        out.write(f"seed {index}" + (f" ({seed.label})" if seed.label else "") + f": {kind}, families "
                  f"{', '.join(map(str, seed.families))}\n")
        _write_curves(curves, study.domain, out)
    return EXIT_OK


_EVENT_WORDS = {"edge": "reflected at the edge", "type_change": "turned back at the type-change line"}


def _write_curves(curves, domain, out: TextIO) -> None:
    """Each curve's ends and events, coordinates without rounding noise (core.results.readable)."""
    for curve in curves:
        first, last = point_without_noise(curve.points[0], domain), point_without_noise(curve.points[-1], domain)
        out.write(f"family {int(curve.family)}: {len(curve.points)} points from ({first[0]:.6g}, {first[1]:.6g})"
                  f" [{curve.end_reasons[0]}] to ({last[0]:.6g}, {last[1]:.6g}) [{curve.end_reasons[1]}]\n")
        if curve.events:
            kinds = [event.kind for event in curve.events]
            out.write(f"  went on as the other family {len(kinds)} times ({kinds.count('edge')} at the edge, "
                      f"{kinds.count('type_change')} at the type-change line):\n")
            out.writelines(f"    {_EVENT_WORDS[event.kind]} at ({at[0]:.6g}, {at[1]:.6g})\n"
                           for event in curve.events for at in [point_without_noise(event.at, domain)])
    if all(len(c.points) <= 1 for c in curves):
        out.write("no real characteristics through this point (the equation is not hyperbolic there)\n")
