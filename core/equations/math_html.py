"""Readable mathematical form of the equation as HTML, printed from the sympy tree.

The markup is the small subset both Qt's rich text (the window's equation panel) and HTML5 (the study
report, core.results.report_html) read alike: <i>, <sub>, <sup>, <br> and named entities. Mixtype's own
small printer: products by juxtaposition or a middle dot, quotients with a slash, powers as
superscripts, square roots with a radical sign, Greek names as Greek letters, ``name_sub`` as a subscript and
a data derivative ``diff(q,x)`` as a partial derivative. It needs no LaTeX and no plotting library.
"""

from __future__ import annotations

import html
from collections.abc import Mapping

import sympy

from core.equations.parser import tidy_expression

__all__ = ["equation_html", "expression_html", "symbol_html", "term_html", "terms_html"]

_GREEK = {name: chr(code) for name, code in (
    ("alpha", 0x3B1), ("beta", 0x3B2), ("gamma", 0x3B3), ("delta", 0x3B4), ("epsilon", 0x3B5),
    ("zeta", 0x3B6), ("eta", 0x3B7), ("theta", 0x3B8), ("iota", 0x3B9), ("kappa", 0x3BA),
    ("lambda_", 0x3BB), ("lam", 0x3BB), ("mu", 0x3BC), ("nu", 0x3BD), ("xi", 0x3BE), ("rho", 0x3C1),
    ("sigma", 0x3C3), ("tau", 0x3C4), ("phi", 0x3C6), ("chi", 0x3C7), ("psi", 0x3C8), ("omega", 0x3C9),
    ("Gamma", 0x393), ("Delta", 0x394), ("Theta", 0x398), ("Lambda", 0x39B), ("Xi", 0x39E),
    ("Sigma", 0x3A3), ("Phi", 0x3A6), ("Psi", 0x3A8), ("Omega", 0x3A9))}
_FUNCTION_NAMES = {"Abs": "abs", "Heaviside": "H", "sign": "sgn", "Min": "min", "Max": "max",
                   "asin": "arcsin", "acos": "arccos", "atan": "arctan", "atan2": "atan2"}
_RELATIONS = {"<": "&lt;", "<=": "&le;", ">": "&gt;", ">=": "&ge;"}
_MINUS = "&minus;"
_DOT = "&middot;"


def symbol_html(name: str) -> str:
    """A variable, parameter or definition name: Greek letters spelled out become Greek, _x a subscript."""
    if name.startswith("diff(") and name.endswith(")"):
        quantity, _, variable = name[5:-1].partition(",")
        return f"&part;{symbol_html(quantity)}/&part;{symbol_html(variable)}"
    head, _, sub = name.partition("_")
    head_text = _GREEK.get(head, html.escape(head))
    styled = f"<i>{head_text}</i>" if len(head) == 1 or head in _GREEK else head_text
    return f"{styled}<sub>{html.escape(sub)}</sub>" if sub else styled


def _number(value: sympy.Expr) -> str:
    if value is sympy.pi:
        return "&pi;"
    if value is sympy.E:
        return "e"
    if isinstance(value, sympy.Integer):
        return str(int(value))
    if isinstance(value, sympy.Rational):
        return f"{value.p}/{value.q}"
    text = f"{float(value):.6g}"
    if "e" in text:
        mantissa, exponent = text.split("e")
        return f"{mantissa}{_DOT}10<sup>{int(exponent)}</sup>"
    return text


def _needs_brackets_in_product(expr: sympy.Expr) -> bool:
    return isinstance(expr, sympy.Add | sympy.Piecewise | sympy.Integral) or (expr.is_Number and expr.is_negative)


def _power(base: sympy.Expr, exponent: sympy.Expr) -> str:
    if exponent == sympy.Rational(1, 2):
        return f"&radic;({expression_html(base)})"
    inner = expression_html(base)
    if isinstance(base, sympy.Add | sympy.Mul | sympy.Pow | sympy.Piecewise) or \
            (base.is_Number and (base.is_negative or not base.is_Integer)):
        inner = f"({inner})"
    return f"{inner}<sup>{expression_html(exponent)}</sup>"


def _product(expr: sympy.Mul) -> str:
    coefficient, factors = expr.as_coeff_mul()
    top, bottom = [], []
    for factor in factors:
        if isinstance(factor, sympy.Pow) and factor.exp.is_Number and factor.exp.is_negative:
            bottom.append(factor.base if factor.exp == -1 else sympy.Pow(factor.base, -factor.exp))
        else:
            top.append(factor)
    sign = ""
    if coefficient.is_negative:
        sign, coefficient = _MINUS, -coefficient
    if isinstance(coefficient, sympy.Rational) and not coefficient.is_Integer:
        if coefficient.p != 1:
            top.insert(0, sympy.Integer(coefficient.p))
        bottom.insert(0, sympy.Integer(coefficient.q))
    elif coefficient != 1:
        top.insert(0, coefficient)

    def join(parts: list) -> str:
        texts = []
        for i, part in enumerate(parts):
            text = expression_html(part)
            if _needs_brackets_in_product(part):
                text = f"({text})"
            if i and (part.is_Number or parts[i - 1].is_Number and part.is_Number):
                texts.append(_DOT)
            elif i:
                texts.append("&#8201;")  # thin space
            texts.append(text)
        return "".join(texts)

    numerator = join(top) if top else "1"
    if not bottom:
        return sign + numerator
    denominator = join(bottom)
    if len(bottom) > 1 or isinstance(bottom[0], sympy.Mul):
        denominator = f"({denominator})"
    return f"{sign}{numerator}/{denominator}"


def _sum(expr: sympy.Add) -> str:
    parts = []
    for i, term in enumerate(expr.as_ordered_terms()):
        negative = term.could_extract_minus_sign()
        text = expression_html(-term if negative else term)
        if i == 0:
            parts.append(f"{_MINUS}{text}" if negative else text)
        else:
            parts.append(f" {_MINUS} {text}" if negative else f" + {text}")
    return "".join(parts)


def expression_html(expr) -> str:
    """Rich-text form of a sympy expression (numbers, symbols, + - * / **, functions, piecewise)."""
    expr = sympy.sympify(expr) if isinstance(expr, int | float) else expr
    if isinstance(expr, sympy.Symbol):
        return symbol_html(expr.name)
    if expr is sympy.true or expr is sympy.false:
        return str(bool(expr)).lower()
    if expr.is_Number or expr is sympy.pi or expr is sympy.E:
        if expr.is_negative:
            return _MINUS + _number(-expr)
        return _number(expr)
    if isinstance(expr, sympy.Add):
        return _sum(expr)
    if isinstance(expr, sympy.Mul):
        return _product(expr)
    if isinstance(expr, sympy.Pow):
        if expr.exp.is_Number and expr.exp.is_negative:
            return _product(sympy.Mul(1, expr, evaluate=False))
        return _power(expr.base, expr.exp)
    if isinstance(expr, sympy.Abs):
        return f"|{expression_html(expr.args[0])}|"
    if isinstance(expr, sympy.Piecewise):
        pieces = []
        for value, condition in expr.args:
            where = "otherwise" if condition is sympy.true else f"if {expression_html(condition)}"
            pieces.append(f"{expression_html(value)} {where}")
        return "{ " + "; ".join(pieces) + " }"
    if isinstance(expr, sympy.core.relational.Relational):
        op = _RELATIONS.get(expr.rel_op, html.escape(expr.rel_op))
        return f"{expression_html(expr.lhs)} {op} {expression_html(expr.rhs)}"
    if isinstance(expr, sympy.And | sympy.Or):
        word = " and " if isinstance(expr, sympy.And) else " or "
        return word.join(f"({expression_html(a)})" for a in expr.args)
    if isinstance(expr, sympy.Integral) and len(expr.limits) == 1 and len(expr.limits[0]) == 3:
        variable, low, high = expr.limits[0]
        body = expression_html(expr.function)
        if isinstance(expr.function, sympy.Add):
            body = f"({body})"
        return (f"&int;<sub>{expression_html(low)}</sub><sup>{expression_html(high)}</sup> {body}&#8201;"
                f"d{symbol_html(variable.name)}")
    if isinstance(expr, sympy.Function):
        name = type(expr).__name__
        name = _FUNCTION_NAMES.get(name, name)
        return f"{name}({', '.join(expression_html(a) for a in expr.args)})"
    return html.escape(str(expr))


def term_html(coefficient: sympy.Expr, derivative: str) -> str | None:
    """``coefficient`` times ``derivative`` (rich text) as it reads in a sum; None when the coefficient is 0."""
    if coefficient == 0:
        return None
    if coefficient == 1:
        return derivative
    if coefficient == -1:
        return f"{_MINUS}{derivative}"
    inner = expression_html(coefficient)
    if isinstance(coefficient, sympy.Add) or inner.startswith(_MINUS) or sympy.fraction(coefficient)[1] != 1:
        inner = f"({inner})"
    return f"{inner}&#8201;{derivative}"


def terms_html(terms) -> str:
    """A sum of (coefficient, derivative rich text) pairs as it reads (zero terms left out, "+ −" as "−"); "0"
    when every coefficient is 0."""
    parts = []
    for coefficient, derivative in terms:
        negative = bool(parts) and coefficient != 0 and coefficient.could_extract_minus_sign()
        text = term_html(-coefficient if negative else coefficient, derivative)
        if text:
            parts.append(f"{_MINUS} {text}" if negative else (f"+ {text}" if parts else text))
    return " ".join(parts).replace(f"+ {_MINUS}", f"{_MINUS} ") if parts else "0"


def equation_html(compiled, lower_order: Mapping[str, sympy.Expr] | None = None) -> str:
    """The compiled equation as it reads on paper: the PDE, each definition, and D = b^2 - 4ac.

    Uses the coefficients as typed (definitions kept as names) so the display matches the editor, tidied by
    sympy (x - -y reads x + y; x/x reads 1 although the typed x/x is undefined at x = 0, as the map shows).
    ``lower_order`` holds the stated terms d, e, f (core.equations.lower_order.lower_order_terms): they
    replace "(lower order)", which stays when none is stated.
    """
    symbolic = {name: tidy_expression(value) for name, value in compiled.symbolic.items()}
    x, y = compiled.variables
    second = {"a": (x, x), "b": (x, y), "c": (y, y)}
    terms = [(symbolic[which], f"<i>u</i><sub>{html.escape(''.join(second[which]))}</sub>")
             for which in ("a", "b", "c")]
    if lower_order:
        first = {"d": f"<i>u</i><sub>{html.escape(x)}</sub>", "e": f"<i>u</i><sub>{html.escape(y)}</sub>",
                 "f": "<i>u</i>"}
        terms += [(tidy_expression(lower_order[key]), first[key]) for key in ("d", "e", "f") if key in lower_order]
        lines = [f"{terms_html(terms)} = 0"]
    else:
        lines = [f"{terms_html(terms)} + (lower order) = 0"]
    for name in compiled.definition_order:
        lines.append(f"{symbol_html(name)} = {expression_html(symbolic[name])}")
    a, b, c = (symbolic[k] for k in ("a", "b", "c"))
    if sum(sympy.count_ops(e) for e in (a, b, c)) < 80:
        lines.append(f"<i>D</i> = <i>b</i><sup>2</sup> {_MINUS} 4<i>ac</i> = "
                     f"{expression_html(b ** 2 - 4 * a * c)}")
    return "<br>".join(lines)
