"""Interval arithmetic on many boxes at once: arrays of lower and upper bounds with outward rounding.

An ``Interval`` holds, for each of n cells, bounds [lo, hi] that enclose every value an expression takes at
the points of the cell where it is defined (the exact real value, not its double-precision rounding), and
two flags: ``maybe_undefined`` (somewhere in the cell a step of the typed text may be undefined: a division
by 0, a logarithm of a negative number, an overflow) and ``surely_undefined`` (undefined at every point of
the cell; then lo = -inf and hi = +inf). Constants are 0-d arrays, so parameter-only parts cost nothing per
cell. Every computed bound is rounded outward: sums and products through error-free transformations
(TwoSum; Dekker's TwoProduct for squares and constants), so a result that is exact stays exact (0 + 0 is
[0, 0], which keeps proofs of D = 0; [-1, 2] ** 2 is [0, 4]), products with a zero or power-of-two factor too;
other results (other products, quotients) go one step of ``np.nextafter`` outward. Bounds beyond ``LARGEST_SAFE`` mark the
value maybe undefined: double-precision evaluation overflows there.
Method: R. E. Moore, "Interval Analysis" (1966); Moore, Kearfott and Cloud, "Introduction to Interval
Analysis" (SIAM 2009), chapters 2 to 5.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

__all__ = ["LARGEST_SAFE", "Interval", "add", "constant", "divide", "down", "finished", "hull", "multiply",
           "negate", "power_integer", "reciprocal", "subtract", "up"]

LARGEST_SAFE = 1e300        # a bound beyond this may overflow somewhere in double precision
_SPLIT = 134217729.0        # 2**27 + 1, Veltkamp's splitter
_SPLIT_SAFE = 2.0 ** 995    # TwoProduct is exact for factors below this and products above _TINY_PRODUCT
_TINY_PRODUCT = 2.0 ** -960
_FAST_STEP_SIZE = 1024    # below this many values np.nextafter itself is quicker (measured)


@dataclass(frozen=True, eq=False)
class Interval:
    """Bounds over cells: lo, hi float64 arrays (n,) or 0-d; flags bool arrays of the same kind."""

    lo: np.ndarray
    hi: np.ndarray
    maybe_undefined: np.ndarray
    surely_undefined: np.ndarray

    @property
    def contains_zero(self) -> np.ndarray:
        return (self.lo <= 0.0) & (self.hi >= 0.0)


def _step(value, toward: float, move=None) -> np.ndarray:
    """``value`` moved one double towards ``toward`` (+-inf) where ``move`` (bool, everywhere if None): the
    bits of ``np.nextafter``, computed on the integer image of finite non-zero doubles (a finite double's
    neighbour is its bit pattern plus or minus one), about ten times faster than nextafter's loop; zeros,
    infinities and NaN go through nextafter itself."""
    v = np.asarray(value, dtype=np.float64)
    if v.ndim == 0 or v.size < _FAST_STEP_SIZE or (move is not None and np.shape(move) != v.shape):
        stepped = np.nextafter(v, toward)
        return stepped if move is None else np.where(move, stepped, v)
    bits = v.view(np.int64)
    outward = bits >> 63           # -1 for a negative double, 0 otherwise: +1 moves away from 0, -1 towards it
    outward <<= 1
    outward += 1
    if toward < 0:
        np.negative(outward, out=outward)
    if move is not None:
        outward *= move
    outward += bits
    stepped = outward.view(np.float64)
    irregular = ~np.isfinite(v) | (v == 0)
    if irregular.any():
        special = np.nextafter(v[irregular], toward)
        stepped[irregular] = special if move is None else np.where(move[irregular], special, v[irregular])
    return stepped


def down(value, steps: int = 1) -> np.ndarray:
    """``value`` moved ``steps`` doubles towards -inf."""
    for _ in range(steps):
        value = _step(value, -np.inf)
    return value


def up(value, steps: int = 1) -> np.ndarray:
    """``value`` moved ``steps`` doubles towards +inf."""
    for _ in range(steps):
        value = _step(value, np.inf)
    return value


def constant(value: float) -> Interval:
    """The degenerate interval [value, value] (a double, held exactly)."""
    v = np.float64(value)
    bad = np.bool_(not np.isfinite(v))
    return Interval(np.float64(-np.inf) if bad else v, np.float64(np.inf) if bad else v, bad, bad)


def finished(lo, hi, maybe, surely) -> Interval:
    """An Interval from bounds already rounded outward: NaN bounds widened to infinity, bounds beyond
    LARGEST_SAFE flagged maybe undefined, surely undefined cells given the whole line."""
    lo = np.fmax(lo, -np.inf)        # NaN -> -inf (fmax ignores NaN)
    hi = np.fmin(hi, np.inf)
    surely = np.asarray(surely, dtype=bool)
    maybe = np.asarray(maybe, dtype=bool) | surely | (lo < -LARGEST_SAFE) | (hi > LARGEST_SAFE)
    if surely.any():
        lo = np.where(surely, -np.inf, lo)
        hi = np.where(surely, np.inf, hi)
    return Interval(lo, hi, maybe, surely)


def _flags(*parts: Interval) -> tuple[np.ndarray, np.ndarray]:
    maybe = parts[0].maybe_undefined
    surely = parts[0].surely_undefined
    for part in parts[1:]:
        maybe = maybe | part.maybe_undefined
        surely = surely | part.surely_undefined
    return maybe, surely


def _sum_bound(p, q, toward: float) -> np.ndarray:
    """The lower (``toward`` -inf) or upper (+inf) bound of the exact p + q: TwoSum's error term says which way
    the rounding went (only the bound asked for is stepped: a sum of intervals needs one side of each)."""
    with np.errstate(all="ignore"):
        s = np.add(p, q)
        virtual = s - p
        error = (p - (s - virtual)) + (q - virtual)
        exact = np.isfinite(error) & ((error >= 0) if toward < 0 else (error <= 0))
        return _step(s, toward, ~exact)


def _product_bounds(p, q) -> tuple[np.ndarray, np.ndarray]:
    """(lower, upper) bounds of the exact p * q: one step outward from the rounded product, except where it is
    exact: a zero factor (exactly 0, even beside an infinite factor: the bounds of a set of finite values),
    a power-of-two factor (only the exponent changes), and Dekker's TwoProduct for constants."""
    with np.errstate(all="ignore"):
        product = np.multiply(p, q)
        if np.ndim(p) == 0 and np.ndim(q) == 0:
            return _exact_product_bounds(p, q, product)
        lower, upper = down(product), up(product)
        for factor in (p, q):
            if np.ndim(factor) == 0 and np.isfinite(factor) and np.frexp(factor)[0] in (0.5, -0.5):
                exact = np.abs(product) >= 2.0 ** -1021       # no underflow: exact
                lower, upper = np.where(exact, product, lower), np.where(exact, product, upper)
        zero = (p == 0) | (q == 0)
        if np.any(zero):
            lower, upper = np.where(zero, 0.0, lower), np.where(zero, 0.0, upper)
    return lower, upper


def _exact_product_bounds(p, q, product) -> tuple[np.ndarray, np.ndarray]:
    """Bounds of p * q from Dekker's TwoProduct (its error term says which way the rounding went)."""
    return _exact_product_bound(p, q, product, -np.inf), _exact_product_bound(p, q, product, np.inf)


def _exact_product_bound(p, q, product, toward: float) -> np.ndarray:
    """The lower (``toward`` -inf) or upper (+inf) bound of p * q from Dekker's TwoProduct."""
    c = _SPLIT * p
    p_high = c - (c - p)
    p_low = p - p_high
    c = _SPLIT * q
    q_high = c - (c - q)
    q_low = q - q_high
    error = ((p_high * q_high - product) + p_high * q_low + p_low * q_high) + p_low * q_low
    safe = (np.abs(p) < _SPLIT_SAFE) & (np.abs(q) < _SPLIT_SAFE) & (np.abs(product) > _TINY_PRODUCT)
    bound = _step(product, toward, ~(safe & ((error >= 0) if toward < 0 else (error <= 0))))
    return np.where((p == 0) | (q == 0), 0.0, bound)


def _square_bound(value, toward: float) -> np.ndarray:
    """The lower (``toward`` -inf) or upper (+inf) bound of value * value. A constant goes through TwoProduct
    (_exact_product_bound); arrays are taken exact where the value has at most 26 significant bits (Veltkamp's
    split leaves it whole, so the square fits in a double: [2, 3] ** 2 is exactly [4, 9]) and stepped once
    outward elsewhere, half the work of TwoProduct for a bound at most one step looser."""
    with np.errstate(all="ignore"):
        square = np.multiply(value, value)
        if np.ndim(value) == 0:
            return _exact_product_bound(value, value, square, toward)
        c = _SPLIT * value
        short = (c - (c - value) == value) & (np.abs(value) < _SPLIT_SAFE) & (square > _TINY_PRODUCT)
        return np.where(value == 0, 0.0, _step(square, toward, ~short))


def negate(a: Interval) -> Interval:
    return Interval(-a.hi, -a.lo, a.maybe_undefined, a.surely_undefined)


def add(a: Interval, b: Interval) -> Interval:
    lo, hi = _sum_bound(a.lo, b.lo, -np.inf), _sum_bound(a.hi, b.hi, np.inf)
    return finished(lo, hi, *_flags(a, b))


def subtract(a: Interval, b: Interval) -> Interval:
    return add(a, negate(b))


def multiply(a: Interval, b: Interval) -> Interval:
    """The product: the smallest and largest of the four corner products, each rounded outward."""
    if a is b:
        return power_integer(a, 2)
    for scalar, other in ((a, b), (b, a)):
        if np.ndim(scalar.lo) == 0 and scalar.lo == scalar.hi and np.isfinite(scalar.lo):   # a constant factor
            if np.ndim(other.lo) > 0 and np.ndim(other.hi) > 0 and scalar.lo != 0:
                return finished(*_scaled_hull(scalar.lo, other), *_flags(a, b))
            first, second = _product_bounds(scalar.lo, other.lo), _product_bounds(scalar.lo, other.hi)
            lo, hi = np.minimum(first[0], second[0]), np.maximum(first[1], second[1])
            return finished(lo, hi, *_flags(a, b))
    constant_a = [v for v in (a.lo, a.hi) if np.ndim(v) == 0]
    constant_b = [v for v in (b.lo, b.hi) if np.ndim(v) == 0]
    if not (constant_a and constant_b) and not any(_power_of_two(v) for v in constant_a + constant_b):
        lo, hi = _corner_product_hull(a, b)
        return finished(lo, hi, *_flags(a, b))
    bounds = [_product_bounds(p, q) for p, q in ((a.lo, b.lo), (a.lo, b.hi), (a.hi, b.lo), (a.hi, b.hi))]
    lo = np.minimum(np.minimum(bounds[0][0], bounds[1][0]), np.minimum(bounds[2][0], bounds[3][0]))
    hi = np.maximum(np.maximum(bounds[0][1], bounds[1][1]), np.maximum(bounds[2][1], bounds[3][1]))
    return finished(lo, hi, *_flags(a, b))


def _power_of_two(value) -> bool:
    """Whether a 0-d bound is a finite power of two (a factor _product_bounds multiplies exactly)."""
    return bool(np.isfinite(value)) and np.frexp(value)[0] in (0.5, -0.5)


def _corner_product_hull(a: Interval, b: Interval) -> tuple[np.ndarray, np.ndarray]:
    """The bounds ``multiply`` takes from its four corner products when no product has two 0-d factors and no
    0-d bound is a power of two (the cases _product_bounds treats apart)."""
    zero_a_lo, zero_a_hi, zero_b_lo, zero_b_hi = a.lo == 0, a.hi == 0, b.lo == 0, b.hi == 0
    with np.errstate(all="ignore"):
        products = [np.multiply(p, q) for p, q in ((a.lo, b.lo), (a.lo, b.hi), (a.hi, b.lo), (a.hi, b.hi))]
    return _product_hull(products, [zero_a_lo | zero_b_lo, zero_a_lo | zero_b_hi, zero_a_hi | zero_b_lo,
                                    zero_a_hi | zero_b_hi], exact_powers=False)


def _scaled_hull(factor: np.ndarray, other: Interval) -> tuple[np.ndarray, np.ndarray]:
    """The bounds ``multiply`` takes for a constant ``factor`` (finite, non-zero) times an interval whose bounds
    are arrays."""
    with np.errstate(all="ignore"):
        products = [np.multiply(factor, other.lo), np.multiply(factor, other.hi)]
    return _product_hull(products, [other.lo == 0, other.hi == 0], exact_powers=_power_of_two(factor))


def _product_hull(products: list[np.ndarray], zeros: list[np.ndarray], *,
                  exact_powers: bool) -> tuple[np.ndarray, np.ndarray]:
    """min and max over ``products`` of _product_bounds' lower and upper bounds, to the same values with one
    step each way instead of one per product: the bound of a product (one step outward, or none where a
    power-of-two factor makes it exact: ``exact_powers``, beyond the underflow range) is non-decreasing in
    it, so the smallest bound is the bound of the smallest product. Products with a zero factor (``zeros``)
    are exactly 0 (and the only NaN ones, 0 * inf) and join unstepped, as +0.0 (maxima taken product by
    product could give -0.0 beside a product of -2**-1074: equal, as sound)."""
    any_zero = functools.reduce(np.logical_or, zeros)
    with np.errstate(all="ignore"):
        if any_zero.any():
            products_lo = [np.where(zero, np.inf, p) for zero, p in zip(zeros, products, strict=True)]
            products_hi = [np.where(zero, -np.inf, p) for zero, p in zip(zeros, products, strict=True)]
        else:
            products_lo = products_hi = products
        smallest = functools.reduce(np.minimum, products_lo)
        largest = functools.reduce(np.maximum, products_hi)
        lo, hi = down(smallest), up(largest)
        if exact_powers:
            lo = np.where(np.abs(smallest) >= 2.0 ** -1021, smallest, lo)
            hi = np.where(np.abs(largest) >= 2.0 ** -1021, largest, hi)
    if not any_zero.any():
        return lo, hi
    return np.where(any_zero & (lo >= 0.0), 0.0, lo), np.where(any_zero & (hi <= 0.0), 0.0, hi)


def reciprocal(b: Interval) -> Interval:
    return divide(constant(1.0), b)


def divide(a: Interval, b: Interval) -> Interval:
    """a / b. Where b may be 0 the value may be undefined (surely where b is exactly 0); the bounds are then
    the extended quotient over b's non-zero part: one-sided when b >= 0 or b <= 0, the whole line when b
    holds 0 inside."""
    maybe, surely = _flags(a, b)
    with np.errstate(all="ignore"):
        quotients = [np.divide(p, q) for p, q in ((a.lo, b.lo), (a.lo, b.hi), (a.hi, b.lo), (a.hi, b.hi))]
        quotients = [np.where(np.isnan(v), 0.0, v) for v in quotients]   # 0/0 and inf/inf: only in hulls below
        lo = down(np.minimum(np.minimum(quotients[0], quotients[1]), np.minimum(quotients[2], quotients[3])))
        hi = up(np.maximum(np.maximum(quotients[0], quotients[1]), np.maximum(quotients[2], quotients[3])))
        nonnegative_b = (b.lo == 0) & (b.hi > 0)     # b in [0, hi]: quotients over (0, hi]
        nonpositive_b = (b.hi == 0) & (b.lo < 0)
        over_positive_lo = down(np.divide(a.lo, b.hi))    # a >= 0, b in (0, hi]: a/b >= a.lo / b.hi
        over_positive_hi = up(np.divide(a.hi, b.hi))      # a <= 0, b in (0, hi]: a/b <= a.hi / b.hi
        over_negative_hi = up(np.divide(a.lo, b.lo))      # a >= 0, b in [lo, 0): a/b <= a.lo / b.lo
        over_negative_lo = down(np.divide(a.hi, b.lo))    # a <= 0, b in [lo, 0): a/b >= a.hi / b.lo
    a_nonneg, a_nonpos = a.lo >= 0, a.hi <= 0
    inside = (b.lo < 0) & (b.hi > 0)
    lo = np.where(inside, -np.inf, lo)
    hi = np.where(inside, np.inf, hi)
    lo = np.where(nonnegative_b, np.where(a_nonneg, over_positive_lo, -np.inf), lo)
    hi = np.where(nonnegative_b, np.where(a_nonpos, over_positive_hi, np.inf), hi)
    lo = np.where(nonpositive_b, np.where(a_nonpos, over_negative_lo, -np.inf), lo)
    hi = np.where(nonpositive_b, np.where(a_nonneg, over_negative_hi, np.inf), hi)
    zero_numerator = (a.lo == 0) & (a.hi == 0)
    lo = np.where(zero_numerator, 0.0, lo)
    hi = np.where(zero_numerator, 0.0, hi)
    may_be_zero = b.contains_zero
    return finished(lo, hi, maybe | may_be_zero, surely | ((b.lo == 0) & (b.hi == 0)))


def power_integer(a: Interval, n: int) -> Interval:
    """a ** n for an integer n (|n| <= 64): even powers are non-negative ([-1, 2] ** 2 is [0, 4]); negative
    powers are reciprocals (maybe undefined where a may be 0)."""
    if n == 0:
        return finished(np.float64(1.0), np.float64(1.0), *_flags(a))
    if n < 0:
        return reciprocal(power_integer(a, -n))
    if n == 1:
        return a
    if n % 2 == 0:
        magnitude_lo = np.where(a.contains_zero, 0.0, np.minimum(np.abs(a.lo), np.abs(a.hi)))
        magnitude_hi = np.maximum(np.abs(a.lo), np.abs(a.hi))
        low_end, high_end = magnitude_lo, magnitude_hi
    else:
        low_end, high_end = a.lo, a.hi
    if n == 2:   # exact where it can be, so [-1, 2] ** 2 is exactly [0, 4]
        lo, hi = _square_bound(low_end, -np.inf), _square_bound(high_end, np.inf)
    else:
        with np.errstate(all="ignore"):
            # pow is within one unit in the last place in glibc: two steps outward cover it
            lo = np.where(low_end == 0, 0.0, down(np.power(low_end, float(n)), 2))
            hi = np.where(high_end == 0, 0.0, up(np.power(high_end, float(n)), 2))
    if n % 2 == 0:
        lo = np.maximum(lo, 0.0)
    return finished(lo, hi, *_flags(a))


def hull(parts: list[Interval], maybe, surely) -> Interval:
    """The smallest interval holding every one of ``parts`` (a union of branches), with the given flags."""
    lo, hi = parts[0].lo, parts[0].hi
    for part in parts[1:]:
        lo = np.minimum(lo, part.lo)
        hi = np.maximum(hi, part.hi)
    return finished(lo, hi, maybe, surely)
