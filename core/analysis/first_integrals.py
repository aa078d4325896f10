"""The characteristic families as formulas: their directions, and first integrals (invariants) of them.

A characteristic family of a u_xx + b u_xy + c u_yy follows a direction (p, q); ``family_directions`` gives
both families' directions as core.analysis.directions numbers them. A first integral phi has grad(phi) .
(p, q) = 0, so the family's curves are its level lines. ``first_integral`` tries methods from the cheapest and
most global to sympy's general solver:

    p = 0 or q = 0        phi = x, or phi = y
    linear in y           dy/dx = P(x) y + Q(x): phi = mu y - integral(mu Q), mu = exp(-integral(P))
    free of y or x        phi = y - integral(f dx), or integral(dy / f) - x
    separable             f = g(x) h(y): phi = integral(dy / h) - integral(g dx)
    sympy's dsolve        each hint classify_ode offers (implicit solutions kept, simplify=False), for y(x)
                          and then for x(y); the constant of integration solved for

Each candidate is checked: at the sample points given (where the family is real), phi must be finite, with
grad(phi) . (p, q) below 1e-15 of (|phi_x| + |phi_y|)(|p| + |q|) in 30-digit arithmetic; without usable
points, sympy must simplify the residual to 0. A candidate real at every usable point is taken at once;
otherwise the one real at most points, with a note. Where D < 0 the same search on the complex direction
gives a complex invariant, whose real and imaginary parts (``complex_coordinates``) are the elliptic
coordinates. Nothing here is bounded in time: callers run these functions through
core.deadline.run_with_deadline (they live in a module that imports only sympy, so a spawned child starts
quickly).
"""

from __future__ import annotations

import cmath
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass

import sympy

__all__ = ["FirstIntegral", "complex_coordinates", "family_directions", "first_integral",
           "real_and_imaginary", "residual_is_zero"]

RELATIVE_RESIDUAL = 1e-15
_SKIPPED_HINTS = ("1st_power_series", "lie_group")     # series are not closed forms; lie_group is tried last


@dataclass(frozen=True)
class FirstIntegral:
    """A first integral found (None when none was), the method that found it and notes."""

    invariant: sympy.Expr | None
    method: str
    notes: tuple[str, ...] = ()


def _value(expression: sympy.Expr, x, y, point, complex_ok: bool, fixed=None) -> complex | None:
    try:
        value = complex(sympy.N(expression.xreplace({**(fixed or {}), x: point[0], y: point[1]}), 30))
    except (TypeError, ValueError, ZeroDivisionError, ArithmeticError):
        return None
    if not cmath.isfinite(value):
        return None
    if not complex_ok and abs(value.imag) > 1e-20 * max(1.0, abs(value.real)):
        return None
    return value


def residual_is_zero(expression: sympy.Expr, scale: sympy.Expr, x, y, points, fixed=None) -> tuple[int, int]:
    """(points where |expression| <= 1e-15 |scale| with scale != 0, points where both are defined), other
    symbols (parameters) at their values in ``fixed``: a candidate passes when the two counts are equal and
    positive."""
    good = usable = 0
    for point in points:
        value, size = _value(expression, x, y, point, True, fixed), _value(scale, x, y, point, True, fixed)
        if value is None or size is None:
            continue
        usable += 1
        if abs(size) > 0 and abs(value) <= RELATIVE_RESIDUAL * abs(size):
            good += 1
    return good, usable


def _check(phi, p, q, x, y, points, fixed, complex_ok) -> int | None:
    """How many of ``points`` show phi to be a first integral (None: it fails somewhere, or nowhere real)."""
    if phi is None or not phi.free_symbols & {x, y} or phi.has(sympy.Integral, sympy.Symbol("C1")) \
            or phi.atoms(sympy.core.function.AppliedUndef):
        return None
    phi_x, phi_y = sympy.diff(phi, x), sympy.diff(phi, y)
    real = [point for point in points if _value(phi, x, y, point, complex_ok, fixed) is not None]
    size = (sympy.Abs(phi_x) + sympy.Abs(phi_y)) * (sympy.Abs(p) + sympy.Abs(q))
    good, usable = residual_is_zero(phi_x * p + phi_y * q, size, x, y, real, fixed)
    if usable:
        return good if good == usable else None
    if points:
        return None
    return 0 if sympy.simplify(phi_x * p + phi_y * q) == 0 else None


def _candidates(p, q, x, y) -> Iterator[tuple[str, sympy.Expr]]:
    """Candidate first integrals, cheapest and most global first (module docstring)."""
    if p == 0 or sympy.simplify(p) == 0:
        yield "vertical", x
        return
    if q == 0 or sympy.simplify(q) == 0:
        yield "horizontal", y
        return
    slope = sympy.simplify(q / p)
    if not slope.has(y):
        yield "integration", y - sympy.integrate(slope, x)
    linear = sympy.Poly(slope, y) if slope.is_polynomial(y) else None
    if linear is not None and linear.degree() == 1:
        rate, offset = linear.coeff_monomial(y), linear.coeff_monomial(1)
        factor = sympy.exp(-sympy.integrate(rate, x))
        yield "linear", sympy.simplify(factor * y - sympy.integrate(factor * offset, x))
    if not slope.has(x):
        yield "integration", sympy.integrate(1 / slope, y) - x
    parts = sympy.separatevars(slope, [x, y], dict=True)
    if parts:
        yield "separable", sympy.integrate(1 / parts[y], y) - sympy.integrate(parts["coeff"] * parts[x], x)
    yield from _dsolved(slope, x, y)
    yield from ((method, phi) for method, phi in _dsolved(sympy.simplify(p / q), y, x))


def _dsolved(slope, x, y) -> Iterator[tuple[str, sympy.Expr]]:
    """First integrals from sympy's dsolve for dy/dx = slope, one hint at a time, lie_group last."""
    function = sympy.Function("_Y")(x)
    equation = sympy.Eq(function.diff(x), slope.xreplace({y: function}))
    try:
        hints = [h for h in sympy.classify_ode(equation, function) if not h.endswith("_Integral")
                 and h not in _SKIPPED_HINTS]
    except (NotImplementedError, ValueError, TypeError):
        return
    for hint in [*hints, "lie_group"]:
        try:
            solutions = sympy.dsolve(equation, function, hint=hint, simplify=False)
        except (NotImplementedError, ValueError, TypeError, AttributeError, ZeroDivisionError):
            continue
        for solution in solutions if isinstance(solutions, list) else [solutions]:
            for phi in _constant_of(solution, function, y):
                yield f"dsolve ({hint})", phi


def _constant_of(solution: sympy.Eq, function, y) -> list[sympy.Expr]:
    """The constant of integration as a function of x and y, from a solution of dsolve."""
    constant = sympy.Symbol("C1")
    relation = (solution.lhs - solution.rhs).xreplace({function: y})
    if not relation.has(constant) or relation.has(sympy.Derivative):
        return []
    rest, term = relation.as_independent(constant, as_Add=True)
    if term == constant:
        return [-rest]
    multiplier = sympy.simplify(term / constant)
    if not multiplier.has(constant) and multiplier.free_symbols.isdisjoint({y}) and multiplier.is_number:
        return [-rest / multiplier]
    try:
        return [value for value in sympy.solve(relation, constant) if not value.has(constant)]
    except (NotImplementedError, ValueError, TypeError):
        return []


def first_integral(p: sympy.Expr, q: sympy.Expr, x: sympy.Symbol, y: sympy.Symbol,
                   points: Sequence[tuple[sympy.Expr, sympy.Expr]], fixed: Mapping | None = None,
                   complex_ok: bool = False) -> FirstIntegral:
    """A first integral of the direction field (p, q) (module docstring), checked at ``points`` with the other
    symbols at their values in ``fixed``; FirstIntegral(None, "", notes) when none is found."""
    best: tuple[int, str, sympy.Expr] | None = None
    for method, phi in _candidates(p, q, x, y):
        phi = _tidy(phi, x, y)
        count = _check(phi, p, q, x, y, points, fixed, complex_ok)
        if count is None:
            continue
        defined = sum(1 for point in points if _defined(p, q, x, y, point, fixed, complex_ok))
        real_everywhere = count == defined
        if real_everywhere or not points:
            return FirstIntegral(phi, method)
        if best is None or count > best[0]:
            best = (count, method, phi)
    if best is not None:
        note = (f"the invariant found is real in part of the zone only (at {best[0]} of the sample points "
                "where the family is real)")
        return FirstIntegral(best[2], best[1], (note,))
    return FirstIntegral(None, "", ("sympy found no first integral of this family in closed form",))


def _defined(p, q, x, y, point, fixed, complex_ok) -> bool:
    return (_value(p, x, y, point, complex_ok, fixed) is not None
            and _value(q, x, y, point, complex_ok, fixed) is not None)


def _tidy(phi: sympy.Expr, x, y) -> sympy.Expr:
    """phi without additive constants (and a plain numeric factor), simplified when that is shorter."""
    phi = sympy.expand(phi) if phi.is_polynomial(x, y) else phi
    if isinstance(phi, sympy.Add):
        phi = sympy.Add(*[term for term in phi.args if term.free_symbols & {x, y}])
    coefficient, rest = phi.as_coeff_Mul()
    if coefficient.is_Rational and coefficient != 0 and rest.free_symbols & {x, y}:
        phi = rest
    simpler = sympy.simplify(phi)
    phi = simpler if sympy.count_ops(simpler) < sympy.count_ops(phi) else phi
    return -phi if phi.could_extract_minus_sign() else phi


def real_and_imaginary(phi: sympy.Expr) -> tuple[sympy.Expr, sympy.Expr] | None:
    """(alpha, beta) with phi = alpha + i beta, both free of the imaginary unit, or None.

    Piecewise expressions are split branch by branch; elsewhere phi must be a polynomial in i once expanded
    (i^2 = -1), which keeps powers such as y**(3/2) whole, where sympy's as_real_imag would write them with
    atan2 and |y|.
    """
    phi = sympy.piecewise_fold(phi)
    if isinstance(phi, sympy.Piecewise):
        parts = [(real_and_imaginary(value), condition) for value, condition in phi.args]
        if any(part is None or condition.has(sympy.I) for part, condition in parts):
            return None
        return tuple(sympy.Piecewise(*[(part[k], condition) for part, condition in parts]) for k in (0, 1))
    unit = sympy.Dummy("i")
    expanded = sympy.expand(phi.xreplace({sympy.I: unit}))
    if not expanded.is_polynomial(unit):
        return None
    remainder = sympy.rem(sympy.Poly(expanded, unit), sympy.Poly(unit ** 2 + 1, unit))
    alpha, beta = remainder.coeff_monomial(1), remainder.coeff_monomial(unit)
    if alpha.has(sympy.I, unit) or beta.has(sympy.I, unit):
        return None
    return alpha, beta


def family_directions(a, b, c, root, simplify: bool = True
                      ) -> tuple[tuple[tuple | None, sympy.Expr | None], ...]:
    """(direction, slope dy/dx) of families 1 and 2, ``root`` being sqrt(D): of (2a, b +- root) and
    (b -+ root, 2c) the first that is not identically 0, as core.analysis.directions numbers the families;
    slope None where the family is vertical. ``simplify=False`` is a quick form for when the simplified one
    does not come in time."""
    tidy = sympy.simplify if simplify else (lambda value: value)
    families = []
    for sign in (1, -1):
        direction = None
        for candidate in ((2 * a, b + sign * root), (b - sign * root, 2 * c)):
            simplified = tuple(tidy(v) for v in candidate)
            if any(v != 0 for v in simplified):
                direction = simplified
                break
        slope = None if direction is None or direction[0] == 0 else tidy(direction[1] / direction[0])
        families.append((direction, slope))
    return tuple(families)


def complex_coordinates(a, b, c, discriminant, x, y, points, fixed=None
                        ) -> tuple[tuple[sympy.Expr, sympy.Expr] | None, tuple[str, ...]]:
    """((alpha, beta), notes): the real and imaginary parts of family 1's complex invariant where D < 0,
    direction (2a, b + i sqrt(-D)); checked at ``points`` (in the elliptic zone). None when not found."""
    found = first_integral(2 * a, b + sympy.I * sympy.sqrt(-discriminant), x, y, points, fixed, True)
    if found.invariant is None:
        return None, found.notes
    parts = real_and_imaginary(found.invariant)
    if parts is None or not all(part.free_symbols & {x, y} for part in parts):
        return None, ("the complex invariant found has no real and imaginary parts sympy can separate",)
    return tuple(_coordinate(part, x, y) for part in parts), found.notes


def _coordinate(expression, x, y):
    """A coordinate without additive constants, simplified when that is shorter, its sign turned so that it
    does not start with a minus (never rescaled: alpha and beta must keep their common scale)."""
    if isinstance(expression, sympy.Add):
        expression = sympy.Add(*[t for t in expression.args if t.free_symbols & {x, y}])
    simpler = sympy.simplify(expression)
    expression = simpler if sympy.count_ops(simpler) < sympy.count_ops(expression) else expression
    return -expression if expression.could_extract_minus_sign() else expression
