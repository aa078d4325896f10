"""Inputs the fuzz suite (tests/fuzz) found trouble with: each now a result or a located one-line message."""

import json
import warnings

import pytest
import sympy

from core.equations.language import ExpressionError
from core.equations.parser import parse_expression
from core.project.io import ProjectError, loads_project
from core.project.schema import MAX_EXPRESSION_CHARACTERS

SYMBOLS = {name: sympy.Symbol(name, real=True) for name in ("x", "y")}


@pytest.mark.parametrize("text, column, words", [
    ("0and y", 2, "a number runs into 'and'"),
    ("1if x else 2", 2, "a number runs into 'if'"),
    ("x < 1or y", 6, "a number runs into 'or'"),
    ("'\\d' + x", 1, "only numbers are allowed here"),
])
def test_text_python_would_warn_about_is_refused_without_a_warning(text, column, words):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with pytest.raises(ExpressionError) as caught:
            parse_expression(text, SYMBOLS)
    assert caught.value.column == column
    assert words in caught.value.message
    assert "\n" not in str(caught.value)


def test_an_escape_sequence_is_written_as_an_escape_in_the_message():
    with pytest.raises(ExpressionError) as caught:
        parse_expression("'\\x1b[2J\x1b' + x", SYMBOLS)
    assert "\x1b" not in str(caught.value)
    assert "\\x1b" in str(caught.value)


def test_a_long_sum_is_one_unevaluated_sum_in_typed_order():
    text = " + ".join(f"{k}*x" for k in range(1, 121)) + " - y"
    value = parse_expression(text, SYMBOLS).value
    assert value.func is sympy.Add and len(value.args) == 121
    assert value.args[0] == sympy.Mul(sympy.Integer(1), SYMBOLS["x"], evaluate=False)
    assert value.args[-1] == sympy.Mul(sympy.S.NegativeOne, SYMBOLS["y"], evaluate=False)
    # a constant start is folded, as before: 1 + 2 + x is 3 + x
    assert parse_expression("1 + 2 + x", SYMBOLS).value.args == (sympy.Float(3.0), SYMBOLS["x"])


def _project(definitions: dict, c: str = "1") -> str:
    return json.dumps({
        "format": "mixtype-project", "format_version": 3,
        "metadata": {"created": "2025-01-01T00:00:00Z", "modified": "2025-01-01T00:00:00Z", "written_by": "0"},
        "equations": [{"name": "e", "description": "", "variables": ["x", "y"],
                       "coefficients": {"a": "1", "b": "0", "c": c}, "definitions": definitions,
                       "parameters": {}}],
        "domains": [{"name": "d", "x_range": [0.0, 1.0], "y_range": [0.0, 1.0], "nodes": [8, 8]}],
        "data_sources": [], "shown": {"equation": "e", "domain": "d"}, "pins": [], "seeds": [],
        "view": {"layers": {"type_map": True, "type_change_lines": True, "characteristics_family_1": True,
                            "characteristics_family_2": True, "pins": True, "legend": True},
                 "parabolic_tolerance": 1e-10, "characteristic_bounces": 0},
        "notes": ""})


def test_expressions_beyond_the_project_limit_are_one_problem_before_any_parsing():
    text = " + ".join(f"{k}*x" for k in range(1, 141))   # 840 characters, 559 parts
    definitions = {f"d{i}": text for i in range(MAX_EXPRESSION_CHARACTERS // len(text) + 1)}
    with pytest.raises(ProjectError) as caught:
        loads_project(_project(definitions))
    size = sum(map(len, definitions.values())) + 3   # and the coefficients 1, 0, 1
    expected = (f"<text>: $.equations: the coefficients and definitions hold {size:,} characters in all, more "
                f"than the {MAX_EXPRESSION_CHARACTERS:,} a project may hold")
    assert caught.value.problems == [expected]
    fewer = dict(list(definitions.items())[:-1])
    assert loads_project(_project(fewer)).equations[0].definitions == fewer


def test_a_quotient_by_a_zero_product_inside_max_loads():
    # sympy's own Max(x, zoo) raised a bare ValueError through load_project once
    project = loads_project(_project({}, c="max(x, 1/(0*x))"))
    assert project.equations[0].c == "max(x, 1/(0*x))"
