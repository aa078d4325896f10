"""The discriminant D = b^2 - 4ac of a u_xx + b u_xy + c u_yy, and its scale-free form D / (b^2 + 4|ac|).

Every place that needs D or its sign calls these functions, so the type of a point is decided by one formula.
D is formed as 4((b/2)^2 - ac): scaling by powers of two is exact, so this equals b^2 - 4ac to the last bit
while sharing its rounding with the normalised form. With S = b^2 + 4|ac|, the rounding error of D is about
machine epsilon times S, so D/S in [-1, 1] is what can be trusted; where S = 0 (b = 0 and ac = 0, as in the
heat equation) D is exactly 0 and D/S is taken as 0. Non-finite coefficients give NaN, never a silent type.
"""

from __future__ import annotations

import numpy as np

__all__ = ["DiscriminantScratch", "discriminant", "normalized_discriminant", "normalized_discriminant_into"]


def discriminant(a, b, c) -> np.ndarray:
    """D = b^2 - 4ac for broadcastable a, b, c (float64 of their broadcast shape); NaN where not finite."""
    with np.errstate(all="ignore"):
        half_b = np.multiply(b, 0.5)
        value = 4.0 * (half_b * half_b - np.multiply(a, c))
    value = np.asarray(value, dtype=np.float64)
    return np.where(np.isfinite(value), value, np.nan)


class DiscriminantScratch:
    """Work buffers for one block of points, reused from block to block by one thread."""

    def __init__(self, size: int) -> None:
        self.buffers = (np.empty(size), np.empty(size))

    def views(self, shape: tuple[int, ...]) -> tuple[np.ndarray, np.ndarray]:
        size = int(np.prod(shape))
        return tuple(b[:size].reshape(shape) for b in self.buffers)  # type: ignore[return-value]


def normalized_discriminant(a, b, c) -> np.ndarray:
    """D / (b^2 + 4|ac|) in [-1, 1]; 0 where that scale is 0 (D = 0 exactly); NaN where a coefficient is not finite.

    a, b, c broadcast together; the result has their broadcast shape (float64).
    """
    shape = np.broadcast_shapes(np.shape(a), np.shape(b), np.shape(c))
    result = np.empty(shape)
    normalized_discriminant_into(a, b, c, result, DiscriminantScratch(int(np.prod(shape))))
    return result


def normalized_discriminant_into(a, b, c, out: np.ndarray, scratch: DiscriminantScratch) -> None:
    """D/S into ``out`` (float64, or float32 for grid storage) with numpy passes over cache-sized buffers.

    Computed as (b^2/4 - ac) / (b^2/4 + |ac|). b^2/4 and ac are formed in the coefficients' own broadcast
    shapes (a row, a column or a constant costs almost nothing), so only three passes span the whole block.
    (numexpr evaluates this several times slower than numpy: its abs and division are not vectorised.)
    """
    scale, numerator = scratch.views(out.shape)
    with np.errstate(all="ignore"):
        half_b = np.multiply(b, 0.5)
        quarter_b2 = np.multiply(half_b, half_b)        # b^2/4
        product = np.multiply(a, c)                     # ac
        np.subtract(quarter_b2, product, out=numerator)  # D/4
        np.add(quarter_b2, np.abs(product), out=scale)  # S/4
        np.divide(numerator, scale, out=out, casting="same_kind")  # D/S, stored as out's dtype
    # 0/0: the computed scale b^2/4 + |ac| is exactly 0, so the computed D/4 = b^2/4 - ac is 0 too (this also
    # covers b^2 and ac underflowing). Non-finite coefficients make the scale NaN or inf, and stay NaN.
    if not scale.all():
        out[scale == 0] = 0.0
