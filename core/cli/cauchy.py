"""``mixtype cauchy``: the Cauchy problem for a constant-coefficient equation, solved in closed form.

The coefficients are numbers (constant expressions such as 1/3 or sqrt(2) are accepted); the data line is
typed as "ALPHA*x + BETA*y = GAMMA"; u and its derivative along the line's unit normal are formulas in s
(arc length along the line) or in the two variables. Every formula goes through the language's whitelisted
parser (core.equations.parser); the solution comes back as formula text (core.equations.formula_text).
"""

from __future__ import annotations

import argparse
import json
from typing import TextIO

import sympy

from core.analysis.cauchy import CauchyError, CauchySolution, solution_formula, solve_cauchy
from core.analysis.cauchy_input import (
    LINE_PARAMETER,
    CauchyInputError,
    parse_constant,
    parse_data_line,
    parse_line_data,
)
from core.cli.options import EXIT_OK, UsageError
from core.equations.formula_text import NotInLanguage, formula_text
from core.equations.language import ExpressionError, check_name
from core.results.document import json_number

__all__ = ["LINE_PARAMETER", "document", "run"]


def _option(error: CauchyInputError) -> UsageError:
    """A typed part of the problem as a usage error naming its option (--a, --line, --u, --du)."""
    return UsageError(f"--{error.field}: {error.message}")


def _text(expression: sympy.Expr | None, names: dict[sympy.Symbol, str]) -> str | None:
    """Formula text, or None where the language cannot say it."""
    if expression is None:
        return None
    try:
        return formula_text(expression, names)
    except NotInLanguage:
        return None


def _point(value: tuple) -> list[float | None]:
    return [json_number(float(v)) for v in value]


def document(solution: CauchySolution, names: dict[sympy.Symbol, str], at: tuple[float, float] | None,
             coefficients: tuple[sympy.Expr, sympy.Expr, sympy.Expr]) -> dict:
    """The JSON document of one solved problem (the fields the command prints)."""
    text, why = solution_formula(solution, names)
    notes = list(solution.notes) + ([why] if why else [])
    value = dependence = None
    if at is not None:
        value = json_number(solution.value_at(*at))
        dependence = [_point(p) for p in solution.domain_of_dependence(*at)]
    general = str(solution.general.subs({symbol: sympy.Symbol(name) for symbol, name in names.items()}))
    return {
        "type": solution.type,
        "solution": text,
        "value": value,
        "domain_of_dependence": dependence,
        "at": None if at is None else list(at),
        "general_solution": general,
        "characteristics": [
            {"family": family, "direction": _point(direction), "invariant": _text(invariant, names)}
            for family, (direction, invariant) in enumerate(zip(solution.directions, solution.invariants,
                                                                strict=True), 1)],
        "line": {"normal": _point(solution.line.normal), "tangent": _point(solution.line.tangent),
                 "origin": _point(solution.line.origin), "parameter": LINE_PARAMETER},
        "coefficients": {key: float(value) for key, value in zip("abc", coefficients, strict=True)},
        "notes": notes,
    }


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Solve the problem the options describe (core.cli.registry) and report it; returns the exit status."""
    names = tuple(args.vars) if args.vars else ("x", "y")
    for name in names:
        try:
            check_name(name, what="variable")
        except ExpressionError as error:
            raise UsageError(f"--vars: {error.message}") from None
    if len(set(names)) != 2 or LINE_PARAMETER in names:
        raise UsageError(f"--vars: two different names other than {LINE_PARAMETER!r} are needed")
    x, y, s = sympy.Symbol(names[0], real=True), sympy.Symbol(names[1], real=True), sympy.Symbol(LINE_PARAMETER,
                                                                                                  real=True)
    symbols = {names[0]: x, names[1]: y}
    try:
        coefficients = tuple(parse_constant(getattr(args, key), key) for key in "abc")
        line = parse_data_line(args.line, symbols)
        u_data, du_data = (parse_line_data(text, key, symbols, s) for key, text in (("u", args.u), ("du", args.du)))
    except CauchyInputError as error:
        raise _option(error) from None
    try:
        solution = solve_cauchy(*coefficients, line, u_data, du_data, s, x=x, y=y)
    except CauchyError as error:
        raise UsageError(str(error)) from None
    at = tuple(args.at) if args.at else None
    result = document(solution, {x: names[0], y: names[1]}, at, coefficients)
    if args.json:
        json.dump(result, out)
        out.write("\n")
        return EXIT_OK
    x_name, y_name = names
    terms = [(value, f"u_{first}{second}") for value, (first, second) in
             zip(coefficients, ((x_name, x_name), (x_name, y_name), (y_name, y_name)), strict=True) if value != 0]
    written = " ".join(f"{'-' if value < 0 else '+'} {abs(value)} {term}" for value, term in terms).lstrip("+ ")
    out.write(f"{solution.type} equation {written} = 0\n")
    out.write(f"data line {args.line!r}: {LINE_PARAMETER} = arc length from ({', '.join(f'{v:.6g}' for v in result['line']['origin'])}), "
              f"along ({', '.join(f'{v:.6g}' for v in result['line']['tangent'])}); normal "
              f"({', '.join(f'{v:.6g}' for v in result['line']['normal'])})\n")
    out.writelines(f"characteristic family {family['family']}: direction ({family['direction'][0]:.6g}, "
                  f"{family['direction'][1]:.6g}), constant along it: {family['invariant']}\n" for family in result["characteristics"])
    out.write(f"general solution: u = {result['general_solution']}\n")
    out.write(f"solution: u = {result['solution'] if result['solution'] is not None else '(no closed form: see notes)'}\n")
    if at is not None:
        points = [f"({p[0]:.6g}, {p[1]:.6g})" for p in result["domain_of_dependence"]]
        where = f"between {points[0]} and {points[1]}" if len(points) == 2 else f"at {points[0]} and its slope there"
        out.write(f"at ({at[0]:.6g}, {at[1]:.6g}): u = {result['value']:.12g}; depends on the data {where}\n")
    out.writelines(f"note: {note}\n" for note in result["notes"])
    return EXIT_OK
