"""The operator a u_xx + b u_xy + c u_yy + d u_x + e u_y + f u written in new coordinates (xi, eta).

With u(x, y) = w(xi(x, y), eta(x, y)) the chain rule gives

    A w_xixi + B w_xieta + C w_etaeta + E1 w_xi + E2 w_eta + f w,
    A  = a xi_x^2 + b xi_x xi_y + c xi_y^2,            C = the same with eta,
    B  = 2a xi_x eta_x + b (xi_x eta_y + xi_y eta_x) + 2c xi_y eta_y,
    E1 = a xi_xx + b xi_xy + c xi_yy + d xi_x + e xi_y, E2 = the same with eta,

where the first-order terms E1, E2 come both from the second-order part (the second derivatives of the
coordinates) and from d, e. The canonical forms divide by the coefficient that remains:

    hyperbolic  (xi, eta) the two invariants:      A = C = 0      u_xi_eta + (E1 w_xi + E2 w_eta + f w)/B = 0
    parabolic   xi the invariant, eta = x (or y):  A = B = 0      u_eta_eta + (...)/C = 0
    elliptic    (alpha, beta) = real and imaginary
                parts of the complex invariant:    A = C, B = 0   u_alpha_alpha + u_beta_beta + (...)/A = 0

The coefficients stay functions of x and y (the inverse map is not computed). ``canonical_form`` checks the
vanishing (or equal) coefficients at sample points of the zone in 30-digit arithmetic, or with sympy's
simplify where there are none, and simplifies the ratios; run it through core.deadline.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import sympy

from core.analysis.first_integrals import residual_is_zero

__all__ = ["NAMES", "CanonicalForm", "TransformedOperator", "canonical_form", "transform_operator"]

NAMES = {"hyperbolic": ("xi", "eta"), "parabolic": ("xi", "eta"), "elliptic": ("alpha", "beta")}
PRINCIPAL = {"hyperbolic": ("u_xi_eta",), "parabolic": ("u_eta_eta",),
             "elliptic": ("u_alpha_alpha", "u_beta_beta")}


@dataclass(frozen=True)
class TransformedOperator:
    """The coefficients A, B, C (second order), E1, E2 (first order) and F (of w) in the new coordinates."""

    A: sympy.Expr
    B: sympy.Expr
    C: sympy.Expr
    E1: sympy.Expr
    E2: sympy.Expr
    F: sympy.Expr


@dataclass(frozen=True)
class CanonicalForm:
    """One type's canonical form: ``coordinates`` (two expressions in x, y, named ``names``), ``principal``
    the second-order derivatives left, each with coefficient 1 ("u_xi_eta",), ``lower`` the lower-order terms
    as (derivative name, coefficient) after dividing by the principal coefficient; None fields when not found
    (see ``notes``)."""

    type: str
    names: tuple[str, str]
    coordinates: tuple[sympy.Expr, sympy.Expr] | None
    principal: tuple[str, ...]
    lower: tuple[tuple[str, sympy.Expr], ...] | None
    notes: tuple[str, ...] = ()


def transform_operator(coefficients: Sequence[sympy.Expr], coordinates: Sequence[sympy.Expr],
                       x: sympy.Symbol, y: sympy.Symbol) -> TransformedOperator:
    """The chain rule of the module docstring; ``coefficients`` = (a, b, c, d, e, f)."""
    a, b, c, d, e, f = coefficients
    xi, eta = coordinates
    xi_x, xi_y, eta_x, eta_y = (sympy.diff(u, v) for u in (xi, eta) for v in (x, y))

    def second(u_x, u_y):
        return a * u_x ** 2 + b * u_x * u_y + c * u_y ** 2

    def first(u, u_x, u_y):
        return (a * sympy.diff(u, x, 2) + b * sympy.diff(u, x, y) + c * sympy.diff(u, y, 2)
                + d * u_x + e * u_y)

    mixed = 2 * a * xi_x * eta_x + b * (xi_x * eta_y + xi_y * eta_x) + 2 * c * xi_y * eta_y
    return TransformedOperator(A=second(xi_x, xi_y), B=mixed, C=second(eta_x, eta_y),
                               E1=first(xi, xi_x, xi_y),
                               E2=first(eta, eta_x, eta_y), F=f)


def _vanish(expression, scale, x, y, points, fixed) -> bool:
    good, usable = residual_is_zero(expression, scale, x, y, points, fixed)
    if usable:
        return good == usable
    return sympy.simplify(expression) == 0


def _simplest(expression: sympy.Expr) -> sympy.Expr:
    simpler = sympy.simplify(expression)
    return simpler if sympy.count_ops(simpler) <= sympy.count_ops(expression) else expression


def _simplest_ratio(numerator: sympy.Expr, denominator: sympy.Expr) -> sympy.Expr:
    """numerator / denominator simplified as a whole or term by term, whichever is shorter (term by term keeps
    what d, e and the second-order part each bring apart: x/(2*sqrt(-y)) + 1/(4*y), not one fraction)."""
    whole = _simplest(numerator / denominator)
    expanded = sympy.expand(numerator)
    if not isinstance(expanded, sympy.Add):
        return whole
    by_term = sympy.Add(*[_simplest(term / denominator) for term in expanded.args])
    return by_term if sympy.count_ops(by_term) <= sympy.count_ops(whole) else whole


def canonical_form(kind: str, coefficients: Sequence[sympy.Expr], coordinates: Sequence[sympy.Expr],
                   x: sympy.Symbol, y: sympy.Symbol,
                   points: Sequence[tuple[sympy.Expr, sympy.Expr]],
                   fixed: Mapping | None = None) -> CanonicalForm:
    """The canonical form of ``kind`` in ``coordinates`` (module docstring), checked at ``points`` with the
    other symbols (parameters) at their values in ``fixed``."""
    names = NAMES[kind]
    operator = transform_operator(coefficients, coordinates, x, y)
    size = sympy.Abs(operator.A) + sympy.Abs(operator.B) + sympy.Abs(operator.C)
    zero = {"hyperbolic": (operator.A, operator.C), "parabolic": (operator.A, operator.B),
            "elliptic": (operator.A - operator.C, operator.B)}[kind]
    holds = all(_vanish(value, size, x, y, points, fixed) for value in zero)
    principal = {"hyperbolic": operator.B, "parabolic": operator.C, "elliptic": operator.A}[kind]
    if not holds:
        why = f"the {kind} coordinates did not reduce the second-order part at the sample points"
        return CanonicalForm(kind, names, tuple(coordinates), PRINCIPAL[kind], None, (why,))
    principal = _simplest(principal)
    lower = tuple((f"u_{name}", _simplest_ratio(value, principal)) for name, value in
                  ((names[0], operator.E1), (names[1], operator.E2), ("", operator.F)))
    lower = tuple(("u" if name == "u_" else name, value) for name, value in lower)
    return CanonicalForm(kind, names, tuple(coordinates), PRINCIPAL[kind], lower)
