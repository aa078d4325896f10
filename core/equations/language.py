"""Mixtype's expression language: its limits, functions, constants, reserved names and error type.

What a coefficient, definition or parameter name may be is decided here; core.equations.parser builds sympy
objects from text within these rules, folding constant parts with the double-precision evaluators below.
"""

from __future__ import annotations

import ast
import keyword
import math
import re
from collections.abc import Callable

import sympy

__all__ = [
    "CONSTANTS",
    "CONSTANT_NAMES",
    "FLOAT_COMPARISONS",
    "FUNCTIONS",
    "FUNCTION_NAMES",
    "MAX_ABS_EXPONENT",
    "MAX_DEPTH",
    "MAX_NAME_LENGTH",
    "MAX_NODES",
    "MAX_TEXT_LENGTH",
    "SYMBOLIC_COMPARISONS",
    "ExpressionError",
    "check_name",
    "data_derivative_key",
    "fold_constant",
]

MAX_TEXT_LENGTH = 2000
MAX_NODES = 600
MAX_DEPTH = 200
MAX_ABS_EXPONENT = 64
MAX_NAME_LENGTH = 40


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


# name -> (number of arguments, sympy builder, float evaluator for constant folding)
FUNCTIONS: dict[str, tuple[int, Callable, Callable]] = {
    "sin": (1, sympy.sin, math.sin),
    "cos": (1, sympy.cos, math.cos),
    "tan": (1, sympy.tan, math.tan),
    "asin": (1, sympy.asin, math.asin),
    "acos": (1, sympy.acos, math.acos),
    "atan": (1, sympy.atan, math.atan),
    "atan2": (2, sympy.atan2, math.atan2),
    "sinh": (1, sympy.sinh, math.sinh),
    "cosh": (1, sympy.cosh, math.cosh),
    "tanh": (1, sympy.tanh, math.tanh),
    "exp": (1, sympy.exp, math.exp),
    "log": (1, sympy.log, math.log),
    "sqrt": (1, sympy.sqrt, math.sqrt),
    "abs": (1, sympy.Abs, abs),
    "sign": (1, sympy.sign, _sign),
    "heaviside": (1, lambda v: sympy.Heaviside(v, sympy.Rational(1, 2)), _heaviside),
    "min": (-2, sympy.Min, min),
    "max": (-2, sympy.Max, max),
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


def fold_constant(function: Callable, args, node: ast.AST, what: str) -> float:
    """Evaluate a constant sub-expression in double precision; reject results that are not finite reals."""
    try:
        result = function(*[float(a) for a in args])
    except ZeroDivisionError:
        raise ExpressionError(f"division by zero in a constant ({what})", column=_column(node)) from None
    except OverflowError:
        raise ExpressionError(f"constant {what} overflows double precision", column=_column(node)) from None
    except ValueError:
        raise ExpressionError(f"constant {what} has no real value (e.g. sqrt or log of a negative number)",
                              column=_column(node)) from None
    if isinstance(result, complex) or not math.isfinite(result):
        raise ExpressionError(f"constant {what} is not a finite real number", column=_column(node))
    return float(result)


def _column(node: ast.AST) -> int | None:
    offset = getattr(node, "col_offset", None)
    return None if offset is None else offset + 1
