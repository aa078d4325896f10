"""The generated program: shared sub-expressions, bounded size, hoisting, evaluating only what is asked."""

import threading

import numexpr
import numpy as np
import pytest
import sympy

from core.analysis.classify import TypeCode, classify_grid
from core.domain import Domain
from core.equations import codegen
from core.equations.codegen import build_program
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.equations.evaluation import EvaluationBuffers
from core.equations.language import ExpressionError
from core.progress import Cancelled

ARGUMENTS = [f"sin({k}*x + y)*exp(-{k}*y**2)" for k in range(1, 13)]


def _maximum(count: int) -> Equation:
    return Equation(a=f"max({', '.join(ARGUMENTS[:count])})", b="0", c="1")


def test_each_argument_of_max_is_written_once():
    compiled = compile_equation(_maximum(12))
    text = "\n".join(statement.code for statement in compiled.program)
    assert text.count("sin(") == 12 and text.count("exp(") == 12


def test_program_grows_linearly_with_the_arguments_of_max():
    six, twelve = (compile_equation(_maximum(n)).program_characters for n in (6, 12))
    assert twelve < 2000
    assert twelve / six < 2.5
    # each argument also poisons its exp() (exp(-inf) = 0 must stay undefined): about 5 statements an argument
    steps_six, steps_twelve = (len(compile_equation(_maximum(n)).program) for n in (6, 12))
    assert steps_twelve < 70 and steps_twelve / steps_six < 2.5


def test_max_of_twelve_matches_numpy():
    # Reference: numpy's fmax-free maximum over the same arguments (no NaN here).
    compiled = compile_equation(_maximum(12))
    x, y = np.meshgrid(np.linspace(-2, 2, 37), np.linspace(-2, 2, 29))
    expected = np.max([np.sin(k * x + y) * np.exp(-k * y**2) for k in range(1, 13)], axis=0)
    np.testing.assert_allclose(compiled.evaluate(x, y)["a"], expected, rtol=1e-15, atol=0)


@pytest.mark.parametrize("text", ["max(x, y, sqrt(x - 1), 2, y + 1, x*y, 3, y - 1, x + 2, -x, 5, 0)",
                                  "min(x, y, sqrt(x - 1), 2, y + 1, x*y, 3, y - 1, x + 2, -x, 5, 0)",
                                  "sign(sqrt(x - 1))", "heaviside(sqrt(x - 1))",
                                  "piecewise(sqrt(x - 1) < y, 1, 2)"])
def test_nan_in_any_argument_gives_nan(text):
    compiled = compile_equation(Equation(a=text, b="0", c="1"))
    a = compiled.evaluate(np.array([0.0, 10.0]), np.array([0.0, 0.0]))["a"]
    assert np.isnan(a[0]) and np.isfinite(a[1])


def _run(statements, values):
    env = dict(values, qnan=np.float64(np.nan), qinf=np.float64(np.inf))
    for statement in statements:
        env[statement.target] = numexpr.evaluate(statement.code, local_dict=env)
    return env


X, Y = sympy.symbols("x y", real=True)
UNEVALUATED = [
    sympy.Mul(sympy.Rational(3, 2), X, sympy.Pow(Y, -2, evaluate=False), evaluate=False),
    sympy.Add(sympy.Add(X, Y, evaluate=False), sympy.Mul(-1, X, evaluate=False), sympy.Float(0.25), evaluate=False),
    sympy.Pow(sympy.Add(X, 3, evaluate=False), sympy.Rational(1, 2), evaluate=False),
    sympy.Pow(sympy.Add(X, Y, evaluate=False), -1, evaluate=False),
    sympy.Mul(sympy.Add(X, Y, evaluate=False), sympy.Add(X, Y, evaluate=False), evaluate=False),
    sympy.Max(X, Y, sympy.Mul(2, X, evaluate=False), evaluate=False),
    sympy.Min(sympy.Mul(-3, Y, evaluate=False), sympy.Add(X, 1, evaluate=False), evaluate=False),
    sympy.Piecewise((sympy.Add(X, Y, evaluate=False), X < Y), (sympy.Mul(X, Y, evaluate=False), True)),
    sympy.exp(sympy.Mul(-1, sympy.Pow(X, 2, evaluate=False), evaluate=False), evaluate=False),
]


@pytest.mark.parametrize("expr", UNEVALUATED, ids=str)
def test_unevaluated_trees_match_sympy(expr):
    # Reference: sympy.lambdify (numpy printer) of the same unevaluated tree.
    names = {X: "q0", Y: "q1"}
    statements = build_program([("out", "a", expr)], names, axes=("q0", "q1"))
    xs, ys = np.array([0.3, -1.2, 2.5, 0.7]), np.array([1.1, 0.4, -2.0, 0.7])
    got = _run(statements, {"q0": xs, "q1": ys})["out"]
    expected = sympy.lambdify([X, Y], expr, modules="numpy")(xs, ys)
    np.testing.assert_allclose(np.broadcast_to(got, xs.shape), expected, rtol=1e-15, atol=1e-15)


def test_a_subtracted_term_is_the_same_bit_for_bit():
    expr = sympy.Add(X, sympy.Mul(-3, Y, evaluate=False), evaluate=False)
    statements = build_program([("out", "a", expr)], {X: "q0", Y: "q1"}, axes=("q0", "q1"))
    assert " - " in statements[-1].code
    rng = np.random.default_rng(3)
    xs, ys = rng.normal(size=1000), rng.normal(size=1000)
    np.testing.assert_array_equal(_run(statements, {"q0": xs, "q1": ys})["out"], xs + (-3.0) * ys)


def test_a_shared_sub_expression_is_one_step():
    expr = sympy.Add(sympy.sin(sympy.Mul(X, Y)), sympy.cos(sympy.Mul(X, Y)))
    statements = build_program([("out", "a", expr)], {X: "q0", Y: "q1"}, axes=("q0", "q1"))
    assert sum(s.code.count("q0 * q1") for s in statements) == 1


def test_program_size_bound_is_a_clear_error_naming_the_field(monkeypatch):
    monkeypatch.setattr(codegen, "MAX_PROGRAM_STEPS", 20)
    with pytest.raises(ExpressionError) as info:
        compile_equation(Equation(a="x", b=f"max({', '.join(ARGUMENTS)})", c="1"))
    assert info.value.field == "b"
    assert "too large" in str(info.value) and "20 steps" in str(info.value)


def test_real_program_size_bound():
    # Each definition is a max of 120 distinct arguments: 120 steps for them and 119 for the running maximum,
    # so the ninth definition crosses 2000 steps.
    definitions = {f"d{i}": "max(" + ",".join(f"sin(x+{1000 * i + k})" for k in range(120)) + ")" for i in range(10)}
    with pytest.raises(ExpressionError) as info:
        compile_equation(Equation(a="1", b="0", c="1", definitions=definitions))
    assert info.value.field == "definitions.d8"
    assert f"{codegen.MAX_PROGRAM_STEPS} steps" in str(info.value)


def test_many_quantities_in_one_sum_stay_within_numexpr_operands():
    parameters = {f"p{k}": Parameter(float(k)) for k in range(70)}
    compiled = compile_equation(Equation(a="x*(" + " + ".join(parameters) + ")", b="0", c="1",
                                         parameters=parameters))
    assert all(len(s.inputs) <= codegen.MAX_STEP_INPUTS for s in compiled.program)
    assert float(compiled.evaluate(2.0, 0.0)["a"]) == 2.0 * sum(range(70))


FLOW = Equation(
    a="c2 - u**2", b="-2*u*v", c="c2 - v**2",
    definitions={"u": "U*(1 + 0.3*exp(-x**2)*cos(y))", "v": "0.1*U*sin(x)",
                 "c2": "1 - (gam - 1)/2*(u**2 + v**2)", "M": "sqrt((u**2 + v**2)/c2)"},
    parameters={"U": Parameter(0.8), "gam": Parameter(1.4)})


def test_parameter_only_parts_are_computed_by_prepare_once():
    compiled = compile_equation(FLOW)
    plan = compiled.plan(("a", "b", "c"))
    gam = compiled.internal_name("gam")
    hoisted = [s.target for s in compiled.program if gam in s.inputs]
    assert hoisted and set(hoisted) <= set(plan.prepared)
    assert not set(hoisted) & set(plan.pointwise)
    prepared = compiled.prepare()
    assert float(prepared[hoisted[0]]) == pytest.approx(0.4, rel=1e-15)   # gam - 1, as typed in (gam - 1)/2
    # The evaluation reads the prepared value instead of computing it again: change it and c2 follows.
    point = {"x": np.float64(0.0), "y": np.float64(0.0)}
    before = compiled.evaluate_raw(point["x"], point["y"], prepared=prepared)
    changed = compiled.evaluate_raw(point["x"], point["y"], prepared={**prepared, hoisted[0]: np.float64(0.0)})
    assert float(changed["c2"]) == 1.0 and float(before["c2"]) == pytest.approx(1 - 0.2 * (1.3 * 0.8) ** 2)


def test_one_variable_parts_run_once_per_axis():
    compiled = compile_equation(FLOW)
    plan = compiled.plan(("a", "b", "c"))
    code = {s.target: s.code for s in compiled.program}
    assert any("exp(" in code[t] for t in plan.along_first)
    assert any(code[t].startswith("cos(") for t in plan.along_second)
    assert compiled.internal_name("v") in plan.along_first


def test_readout_only_definitions_are_not_in_the_coefficients_plan():
    compiled = compile_equation(FLOW)
    everything = compiled.plan()
    coefficients = compiled.plan(("a", "b", "c"))
    m = compiled.internal_name("M")
    assert m in everything.pointwise and m not in coefficients.pointwise


class _CountingSource:
    """Background data: T = 300 + x everywhere; counts calls per key."""

    def __init__(self) -> None:
        self.calls: dict[str, int] = {}
        self.lock = threading.Lock()

    def sample(self, key, x, y):
        with self.lock:
            self.calls[key] = self.calls.get(key, 0) + 1
        return 300.0 + np.broadcast_to(x, np.broadcast_shapes(np.shape(x), np.shape(y)))


def test_classification_never_samples_data_only_a_readout_uses():
    equation = Equation(a="1", b="0", c="y", definitions={"warm": "T - 273.15"}, peak_quantity="warm")
    compiled = compile_equation(equation, data_names=("T",))
    source = _CountingSource()
    type_map = classify_grid(compiled, Domain(-1.0, 1.0, -1.0, 1.0, 64, 64), data=source)
    assert source.calls == {}
    assert type_map.count(TypeCode.ELLIPTIC) == 64 * 32 == type_map.count(TypeCode.HYPERBOLIC)   # c = y
    assert float(compiled.evaluate(2.0, 0.0, data=source)["warm"]) == pytest.approx(28.85)
    assert source.calls == {"T": 1}


def test_cancel_stops_a_large_classification_after_one_block():
    compiled = compile_equation(_maximum(12))
    calls, blocks = [0], []
    lock = threading.Lock()

    def cancel():
        with lock:
            calls[0] += 1
            return calls[0] > 1

    with pytest.raises(Cancelled):
        classify_grid(compiled, Domain(-2.0, 2.0, -2.0, 2.0, 1024, 1024), cancel=cancel, progress=blocks.append)
    assert len(blocks) == 1


def test_buffers_give_the_same_values_and_survive_aliases():
    equation = Equation(a="c2 - w**2", b="-2*w*v", c="c2 - v**2",
                        definitions={"w": "u", "u": "U*(1 + 0.3*exp(-x**2)*cos(y))", "v": "max(x*y, w, y)",
                                     "c2": "1 - (u**2 + v**2)/5"}, parameters={"U": Parameter(0.8)})
    compiled = compile_equation(equation)
    x, y = np.linspace(-1, 1, 50)[np.newaxis, :], np.linspace(-1, 1, 40)[:, np.newaxis]
    reference = compiled.evaluate(x, y)
    buffers = EvaluationBuffers()
    for _ in range(3):
        values = compiled.evaluate_raw(x, y, buffers=buffers)
        for name, value in reference.items():
            np.testing.assert_array_equal(np.broadcast_to(values[name], (40, 50)), value, err_msg=name)


def test_shared_condition_on_parameters_is_a_boolean_prepared_step():
    compiled = compile_equation(Equation(a="piecewise(U < 1, x, y) + piecewise(U < 1, y, x)*2", b="0", c="1",
                                         parameters={"U": Parameter(0.5)}))
    assert any(s.boolean for s in compiled.program)
    assert float(compiled.evaluate(3.0, 5.0)["a"]) == 3.0 + 10.0
    assert float(compiled.evaluate(3.0, 5.0, parameters={"U": 2.0})["a"]) == 5.0 + 6.0
