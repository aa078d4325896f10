"""Mixtype's expression language: its limits, functions, constants, reserved names and error type.

What a coefficient, definition or parameter name may be is decided here; core.equations.parser builds sympy
objects from text within these rules, folding constant parts with the double-precision evaluators below.
"""

from __future__ import annotations

import ast
import keyword
import math
import re
import sys
from collections.abc import Callable
from functools import partial

import sympy

__all__ = [
    "CONSTANTS",
    "CONSTANT_NAMES",
    "FLOAT_COMPARISONS",
    "FUNCTIONS",
    "FUNCTION_NAMES",
    "MAX_ABS_EXPONENT",
    "MAX_DEPTH",
    "MAX_EXACT_INTEGER",
    "MAX_NAME_LENGTH",
    "MAX_NODES",
    "MAX_TEXT_LENGTH",
    "SYMBOLIC_COMPARISONS",
    "ExpressionError",
    "check_name",
    "data_derivative_key",
    "fold_constant",
    "number_literal",
]

MAX_TEXT_LENGTH = 2000
MAX_NODES = 600
MAX_DEPTH = 200
MAX_ABS_EXPONENT = 64
MAX_NAME_LENGTH = 40
MAX_EXACT_INTEGER = 2**53


class ExpressionError(ValueError):
    """A user expression or name is not acceptable; the message says what and where (1-based column)."""

    def __init__(self, message: str, *, column: int | None = None, field: str = "") -> None:
        self.message = message
        self.column = column
        self.field = field
        where = []
        if field:
            where.append(field)
        if column is not None:
            where.append(f"column {column}")
        prefix = f"{', '.join(where)}: " if where else ""
        super().__init__(prefix + message)

    def in_field(self, field: str) -> ExpressionError:
        """The same error, attributed to ``field`` (e.g. ``definitions.u``)."""
        return ExpressionError(self.message, column=self.column, field=field)


def _heaviside(value: float) -> float:
    if value > 0:
        return 1.0
    if value < 0:
        return 0.0
    return 0.5 if value == 0 else math.nan


def _sign(value: float) -> float:
    return float((value > 0) - (value < 0)) if not math.isnan(value) else math.nan


# name -> (number of arguments, sympy builder, float evaluator for constant folding). The builders leave the
# call unevaluated (sympy would rewrite log(exp(x)) to x), so a compiled expression is undefined exactly where
# the typed one is.
FUNCTIONS: dict[str, tuple[int, Callable, Callable]] = {
    "sin": (1, partial(sympy.sin, evaluate=False), math.sin),
    "cos": (1, partial(sympy.cos, evaluate=False), math.cos),
    "tan": (1, partial(sympy.tan, evaluate=False), math.tan),
    "asin": (1, partial(sympy.asin, evaluate=False), math.asin),
    "acos": (1, partial(sympy.acos, evaluate=False), math.acos),
    "atan": (1, partial(sympy.atan, evaluate=False), math.atan),
    "atan2": (2, partial(sympy.atan2, evaluate=False), math.atan2),
    "sinh": (1, partial(sympy.sinh, evaluate=False), math.sinh),
    "cosh": (1, partial(sympy.cosh, evaluate=False), math.cosh),
    "tanh": (1, partial(sympy.tanh, evaluate=False), math.tanh),
    "exp": (1, partial(sympy.exp, evaluate=False), math.exp),
    "log": (1, partial(sympy.log, evaluate=False), math.log),
    "sqrt": (1, partial(sympy.sqrt, evaluate=False), math.sqrt),
    "abs": (1, partial(sympy.Abs, evaluate=False), abs),
    "sign": (1, partial(sympy.sign, evaluate=False), _sign),
    "heaviside": (1, lambda v: sympy.Heaviside(v, sympy.S.Half, evaluate=False), _heaviside),
    # unevaluated min/max still drop repeated arguments and sort them: both keep where the value is NaN
    "min": (-2, partial(sympy.Min, evaluate=False), min),
    "max": (-2, partial(sympy.Max, evaluate=False), max),
}
FUNCTION_NAMES = frozenset(FUNCTIONS) | {"piecewise", "diff"}
CONSTANT_NAMES = frozenset({"pi", "e"})
CONSTANTS = {"pi": math.pi, "e": math.e}
_IDENTIFIER = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")

SYMBOLIC_COMPARISONS = {
    ast.Lt: sympy.StrictLessThan,
    ast.LtE: sympy.LessThan,
    ast.Gt: sympy.StrictGreaterThan,
    ast.GtE: sympy.GreaterThan,
}
FLOAT_COMPARISONS = {
    ast.Lt: lambda p, q: p < q,
    ast.LtE: lambda p, q: p <= q,
    ast.Gt: lambda p, q: p > q,
    ast.GtE: lambda p, q: p >= q,
}


def data_derivative_key(name: str, variable: str) -> str:
    """The symbol name standing for the first derivative of data quantity ``name`` along ``variable``."""
    return f"diff({name},{variable})"


def check_name(name: str, *, what: str = "name") -> None:
    """Reject names that are not plain ASCII identifiers or that shadow a function, constant or keyword."""
    if not isinstance(name, str) or not _IDENTIFIER.match(name):
        raise ExpressionError(
            f"{what} {name!r} must start with a letter and hold only ASCII letters, digits and '_'"
        )
    if len(name) > MAX_NAME_LENGTH:
        raise ExpressionError(f"{what} {name!r} is longer than {MAX_NAME_LENGTH} characters")
    if name in FUNCTION_NAMES or name in CONSTANT_NAMES:
        raise ExpressionError(f"{what} {name!r} is the name of a built-in function or constant")
    if keyword.iskeyword(name) or keyword.issoftkeyword(name) or name in {"True", "False", "None"}:
        raise ExpressionError(f"{what} {name!r} is a reserved word")


def number_literal(value: object, text: str, column: int | None) -> int | float:
    """The value of a number literal typed as ``text``: a float, or an int no larger than 2**53 (held exactly
    in double precision). Literals doubles cannot hold (1e309 would become infinity, 1e-400 zero) are refused
    with their column rather than silently changed."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ExpressionError(f"only numbers are allowed here, not {text or repr(value)}", column=column)
    if isinstance(value, int):
        if abs(value) > MAX_EXACT_INTEGER:
            if abs(value) > sys.float_info.max:
                raise ExpressionError("integer is too large for double precision (the largest is "
                                      f"{sys.float_info.max!r})", column=column)
            raise ExpressionError(f"integer is too large to be exact in double precision (above 2**53); write "
                                  f"{float(value)!r} to accept rounding", column=column)
        return value
    if math.isinf(value):
        raise ExpressionError(f"number {_shortened(text)} is beyond double precision (the largest is "
                              f"{sys.float_info.max!r})", column=column)
    if value == 0.0 and any(digit in "123456789" for digit in text.lower().partition("e")[0]):
        raise ExpressionError(f"number {_shortened(text)} is below double precision (the smallest is "
                              "5e-324) and would be zero", column=column)
    return value


def fold_constant(function: Callable, args, node: ast.AST, what: str, *,
                  operator_column: int | None = None) -> float:
    """Evaluate a constant sub-expression in double precision; reject results that are not finite reals.

    ``what`` is the constant's text for messages; an overflow is reported at ``operator_column`` (the operator
    that overflowed) when given, other problems at the start of ``node``.
    """
    column = _column(node)
    overflow = ExpressionError(f"constant {what} overflows double precision (the largest is "
                               f"{sys.float_info.max!r})", column=operator_column or column)
    try:
        result = function(*[float(a) for a in args])
    except ZeroDivisionError:
        raise ExpressionError(f"division by zero in a constant ({what})", column=column) from None
    except OverflowError:
        raise overflow from None
    except ValueError:
        raise ExpressionError(f"constant {what} has no real value (e.g. sqrt or log of a negative number)",
                              column=column) from None
    if isinstance(result, complex):
        raise ExpressionError(f"constant {what} is not a real number", column=column)
    if math.isinf(result):
        raise overflow
    if math.isnan(result):
        raise ExpressionError(f"constant {what} is not a finite real number", column=column)
    return float(result)


def _shortened(text: str, limit: int = 30) -> str:
    return text if len(text) <= limit else text[:limit - 3] + "..."


def _column(node: ast.AST) -> int | None:
    offset = getattr(node, "col_offset", None)
    return None if offset is None else offset + 1
