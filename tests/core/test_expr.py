"""The whitelist expression parser: what it accepts, what it refuses, and where it says the problem is."""

import math

import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from core.equations.language import ExpressionError, check_name
from core.equations.parser import find_data_names, parse_expression, tidy_expression

X, Y, K = sympy.symbols("x y k", real=True)
SYMBOLS = {"x": X, "y": Y, "k": K}


def parse(text):
    return parse_expression(text, SYMBOLS, variables=("x", "y")).value


def test_arithmetic_builds_the_sympy_tree():
    assert sympy.simplify(parse("x**2 - 4*k*y") - (X**2 - 4 * K * Y)) == 0
    assert tidy_expression(parse("-(x + 1)/2")) == -(X + 1) / 2


def test_constants_and_functions_match_sympy():
    # Reference values from sympy itself.
    value = parse("sin(x)*exp(y) + atan2(y, x) + sqrt(abs(x)) + max(x, y, 0) + heaviside(x)")
    point = {X: 0.3, Y: -0.7}
    expected = (math.sin(0.3) * math.exp(-0.7) + math.atan2(-0.7, 0.3) + math.sqrt(0.3) + 0.3 + 1.0)
    assert float(value.subs(point)) == pytest.approx(expected, rel=1e-14)


def test_constant_subexpressions_are_folded_to_floats():
    value = tidy_expression(parse("2*pi*k + sqrt(2)"))
    assert value.free_symbols == {K}
    assert float(value.subs(K, 0)) == pytest.approx(math.sqrt(2), rel=1e-15)
    assert float(value.coeff(K)) == pytest.approx(2 * math.pi, rel=1e-15)


def test_folding_refuses_overflow_instead_of_hanging():
    # sympy's own evaluation of this constant can hang; the parser folds in doubles and reports overflow.
    with pytest.raises(ExpressionError, match="overflow"):
        parse("max(exp(exp(exp(exp(100)))), 1)")


def test_piecewise_picks_the_first_true_branch():
    value = parse("piecewise(x < 0, 1, x < 1, x**2, 3)")
    assert float(value.subs(X, -2)) == 1
    assert float(value.subs(X, 0.5)) == 0.25
    assert float(value.subs(X, 4)) == 3


@pytest.mark.parametrize(
    ("text", "fragment", "column"),
    [
        ("x^2", "write x**2", 2),
        ("2x + 1", "write 2*x", 1),
        ("x + q", "unknown name 'q'", 5),
        ("foo(x)", "unknown function 'foo'", 1),
        ("Sin(x)", "case-sensitive", 1),
        ("x.real", "attribute access", 1),
        ("__import__('os').system('true')", "only plain function names", None),
        ("x[0]", "indexing", 1),
        ("lambda: 1", "lambda", 1),
        ("x if y else k", "piecewise", 1),
        ("(x + ", "syntax error", None),
        ("x ** 1000", "exponent", 1),
        ("sqrt(-1)", "no real value", 1),
        ("1/0", "division by zero", 1),
        ("x < 1", "comparison", None),
        ("sin(x, y)", "takes 1 argument", 1),
        ("x == y", "no == or !=", 1),
        ("'text'", "only numbers", 1),
        ("", "empty", None),
        ("x\u00b2", "ASCII", 2),
    ],
)
def test_bad_input_says_what_and_where(text, fragment, column):
    with pytest.raises(ExpressionError) as info:
        parse(text)
    assert fragment in str(info.value)
    if column is not None:
        assert info.value.column == column


def test_size_and_depth_are_bounded():
    with pytest.raises(ExpressionError, match="longer than"):
        parse("x+" * 1500 + "x")
    with pytest.raises(ExpressionError, match="nested too deeply"):
        parse("sin(" * 150 + "-" * 60 + "x" + ")" * 150)
    with pytest.raises(ExpressionError, match="nested too deeply|too many nested"):
        parse("(" * 300 + "x" + ")" * 300)
    with pytest.raises(ExpressionError, match="too large"):
        parse("max(" + ",".join(["x"] * 650) + ")")
    long_sum = parse("+".join(["x*y"] * 150))  # a long sum is not "deep": one Add of 150 terms, as typed
    assert isinstance(long_sum, sympy.Add) and len(long_sum.args) == 150
    assert tidy_expression(long_sum) == 150 * X * Y


@pytest.mark.parametrize("name", ["sin", "pi", "e", "lambda", "x y", "1x", "_hidden", "caf\u00e9", "a" * 41])
def test_names_that_shadow_or_are_not_plain_identifiers_are_refused(name):
    with pytest.raises(ExpressionError):
        check_name(name)


def test_diff_is_only_for_data_quantities():
    symbols = dict(SYMBOLS, h=sympy.Symbol("h", real=True))
    symbols["diff(h,x)"] = sympy.Symbol("diff(h,x)", real=True)
    parsed = parse_expression("1 - diff(h, x)", symbols, data_names=("h",), variables=("x", "y"))
    assert "diff(h,x)" in parsed.names
    with pytest.raises(ExpressionError, match="data quantities"):
        parse_expression("diff(k, x)", symbols, data_names=("h",), variables=("x", "y"))


def test_unknown_names_are_found_as_data_quantities_by_the_same_parse():
    parsed = find_data_names("k*u - diff(w, y) + sin(x)*pi + h2", SYMBOLS, variables=("x", "y"),
                             reserved=("a", "b", "c"))
    assert parsed.data_names == {"u", "w", "h2"}
    assert parsed.names == {"k", "u", "diff(w,y)", "x", "h2"}
    # the value is the one parse_expression builds once those names are symbols (sympy is the reference)
    u, h2 = sympy.symbols("u h2", real=True)
    expected = K * u - sympy.Symbol("diff(w,y)", real=True) + sympy.sin(X) * math.pi + h2
    assert sympy.simplify(parsed.value - expected) == 0
    assert find_data_names("k + x", SYMBOLS, variables=("x", "y")).data_names == frozenset()
    # coefficient names, functions and invalid names are never data; diff() of a known name stays refused
    for text, fragment in [("a + 1", "unknown name 'a'"), ("sin + 1", "is a function"),
                           ("diff(k, x)", "data quantities"), ("diff(u, z)", "independent variable"),
                           ("q" * 41 + " + 1", "unknown name 'qqq"), ("u % 2", "operator '%'")]:
        with pytest.raises(ExpressionError, match=fragment):
            find_data_names(text, SYMBOLS, variables=("x", "y"), reserved=("a", "b", "c"))


# Property: any text either parses into a sympy expression or raises ExpressionError, never anything else.
@settings(max_examples=300, deadline=None)
@given(st.text(alphabet="xyk0123456789.+-*/()^<> ,episqrtamx_[]'\"=", max_size=40))
def test_parser_never_raises_anything_but_expression_error(text):
    try:
        result = parse(text)
    except ExpressionError:
        return
    assert isinstance(result, sympy.Basic)


# Property: integer polynomials round-trip through text exactly (sympy is the reference).
@settings(max_examples=100, deadline=None)
@given(st.lists(st.integers(-20, 20), min_size=1, max_size=5), st.integers(0, 4))
def test_polynomials_match_sympy(coefficients, power):
    text = " + ".join(f"({c})*x**{i}*y**{power}" for i, c in enumerate(coefficients))
    expected = sum(c * X**i * Y**power for i, c in enumerate(coefficients))
    assert sympy.expand(parse(text) - expected) == 0
