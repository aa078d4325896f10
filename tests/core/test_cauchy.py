"""The Cauchy problem for constant coefficients (core.analysis.cauchy, `mixtype cauchy`), checked against
d'Alembert's formula, against sympy (the PDE and the data hold identically) and against a numerical method of
characteristics written here independently of the closed form."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import sympy
from scipy.integrate import quad

from core.analysis.cauchy import CauchyError, DataLine, solve_cauchy
from core.equations.parser import parse_expression
from tests.core.cli_runner import run as run_cli_args

X, Y, S = sympy.symbols("x y s", real=True)

# (a, b, c), line (alpha, beta, gamma), u on the line, normal derivative on the line: equations and data of
# our own, lines of several orientations (horizontal, vertical, oblique both ways, off the origin)
HYPERBOLIC_CASES = [
    ((1, 0, -1), (0, 1, 0), sympy.sin(S), S ** 2),
    ((1, 3, 1), (1, 2, 1), sympy.cos(S) + S, sympy.exp(S / 3)),
    ((2, -1, -3), (1, 2, sympy.Rational(1, 2)), S ** 3 - S, sympy.sin(2 * S)),
    ((0, 1, 0), (1, 1, 0), sympy.exp(-S ** 2), 1 + S),
    ((-1, 0, 4), (1, 0, -1), sympy.cos(S), S * sympy.exp(S / 4)),
    ((sympy.Rational(1, 3), 2, -5), (3, -1, 2), 1 / (1 + S ** 2), sympy.cos(S) ** 2),
]


def _solution(case):
    (a, b, c), (alpha, beta, gamma), u, du = case
    return solve_cauchy(a, b, c, DataLine(sympy.S(alpha), sympy.S(beta), sympy.S(gamma)), u, du, S, x=X, y=Y)


def test_wave_equation_gives_dalemberts_formula():
    # d'Alembert's formula for u_tt = u_xx with u(x, 0) = f, u_t(x, 0) = g: u = (f(x - t) + f(x + t))/2 +
    # (1/2) * integral of g over [x - t, x + t] (a standard result; e.g. W. A. Strauss, "Partial Differential
    # Equations: An Introduction", 2nd ed., Wiley 2008, section 2.1; from memory). Here t is y.
    solution = _solution(HYPERBOLIC_CASES[0])
    expected = (sympy.sin(X - Y) + sympy.sin(X + Y)) / 2 + sympy.integrate(S ** 2, (S, X - Y, X + Y)) / 2
    assert solution.type == "hyperbolic"
    assert sympy.simplify(solution.solution - expected) == 0
    assert np.allclose(solution.domain_of_dependence(0.3, 0.5), [(-0.2, 0.0), (0.8, 0.0)], rtol=0, atol=1e-15)


@pytest.mark.parametrize("case", HYPERBOLIC_CASES, ids=lambda case: f"{case[0]}-{case[1]}")
def test_solution_satisfies_the_equation_and_the_data(case):
    (a, b, c), _, u_data, du_data = case
    solution = _solution(case)
    u = solution.solution
    assert solution.type == "hyperbolic"
    assert _vanishes(a * u.diff(X, 2) + b * u.diff(X, Y) + c * u.diff(Y, 2))
    px, py = solution.line.point(S)
    nx, ny = solution.line.normal
    on_line = {X: px, Y: py}
    assert _vanishes(u.subs(on_line) - u_data)
    assert _vanishes((u.diff(X) * nx + u.diff(Y) * ny).subs(on_line) - du_data)


def _vanishes(expression: sympy.Expr) -> bool:
    """Whether sympy proves ``expression`` identically 0 (expanded, radicals rationalised, trig expanded)."""
    expanded = sympy.expand(sympy.radsimp(sympy.expand(expression)))
    return expanded == 0 or sympy.expand_trig(expanded).equals(0) is True


def _characteristic_directions(a: float, b: float, c: float) -> list[np.ndarray]:
    """Directions (dx, dy) with a dy^2 - b dx dy + c dx^2 = 0, found numerically (numpy.roots)."""
    if abs(a) > 0:
        return [np.array([1.0, slope]) for slope in np.roots([a, -b, c]).real]     # dy/dx
    return [np.array([0.0, 1.0]), np.array([b, c], dtype=float)]                    # a = 0: dx = 0 or b dy = c dx


def _method_of_characteristics(case, point) -> float:
    """u at ``point`` without the closed form: r_1 . grad u is constant along family-2 lines and r_2 . grad u
    along family-1 lines (u = F(phi_1) + G(phi_2)), so grad u anywhere follows from grad u on the data line
    (tangential derivative of the data by central differences, normal derivative given); u is then the data
    value at a foot point plus the integral of grad u along the segment to the point (scipy quad)."""
    (a, b, c), (alpha, beta, gamma), u_data, du_data = case
    a, b, c, alpha, beta, gamma = (float(v) for v in (a, b, c, alpha, beta, gamma))
    f, g = (sympy.lambdify(S, expression, "math") for expression in (u_data, du_data))
    normal = np.array([alpha, beta]) / math.hypot(alpha, beta)
    tangent = np.array([normal[1], -normal[0]])
    if beta < 0 or (beta == 0 and alpha > 0):
        tangent = -tangent
    origin = gamma * np.array([alpha, beta]) / (alpha ** 2 + beta ** 2)
    directions = _characteristic_directions(a, b, c)

    def foot(p: np.ndarray, direction: np.ndarray) -> float:
        """s where the line through p along direction meets the data line."""
        t = (gamma - normal @ p * math.hypot(alpha, beta)) / (math.hypot(alpha, beta) * (normal @ direction))
        return float((p + t * direction - origin) @ tangent)

    def gradient_on_line(s: float) -> np.ndarray:
        h = 1e-5
        return (f(s + h) - f(s - h)) / (2 * h) * tangent + g(s) * normal

    def gradient(p: np.ndarray) -> np.ndarray:
        r1, r2 = directions
        rhs = [r1 @ gradient_on_line(foot(p, r2)), r2 @ gradient_on_line(foot(p, r1))]
        return np.linalg.solve(np.array([r1, r2]), rhs)

    p = np.asarray(point, dtype=float)
    s1 = foot(p, directions[0])
    q = origin + s1 * tangent
    along, _ = quad(lambda t: gradient(q + t * (p - q)) @ (p - q), 0.0, 1.0, epsabs=1e-12, epsrel=1e-12)
    return f(s1) + along


@pytest.mark.parametrize("case", HYPERBOLIC_CASES, ids=lambda case: f"{case[0]}-{case[1]}")
def test_value_matches_a_numerical_method_of_characteristics(case):
    solution = _solution(case)
    for point in ((0.3, 0.7), (-0.4, 0.25)):
        assert solution.value_at(*point) == pytest.approx(_method_of_characteristics(case, point), rel=1e-7,
                                                          abs=1e-8)


def test_domain_of_dependence_lies_on_both_characteristics_and_the_line():
    case = HYPERBOLIC_CASES[2]
    solution = _solution(case)
    (a, b, c), (alpha, beta, gamma), _, _ = case
    point = np.array([0.3, 0.7])
    feet = solution.domain_of_dependence(*point)
    for foot in feet:
        assert float(alpha) * foot[0] + float(beta) * foot[1] == pytest.approx(float(gamma), abs=1e-12)
        step = np.asarray(foot) - point
        # the step is a characteristic direction: a dy^2 - b dx dy + c dx^2 = 0 (common practice, no source)
        assert a * step[1] ** 2 - b * step[0] * step[1] + c * step[0] ** 2 == pytest.approx(0.0, abs=1e-12)


def test_parabolic_solution_is_linear_along_the_characteristic_and_fits_the_data():
    a, b, c = 1, 2, 1        # D = 0: one family, slope b / (2a) = 1
    solution = solve_cauchy(a, b, c, DataLine(sympy.S(0), sympy.S(1), sympy.S(0)), sympy.cos(S) + S,
                            sympy.exp(S / 3), S, x=X, y=Y)
    u = solution.solution
    assert solution.type == "parabolic"
    assert sympy.simplify(a * u.diff(X, 2) + b * u.diff(X, Y) + c * u.diff(Y, 2)) == 0
    assert sympy.simplify(u.subs(Y, 0) - (sympy.cos(X) + X)) == 0
    assert sympy.simplify(u.diff(Y).subs(Y, 0) - sympy.exp(X / 3)) == 0
    assert sympy.simplify(u.diff(X, 2) + 2 * u.diff(X, Y) + u.diff(Y, 2)) == 0
    assert len(solution.directions) == 1 and len(solution.domain_of_dependence(0.2, 0.9)) == 1
    assert solution.domain_of_dependence(0.2, 0.9)[0] == pytest.approx((-0.7, 0.0))
    assert "linear along each characteristic" in solution.notes[0]
    assert solution.general.has(sympy.Function("F")) and solution.general.has(sympy.Function("G"))


def test_hadamards_example_and_elliptic_refusal():
    # Hadamard's example (J. Hadamard, "Sur les problemes aux derivees partielles et leur signification
    # physique", Princeton University Bulletin 13, 1902): u = sin(n x) sinh(n y) / n^2 solves u_xx + u_yy = 0
    # with u = 0 and u_y = sin(n x)/n on y = 0; checked here with sympy, then the refusal names it.
    n = sympy.Symbol("n", positive=True)
    u = sympy.sin(n * X) * sympy.sinh(n * Y) / n ** 2
    assert sympy.simplify(u.diff(X, 2) + u.diff(Y, 2)) == 0
    assert u.subs(Y, 0) == 0 and sympy.simplify(u.diff(Y).subs(Y, 0) - sympy.sin(n * X) / n) == 0
    assert float(u.subs({X: 0.5, Y: 1, n: 40})) > 1e10          # data of size 1/40, solution beyond 1e10
    with pytest.raises(CauchyError, match="elliptic.*ill-posed.*Hadamard"):
        solve_cauchy(1, 0, 1, DataLine(sympy.S(0), sympy.S(1), sympy.S(0)), sympy.S(0), sympy.sin(S), S)


def test_characteristic_data_line_is_refused_naming_the_direction():
    with pytest.raises(CauchyError, match=r"family-1 characteristic direction \(dx, dy\) = .*slope dy/dx = 1"):
        solve_cauchy(1, 0, -1, DataLine(sympy.S(1), sympy.S(-1), sympy.S(0)), sympy.S(0), sympy.S(1), S)


def test_cli_json_fields_and_solution_text_reads_back():
    code, out, err = run_cli_args(*["cauchy", "--a", "2", "--b", "-1", "--c", "-3", "--line", "x + 2*y = 1/2",
                              "--u", "s**3 - s", "--du", "sin(2*s)", "--at", "0.3", "0.7", "--json"])
    assert code == 0, err
    document = json.loads(out)
    assert {"type", "solution", "value", "domain_of_dependence"} <= set(document)
    assert document["type"] == "hyperbolic"
    assert document["value"] == pytest.approx(_method_of_characteristics(HYPERBOLIC_CASES[2], (0.3, 0.7)),
                                              rel=1e-7)
    # the parser folds constants such as sqrt(5) in double precision: the text reads back to rounding
    typed_back = sympy.lambdify((X, Y), parse_expression(document["solution"], {"x": X, "y": Y}).value)
    exact = _solution(HYPERBOLIC_CASES[2])
    for point in ((0.3, 0.7), (-1.2, 0.4), (2.0, -0.5)):
        assert typed_back(*point) == pytest.approx(exact.value_at(*point), rel=1e-12)
    assert len(document["domain_of_dependence"]) == 2


@pytest.mark.parametrize(("arguments", "message"), [
    (["--a", "1", "--b", "0", "--c", "1", "--line", "y = 0"], "elliptic"),
    (["--a", "1", "--b", "0", "--c", "-1", "--line", "x = y"], "characteristic direction"),
    (["--a", "1", "--b", "0", "--c", "-1", "--line", "x**2 + y = 0"], "not a straight line"),
    (["--a", "1", "--b", "0", "--c", "-1", "--line", "x + y"], "one '='"),
    (["--a", "x", "--b", "0", "--c", "-1", "--line", "y = 0"], "--a"),
    (["--a", "1", "--b", "0", "--c", "-1", "--line", "y = 0", "--u", "s + x"], "either s"),
    (["--a", "0", "--b", "0", "--c", "0", "--line", "y = 0"], "no second-order"),
])
def test_cli_refuses_bad_problems_with_exit_2(arguments, message):
    defaults = {"--u": "sin(s)", "--du": "0"}
    for option, value in defaults.items():
        if option not in arguments:
            arguments = [*arguments, option, value]
    code, _, err = run_cli_args(*["cauchy", *arguments])
    assert code == 2
    assert message in err and "Traceback" not in err
