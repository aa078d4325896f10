"""A solved Cauchy problem on points and grids (core.analysis.cauchy_field), the problem read from a study
(core.analysis.cauchy_input) and the lower-order terms read from an equation (core.equations.lower_order).

Values are checked against sympy's own evaluation of the exact solution (``CauchySolution.value_at``: sympy
evalf, its integrals by mpmath quadrature) and against d'Alembert's formula.
"""

from __future__ import annotations

import math
import time

import numpy as np
import pytest
import sympy

from core.analysis.cauchy import DataLine, solution_formula, solve_cauchy
from core.analysis.cauchy_field import dependence_sketch, line_in_box, solution_evaluator, solution_on_grid
from core.analysis.cauchy_input import CauchyInputError, read_cauchy_input, study_coefficients
from core.deadline import run_with_deadline
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.equations.lower_order import lower_order_problem, lower_order_terms
from core.progress import Cancelled

X, Y, S = sympy.symbols("x y s", real=True)
BOX = (-2.0, 2.0, -1.0, 1.0)
POINTS = [(0.3, 0.5), (-1.2, 0.7), (1.9, -0.9), (-0.05, -0.4)]


def _wave(u, du, **options):
    """u_xx - u_yy = 0 with data on y = 0 (y is time)."""
    return solve_cauchy(1, 0, -1, DataLine(sympy.S(0), sympy.S(1), sympy.S(0)), u, du, S, x=X, y=Y, **options)


def test_closed_form_on_points_is_dalemberts_formula():
    # d'Alembert: u = (f(x - y) + f(x + y))/2 + (1/2) * integral of g over [x - y, x + y] (standard; from memory)
    evaluator = solution_evaluator(_wave(sympy.sin(S), S ** 2), BOX)
    for x, y in POINTS:
        expected = (math.sin(x - y) + math.sin(x + y)) / 2 + ((x + y) ** 3 - (x - y) ** 3) / 6
        assert evaluator(np.array([x]), np.array([y]))[0] == pytest.approx(expected, rel=1e-13, abs=1e-15)


@pytest.mark.parametrize("du", [sympy.exp(-S ** 2), sympy.sqrt(1 + S ** 4), sympy.cos(3 * S) / (2 + S ** 2)],
                         ids=["erf", "hypergeometric", "rational-trig"])
def test_special_function_antiderivatives_evaluate_like_sympy(du):
    solution = _wave(sympy.cos(S) + S, du)
    evaluator = solution_evaluator(solution, BOX)
    assert evaluator.numerical_integral
    for point in POINTS:
        assert evaluator(*(np.array([v]) for v in point))[0] == pytest.approx(solution.value_at(*point), rel=1e-11,
                                                                              abs=1e-12)


def test_no_closed_form_still_evaluates_and_has_no_formula_text():
    solution = _wave(sympy.sin(S), sympy.exp(sympy.cos(S)), integration_seconds=0.5)
    assert solution.solution is None and solution.exact.has(sympy.Integral)
    assert solution_formula(solution) == (None, None)
    evaluator = solution_evaluator(solution, BOX)
    for point in POINTS:
        assert evaluator(*(np.array([v]) for v in point))[0] == pytest.approx(solution.value_at(*point), rel=1e-11)


def test_formula_text_says_why_a_special_function_cannot_be_pasted():
    text, why = solution_formula(_wave(sympy.S(0), sympy.exp(-S ** 2)))
    assert text is None and "erf" in why and "not in Mixtype's formula language" in why


def test_an_integral_over_points_where_the_data_are_undefined_is_undefined():
    # g = 1/sqrt(s) is undefined for s < 0: u at (x, y) needs g on [x - y, x + y]
    solution = _wave(sympy.S(0), 1 / sympy.sqrt(S))
    evaluator = solution_evaluator(solution, BOX)
    inside = evaluator(np.array([1.5, 0.5]), np.array([0.5, -0.25]))
    assert inside[0] == pytest.approx(math.sqrt(2.0) - 1.0, rel=1e-11)        # (1/2) * 2 (sqrt(2) - sqrt(1))
    assert inside[1] == pytest.approx(math.sqrt(0.25) - math.sqrt(0.75), rel=1e-11)
    assert np.isnan(evaluator(np.array([0.2, 1.0]), np.array([0.5, 1.5]))).all()      # crosses s < 0; outside


def test_grid_holds_the_values_at_its_nodes_and_stops_when_cancelled():
    evaluator = solution_evaluator(_wave(sympy.sin(S), S ** 2), BOX)
    domain = Domain(*BOX, 41, 21)
    done = []
    grid = solution_on_grid(evaluator, domain, progress=done.append)
    assert (grid.kind, grid.name, grid.values.shape, grid.coarsened) == ("cauchy", "u", (21, 41), False)
    xx, yy = np.meshgrid(domain.x_nodes, domain.y_nodes)
    assert np.array_equal(grid.values, evaluator(xx, yy))
    assert (grid.low, grid.high) == (grid.values.min(), grid.values.max()) and done[-1] == 1.0
    with pytest.raises(Cancelled):
        solution_on_grid(evaluator, domain, cancel=lambda: True)


def test_parabolic_solution_evaluates_too():
    solution = solve_cauchy(1, 2, 1, DataLine(sympy.S(0), sympy.S(1), sympy.S(0)), sympy.cos(S) + S,
                            sympy.exp(S / 3), S, x=X, y=Y)
    evaluator = solution_evaluator(solution, BOX)
    for point in POINTS:
        assert evaluator(*(np.array([v]) for v in point))[0] == pytest.approx(solution.value_at(*point), rel=1e-13)


def test_line_in_box_and_the_domain_of_dependence():
    assert line_in_box(DataLine(sympy.S(0), sympy.S(1), sympy.S(0)), BOX) == ((-2.0, 0.0), (2.0, 0.0))
    assert line_in_box(DataLine(sympy.S(1), sympy.S(0), sympy.S(1)), BOX) == ((1.0, -1.0), (1.0, 1.0))
    assert line_in_box(DataLine(sympy.S(0), sympy.S(1), sympy.S(3)), BOX) is None
    # x + y = 0 meets the box's bottom at x = 1 and its top at x = -1; s grows with x
    ends = line_in_box(DataLine(sympy.S(1), sympy.S(1), sympy.S(0)), BOX)
    assert np.allclose(ends, ((-1.0, 1.0), (1.0, -1.0)), atol=1e-15)
    solution = _wave(sympy.sin(S), S ** 2)
    sketch = dependence_sketch(solution_evaluator(solution, BOX), 0.3, 0.5, BOX)
    assert np.allclose(sketch.feet, [(-0.2, 0.0), (0.8, 0.0)], atol=1e-15) and sketch.segment == sketch.feet
    assert sketch.value == pytest.approx(solution.value_at(0.3, 0.5), rel=1e-13)
    assert sketch.line == ((-2.0, 0.0), (2.0, 0.0)) and sketch.point == (0.3, 0.5)


def test_a_study_reads_as_exact_constant_coefficients():
    equation = Equation(a="1 - M**2", b="2*q", c="-1", definitions={"M": "M_inf*1"},
                        parameters={"M_inf": Parameter(0.8), "q": Parameter(0.1)})
    compiled = compile_equation(equation)
    assert study_coefficients(compiled) == (sympy.Rational(9, 25), sympy.Rational(1, 5), -1)
    assert study_coefficients(compiled, {"M_inf": 2.0})[0] == -3
    problem = read_cauchy_input(compiled, {"line": "y = 0", "u": "sin(s)", "du": "x**2"})
    assert problem.line == DataLine(sympy.S(0), sympy.S(1), sympy.S(0)) and problem.du == problem.x ** 2
    with pytest.raises(CauchyInputError, match="not given yet") as raised:
        read_cauchy_input(compiled, {"line": "y = 0", "u": "sin(s)"})
    assert raised.value.field == "du"
    with pytest.raises(CauchyInputError, match=r"unknown name 'k' \(column 8\)") as raised:
        read_cauchy_input(compiled, {"line": "y = 0", "u": "sin(s)+k", "du": "0"})
    assert raised.value.field == "u"


@pytest.mark.parametrize(("equation", "message"), [
    (Equation(a="1 - M**2", b="0", c="1", definitions={"M": "0.5*(1 + x)"}), "a = 1 - M\\*\\*2 depends on x once"),
    (Equation(a="1", b="x - x", c="y*y/y"), "c = y\\*y/y depends on y"),
    (Equation(a="1", b="0", c="sqrt(q)", parameters={"q": Parameter(-1.0)}), "c is not a finite real number"),
    (Equation(a="1/(q - 1)", b="0", c="1", parameters={"q": Parameter(1.0)}), "a is not a finite real number"),
])
def test_varying_or_undefined_coefficients_are_refused_saying_why(equation, message):
    with pytest.raises(CauchyInputError, match=message) as raised:
        study_coefficients(compile_equation(equation))
    assert raised.value.field == "coefficients"


def test_data_dependent_coefficients_and_a_variable_called_s_are_refused():
    compiled = compile_equation(Equation(a="h", b="0", c="-1"), data_names=("h",))
    with pytest.raises(CauchyInputError, match="depends on the data quantities h"):
        study_coefficients(compiled)
    compiled = compile_equation(Equation(a="1", b="0", c="-1", variables=("s", "t")))
    with pytest.raises(CauchyInputError, match="a variable is called s"):
        read_cauchy_input(compiled, {"line": "t = 0", "u": "0", "du": "0"})


def test_lower_order_terms_read_over_the_equations_names():
    equation = Equation(a="1", b="0", c="-1", definitions={"v": "x + y"}, parameters={"k": Parameter(2.0)},
                        lower_order={"d": "k*v", "e": " ", "f": "-1/(1 + h)"})
    terms = lower_order_terms(equation, data_names=("h",))
    assert list(terms) == ["d", "f"]
    k, v, h = sympy.symbols("k v h", real=True)
    assert terms["d"] == k * v and sympy.simplify(terms["f"] + 1 / (1 + h)) == 0
    assert lower_order_problem(equation, "e", "") is None and lower_order_problem(equation, "d", "k*x") is None
    error = lower_order_problem(equation, "f", "h + 1")
    assert error.field == "lower_order.f" and "unknown name 'h'" in error.message and error.column == 1
    assert lower_order_problem(equation, "e", "diff(h, x)", data_names=("h",)) is None


def test_waiting_for_symbolic_work_can_be_cancelled():
    asked = []

    def cancel() -> bool:
        asked.append(True)
        return len(asked) > 2

    with pytest.raises(Cancelled):
        run_with_deadline(time.sleep, 60.0, seconds=120.0, cancel=cancel)
    assert len(asked) == 3
