"""Steps run as numpy ufuncs give numexpr's bits; separable and broadcast evaluation gives the full grid's bits.

Reference: numexpr itself (the same statement compiled by numexpr and run on the same inputs), and the same
equation evaluated on full meshgrid arrays, where no value can be kept as a row, a column or a scalar.
"""

import numexpr
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core.analysis import classify as classify_module
from core.analysis.classify import classify_grid, classify_points
from core.analysis.discriminant import DiscriminantScratch, normalized_discriminant_into
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.equations.evaluation import EvaluationBuffers, UfuncProgram

# Values where IEEE arithmetic has its special cases: signed zeros, subnormals, huge, infinite, NaN.
SPECIAL = np.array([0.0, -0.0, 1.0, -1.0, 0.5, 3.0, -7.25, 1e-310, -1e-310, 1e300, -1e300, 1.7e308,
                    np.inf, -np.inf, np.nan, 2.0**-1074, 0.1, 1e-170])


def _numexpr(code: str, names: tuple[str, ...], boolean: tuple[str, ...] = ()) -> numexpr.NumExpr:
    return numexpr.NumExpr(code, signature=[(n, bool if n in boolean else np.float64) for n in names])


def _same_bits(left, right) -> bool:
    """Equal bit for bit, NaN for NaN (which NaN an operation returns, its sign, follows operand order in the
    processor and means nothing: every NaN is undefined)."""
    left, right = np.asarray(left), np.asarray(right)
    if left.shape != right.shape or left.dtype != right.dtype:
        return False
    if left.dtype.kind == "f":
        if not np.array_equal(np.isnan(left), np.isnan(right)):
            return False
        left, right = np.where(np.isnan(left), np.nan, left), np.where(np.isnan(right), np.nan, right)
    return left.tobytes() == right.tobytes()


# What codegen writes: arithmetic (numexpr rewrites x/3 as x*(1/3), x**2 as x*x, x**2.5 as x*x*sqrt(x)),
# min/max and sign as where() with NaN and infinity poisoning, comparisons and their and/or.
ARITHMETIC = [
    "(p + q) * r - p / q",
    "(p / 3.0) + (q / 7.0) - (r * 0.1)",
    "(p ** 2.0) + (q ** 3.0) - (r ** 2.5)",
    "(1.0 / p) + (1.0 / sqrt(q)) + (r ** -2.0) + (p ** -0.5)",
    "abs(p - q) + (-(r))",
    "(where((p >= q) | (p != p), p, q) + 0.0 * p + 0.0 * q) - r",
    "where(p > 0, 1.0, where(p < 0, -1.0, p * 0.0)) * (q - r)",
    "where((p < q) & (q <= r), q, r)",
    "where(p != p, q, r)",
    "(1.0 - (p * q * (r + p)))",
    "(-(-p)) * (q - r)",
]


@pytest.mark.parametrize("code", ARITHMETIC)
def test_exact_statements_run_as_ufuncs_with_numexprs_bits(code):
    names = ("p", "q", "r")
    kernel = _numexpr(code, names)
    program = UfuncProgram.from_numexpr(kernel)
    assert program is not None
    p, q, r = np.meshgrid(SPECIAL, SPECIAL, SPECIAL[::-1][:5], indexing="ij")
    with np.errstate(all="ignore"):
        expected = kernel(p, q, r)
    assert _same_bits(program(p, q, r), expected), code
    out = np.empty_like(expected)
    buffers = EvaluationBuffers()
    assert program(p, q, r, out=out, buffers=buffers) is out
    assert _same_bits(out, expected), code


@pytest.mark.parametrize("code", ARITHMETIC)
def test_rows_columns_and_scalars_give_the_full_grids_bits(code):
    # A row, a column and a scalar broadcast together: numpy keeps intermediates in their own shape.
    row, column = SPECIAL[np.newaxis, :], SPECIAL[:, np.newaxis]
    kernel = _numexpr(code, ("p", "q", "r"))
    program = UfuncProgram.from_numexpr(kernel)
    full = np.broadcast_to(row, (SPECIAL.size, SPECIAL.size)).copy(), \
        np.broadcast_to(column, (SPECIAL.size, SPECIAL.size)).copy(), np.full((SPECIAL.size, SPECIAL.size), 0.75)
    with np.errstate(all="ignore"):
        expected = kernel(*full)
    out = np.empty_like(expected)
    program(row, column, np.float64(0.75), out=out, buffers=EvaluationBuffers())
    assert _same_bits(out, expected), code


def test_boolean_inputs_and_results():
    kernel = _numexpr("((p > q) & b) | ~b", ("b", "p", "q"), boolean=("b",))
    program = UfuncProgram.from_numexpr(kernel)
    assert program is not None
    p, q = np.meshgrid(SPECIAL, SPECIAL)
    flags = (np.arange(p.size).reshape(p.shape) % 3) == 0
    assert _same_bits(program(flags, p, q), kernel(flags, p, q))


@pytest.mark.parametrize("code", ["exp(p) + q", "sin(p) * q", "p ** q", "arctan2(p, q)", "(p ** 1.7) - q"])
def test_functions_numpy_may_round_differently_stay_in_numexpr(code):
    assert UfuncProgram.from_numexpr(_numexpr(code, ("p", "q"))) is None


def test_compiled_steps_use_ufuncs_only_where_exact():
    compiled = compile_equation(Equation(a="x*y + 1", b="exp(x*y)", c="1"))
    x, y = np.linspace(-1, 1, 5)[np.newaxis, :], np.linspace(-1, 1, 4)[:, np.newaxis]
    compiled.evaluate(x, y)
    kinds = {type(kernel).__name__ for kernel in compiled._kernels.by_target.values()}
    assert kinds == {"UfuncProgram", "NumExpr"}


# -- separable sub-trees (one axis, parameters) against the full grid, NaN and infinity included -------------
SEPARABLE = Equation(
    a="c2 - u**2", b="-2*u*v", c="c2 - v**2 + sqrt(y)*w",
    definitions={"u": "U*(1 + 0.3*exp(-x**2)*cos(y))/(x - 0.5)", "v": "0.1*U*sin(x) + log(y + 1)",
                 "w": "1/(y - 0.25) + max(x, y**3)", "c2": "1 - (gam - 1)/2*(u**2 + v**2)"},
    parameters={"U": Parameter(0.8), "gam": Parameter(1.4)})


def test_separable_sub_trees_give_the_full_grids_values_bit_for_bit():
    compiled = compile_equation(SEPARABLE)
    plan = compiled.plan()
    assert plan.along_first and plan.along_second and plan.prepared   # the equation has all three kinds
    x = np.array([-1.0, 0.0, 0.5, 1.0, 2.0, -0.0])       # x = 0.5: u divides by zero
    y = np.array([-2.0, -1.0, -0.5, 0.0, 0.25, 1.0, 3.0])   # y < 0: sqrt and log undefined; y = 0.25: 1/0
    xx, yy = np.meshgrid(x, y)
    full = compiled.evaluate(xx, yy)   # every value a full array: nothing kept on an axis
    prepared = compiled.prepare()
    rows, columns = compiled.along_axes(prepared, x, y)
    raw = compiled.evaluate_raw(x[np.newaxis, :], y[:, np.newaxis], prepared={**prepared, **rows, **columns},
                                buffers=EvaluationBuffers())
    for name, value in full.items():
        assert _same_bits(np.broadcast_to(raw[name], xx.shape), value), name
    assert np.isnan(full["c"]).any() and np.isinf(full["a"]).any() | np.isnan(full["a"]).any()


def test_grid_classification_of_separable_equation_matches_points_bit_for_bit():
    compiled = compile_equation(SEPARABLE)
    domain = Domain(-1.0, 2.0, -2.0, 3.0, 301, 257)
    grid = classify_grid(compiled, domain)
    xx, yy = np.meshgrid(domain.x_nodes, domain.y_nodes)
    codes, normalized = classify_points(compiled, xx, yy)
    np.testing.assert_array_equal(grid.codes, codes)
    assert _same_bits(grid.normalized, normalized.astype(np.float32))
    assert 0 < grid.count("undefined") < grid.codes.size


# -- D/S says when it is certainly finite, and the per-thread workspaces -----------------------------------
@settings(max_examples=200)
@given(st.lists(st.sampled_from(list(SPECIAL)), min_size=3, max_size=3),
       st.sampled_from([(5, 7), (1, 7), (5, 1), ()]))
def test_discriminant_reports_finite_only_when_every_value_is_finite(values, shape):
    a, b, c = (np.full(shape, v) for v in values)
    rng = np.random.default_rng(len(shape))
    with np.errstate(all="ignore"):
        a = a * (1 + rng.random(shape)) if shape else a
    out = np.empty(np.broadcast_shapes(np.shape(a), (5, 7)) if shape else ())
    may_be_nan = normalized_discriminant_into(a, b, c, out, DiscriminantScratch(max(out.size, 1)))
    if not may_be_nan:
        assert np.isfinite(out).all()


def test_workspaces_follow_the_block_shape_from_call_to_call():
    compiled = compile_equation(Equation(a="1 + x*y", b="sin(x) - y", c="x - y**2"))
    domains = [Domain(-1, 1, -1, 1, 97, 61), Domain(-2, 1, -1, 3, 40, 150), Domain(-1, 1, -1, 1, 97, 61)]
    fresh = []
    for domain in domains:
        xx, yy = np.meshgrid(domain.x_nodes, domain.y_nodes)
        fresh.append(classify_points(compiled, xx, yy)[0])
    for domain, expected in zip(domains * 2, fresh * 2, strict=True):
        np.testing.assert_array_equal(classify_grid(compiled, domain).codes, expected)


def test_an_error_in_one_block_stops_every_thread_and_reaches_the_caller(monkeypatch):
    compiled = compile_equation(Equation(a="1 + x*y", b="0", c="1"))
    domain = Domain(-1, 1, -1, 1, 4096, 2048)   # 32 blocks of 64 rows on up to 8 threads
    calls = []
    real = classify_module.normalized_discriminant_into

    def failing(a, b, c, out, scratch):
        calls.append(out.shape)
        if len(calls) == 2:
            raise MemoryError("no room")
        return real(a, b, c, out, scratch)

    monkeypatch.setattr(classify_module, "normalized_discriminant_into", failing)
    with pytest.raises(MemoryError, match="no room"):
        classify_grid(compiled, domain)
    # the failing thread's block and at most one more per thread, never the 32 blocks
    assert len(calls) <= 2 * classify_module._WORKERS < 32


def test_the_numexpr_layout_is_checked_before_any_program_is_read(monkeypatch):
    from core.equations import evaluation

    evaluation._layout_understood.cache_clear()
    assert evaluation._layout_understood()          # this numexpr's layout reads as expected: the fast path runs
    swapped = {**evaluation._EXACT_UFUNCS, b"add_ddd": np.subtract}   # as if numexpr's codes had moved
    monkeypatch.setattr(evaluation, "_EXACT_UFUNCS", swapped)
    evaluation._layout_understood.cache_clear()
    try:
        assert not evaluation._layout_understood()
        kernel = numexpr.NumExpr("x + y", signature=(("x", np.float64), ("y", np.float64)))
        assert evaluation.UfuncProgram.from_numexpr(kernel) is None       # every step then runs in numexpr
    finally:
        evaluation._layout_understood.cache_clear()
