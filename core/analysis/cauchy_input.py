"""The Cauchy problem as typed: the data line, u and its normal derivative on it, and the constant coefficients
of a study, read through the whitelisted parser (core.equations.parser) into exact sympy values.

Shared by ``mixtype cauchy`` (core.cli.cauchy, which turns a CauchyInputError into its option's usage error) and
the window's Cauchy panel. Every typed text goes through ``parse_expression``; nothing is given to sympify.
A CauchyInputError names the field at fault (``"a"``, ``"line"``, ``"u"``, ``"du"``, ``"coefficients"``) and
says what is wrong, with the 1-based column where the parser gives one.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import sympy

from core.analysis.cauchy import DataLine
from core.equations.compiled import CompiledEquation
from core.equations.language import ExpressionError
from core.equations.parser import parse_expression, tidy_expression

__all__ = ["CAUCHY_FIELDS", "LINE_PARAMETER", "CauchyInput", "CauchyInputError", "exact_number", "parse_constant",
           "parse_data_line", "parse_line_data", "read_cauchy_input", "study_coefficients"]

LINE_PARAMETER = "s"
CAUCHY_FIELDS = ("line", "u", "du")       # the texts that state one problem, as a project stores them


class CauchyInputError(ValueError):
    """A typed part of a Cauchy problem is unusable: ``field`` says which, ``message`` what is wrong."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(f"{field}: {message}")
        self.field = field
        self.message = message


def exact_number(value: sympy.Expr) -> sympy.Expr:
    """``value`` with every float as the decimal its shortest repr shows (0.1 -> 1/10), so the symbolic work
    is exact."""
    return sympy.nsimplify(value, rational=True) if value.has(sympy.Float) else value


def parse_constant(text: str, field: str) -> sympy.Expr:
    """A coefficient typed as a constant formula (2, -1/3, sqrt(5)): an exact real number."""
    try:
        value = tidy_expression(parse_expression(text, {}).value)
    except ExpressionError as error:
        raise CauchyInputError(field, error.message) from None
    if not value.is_number or not value.is_real or not math.isfinite(float(value)):
        raise CauchyInputError(field, f"expected a finite real number, got {text!r}")
    return exact_number(value)


def parse_data_line(text: str, symbols: Mapping[str, sympy.Symbol]) -> DataLine:
    """'ALPHA*x + BETA*y = GAMMA' (either side may hold any linear terms) as a DataLine; ``symbols`` maps the two
    variable names to their symbols, first variable first."""
    left, equals, right = text.partition("=")
    if not equals or "=" in right or left.endswith(("<", ">")) or right.startswith("="):
        raise CauchyInputError("line", f"expected one '=' as in \"2*x + y = 1\", got {text!r}")
    try:
        sides = [tidy_expression(parse_expression(side, symbols).value) for side in (left, right)]
    except ExpressionError as error:
        raise CauchyInputError("line", error.message) from None
    x, y = symbols.values()
    difference = exact_number(sympy.expand(sides[0] - sides[1]))
    try:
        polynomial = sympy.Poly(difference, x, y)
    except sympy.PolynomialError:
        polynomial = None
    if polynomial is None or polynomial.total_degree() > 1 or not all(
            coefficient.is_number for coefficient in polynomial.coeffs()):
        raise CauchyInputError("line", f"{text!r} is not a straight line (expected ALPHA*{x} + BETA*{y} = GAMMA "
                                       "with numbers ALPHA, BETA, GAMMA)")
    alpha, beta = polynomial.coeff_monomial(x), polynomial.coeff_monomial(y)
    if alpha == 0 and beta == 0:
        raise CauchyInputError("line", f"{text!r} has no {x} or {y} term")
    return DataLine(alpha, beta, -polynomial.coeff_monomial(1))


def parse_line_data(text: str, field: str, symbols: Mapping[str, sympy.Symbol], s: sympy.Symbol) -> sympy.Expr:
    """u or its normal derivative on the line: a formula in ``s`` (arc length along the line) or in the two
    variables of ``symbols``, not both; exact where the text has decimals."""
    try:
        parsed = parse_expression(text, {**symbols, LINE_PARAMETER: s})
    except ExpressionError as error:
        raise CauchyInputError(field, error.message + (f" (column {error.column})" if error.column else "")) \
            from None
    if LINE_PARAMETER in parsed.names and parsed.names & set(symbols):
        raise CauchyInputError(field, f"use either {LINE_PARAMETER} (along the line) or {' and '.join(symbols)}, "
                                      "not both")
    return exact_number(tidy_expression(parsed.value))


def study_coefficients(compiled: CompiledEquation, parameters: Mapping[str, float] | None = None
                       ) -> tuple[sympy.Expr, sympy.Expr, sympy.Expr]:
    """a, b, c of a compiled study as exact numbers: definitions substituted, parameters at ``parameters`` (default:
    their values in the study). CauchyInputError (field "coefficients") saying which coefficient is not constant
    and on what it depends, or that it is not a finite real number."""
    values = compiled.parameter_vector(parameters)
    exact = {compiled.symbols[name]: sympy.Rational(repr(float(value))) for name, value in values.items()}
    variables = {compiled.symbols[name] for name in compiled.variables}
    result = []
    for which in ("a", "b", "c"):
        value = tidy_expression(compiled.substituted[which].xreplace(exact))
        varying = sorted(symbol.name for symbol in value.free_symbols if symbol in variables)
        data = sorted(symbol.name for symbol in value.free_symbols if symbol not in variables)
        if varying:
            raise CauchyInputError("coefficients", f"{which} = {compiled.equation.coefficient_text(which)} depends on "
                                   f"{' and '.join(varying)} once the definitions are substituted: the Cauchy "
                                   "problem is solved here only for constant a, b, c")
        if data:
            raise CauchyInputError("coefficients", f"{which} depends on the data quantities {', '.join(data)}: the "
                                   "Cauchy problem is solved here only for constant a, b, c")
        try:
            number = complex(value.evalf(30))
        except (TypeError, ValueError):
            number = complex(math.nan)
        if number.imag != 0 or not math.isfinite(number.real):
            raise CauchyInputError("coefficients", f"{which} is not a finite real number here ({value})")
        result.append(exact_number(value))
    return result[0], result[1], result[2]


@dataclass(frozen=True)
class CauchyInput:
    """One problem ready for core.analysis.cauchy.solve_cauchy: exact a, b, c, the line, the data in ``s``
    (or in the variables ``x``, ``y``), and the symbols used."""

    coefficients: tuple[sympy.Expr, sympy.Expr, sympy.Expr]
    line: DataLine
    u: sympy.Expr
    du: sympy.Expr
    x: sympy.Symbol
    y: sympy.Symbol
    s: sympy.Symbol

    @property
    def names(self) -> dict[sympy.Symbol, str]:
        """The variables' symbols and the names the study gives them (for formula text)."""
        return {self.x: self.x.name, self.y: self.y.name}


def read_cauchy_input(compiled: CompiledEquation, texts: Mapping[str, str], *,
                      parameters: Mapping[str, float] | None = None) -> CauchyInput:
    """The study's constant coefficients and the typed ``texts`` ("line", "u", "du") as one CauchyInput; the
    first problem found raises CauchyInputError naming its field (the coefficients first)."""
    first, second = compiled.variables
    if LINE_PARAMETER in (first, second):
        raise CauchyInputError("coefficients", f"a variable is called {LINE_PARAMETER}, the name of the arc "
                                               "length along the data line: rename it to state Cauchy data")
    coefficients = study_coefficients(compiled, parameters)
    x, y, s = (sympy.Symbol(name, real=True) for name in (first, second, LINE_PARAMETER))
    symbols = {first: x, second: y}
    missing = [field for field in CAUCHY_FIELDS if not texts.get(field, "").strip()]
    if missing:
        raise CauchyInputError(missing[0], "not given yet")
    line = parse_data_line(texts["line"], symbols)
    u = parse_line_data(texts["u"], "u", symbols, s)
    du = parse_line_data(texts["du"], "du", symbols, s)
    return CauchyInput(coefficients=coefficients, line=line, u=u, du=du, x=x, y=y, s=s)
