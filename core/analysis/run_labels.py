"""Connected regions of a map labelled on its runs: maximal stretches of one value along the rows.

A region of a smooth map (a pocket, a parabolic zone) meets each row in a few runs, so working on runs
instead of nodes makes labelling cost one pass over the map plus work on the runs only. Runs of adjacent
rows are joined where their columns overlap (4-connectivity), or overlap once widened by one column
(8-connectivity); the connected components of that graph are found with vectorised hooking and pointer
jumping. The numbering is scipy.ndimage.label's: regions in the scan order of their first node.
Maps with very many runs (noise) are cheaper to label node by node: ``label_runs`` gives up past
``max_runs`` so a caller can choose another way.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["LabelledRuns", "bounding_slices", "connect_runs", "find_runs", "label_runs", "paint_labels"]

_BLOCK_NODES = 1 << 20          # nodes a pass over the map reads at a time (a 1 MiB mask block)


@dataclass(frozen=True, eq=False)
class LabelledRuns:
    """The runs of one value in a (ny, nx) map and the connected region of each.

    ``row``, ``start``, ``stop`` (R,) int32 in scan order (by row, then column), ``stop`` exclusive;
    ``label`` (R,) int32 from 1 to ``count``, regions numbered in the scan order of their first node.
    """

    shape: tuple[int, int]
    row: np.ndarray
    start: np.ndarray
    stop: np.ndarray
    label: np.ndarray
    count: int

    def rows_between(self, first: int, last: int) -> slice:
        """The runs on rows first <= row < last, as a slice of the run arrays."""
        low, high = np.searchsorted(self.row, (first, last), side="left")
        return slice(int(low), int(high))


def find_runs(values: np.ndarray, target, *, max_runs: int | None = None
              ) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """(row, start, stop) int32 of every maximal run of ``values == target`` along the rows of a 2-D array,
    in scan order; None as soon as there are more than ``max_runs`` runs.

    One block of rows at a time: the block's mask is read as one flat sequence, where a run starts or stops
    wherever the mask changes; a run that would go on from a row's last node to the next row's first is cut.
    """
    ny, nx = values.shape
    step = max(1, _BLOCK_NODES // max(nx, 1))
    mask_buffer = np.empty((min(step, ny), nx), dtype=bool)
    change_buffer = np.empty(max(mask_buffer.size - 1, 0), dtype=bool)
    rows, starts, stops = [], [], []
    found = 0
    for first in range(0, ny if nx else 0, step):
        block = values[first:first + step]
        mask = np.equal(block, target, out=mask_buffer[:block.shape[0]])
        flat = mask.ravel()
        size = flat.size
        change = np.not_equal(flat[1:], flat[:-1], out=change_buffer[:size - 1])
        bounds = np.flatnonzero(change) + 1                            # flat[k] differs from flat[k - 1]
        cut = (np.flatnonzero(mask[1:, 0] & mask[:-1, -1]) + 1) * nx    # a stop, then a start, at a row's start
        extra = np.repeat(cut, 2)
        if flat[0]:
            extra = np.concatenate(([0], extra))
        if flat[-1]:
            extra = np.concatenate((extra, [size]))
        if extra.size:
            bounds = np.insert(bounds, np.searchsorted(bounds, extra), extra)
        row = bounds[0::2] // nx
        found += row.size
        if max_runs is not None and found > max_runs:
            return None
        rows.append((row + first).astype(np.int32))
        starts.append((bounds[0::2] - row * nx).astype(np.int32))
        stops.append((bounds[1::2] - row * nx).astype(np.int32))
    if not rows:
        return tuple(np.zeros(0, dtype=np.int32) for _ in range(3))
    return np.concatenate(rows), np.concatenate(starts), np.concatenate(stops)


def connect_runs(row: np.ndarray, start: np.ndarray, stop: np.ndarray, connectivity: int
                 ) -> tuple[np.ndarray, int]:
    """The connected region of each run (scan order, as from ``find_runs``): (label (R,) int32, count).

    Runs of rows r - 1 and r touch when their columns overlap (connectivity 4), or overlap once widened by one
    column (8, diagonal neighbours too). The runs a run touches in the row above are consecutive in scan
    order, found with two binary searches. Components: every edge hooks the larger of its two roots onto the
    smaller, then pointers jump until every run points at its root; each round at least halves the number of
    unfinished components. A region's root is its first run, so numbering the roots in run order numbers the
    regions in the scan order of their first node.
    """
    if connectivity not in (4, 8):
        raise ValueError(f"connectivity must be 4 or 8, got {connectivity!r}")
    count = row.size
    if count == 0:
        return np.zeros(0, dtype=np.int32), 0
    widen = 1 if connectivity == 8 else 0
    stride = int(max(stop.max(), 0)) + 2                     # more than any column + 1: keys sort by row first
    base = row.astype(np.int64) * stride
    above = base - stride
    lowest = np.searchsorted(base + stop, above + start - widen, side="right")    # first with stop > start
    highest = np.searchsorted(base + start, above + stop + widen, side="left")    # past the last with start < stop
    touching = np.maximum(highest - lowest, 0)
    upper = np.repeat(lowest - np.cumsum(touching) + touching, touching) + np.arange(int(touching.sum()))
    lower = np.repeat(np.arange(count), touching)
    parent = np.arange(count)
    while upper.size:
        root_upper, root_lower = parent[upper], parent[lower]
        apart = root_upper != root_lower
        if not apart.any():
            break
        upper, lower = upper[apart], lower[apart]
        root_upper, root_lower = root_upper[apart], root_lower[apart]
        parent[np.maximum(root_upper, root_lower)] = np.minimum(root_upper, root_lower)
        while True:
            grandparent = parent[parent]
            if np.array_equal(grandparent, parent):
                break
            parent = grandparent
    is_root = parent == np.arange(count)
    number = np.cumsum(is_root, dtype=np.int32)
    return number[parent], int(number[-1])


def label_runs(values: np.ndarray, target, connectivity: int = 4, *, max_runs: int | None = None
               ) -> LabelledRuns | None:
    """Regions of ``values == target`` (a 2-D array) as labelled runs; None past ``max_runs`` runs."""
    if connectivity not in (4, 8):
        raise ValueError(f"connectivity must be 4 or 8, got {connectivity!r}")
    runs = find_runs(values, target, max_runs=max_runs)
    if runs is None:
        return None
    row, start, stop = runs
    label, count = connect_runs(row, start, stop, connectivity)
    return LabelledRuns(shape=values.shape, row=row, start=start, stop=stop, label=label, count=count)


def paint_labels(runs: LabelledRuns, relabel: np.ndarray | None = None) -> np.ndarray:
    """The (ny, nx) int32 label array of ``runs``: 0 off the regions, ``label`` (or ``relabel[label]``) on
    each run's nodes, written one block of rows at a time."""
    ny, nx = runs.shape
    labels = np.empty((ny, nx), dtype=np.int32)
    values = runs.label if relabel is None else relabel[runs.label].astype(np.int32)
    step = max(1, _BLOCK_NODES // max(nx, 1))
    for first in range(0, ny, step):
        block = labels[first:first + step]
        chosen = runs.rows_between(first, first + block.shape[0])
        offset = (runs.row[chosen].astype(np.int64) - first) * nx
        run_start, run_stop = offset + runs.start[chosen], offset + runs.stop[chosen]
        # the block as alternating gaps (0) and runs (their label): gap 0, run 0, gap 1, run 1, ..., last gap
        edges = np.empty(2 * run_start.size + 2, dtype=np.int64)
        edges[0], edges[1:-1:2], edges[2:-1:2], edges[-1] = 0, run_start, run_stop, block.size
        pieces = np.zeros(2 * run_start.size + 1, dtype=np.int32)
        pieces[1::2] = values[chosen]
        block.ravel()[:] = np.repeat(pieces, np.diff(edges))
    return labels


def bounding_slices(runs: LabelledRuns) -> list[tuple[slice, slice]]:
    """(rows, columns) slices of each region's bounding box, regions in label order (as
    scipy.ndimage.find_objects gives them)."""
    index = runs.label.astype(np.int64) - 1
    first_row = np.full(runs.count, np.iinfo(np.int64).max)
    first_column = np.full(runs.count, np.iinfo(np.int64).max)
    last_row = np.full(runs.count, -1)
    last_column = np.full(runs.count, -1)
    np.minimum.at(first_row, index, runs.row)
    np.maximum.at(last_row, index, runs.row)
    np.minimum.at(first_column, index, runs.start)
    np.maximum.at(last_column, index, runs.stop)
    return [(slice(int(r0), int(r1) + 1), slice(int(c0), int(c1)))
            for r0, r1, c0, c1 in zip(first_row, last_row, first_column, last_column)]
