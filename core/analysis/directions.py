"""Characteristic directions of a u_xx + b u_xy + c u_yy = ...: the two real roots where D = b^2 - 4ac >= 0.

Where D > 0 a characteristic direction (dx, dy) solves a dy^2 - b dx dy + c dx^2 = 0. The two roots are
labelled so that each family is continuous wherever D > 0, including where a or c vanish:

    family 1  ~ (2a, b + sqrt(D))  ~ (b - sqrt(D), 2c)
    family 2  ~ (2a, b - sqrt(D))  ~ (b + sqrt(D), 2c)

of each pair the representation with the larger norm is used, so nothing is ever divided by a or c. The labels
are invariant when a, b, c are multiplied by a positive function; multiplying the equation by -1 swaps them.
Curves that follow these directions are traced in core.analysis.tracing.
"""

from __future__ import annotations

import enum

import numpy as np

from core.analysis.discriminant import discriminant, normalized_discriminant, scaled_by_power_of_two

__all__ = ["Family", "characteristic_directions", "parabolic_direction", "unit_direction"]


class Family(enum.IntEnum):
    """Which root of a dy^2 - b dx dy + c dx^2 = 0 a direction or curve follows (see the module docstring)."""

    FIRST = 1
    SECOND = 2

    @property
    def sign(self) -> float:
        """The sign in front of sqrt(D) in (2a, b +- sqrt(D))."""
        return 1.0 if self is Family.FIRST else -1.0




def characteristic_directions(a, b, c, *, tolerance: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """Unit characteristic directions of family 1 and family 2, each of shape broadcast(a, b, c) + (2,).

    Each vector points into the upper half-plane (angle in [0, 180) degrees from the first axis); its sign
    carries no meaning, a characteristic being a line. NaN where D/(b^2 + 4|ac|) < -tolerance (elliptic),
    where a coefficient is not finite, or where a = b = c = 0. Where D is 0, or slightly negative within
    ``tolerance``, both families give the single parabolic direction.
    """
    with np.errstate(all="ignore"):
        a, b, c = scaled_by_power_of_two(a, b, c)          # exact: directions do not depend on the scale
        d = discriminant(a, b, c)
        real = normalized_discriminant(a, b, c) >= -tolerance     # False where NaN (undefined)
        result = []
        for family in Family:
            dx, dy = unit_direction(a, b, c, family.sign, d)
            dx, dy = np.where(real, dx, np.nan), np.where(real, dy, np.nan)
            down = (dy < 0) | ((dy == 0) & (dx < 0))
            result.append(np.stack([np.where(down, -dx, dx), np.where(down, -dy, dy)], axis=-1))
    return result[0], result[1]


def parabolic_direction(a, b, c) -> np.ndarray:
    """The double root direction (2a, b) ~ (b, 2c) with D taken as 0, unit, upper half-plane; shape (..., 2).

    This is the one characteristic direction at a parabolic point. NaN where a = b = c = 0 or undefined.
    """
    with np.errstate(all="ignore"):
        a, b, c = scaled_by_power_of_two(a, b, c)          # exact: directions do not depend on the scale
        dx, dy = unit_direction(a, b, c, 1.0, np.zeros_like(a))
        finite = np.isfinite(a) & np.isfinite(b) & np.isfinite(c)
        dx, dy = np.where(finite, dx, np.nan), np.where(finite, dy, np.nan)
        down = (dy < 0) | ((dy == 0) & (dx < 0))
        return np.stack([np.where(down, -dx, dx), np.where(down, -dy, dy)], axis=-1)


def unit_direction(a, b, c, sign, d):
    """The family's unit direction from the larger-norm representation, with sqrt(max(D, 0)).

    Of b + sign sqrt(D) and b - sign sqrt(D), the one that would lose digits to cancellation is computed as
    4ac divided by the other (their product), so that even a nearly horizontal or vertical direction keeps
    full relative precision and a definite side. Arrays broadcast together; returns (dx, dy). NaN where
    undefined or a = b = c = 0. Callers hold errstate.
    """
    root = np.sqrt(np.maximum(d, 0.0))
    product = np.where(d >= 0.0, 4.0 * a * c, b * b)     # (b + root)(b - root)
    plus, minus = b + sign * root, b - sign * root
    same = b * sign >= 0.0                               # b + sign root has no cancellation
    large = np.where(same, plus, minus)
    small = np.where(large != 0.0, product / large, 0.0)
    vx, vy = 2.0 * a, np.where(same, large, small)
    wx, wy = np.where(same, small, large), 2.0 * c
    v_norm2 = vx * vx + vy * vy
    w_norm2 = wx * wx + wy * wy
    use_w = w_norm2 > v_norm2
    norm = np.sqrt(np.where(use_w, w_norm2, v_norm2))
    dx = np.where(use_w, wx, vx) / norm
    dy = np.where(use_w, wy, vy) / norm
    return dx, dy
