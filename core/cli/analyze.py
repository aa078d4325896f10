"""``mixtype analyze``: the exact symbolic analysis of a study's equation (core.analysis.exact).

The equation comes as for classify (inline, a template or a project FILE, with its data quantities taken as
symbols of unknown value); --d, --e, --f add the lower-order coefficients (the project file has none yet).
No grid is computed. ``--json`` prints core.results.exact_analysis.document with the study's fields.
"""

from __future__ import annotations

import argparse
import json
from typing import TextIO

import sympy

from core.analysis.exact import LOWER_ORDER_NAMES, ExactAnalysis, analyze_equation
from core.cli.command import compiled_study, read_study, source_fields
from core.cli.options import EXIT_OK, UsageError
from core.equations.formula_text import NotInLanguage, formula_text
from core.equations.language import ExpressionError
from core.results.document import study_fields
from core.results.exact_analysis import document

__all__ = ["run"]


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Analyse the study's equation and report it (options: core.cli.registry); returns the exit status."""
    study = read_study(args, err, domain_required=False)
    compiled = compiled_study(study)
    lower = {key: getattr(args, key) for key in LOWER_ORDER_NAMES if getattr(args, key) is not None}
    try:
        analysis = analyze_equation(compiled, parameters=study.parameters, lower_order=lower,
                                    substitute_parameters=args.substitute_parameters,
                                    deadline_seconds=args.deadline)
    except ExpressionError as error:
        column = f" (column {error.column})" if error.column else ""
        raise UsageError(f"--{error.field}: {error.message}{column}") from None
    result = document(analysis)
    if args.json:
        json.dump({**result, **study_fields(study.equation, study.parameters), **source_fields(study)}, out)
        out.write("\n")
        return EXIT_OK
    _write_text(result, analysis, study, out)
    return EXIT_OK


def _write_text(result: dict, analysis: ExactAnalysis, study, out: TextIO) -> None:
    x, y = result["variables"]
    if study.source:
        out.write(f"equation {study.source['equation']!r} of {study.source['file']}\n")
    coefficients = result["coefficients"]
    lower = ", ".join(f"{k} = {coefficients[k]}" for k in LOWER_ORDER_NAMES if coefficients[k] != "0")
    out.write(f"a = {coefficients['a']}, b = {coefficients['b']}, c = {coefficients['c']}"
              + (f"; {lower}" if lower else "") + f" (variables {x}, {y})\n")
    kept = [p["name"] for p in result["parameter_values"]]
    if kept:
        how = "substituted" if result["parameters_substituted"] else "kept as symbols"
        out.write(f"parameters {how}: " + ", ".join(f"{p['name']} = {p['value']:g}"
                                                       for p in result["parameter_values"]) + "\n")
    out.write(f"D = b^2 - 4ac = {_shown(result['discriminant'])}\n")
    out.write(f"factored: D = {_shown(result['discriminant_factored'])}\n")
    curves = ", ".join(f"{_shown(t)} = 0" for t in result["type_change"]) or "none"
    out.write(f"the type changes across: {curves}\n")
    if result["tangencies"]:
        out.write("D touches 0 without changing sign along: "
                  + ", ".join(f"{_shown(t)} = 0" for t in result["tangencies"]) + "\n")
    for zone, exact in zip(result["zones"], analysis.zones, strict=True):
        where = "everywhere" if zone["everywhere"] else f"where {_shown(zone['condition'])}"
        if exact.type == "parabolic" and isinstance(exact.condition, sympy.LessThan):   # abs(Z) <= 0: Z = 0
            where = f"where {_shown(_text(exact.condition.lhs.args[0]))} = 0"
        out.write(f"{zone['type']} {where}\n")
    for family in result["characteristics"]:
        slope = family["slope"] if family["slope"] is not None else (
            "vertical (dx = 0)" if family["direction"] is not None else "(not found)")
        invariant = family["invariant"] if family["invariant"] is not None else "(not found)"
        out.write(f"family {family['family']}: dy/dx = {slope}; constant along it: {invariant}\n")
    for form in result["canonical"]:
        first, second = form["names"]
        if form["coordinates"] is None:
            out.write(f"{form['type']} canonical form: (coordinates not found)\n")
            continue
        out.write(f"{form['type']} canonical form in {first} = {form['coordinates'][0]}, "
                  f"{second} = {form['coordinates'][1]}:\n  {_shown(form['form'])}\n")
    out.writelines(f"note: {note}\n" for note in result["notes"])


def _shown(text: str | None) -> str:
    return "(not expressible in the formula language)" if text is None else text


def _text(expression: sympy.Basic) -> str | None:
    try:
        return formula_text(expression, order=None)
    except NotInLanguage:
        return None
