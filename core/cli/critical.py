"""``mixtype critical``: the parameter values where a zone of a type appears or vanishes, and where.

``--vary NAME --between LO HI [--type hyperbolic|elliptic|parabolic] [--no-certify]`` beside the equation,
domain and data options of every command (inline, a template or a project FILE). NAME is a parameter of the
equation; a name the equation does not have yet is added as a parameter (so ``--param NAME=VALUE`` is not
needed). The search is core.analysis.critical.find_critical_values; the JSON document is
core.results.critical.critical_document with the study's fields.
"""

from __future__ import annotations

import argparse
import json
import math
import re
from dataclasses import replace
from typing import TextIO

from core.analysis.critical import CriticalSearch, find_critical_values
from core.cli.command import compiled_study, read_study, source_fields
from core.cli.options import EXIT_OK, UsageError
from core.cli.study import Study
from core.equations.equation import Parameter
from core.results.critical import critical_document
from core.results.document import data_files_document, study_fields

__all__ = ["run"]

_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Search the study for critical values of --vary and report them; returns the exit status."""
    lo, hi = args.between
    if not lo < hi:
        raise UsageError(f"--between: LO ({lo:g}) must be below HI ({hi:g})")
    if not math.isfinite(hi - lo):
        raise UsageError(f"--between: the interval [{lo:g}, {hi:g}] is too wide (its width overflows)")
    study = _with_varied_parameter(read_study(args, err), args.vary, lo)
    if not 0.0 <= study.tolerance < 1.0:
        raise UsageError(f"--tolerance: expected a number in [0, 1), got {study.tolerance:g}")
    compiled = compiled_study(study)
    search = find_critical_values(compiled, study.domain, args.vary, (lo, hi), type=args.type,
                                  parameters=study.parameters, data=study.data, tolerance=study.tolerance,
                                  certify=not args.no_certify)
    if args.json:
        held = {name: value for name, value in study.parameters.items() if name != args.vary}
        document = {**critical_document(search, study.domain),
                    **study_fields(study.equation, held, tolerance=study.tolerance)}
        if study.data is not None:
            document["data"] = data_files_document(study.data)
        document.update(source_fields(study))
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    _write(search, study, compiled.variables, out)
    return EXIT_OK


def _with_varied_parameter(study: Study, name: str, value: float) -> Study:
    """The study with ``name`` as a parameter (added at ``value`` when the equation has none of that name)."""
    equation = study.equation
    if name in equation.parameters:
        return study
    if not _NAME.match(name):
        raise UsageError(f"--vary: {name!r} is not a name (a letter, then letters, digits or _)")
    if name in equation.variables:
        raise UsageError(f"--vary {name}: {name} is a variable of the equation; only a parameter can vary")
    if name in equation.definitions:
        raise UsageError(f"--vary {name}: {name} is a definition (--let); only a parameter can vary")
    equation = replace(equation, parameters={**equation.parameters, name: Parameter(value)})
    return replace(study, equation=equation, parameters=equation.parameter_values())


def _write(search: CriticalSearch, study: Study, variables: tuple[str, str], out: TextIO) -> None:
    """The search in words: what was varied, every event with its bracket and place, the proof, the notes."""
    x, y = variables
    domain = study.domain
    if study.source:
        out.write(f"equation {study.source['equation']!r} on domain {study.source['domain']!r} "
                  f"of {study.source['file']}\n")
    lo, hi = search.between
    out.write(f"{search.type} zones over {x} in [{domain.xmin:g}, {domain.xmax:g}], {y} in [{domain.ymin:g}, "
              f"{domain.ymax:g}] as {search.parameter} goes from {lo:.10g} to {hi:.10g}\n")
    out.write(f"values to a relative tolerance of {search.rtol:g}\n")
    if not search.events:
        out.write(f"no {search.type} zone appears or vanishes in the interval\n")
    for event in search.events:
        article = "an" if event.type[0] in "aeiou" else "a"
        out.write(f"  {article} {event.type} zone {event.event} at {search.parameter} = {event.value:.12g} "
                  f"(between {event.bracket[0]:.15g} and {event.bracket[1]:.15g}) at ({x}, {y}) = "
                  f"({event.at[0]:.9g}, {event.at[1]:.9g})\n")
    if search.proven is None:
        proof = "not tried" if search.events else "nothing to prove (no event)"
    else:
        proof = ("yes: certified maps show that no other place reaches the threshold first" if search.proven
                 else "no: see the notes")
    out.write(f"proven: {proof}\n")
    out.writelines(f"note: {note}\n" for note in search.notes)
