"""Sound bounds of D = b^2 - 4ac and of D / (b^2 + 4|ac|) over cells, and the types each cell may hold.

D is first enclosed naturally from the enclosures of a, b, c (b^2 is non-negative, |ac| too). The natural
form suffers from the dependency problem (a and c share sub-expressions, so their product is overestimated
by O(h) on a cell of size h), which would leave a band of undecided cells along every type-change line. Where
the equation is smooth (no piecewise, min, max, abs, sign, heaviside, atan2 or data quantity) and D is defined on the
whole cell, D is also enclosed by the mean-value form
    D(cell) in D(centre) + dD/dx(cell) (x - x_c) + dD/dy(cell) (y - y_c)
(Moore, Kearfott and Cloud 2009, section 6.4), its interval gradient enclosed from sympy's derivatives of D
with the definitions substituted; overestimation O(h^2). The two enclosures are intersected (both hold).

The scale-free form D/S (S = b^2 + 4|ac|, the one every type decision uses, core.analysis.discriminant) is
bounded soundly without dividing intervals: D/S has the sign of D, lies in [-1, 1], is 0 where S = 0, and for
D < 0 it is at most D.hi / S.hi (for D > 0 at least D.lo / S.hi).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import sympy

from core.analysis.classify import TypeCode
from core.certify.elementary import absolute
from core.certify.enclosure import Boxes, DataRange, UnsupportedExpression, enclose_expressions, enclose_names
from core.certify.intervals import Interval, add, constant, down, multiply, negate, power_integer, up
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES

__all__ = ["ELLIPTIC_BIT", "HYPERBOLIC_BIT", "PARABOLIC_BIT", "UNDEFINED_BIT", "DiscriminantEncloser",
           "normalized_bounds", "possible_types"]

UNDEFINED_BIT, ELLIPTIC_BIT, PARABOLIC_BIT, HYPERBOLIC_BIT = (1 << int(code) for code in (
    TypeCode.UNDEFINED, TypeCode.ELLIPTIC, TypeCode.PARABOLIC, TypeCode.HYPERBOLIC))
# not differentiable everywhere they are defined (atan2 at the origin: sympy tidies atan2(x, x) to pi/4, the typed
# value there is 0)
_NON_SMOOTH = (sympy.Piecewise, sympy.Min, sympy.Max, sympy.Abs, sympy.sign, sympy.Heaviside, sympy.atan2)


def normalized_bounds(d: Interval, s: Interval) -> tuple[np.ndarray, np.ndarray]:
    """(lower, upper) bounds of D/S over each cell (where defined), from enclosures of D and S."""
    with np.errstate(all="ignore"):
        upper = np.where(d.hi < 0, up(d.hi / s.hi),
                         np.where(d.hi == 0, 0.0, np.where(s.lo > 0, up(d.hi / s.lo), 1.0)))
        lower = np.where(d.lo > 0, down(d.lo / s.hi),
                         np.where(d.lo == 0, 0.0, np.where(s.lo > 0, down(d.lo / s.lo), -1.0)))
    upper = np.minimum(np.where(np.isnan(upper), 1.0, upper), 1.0)
    lower = np.maximum(np.where(np.isnan(lower), -1.0, lower), -1.0)
    return lower, upper


def possible_types(d: Interval, s: Interval, tolerance: float) -> np.ndarray:
    """A bit mask per cell (uint8, bit 1 << TypeCode) of the types the cell may hold: undefined if a
    coefficient may be undefined somewhere; elliptic if D/S may be below -tolerance, hyperbolic if above
    +tolerance, parabolic if it may lie within; only undefined where the coefficients are undefined
    everywhere. One bit set means the type is proven throughout the cell."""
    lower, upper = normalized_bounds(d, s)
    shape = np.broadcast_shapes(*(np.shape(v) for v in (lower, upper, d.maybe_undefined, d.surely_undefined)))
    lower, upper = np.broadcast_to(lower, shape), np.broadcast_to(upper, shape)
    mask = np.where(np.broadcast_to(d.maybe_undefined, shape), UNDEFINED_BIT, 0).astype(np.uint8)
    mask |= np.where(lower < -tolerance, ELLIPTIC_BIT, 0).astype(np.uint8)
    mask |= np.where(upper > tolerance, HYPERBOLIC_BIT, 0).astype(np.uint8)
    mask |= np.where((lower <= tolerance) & (upper >= -tolerance), PARABOLIC_BIT, 0).astype(np.uint8)
    return np.where(d.surely_undefined, UNDEFINED_BIT, mask).astype(np.uint8)


def _d_and_s(a: Interval, b: Interval, c: Interval) -> tuple[Interval, Interval]:
    b2 = power_integer(b, 2)
    four_ac = multiply(constant(4.0), multiply(a, c))
    return add(b2, negate(four_ac)), add(b2, absolute(four_ac))


class DiscriminantEncloser:
    """Encloses D and S over batches of cells for one equation, parameter set and data.

    ``sharpened`` says whether the mean-value form is used (a smooth equation without data quantities whose
    derivatives have enclosures); ``dependency_form`` names the enclosure for reports.
    """

    def __init__(self, compiled: CompiledEquation, *, parameters: Mapping[str, float] | None = None,
                 data_range: DataRange | None = None, sharpen: bool = True) -> None:
        self.compiled = compiled
        self.parameters = compiled.parameter_vector(parameters)
        self.data_range = data_range
        self.gradient: dict[str, sympy.Basic] | None = None
        if sharpen and not compiled.data_keys:
            self.gradient = _gradient(compiled)

    @property
    def sharpened(self) -> bool:
        return self.gradient is not None

    @property
    def dependency_form(self) -> str:
        return "natural and mean-value forms, intersected" if self.sharpened else "natural interval extension"

    def coefficients(self, boxes: Boxes) -> dict[str, Interval]:
        return enclose_names(self.compiled, boxes, parameters=self.parameters, data_range=self.data_range,
                             names=COEFFICIENT_NAMES)

    def natural(self, boxes: Boxes) -> tuple[Interval, Interval]:
        values = self.coefficients(boxes)
        return _d_and_s(values["a"], values["b"], values["c"])

    def sharpen(self, boxes: Boxes, d: Interval) -> Interval:
        """D intersected with its mean-value form over ``boxes`` (cells where the form is not valid keep
        ``d``): valid where D is defined on the whole cell and its gradient enclosure is finite."""
        if self.gradient is None or boxes.size == 0:
            return d
        centre, _ = self.natural(boxes.centres())
        try:
            slopes = enclose_expressions(self.compiled, boxes, self.gradient, parameters=self.parameters)
        except UnsupportedExpression:
            self.gradient = None
            return d
        centres = boxes.centres()
        offsets = []
        for low, high, middle in ((boxes.x0, boxes.x1, centres.x0), (boxes.y0, boxes.y1, centres.y0)):
            with np.errstate(all="ignore"):
                offsets.append(Interval(down(low - middle), up(high - middle), d.maybe_undefined,
                                        d.surely_undefined))
        half_x, half_y = offsets
        form = add(centre, add(multiply(slopes["x"], half_x), multiply(slopes["y"], half_y)))
        valid = ~(d.maybe_undefined | centre.maybe_undefined | slopes["x"].maybe_undefined
                  | slopes["y"].maybe_undefined | form.maybe_undefined)
        lo = np.where(valid, np.maximum(d.lo, form.lo), d.lo)
        hi = np.where(valid, np.minimum(d.hi, form.hi), d.hi)
        return Interval(lo, hi, d.maybe_undefined, d.surely_undefined)


def _gradient(compiled: CompiledEquation) -> dict[str, sympy.Basic] | None:
    """dD/dx and dD/dy from the definitions substituted into a, b, c; None where D is not smooth."""
    a, b, c = (compiled.substituted[k] for k in COEFFICIENT_NAMES)
    if any(expr.has(*_NON_SMOOTH) for expr in (a, b, c)):
        return None
    d = b ** 2 - 4 * a * c
    first, second = (compiled.symbols[v] for v in compiled.variables)
    return {"x": sympy.diff(d, first), "y": sympy.diff(d, second)}
