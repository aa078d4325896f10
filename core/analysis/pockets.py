"""Connected regions of one type (supersonic pockets, elliptic islands) and their statistics.

From a type map (core.analysis.classify) the nodes of one type are grouped into connected regions, labelled
on their runs along the rows (core.analysis.run_labels; node by node with scipy.ndimage.label when a map has
very many runs); each region gets its area (trapezoid weights of its nodes: the weights of all nodes
sum to the domain's area exactly, so areas are in the variables' units squared and accurate to O(h) at the
region's edge), its bounding box and centroid, whether it reaches the domain's edge, and the peak of a
chosen quantity over its nodes (e.g. the peak Mach number of a supersonic pocket).
Big grids stay in bounded memory: the sums run over the runs, and the quantity is evaluated on one block's
pocket nodes at a time; a label array is made only when the labels are asked for.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass

import contourpy
import numpy as np

from core.analysis.classify import TypeCode, TypeMap
from core.analysis.run_labels import LabelledRuns, label_runs, paint_labels
from core.equations.compiled import CompiledEquation
from core.equations.equation import QuantitySource
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["Pocket", "node_areas", "pocket_outline", "pocket_statistics", "pockets_and_labels"]

_CHUNK = 1 << 17
_NODES_PER_RUN = 32                # more runs than one in this many nodes: labelled node by node
_FEWEST_RUNS_LABELLED = 1 << 16    # ... but never fewer runs than this (small maps never load scipy.ndimage)


@dataclass(frozen=True)
class Pocket:
    """One connected region of a type map; ``label`` is its value in the labels of ``pockets_and_labels``.

    ``bounding_box`` is (xmin, xmax, ymin, ymax) of its nodes; ``centroid`` (x, y) their area-weighted mean;
    ``peak`` the largest finite value of ``quantity`` on its nodes and ``peak_at`` that node (both None when
    no quantity was asked for or none of its values is finite).
    """

    label: int
    type: TypeCode
    node_count: int
    area: float
    bounding_box: tuple[float, float, float, float]
    centroid: tuple[float, float]
    touches_boundary: bool
    quantity: str | None = None
    peak: float | None = None
    peak_at: tuple[float, float] | None = None


def node_areas(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Trapezoid-rule area of each grid node, shape (ny, nx): interior dx*dy, halves on edges, quarters at
    corners (non-uniform spacing allowed); the weights sum to the rectangle's area."""
    return np.outer(_trapezoid_weights(y), _trapezoid_weights(x))


def pockets_and_labels(compiled: CompiledEquation, type_map: TypeMap, *, quantity: str | None = None,
                      parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                      code: TypeCode | int | str = TypeCode.HYPERBOLIC, connectivity: int = 8,
                      cancel: CancelCheck | None = None, progress: ProgressReport | None = None
                      ) -> tuple[tuple[Pocket, ...], np.ndarray]:
    """Every connected region of type ``code`` (default hyperbolic) in ``type_map``, largest area first, and
    the (ny, nx) int32 labels that locate them (0 off the type, ``Pocket.label`` on each region's nodes).

    ``quantity`` names a definition, a coefficient (a, b, c) or a data key, evaluated on the regions' nodes
    with ``parameters`` (default: those the map was computed with) to give each region's peak.
    Extra memory is the label array (4 bytes a node) and the runs of the regions (a map with more runs than
    one in 32 nodes is labelled node by node instead, with a mask of 1 byte a node); everything else works
    on blocks of rows.
    """
    return _find_pockets(compiled, type_map, quantity=quantity, parameters=parameters, data=data, code=code,
                         connectivity=connectivity, cancel=cancel, progress=progress, with_labels=True)


def pocket_statistics(compiled: CompiledEquation, type_map: TypeMap, **options) -> tuple[Pocket, ...]:
    """The pockets of ``pockets_and_labels`` (same options), without their labels: no label array is made."""
    return _find_pockets(compiled, type_map, with_labels=False, **options)[0]


def _find_pockets(compiled: CompiledEquation, type_map: TypeMap, *, quantity: str | None = None,
                  parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                  code: TypeCode | int | str = TypeCode.HYPERBOLIC, connectivity: int = 8,
                  cancel: CancelCheck | None = None, progress: ProgressReport | None = None,
                  with_labels: bool) -> tuple[tuple[Pocket, ...], np.ndarray | None]:
    code = TypeCode.coerce(code)
    regions = _label_regions(type_map.codes, code, connectivity)
    if regions.count == 0:
        return (), (np.zeros(type_map.codes.shape, dtype=np.int32) if with_labels else None)
    if quantity is not None:
        _check_quantity(compiled, quantity, data)
    x, y = type_map.x, type_map.y
    ny, nx = type_map.codes.shape
    area, cx, cy, nodes, box = _region_sums(regions, x, y)
    peaks = {} if quantity is None else _peaks(compiled, quantity, regions, int(nodes.sum()), type_map,
                                               parameters, data, cancel, progress)
    order = _largest_first(area)
    labels = regions.final_labels(order) if with_labels else None
    pockets = []
    for new_label, old in enumerate(order, start=1):
        row0, row1, column0, column1 = box[:, old]
        peak = peaks.get(old + 1)
        pockets.append(Pocket(
            label=new_label, type=code, node_count=int(nodes[old]), area=float(area[old]),
            bounding_box=(float(x[column0]), float(x[column1]), float(y[row0]), float(y[row1])),
            centroid=(float(cx[old]), float(cy[old])),
            touches_boundary=bool(row0 == 0 or column0 == 0 or row1 == ny - 1 or column1 == nx - 1),
            quantity=quantity, peak=None if peak is None else peak[0],
            peak_at=None if peak is None else (peak[1], peak[2])))
    return tuple(pockets), labels


class _RunRegions:
    """Regions held as labelled runs (core.analysis.run_labels): the label array is painted only if asked."""

    def __init__(self, runs: LabelledRuns):
        self.runs, self.count, self.shape = runs, runs.count, runs.shape

    def run_chunks(self) -> Iterator[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]]:
        """(row, start, stop, scan-order label) of the runs, at most _CHUNK runs at a time."""
        runs = self.runs
        for first in range(0, runs.row.size, _CHUNK):
            chosen = slice(first, first + _CHUNK)
            yield runs.row[chosen], runs.start[chosen], runs.stop[chosen], runs.label[chosen]

    def block_nodes(self, first: int, last: int) -> tuple[np.ndarray, np.ndarray]:
        """Flat indices in rows first..last - 1 of the regions' nodes, in scan order, and their labels."""
        runs = self.runs
        chosen = runs.rows_between(first, last)
        lengths = (runs.stop[chosen] - runs.start[chosen]).astype(np.int64)
        before = np.cumsum(lengths) - lengths
        begin = (runs.row[chosen].astype(np.int64) - first) * self.shape[1] + runs.start[chosen]
        inside = np.repeat(begin - before, lengths) + np.arange(int(lengths.sum()))
        return inside, np.repeat(runs.label[chosen], lengths)

    def final_labels(self, order: np.ndarray) -> np.ndarray:
        """The label array with region ``order[k] + 1`` numbered k + 1."""
        return paint_labels(self.runs, _relabelling(order))


class _NodeRegions:
    """Regions held as a label array from scipy.ndimage.label, for maps with very many runs (noise)."""

    def __init__(self, labels: np.ndarray, count: int):
        self.labels, self.count, self.shape = labels, count, labels.shape

    def run_chunks(self) -> Iterator[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]]:
        """(row, start, stop, label) of the runs of equal nonzero labels, a block of rows at a time."""
        ny, nx = self.shape
        step = _rows_per_chunk(nx)
        for first in range(0, ny, step):
            block = self.labels[first:first + step]
            change = np.ones(block.shape, dtype=bool)              # True where a run starts
            np.not_equal(block[:, 1:], block[:, :-1], out=change[:, 1:])
            starts = np.flatnonzero(change)
            stops = np.append(starts[1:], block.size)
            label = block.ravel()[starts]
            keep = label > 0
            starts, stops, label = starts[keep], stops[keep], label[keep]
            row = starts // nx
            yield row + first, starts - row * nx, stops - row * nx, label

    def block_nodes(self, first: int, last: int) -> tuple[np.ndarray, np.ndarray]:
        flat = self.labels[first:last].ravel()
        inside = np.flatnonzero(flat)
        return inside, flat[inside]

    def final_labels(self, order: np.ndarray) -> np.ndarray:
        relabel = _relabelling(order)
        step = _rows_per_chunk(self.shape[1])
        for start in range(0, self.shape[0], step):              # in place, a block of rows at a time
            block = self.labels[start:start + step]
            block[...] = relabel[block]
        return self.labels


def _label_regions(codes: np.ndarray, code: TypeCode, connectivity: int) -> _RunRegions | _NodeRegions:
    """The regions of type ``code``, numbered in scan order (as scipy.ndimage.label numbers them)."""
    if connectivity not in (4, 8):
        raise ValueError(f"connectivity must be 4 or 8, got {connectivity!r}")
    runs = label_runs(codes, code, connectivity, max_runs=_run_budget(codes.size))
    if runs is not None:
        return _RunRegions(runs)
    # Here, not at the top: scipy.ndimage takes 0.25 to 0.3 s to import (python -X importtime: its array-API
    # layer pulls in numpy.testing and unittest), and only maps with very many runs need it.
    from scipy import ndimage

    structure = np.ones((3, 3), dtype=bool) if connectivity == 8 else None
    labels = np.empty(codes.shape, dtype=np.int32)
    count = ndimage.label(codes == code, structure=structure, output=labels)
    return _NodeRegions(labels, int(count))


def _run_budget(nodes: int) -> int:
    """Most runs labelled as runs. Measured at 4096^2 (8-connectivity): a disc of 6144 runs takes 5 ms on runs
    and 0.12 s node by node with scipy.ndimage.label; random squares of 8 x 8 nodes (one run in 31 nodes)
    0.20 s either way; pure noise (one run in 4 nodes) several seconds on runs and 0.3 to 0.5 s node by node,
    whose label array is then smaller than the runs too."""
    return max(nodes // _NODES_PER_RUN, _FEWEST_RUNS_LABELLED)


def _relabelling(order: np.ndarray) -> np.ndarray:
    """Lookup table from scan-order label to final label: ``order[k] + 1`` becomes k + 1, 0 stays 0."""
    relabel = np.zeros(len(order) + 1, dtype=np.int32)
    relabel[order + 1] = np.arange(1, len(order) + 1, dtype=np.int32)
    return relabel


def _rows_per_chunk(nx: int) -> int:
    return max(1, _CHUNK // max(nx, 1))


def _region_sums(regions: _RunRegions | _NodeRegions, x: np.ndarray, y: np.ndarray
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Per label 1..count (index 0 for label 1): trapezoid area, area-weighted mean of x and of y, nodes,
    and the bounding box of its nodes (4, count) as first and last row, first and last column.

    A node's trapezoid weight is wy[row] * wx[column] (node_areas), so a run's area is wy[row] times the sum
    of wx over its columns: a difference of two prefix sums, kept in double-double so that a short run far
    along a long row keeps every digit. Runs, far fewer than nodes, carry everything further.
    """
    count = regions.count
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    # Sums run on the grid scaled to the unit square (x - x0) / W and (y - y0) / H, so that no product of
    # weights and coordinates overflows on a domain near the largest doubles; they are scaled back at the end.
    x0, y0 = x[0], y[0]
    width, height = (x[-1] - x0, y[-1] - y0) if x.size > 1 and y.size > 1 else (1.0, 1.0)
    width, height = width or 1.0, height or 1.0
    x, y = (x - x0) / width, (y - y0) / height
    wx, wy = _trapezoid_weights(x), _trapezoid_weights(y)
    width_sums, moment_sums = _prefix_sums(wx), _prefix_sums(wx * x)
    sums = np.zeros((4, count))
    box = np.empty((4, count), dtype=np.int64)              # first row, last row, first column, last column
    box[0::2], box[1::2] = np.iinfo(np.int64).max, -1
    for row, start, stop, label in regions.run_chunks():
        index = label - 1
        weight = wy[row]
        sums[0] += np.bincount(index, weights=weight * _run_sums(width_sums, start, stop), minlength=count)
        sums[1] += np.bincount(index, weights=weight * _run_sums(moment_sums, start, stop), minlength=count)
        sums[2] += np.bincount(index, weights=weight * y[row] * _run_sums(width_sums, start, stop),
                               minlength=count)
        sums[3] += np.bincount(index, weights=stop - start, minlength=count)
        np.minimum.at(box[0], index, row)
        np.maximum.at(box[1], index, row)
        np.minimum.at(box[2], index, start)
        np.maximum.at(box[3], index, stop - 1)
    scaled_area = np.where(sums[0] > 0, sums[0], 1.0)
    centroid_x = x0 + width * (sums[1] / scaled_area)
    centroid_y = y0 + height * (sums[2] / scaled_area)
    return sums[0] * (width * height), centroid_x, centroid_y, sums[3].astype(np.int64), box


def _prefix_sums(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Prefix sums (n + 1,) of ``values`` as pairs high + low: high is np.cumsum's (sequential) sum, low the
    running total of each step's exact rounding error (TwoSum, Knuth), so a difference of two prefix sums is
    as accurate as the difference itself, however far along the row."""
    high = np.concatenate(([0.0], np.cumsum(values)))
    before, after = high[:-1], high[1:]
    added = after - before
    error = (before - (after - added)) + (values - added)
    return high, np.concatenate(([0.0], np.cumsum(error)))


def _run_sums(prefix: tuple[np.ndarray, np.ndarray], start: np.ndarray, stop: np.ndarray) -> np.ndarray:
    """Sum of the values over columns start..stop - 1 of each run, from ``_prefix_sums``."""
    high, low = prefix
    return (high[stop] - high[start]) + (low[stop] - low[start])


def _largest_first(area: np.ndarray) -> np.ndarray:
    """Label indices (0 for label 1) by decreasing area; ties in scan order."""
    return np.lexsort((np.arange(area.size), -area))


def _trapezoid_weights(nodes: np.ndarray) -> np.ndarray:
    """Trapezoid-rule weight of each node along one axis: half the distance between its neighbours."""
    nodes = np.asarray(nodes, dtype=np.float64)
    steps = np.diff(nodes)
    w = np.zeros(nodes.size)
    w[:-1] += steps / 2
    w[1:] += steps / 2
    return w


def _peaks(compiled: CompiledEquation, quantity: str, regions: _RunRegions | _NodeRegions, total: int,
           type_map: TypeMap, parameters, data, cancel, progress) -> dict[int, tuple[float, float, float]]:
    """Per scan-order label: (largest finite value of ``quantity``, x, y of its node; the last such node in
    scan order on ties), evaluated a block of rows at a time on the regions' ``total`` nodes only."""
    x, y = type_map.x, type_map.y
    ny, nx = regions.shape
    count = regions.count
    chosen = dict(type_map.parameters) if parameters is None else parameters
    prepared = compiled.prepare(compiled.parameter_vector(chosen))
    best = np.full(count + 1, -np.inf)
    where = np.full(count + 1, -1, dtype=np.int64)            # flat node index of the peak so far
    done = 0
    step = _rows_per_chunk(nx)
    for start in range(0, ny, step):
        if cancel is not None and cancel():
            raise Cancelled("pocket statistics cancelled")
        inside, region = regions.block_nodes(start, min(start + step, ny))
        if inside.size == 0:
            continue
        rows, columns = np.divmod(inside, nx)
        values = _quantity_at(compiled, quantity, x[columns], y[rows + start], prepared, data)
        finite = np.isfinite(values)
        region, values, node = region[finite], values[finite], inside[finite] + start * nx
        block_best = np.full(count + 1, -np.inf)
        np.maximum.at(block_best, region, values)
        at_best = values == block_best[region]
        block_where = np.full(count + 1, -1, dtype=np.int64)
        np.maximum.at(block_where, region[at_best], node[at_best])
        better = (block_where >= 0) & (block_best >= best)      # a later block wins ties: the last node
        best[better], where[better] = block_best[better], block_where[better]
        done += inside.size
        if progress is not None:
            progress(done / max(total, 1))
    if progress is not None:
        progress(1.0)
    found = np.flatnonzero(where >= 0)
    return {int(label): (float(best[label]), float(x[where[label] % nx]), float(y[where[label] // nx]))
            for label in found}


def _check_quantity(compiled: CompiledEquation, quantity: str, data) -> None:
    names = (*compiled.definition_order, "a", "b", "c")
    data_names = tuple(getattr(data, "names", ()))
    if quantity not in names and quantity not in data_names and not quantity.startswith("diff("):
        raise ValueError(f"unknown quantity {quantity!r}; expected a definition, a, b, c or a data quantity "
                         f"({', '.join(names + data_names)})")
    if quantity not in names and data is None:
        raise ValueError(f"quantity {quantity!r} needs background data")


def _quantity_at(compiled: CompiledEquation, quantity: str, px: np.ndarray, py: np.ndarray, prepared,
                 data) -> np.ndarray:
    """``quantity`` at the points (px, py)."""
    if quantity in compiled.definition_order or quantity in ("a", "b", "c"):
        raw = compiled.evaluate_raw(px, py, data=data, prepared=prepared, names=(quantity,))[quantity]
        return np.array(np.broadcast_to(raw, px.shape), dtype=np.float64)
    return np.asarray(data.sample(quantity, px, py), dtype=np.float64)


def pocket_outline(mask: np.ndarray, x: np.ndarray, y: np.ndarray) -> list[np.ndarray]:
    """Closed (n, 2) polylines around the True nodes of a (ny, nx) mask, half-way to their neighbours.

    The mask is padded with False one node beyond the grid, so pockets on the domain's edge close too.
    """
    def padded(nodes: np.ndarray) -> np.ndarray:
        step = nodes[1] - nodes[0] if nodes.size > 1 else 1.0
        end = nodes[-1] - nodes[-2] if nodes.size > 1 else 1.0
        return np.concatenate(([nodes[0] - step], nodes, [nodes[-1] + end]))

    field = np.pad(mask.astype(np.float64), 1)
    generator = contourpy.contour_generator(padded(np.asarray(x, float)), padded(np.asarray(y, float)), field)
    return list(generator.lines(0.5))
