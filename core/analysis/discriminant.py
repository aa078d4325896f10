"""The discriminant D = b^2 - 4ac of a u_xx + b u_xy + c u_yy, and its scale-free form D / (b^2 + 4|ac|).

Every place that needs D or its sign calls these functions, so the type of a point is decided by one formula.
D is formed as 4((b/2)^2 - ac): scaling by powers of two is exact, so this equals b^2 - 4ac to the last bit
while sharing its rounding with the normalised form. With S = b^2 + 4|ac|, the rounding error of D is about
machine epsilon times S, so D/S in [-1, 1] is what can be trusted; where S = 0 (b = 0 and ac = 0, as in the
heat equation) D is exactly 0 and D/S is taken as 0. Non-finite coefficients give NaN, never a silent type.

The type does not depend on the size of the coefficients: where b^2 and ac would overflow or underflow
(Laplace's equation times 1e160 or 1e-170), D/S is computed from a, b, c divided by the power of two nearest
their largest magnitude (``scaled_by_power_of_two``). Dividing by a power of two is exact, so wherever the
plain formula is safe both give the same bits, and the slower path runs only on the few points that need it.
"""

from __future__ import annotations

import numpy as np

from core.equations.evaluation import broadcast_shape

__all__ = ["DiscriminantScratch", "discriminant", "normalized_discriminant", "normalized_discriminant_into",
           "scaled_by_power_of_two"]

# Below this, S/4 = b^2/4 + |ac| may hold subnormal terms (fewer than 53 bits); above it the terms are exact
# enough that D/S is accurate to rounding. 2^-1022 * 2^54, with margin.
_SAFE_SCALE = 1e-290


def scaled_by_power_of_two(a, b, c) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """a, b, c (broadcast together, float64) divided by 2^e, where 2^(e-1) <= max(|a|, |b|, |c|) < 2^e.

    The division is exact (only the exponents change) unless a coefficient smaller than the largest by more
    than 2^-1074 underflows to 0, so signs, zeros and ratios are kept while b^2 and ac can no longer overflow.
    For the type itself use normalized_discriminant, which keeps even such a coefficient's sign.
    Points where all three are 0, or one is not finite, are returned unchanged.
    """
    a, b, c = np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in (a, b, c)))
    with np.errstate(all="ignore"):
        largest = np.maximum(np.maximum(np.abs(a), np.abs(b)), np.abs(c))
        _, exponent = np.frexp(np.where(np.isfinite(largest), largest, 0.0))
        return np.ldexp(a, -exponent), np.ldexp(b, -exponent), np.ldexp(c, -exponent)


def discriminant(a, b, c) -> np.ndarray:
    """D = b^2 - 4ac for broadcastable a, b, c (float64 of their broadcast shape); NaN where not finite."""
    with np.errstate(all="ignore"):
        half_b = np.multiply(b, 0.5)
        value = 4.0 * (half_b * half_b - np.multiply(a, c))
    value = np.asarray(value, dtype=np.float64)
    return np.where(np.isfinite(value), value, np.nan)


class DiscriminantScratch:
    """Three work arrays for one block of points, reused from block to block by one thread (no fresh
    temporaries: block-sized arrays allocated anew cost page faults that take longer than the arithmetic).

    ``arrays`` lends arrays the caller already has (a grid run passes buffers its evaluation has just
    released, still in cache); otherwise three of ``size`` doubles are made.
    """

    def __init__(self, size: int = 0, *, arrays: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None) -> None:
        self.buffers = arrays if arrays is not None else (np.empty(size), np.empty(size), np.empty(size))

    def views(self, shape: tuple[int, ...]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        size = int(np.prod(shape))
        return tuple(b.reshape(-1)[:size].reshape(shape) for b in self.buffers)  # type: ignore[return-value]


def normalized_discriminant(a, b, c) -> np.ndarray:
    """D / (b^2 + 4|ac|) in [-1, 1]; 0 where that scale is 0 (D = 0 exactly); NaN where a coefficient is not finite.

    a, b, c broadcast together; the result has their broadcast shape (float64).
    """
    shape = np.broadcast_shapes(np.shape(a), np.shape(b), np.shape(c))
    result = np.empty(shape)
    normalized_discriminant_into(a, b, c, result, DiscriminantScratch(int(np.prod(shape))))
    return result


def normalized_discriminant_into(a, b, c, out: np.ndarray, scratch: DiscriminantScratch) -> bool:
    """D/S into ``out`` (float64, or float32 for grid storage); True if it may hold NaN, False if all finite.

    Computed as (b^2/4 - ac) / (b^2/4 + |ac|) with numpy passes: b^2/4 and ac are formed in the coefficients'
    own broadcast shapes (a row, a column or a constant costs almost nothing), and every block-sized
    intermediate is written in place into ``scratch``. (numexpr evaluates this several times slower than
    numpy: its abs and division are not vectorised.)
    """
    shape = out.shape
    if not out.size:
        return False
    first, second, third = scratch.views(shape)

    def into(buffer: np.ndarray, *operands) -> np.ndarray | None:
        return buffer if broadcast_shape(operands) == shape else None

    with np.errstate(all="ignore"):
        half_b = np.multiply(b, 0.5, out=into(first, b))
        quarter_b2 = np.multiply(half_b, half_b, out=into(first, half_b))          # b^2/4
        product = np.multiply(a, c, out=into(second, a, c))                       # ac
        absolute = np.abs(product, out=into(third, product))
        size_of_parts = np.size(quarter_b2) + np.size(product)
        if size_of_parts < out.size:   # bounds of the scale from its parts, before they are overwritten
            low = np.min(quarter_b2) + np.min(absolute)
            high = np.max(quarter_b2) + np.max(absolute)
        numerator = np.subtract(quarter_b2, product, out=second)                   # D/4
        scale = np.add(quarter_b2, absolute, out=third)                          # S/4
        np.divide(numerator, scale, out=out, casting="same_kind")                # D/S, stored as out's dtype
        # Where the scale under- or overflowed (or a coefficient is not finite: NaN or inf scale), compute again
        # from coefficients scaled by a power of two. 0/0 stays 0 only where a = b = c = 0 (D = 0 exactly);
        # genuinely non-finite coefficients stay NaN. Whether every point is safe is read from bounds of the
        # scale: from its parts when they are smaller than the block (a row, a column), else from the scale.
        if size_of_parts >= out.size:
            low, high = scale.min(), scale.max()
    if low > _SAFE_SCALE and high < np.inf:   # no NaN, every point safe: the fast path is exact
        return False
    suspect = ~((scale > _SAFE_SCALE) & (scale < np.inf))
    if suspect.any():
        out[suspect] = _normalized_from_exponents(*(np.broadcast_to(v, shape)[suspect] for v in (a, b, c)))
    return True


def _normalized_from_exponents(a: np.ndarray, b: np.ndarray, c: np.ndarray) -> np.ndarray:
    """D/S at points where b^2/4 + |ac| under- or overflows: each coefficient split into mantissa and exponent
    (np.frexp, exact), b^2/4 and ac formed from the mantissas and brought to the exponent of the larger of the
    two. Only a term smaller than the other by more than 2^-1074 can vanish, where it cannot change D/S, so
    a u_xx + c u_yy with a = 5e-324 and c = 1 stays elliptic (a common power of two for a, b, c would lose
    the tiny a). Where the plain formula is exact this gives the same bits: only exponents differ."""
    (ma, ea), (mb, eb), (mc, ec) = np.frexp(a), np.frexp(b), np.frexp(c)
    with np.errstate(all="ignore"):
        b_exponent = np.where(mb != 0, 2 * eb, np.iinfo(np.int32).min)
        product_mantissa = ma * mc
        ac_exponent = np.where(product_mantissa != 0, ea + ec, np.iinfo(np.int32).min)
        common = np.maximum(b_exponent, ac_exponent)
        quarter_b2 = np.ldexp((0.5 * mb) ** 2, np.maximum(b_exponent - common, -2000))
        product = np.ldexp(product_mantissa, np.maximum(ac_exponent - common, -2000))
        scale = quarter_b2 + np.abs(product)
        value = (quarter_b2 - product) / scale
    value[scale == 0] = 0.0                                  # a = b = c = 0 (or b = 0 and ac = 0): D = 0
    value[~(np.isfinite(a) & np.isfinite(b) & np.isfinite(c))] = np.nan
    return value
