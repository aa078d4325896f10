"""Where query points fall in a triangle mesh: the triangle and the barycentric weights.

Two ways to the same answer. Scattered points (probes, traces, any array) are found through a uniform grid of
buckets. The nodes of a rectilinear grid (every x node with every y node, what classification samples) are
found by rasterising the triangles: for each triangle and each grid row it crosses, the columns inside it
follow from its three edge inequalities, so the work is O(triangles + rows crossed + nodes), in bands of rows
that bound the memory. Either way a point belongs to a triangle when its three barycentric coordinates are
at least -SLACK (points on shared edges, at vertices and on the mesh's outline belong to the mesh); a point
inside several triangles within that slack takes the one with the lowest index, and its weights are computed
by the same arithmetic in both ways, so they agree to the last bit. Points outside every triangle get
triangle -1 and NaN weights. Degenerate (zero-area) triangles hold no points.
"""

from __future__ import annotations

import hashlib
import math
import threading
from collections import OrderedDict
from typing import NamedTuple

import numpy as np

from core.data.raw import DataError

__all__ = ["LocationCache", "PointLocations", "TriangleLocator", "grid_axes", "points_key", "search_nodes"]

SLACK = 1e-9                    # points this far (in barycentric units) outside a triangle still belong to it
_CANDIDATE_SLACK = 4 * SLACK    # rasterised column ranges are this generous; each node is then tested at SLACK
_BAND_BUDGET = 1 << 16          # rows are rasterised in bands of about this many nodes plus row crossings
_COUNT_UNIT = 1 << 32           # coverage counting: how many candidate ranges hold a node, in the high bits
_INTERPOLATION_CHUNK = 1 << 15  # points interpolated at a time


class PointLocations(NamedTuple):
    """triangle (k,): each point's triangle (an index into the locator's ``triangles``), -1 outside the mesh;
    weights (2, k): its barycentric weights l1, l2 on the triangle's second and third corners (l0 = 1 - l1 - l2
    on the first), NaN outside, so an interpolated value is NaN there without a mask. 20 bytes a point."""

    triangle: np.ndarray
    weights: np.ndarray

    def interpolate(self, corner_values: np.ndarray) -> np.ndarray:
        """v0 + l1 (v1 - v0) + l2 (v2 - v0) at every point, shape (k,), from ``corner_values`` (3, triangles + 1),
        rows v0, v1 - v0, v2 - v0 per triangle (``TriangleLocator.corner_values``); NaN outside the mesh and in
        triangles with a corner value that is NaN or infinite. Worked in chunks that stay in cache."""
        k = self.triangle.size
        out = np.empty(k)
        chunk = min(k, _INTERPOLATION_CHUNK)
        value = np.empty(chunk)
        index = np.empty(chunk, dtype=np.intp)     # take() with other index types can be ten times slower
        with np.errstate(invalid="ignore"):
            for start in range(0, k, chunk):
                part = slice(start, min(start + chunk, k))
                v, triangle, result = value[:part.stop - start], index[:part.stop - start], out[part]
                np.copyto(triangle, self.triangle[part])
                corner_values[1].take(triangle, out=result)
                result *= self.weights[0, part]
                corner_values[2].take(triangle, out=v)
                v *= self.weights[1, part]
                result += v
                corner_values[0].take(triangle, out=v)
                result += v
        return out


def grid_axes(x: np.ndarray, y: np.ndarray, shape: tuple[int, ...]) -> tuple[np.ndarray, np.ndarray] | None:
    """(x nodes (nx,), y nodes (ny,)) when the points of ``shape`` (ny, nx) are every x node with every y node
    (a row of x and a column of y, or their meshgrid), both strictly increasing and finite; None otherwise."""
    if len(shape) != 2 or 0 in shape:
        return None
    xb, yb = np.broadcast_to(x, shape), np.broadcast_to(y, shape)
    x_nodes, y_nodes = xb[0], yb[:, 0]
    if x.ndim == 2 and x.shape[0] > 1 and not np.array_equal(x, np.broadcast_to(x_nodes, x.shape)):
        return None
    if y.ndim >= 1 and y.shape[-1] > 1 and not np.array_equal(yb, np.broadcast_to(y_nodes[:, np.newaxis], shape)):
        return None
    for nodes in (x_nodes, y_nodes):
        if not (math.isfinite(nodes[0]) and math.isfinite(nodes[-1]) and np.all(nodes[1:] > nodes[:-1])):
            return None
    return x_nodes, y_nodes


def search_nodes(nodes: np.ndarray, values: np.ndarray, side: str) -> np.ndarray:
    """np.searchsorted(nodes, values, side=side) for strictly increasing nodes, faster on evenly spaced ones
    (a grid's axis): a guess from the mean spacing, corrected by one comparison each way; values the guess
    does not settle (uneven nodes, NaN) go to searchsorted. Unsorted values make searchsorted slow."""
    n = nodes.size
    if n < 2:
        return np.searchsorted(nodes, values, side=side)
    bounded = np.concatenate([[-np.inf], nodes, [np.inf]])      # bounded[i] = nodes[i - 1]
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        guess = np.floor((values - nodes[0]) * ((n - 1) / (nodes[-1] - nodes[0])))
        np.clip(guess, -1.0, float(n), out=guess)
        index = guess.astype(np.intp)
    index += 1
    np.clip(index, 0, n, out=index)
    # the answer i has bounded[i] < v <= bounded[i + 1] (side "left") or bounded[i] <= v < bounded[i + 1]
    below, above = (np.less, np.less_equal) if side == "left" else (np.less_equal, np.less)
    index += ~above(values, bounded.take(index + 1))
    np.minimum(index, n, out=index)
    index -= ~below(bounded.take(index), values)
    np.maximum(index, 0, out=index)
    unsettled = np.flatnonzero(~(below(bounded.take(index), values) & above(values, bounded.take(index + 1))))
    if unsettled.size:
        index[unsettled] = np.searchsorted(nodes, values[unsettled], side=side)
    return index


def points_key(*arrays: np.ndarray) -> tuple:
    """Shapes and BLAKE2b digests of the arrays: equal keys mean equal values (128-bit digests)."""
    digests = []
    for values in arrays:
        digest = hashlib.blake2b(digest_size=16)
        digest.update(np.ascontiguousarray(values).view(np.uint8))
        digests.append(digest.digest())
    return (*(values.shape for values in arrays), *digests)


class LocationCache:
    """Least-recently-used point locations, at most ``limit`` bytes of them; safe across threads."""

    def __init__(self, limit: int) -> None:
        self._limit = limit
        self._entries: OrderedDict[tuple, PointLocations] = OrderedDict()
        self._bytes = 0
        self._lock = threading.Lock()

    def get(self, key: tuple) -> PointLocations | None:
        with self._lock:
            entry = self._entries.get(key)
            if entry is not None:
                self._entries.move_to_end(key)
            return entry

    def put(self, key: tuple, entry: PointLocations) -> None:
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


class TriangleLocator:
    """The triangles of a mesh prepared for locating points: origins, inverse edge matrices, areas, buckets.

    Degenerate (zero-area) triangles are dropped (``triangles`` keeps the others). For scattered points every
    triangle is listed in each bucket its bounding box touches, so a point's triangle is always among the
    candidates of the point's bucket; candidates are tried in rounds, each round vectorised over all points
    still unplaced, in increasing triangle order.
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
        self._index_type = np.int32 if self.triangles.shape[0] < np.iinfo(np.int32).max else np.int64
        low, high = corners.min(axis=1), corners.max(axis=1)                 # (m, 2) bounding boxes
        self._box_low, self._box_high = low, high
        # contiguous per-triangle copies for rasterising: origin and inverse entries
        self._origin_x, self._origin_y = self.origin[:, 0].copy(), self.origin[:, 1].copy()
        self._i00, self._i01 = self.inverse[:, 0, 0].copy(), self.inverse[:, 0, 1].copy()
        self._i10, self._i11 = self.inverse[:, 1, 0].copy(), self.inverse[:, 1, 1].copy()
        self._edge_bounds = self._column_bounds()
        self.low, self.high = low.min(axis=0), high.max(axis=0)
        self._build_buckets(low, high, scale)

    def _build_buckets(self, low: np.ndarray, high: np.ndarray, scale: float) -> None:
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

    def corner_values(self, values: np.ndarray) -> np.ndarray:
        """values (n,) at the vertices -> (3, triangles + 1): per triangle v0, v1 - v0 and v2 - v0 (its
        corners' values), and a last column of zeros read for points outside the mesh (NaN weights)."""
        corner = np.asarray(values, dtype=np.float64)[self.triangles.T]
        table = np.zeros((3, self.triangles.shape[0] + 1))
        with np.errstate(invalid="ignore"):
            table[0, :-1] = corner[0]
            table[1, :-1] = corner[1] - corner[0]
            table[2, :-1] = corner[2] - corner[0]
        # a non-finite corner leaves the whole triangle undefined (inf - inf would hide it in a difference)
        bad = ~np.all(np.isfinite(corner), axis=0)
        table[:, :-1][:, bad] = np.nan
        return table

    def locate(self, qx: np.ndarray, qy: np.ndarray) -> PointLocations:
        """Scattered points qx, qy (k,): each point's triangle and weights (-1 and NaN outside)."""
        return self._locate_scattered(qx, qy)

    def _locate_scattered(self, qx: np.ndarray, qy: np.ndarray) -> PointLocations:
        k = qx.size
        triangle = np.full(k, -1, dtype=self._index_type)
        weights = np.full((2, k), np.nan)
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
            hit = (l0 >= -SLACK) & (l1 >= -SLACK) & (l2 >= -SLACK)
            placed = active[hit]
            triangle[placed] = candidate[hit]
            weights[0, placed], weights[1, placed] = l1[hit], l2[hit]
            miss = ~hit
            active, q, count, start = active[miss], q[miss], count[miss], start[miss]
            round_number += 1
        return PointLocations(triangle, weights)

    def locate_grid(self, x_nodes: np.ndarray, y_nodes: np.ndarray) -> PointLocations:
        """The nodes of a grid, x_nodes (nx,) and y_nodes (ny,) strictly increasing, in row-major order
        (node j * nx + i is (x_nodes[i], y_nodes[j])): the same locations ``locate`` gives, by rasterising."""
        nx, ny = x_nodes.size, y_nodes.size
        triangle = np.empty(nx * ny, dtype=self._index_type)      # the bands fill every node
        weights = np.empty((2, nx * ny))
        # rows each triangle may cross: its bounding box widened by the slack (a barycentric coordinate of
        # -s is a distance of at most s times the triangle's diameter outside it) and by rounding
        pad = (2 * _CANDIDATE_SLACK * np.max(self._box_high - self._box_low, axis=1)
               + 8 * np.finfo(float).eps * max(abs(float(y_nodes[0])), abs(float(y_nodes[-1]))))
        row_low = search_nodes(y_nodes, self._box_low[:, 1] - pad, "left")
        row_high = search_nodes(y_nodes, self._box_high[:, 1] + pad, "right")
        crossing = np.cumsum(np.bincount(row_low, minlength=ny + 1) - np.bincount(row_high, minlength=ny + 1))
        # bands of rows: each about _BAND_BUDGET nodes plus (triangle, row) crossings, at least one row
        band_of_row = np.cumsum(crossing[:ny] + nx) // _BAND_BUDGET
        cuts = np.flatnonzero(np.diff(band_of_row)) + 1
        overlapping = []
        for first, stop in zip([0, *cuts.tolist()], [*cuts.tolist(), ny], strict=True):
            chosen = np.flatnonzero((row_low < stop) & (row_high > first))
            overlapping.append(self._rasterise_band(x_nodes, y_nodes, first, stop, chosen,
                                                    row_low, row_high, triangle, weights))
        ambiguous = np.concatenate(overlapping)
        if ambiguous.size:
            # nodes within the slack of several triangles (shared edges, vertices): the lowest index wins,
            # as in ``locate``, which decides them
            again = self._locate_scattered(x_nodes[ambiguous % nx], y_nodes[ambiguous // nx])
            triangle[ambiguous] = again.triangle
            weights[:, ambiguous] = again.weights
        return PointLocations(triangle, weights)

    def _rasterise_band(self, x_nodes: np.ndarray, y_nodes: np.ndarray, first: int, stop: int,
                        chosen: np.ndarray, row_low: np.ndarray, row_high: np.ndarray,
                        located: np.ndarray, weights: np.ndarray) -> np.ndarray:
        """Locate the nodes of rows first..stop-1 among the triangles ``chosen``; write triangle and weights.

        Returns the flat indices of nodes that several triangles' column ranges hold (decided by the caller).
        """
        nx = x_nodes.size
        low = np.maximum(row_low[chosen], first)
        rows_crossed = np.minimum(row_high[chosen], stop) - low
        triangle = np.repeat(chosen, rows_crossed)
        row = (np.repeat(low - np.cumsum(rows_crossed) + rows_crossed, rows_crossed)
               + np.arange(triangle.size))
        origin_x = self._origin_x.take(triangle)
        relative_y = y_nodes.take(row) - self._origin_y.take(triangle)
        column_low, column_high = self._column_range(x_nodes, triangle, origin_x, relative_y)
        held = np.flatnonzero(column_high > column_low)
        triangle, origin_x, relative_y = triangle[held], origin_x[held], relative_y[held]
        # along the row, l1 = i00 u + row_1 and l2 = i10 u + row_2 with u = x - origin_x
        i00, i10 = self._i00.take(triangle), self._i10.take(triangle)
        row_1, row_2 = self._i01.take(triangle) * relative_y, self._i11.take(triangle) * relative_y
        # candidate column ranges as [start, end) of the band's flat node index
        line = (row[held] - first) * nx
        nodes = (stop - first) * nx
        mark = np.arange(_COUNT_UNIT + 1, _COUNT_UNIT + 1 + held.size, dtype=np.int64)
        coverage = np.zeros(nodes + 1, dtype=np.int64)
        np.add.at(coverage, line + column_low[held], mark)
        np.add.at(coverage, line + column_high[held], -mark)
        np.cumsum(coverage, out=coverage)
        coverage = coverage[:nodes]
        # one range: the low bits are its number (1...), 0 for none; several: the count (high bits) is 2 or
        # more, and any overflow of the summed numbers only raises it
        ambiguous = np.flatnonzero(coverage >= 2 * _COUNT_UNIT)
        span = np.bitwise_and(coverage, _COUNT_UNIT - 1, out=coverage)
        span[ambiguous] = 0
        table = np.empty(held.size + 1)
        gathered = np.empty((stop - first, nx))

        def per_span(values: np.ndarray) -> np.ndarray:
            """values[span] per node, NaN where no range holds it."""
            table[0] = np.nan
            table[1:] = values
            return table.take(span.reshape(stop - first, nx), out=gathered)

        band = slice(first * nx, stop * nx)
        w1, w2 = (weights[k, band].reshape(stop - first, nx) for k in range(2))
        relative_x = np.subtract(x_nodes, per_span(origin_x))
        np.multiply(per_span(i00), relative_x, out=w1)
        w1 += per_span(row_1)
        np.multiply(per_span(i10), relative_x, out=w2)
        w2 += per_span(row_2)
        w0 = np.subtract(1.0, w1, out=relative_x)
        w0 -= w2
        outside = np.flatnonzero((w0 < -SLACK) | (w1 < -SLACK) | (w2 < -SLACK))
        w1.ravel()[outside] = np.nan
        w2.ravel()[outside] = np.nan
        triangle_table = np.empty(held.size + 1, dtype=located.dtype)
        triangle_table[0] = -1
        triangle_table[1:] = triangle
        triangle_table.take(span, out=located[band])
        located[band][outside] = -1
        return ambiguous + first * nx

    def _column_bounds(self) -> tuple[np.ndarray, ...]:
        """Per triangle, the column range on a row as u = x - origin_x between two lower bounds A + B ry and
        two upper ones (ry = y - origin_y), from l0, l1, l2 >= -_CANDIDATE_SLACK; a constraint whose slope
        along the row is zero (a horizontal edge) bounds rows, which the bounding box and the test of each
        node settle, and fills its place with an infinite bound."""
        s = _CANDIDATE_SLACK
        i00, i01, i10, i11 = self._i00, self._i01, self._i10, self._i11
        # l_k = slope u + rise ry + constant >= -s, for l1, l2 and l0 = 1 - l1 - l2
        constraints = ((i00, i01, 0.0), (i10, i11, 0.0), (-(i00 + i10), -(i01 + i11), 1.0))
        m = i00.size
        lower_a, lower_b = np.full((2, m), -np.inf), np.zeros((2, m))
        upper_a, upper_b = np.full((2, m), np.inf), np.zeros((2, m))
        lower_used, upper_used = np.zeros(m, dtype=np.intp), np.zeros(m, dtype=np.intp)
        with np.errstate(divide="ignore", invalid="ignore"):
            for slope, rise, constant in constraints:
                a, b = (-s - constant) / slope, -rise / slope
                for sign, used, bound_a, bound_b in ((slope > 0, lower_used, lower_a, lower_b),
                                                     (slope < 0, upper_used, upper_a, upper_b)):
                    where = np.flatnonzero(sign)
                    bound_a[used[where], where] = a[where]
                    bound_b[used[where], where] = b[where]
                    used[where] += 1
        return lower_a[0], lower_b[0], lower_a[1], lower_b[1], upper_a[0], upper_b[0], upper_a[1], upper_b[1]

    def _column_range(self, x_nodes: np.ndarray, triangle: np.ndarray, origin_x: np.ndarray,
                      relative_y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """[low, high) columns of the nodes that may lie in each (triangle, row) pair's triangle."""
        a1, b1, a2, b2, c1, d1, c2, d2 = (values.take(triangle) for values in self._edge_bounds)
        with np.errstate(invalid="ignore"):
            low = np.maximum(a1 + b1 * relative_y, a2 + b2 * relative_y)
            high = np.minimum(c1 + d1 * relative_y, c2 + d2 * relative_y)
        # and a few units in the last place of the coordinates wider, so rounding never drops a node
        widen = 8 * np.finfo(float).eps * max(abs(float(x_nodes[0])), abs(float(x_nodes[-1])))
        low += origin_x - widen
        high += origin_x + widen
        return search_nodes(x_nodes, low, "left"), search_nodes(x_nodes, high, "right")
