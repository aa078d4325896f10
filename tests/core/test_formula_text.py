"""Formula text written back from sympy (core.equations.formula_text) reads back through the parser to the same
values, and what the language cannot say is refused by name."""

from __future__ import annotations

import math

import pytest
import sympy

from core.deadline import TimedOut, run_with_deadline
from core.equations.formula_text import NotInLanguage, formula_text
from core.equations.parser import parse_expression

X, Y = sympy.symbols("x y")
CASES = [
    X ** 2 - 2 * X * Y + sympy.Rational(3, 4), sympy.sqrt(1 - X ** 2) / (X + 2), (-Y) ** sympy.Rational(3, 2),
    sympy.exp(-X ** 2) * sympy.cos(Y), sympy.Abs(X) - sympy.Max(X, Y, sympy.Float(0.5)), 2 ** X, X ** -2,
    1 / (X + Y), sympy.pi * X / 3, sympy.E ** X, -X ** 2, (-X) ** 3, X ** Y,
    sympy.Piecewise((X, X < 0), (Y ** 2, True)), sympy.atan2(Y, X), 1 / (1 + sympy.sqrt(X ** 2 + Y ** 2)),
    sympy.Float(0.1) * X, X - Y / (2 * X), -(X + Y) ** 2 / 3, sympy.tanh(X) * sympy.asin(Y / 2),
    sympy.Heaviside(X - Y), sympy.sign(X) * sympy.log(2 + Y), X ** sympy.Rational(-1, 2),
]


@pytest.mark.parametrize("expression", CASES, ids=str)
def test_text_reads_back_to_the_same_values(expression):
    text = formula_text(expression)
    back = parse_expression(text, {"x": X, "y": Y}).value
    for point in ((0.3, 0.7), (-0.4, 0.2), (0.9, -0.5), (1.5, 1.25)):
        want = complex(expression.subs({X: point[0], Y: point[1]}).evalf(20))
        got = complex(back.subs({X: point[0], Y: point[1]}).evalf(20))
        assert got == pytest.approx(want, rel=1e-14, abs=1e-300) or (math.isnan(got.real) and math.isnan(want.real))


def test_names_are_renamed_and_numbers_exact():
    assert formula_text(X / 3 + sympy.Float(0.1), {X: "xi"}) == "0.1 + xi/3"
    assert formula_text(sympy.Rational(-7, 2) * Y) == "-7*y/2"


@pytest.mark.parametrize("expression", [sympy.Integral(X, (X, 0, Y)), sympy.I * X, sympy.erf(X),
                                        sympy.Function("F")(X), sympy.oo])
def test_what_the_language_lacks_is_refused_by_name(expression):
    with pytest.raises(NotInLanguage):
        formula_text(expression)


@pytest.mark.parametrize("condition", [sympy.And(Y < 0, sympy.Abs(X - Y) > 0), sympy.Or(Y < 0, sympy.And(X > 1, Y >= 2)),
                                       sympy.And(sympy.Or(X < 0, Y < 0), X + Y <= 1)], ids=str)
def test_conditions_joined_by_and_or_read_back_inside_piecewise(condition):
    text = formula_text(condition)
    back = parse_expression(f"piecewise({text}, 1, 0)", {"x": X, "y": Y}).value
    for point in ((0.3, -0.7), (-0.4, 0.2), (1.5, 2.5), (2.0, -0.5), (-1.0, 1.5)):
        at = {X: point[0], Y: point[1]}
        assert bool(back.subs(at) == 1) == bool(condition.subs(at))


def test_sorted_order_prints_terms_as_sympy_does():
    circle = X ** 2 + Y ** 2 - 1
    assert formula_text(circle, order=None) == "x**2 + y**2 - 1"
    assert formula_text(sympy.Mul(4, circle, evaluate=False), order=None) == "4*(x**2 + y**2 - 1)"


def _sleep(seconds: float) -> None:
    import time

    time.sleep(seconds)


def test_deadline_stops_work_and_passes_results_and_errors_back():
    assert run_with_deadline(sympy.integrate, X * sympy.sin(X), (X, 0, sympy.pi), seconds=30) == sympy.pi
    with pytest.raises(TimedOut):
        run_with_deadline(_sleep, 30, seconds=0.5)
    with pytest.raises(ValueError, match="invalid literal"):
        run_with_deadline(int, "not a number", seconds=30)
