"""Translation of the sympy expressions that core.equations.parser builds into numexpr source text.

The input is a sympy tree made only of whitelisted nodes (never raw user text), and every symbol is renamed
to an internal name, so the generated text can neither clash with numexpr's own names nor carry anything a
user typed. Semantics follow IEEE doubles: a square root or logarithm of a negative number gives NaN, a
division by zero gives infinity, and NaN in any argument of min, max, sign, heaviside or a piecewise
condition gives NaN. A value is defined only when every step of the typed text is a finite number: where an
operation would take an infinite or NaN input to a finite value (1/inf, atan(inf), exp(-inf), max(-inf, 1),
pow(nan, 0)) the input poisons the result. The caller turns non-finite results into the ``undefined`` type.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping

import sympy

__all__ = ["INF_NAME", "NAN_NAME", "CodegenError", "to_numexpr"]

NAN_NAME = "qnan"
MAX_BRACKET_DEPTH = 200   # Python's compile(), which numexpr parses with, refuses deeper brackets
MAX_CODE_LENGTH = 1_000_000
INF_NAME = "qinf"

_DIRECT = {
    sympy.sin: "sin", sympy.cos: "cos", sympy.tan: "tan",
    sympy.asin: "arcsin", sympy.acos: "arccos", sympy.atan: "arctan", sympy.atan2: "arctan2",
    sympy.sinh: "sinh", sympy.cosh: "cosh", sympy.tanh: "tanh",
    sympy.exp: "exp", sympy.log: "log", sympy.Abs: "abs",
}


# Functions that take an infinite argument to a finite value: their arguments poison the result.
_FINITE_AT_INFINITY = frozenset({sympy.exp, sympy.atan, sympy.atan2, sympy.tanh})


class CodegenError(ValueError):
    """A sympy construct has no numexpr translation (a bug, or an expression simplified into one)."""


def _number(value: float) -> str:
    if math.isnan(value):
        return NAN_NAME
    if value in (float("inf"), float("-inf")):
        return INF_NAME if value > 0 else f"(-{INF_NAME})"
    text = repr(float(value))
    return f"({text})" if value < 0 else text


def to_numexpr(expr: sympy.Basic, names: Mapping[sympy.Symbol, str]) -> str:
    """numexpr text for ``expr``; ``names`` maps each free symbol to its internal variable name."""
    try:
        text = _Printer(names).emit(expr)
    except RecursionError:
        raise CodegenError("expression is nested too deeply to evaluate") from None
    depth = max(itertools.accumulate((ch == "(") - (ch == ")") for ch in text), default=0)
    if depth > MAX_BRACKET_DEPTH:
        raise CodegenError(f"expression is nested too deeply to evaluate ({depth} levels of brackets, "
                           f"at most {MAX_BRACKET_DEPTH})")
    return text


def _is_negated(term: sympy.Basic) -> bool:
    return term.is_Mul and len(term.args) == 2 and term.args[0] is sympy.S.NegativeOne


class _Printer:
    def __init__(self, names: Mapping[sympy.Symbol, str]) -> None:
        self.names = names

    def emit(self, e: sympy.Basic) -> str:
        text = self._emit(e)
        if len(text) > MAX_CODE_LENGTH:   # min, max, sign and piecewise repeat their arguments' text
            raise CodegenError(f"expression is too large to evaluate (more than {MAX_CODE_LENGTH} characters)")
        return text

    def _emit(self, e: sympy.Basic) -> str:
        if e is sympy.nan or e is sympy.zoo:
            return NAN_NAME
        if e is sympy.oo:
            return INF_NAME
        if e is sympy.S.NegativeInfinity:
            return f"(-{INF_NAME})"
        if e is sympy.true:
            return "True"
        if e is sympy.false:
            return "False"
        if e.is_Symbol:
            try:
                return self.names[e]
            except KeyError:
                raise CodegenError(f"no value for symbol {e}") from None
        if e.is_Number or e.is_NumberSymbol:
            return _number(float(e))
        if e.is_Add:   # the parser's a - b is Add(a, Mul(-1, b)): emitted as a - b, as typed
            return "(" + "".join(" - " + self.emit(t.args[1]) if i and _is_negated(t)
                                 else " + " * bool(i) + self.emit(t) for i, t in enumerate(e.args)) + ")"
        if e.is_Mul:   # the parser's a / b is Mul(a, Pow(b, -1)): emitted as a / b, one rounding as typed
            divisors = [t.base for t in e.args[1:] if t.is_Pow and t.exp is sympy.S.NegativeOne]
            return self._poisoned("(" + "".join(
                " / " + self.emit(t.base) if i and t.is_Pow and t.exp is sympy.S.NegativeOne
                else " * " * bool(i) + self.emit(t) for i, t in enumerate(e.args)) + ")", divisors)
        if e.is_Pow:
            exponent = e.args[1]
            positive = exponent.is_Number and exponent > 0   # then an infinite or NaN base stays so
            return self._poisoned(self._power(e), [exponent] if positive else e.args)
        if isinstance(e, sympy.Piecewise):
            return self._piecewise(e)
        if isinstance(e, sympy.Min | sympy.Max):
            return self._poisoned(self._extremum(e), e.args)
        if isinstance(e, sympy.sign):
            v = self.emit(e.args[0])
            return self._poisoned(f"where({v} > 0, 1.0, where({v} < 0, -1.0, {v} * 0.0))", e.args)
        if isinstance(e, sympy.Heaviside):
            v = self.emit(e.args[0])
            at_zero = _number(float(e.args[1]))   # the parser always gives H(0) = 1/2
            return self._poisoned(f"where({v} > 0, 1.0, where({v} < 0, 0.0, {at_zero} + {v} * 0.0))", e.args[:1])
        if isinstance(e, sympy.Rel):
            return f"({self.emit(e.lhs)} {e.rel_op} {self.emit(e.rhs)})"   # <, <=, > or >= (the parser's only)
        if isinstance(e, sympy.And):
            return "(" + " & ".join(self.emit(t) for t in e.args) + ")"
        if isinstance(e, sympy.Or):
            return "(" + " | ".join(self.emit(t) for t in e.args) + ")"
        function = _DIRECT.get(type(e))
        if function is not None:
            text = f"{function}(" + ", ".join(self.emit(t) for t in e.args) + ")"
            return self._poisoned(text, e.args) if type(e) in _FINITE_AT_INFINITY else text
        raise CodegenError(f"cannot evaluate {type(e).__name__} numerically")

    def _power(self, e: sympy.Pow) -> str:
        base, exponent = e.args
        if exponent == sympy.Rational(1, 2):
            return f"sqrt({self.emit(base)})"
        if exponent == sympy.Rational(-1, 2):
            return f"(1.0 / sqrt({self.emit(base)}))"
        if exponent == -1:
            return f"(1.0 / {self.emit(base)})"
        return f"({self.emit(base)} ** {self.emit(exponent)})"

    def _extremum(self, e: sympy.Basic) -> str:
        keep = ">=" if isinstance(e, sympy.Max) else "<="
        args = [self.emit(t) for t in e.args]
        result = args[0]
        for other in args[1:]:
            # NaN in either argument gives NaN: a NaN first argument is kept; a NaN second one fails ``keep``.
            result = f"where(({result} {keep} {other}) | ({result} != {result}), {result}, {other})"
        return result

    def _piecewise(self, e: sympy.Piecewise) -> str:
        result = None
        guards = []
        for value, condition in reversed(e.args):
            value_text = self.emit(value)
            if result is None and condition is sympy.true:
                result = value_text
                continue
            result = f"where({self.emit(condition)}, {value_text}, {result if result is not None else NAN_NAME})"
            guards.extend(a for rel in condition.atoms(sympy.Rel) for a in (rel.lhs, rel.rhs))
        # A NaN in any compared quantity makes the whole piecewise value NaN instead of a silent branch.
        return self._poisoned(result, guards)

    def _poisoned(self, text: str, inputs) -> str:
        """``text`` made NaN wherever one of ``inputs`` is NaN or infinite (0 * inf is NaN), unchanged elsewhere.

        Used where an operation takes a non-finite input to a finite value (1/inf = 0, atan(inf) = pi/2,
        exp(-inf) = 0, max(-inf, 1) = 1, pow(nan, 0) = 1): a value is defined only when every step of the
        typed text is a finite number. Each input gets its own 0 * term, so two large finite inputs cannot
        overflow into a false NaN.
        """
        poison = [f"0.0 * {self.emit(g)}" for g in inputs if not g.is_Number]
        return f"({text} + " + " + ".join(poison) + ")" if poison else text
