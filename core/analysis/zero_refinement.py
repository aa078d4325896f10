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
_CONFIRM_ROUNDS = 8               # confirmed estimates tried before regula falsi goes on

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

    Works in the segment parameter t in [0, 1], every segment at once, and stops when a sign change is
    bracketed by less than xtol (or a few units of rounding of the coordinates); returns the bracket's
    middle. First two interpolation steps (regula falsi, then inverse quadratic interpolation through the
    ends and that point) and a secant step give an estimate, and one evaluation on either side of it, half
    the tolerance away, confirms the bracket: four evaluations in all for a smooth function. Segments not
    confirmed go on with regula falsi (Anderson-Bjorck variant) from the bracket found so far; after three
    steps that together do not halve the bracket the next one bisects, so the bracket shrinks at least
    geometrically; a step shorter than the tolerance is stretched to it (as in Brent's method). ``f_start``
    and ``f_end`` are the values at the ends when the caller already has them. ``xtol`` is in domain units.
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
    largest = np.maximum(np.abs(start), np.abs(end))
    resolution = 8 * np.finfo(float).eps * np.maximum(largest[:, 0], largest[:, 1])
    with np.errstate(divide="ignore", invalid="ignore"):
        width_limit = np.maximum(xtol, resolution) / length
    active = np.flatnonzero(found & (f_start != 0) & (f_end != 0))
    if active.size:
        whole = active.size == m                   # the usual case: no copies of the segments
        polish = _Polish(function, start if whole else start[active], delta if whole else delta[active],
                         f_start[active], f_end[active], width_limit if whole else width_limit[active])
        polish.run(cancel)
        t_root[active[polish.settled]] = polish.estimate[polish.settled]
        found[active[polish.lost]] = False
        left = ~(polish.settled | polish.lost)     # go on from the brackets the polish narrowed
        active, a, b, fa, fb = (v[left] for v in (active, polish.a, polish.b, polish.fa, polish.fb))
    else:
        a, b, fa, fb = (np.empty(0) for _ in range(4))
    reference, stalled = np.abs(b - a), np.zeros(active.size, dtype=np.int64)
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
        with np.errstate(all="ignore"):        # (a scaled value may overflow: the next step then bisects)
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
    np.copyto(roots, end, where=(t_root == 1.0)[:, np.newaxis])
    return roots, found


class _Polish:
    """Interpolation steps on k segments with a sign change between f0 (t = 0) and f1 (t = 1).

    Regula falsi on [0, 1], inverse quadratic interpolation through 0, t1 and 1, then secant steps give
    estimates, each kept inside the bracket known so far (else that bracket's regula falsi point). Every
    estimate after the second is confirmed by two values half the tolerance either side of it (within the
    bracket) of opposite signs, the pair's middle being the root, or followed by a secant step from the
    pair's mean value, up to _CONFIRM_ROUNDS times. A smooth function on a short segment needs three
    evaluations (the last at twice the points). Afterwards ``settled`` rows hold their root in ``estimate``
    (a confirmed middle or a zero hit exactly), ``lost`` rows met an undefined value inside the bracket, and
    the others keep a bracket a < b with true values fa, fb of opposite signs for the search to go on from.
    """

    def __init__(self, function: PointFunction, start: np.ndarray, delta: np.ndarray, f0: np.ndarray,
                 f1: np.ndarray, width_limit: np.ndarray) -> None:
        self.function, self.width_limit = function, width_limit
        self.sx, self.sy, self.dx, self.dy = (np.ascontiguousarray(v) for v in (*start.T, *delta.T))
        k = len(start)
        self.a, self.b, self.fa, self.fb = np.zeros(k), np.ones(k), f0.copy(), f1.copy()
        self.estimate = np.zeros(k)
        self.settled = np.zeros(k, dtype=bool)
        self.lost = np.zeros(k, dtype=bool)

    def run(self, cancel: CancelCheck | None) -> None:
        every = None                                    # all rows
        f0, f1 = self.fa.copy(), self.fb.copy()
        with np.errstate(all="ignore"):
            t1 = self._inside(f0 / (f0 - f1), every)
            g1 = self._values(t1, every)
            self._narrow(t1, g1, every)
            _poll(cancel)
            t2 = self._inside(t1 * f0 * f1 / ((g1 - f0) * (g1 - f1)) + f0 * g1 / ((f1 - f0) * (f1 - g1)), every)
            g2 = self._values(t2, every)
            self._narrow(t2, g2, every)
            rows = np.flatnonzero(~(self.settled | self.lost))
            previous, f_previous, current = t2[rows], g2[rows], t1[rows]   # current: t1, then the secant
            f_current = g1[rows]
            for _ in range(_CONFIRM_ROUNDS if rows.size else 0):
                _poll(cancel)
                current = self._inside(previous - f_previous * (previous - current) / (f_previous - f_current),
                                       rows)
                half = 0.5 * self.width_limit[rows]
                low = np.maximum(current - half, self.a[rows])
                high = np.minimum(current + half, self.b[rows])
                pair = self._values(np.concatenate([low, high]), np.concatenate([rows, rows]))
                f_low, f_high = pair[:rows.size], pair[rows.size:]
                confirmed = (f_low != 0) & (f_high != 0) & (np.signbit(f_low) != np.signbit(f_high))
                self.estimate[rows[confirmed]] = 0.5 * (low[confirmed] + high[confirmed])
                self.settled[rows[confirmed]] = True
                if confirmed.all():
                    break
                f_mean = 0.5 * (f_low + f_high)
                rows, low, f_low, high, f_high, previous, f_previous, current, f_current = (
                    v[~confirmed] for v in (rows, low, f_low, high, f_high, current, f_mean, previous, f_previous))
                self._narrow(low, f_low, rows)
                self._narrow(high, f_high, rows)
                go_on = ~(self.settled[rows] | self.lost[rows])
                rows, previous, f_previous, current, f_current = (
                    v[go_on] for v in (rows, previous, f_previous, current, f_current))
                if rows.size == 0:
                    break

    def _values(self, t: np.ndarray, rows: np.ndarray | None) -> np.ndarray:
        if rows is None:
            return self.function(self.sx + t * self.dx, self.sy + t * self.dy)
        return self.function(self.sx[rows] + t * self.dx[rows], self.sy[rows] + t * self.dy[rows])

    def _inside(self, t: np.ndarray, rows: np.ndarray | None) -> np.ndarray:
        """t where it lies strictly inside the row's bracket, else the bracket's regula falsi point (its
        middle if that one is not inside either)."""
        rows = slice(None) if rows is None else rows
        a, b, fa, fb = self.a[rows], self.b[rows], self.fa[rows], self.fb[rows]
        falsi = a - fa * (b - a) / (fb - fa)
        falsi = np.where((falsi > a) & (falsi < b), falsi, 0.5 * (a + b))
        return np.where((t > a) & (t < b), t, falsi)

    def _narrow(self, t: np.ndarray, ft: np.ndarray, rows: np.ndarray | None) -> None:
        """The open brackets of ``rows`` (None: all) narrowed by f(t) = ft where t lies strictly inside."""
        chosen = slice(None) if rows is None else rows
        a, b, fa, fb = self.a[chosen], self.b[chosen], self.fa[chosen], self.fb[chosen]
        settled, lost = self.settled[chosen], self.lost[chosen]
        inside = ~(settled | lost) & (t > a) & (t < b)
        undefined = inside & np.isnan(ft)
        hit = inside & (ft == 0)
        left = inside & ~(undefined | hit) & (np.signbit(ft) == np.signbit(fa))
        right = inside & ~(undefined | hit | left)
        self.a[chosen], self.fa[chosen] = np.where(left, t, a), np.where(left, ft, fa)
        self.b[chosen], self.fb[chosen] = np.where(right, t, b), np.where(right, ft, fb)
        self.estimate[chosen] = np.where(hit, t, self.estimate[chosen])
        self.settled[chosen], self.lost[chosen] = settled | hit, lost | undefined


def _poll(cancel: CancelCheck | None) -> None:
    if cancel is not None and cancel():
        raise Cancelled("type-change lines cancelled")
