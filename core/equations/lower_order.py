"""The lower-order part d u_x + e u_y + f u of an equation, where the study states it, read through the parser.

The three texts live in ``Equation.lower_order`` (keys "d", "e", "f"; a missing or empty one is not stated).
They never enter the compiled program: the type of the equation and everything the map shows depend only on
a, b, c. They are parsed over the same names as the coefficients (variables, parameters, definitions and the
loaded data quantities with their ``diff(NAME, VAR)`` keys), so a text that the window accepts is one the
project file's checks accept too.
"""

from __future__ import annotations

from collections.abc import Collection

import sympy

from core.equations.equation import LOWER_ORDER_NAMES, Equation
from core.equations.language import ExpressionError, data_derivative_key
from core.equations.parser import parse_expression

__all__ = ["lower_order_problem", "lower_order_terms", "stated_lower_order"]


def stated_lower_order(lower_order) -> dict[str, str]:
    """The stated terms of a lower_order mapping, in d, e, f order, without empty or blank texts."""
    return {key: lower_order[key] for key in LOWER_ORDER_NAMES if str(lower_order.get(key, "")).strip()}


def _symbols(equation: Equation, data_names: Collection[str]) -> tuple[dict[str, sympy.Symbol], tuple[str, ...]]:
    own = {*equation.variables, *equation.parameters, *equation.definitions}
    data = tuple(name for name in data_names if name not in own)
    names = [*equation.variables, *equation.parameters, *equation.definitions, *data]
    names += [data_derivative_key(quantity, v) for quantity in data for v in equation.variables]
    return {name: sympy.Symbol(name, real=True) for name in names}, data


def lower_order_terms(equation: Equation, *, data_names: Collection[str] = ()) -> dict[str, sympy.Expr]:
    """The stated terms of ``equation`` as sympy expressions over its names (definitions kept as names), in
    d, e, f order; ExpressionError with field ``lower_order.KEY`` for a text that does not parse."""
    symbols, data = _symbols(equation, data_names)
    terms = {}
    for key, text in stated_lower_order(equation.lower_order).items():
        try:
            terms[key] = parse_expression(text, symbols, data_names=data, variables=equation.variables).value
        except ExpressionError as error:
            raise error.in_field(f"lower_order.{key}") from None
    return terms


def lower_order_problem(equation: Equation, key: str, text: str, *, data_names: Collection[str] = ()
                        ) -> ExpressionError | None:
    """Why ``text`` cannot be the term ``key`` ("d", "e" or "f") of ``equation``, or None (an empty text is
    fine: the term is then not stated)."""
    if key not in LOWER_ORDER_NAMES:
        raise ValueError(f"a lower-order term is one of {', '.join(LOWER_ORDER_NAMES)}, got {key!r}")
    if not text.strip():
        return None
    symbols, data = _symbols(equation, data_names)
    try:
        parse_expression(text, symbols, data_names=data, variables=equation.variables)
    except ExpressionError as error:
        return error.in_field(f"lower_order.{key}")
    return None
