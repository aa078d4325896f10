"""A solved Cauchy problem (core.analysis.cauchy) on many points: u as a numpy function, u on a display grid, and
the geometry of a point's domain of dependence.

u is evaluated from the solution with the integral of the normal derivative g left unevaluated (the data and
one integral), so every solution evaluates, with a closed form or without one (an antiderivative sympy writes
with special functions numpy lacks, or none at all). The data are compiled by sympy's lambdify from the
expression tree the whitelisted parser built (never from typed text), into numpy and scipy calls. The
integral is a table of the antiderivative of g over the range of s the box needs: the lines through the box's
points meet the data line at s values that are linear in (x, y), so the box's corners bound them. The range is
cut into ``PANELS`` panels integrated by 8-point Gauss-Legendre quadrature, and read between panel ends by
cubic Hermite interpolation (the antiderivative's slope is g itself); an integral across a panel where g is not
finite at a quadrature point or a panel end is undefined (NaN), as is one outside the box's range of s. A
singularity of g between those points (1/s with no point at 0) is not seen: the table then holds a finite
value where the integral diverges.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import sympy
from scipy.interpolate import CubicHermiteSpline

from core.analysis.cauchy import CauchySolution, DataLine
from core.analysis.field_values import MAX_FIELD_NODES, FieldGrid, grid_of
from core.domain import Domain
from core.progress import CancelCheck, ProgressReport

__all__ = ["PANELS", "DependenceSketch", "SolutionEvaluator", "dependence_sketch", "line_in_box",
           "solution_evaluator", "solution_on_grid"]

PANELS = 4096
_GAUSS_POINTS = 8
_MODULES = ["scipy", "numpy"]

Box = tuple[float, float, float, float]        # xmin, xmax, ymin, ymax


class _Antiderivative:
    """The integral of g between two arrays of s, from a table over [low, high] (see the module docstring)."""

    def __init__(self, g: Callable, low: float, high: float) -> None:
        if not high > low:
            low, high = low - 0.5, high + 0.5
        self.low, self.high = low, high
        nodes = np.linspace(low, high, PANELS + 1)
        points, weights = np.polynomial.legendre.leggauss(_GAUSS_POINTS)
        half = np.diff(nodes) / 2
        middle = nodes[:-1] + half
        at = middle[:, None] + half[:, None] * points[None, :]
        with np.errstate(all="ignore"):
            panels = (_values(g, at) * weights[None, :]).sum(axis=1) * half
            slopes = _values(g, nodes)
        bad = ~np.isfinite(panels)
        bad |= ~np.isfinite(slopes[:-1]) | ~np.isfinite(slopes[1:])     # g not finite at a panel's end
        self.bad_before = np.concatenate(([0], np.cumsum(bad)))          # bad panels before each node
        primitive = np.concatenate(([0.0], np.cumsum(np.where(bad, 0.0, panels))))
        slopes = np.where(np.isfinite(slopes), slopes, 0.0)
        self.nodes = nodes
        self.spline = CubicHermiteSpline(nodes, primitive, slopes)

    def _panel(self, s: np.ndarray) -> np.ndarray:
        return np.clip(np.searchsorted(self.nodes, s, side="right") - 1, 0, PANELS - 1)

    def __call__(self, start, stop) -> np.ndarray:
        start, stop = np.broadcast_arrays(np.asarray(start, dtype=np.float64), np.asarray(stop, dtype=np.float64))
        value = self.spline(stop) - self.spline(start)
        inside = (start >= self.low) & (start <= self.high) & (stop >= self.low) & (stop <= self.high)
        first, last = np.minimum(self._panel(start), self._panel(stop)), np.maximum(self._panel(start),
                                                                                    self._panel(stop))
        crossed = self.bad_before[last + 1] > self.bad_before[first]     # a panel where g is not finite
        return np.where(inside & ~crossed, value, np.nan)


def _values(function: Callable, *arrays: np.ndarray) -> np.ndarray:
    """``function`` on the arrays as float64 of their broadcast shape; NaN where it is not a finite real."""
    shape = np.broadcast_shapes(*(np.shape(a) for a in arrays))
    result = np.asarray(function(*arrays))
    if np.iscomplexobj(result):
        result = np.where(result.imag == 0, result.real, np.nan)
    result = np.array(np.broadcast_to(result, shape), dtype=np.float64)
    result[~np.isfinite(result)] = np.nan
    return result


@dataclass(frozen=True, eq=False)
class SolutionEvaluator:
    """u(x, y) of one solved problem on arrays of points (broadcast together), float64, NaN where undefined.
    ``box`` is the rectangle whose points the integral's table covers (everywhere when there is no integral)."""

    solution: CauchySolution
    box: Box
    function: Callable
    numerical_integral: bool

    def __call__(self, x, y) -> np.ndarray:
        x, y = np.asarray(x, dtype=np.float64), np.asarray(y, dtype=np.float64)
        with np.errstate(all="ignore"):
            try:
                return _values(self.function, x, y)
            except (NameError, TypeError, ValueError, AttributeError) as error:
                raise ValueError(f"u cannot be evaluated on points: {error}") from None


def solution_evaluator(solution: CauchySolution, box: Box) -> SolutionEvaluator:
    """u of ``solution`` as a numpy function, exact to rounding where there is no integral and to about 1e-12
    of the integral's size where there is one, for points of ``box`` (xmin, xmax, ymin, ymax)."""
    x, y = solution.x, solution.y
    expression = solution.unevaluated if solution.unevaluated is not None else solution.exact
    replacements, tables = {}, {}
    for number, integral in enumerate(sorted(expression.atoms(sympy.Integral), key=sympy.default_sort_key)):
        (s, low, high), = integral.limits
        reach = [float(limit.subs({x: cx, y: cy})) for limit in (low, high)
                 for cx in box[:2] for cy in box[2:]]
        name = f"integral_{number}"
        g = sympy.lambdify((s,), integral.function, modules=_MODULES, dummify=True)
        tables[name] = _Antiderivative(g, min(reach), max(reach))
        replacements[integral] = sympy.Function(name)(low, high)
    function = sympy.lambdify((x, y), expression.xreplace(replacements), modules=[tables, *_MODULES],
                              dummify=True)
    return SolutionEvaluator(solution=solution, box=tuple(float(v) for v in box), function=function,
                             numerical_integral=bool(tables))


def solution_on_grid(evaluator: SolutionEvaluator, domain: Domain, *, max_nodes: int = MAX_FIELD_NODES,
                     cancel: CancelCheck | None = None, progress: ProgressReport | None = None) -> FieldGrid:
    """u on the domain's grid (or a coarser one of at most ``max_nodes``, core.analysis.field_values.display_grid)
    as the field layer's FieldGrid (kind "cauchy", name "u"), a block of rows at a time."""
    return grid_of(domain, "cauchy", "u", evaluator, max_nodes=max_nodes, cancel=cancel, progress=progress)


def line_in_box(line: DataLine, box: Box) -> tuple[tuple[float, float], tuple[float, float]] | None:
    """The part of the data line inside ``box`` (its two ends, in the order of increasing s), or None when the
    line misses the box."""
    (x0, y0), (tx, ty) = (tuple(float(v) for v in pair) for pair in (line.origin, line.tangent))
    low, high = -math.inf, math.inf
    for start, step, lo, hi in ((x0, tx, box[0], box[1]), (y0, ty, box[2], box[3])):
        if step == 0:
            if not lo <= start <= hi:
                return None
            continue
        ends = sorted(((lo - start) / step, (hi - start) / step))
        low, high = max(low, ends[0]), min(high, ends[1])
    if not low <= high:
        return None
    return (x0 + low * tx, y0 + low * ty), (x0 + high * tx, y0 + high * ty)


@dataclass(frozen=True)
class DependenceSketch:
    """What u at ``point`` depends on: ``feet`` where the characteristics through it meet the data line (two,
    in family order; one where parabolic: the value and slope there), ``segment`` the data between the feet
    (None where parabolic), ``line`` the data line across the box (None when it misses the box) and ``value``
    u at the point (NaN where undefined or outside the evaluator's box)."""

    point: tuple[float, float]
    feet: tuple[tuple[float, float], ...]
    segment: tuple[tuple[float, float], tuple[float, float]] | None
    line: tuple[tuple[float, float], tuple[float, float]] | None
    value: float


def dependence_sketch(evaluator: SolutionEvaluator, x: float, y: float, box: Box) -> DependenceSketch:
    """The domain of dependence of (x, y) for the evaluator's solution, and the data line across ``box``."""
    solution = evaluator.solution
    feet = solution.domain_of_dependence(float(x), float(y))
    segment = (feet[0], feet[1]) if len(feet) == 2 else None
    value = float(evaluator(np.array([float(x)]), np.array([float(y)]))[0])
    return DependenceSketch(point=(float(x), float(y)), feet=feet, segment=segment,
                            line=line_in_box(solution.line, box), value=value)
