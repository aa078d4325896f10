"""The Cauchy problem for a u_xx + b u_xy + c u_yy = 0 with constant a, b, c: u and its normal derivative given
on a straight line, the solution in closed form.

With constant coefficients the characteristics are straight lines. Each family k has a direction r_k (the
numbering and representation of core.analysis.directions: family 1 ~ (2a, b + sqrt(D)), family 2 ~ (2a,
b - sqrt(D)), or (b -+ sqrt(D), 2c) when that is longer) and an invariant phi_k = r_k,y x - r_k,x y, constant
along it. The operator factors as (r_1 . grad)(r_2 . grad) up to a constant, so where D > 0 every solution is
u = F(phi_1) + G(phi_2).

The data line alpha x + beta y = gamma is parametrised by arc length s from the foot of the perpendicular
from the origin, s increasing with x (with y on a vertical line); its unit normal is (alpha, beta) / |(alpha,
beta)|. Writing m_k and n_k for the derivatives of phi_k along the line and along the normal, f(s) for u and
g(s) for the normal derivative on it, the data fix F' and G' on the line and

    u(x, y) = (m_1 n_2 f(s_1) - m_2 n_1 f(s_2)) / det + (m_1 m_2 / det) * integral of g from s_1 to s_2,

det = m_1 n_2 - m_2 n_1, where s_k is where the family-k characteristic through (x, y) meets the line (for
u_yy = u_xx on y = 0 it is d'Alembert's formula). A line along a characteristic (m_k = 0) carries no
independent normal derivative and is refused. Where D = 0 the one family r gives u = F(phi) + psi G(phi), psi
the coordinate along r: u is linear along each characteristic, and the value and slope where it crosses a
non-characteristic data line fix it. Where D < 0 the problem is ill-posed (Hadamard's example) and refused.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy

from core.deadline import TimedOut, run_with_deadline
from core.equations.formula_text import NotInLanguage, formula_text
from core.progress import CancelCheck, Cancelled

__all__ = ["CauchyError", "CauchySolution", "DataLine", "solution_formula", "solve_cauchy"]

INTEGRATION_SECONDS = 10.0


class CauchyError(ValueError):
    """The problem cannot be solved as posed (elliptic, a characteristic data line, a degenerate operator)."""


@dataclass(frozen=True)
class DataLine:
    """The data line alpha x + beta y = gamma (exact sympy numbers; (alpha, beta) not both 0)."""

    alpha: sympy.Expr
    beta: sympy.Expr
    gamma: sympy.Expr

    def __post_init__(self) -> None:
        if self.alpha == 0 and self.beta == 0:
            raise CauchyError("the data line needs a non-zero coefficient of x or y")

    @property
    def normal(self) -> tuple[sympy.Expr, sympy.Expr]:
        size = sympy.sqrt(self.alpha ** 2 + self.beta ** 2)
        return self.alpha / size, self.beta / size

    @property
    def tangent(self) -> tuple[sympy.Expr, sympy.Expr]:
        """The unit direction of increasing s: (beta, -alpha) / |.|, turned to point towards +x (or +y)."""
        nx, ny = self.normal
        flip = self.beta < 0 or (self.beta == 0 and self.alpha > 0)
        return (-ny, nx) if flip else (ny, -nx)

    @property
    def origin(self) -> tuple[sympy.Expr, sympy.Expr]:
        """The point s = 0: the foot of the perpendicular from (0, 0)."""
        size2 = self.alpha ** 2 + self.beta ** 2
        return self.gamma * self.alpha / size2, self.gamma * self.beta / size2

    def point(self, s) -> tuple[sympy.Expr, sympy.Expr]:
        (x0, y0), (tx, ty) = self.origin, self.tangent
        return x0 + s * tx, y0 + s * ty


@dataclass(frozen=True)
class CauchySolution:
    """The solution of one Cauchy problem, as sympy expressions in the symbols x and y.

    ``solution`` is u(x, y) in closed form, None when sympy found no antiderivative of the normal derivative
    within the deadline (``exact`` then holds the unevaluated integral, which ``value_at`` evaluates
    numerically); ``general`` the general solution with arbitrary functions F and G; ``directions`` the
    characteristic directions (one where parabolic) and ``invariants`` the phi_k. ``unevaluated`` is u with
    the integral of the normal derivative left unevaluated (the data and their integral only: what a numerical
    evaluation on many points needs, core.analysis.cauchy_field); None means ``exact``.
    """

    type: str
    x: sympy.Symbol
    y: sympy.Symbol
    line: DataLine
    exact: sympy.Expr
    solution: sympy.Expr | None
    general: sympy.Expr
    directions: tuple[tuple[sympy.Expr, sympy.Expr], ...]
    invariants: tuple[sympy.Expr, ...]
    notes: tuple[str, ...]
    unevaluated: sympy.Expr | None = None

    def value_at(self, x: float, y: float) -> float:
        """u at (x, y), to double precision (the integral, if any, by mpmath quadrature)."""
        return float(self.exact.subs({self.x: sympy.Float(x, 30), self.y: sympy.Float(y, 30)}).evalf(30))

    def domain_of_dependence(self, x: float, y: float) -> tuple[tuple[float, float], ...]:
        """Where the characteristics through (x, y) meet the data line (two points; one where parabolic)."""
        points = []
        for phi, direction in zip(self.invariants, self.directions, strict=True):
            s = _crossing(phi, self.line, self.x, self.y).subs({self.x: x, self.y: y})
            px, py = self.line.point(s)
            points.append((float(px), float(py)))
        return tuple(points)


def _number(value) -> sympy.Expr:
    """An exact sympy number: a float as the decimal its shortest repr shows (0.1 -> 1/10)."""
    if isinstance(value, sympy.Basic):
        return sympy.nsimplify(value, rational=True) if value.has(sympy.Float) else value
    if isinstance(value, float):
        return sympy.Rational(repr(value))
    return sympy.Integer(value)


def _family_directions(a, b, c) -> tuple[tuple[sympy.Expr, sympy.Expr], ...]:
    """The characteristic directions, family 1 then 2 (one where D = 0), as core.analysis.directions numbers
    them: of (2a, b + sign sqrt(D)) and (b - sign sqrt(D), 2c) the longer."""
    root = sympy.sqrt(b ** 2 - 4 * a * c)
    directions = []
    for sign in ((1,) if root == 0 else (1, -1)):
        first, second = (2 * a, b + sign * root), (b - sign * root, 2 * c)
        norm1, norm2 = (float(sympy.sqrt(u ** 2 + v ** 2)) for u, v in (first, second))
        directions.append(tuple(sympy.expand(v) for v in (first if norm1 >= norm2 else second)))
    return tuple(directions)


def _invariant(direction, x: sympy.Symbol, y: sympy.Symbol) -> sympy.Expr:
    return direction[1] * x - direction[0] * y


def _crossing(phi: sympy.Expr, line: DataLine, x: sympy.Symbol, y: sympy.Symbol) -> sympy.Expr:
    """s where the line phi = phi(x, y) meets the data line."""
    (x0, y0), (tx, ty) = line.origin, line.tangent
    along = sympy.diff(phi, x) * tx + sympy.diff(phi, y) * ty
    return (phi - phi.subs({x: x0, y: y0})) / along


def _integrate(g: sympy.Expr, s: sympy.Symbol, low: sympy.Expr, high: sympy.Expr,
               seconds: float, cancel: CancelCheck | None = None) -> tuple[sympy.Expr, bool]:
    """The integral of g over [low, high] in closed form when sympy finds one in time; else unevaluated.

    A polynomial in s is integrated here (term by term: it always ends, quickly); anything else in a child
    process with a deadline (core.deadline)."""
    if g.is_polynomial(s):
        return sympy.integrate(g, (s, low, high)), True
    try:
        value = run_with_deadline(sympy.integrate, g, (s, low, high), seconds=seconds, cancel=cancel)
    except TimedOut:
        return sympy.Integral(g, (s, low, high)), False
    return value, not value.has(sympy.Integral)


def solve_cauchy(a, b, c, line: DataLine, u_data: sympy.Expr, du_data: sympy.Expr, s: sympy.Symbol, *,
                 x: sympy.Symbol | None = None, y: sympy.Symbol | None = None,
                 integration_seconds: float = INTEGRATION_SECONDS,
                 cancel: CancelCheck | None = None) -> CauchySolution:
    """Solve a u_xx + b u_xy + c u_yy = 0 (a, b, c numbers) with u = ``u_data`` and its derivative along the
    line's unit normal = ``du_data`` on ``line``, both expressions in ``s`` (arc length along the line, see
    the module docstring; data in x and y are restricted to the line first). CauchyError when the equation is
    elliptic or degenerate or the line is characteristic. ``cancel`` (raise Cancelled) is asked between the
    steps and while the integral's child process works."""
    x = sympy.Symbol("x", real=True) if x is None else x
    y = sympy.Symbol("y", real=True) if y is None else y
    a, b, c = (_number(v) for v in (a, b, c))
    if a == 0 and b == 0 and c == 0:
        raise CauchyError("a, b and c are all 0: there is no second-order equation")
    discriminant = b ** 2 - 4 * a * c
    if discriminant < 0:
        raise CauchyError(
            f"the equation is elliptic (b^2 - 4ac = {discriminant}): its Cauchy problem is ill-posed. Hadamard's "
            "example for u_xx + u_yy = 0: the data u = 0, u_y = sin(n x)/n on y = 0 give u = sin(n x) sinh(n y)/n^2, "
            "data tending to 0 as n grows while the solution at any y != 0 grows without bound")
    restrict = dict(zip((x, y), line.point(s), strict=True))
    f, g = (sympy.S(v).subs(restrict) for v in (u_data, du_data))     # numbers or sympy trees, never text
    directions = _family_directions(a, b, c)
    invariants = tuple(sympy.expand(_invariant(d, x, y)) for d in directions)
    tangent, normal = line.tangent, line.normal
    along = [sympy.radsimp(sympy.expand(sympy.diff(phi, x) * tangent[0] + sympy.diff(phi, y) * tangent[1]))
             for phi in invariants]
    for family, (m, direction) in enumerate(zip(along, directions, strict=True), 1):
        if m.is_zero or m.equals(0):
            label = "the characteristic direction" if len(directions) == 1 else f"the family-{family} characteristic direction"
            slope = "infinite" if direction[0] == 0 else sympy.simplify(direction[1] / direction[0])
            raise CauchyError(f"the data line runs along {label} (dx, dy) = ({direction[0]}, {direction[1]}), "
                              f"slope dy/dx = {slope}: "
                              "u and its normal derivative cannot be given independently on a characteristic")
    if cancel is not None and cancel():
        raise Cancelled("Cauchy problem cancelled")
    notes: list[str] = []
    if len(directions) == 2:
        exact, closed, unevaluated = _hyperbolic(invariants, along, normal, line, f, g, s, x, y,
                                                 integration_seconds, cancel)
        F, G = sympy.Function("F"), sympy.Function("G")
        general = F(invariants[0]) + G(invariants[1])
        kind = "hyperbolic"
    else:
        exact, closed = _parabolic(invariants[0], directions[0], along[0], line, f, g, s, x, y), True
        unevaluated = exact
        F, G = sympy.Function("F"), sympy.Function("G")
        r = directions[0]
        size = sympy.sqrt(r[0] ** 2 + r[1] ** 2)
        general = F(invariants[0]) + sympy.radsimp((r[0] * x + r[1] * y) / size) * G(invariants[0])
        kind = "parabolic"
        notes.append("parabolic: u is linear along each characteristic; its value and slope where the "
                     "characteristic crosses the data line (u and the normal derivative there) fix F and G")
    if not closed:
        notes.append(f"sympy found no closed-form antiderivative of the normal derivative (it may give up, or run "
                     f"out of its {integration_seconds:g} s): the solution holds an integral, evaluated numerically "
                     "at a point")
    return CauchySolution(type=kind, x=x, y=y, line=line, exact=exact, solution=exact if closed else None,
                          general=general, directions=directions, invariants=invariants, notes=tuple(notes),
                          unevaluated=unevaluated)


def solution_formula(solution: CauchySolution, names: dict[sympy.Symbol, str] | None = None
                     ) -> tuple[str | None, str | None]:
    """(formula text of the closed-form solution, None), or (None, why there is none): no closed form, or one
    the formula language cannot say (core.equations.formula_text)."""
    if solution.solution is None:
        return None, None
    try:
        return formula_text(solution.solution, names), None
    except NotInLanguage as error:
        return None, f"the closed form is not expressible in the formula language ({error})"


def _hyperbolic(invariants, along, normal, line: DataLine, f, g, s, x, y,
                seconds: float, cancel: CancelCheck | None = None) -> tuple[sympy.Expr, bool, sympy.Expr]:
    across = [sympy.diff(phi, x) * normal[0] + sympy.diff(phi, y) * normal[1] for phi in invariants]
    (m1, m2), (n1, n2) = along, across
    det = sympy.radsimp(sympy.expand(m1 * n2 - m2 * n1))
    s1, s2 = (sympy.expand(sympy.radsimp(_crossing(phi, line, x, y))) for phi in invariants)
    integral, closed = _integrate(g, s, s1, s2, seconds, cancel)
    weights = [sympy.radsimp(sympy.expand(w / det)) for w in (m1 * n2, -m2 * n1, m1 * m2)]
    values = weights[0] * f.subs(s, s1) + weights[1] * f.subs(s, s2)
    return values + weights[2] * integral, closed, values + weights[2] * sympy.Integral(g, (s, s1, s2))


def _parabolic(phi, direction, m, line: DataLine, f, g, s, x, y) -> sympy.Expr:
    size = sympy.sqrt(direction[0] ** 2 + direction[1] ** 2)
    r = (direction[0] / size, direction[1] / size)
    crossing = sympy.expand(sympy.radsimp(_crossing(phi, line, x, y)))
    qx, qy = line.point(crossing)
    tangent, normal = line.tangent, line.normal
    slope = (r[0] * tangent[0] + r[1] * tangent[1]) * sympy.diff(f, s) \
        + (r[0] * normal[0] + r[1] * normal[1]) * g
    distance = (x - qx) * r[0] + (y - qy) * r[1]
    return f.subs(s, crossing) + sympy.expand(distance) * slope.subs(s, crossing)

