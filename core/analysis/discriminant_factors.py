"""The discriminant D = b^2 - 4ac of formula coefficients, factored, and where its sign can change.

sympy.factor_list writes D = constant * F_1^m_1 * ... * F_k^m_k. The type changes across F = 0 only where F
changes sign and m is odd; each factor gets a role:

    type_change   F changes sign (values of both signs found at sample points, or a one-variable polynomial
                  with a real root of odd multiplicity) and m is odd: F = 0 is a type-change curve
    tangency      D touches 0 along F = 0 without changing sign: m even, or F of one sign (x^2 + y^2)
    never_zero    F has one strict sign (1 + x^2): it only carries a sign into D
    parameters    F holds parameters and no variable: the type everywhere depends on their values
    data          F holds a background-data quantity: where it changes sign is known only from the data
    undecided     m odd and neither a sign change nor one sign could be established
    pole          m < 0: D is undefined on F = 0 (the type changes across it when m is odd)

Signs are decided by sympy's assumptions (the variables are real symbols) and by exact values at a fixed set
of sample points in the plane (parameters at their values, a note says so). The same points, sorted by the
sign of D, are where later steps check invariants and canonical forms numerically. Every function here may
run long on large expressions: callers run ``factor_discriminant`` through core.deadline.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import sympy

__all__ = ["ROLES", "DiscriminantFactor", "FactoredDiscriminant", "discriminant_zones", "factor_discriminant",
           "real_value", "sample_points"]

ROLES = ("type_change", "tangency", "never_zero", "parameters", "data", "undecided", "pole")
MAX_ZONE_POINTS = 12         # sample points kept per type for later numerical checks
_OFFSETS = (-0.93, -0.61, -0.27, 0.11, 0.38, 0.72, 0.97)   # asymmetric, so symmetric zeros are missed
_SCALES = (0.5, 1.5, 5, 40)


def sample_points() -> tuple[tuple[sympy.Rational, sympy.Rational], ...]:
    """A fixed grid of exact points over several scales of the plane (196 points, none on an axis)."""
    offsets = [sympy.Rational(str(v)) for v in _OFFSETS]
    return tuple((scale * u, scale * v) for scale in map(sympy.Rational, map(str, _SCALES))
                 for v in offsets for u in offsets)


@dataclass(frozen=True)
class DiscriminantFactor:
    """One factor F of D with its multiplicity (negative for a pole) and role (see ROLES); ``sign`` is +1 or
    -1 for a factor of one sign (never_zero, tangency of odd multiplicity), else 0."""

    expression: sympy.Expr
    multiplicity: int
    role: str
    sign: int = 0


@dataclass(frozen=True)
class FactoredDiscriminant:
    """D expanded, and as ``constant`` times its ``factors``; ``points`` sample points (x, y) where D > 0
    ("hyperbolic") and D < 0 ("elliptic") at the parameter values; ``identically_zero`` when D = 0."""

    expanded: sympy.Expr
    constant: sympy.Expr
    factors: tuple[DiscriminantFactor, ...]
    points: Mapping[str, tuple[tuple[sympy.Rational, sympy.Rational], ...]]
    identically_zero: bool

    @property
    def factored(self) -> sympy.Expr:
        """constant * F_1^m_1 * ..., the constant kept apart from a single sum (4*(x**2 + y**2 - 1)); built
        here rather than kept, since sympy distributes such a product again when it is unpickled."""
        if not self.factors:
            return self.expanded
        product = sympy.Mul(*[f.expression ** f.multiplicity for f in self.factors])
        if self.constant == 1:
            return product
        return sympy.Mul(self.constant, product, evaluate=not isinstance(product, sympy.Add))


def real_value(expression: sympy.Expr, at: Mapping[sympy.Symbol, sympy.Expr]) -> float | None:
    """The value of ``expression`` at ``at`` as a float (30 digits of work), None where it is not a finite
    real number (outside where the expression is defined)."""
    try:
        value = sympy.N(expression.xreplace(dict(at)), 30)
        real, imaginary = value.as_real_imag()
        if not (real.is_number and imaginary.is_number):
            return None
        real, imaginary = float(real), float(imaginary)
    except (TypeError, ValueError, ZeroDivisionError, ArithmeticError):
        return None
    if not math.isfinite(real) or abs(imaginary) > 1e-20 * max(1.0, abs(real)):
        return None
    return real


def factor_discriminant(discriminant: sympy.Expr, x: sympy.Symbol, y: sympy.Symbol,
                        parameter_values: Mapping[sympy.Symbol, sympy.Expr],
                        data_symbols: frozenset[sympy.Symbol]) -> FactoredDiscriminant:
    """Factor D, give each factor its role and sort the sample points by the sign of D (module docstring);
    signs are sampled with the parameters at ``parameter_values``; ``data_symbols`` stand for data."""
    expanded = sympy.expand(discriminant)
    if expanded == 0:
        return FactoredDiscriminant(expanded, sympy.S.Zero, (), {"hyperbolic": (), "elliptic": ()}, True)
    numerator, denominator = sympy.fraction(sympy.together(expanded))
    constant, pairs = _factor_list(numerator)
    below, poles = _factor_list(denominator)
    constant /= below
    pairs += [(expression, -multiplicity) for expression, multiplicity in poles]
    factors = []
    for expression, multiplicity in pairs:
        if expression.is_number:
            constant *= expression ** multiplicity
            continue
        factors.append(_classify(expression, int(multiplicity), x, y, parameter_values, data_symbols))
    points = _zone_points(constant, factors, x, y, parameter_values, data_symbols)
    return FactoredDiscriminant(expanded, constant, tuple(factors), points, False)


def _factor_list(expression: sympy.Expr) -> tuple[sympy.Expr, list[tuple[sympy.Expr, int]]]:
    if expression.is_number:
        return expression, []
    try:
        constant, pairs = sympy.factor_list(expression)
    except (sympy.PolynomialError, NotImplementedError):
        return sympy.S.One, [(expression, 1)]
    return constant, list(pairs)


def _classify(expression, multiplicity, x, y, values, data_symbols) -> DiscriminantFactor:
    factor = _classify_zero(expression, abs(multiplicity), x, y, values, data_symbols)
    if multiplicity > 0:
        return factor
    role = "pole" if factor.role in ("type_change", "tangency", "undecided") else factor.role
    return DiscriminantFactor(expression, multiplicity, role, factor.sign if role == "never_zero" else 0)


def _classify_zero(expression, multiplicity, x, y, values, data_symbols) -> DiscriminantFactor:
    free = expression.free_symbols
    if free & data_symbols:
        return DiscriminantFactor(expression, multiplicity, "data")
    if not free & {x, y}:
        return DiscriminantFactor(expression, multiplicity, "parameters")
    at_values = expression.xreplace(dict(values))
    if at_values.is_positive or at_values.is_negative:
        return DiscriminantFactor(expression, multiplicity, "never_zero", 1 if at_values.is_positive else -1)
    if at_values.is_nonnegative or at_values.is_nonpositive:
        return DiscriminantFactor(expression, multiplicity, "tangency", 1 if at_values.is_nonnegative else -1)
    signs = {(value > 0) - (value < 0) for value in
             (real_value(at_values, {x: px, y: py}) for px, py in sample_points()) if value is not None}
    changes = {1, -1} <= signs or _univariate_sign_change(at_values, x, y)
    if changes:
        return DiscriminantFactor(expression, multiplicity, "type_change" if multiplicity % 2 else "tangency")
    if _univariate_without_roots(at_values, x, y) and signs:
        return DiscriminantFactor(expression, multiplicity, "never_zero", signs.pop())
    if multiplicity % 2 == 0:
        return DiscriminantFactor(expression, multiplicity, "tangency")
    return DiscriminantFactor(expression, multiplicity, "undecided")


def _univariate_polynomial(expression, x, y) -> sympy.Poly | None:
    variables = expression.free_symbols & {x, y}
    if len(variables) != 1 or expression.free_symbols - variables:
        return None
    try:
        return sympy.Poly(expression, *variables)
    except sympy.PolynomialError:
        return None


def _univariate_sign_change(expression, x, y) -> bool:
    """A polynomial in one variable with a real root of odd multiplicity changes sign there."""
    polynomial = _univariate_polynomial(expression, x, y)
    if polynomial is None or not polynomial.domain.is_Exact:
        return False
    _, parts = polynomial.sqf_list()
    return any(power % 2 and part.count_roots() > 0 for part, power in parts)


def _univariate_without_roots(expression, x, y) -> bool:
    polynomial = _univariate_polynomial(expression, x, y)
    return polynomial is not None and polynomial.domain.is_Exact and polynomial.count_roots() == 0


def _zone_points(constant, factors, x, y, values, data_symbols) -> dict[str, tuple]:
    """Sample points where D > 0 and where D < 0 (at the parameter values); none when D holds data."""
    found: dict[str, list] = {"hyperbolic": [], "elliptic": []}
    if any(f.role == "data" for f in factors) or not constant.is_number:
        return {key: () for key in found}
    product = constant * sympy.Mul(*[f.expression ** f.multiplicity for f in factors])
    at_values = product.xreplace(dict(values))
    for px, py in sample_points():
        value = real_value(at_values, {x: px, y: py})
        if value is None or value == 0:
            continue
        kind = "hyperbolic" if value > 0 else "elliptic"
        if len(found[kind]) < MAX_ZONE_POINTS:
            found[kind].append((px, py))
    return {key: tuple(points) for key, points in found.items()}


def discriminant_zones(factored: FactoredDiscriminant) -> tuple[tuple[str, sympy.Basic | None], ...]:
    """(type, condition) for every type D's sign allows; the condition is a sympy relation (or And of them)
    in the variables, parameters and data, None where the type holds everywhere.

    hyperbolic where P > 0 and elliptic where P < 0, P being the sign of the constant times the factors of
    odd multiplicity that may vanish or change sign; factors of even multiplicity that may vanish add
    ``abs(F) > 0``; parabolic where the product Z of every factor that may vanish is 0, written abs(Z) <= 0.
    """
    if factored.identically_zero:
        return (("parabolic", None),)
    sign = 1 if factored.constant.is_positive else -1
    odd, nonzero = [], []
    for f in factored.factors:
        if f.role == "never_zero":
            sign *= f.sign ** (f.multiplicity % 2)
        elif f.multiplicity % 2 and f.sign:          # of one sign, touching 0: D keeps its sign off F = 0
            sign *= f.sign
            nonzero.append(f.sign * f.expression > 0)
        elif f.multiplicity % 2:
            odd.append(f.expression)
        elif f.multiplicity > 0:
            nonzero.append(sympy.StrictGreaterThan(sympy.Abs(f.expression), 0))
    vanishing = [f.expression for f in factored.factors if f.role != "never_zero" and f.multiplicity > 0]
    zones: list[tuple[str, sympy.Basic | None]] = []
    for kind, wanted in (("hyperbolic", 1), ("elliptic", -1)):
        if not odd and sign != wanted:
            continue
        relation = sympy.StrictGreaterThan if sign * wanted > 0 else sympy.StrictLessThan
        parts = [relation(sympy.Mul(*odd), 0)] if odd else []
        parts += nonzero
        zones.append((kind, sympy.And(*parts) if len(parts) > 1 else (parts[0] if parts else None)))
    if vanishing:
        zones.append(("parabolic", sympy.LessThan(sympy.Abs(sympy.Mul(*vanishing)), 0)))
    return tuple(zones)
