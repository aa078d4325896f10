"""Local type from the discriminant, on grids and on arbitrary points."""

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from core.analysis.classify import TypeCode, classify_grid, classify_points
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.progress import Cancelled

SQUARE = Domain(-1.0, 1.0, -1.0, 1.0, 81, 61)


def type_map(a, b, c, domain=SQUARE, **definitions):
    return classify_grid(compile_equation(Equation(a=a, b=b, c=c, definitions=definitions)), domain)


@pytest.mark.parametrize(
    ("a", "b", "c", "expected"),
    [
        # The three textbook types (common practice, no source): wave u_xx - u_yy, heat u_xx - u_y, Laplace.
        ("1", "0", "-1", TypeCode.HYPERBOLIC),
        ("1", "0", "0", TypeCode.PARABOLIC),
        ("1", "0", "1", TypeCode.ELLIPTIC),
        # u_xy = 0 is hyperbolic with a = 0: no division by a anywhere.
        ("0", "1", "0", TypeCode.HYPERBOLIC),
    ],
)
def test_textbook_types(a, b, c, expected):
    result = type_map(a, b, c)
    assert (result.codes == expected).all()
    assert result.fractions[expected.label] == 1.0


def test_tricomi_is_elliptic_above_and_hyperbolic_below():
    # y u_xx + u_yy = 0: D = -4y (Bers 1958, Mathematical Aspects of Subsonic and Transonic Gas Dynamics).
    domain = Domain(-1, 1, -1, 1, 11, 21)
    result = type_map("y", "0", "1", domain)
    y = domain.y_nodes
    assert (result.codes[y > 0] == TypeCode.ELLIPTIC).all()
    assert (result.codes[y < 0] == TypeCode.HYPERBOLIC).all()
    assert (result.codes[np.isclose(y, 0, atol=1e-15)] == TypeCode.PARABOLIC).all()
    assert result.fractions["parabolic"] == pytest.approx(1 / 21)


def test_unit_circle_discriminant():
    # u_xx - 2x u_xy + (1 - y^2) u_yy: D = 4(x^2 + y^2 - 1), elliptic inside the unit circle
    # (Brown and Churchill, Fourier Series and Boundary Value Problems, ch. 1 exercises).
    domain = Domain(-2, 2, -2, 2, 101, 101)
    result = type_map("1", "-2*x", "1 - y**2", domain)
    xx, yy = np.meshgrid(domain.x_nodes, domain.y_nodes)
    radius2 = xx**2 + yy**2
    keep = (np.abs(xx) > 1e-9) | (np.abs(np.abs(yy) - 1) > 1e-9)  # S = 0 only at (0, +-1)
    assert (result.codes[radius2 < 0.999] == TypeCode.ELLIPTIC).all()
    assert (result.codes[radius2 > 1.001] == TypeCode.HYPERBOLIC).all()
    with np.errstate(all="ignore"):
        expected = 4 * (radius2 - 1) / (4 * xx**2 + 4 * np.abs(1 - yy**2))
    np.testing.assert_allclose(result.normalized[keep], expected[keep], rtol=1e-6, atol=1e-7)


def test_tolerance_is_scale_free():
    # Coefficients of size 1e-5: D ~ 4e-10 everywhere, still clearly hyperbolic and elliptic.
    assert (type_map("1e-5", "0", "-1e-5").codes == TypeCode.HYPERBOLIC).all()
    assert (type_map("1e-5", "0", "1e-5").codes == TypeCode.ELLIPTIC).all()
    assert (type_map("1e8*(1+x**2)", "0", "-1e-9").codes == TypeCode.HYPERBOLIC).all()


def test_underflowing_coefficients_keep_their_type():
    # b^2 and ac both underflow in doubles (found by a property test): the type must still be that of the
    # exact D. Reference: D in exact rational arithmetic (Python's fractions) of the same double coefficients.
    domain = Domain(-1, 1, -1, 1, 21, 21)
    result = type_map("1e-200*x", "1e-170*y", "1e-200", domain)
    for j, y in enumerate(domain.y_nodes):
        for i, x in enumerate(domain.x_nodes):
            a, b, c = (Fraction(1e-200 * float(x)), Fraction(1e-170 * float(y)), Fraction(1e-200))
            exact = b * b - 4 * a * c
            expected = (TypeCode.HYPERBOLIC if exact > 0 else TypeCode.ELLIPTIC if exact < 0
                        else TypeCode.PARABOLIC)
            assert result.codes[j, i] == expected, (x, y)
    assert (result.codes[domain.y_nodes != 0] == TypeCode.HYPERBOLIC).all()


def test_degenerate_parabolic_everywhere_despite_rounding():
    # x^2 u_xx + 2xy u_xy + y^2 u_yy: D = 4x^2y^2 - 4x^2y^2 = 0 identically; rounding must not show types.
    result = type_map("x**2", "2*x*y", "y**2", Domain(-1.3, 0.7, -0.9, 1.1, 97, 89))
    assert (result.codes == TypeCode.PARABOLIC).all()


def test_undefined_points_get_their_own_code_and_no_nan_spreads():
    domain = Domain(-1, 1, -1, 1, 21, 21)
    result = type_map("sqrt(x)", "1/y", "1", domain)
    x = domain.x_nodes
    assert (result.codes[:, x < 0] == TypeCode.UNDEFINED).all()
    assert (result.codes[np.isclose(domain.y_nodes, 0, atol=1e-15), :] == TypeCode.UNDEFINED).all()
    defined = result.codes != TypeCode.UNDEFINED
    assert np.isfinite(result.normalized[defined]).all()
    assert np.isnan(result.normalized[~defined]).all()
    assert result.undefined_mask.sum() == result.count("undefined")


def test_grid_matches_pointwise_classification():
    compiled = compile_equation(Equation(a="1 - 2*x**2*exp(y)", b="sin(3*x*y)", c="1 + y"))
    domain = Domain(-1, 1, -1, 1, 300, 700)  # several blocks, uneven sizes
    grid = classify_grid(compiled, domain)
    xx, yy = np.meshgrid(domain.x_nodes, domain.y_nodes)
    codes, normalized = classify_points(compiled, xx, yy)
    np.testing.assert_array_equal(grid.codes, codes)
    np.testing.assert_array_equal(grid.normalized, normalized.astype(np.float32))
    assert sum(grid.fractions.values()) == pytest.approx(1.0)


def test_cancel_and_progress():
    compiled = compile_equation(Equation(a="y", b="0", c="1"))
    domain = Domain(-1, 1, -1, 1, 512, 2048)
    seen = []
    classify_grid(compiled, domain, progress=seen.append)
    assert seen[-1] == pytest.approx(1.0) and len(seen) > 2
    with pytest.raises(Cancelled):
        classify_grid(compiled, domain, cancel=lambda: True)


def test_output_buffers_are_reused():
    compiled = compile_equation(Equation(a="y", b="0", c="1"))
    domain = Domain(-1, 1, -1, 1, 40, 30)
    out = (np.zeros((30, 40), np.int8), np.zeros((30, 40), np.float32))
    result = classify_grid(compiled, domain, out=out)
    assert result.codes is out[0] and (out[0] != 0).any()
    with pytest.raises(ValueError, match="shape"):
        classify_grid(compiled, domain, out=(np.zeros((3, 4), np.int8), np.zeros((3, 4), np.float32)))


def test_type_code_accepts_names():
    assert TypeCode.coerce("Hyperbolic") is TypeCode.HYPERBOLIC
    assert TypeCode.coerce(1) is TypeCode.ELLIPTIC
    with pytest.raises(ValueError, match="expected one of"):
        TypeCode.coerce("ultra")


# Property: multiplying a, b, c by a positive function never changes the type (common practice, no source).
# (Values are kept away from the underflow range, where a*c itself rounds to 0 before any scaling.)
_VALUES = st.one_of(st.just(0.0), st.floats(1e-6, 3), st.floats(-3, -1e-6))


@settings(max_examples=40, deadline=None)
@given(_VALUES, _VALUES, _VALUES, st.floats(0.01, 100))
def test_type_is_invariant_under_positive_scaling(p, q, r, k):
    base = compile_equation(Equation(a=f"{p} + x", b=f"{q}*y", c=f"{r} - x*y"))
    scaled = compile_equation(Equation(a=f"({p} + x)*s", b=f"{q}*y*s", c=f"({r} - x*y)*s",
                                       definitions={"s": f"{k}*(1 + x**2)*exp(y)"}))
    xx, yy = np.meshgrid(np.linspace(-1, 1, 17), np.linspace(-1, 1, 13))
    codes, normalized = classify_points(base, xx, yy)
    scaled_codes, scaled_normalized = classify_points(scaled, xx, yy)
    np.testing.assert_allclose(normalized, scaled_normalized, rtol=1e-9, atol=1e-12)
    clear = np.abs(normalized) > 1e-8
    np.testing.assert_array_equal(codes[clear], scaled_codes[clear])


@pytest.mark.parametrize("scale", ["1e-300", "1e-170", "1e-100", "1e100", "1e160", "1e300"])
def test_the_type_does_not_depend_on_the_size_of_the_coefficients(scale):
    # Multiplying the equation by a positive constant changes no type (common practice, no source): Laplace
    # stays elliptic, the wave equation hyperbolic, and Tricomi's y u_xx + u_yy keeps its map node for node.
    assert (type_map(f"{scale}", "0", f"{scale}").codes == TypeCode.ELLIPTIC).all()
    assert (type_map(f"{scale}", "0", f"-{scale}").codes == TypeCode.HYPERBOLIC).all()
    np.testing.assert_array_equal(type_map(f"{scale}*y", "0", f"{scale}").codes, type_map("y", "0", "1").codes)


def test_genuinely_infinite_or_undefined_coefficients_stay_undefined():
    compiled = compile_equation(Equation(a="1/x", b="0", c="1"))
    codes, normalized = classify_points(compiled, np.array([0.0, 1e-320, 2.0]), np.zeros(3))
    # 1/0 is infinite and 1/1e-320 overflows to infinity: both undefined; 1/2 is elliptic.
    assert codes.tolist() == [TypeCode.UNDEFINED, TypeCode.UNDEFINED, TypeCode.ELLIPTIC]
    assert np.isnan(normalized[:2]).all()


@settings(max_examples=200, deadline=None)
@given(st.floats(-1e3, 1e3), st.floats(-1e3, 1e3), st.floats(-1e3, 1e3), st.integers(-900, 900))
@example(5e-324, 0.0, 1.0, 78)      # a tiny a beside c = 1: a common power of two for a, b, c would lose it
def test_scaling_by_any_representable_power_of_two_keeps_the_type(a, b, c, exponent):
    # D(2^k a, 2^k b, 2^k c) = 4^k D(a, b, c): the same sign for every k whose products stay representable
    # (exact arithmetic, common practice, no source).
    compiled = compile_equation(Equation(a="p*A", b="p*B", c="p*C", parameters={
        "A": Parameter(a), "B": Parameter(b), "C": Parameter(c), "p": Parameter(1.0)}))
    scaled = math.ldexp(1.0, exponent)
    if any(v != 0 and not (1e-300 < abs(v) * scaled < 1e300) for v in (a, b, c)):
        return
    point = (np.zeros(1), np.zeros(1))
    plain, _ = classify_points(compiled, *point)
    big, _ = classify_points(compiled, *point, parameters={"p": scaled})
    assert big.tolist() == plain.tolist()


def test_underflow_in_part_of_a_grid_is_found_when_coefficients_are_rows_or_columns():
    # c is a column (depends on y only) that underflows b^2 and ac in half the rows: those rows must still be
    # elliptic like the others (a u_xx + c u_yy with a, c > 0: common practice, no source).
    result = type_map("1e-170", "0", "piecewise(y < 0, 1e-170, 1)")
    assert (result.codes == TypeCode.ELLIPTIC).all()
    result = type_map("1e160", "0*x", "piecewise(y < 0, -1e160, -1)")
    assert (result.codes == TypeCode.HYPERBOLIC).all()
