"""Interval enclosures of the expression language's functions: exp, log, sqrt, powers, the trigonometric and
hyperbolic functions and their inverses, atan2, abs, sign, heaviside, min and max.

Monotone functions take their bounds from the end points; sin and cos also from the extrema (+-1) the cell
may reach, tan and cosh from their poles and minimum. Values from the C library (within one unit in the last
place for glibc's exp, log, sin, pow...) are moved two doubles outward, and results are clamped to the
function's mathematical range (exp >= 0, |sin| <= 1). Domain errors set the flags: log or sqrt of an
interval reaching below 0, acos and asin outside [-1, 1], tan at a pole, x ** p of a negative x are maybe
undefined, and surely undefined when the whole interval is outside the domain.
Method: Moore, Kearfott and Cloud, "Introduction to Interval Analysis" (SIAM 2009), section 5.1.
"""

from __future__ import annotations

import math

import numpy as np

from core.certify.intervals import Interval, finished, power_integer, up
from core.certify.intervals import down as _down

__all__ = ["absolute", "arc_cosine", "arc_sine", "arc_tangent", "arc_tangent2", "cosine", "exponential",
           "extremum", "heaviside", "hyperbolic_cosine", "hyperbolic_sine", "hyperbolic_tangent", "logarithm",
           "power", "sign", "sine", "square_root", "tangent"]

_PI_HI = up(np.float64(math.pi))
_HALF_PI_HI = up(np.float64(math.pi / 2))
_LIBM_STEPS = 2
_PERIODIC_LIMIT = 1e8       # beyond this |x| the period count is not trusted: sin and cos give [-1, 1]


def _flags(*parts: Interval):
    maybe, surely = parts[0].maybe_undefined, parts[0].surely_undefined
    for part in parts[1:]:
        maybe, surely = maybe | part.maybe_undefined, surely | part.surely_undefined
    return maybe, surely


def _monotone(a: Interval, function, *, increasing: bool = True, steps: int = _LIBM_STEPS):
    with np.errstate(all="ignore"):
        first, second = function(a.lo), function(a.hi)
    low, high = (first, second) if increasing else (second, first)
    return _down(low, steps), up(high, steps)


def exponential(a: Interval) -> Interval:
    lo, hi = _monotone(a, np.exp)
    return finished(np.maximum(lo, 0.0), hi, *_flags(a))


def logarithm(a: Interval) -> Interval:
    """log, defined for a > 0 (log 0 is -inf: undefined)."""
    maybe, surely = _flags(a)
    lo, hi = _monotone(Interval(np.maximum(a.lo, 0.0), a.hi, maybe, surely), np.log)
    return finished(lo, hi, maybe | (a.lo <= 0), surely | (a.hi <= 0))


def square_root(a: Interval) -> Interval:
    """sqrt, defined for a >= 0; correctly rounded, so one step outward."""
    maybe, surely = _flags(a)
    lo, hi = _monotone(Interval(np.maximum(a.lo, 0.0), a.hi, maybe, surely), np.sqrt, steps=1)
    return finished(np.maximum(lo, 0.0), hi, maybe | (a.lo < 0), surely | (a.hi < 0))


def power(base: Interval, exponent: Interval, constant_exponent: float | None) -> Interval:
    """base ** exponent as double-precision pow defines it: an integer constant exponent takes any base
    (power_integer); otherwise a negative base is defined only at integer exponents, and 0 ** e only for
    e >= 0. For base > 0, b ** e is monotone in each argument, so its extremes over a box are at corners."""
    if constant_exponent is not None and float(constant_exponent).is_integer() and abs(constant_exponent) <= 64:
        return power_integer(base, int(constant_exponent))
    maybe, surely = _flags(base, exponent)
    clipped_lo, clipped_hi = np.maximum(base.lo, 0.0), np.maximum(base.hi, 0.0)
    with np.errstate(all="ignore"):
        corners = [np.power(b, e) for b in (clipped_lo, clipped_hi) for e in (exponent.lo, exponent.hi)]
    lo = np.minimum(np.minimum(corners[0], corners[1]), np.minimum(corners[2], corners[3]))
    hi = np.maximum(np.maximum(corners[0], corners[1]), np.maximum(corners[2], corners[3]))
    lo, hi = np.maximum(_down(lo, _LIBM_STEPS), 0.0), up(hi, _LIBM_STEPS)
    no_positive_part = base.hi < 0     # only the reflected part below holds values
    lo, hi = np.where(no_positive_part, np.inf, lo), np.where(no_positive_part, -np.inf, hi)
    negative_part = base.lo < 0
    if np.any(negative_part):
        # |b| ** e with either sign: a negative base at an integer exponent
        magnitude = Interval(np.where(base.contains_zero, 0.0, np.minimum(-base.hi, -base.lo)),
                             np.maximum(np.abs(base.lo), np.abs(base.hi)), maybe, surely)
        reflected = power(magnitude, exponent, None)
        lo = np.where(negative_part, np.minimum(lo, -reflected.hi), lo)
        hi = np.where(negative_part, np.maximum(hi, reflected.hi), hi)
        no_integer = np.ceil(exponent.lo) > exponent.hi
        surely = surely | ((base.hi < 0) & no_integer)
        maybe = maybe | negative_part
    zero_base = base.contains_zero & (exponent.lo < 0)
    maybe = maybe | zero_base
    hi = np.where(zero_base, np.inf, hi)
    return finished(lo, hi, maybe, surely | ((base.lo == 0) & (base.hi == 0) & (exponent.hi < 0)))


def _reaches(a: Interval, phase: float, period: float) -> np.ndarray:
    """Whether [lo, hi] may hold phase + k * period for an integer k (with a margin: never a false no)."""
    with np.errstate(all="ignore"):
        first = np.ceil((a.lo - phase) / period - 1e-9)
        last = np.floor((a.hi - phase) / period + 1e-9)
    return first <= last


def _periodic(a: Interval, function, peak_phase: float, trough_phase: float) -> Interval:
    """sin or cos: end-point values, widened to 1 or -1 where a peak or trough may lie inside."""
    with np.errstate(all="ignore"):
        first, second = function(a.lo), function(a.hi)
    low = np.maximum(_down(np.minimum(first, second), _LIBM_STEPS), -1.0)
    high = np.minimum(up(np.maximum(first, second), _LIBM_STEPS), 1.0)
    wide = (a.hi - a.lo >= 2 * math.pi) | (np.abs(a.lo) > _PERIODIC_LIMIT) | (np.abs(a.hi) > _PERIODIC_LIMIT) \
        | ~np.isfinite(a.lo) | ~np.isfinite(a.hi)
    high = np.where(wide | _reaches(a, peak_phase, 2 * math.pi), 1.0, high)
    low = np.where(wide | _reaches(a, trough_phase, 2 * math.pi), -1.0, low)
    return finished(low, high, *_flags(a))


def sine(a: Interval) -> Interval:
    return _periodic(a, np.sin, math.pi / 2, -math.pi / 2)


def cosine(a: Interval) -> Interval:
    return _periodic(a, np.cos, 0.0, math.pi)


def tangent(a: Interval) -> Interval:
    """tan: increasing between poles; a cell that may hold a pole is maybe undefined, with no bounds."""
    maybe, surely = _flags(a)
    pole = _reaches(a, math.pi / 2, math.pi) | (np.abs(a.lo) > _PERIODIC_LIMIT) | (np.abs(a.hi) > _PERIODIC_LIMIT) \
        | ~np.isfinite(a.lo) | ~np.isfinite(a.hi)
    lo, hi = _monotone(a, np.tan)
    return finished(np.where(pole, -np.inf, lo), np.where(pole, np.inf, hi), maybe | pole, surely)


def _inverse_on_unit(a: Interval, function, increasing: bool, low_limit: float, high_limit: float) -> Interval:
    maybe, surely = _flags(a)
    clipped = Interval(np.clip(a.lo, -1.0, 1.0), np.clip(a.hi, -1.0, 1.0), maybe, surely)
    lo, hi = _monotone(clipped, function, increasing=increasing)
    outside = (a.lo < -1.0) | (a.hi > 1.0)
    return finished(np.maximum(lo, low_limit), np.minimum(hi, high_limit), maybe | outside,
                    surely | (a.lo > 1.0) | (a.hi < -1.0))


def arc_sine(a: Interval) -> Interval:
    return _inverse_on_unit(a, np.arcsin, True, -_HALF_PI_HI, _HALF_PI_HI)


def arc_cosine(a: Interval) -> Interval:
    return _inverse_on_unit(a, np.arccos, False, 0.0, _PI_HI)


def arc_tangent(a: Interval) -> Interval:
    lo, hi = _monotone(a, np.arctan)
    return finished(np.maximum(lo, -_HALF_PI_HI), np.minimum(hi, _HALF_PI_HI), *_flags(a))


def arc_tangent2(y: Interval, x: Interval) -> Interval:
    """atan2(y, x): over a box that holds neither the origin nor a piece of the cut (x < 0, y = 0) the angle
    is continuous and its extremes are at the box's corners; otherwise [-pi, pi]."""
    with np.errstate(all="ignore"):
        corners = [np.arctan2(p, q) for p in (y.lo, y.hi) for q in (x.lo, x.hi)]
    lo = _down(np.minimum(np.minimum(corners[0], corners[1]), np.minimum(corners[2], corners[3])), _LIBM_STEPS)
    hi = up(np.maximum(np.maximum(corners[0], corners[1]), np.maximum(corners[2], corners[3])), _LIBM_STEPS)
    whole = (y.contains_zero & (x.lo <= 0)) | ~np.isfinite(x.lo) | ~np.isfinite(x.hi) \
        | ~np.isfinite(y.lo) | ~np.isfinite(y.hi)
    lo = np.where(whole, -_PI_HI, np.maximum(lo, -_PI_HI))
    hi = np.where(whole, _PI_HI, np.minimum(hi, _PI_HI))
    return finished(lo, hi, *_flags(y, x))


def hyperbolic_sine(a: Interval) -> Interval:
    lo, hi = _monotone(a, np.sinh)
    return finished(lo, hi, *_flags(a))


def hyperbolic_cosine(a: Interval) -> Interval:
    """cosh: least (1) at 0, growing with |a|."""
    with np.errstate(all="ignore"):
        ends = np.maximum(np.cosh(a.lo), np.cosh(a.hi))
        least = np.minimum(np.cosh(a.lo), np.cosh(a.hi))
    lo = np.where(a.contains_zero, 1.0, np.maximum(_down(least, _LIBM_STEPS), 1.0))
    return finished(lo, up(ends, _LIBM_STEPS), *_flags(a))


def hyperbolic_tangent(a: Interval) -> Interval:
    lo, hi = _monotone(a, np.tanh)
    return finished(np.maximum(lo, -1.0), np.minimum(hi, 1.0), *_flags(a))


def absolute(a: Interval) -> Interval:
    """|a|: exact bounds, non-negative ([-1, 2] gives [0, 2])."""
    lo = np.where(a.contains_zero, 0.0, np.minimum(np.abs(a.lo), np.abs(a.hi)))
    return finished(lo, np.maximum(np.abs(a.lo), np.abs(a.hi)), *_flags(a))


def _step(a: Interval, below: float, at: float, above: float) -> Interval:
    """A function of the sign of a (sign, heaviside): the values of the signs a may take."""
    values = [(a.lo < 0, below), ((a.lo <= 0) & (a.hi >= 0), at), (a.hi > 0, above)]
    lo = np.full(np.shape(a.lo), np.inf)
    hi = np.full(np.shape(a.lo), -np.inf)
    for reached, value in values:
        lo = np.where(reached, np.minimum(lo, value), lo)
        hi = np.where(reached, np.maximum(hi, value), hi)
    return finished(lo, hi, *_flags(a))


def sign(a: Interval) -> Interval:
    return _step(a, -1.0, 0.0, 1.0)


def heaviside(a: Interval, at_zero: float) -> Interval:
    return _step(a, 0.0, at_zero, 1.0)


def extremum(parts: list[Interval], *, largest: bool) -> Interval:
    """max (largest=True) or min of several intervals: exact bounds, undefined wherever an argument is."""
    pick = np.maximum if largest else np.minimum
    lo, hi = parts[0].lo, parts[0].hi
    for part in parts[1:]:
        lo, hi = pick(lo, part.lo), pick(hi, part.hi)
    return finished(lo, hi, *_flags(*parts))
