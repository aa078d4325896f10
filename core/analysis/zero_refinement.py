"""Points where a function of (x, y) changes sign, found on many segments at once to rounding precision.

Used to move type-change vertices onto the exact zero set of the discriminant D (``discriminant_function``
gives D of a compiled equation at points); any other function of the points works the same way.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping

import numpy as np

from core.analysis.discriminant import discriminant
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES, QuantitySource
from core.progress import CancelCheck, Cancelled

__all__ = ["PointFunction", "discriminant_function", "roots_on_segments"]

_MAX_ITERATIONS = 200

PointFunction = Callable[[np.ndarray, np.ndarray], np.ndarray]
"""Values (m,) at points given as x (m,) and y (m,); NaN where undefined."""


def discriminant_function(compiled: CompiledEquation, parameters: Mapping[str, float] | None,
                          data: QuantitySource | None) -> PointFunction:
    """D = b^2 - 4ac of ``compiled`` at points, by the formula classification uses; NaN where not finite."""
    prepared = compiled.prepare(parameters)

    def values(x: np.ndarray, y: np.ndarray) -> np.ndarray:
        raw = compiled.evaluate_raw(x, y, data=data, prepared=prepared, names=COEFFICIENT_NAMES)
        return np.broadcast_to(discriminant(raw["a"], raw["b"], raw["c"]), np.shape(x)).copy()

    return values


def roots_on_segments(function: PointFunction, start, end, *, xtol: float, cancel: CancelCheck | None = None,
                      f_start: np.ndarray | None = None, f_end: np.ndarray | None = None
                      ) -> tuple[np.ndarray, np.ndarray]:
    """Bracketed roots of ``function`` on segments start -> end, shapes (m, 2): the points and a bool (m,) mask.

    The mask is False for a segment whose ends do not bracket a sign change (values of equal signs or
    undefined) or where the function turned undefined during the search; such rows hold no root.

    Regula falsi (Anderson-Bjorck variant) in the segment parameter t in [0, 1]; after three steps that
    together do not halve the bracket the next one bisects, so the bracket shrinks at least geometrically.
    A step shorter than the tolerance is stretched to it (as in Brent's method). Stops when the bracket is
    shorter than xtol (or a few units of rounding of the coordinates); returns its middle. ``f_start`` and
    ``f_end`` are the values at the ends when the caller already has them. ``xtol`` is in domain units.
    """
    start = np.asarray(start, dtype=np.float64)
    end = np.asarray(end, dtype=np.float64)
    if start.ndim != 2 or start.shape[1] != 2 or start.shape != end.shape:
        raise ValueError(f"start and end must both have shape (m, 2), got {start.shape} and {end.shape}")
    if not (np.isfinite(start).all() and np.isfinite(end).all()):
        raise ValueError("segment ends must be finite numbers")
    if not (np.isfinite(xtol) and xtol > 0):
        raise ValueError(f"xtol must be a positive number, got {xtol}")
    m = len(start)
    delta = end - start
    length = np.hypot(delta[:, 0], delta[:, 1])
    if f_start is None:
        f_start = function(start[:, 0], start[:, 1]) if m else np.empty(0)
    if f_end is None:
        f_end = function(end[:, 0], end[:, 1]) if m else np.empty(0)
    finite = np.isfinite(f_start) & np.isfinite(f_end)
    found = finite & ((f_start == 0) | (f_end == 0) | (np.signbit(f_start) != np.signbit(f_end)))
    t_root = np.where(f_start == 0, 0.0, 1.0)
    resolution = 8 * np.finfo(float).eps * np.maximum(np.abs(start), np.abs(end)).max(axis=1, initial=0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        width_limit = np.maximum(xtol, resolution) / length
    active = np.flatnonzero(found & (f_start != 0) & (f_end != 0))
    a, b = np.zeros(active.size), np.ones(active.size)
    fa, fb = f_start[active], f_end[active]
    reference, stalled = np.ones(active.size), np.zeros(active.size, dtype=np.int64)
    for _ in range(_MAX_ITERATIONS):
        width = np.abs(b - a)
        limit = width_limit[active]
        done = width <= limit
        if done.any():
            t_root[active[done]] = 0.5 * (a[done] + b[done])
            keep = ~done
            active, a, b, fa, fb, reference, stalled, width, limit = (
                v[keep] for v in (active, a, b, fa, fb, reference, stalled, width, limit))
        if active.size == 0:
            break
        _poll(cancel)
        with np.errstate(all="ignore"):
            secant = b - fb * (b - a) / (fb - fa)
        inside = (secant > np.minimum(a, b)) & (secant < np.maximum(a, b))
        bisect = ~inside | (stalled >= 3)
        t = np.where(bisect, 0.5 * (a + b), secant)
        # A step shorter than the tolerance is stretched to it, so the next sign change closes the bracket.
        short = np.abs(t - b) < 0.5 * limit
        t = np.where(short, b + np.copysign(0.5 * limit, a - b), t)
        ft = function(start[active, 0] + t * delta[active, 0], start[active, 1] + t * delta[active, 1])
        lost, hit = np.isnan(ft), ft == 0
        found[active[lost]] = False
        t_root[active[hit]] = t[hit]
        switch = np.signbit(ft) != np.signbit(fb)            # the root lies between t and b
        # Anderson-Bjorck: scale the value at an end kept twice by 1 - f(t)/f(b) (by 1/2 if that is not > 0).
        with np.errstate(all="ignore"):
            scale = 1.0 - ft / fb
        scale = np.where(scale > 0, scale, 0.5)
        fa = np.where(switch, fb, np.where(bisect, fa, scale * fa))
        a = np.where(switch, b, a)
        b, fb = t, ft
        halved = np.abs(b - a) <= 0.5 * reference
        reference = np.where(halved | bisect, np.abs(b - a), reference)
        stalled = np.where(halved | bisect, 0, stalled + 1)
        keep = ~(lost | hit)
        active, a, b, fa, fb, reference, stalled = (
            v[keep] for v in (active, a, b, fa, fb, reference, stalled))
    found[active] = False                                    # not converged: cannot happen with bisection
    roots = start + t_root[:, np.newaxis] * delta
    roots[t_root == 1.0] = end[t_root == 1.0]
    return roots, found


def _poll(cancel: CancelCheck | None) -> None:
    if cancel is not None and cancel():
        raise Cancelled("type-change lines cancelled")
