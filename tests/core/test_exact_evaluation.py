"""Exact on every input: points are evaluated from the typed text, never from sympy's simplified form, and
number literals that doubles cannot hold are refused with their place."""

import ast
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core.analysis.classify import TypeCode, classify_grid
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation
from core.equations.language import ExpressionError
from core.equations.parser import parse_expression, tidy_expression
from tests.core.cli_runner import run_json

XS = np.array([-2.0, -1.0, -0.5, 0.0, 0.5, 1.0, 3.0])


def coefficient_a(text: str, x, y=0.0) -> np.ndarray:
    compiled = compile_equation(Equation(a=text, b="0", c="1"))
    x = np.asarray(x, dtype=float)
    return compiled.coefficients(x, np.broadcast_to(np.asarray(y, dtype=float), x.shape))[0]


def test_x_over_x_is_undefined_exactly_on_the_column_x_equals_0():
    # x/x is 0/0 at x = 0 (IEEE 754: 0/0 is NaN) and 1 elsewhere; sympy's x/x -> 1 must not hide that.
    compiled = compile_equation(Equation(a="x/x", b="0", c="1"))
    type_map = classify_grid(compiled, Domain(-1, 1, -1, 1, nx=5, ny=5))
    assert type_map.x[2] == 0.0
    undefined = type_map.codes == TypeCode.UNDEFINED
    assert undefined[:, 2].all() and not undefined[:, [0, 1, 3, 4]].any()
    assert (type_map.codes[:, [0, 1, 3, 4]] == TypeCode.ELLIPTIC).all()   # a = c = 1, b = 0: D = -4
    # the symbolic view may simplify (and says so); the points do not
    assert tidy_expression(compiled.symbolic["a"]) == 1


@pytest.mark.parametrize(
    ("text", "undefined_where", "value"),
    [
        # sqrt of a negative number has no real value (common practice, no source): sympy's x would hide it
        ("sqrt(x)**2", XS < 0, XS),
        ("abs(x)/x", XS == 0, np.sign(XS)),
        ("0*log(x)", XS <= 0, 0 * XS),                       # log(0) is -inf, 0*inf is NaN (IEEE 754)
        ("(x**2)**0.5", np.zeros(7, bool), np.abs(XS)),      # defined everywhere, as typed
        ("log(exp(x))", np.zeros(7, bool), XS),
        ("sqrt(x) - sqrt(x)", XS < 0, 0 * XS),
        ("piecewise(sqrt(x) < 0 and sqrt(x) >= 0, 1, 2)", XS < 0, 2 + 0 * XS),   # a compared NaN poisons
        ("piecewise(x < 0, 1, x >= 0, 2, 3)", np.zeros(7, bool), np.where(XS < 0, 1.0, 2.0)),
    ],
)
def test_typed_text_decides_where_a_value_is_defined(text, undefined_where, value):
    a = coefficient_a(text, XS)
    assert np.array_equal(~np.isfinite(a), undefined_where)
    np.testing.assert_allclose(a[~undefined_where], value[~undefined_where], rtol=1e-15)


def test_cancelling_text_keeps_nan_inputs_undefined():
    # x - x and x/x are NaN where x is NaN (outside background data, a quantity is NaN): IEEE 754.
    for text in ("x - x", "x/x", "0*x", "x**0 * x"):
        a = coefficient_a(text, [np.nan, 2.0])
        assert np.isnan(a[0]) and np.isfinite(a[1]), text


def test_constant_comparisons_keep_the_quantities_a_piecewise_compares():
    # 2 < 1 decides nothing alone; sqrt(x) is still compared, so x < 0 stays undefined (codegen's NaN rule)
    for text in ("piecewise(2 < 1 and sqrt(x) < 1, 5, 6)", "piecewise(1 < 2, 5, sqrt(x) < 1, 6, 7)",
                 "piecewise(1 < 2 or sqrt(x) < 1, 5, 6)"):
        a = coefficient_a(text, XS)
        assert np.array_equal(np.isnan(a), XS < 0), text
    assert coefficient_a("piecewise(2 < 1, x, 1 < 2, 2*x, 0)", XS) == pytest.approx(2 * XS)


# -- the typed text against a plain-Python evaluation of the same text --------------------------------------
_FUNCTIONS = {"sqrt": math.sqrt, "log": math.log, "exp": math.exp, "abs": abs, "sin": math.sin,
              "atan": math.atan, "tanh": math.tanh}


def _reference(text: str, x: float, y: float) -> float:
    """Python's math module on floats, inside this test only: an exception or a non-finite step is undefined."""

    def value(node: ast.AST) -> float:
        if isinstance(node, ast.Constant):
            result = float(node.value)
        elif isinstance(node, ast.Name):
            result = {"x": x, "y": y}[node.id]
        elif isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
            result = -value(node.operand)
        elif isinstance(node, ast.BinOp):
            left, right = value(node.left), value(node.right)
            operation = {ast.Add: float.__add__, ast.Sub: float.__sub__, ast.Mult: float.__mul__,
                         ast.Div: float.__truediv__, ast.Pow: math.pow}[type(node.op)]
            result = operation(left, right)
        elif isinstance(node, ast.Call) and node.func.id in ("min", "max"):
            args = [value(a) for a in node.args]
            result = (min if node.func.id == "min" else max)(args)
        elif isinstance(node, ast.Call) and node.func.id == "piecewise":
            condition, chosen, otherwise = node.args
            left, right = value(condition.left), value(condition.comparators[0])
            result = value(chosen) if left < right else value(otherwise)
        else:
            result = _FUNCTIONS[node.func.id](*[value(a) for a in node.args])
        if not math.isfinite(result):
            raise ValueError("not finite")
        return result

    try:
        return value(ast.parse(text, mode="eval").body)
    except (ValueError, ZeroDivisionError, OverflowError):
        return math.nan


_LEAVES = st.sampled_from(["x", "y", "0", "1", "2", "0.5", "3"])


def _grow(inner):
    unary = st.tuples(st.sampled_from(["-", *sorted(_FUNCTIONS)]), inner).map(
        lambda p: f"-({p[1]})" if p[0] == "-" else f"{p[0]}({p[1]})")
    binary = st.tuples(inner, st.sampled_from(["+", "-", "*", "/"]), inner).map(lambda p: f"({p[0]}){p[1]}({p[2]})")
    power = st.tuples(inner, st.sampled_from(["2", "0.5", "-1", "y"])).map(lambda p: f"({p[0]})**{p[1]}")
    extremum = st.tuples(st.sampled_from(["min", "max"]), inner, inner).map(lambda p: f"{p[0]}({p[1]}, {p[2]})")
    choice = st.tuples(inner, inner, inner, inner).map(lambda p: f"piecewise(({p[0]}) < ({p[1]}), {p[2]}, {p[3]})")
    return unary | binary | power | extremum | choice


EXPRESSIONS = st.recursive(_LEAVES, _grow, max_leaves=8)
POINTS = np.array([(x, y) for x in (-2.0, -0.5, 0.0, 0.5, 1.0, 2.5) for y in (-1.0, 0.0, 1.0, 2.0)])


@settings(max_examples=400)
@given(EXPRESSIONS)
def test_compiled_values_are_the_typed_text_evaluated_in_python(text):
    # Reference: Python's math module evaluating the same text. Where any step is not a finite real number
    # (an exception or an infinity), the value is undefined: the classifier marks every non-finite value.
    try:
        compiled = compile_equation(Equation(a=text, b="0", c="1"))
    except ExpressionError as error:   # only constants without a double value and divisions by 0 are refused
        assert "constant" in error.message or "division by zero" in error.message, (text, error.message)
        return
    a = np.broadcast_to(compiled.coefficients(POINTS[:, 0], POINTS[:, 1])[0], len(POINTS))
    expected = np.array([_reference(text, x, y) for x, y in POINTS])
    undefined = np.isnan(expected)
    assert np.array_equal(~np.isfinite(a), undefined), (text, a, expected)
    np.testing.assert_allclose(a[~undefined], expected[~undefined], rtol=1e-12, atol=0, err_msg=text)


# -- number literals ----------------------------------------------------------------------------------------
SYMBOLS = {name: symbol for name, symbol in compile_equation(Equation(a="x", b="0", c="1")).symbols.items()}


@pytest.mark.parametrize(
    ("text", "fragment", "column"),
    [
        # the largest double is 1.7976931348623157e308 (IEEE 754 binary64; Python's sys.float_info.max)
        ("1e309", "number 1e309 is beyond double precision", 1),
        ("1e999", "number 1e999 is beyond double precision", 1),
        ("-1e309", "number 1e309 is beyond double precision", 2),
        ("x + 2*1e309", "number 1e309", 7),
        ("1e308*10", "constant 1e308*10 overflows double precision", 6),    # the column of the operator
        ("x + (1e308) * 10", "overflows double precision", 13),
        ("1e308 + 1e308", "overflows double precision", 7),
        ("10**400", "overflows double precision", 3),
        ("exp(1000)", "constant exp(1000) overflows", 1),
        # above 2**53 doubles skip integers (IEEE 754 binary64 has a 53-bit significand)
        ("9007199254740993", "integer is too large to be exact", 1),
        ("x + 99999999999999999999", "write 1e+20 to accept rounding", 5),
        ("-9007199254740993*x", "integer is too large", 2),
        ("9" * 400, "integer is too large for double precision", 1),
        ("1e-400", "number 1e-400 is below double precision", 1),   # would silently be 0
        ("x/(1 - 1)", "division by zero (x/(1 - 1))", 2),           # undefined everywhere: said at once
    ],
)
def test_literals_doubles_cannot_hold_are_refused_with_their_column(text, fragment, column):
    with pytest.raises(ExpressionError) as info:
        parse_expression(text, SYMBOLS)
    assert fragment in info.value.message
    assert info.value.column == column
    assert "\n" not in str(info.value)


@pytest.mark.parametrize(("text", "value"), [("1e308", 1e308), ("1.7976931348623157e308", 1.7976931348623157e308),
                                              ("9007199254740992", 2.0**53), ("5e-324", 5e-324), ("0e-400", 0.0),
                                              ("-1.7976931348623157e308", -1.7976931348623157e308)])
def test_literals_doubles_hold_are_accepted(text, value):
    assert float(parse_expression(text, SYMBOLS).value) == value


def test_command_line_counts_the_undefined_column():
    # x/x on a 5 x 5 grid of [-1, 1]^2: the column x = 0 (5 of 25 nodes) is undefined.
    document = run_json("classify", "--a", "x/x", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1",
                        "--grid", "5")
    assert document["fractions"]["undefined"] == pytest.approx(1 / 5, abs=1e-15)
    assert document["fractions"]["elliptic"] == pytest.approx(4 / 5, abs=1e-15)
