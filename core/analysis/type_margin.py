"""How far each point is from holding a type, as a smooth field, and its largest value over a rectangle.

The type decision is D/S > tolerance (hyperbolic) or D/S < -tolerance (elliptic), with D = b^2 - 4ac and
S = b^2 + 4|ac| (core.analysis.discriminant). D/S itself is a poor thing to maximise: where b = 0 it is
-sign(ac), a step function an optimiser cannot climb. The margins used here have the sign of the decision at
every point and vary smoothly with the coefficients:

    hyperbolic margin  (D - tolerance S) / N,      elliptic margin  (-D - tolerance S) / N,
    N = a^2 + b^2 + c^2,

positive exactly where the point holds the type. They do not depend on the size of the coefficients (degree 0
in a, b, c; formed from a, b, c divided by a power of two, so nothing overflows) and lie in [-2 - 2 tol, 2].
A zone of the type exists in a rectangle iff the largest margin there is positive, and where a zone is born
or dies the margin's maximum is 0, at the place it is born (any positive normalisation gives the same place).
Where a = b = c = 0 both margins are -tolerance (parabolic); undefined points count as -inf.

``largest_margin`` finds the maximum over a rectangle: the margin on a grid of candidates, then a bounded
quasi-Newton search (scipy.optimize.minimize, L-BFGS-B, central-difference gradients from one batched
evaluation of five points) from the best local maxima of the grid and from a hint, a bounded Brent search
(scipy.optimize.minimize_scalar) along each of the four edges from the best node of that edge, and the
four corners. It is a local method: a maximum whose basin holds no candidate (a zone narrower than the grid
spacing that is not a local maximum of the sampled margin) can be missed.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize

from core.analysis.discriminant import scaled_by_power_of_two
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES, QuantitySource

__all__ = ["MARGIN_KINDS", "Box", "MarginField", "Maximum", "SampledMargin", "largest_margin", "sample_margin"]

MARGIN_KINDS = ("hyperbolic", "elliptic", "not_hyperbolic", "not_elliptic")
_STARTS = 4                  # local maxima of the grid the quasi-Newton search starts from
_STEP = 1e-6                 # central-difference step, as a fraction of the rectangle's side
_UNDEFINED_COST = 10.0       # what the minimiser sees at an undefined point (every margin is above -3)
_EDGE_POINTS = 17            # points of an edge interval sampled a round
_EDGE_ROUNDS = 14            # rounds, each narrowing the interval 8 times


@dataclass(frozen=True)
class Box:
    """A rectangle [x0, x1] x [y0, y1] (x0 <= x1, y0 <= y1) of the variables."""

    x0: float
    x1: float
    y0: float
    y1: float

    def contains(self, x: float, y: float) -> bool:
        return self.x0 <= x <= self.x1 and self.y0 <= y <= self.y1


@dataclass(frozen=True)
class Maximum:
    """The largest margin found over a rectangle (-inf when undefined everywhere sampled) and where."""

    value: float
    at: tuple[float, float]


class MarginField:
    """The margins of one equation at one set of parameter values (``kind`` one of MARGIN_KINDS: the margin
    of a type, or its negative: "not_hyperbolic" is positive where the point is not hyperbolic)."""

    def __init__(self, compiled: CompiledEquation, parameters: Mapping[str, float], *, kind: str,
                 tolerance: float, data: QuantitySource | None = None) -> None:
        if kind not in MARGIN_KINDS:
            raise ValueError(f"unknown margin {kind!r}; expected one of {', '.join(MARGIN_KINDS)}")
        self.compiled = compiled
        self.kind = kind
        self.tolerance = float(tolerance)
        self.data = data
        self._prepared = compiled.prepare(compiled.parameter_vector(parameters))

    def __call__(self, x, y) -> np.ndarray:
        """The margin at broadcastable points (float64 of their broadcast shape); -inf where undefined."""
        shape = np.broadcast_shapes(np.shape(x), np.shape(y))
        values = self.compiled.evaluate_raw(x, y, prepared=self._prepared, data=self.data, names=COEFFICIENT_NAMES)
        a, b, c = (np.broadcast_to(values[name], shape) for name in COEFFICIENT_NAMES)
        a, b, c = scaled_by_power_of_two(a, b, c)
        with np.errstate(all="ignore"):
            quarter_b2 = 0.25 * b * b
            product = a * c
            scale = 4.0 * (quarter_b2 + np.abs(product))
            discriminant = 4.0 * (quarter_b2 - product)
            size = a * a + b * b + c * c
            signed = discriminant if self.kind in ("hyperbolic", "not_hyperbolic") else -discriminant
            margin = np.where(size > 0, (signed - self.tolerance * scale) / size, -self.tolerance)
        margin = np.where(np.isfinite(margin), margin, np.nan)
        if self.kind.startswith("not_"):
            margin = -margin
        return np.where(np.isnan(margin), -np.inf, margin)


@dataclass(frozen=True, eq=False)
class SampledMargin:
    """The margin on the nodes of a grid inside a box: ``xs`` (nx,), ``ys`` (ny,) (the box's edges included),
    ``values`` (ny, nx), -inf where undefined."""

    xs: np.ndarray
    ys: np.ndarray
    values: np.ndarray


def sample_margin(field: MarginField, box: Box, x_nodes: np.ndarray, y_nodes: np.ndarray) -> SampledMargin:
    """The margin on the nodes of ``x_nodes`` x ``y_nodes`` inside ``box``, with the box's edges added."""
    xs = _inside(x_nodes, box.x0, box.x1)
    ys = _inside(y_nodes, box.y0, box.y1)
    return SampledMargin(xs, ys, field(xs[np.newaxis, :], ys[:, np.newaxis]))


def largest_margin(field: MarginField, box: Box, x_nodes: np.ndarray, y_nodes: np.ndarray, *,
                   hint: tuple[float, float] | None = None, starts: int = _STARTS,
                   sampled: SampledMargin | None = None, positive_enough: bool = False) -> Maximum:
    """The largest value of ``field`` over ``box``: candidates from the grid ``x_nodes`` x ``y_nodes`` (those
    inside the box are sampled; the box's edges and corners are added), refined by bounded local searches.

    ``hint`` (a point of the box, e.g. the maximum at a nearby parameter value) is one more start;
    ``sampled`` (sample_margin of the same field, box and nodes) spares sampling again. With
    ``positive_enough`` a positive node ends the search (when only the sign of the maximum matters).
    """
    if sampled is None:
        sampled = sample_margin(field, box, x_nodes, y_nodes)
    xs, ys, values = sampled.xs, sampled.ys, sampled.values
    best = Maximum(-math.inf, (float(xs[0]), float(ys[0])))
    best = _better(best, _best_node(values, xs, ys))
    if (not math.isfinite(best.value) and hint is None) or (positive_enough and best.value > 0):
        return best
    points = [(float(xs[i]), float(ys[j])) for j, i in _local_maxima(values, starts)]
    if hint is not None:
        points.append((float(hint[0]), float(hint[1])))
    for point in points:
        best = _better(best, _climb(field, box, point))
    return _better(best, _along_edges(field, box, xs, ys, values))


def _inside(nodes: np.ndarray, low: float, high: float) -> np.ndarray:
    """The nodes within [low, high], with both ends added (sorted, distinct)."""
    nodes = np.asarray(nodes, dtype=np.float64)
    return np.unique(np.concatenate(([low], nodes[(nodes > low) & (nodes < high)], [high])))


def _better(first: Maximum, second: Maximum) -> Maximum:
    return second if second.value > first.value else first


def _best_node(values: np.ndarray, xs: np.ndarray, ys: np.ndarray) -> Maximum:
    j, i = np.unravel_index(int(np.argmax(values)), values.shape)
    return Maximum(float(values[j, i]), (float(xs[i]), float(ys[j])))


def _local_maxima(values: np.ndarray, count: int) -> list[tuple[int, int]]:
    """(j, i) of at most ``count`` nodes at least as large as their eight neighbours, largest first."""
    padded = np.pad(values, 1, constant_values=-np.inf)
    ny, nx = values.shape
    peak = np.isfinite(values)
    for dj in (-1, 0, 1):
        for di in (-1, 0, 1):
            if dj or di:
                peak &= values >= padded[1 + dj:1 + dj + ny, 1 + di:1 + di + nx]
    rows, columns = np.nonzero(peak)
    order = np.argsort(-values[rows, columns], kind="stable")[:count]
    return [(int(rows[k]), int(columns[k])) for k in order]


def _climb(field: MarginField, box: Box, start: tuple[float, float]) -> Maximum:
    """L-BFGS-B on the negative margin within ``box``, in coordinates scaled to the unit square."""
    width, height = box.x1 - box.x0, box.y1 - box.y0
    if width <= 0 or height <= 0:
        return Maximum(float(field(start[0], start[1])), start)

    def point(t: np.ndarray) -> tuple[float, float]:
        return box.x0 + width * float(t[0]), box.y0 + height * float(t[1])

    def cost(t: np.ndarray) -> tuple[float, np.ndarray]:
        # five points in one evaluation: the centre and a step either side along each axis, kept in the box
        lows = np.maximum(t - _STEP, 0.0)
        highs = np.minimum(t + _STEP, 1.0)
        u = np.array([t[0], lows[0], highs[0], t[0], t[0]])
        v = np.array([t[1], t[1], t[1], lows[1], highs[1]])
        margin = field(box.x0 + width * u, box.y0 + height * v)
        if not np.isfinite(margin[0]):
            return _UNDEFINED_COST, np.zeros(2)
        gradient = np.zeros(2)
        for axis, (low, high, t_low, t_high) in enumerate(((margin[1], margin[2], lows[0], highs[0]),
                                                           (margin[3], margin[4], lows[1], highs[1]))):
            if np.isfinite(low) and np.isfinite(high) and t_high > t_low:
                gradient[axis] = (high - low) / (t_high - t_low)
            elif np.isfinite(high) and t_high > t[axis]:
                gradient[axis] = (high - margin[0]) / (t_high - t[axis])
            elif np.isfinite(low) and t[axis] > t_low:
                gradient[axis] = (margin[0] - low) / (t[axis] - t_low)
        return -float(margin[0]), -gradient

    t0 = np.clip([(start[0] - box.x0) / width, (start[1] - box.y0) / height], 0.0, 1.0)
    result = minimize(cost, t0, jac=True, method="L-BFGS-B", bounds=[(0.0, 1.0), (0.0, 1.0)],
                      options={"ftol": 1e-16, "gtol": 1e-12, "maxiter": 200})
    at = point(result.x)
    return Maximum(float(field(at[0], at[1])), at)


def _along_edges(field: MarginField, box: Box, xs: np.ndarray, ys: np.ndarray, values: np.ndarray) -> Maximum:
    """The largest margin along the four edges: from the best sampled node of each edge, the interval between
    its neighbours is sampled at _EDGE_POINTS points and narrowed to the best one's neighbours, _EDGE_ROUNDS
    times (one evaluation of the four edges a round: a 1-D search of a local maximum to 1e-13 of the grid
    step, the value to rounding where the maximum is smooth)."""
    edges = [(xs, values[0, :]), (xs, values[-1, :]), (ys, values[:, 0]), (ys, values[:, -1])]
    low, high = np.empty(4), np.empty(4)
    for index, (nodes, along) in enumerate(edges):
        k = int(np.argmax(along))
        low[index], high[index] = nodes[max(k - 1, 0)], nodes[min(k + 1, nodes.size - 1)]
    fixed = np.array([box.y0, box.y1, box.x0, box.x1])[:, np.newaxis]
    fraction = np.linspace(0.0, 1.0, _EDGE_POINTS)
    best = Maximum(-math.inf, (box.x0, box.y0))
    for _ in range(_EDGE_ROUNDS):
        s = low[:, np.newaxis] + (high - low)[:, np.newaxis] * fraction
        s[:, -1] = high
        along_x = np.broadcast_to(np.arange(4)[:, np.newaxis] < 2, s.shape)
        px = np.where(along_x, s, fixed)
        py = np.where(along_x, fixed, s)
        margin = field(px, py)
        k = np.argmax(margin, axis=1)
        rows = np.arange(4)
        top = int(np.argmax(margin[rows, k]))
        if margin[top, k[top]] > best.value:
            best = Maximum(float(margin[top, k[top]]), (float(px[top, k[top]]), float(py[top, k[top]])))
        low = s[rows, np.maximum(k - 1, 0)]
        high = s[rows, np.minimum(k + 1, _EDGE_POINTS - 1)]
    return best
