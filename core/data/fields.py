"""Interpolation of background data at arbitrary points, with first derivatives, never extrapolating.

Three kinds of field, all sampling any broadcastable x, y and returning float64 arrays of the broadcast
shape, NaN outside the data or where a value needed for the point is missing:

- ``GridField``: a rectilinear grid, bilinear interpolation; derivatives by second-order finite differences
  on the data grid (np.gradient, edge_order=2, non-uniform spacing allowed), then interpolated.
- ``ProfileField``: a 1-D profile along one variable, linear interpolation, constant along the other variable
  (its derivative along the other variable is exactly 0).
- ``MeshField``: linear interpolation on triangles (a mesh's own cells, or a Delaunay triangulation of
  scattered points); derivatives by area-weighted recovery of per-vertex gradients from the piecewise-linear
  field, then interpolated linearly (second order on smooth, regular meshes; first order at the boundary).
  Points are located by core.data.mesh_location (a grid's nodes by rasterising the triangles) and the
  locations kept per set of points, so sampling the same points again only interpolates.

Fields are safe to sample from several threads at once (classification samples blocks in parallel).
"""

from __future__ import annotations

import math
import threading
from collections.abc import Mapping

import numpy as np

from core.data.mesh_location import LocationCache, PointLocations, TriangleLocator, grid_axes, points_key
from core.data.ranges import MeshRanges, MinMaxPyramid, ValueRange, index_span
from core.data.raw import DataError

__all__ = ["GridField", "MeshField", "ProfileField", "triangulate_points"]

LOCATION_CACHE_BYTES = 256 << 20   # per mesh: point locations kept for sets of points sampled again


def _points(x, y) -> tuple[np.ndarray, np.ndarray, tuple[int, ...]]:
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    try:
        shape = np.broadcast_shapes(x.shape, y.shape)
    except ValueError:
        raise ValueError(f"x and y do not broadcast together: shapes {x.shape} and {y.shape}") from None
    return x, y, shape


def _locate(nodes: np.ndarray, q: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Interval index i (nodes[i] <= q <= nodes[i+1]), fraction t in [0, 1] and an inside mask."""
    index = np.searchsorted(nodes, q, side="right") - 1
    np.clip(index, 0, nodes.size - 2, out=index)
    left = nodes[index]
    with np.errstate(invalid="ignore"):
        fraction = (q - left) / (nodes[index + 1] - left)
        inside = (q >= nodes[0]) & (q <= nodes[-1])
    return index, fraction, inside


class _LazyCache:
    """Values computed once on first use, guarded for concurrent callers."""

    def __init__(self) -> None:
        self._values: dict = {}
        self._lock = threading.Lock()

    def get(self, key, compute):
        value = self._values.get(key)
        if value is None:
            with self._lock:
                value = self._values.get(key)
                if value is None:
                    value = compute()
                    self._values[key] = value
        return value


class GridField:
    """Quantities on a rectilinear grid: x (nx,), y (ny,) strictly increasing, arrays (ny, nx).

    ``gradients`` {name: (d/dx, d/dy)} gives derivatives computed elsewhere (a window of a larger grid,
    core.data.band_source) in place of np.gradient on these arrays; an axis never sampled may be None.
    """

    layout = "grid"

    def __init__(self, x: np.ndarray, y: np.ndarray, arrays: Mapping[str, np.ndarray], *,
                 gradients: Mapping[str, tuple[np.ndarray | None, np.ndarray | None]] | None = None) -> None:
        self.x = np.asarray(x, dtype=np.float64)
        self.y = np.asarray(y, dtype=np.float64)
        self.arrays = {name: np.asarray(a, dtype=np.float64) for name, a in arrays.items()}
        self.extent = (float(self.x[0]), float(self.x[-1]), float(self.y[0]), float(self.y[-1]))
        self.size = (self.y.size, self.x.size)
        self._gradients = _LazyCache()
        for name, pair in (gradients or {}).items():
            self._gradients.get(name, lambda pair=pair: pair)
        self._pyramids = _LazyCache()      # per (quantity, derivative axis): ranges over boxes

    def sample(self, name: str, x, y) -> np.ndarray:
        return self._bilinear(self.arrays[name], x, y)

    def sample_derivative(self, name: str, axis: int, x, y) -> np.ndarray:
        """d(name)/d(variable ``axis``): 0 is the first variable (x), 1 the second (y)."""
        return self._bilinear(self._gradients.get(name, lambda: self._gradient(name))[axis], x, y)

    def value_range(self, name: str, axis: int | None, x0, x1, y0, y1) -> ValueRange:
        """Range over boxes [x0, x1] x [y0, y1] of the quantity (``axis`` None) or of its derivative along
        ``axis``: the nodal values (or nodal gradients, which are what is interpolated) the boxes touch."""
        def pyramid():
            if axis is None:
                return MinMaxPyramid(self.arrays[name])
            return MinMaxPyramid(self._gradients.get(name, lambda: self._gradient(name))[axis])

        found = self._pyramids.get((name, axis), pyramid)
        c0, c1, outside_x, missed_x = index_span(self.x, np.asarray(x0), np.asarray(x1))
        r0, r1, outside_y, missed_y = index_span(self.y, np.asarray(y0), np.asarray(y1))
        low, high, maybe, surely = found.query(r0, r1, c0, c1)
        return ValueRange(low, high, maybe | outside_x | outside_y, surely | missed_x | missed_y)

    def _gradient(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        values = self.arrays[name]
        order = 2 if min(values.shape) >= 3 else 1
        with np.errstate(invalid="ignore"):
            d_dy, d_dx = np.gradient(values, self.y, self.x, edge_order=order)
        return d_dx, d_dy

    def _bilinear(self, values: np.ndarray, x, y) -> np.ndarray:
        x, y, shape = _points(x, y)
        if x.ndim == 2 and y.ndim == 2 and x.shape[0] == 1 and y.shape[1] == 1:
            # A grid of points given as a row of x and a column of y: locate each axis once.
            ix, tx, in_x = _locate(self.x, x[0])
            iy, ty, in_y = _locate(self.y, y[:, 0])
            tx, ty = tx[np.newaxis, :], ty[:, np.newaxis]
            rows0, rows1 = iy[:, np.newaxis], iy[:, np.newaxis] + 1
            with np.errstate(invalid="ignore"):
                out = ((values[rows0, ix] * (1 - tx) + values[rows0, ix + 1] * tx) * (1 - ty)
                       + (values[rows1, ix] * (1 - tx) + values[rows1, ix + 1] * tx) * ty)
            out[~in_y, :] = np.nan
            out[:, ~in_x] = np.nan
            return out
        xb, yb = np.broadcast_arrays(x, y)
        ix, tx, in_x = _locate(self.x, xb.ravel())
        iy, ty, in_y = _locate(self.y, yb.ravel())
        with np.errstate(invalid="ignore"):
            out = ((values[iy, ix] * (1 - tx) + values[iy, ix + 1] * tx) * (1 - ty)
                   + (values[iy + 1, ix] * (1 - tx) + values[iy + 1, ix + 1] * tx) * ty)
        out[~(in_x & in_y)] = np.nan
        return out.reshape(shape)


class ProfileField:
    """Quantities along one variable (``axis`` 0 or 1), s (n,) strictly increasing, arrays (n,).

    The profile holds for every value of the other variable: N(z) from a cast applies at every x.
    """

    layout = "profile"

    def __init__(self, s: np.ndarray, arrays: Mapping[str, np.ndarray], *, axis: int) -> None:
        if axis not in (0, 1):
            raise ValueError(f"profile axis must be 0 or 1, got {axis!r}")
        self.s = np.asarray(s, dtype=np.float64)
        self.axis = axis
        self.arrays = {name: np.asarray(a, dtype=np.float64) for name, a in arrays.items()}
        span = (float(self.s[0]), float(self.s[-1]))
        self.extent = (*span, -math.inf, math.inf) if axis == 0 else (-math.inf, math.inf, *span)
        self.size = (self.s.size,)
        self._gradients = _LazyCache()
        self._pyramids = _LazyCache()

    def sample(self, name: str, x, y) -> np.ndarray:
        return self._linear(self.arrays[name], x, y)

    def sample_derivative(self, name: str, axis: int, x, y) -> np.ndarray:
        if axis == self.axis:
            return self._linear(self._gradients.get(name, lambda: self._gradient(name)), x, y)
        # Constant along the other variable: the derivative is 0 where the profile is defined.
        return self._linear(self.arrays[name], x, y) * 0.0

    def value_range(self, name: str, axis: int | None, x0, x1, y0, y1) -> ValueRange:
        """Range over boxes of the quantity (``axis`` None) or its derivative along ``axis`` (0 along the
        other variable, where the profile is defined)."""
        along = axis if axis == self.axis else None
        def pyramid():
            values = self.arrays[name] if along is None else self._gradients.get(name, lambda: self._gradient(name))
            return MinMaxPyramid(values[np.newaxis, :])

        found = self._pyramids.get((name, along), pyramid)
        low, high = (x0, x1) if self.axis == 0 else (y0, y1)
        first, last, outside, missed = index_span(self.s, np.asarray(low), np.asarray(high))
        zeros = np.zeros_like(first)
        low, high, maybe, surely = found.query(zeros, zeros, first, last)
        if axis is not None and axis != self.axis:
            low, high = np.zeros_like(low), np.zeros_like(high)
        return ValueRange(low, high, maybe | outside, surely | missed)

    def _gradient(self, name: str) -> np.ndarray:
        values = self.arrays[name]
        with np.errstate(invalid="ignore"):
            return np.gradient(values, self.s, edge_order=2 if values.size >= 3 else 1)

    def _linear(self, values: np.ndarray, x, y) -> np.ndarray:
        x, y, shape = _points(x, y)
        along, other = (x, y) if self.axis == 0 else (y, x)
        index, fraction, inside = _locate(self.s, along.ravel())
        with np.errstate(invalid="ignore"):
            line = values[index] * (1 - fraction) + values[index + 1] * fraction
        line[~inside] = np.nan
        line = line.reshape(along.shape)
        with np.errstate(invalid="ignore"):
            # Adding 0 * other broadcasts to the points' shape and marks points with no valid other coordinate.
            return np.asarray(line + 0.0 * other, dtype=np.float64).reshape(shape)


def triangulate_points(x: np.ndarray, y: np.ndarray, *, where: str) -> np.ndarray:
    """Delaunay triangles (m, 3) of scattered points; DataError if they are collinear or too few."""
    # Here, not at the top: scipy.spatial takes about 1 s to import (python -X importtime) and only scattered
    # points need it.
    from scipy.spatial import Delaunay, QhullError

    try:
        return np.asarray(Delaunay(np.column_stack([x, y])).simplices, dtype=np.int64)
    except (QhullError, ValueError) as error:
        first = str(error).strip().splitlines()[0] if str(error).strip() else type(error).__name__
        raise DataError(f"{where}: the points cannot be triangulated (collinear or too few?): {first}") from None


class MeshField:
    """Quantities at the vertices of triangles: points x, y (n,), triangles (m, 3), arrays (n,)."""

    layout = "mesh"

    def __init__(self, x: np.ndarray, y: np.ndarray, triangles: np.ndarray,
                 arrays: Mapping[str, np.ndarray], *, where: str = "mesh") -> None:
        self.points = np.column_stack([np.asarray(x, dtype=np.float64), np.asarray(y, dtype=np.float64)])
        self.arrays = {name: np.asarray(a, dtype=np.float64) for name, a in arrays.items()}
        self._locator = TriangleLocator(self.points, np.asarray(triangles, dtype=np.int64), where=where)
        self.triangles = self._locator.triangles
        used = self.points[np.unique(self.triangles)]
        self.extent = (float(used[:, 0].min()), float(used[:, 0].max()),
                       float(used[:, 1].min()), float(used[:, 1].max()))
        self.size = (self.points.shape[0], self.triangles.shape[0])
        self._gradients = _LazyCache()
        self._corner_values = _LazyCache()      # per quantity (and derivative): values at triangles' corners
        self._locations = LocationCache(LOCATION_CACHE_BYTES)
        self._pyramids = _LazyCache()           # ranges over boxes: the vertex buckets, then per quantity

    def clear_location_cache(self) -> None:
        """Forget every cached point location (benchmarks start from a cold cache)."""
        self._locations.clear()

    def sample(self, name: str, x, y) -> np.ndarray:
        table = self._corner_values.get(name, lambda: self._locator.corner_values(self.arrays[name]))
        return self._interpolate(table, x, y)

    def sample_derivative(self, name: str, axis: int, x, y) -> np.ndarray:
        def table():
            gradient = self._gradients.get(name, lambda: self._vertex_gradient(name))[axis]
            return self._locator.corner_values(gradient)

        return self._interpolate(self._corner_values.get((name, axis), table), x, y)

    def value_range(self, name: str, axis: int | None, x0, x1, y0, y1) -> ValueRange:
        """Range over boxes of the quantity (``axis`` None) or its recovered derivative along ``axis``: the
        vertex values (per-vertex gradients) of every triangle that may meet a box (core.data.ranges)."""
        ranges = self._pyramids.get("buckets", lambda: MeshRanges(
            self.points, self._locator.triangles,
            lambda x, y: self._locator.locate(np.asarray(x, dtype=np.float64).ravel(),
                                              np.asarray(y, dtype=np.float64).ravel()).triangle >= 0))
        def pyramid():
            values = self.arrays[name] if axis is None else \
                self._gradients.get(name, lambda: self._vertex_gradient(name))[axis]
            return ranges.pyramid(values)

        return ranges.query(self._pyramids.get((name, axis), pyramid), x0, x1, y0, y1)

    def _vertex_gradient(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """Per-vertex gradient: the area-weighted mean of the constant gradients of adjacent triangles."""
        values = self.arrays[name]
        loc = self._locator
        f = values[self.triangles]                       # (m, 3)
        d1, d2 = f[:, 1] - f[:, 0], f[:, 2] - f[:, 0]
        grad_x = loc.inverse[:, 0, 0] * d1 + loc.inverse[:, 1, 0] * d2
        grad_y = loc.inverse[:, 0, 1] * d1 + loc.inverse[:, 1, 1] * d2
        usable = np.isfinite(grad_x) & np.isfinite(grad_y)
        vertices = self.triangles[usable].ravel()
        weights = np.repeat(loc.area[usable], 3)
        n = self.points.shape[0]
        total = np.bincount(vertices, weights=weights, minlength=n)
        with np.errstate(invalid="ignore", divide="ignore"):
            gx = np.bincount(vertices, weights=weights * np.repeat(grad_x[usable], 3), minlength=n) / total
            gy = np.bincount(vertices, weights=weights * np.repeat(grad_y[usable], 3), minlength=n) / total
        missing = ~np.isfinite(values) | (total == 0)
        gx[missing] = np.nan
        gy[missing] = np.nan
        return gx, gy

    def _interpolate(self, corner_values: np.ndarray, x, y) -> np.ndarray:
        x, y, shape = _points(x, y)
        return self._located(x, y, shape).interpolate(corner_values).reshape(shape)

    def _located(self, x: np.ndarray, y: np.ndarray, shape: tuple[int, ...]) -> PointLocations:
        """Triangles and barycentric weights of the points, located once per set of points.

        Point location does not depend on parameters or on the quantity, so a slider drag or several
        quantities sampled on the same grid (the same row blocks, classification's form) reuse it. The nodes
        of a grid (a row of x and a column of y, or their meshgrid) are located by rasterising the triangles
        and keyed by the two axes alone; other points through the locator's buckets.
        """
        axes = grid_axes(x, y, shape)
        key = ("grid", *points_key(*axes)) if axes is not None else ("points", *points_key(x, y))
        result = self._locations.get(key)
        if result is None:
            if axes is not None:
                result = self._locator.locate_grid(*axes)
            else:
                xb, yb = np.broadcast_arrays(x, y)
                result = self._locator.locate(xb.ravel(), yb.ravel())
            self._locations.put(key, result)
        return result
