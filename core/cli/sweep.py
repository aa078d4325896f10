"""``mixtype sweep``: each type's share and area, the hyperbolic pockets and their peak, along one parameter."""

from __future__ import annotations

import argparse
import json
from typing import TextIO

from core.analysis.sweep import Sweep, run_sweep, sweep_values
from core.cli.command import compiled_study, read_study, source_fields
from core.cli.options import EXIT_OK, UsageError
from core.cli.study import Study
from core.results.document import data_files_document, study_fields, sweep_document
from core.results.readouts import peak_quantity

__all__ = ["run", "swept_values"]


def swept_values(args: argparse.Namespace, study: Study):
    """The values --sweep NAME=LO:HI:N (and --log) ask for; a UsageError naming the option otherwise."""
    name, low, high, count = args.sweep
    text = f"{name}={low:g}:{high:g}:{count}"
    if name not in study.equation.parameters:
        known = tuple(study.equation.parameters)
        have = f"its parameters are {', '.join(known)}" if known else "it has no parameters (add one with --param)"
        raise UsageError(f"--sweep {text}: the equation has no parameter {name!r}; {have}")
    try:
        return sweep_values(low, high, count, log=args.log)
    except ValueError as error:
        raise UsageError(f"--sweep {text}{' with --log' if args.log else ''}: {error}") from None


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Sweep the study's parameter and report it (options: core.cli.registry); returns the exit status."""
    study = read_study(args, err)
    values = swept_values(args, study)
    compiled = compiled_study(study)
    quantity = peak_quantity(study.equation, compiled, study.data.names if study.data else ())
    parameter = args.sweep[0]
    sweep = run_sweep(compiled, study.domain, parameter, values, parameters=study.parameters, data=study.data,
                      tolerance=study.tolerance, quantity=quantity, refine=not args.raw, log=args.log)
    unit = study.equation.parameters[parameter].unit
    document = {**sweep_document(sweep, compiled.variables, study.domain, parameter_unit=unit),
                "domain": [study.domain.xmin, study.domain.xmax, study.domain.ymin, study.domain.ymax],
                "grid": [study.domain.nx, study.domain.ny], "refined": not args.raw,
                **study_fields(study.equation, study.parameters, tolerance=study.tolerance)}
    if study.data is not None:
        document["data"] = data_files_document(study.data)
    document.update(source_fields(study))
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    _write_table(document, sweep, study, out)
    return EXIT_OK


def _write_table(document: dict, sweep: Sweep, study: Study, out: TextIO) -> None:
    """The sweep as a table: one line per value (areas, shares of the grid nodes, pockets, peak)."""
    x, y = document["variables"]
    domain = study.domain
    if study.source:
        out.write(f"equation {study.source['equation']!r} on domain {study.source['domain']!r} "
                  f"of {study.source['file']}\n")
    out.writelines(f"data {dataset.path}: {', '.join(dataset.quantities)}\n"
                   for dataset in (study.data.datasets if study.data else ()))
    unit = f" ({document['parameter_unit']})" if document["parameter_unit"] else ""
    values = sweep.values
    out.write(f"sweep of {sweep.parameter}{unit} from {values[0]:g} to {values[-1]:g}, {len(values)} values "
              f"{'on a logarithmic scale' if sweep.log else 'evenly spaced'}; grid {domain.nx} x {domain.ny} over "
              f"{x} in [{domain.xmin:g}, {domain.xmax:g}], {y} in [{domain.ymin:g}, {domain.ymax:g}]\n")
    out.write(f"areas in units of {x}*{y} ({'refined onto D = 0' if document['refined'] else 'raw lines'}); "
              "shares of the grid nodes in %\n")
    labels = list(document["rows"][0]["areas"])
    short = {"elliptic": "ell", "parabolic": "par", "hyperbolic": "hyp", "undefined": "und"}
    header = [f"{sweep.parameter:>12}", *(f"{'area ' + short.get(k, k):>13}" for k in labels),
              *(f"{short.get(k, k) + ' %':>8}" for k in labels), f"{'pockets':>7}", "  peak"]
    out.write(" ".join(header).rstrip() + "\n")
    for row in document["rows"]:
        cells = [f"{row['value']:>12.6g}", *(f"{row['areas'][k]:>13.6g}" for k in labels),
                 *(f"{100 * row['fractions'][k]:>8.3f}" for k in labels), f"{row['pockets']:>7d}"]
        peak = row["peak"]
        if peak is not None:
            value = "undefined" if peak["value"] is None else f"{peak['value']:.6g}"
            cells.append(f"  {peak['quantity']} = {value} at ({peak['at'][0]:.6g}, {peak['at'][1]:.6g})")
        out.write(" ".join(cells) + "\n")
