"""Ranges of nodal values over many boxes at once: what a linearly interpolated quantity can take in a cell.

Bilinear interpolation on a grid cell, linear interpolation along a profile and on a triangle are convex
combinations of the nodal values they read, so over any box the interpolated quantity lies between the least
and the greatest of the nodal values the box touches (exactly, not to rounding). ``MinMaxPyramid`` answers
"least and greatest value, and whether any or all are missing, over an index rectangle" for many rectangles
at once from blocks of 2**k nodes: a rectangle at most 2**k long on each side lies within 2 x 2 such aligned
blocks, so the answer is over a superset of the rectangle (a conservative range, never a narrower one).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

__all__ = ["MinMaxPyramid", "ValueRange", "index_span"]


class ValueRange(NamedTuple):
    """Per box (arrays (n,)): least and greatest value where defined; ``maybe_undefined`` where some point of
    the box may have no value (outside the data or a missing value near it), ``surely_undefined`` where no
    point has one (then low and high are meaningless)."""

    low: np.ndarray
    high: np.ndarray
    maybe_undefined: np.ndarray
    surely_undefined: np.ndarray


class MinMaxPyramid:
    """Least and greatest finite values, and missing (non-finite) values, of a 2-D array over blocks of
    2**k x 2**k nodes for every k (4/3 of the array's size in all)."""

    def __init__(self, values: np.ndarray) -> None:
        values = np.atleast_2d(np.asarray(values, dtype=np.float64))
        finite = np.isfinite(values)
        self._build(np.where(finite, values, np.inf), np.where(finite, values, -np.inf), ~finite, ~finite)

    @classmethod
    def from_blocks(cls, low: np.ndarray, high: np.ndarray, any_missing: np.ndarray,
                    all_missing: np.ndarray) -> MinMaxPyramid:
        """A pyramid over blocks already summarised (2-D arrays of the same shape)."""
        pyramid = cls.__new__(cls)
        pyramid._build(low, high, any_missing, all_missing)
        return pyramid

    def _build(self, low, high, any_missing, all_missing) -> None:
        self.levels = [(low, high, any_missing, all_missing)]
        while max(low.shape) > 1:
            low, high, anyb, allb = self.levels[-1]
            low, high = _pairs(low, np.minimum, np.inf), _pairs(high, np.maximum, -np.inf)
            anyb, allb = _pairs(anyb, np.logical_or, False), _pairs(allb, np.logical_and, True)
            self.levels.append((low, high, anyb, allb))

    def query(self, row0, row1, col0, col1) -> ValueRange:
        """Over rows [row0, row1] and columns [col0, col1] (inclusive index arrays (n,), within the array):
        (least, greatest, any missing, all missing) over a superset of each rectangle."""
        row0, row1, col0, col1 = (np.asarray(v, dtype=np.int64) for v in (row0, row1, col0, col1))
        n = row0.size
        low, high = np.empty(n), np.empty(n)
        anyb, allb = np.empty(n, dtype=bool), np.empty(n, dtype=bool)
        length = np.maximum(row1 - row0, col1 - col0) + 1
        level = np.ceil(np.log2(np.maximum(length, 1))).astype(np.int64)
        level = np.minimum(level, len(self.levels) - 1)
        for k in np.unique(level):
            chosen = np.flatnonzero(level == k)
            blocks = self.levels[k]
            r0, r1 = row0[chosen] >> k, row1[chosen] >> k
            c0, c1 = col0[chosen] >> k, col1[chosen] >> k
            parts = [(r, c) for r in (r0, r1) for c in (c0, c1)]
            low[chosen] = np.minimum.reduce([blocks[0][r, c] for r, c in parts])
            high[chosen] = np.maximum.reduce([blocks[1][r, c] for r, c in parts])
            anyb[chosen] = np.logical_or.reduce([blocks[2][r, c] for r, c in parts])
            allb[chosen] = np.logical_and.reduce([blocks[3][r, c] for r, c in parts])
        return ValueRange(low, high, anyb, allb)


def _pairs(values: np.ndarray, combine, fill) -> np.ndarray:
    """Neighbouring pairs along both axes combined (an odd last row or column paired with ``fill``)."""
    rows, cols = values.shape
    padded = np.full((rows + rows % 2, cols + cols % 2), fill, dtype=values.dtype)
    padded[:rows, :cols] = values
    along_rows = combine(padded[0::2], padded[1::2])
    return combine(along_rows[:, 0::2], along_rows[:, 1::2])


def index_span(nodes: np.ndarray, low: np.ndarray, high: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                                               np.ndarray, np.ndarray]:
    """For boxes [low, high] along one axis of strictly increasing ``nodes``: the first and last node an
    interpolation at a point of the box may read (inclusive; a point on a node also reads the next one, as
    core.data.fields locates it), whether the box reaches outside the nodes and whether it misses them."""
    count = nodes.size
    inside_low = np.clip(low, nodes[0], nodes[-1])
    inside_high = np.clip(high, nodes[0], nodes[-1])
    first = np.clip(np.searchsorted(nodes, inside_low, side="right") - 1, 0, max(count - 2, 0))
    last = np.clip(np.searchsorted(nodes, inside_high, side="right"), min(1, count - 1), count - 1)
    outside = (low < nodes[0]) | (high > nodes[-1])
    missed = (high < nodes[0]) | (low > nodes[-1])
    return first, last, outside, missed


class MeshRanges:
    """Ranges of vertex values over boxes, for linear interpolation on triangles.

    The mesh's extent is cut into buckets (about one vertex each); every triangle is listed in each bucket its
    bounding box meets, and each bucket keeps the least and greatest corner value of its triangles and whether
    one of them has a missing corner (then it is undefined throughout). A triangle that meets a box meets one
    of the box's buckets, so those buckets' range holds the interpolated values in the box. The box is surely
    covered by triangles when its centre lies in one and no edge of the mesh's outline (an edge of only one
    triangle) shares a bucket with it: the outline of the union of triangles is made of such edges, and a
    connected box holding a point inside and a point outside would cross it.
    """

    def __init__(self, points: np.ndarray, triangles: np.ndarray, locate_centres) -> None:
        used = points[np.unique(triangles)]
        self.low, self.high = used.min(axis=0), used.max(axis=0)
        span = np.maximum(self.high - self.low, 1e-300)
        count = used.shape[0]
        self.shape = np.clip(np.ceil(np.sqrt(count * span / span[::-1])), 1, 1024).astype(np.int64)  # x, y
        self.size = span / self.shape
        self.triangles = triangles
        self.locate_centres = locate_centres
        corners = points[triangles]                                   # (m, 3, 2)
        self.triangle_buckets, self.bucket_triangles = self._pairs(corners.min(axis=1), corners.max(axis=1))
        edges = np.sort(np.concatenate([triangles[:, [0, 1]], triangles[:, [1, 2]], triangles[:, [2, 0]]]), axis=1)
        unique, seen = np.unique(edges, axis=0, return_counts=True)
        ends = points[unique[seen == 1]]                              # (k, 2, 2)
        marked = np.zeros((self.shape[1] + 1) * (self.shape[0] + 1), dtype=np.int64)
        if ends.size:
            buckets, _ = self._pairs(ends.min(axis=1), ends.max(axis=1))
            rows, cols = np.divmod(buckets, self.shape[0])
            np.add.at(marked, (rows + 1) * (self.shape[0] + 1) + cols + 1, 1)
        self.outline_table = marked.reshape(self.shape[1] + 1, self.shape[0] + 1).cumsum(axis=0).cumsum(axis=1)

    def _bucket(self, values: np.ndarray, axis: int) -> np.ndarray:
        with np.errstate(invalid="ignore"):
            index = np.floor((values - self.low[axis]) / self.size[axis])
        return np.clip(np.nan_to_num(index), 0, self.shape[axis] - 1).astype(np.int64)

    def _pairs(self, low: np.ndarray, high: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(bucket, item) for every bucket that each item's bounding box [low, high] ((k, 2) each) meets."""
        c0, c1 = self._bucket(low[:, 0], 0), self._bucket(high[:, 0], 0)
        r0, r1 = self._bucket(low[:, 1], 1), self._bucket(high[:, 1], 1)
        wide, tall = c1 - c0 + 1, r1 - r0 + 1
        count = wide * tall
        item = np.repeat(np.arange(low.shape[0]), count)
        offset = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
        rows = np.repeat(r0, count) + offset // np.repeat(wide, count)
        cols = np.repeat(c0, count) + offset % np.repeat(wide, count)
        return rows * self.shape[0] + cols, item

    def pyramid(self, values: np.ndarray) -> MinMaxPyramid:
        """Per bucket: least and greatest corner value of its triangles, any with a missing corner, and
        whether none of them is defined (a bucket without triangles holds no value)."""
        cols, rows = int(self.shape[0]), int(self.shape[1])
        corner = np.asarray(values, dtype=np.float64)[self.triangles]          # (m, 3)
        good = np.all(np.isfinite(corner), axis=1)
        with np.errstate(invalid="ignore"):
            least, greatest = corner.min(axis=1), corner.max(axis=1)
        bucket, item = self.triangle_buckets, self.bucket_triangles
        fine = good[item]
        low = np.full(rows * cols, np.inf)
        high = np.full(rows * cols, -np.inf)
        missing = np.zeros(rows * cols, dtype=bool)
        np.minimum.at(low, bucket[fine], least[item[fine]])
        np.maximum.at(high, bucket[fine], greatest[item[fine]])
        missing[bucket[~fine]] = True
        no_value = ~np.isfinite(low)
        return MinMaxPyramid.from_blocks(*(v.reshape(rows, cols) for v in (low, high, missing, no_value)))

    def query(self, pyramid: MinMaxPyramid, x0, x1, y0, y1) -> ValueRange:
        x0, x1, y0, y1 = (np.asarray(v, dtype=np.float64) for v in (x0, x1, y0, y1))
        r0, r1 = self._bucket(y0, 1), self._bucket(y1, 1)
        c0, c1 = self._bucket(x0, 0), self._bucket(x1, 0)
        found = pyramid.query(r0, r1, c0, c1)
        table = self.outline_table
        near_outline = (table[r1 + 1, c1 + 1] - table[r0, c1 + 1] - table[r1 + 1, c0] + table[r0, c0]) > 0
        centre_outside = ~self.locate_centres((x0 + x1) / 2, (y0 + y1) / 2)
        missed = (x1 < self.low[0]) | (x0 > self.high[0]) | (y1 < self.low[1]) | (y0 > self.high[1])
        surely = found.surely_undefined | missed
        return ValueRange(found.low, found.high, found.maybe_undefined | near_outline | centre_outside | surely,
                          surely)
