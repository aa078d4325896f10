"""Sympy expressions written back as Mixtype formula text, so a computed formula can be pasted into a coefficient.

The printer covers what the expression language has (core.equations.language): + - * / **, numbers, the
constants pi and e, the functions of FUNCTIONS, piecewise(cond, value, ..., otherwise) with < <= > >=, and
conditions joined by ``and`` / ``or`` (a condition alone reads back inside piecewise(), as the language wants).
Numbers print exactly: integers as integers, rationals as quotients of integers, floats by repr (the shortest
text that reads back as the same double). Anything outside the language (an integral, the imaginary unit, an
unknown function) raises NotInLanguage naming it, rather than printing text the parser would refuse.
"""

from __future__ import annotations

from collections.abc import Mapping

import sympy
from sympy.printing.precedence import precedence
from sympy.printing.str import StrPrinter

__all__ = ["NotInLanguage", "formula_text"]

_FUNCTION_NAMES = {sympy.sin: "sin", sympy.cos: "cos", sympy.tan: "tan", sympy.asin: "asin", sympy.acos: "acos",
                   sympy.atan: "atan", sympy.atan2: "atan2", sympy.sinh: "sinh", sympy.cosh: "cosh",
                   sympy.tanh: "tanh", sympy.exp: "exp", sympy.log: "log", sympy.Abs: "abs", sympy.sign: "sign"}


class NotInLanguage(ValueError):
    """A sympy expression holds something Mixtype's formula language cannot say."""


class _FormulaPrinter(StrPrinter):
    """StrPrinter (its precedence and parenthesising) with the language's names and exact numbers."""

    def __init__(self, names: Mapping[sympy.Symbol, str], order: str | None) -> None:
        super().__init__({"order": order})
        self._names = names

    def _print_Symbol(self, e: sympy.Symbol) -> str:
        return self._names.get(e, e.name)

    def _print_Integer(self, e: sympy.Integer) -> str:
        return str(int(e))

    def _print_Rational(self, e: sympy.Rational) -> str:
        return f"{int(e.p)}/{int(e.q)}"

    def _print_Float(self, e: sympy.Float) -> str:
        return repr(float(e))

    def _print_Pi(self, e) -> str:
        return "pi"

    def _print_Exp1(self, e) -> str:
        return "e"

    def _print_ExpBase(self, e) -> str:
        return f"exp({self._print(e.args[0])})"

    def _print_Function(self, e) -> str:
        name = _FUNCTION_NAMES.get(type(e))
        if name is None:
            raise NotInLanguage(f"the function {type(e).__name__} is not in Mixtype's formula language")
        return f"{name}({', '.join(self._print(arg) for arg in e.args)})"

    _print_Abs = _print_Function
    _print_sign = _print_Function
    _print_atan2 = _print_Function
    _print_log = _print_Function

    def _print_Heaviside(self, e) -> str:
        return f"heaviside({self._print(e.args[0])})"

    def _print_Min(self, e) -> str:
        return f"min({', '.join(self._print(arg) for arg in e.args)})"

    def _print_Max(self, e) -> str:
        return f"max({', '.join(self._print(arg) for arg in e.args)})"

    def _print_Pow(self, e, rational: bool = False) -> str:
        base, exponent = e.args
        if exponent is sympy.S.Half:
            return f"sqrt({self._print(base)})"
        if exponent == -sympy.S.Half:
            return f"1/sqrt({self._print(base)})"
        if exponent is sympy.S.NegativeOne:
            return f"1/{self.parenthesize(base, precedence(e), strict=False)}"
        return f"{self.parenthesize(base, precedence(e), strict=True)}**{self._exponent(exponent, e)}"

    def _exponent(self, exponent: sympy.Basic, power: sympy.Pow) -> str:
        text = self._print(exponent)
        simple = (exponent.is_Integer and exponent >= 0) or exponent.is_Symbol or (exponent.is_Float and exponent >= 0)
        return text if simple else f"({text})"

    def _print_Relational(self, e) -> str:
        if e.rel_op not in ("<", "<=", ">", ">="):
            raise NotInLanguage(f"the comparison {e.rel_op} is not in Mixtype's formula language")
        return f"{self._print(e.lhs)} {e.rel_op} {self._print(e.rhs)}"

    def _print_And(self, e) -> str:
        return " and ".join(f"({self._print(arg)})" if isinstance(arg, sympy.Or) else self._print(arg)
                            for arg in e.args)

    def _print_Or(self, e) -> str:
        return " or ".join(self._print(arg) for arg in e.args)

    def _print_Piecewise(self, e) -> str:
        parts = []
        for value, condition in e.args[:-1]:
            parts.extend([self._print(condition), self._print(value)])
        last_value, last_condition = e.args[-1]
        if last_condition is not sympy.true:
            raise NotInLanguage("a piecewise expression without an 'otherwise' value is not in the language")
        parts.append(self._print(last_value))
        return f"piecewise({', '.join(parts)})"

    def emptyPrinter(self, e) -> str:
        raise NotInLanguage(f"{type(e).__name__} is not in Mixtype's formula language")

    _print_Integral = emptyPrinter
    _print_ImaginaryUnit = emptyPrinter
    _print_Infinity = emptyPrinter
    _print_NegativeInfinity = emptyPrinter
    _print_ComplexInfinity = emptyPrinter
    _print_NaN = emptyPrinter
    _print_Derivative = emptyPrinter
    _print_Subs = emptyPrinter


def formula_text(expression: sympy.Basic, names: Mapping[sympy.Symbol, str] | None = None, *,
                 order: str | None = "none") -> str:
    """``expression`` as Mixtype formula text; ``names`` renames symbols (default: their own names).

    ``order`` is sympy's term order: "none" (the default) prints terms as stored, which costs nothing on large
    expressions; None sorts them as sympy prints them (x**2 + y**2 - 1, not -1 + x**2 + y**2)."""
    if not isinstance(expression, sympy.Basic):
        raise TypeError(f"expected a sympy expression, got {type(expression).__name__}")
    if expression.has(sympy.I):
        raise NotInLanguage("the expression is complex-valued (it holds the imaginary unit)")
    return _FormulaPrinter(dict(names or {}), order).doprint(expression)
