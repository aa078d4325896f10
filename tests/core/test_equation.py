"""Compiling equations: definitions in any order, cycles, parameters, and numeric agreement with sympy."""

import numpy as np
import pytest
import sympy

from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.equations.language import ExpressionError

FLOW = Equation(
    a="c2 - u**2",
    b="-2*u*v",
    c="c2 - v**2",
    definitions={  # deliberately out of dependency order
        "c2": "c0**2 - (gam - 1)/2*(u**2 + v**2)",
        "u": "U*(1 + 0.2*exp(-x**2)*cos(y))",
        "v": "0.1*U*sin(x)*piecewise(y < 0, -1, 1)",
    },
    parameters={"U": Parameter(0.8), "gam": Parameter(1.4), "c0": Parameter(1.0)},
)


def test_definitions_are_ordered_by_use():
    compiled = compile_equation(FLOW)
    order = compiled.definition_order
    assert order.index("u") < order.index("c2") and order.index("v") < order.index("c2")


def test_values_agree_with_sympy_reference():
    # Reference: sympy's own lambdify (mpmath backend) of the substituted coefficients.
    compiled = compile_equation(FLOW)
    rng = np.random.default_rng(7)
    xs, ys = rng.uniform(-2, 2, 50), rng.uniform(-1, 1, 50)
    a, b, c = compiled.coefficients(xs, ys)
    symbols = [compiled.symbols[n] for n in ("x", "y", "U", "gam", "c0")]
    for name, values in zip("abc", (a, b, c), strict=True):
        reference = sympy.lambdify(symbols, compiled.substituted[name], modules="mpmath")
        expected = [float(reference(x, y, 0.8, 1.4, 1.0)) for x, y in zip(xs, ys, strict=True)]
        np.testing.assert_allclose(values, expected, rtol=1e-13, atol=1e-15)


def test_parameter_change_needs_no_recompilation():
    compiled = compile_equation(FLOW)
    slow = compiled.coefficients(0.0, 0.0, parameters={"U": 0.5})[0]
    fast = compiled.coefficients(0.0, 0.0, parameters={"U": 0.9})[0]
    # a = c0^2 - (gam-1)/2 (u^2+v^2) - u^2 with u = 1.2 U, v = 0 at the origin.
    assert float(slow) == pytest.approx(1 - 1.2 * (1.2 * 0.5) ** 2, rel=1e-14)
    assert float(fast) == pytest.approx(1 - 1.2 * (1.2 * 0.9) ** 2, rel=1e-14)


def test_cycles_are_reported_with_their_path():
    eq = Equation(a="p", b="0", c="1", definitions={"p": "q + 1", "q": "2*p"})
    with pytest.raises(ExpressionError, match=r"cycle: p -> q -> p"):
        compile_equation(eq)


@pytest.mark.parametrize(
    ("equation", "field", "fragment"),
    [
        (Equation(a="y", b="w", c="1"), "b", "unknown name 'w'"),
        (Equation(a="y", b="0", c="1", definitions={"r": "x^2"}), "definitions.r", "x**2"),
        (Equation(a="y", b="0", c="1", parameters={"sin": Parameter(1.0)}), "parameters.sin", "built-in"),
        (Equation(a="y", b="0", c="1", parameters={"x": Parameter(1.0)}), "parameters.x", "same name"),
        (Equation(a="y", b="0", c="1", variables=("x", "x")), "variables", "must differ"),
        (Equation(a="y", b="0", c="1", parameters={"k": Parameter(float("nan"))}), "parameters.k", "finite"),
    ],
)
def test_errors_name_the_field(equation, field, fragment):
    with pytest.raises(ExpressionError) as info:
        compile_equation(equation)
    assert info.value.field == field
    assert fragment in str(info.value)


def test_custom_variable_names():
    compiled = compile_equation(Equation(a="N2 - w**2", b="0", c="f**2 - w**2", variables=("x", "z"),
                                         definitions={"N2": "exp(z)"},
                                         parameters={"w": Parameter(0.5), "f": Parameter(0.1)}))
    a, _, c = compiled.coefficients(np.array([0.0]), np.array([0.0]))
    assert a[0] == pytest.approx(0.75) and c[0] == pytest.approx(0.01 - 0.25)


def test_non_real_and_singular_values_become_nan_or_inf_not_errors():
    compiled = compile_equation(Equation(a="sqrt(x)", b="1/y", c="log(x)"))
    a, b, c = compiled.coefficients(np.array([-1.0, 4.0]), np.array([0.0, 2.0]))
    assert np.isnan(a[0]) and np.isinf(b[0]) and np.isnan(c[0])
    assert (a[1], b[1]) == (2.0, 0.5)


def test_min_max_and_piecewise_propagate_nan():
    compiled = compile_equation(Equation(a="max(sqrt(x), 0)", b="min(0, sqrt(x))",
                                         c="piecewise(sqrt(x) < 1, 1, 2)"))
    a, b, c = compiled.coefficients(np.array([-1.0, 4.0]), np.array([0.0, 0.0]))
    assert np.isnan([a[0], b[0], c[0]]).all()
    assert (a[1], b[1], c[1]) == (2.0, 0.0, 2.0)


def test_symbolic_discriminant_is_b2_minus_4ac():
    compiled = compile_equation(Equation(a="1", b="-2*x", c="1 - y**2"))
    x, y = compiled.symbols["x"], compiled.symbols["y"]
    assert sympy.expand(compiled.symbolic_discriminant - 4 * (x**2 + y**2 - 1)) == 0


def test_trade_readouts_and_peak_quantity_must_name_known_values():
    good = Equation(a="c2 - u**2", b="0", c="c2", definitions={"u": "1.2", "c2": "1", "M": "u/sqrt(c2)"},
                    parameters={"gamma": Parameter(1.4)},
                    trade={"mach": {"u": "u", "v": "u", "c2": "c2", "gamma": "gamma"}}, peak_quantity="M")
    assert compile_equation(good).equation.peak_quantity == "M"
    with pytest.raises(ExpressionError) as info:
        compile_equation(Equation(a="1", b="0", c="-1", trade={"mach": {"u": "q", "v": "q", "c2": "q"}}))
    assert info.value.field == "trade.mach.u"
    with pytest.raises(ExpressionError, match="unknown trade quantity kind"):
        compile_equation(Equation(a="1", b="0", c="-1", trade={"sparkle": {}}))
    with pytest.raises(ExpressionError) as info:
        compile_equation(Equation(a="1", b="0", c="-1", peak_quantity="Mach"))
    assert info.value.field == "peak_quantity"
