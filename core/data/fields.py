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

Fields are safe to sample from several threads at once (classification samples blocks in parallel).
"""

from __future__ import annotations

import hashlib
import math
import threading
from collections import OrderedDict
from collections.abc import Mapping

import numpy as np

from core.data.raw import DataError

__all__ = ["GridField", "MeshField", "ProfileField", "triangulate_points"]

_BARYCENTRIC_SLACK = 1e-9     # points this far (in barycentric units) outside a triangle still belong to it
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
    """Quantities on a rectilinear grid: x (nx,), y (ny,) strictly increasing, arrays (ny, nx)."""

    layout = "grid"

    def __init__(self, x: np.ndarray, y: np.ndarray, arrays: Mapping[str, np.ndarray]) -> None:
        self.x = np.asarray(x, dtype=np.float64)
        self.y = np.asarray(y, dtype=np.float64)
        self.arrays = {name: np.asarray(a, dtype=np.float64) for name, a in arrays.items()}
        self.extent = (float(self.x[0]), float(self.x[-1]), float(self.y[0]), float(self.y[-1]))
        self.size = (self.y.size, self.x.size)
        self._gradients = _LazyCache()

    def sample(self, name: str, x, y) -> np.ndarray:
        return self._bilinear(self.arrays[name], x, y)

    def sample_derivative(self, name: str, axis: int, x, y) -> np.ndarray:
        """d(name)/d(variable ``axis``): 0 is the first variable (x), 1 the second (y)."""
        return self._bilinear(self._gradients.get(name, lambda: self._gradient(name))[axis], x, y)

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

    def sample(self, name: str, x, y) -> np.ndarray:
        return self._linear(self.arrays[name], x, y)

    def sample_derivative(self, name: str, axis: int, x, y) -> np.ndarray:
        if axis == self.axis:
            return self._linear(self._gradients.get(name, lambda: self._gradient(name)), x, y)
        # Constant along the other variable: the derivative is 0 where the profile is defined.
        return self._linear(self.arrays[name], x, y) * 0.0

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
        self._locator = _TriangleLocator(self.points, np.asarray(triangles, dtype=np.int64), where=where)
        self.triangles = self._locator.triangles
        used = self.points[np.unique(self.triangles)]
        self.extent = (float(used[:, 0].min()), float(used[:, 0].max()),
                       float(used[:, 1].min()), float(used[:, 1].max()))
        self.size = (self.points.shape[0], self.triangles.shape[0])
        self._gradients = _LazyCache()
        self._locations = _LocationCache(LOCATION_CACHE_BYTES)

    def clear_location_cache(self) -> None:
        """Forget every cached point location (benchmarks start from a cold cache)."""
        self._locations.clear()

    def sample(self, name: str, x, y) -> np.ndarray:
        return self._interpolate(self.arrays[name], x, y)

    def sample_derivative(self, name: str, axis: int, x, y) -> np.ndarray:
        return self._interpolate(self._gradients.get(name, lambda: self._vertex_gradient(name))[axis], x, y)

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

    def _interpolate(self, values: np.ndarray, x, y) -> np.ndarray:
        x, y, shape = _points(x, y)
        triangle, weights = self._located(x, y, shape)
        out = np.full(triangle.shape, np.nan)
        found = triangle >= 0
        corners = self.triangles[triangle[found]]
        with np.errstate(invalid="ignore"):
            out[found] = np.einsum("ij,ij->i", weights[found], values[corners])
        return out.reshape(shape)

    def _located(self, x: np.ndarray, y: np.ndarray, shape: tuple[int, ...]):
        """(triangle, barycentric weights) of the points, located once per set of points.

        Point location does not depend on parameters or on the quantity, so a slider drag or several
        quantities sampled on the same grid (the same row blocks, classification's form) reuse it.
        """
        key = _points_key(x, y)
        result = self._locations.get(key)
        if result is None:
            xb, yb = np.broadcast_arrays(x, y)
            result = self._locator.locate(xb.ravel(), yb.ravel())
            self._locations.put(key, result)
        return result


def _points_key(x: np.ndarray, y: np.ndarray) -> tuple:
    """Shapes and BLAKE2b digests of the coordinates: equal keys mean equal points (128-bit digests)."""
    digests = []
    for values in (x, y):
        digest = hashlib.blake2b(digest_size=16)
        digest.update(np.ascontiguousarray(values).view(np.uint8))
        digests.append(digest.digest())
    return (x.shape, y.shape, *digests)


class _LocationCache:
    """Least-recently-used point locations, at most ``limit`` bytes of them; safe across threads."""

    def __init__(self, limit: int) -> None:
        self._limit = limit
        self._entries: OrderedDict[tuple, tuple[np.ndarray, np.ndarray]] = OrderedDict()
        self._bytes = 0
        self._lock = threading.Lock()

    def get(self, key: tuple):
        with self._lock:
            entry = self._entries.get(key)
            if entry is not None:
                self._entries.move_to_end(key)
            return entry

    def put(self, key: tuple, entry: tuple[np.ndarray, np.ndarray]) -> None:
        size = sum(array.nbytes for array in entry)
        if size > self._limit:
            return
        for array in entry:
            array.flags.writeable = False
        with self._lock:
            if key in self._entries:
                return
            self._entries[key] = entry
            self._bytes += size
            while self._bytes > self._limit:
                _, dropped = self._entries.popitem(last=False)
                self._bytes -= sum(array.nbytes for array in dropped)

    def clear(self) -> None:
        with self._lock:
            self._entries.clear()
            self._bytes = 0


class _TriangleLocator:
    """Finds the triangle holding each query point through a uniform grid of buckets.

    Every triangle is listed in each bucket its bounding box touches, so a point's triangle is always among
    the candidates of the point's bucket; candidates are tried in rounds, each round vectorised over all
    points still unplaced. Degenerate (zero-area) triangles are dropped.
    """

    def __init__(self, points: np.ndarray, triangles: np.ndarray, *, where: str) -> None:
        corners = points[triangles]                                          # (m, 3, 2)
        edges = np.stack([corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0]], axis=2)  # (m,2,2)
        det = edges[:, 0, 0] * edges[:, 1, 1] - edges[:, 0, 1] * edges[:, 1, 0]
        span = np.ptp(points, axis=0)
        scale = float(max(span.max(), np.finfo(float).tiny))
        keep = np.abs(det) > 1e-12 * scale * scale
        if not keep.any():
            raise DataError(f"{where}: every triangle has zero area (all points on a line?)")
        self.triangles = triangles[keep]
        corners, edges, det = corners[keep], edges[keep], det[keep]
        self.origin = corners[:, 0]
        # inverse of [[e1x, e2x], [e1y, e2y]]: maps (q - origin) to the barycentric coordinates (l1, l2)
        self.inverse = np.empty_like(edges)
        self.inverse[:, 0, 0] = edges[:, 1, 1] / det
        self.inverse[:, 0, 1] = -edges[:, 0, 1] / det
        self.inverse[:, 1, 0] = -edges[:, 1, 0] / det
        self.inverse[:, 1, 1] = edges[:, 0, 0] / det
        self.area = 0.5 * np.abs(det)
        low, high = corners.min(axis=1), corners.max(axis=1)                 # (m, 2) bounding boxes
        self.low, self.high = low.min(axis=0), high.max(axis=0)
        m = self.triangles.shape[0]
        width = np.maximum(self.high - self.low, scale * 1e-12)
        nbx = int(np.clip(math.ceil(math.sqrt(m * width[0] / width[1])), 1, 2048))
        nby = int(np.clip(math.ceil(m / nbx), 1, 2048))
        self.shape = np.array([nbx, nby])
        self.cell = width / self.shape
        i0, j0 = self._bucket_of(low).T
        i1, j1 = self._bucket_of(high).T
        wide, tall = i1 - i0 + 1, j1 - j0 + 1
        count = wide * tall
        owner = np.repeat(np.arange(m), count)
        offset = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
        bucket = ((np.repeat(j0, count) + offset // np.repeat(wide, count)) * nbx
                  + np.repeat(i0, count) + offset % np.repeat(wide, count))
        order = np.argsort(bucket, kind="stable")
        self.candidates = owner[order]
        self.counts = np.bincount(bucket, minlength=nbx * nby)
        self.starts = np.cumsum(self.counts) - self.counts

    def _bucket_of(self, xy: np.ndarray) -> np.ndarray:
        index = np.floor((xy - self.low) / self.cell).astype(np.int64)
        return np.clip(index, 0, self.shape - 1)

    def locate(self, qx: np.ndarray, qy: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(triangle index (k,), -1 where outside every triangle; barycentric weights (k, 3))."""
        k = qx.size
        triangle = np.full(k, -1, dtype=np.int64)
        weights = np.zeros((k, 3))
        slack = 1e-9 * float(np.max(self.high - self.low))
        with np.errstate(invalid="ignore"):
            near = ((qx >= self.low[0] - slack) & (qx <= self.high[0] + slack)
                    & (qy >= self.low[1] - slack) & (qy <= self.high[1] + slack))
        active = np.flatnonzero(near)
        q = np.column_stack([qx[active], qy[active]])
        i, j = self._bucket_of(q).T
        bucket = j * self.shape[0] + i
        count, start = self.counts[bucket], self.starts[bucket]
        round_number = 0
        while active.size:
            more = count > round_number
            active, q, count, start = active[more], q[more], count[more], start[more]
            if not active.size:
                break
            candidate = self.candidates[start + round_number]
            relative = q - self.origin[candidate]
            inverse = self.inverse[candidate]
            l1 = inverse[:, 0, 0] * relative[:, 0] + inverse[:, 0, 1] * relative[:, 1]
            l2 = inverse[:, 1, 0] * relative[:, 0] + inverse[:, 1, 1] * relative[:, 1]
            l0 = 1.0 - l1 - l2
            hit = (l0 >= -_BARYCENTRIC_SLACK) & (l1 >= -_BARYCENTRIC_SLACK) & (l2 >= -_BARYCENTRIC_SLACK)
            placed = active[hit]
            triangle[placed] = candidate[hit]
            weights[placed] = np.column_stack([l0[hit], l1[hit], l2[hit]])
            miss = ~hit
            active, q, count, start = active[miss], q[miss], count[miss], start[miss]
            round_number += 1
        return triangle, weights
