"""Connected regions of one type (supersonic pockets, elliptic islands) and their statistics.

From a type map (core.analysis.classify) the nodes of one type are grouped into connected regions with
scipy.ndimage.label; each region gets its area (trapezoid weights of its nodes: the weights of all nodes
sum to the domain's area exactly, so areas are in the variables' units squared and accurate to O(h) at the
region's edge), its bounding box and centroid, whether it reaches the domain's edge, and the peak of a
chosen quantity over its nodes (e.g. the peak Mach number of a supersonic pocket).
Big grids stay in bounded memory: beside the label array, the sums run over the runs of one label along
the rows, a block of rows at a time, and the quantity is evaluated on one block's pocket nodes at a time.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import contourpy
import numpy as np

from core.analysis.classify import TypeCode, TypeMap
from core.equations.compiled import CompiledEquation
from core.equations.equation import QuantitySource
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["Pocket", "node_areas", "pocket_outline", "pocket_statistics", "pockets_and_labels"]

_CHUNK = 1 << 17


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
    Extra memory is the label array (4 bytes a node) and a mask (1 byte a node); everything else works on
    the runs of equal labels along the rows and on blocks of rows.
    """
    labels, count = _scan_labels(type_map, code, connectivity)
    if count == 0:
        return (), labels
    if quantity is not None:
        _check_quantity(compiled, quantity, data)
    x, y = type_map.x, type_map.y
    ny, nx = labels.shape
    area, weighted_x, weighted_y, nodes, box = _region_sums(labels, x, y, count)
    safe = np.where(area > 0, area, 1.0)
    cx, cy = weighted_x / safe, weighted_y / safe
    peaks = {} if quantity is None else _peaks(compiled, quantity, labels, count, type_map, parameters, data,
                                               cancel, progress)
    code = TypeCode.coerce(code)
    order = _largest_first(area)
    _renumber(labels, order)
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


def pocket_statistics(compiled: CompiledEquation, type_map: TypeMap, **options) -> tuple[Pocket, ...]:
    """The pockets of ``pockets_and_labels`` (same options), without their labels."""
    return pockets_and_labels(compiled, type_map, **options)[0]


def _renumber(labels: np.ndarray, order: np.ndarray) -> None:
    """Relabel in place, a block of rows at a time: region ``order[k] + 1`` becomes k + 1."""
    relabel = np.zeros(len(order) + 1, dtype=np.int32)
    relabel[order + 1] = np.arange(1, len(order) + 1, dtype=np.int32)
    step = _rows_per_chunk(labels.shape[1])
    for start in range(0, labels.shape[0], step):
        block = labels[start:start + step]
        block[...] = relabel[block]


def _scan_labels(type_map: TypeMap, code: TypeCode | int | str, connectivity: int) -> tuple[np.ndarray, int]:
    """scipy.ndimage.label of the nodes of type ``code``: (labels (ny, nx) int32 in scan order, count)."""
    if connectivity not in (4, 8):
        raise ValueError(f"connectivity must be 4 or 8, got {connectivity!r}")
    # Here, not at the top: scipy.ndimage takes 0.25 to 0.3 s to import (python -X importtime: its array-API
    # layer pulls in numpy.testing and unittest), which every command importing this module would pay.
    from scipy import ndimage

    mask = type_map.codes == TypeCode.coerce(code)
    structure = np.ones((3, 3), dtype=bool) if connectivity == 8 else None
    labels = np.empty(mask.shape, dtype=np.int32)
    count = ndimage.label(mask, structure=structure, output=labels)
    return labels, int(count)


def _rows_per_chunk(nx: int) -> int:
    return max(1, _CHUNK // max(nx, 1))


def _region_sums(labels: np.ndarray, x: np.ndarray, y: np.ndarray, count: int
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Per label 1..count (index 0 for label 1): trapezoid area, area-weighted sums of x and of y, nodes,
    and the bounding box of its nodes (4, count) as first and last row, first and last column.

    A node's trapezoid weight is wy[row] * wx[column] (node_areas). The rows are cut into maximal runs of
    one label, a block of rows at a time; each run's sums of wx and wx * x are taken in order along the
    run (np.add.reduceat), so the runs of a pocket, far fewer than its nodes, carry everything further.
    """
    ny, nx = labels.shape
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    wx, wy = _trapezoid_weights(x), _trapezoid_weights(y)
    step = _rows_per_chunk(nx)
    tiled_w = np.tile(wx, min(step, ny))
    tiled_wx = np.tile(wx * x, min(step, ny))
    sums = np.zeros((4, count))
    box = np.empty((4, count), dtype=np.int64)              # first row, last row, first column, last column
    box[0::2], box[1::2] = np.iinfo(np.int64).max, -1
    for start in range(0, ny, step):
        block = labels[start:start + step]
        rows = block.shape[0]
        change = np.ones((rows, nx), dtype=bool)              # True where a run starts
        np.not_equal(block[:, 1:], block[:, :-1], out=change[:, 1:])
        starts = np.flatnonzero(change)
        label = block.ravel()[starts]
        lengths = np.diff(np.append(starts, rows * nx))
        width = np.add.reduceat(tiled_w[:rows * nx], starts)
        moment = np.add.reduceat(tiled_wx[:rows * nx], starts)
        keep = label > 0
        index, row = label[keep] - 1, starts[keep] // nx + start
        weight = wy[row]
        sums[0] += np.bincount(index, weights=weight * width[keep], minlength=count)
        sums[1] += np.bincount(index, weights=weight * moment[keep], minlength=count)
        sums[2] += np.bincount(index, weights=weight * y[row] * width[keep], minlength=count)
        sums[3] += np.bincount(index, weights=lengths[keep], minlength=count)
        first = starts[keep] % nx
        np.minimum.at(box[0], index, row)
        np.maximum.at(box[1], index, row)
        np.minimum.at(box[2], index, first)
        np.maximum.at(box[3], index, first + lengths[keep] - 1)
    return sums[0], sums[1], sums[2], sums[3].astype(np.int64), box


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


def _peaks(compiled: CompiledEquation, quantity: str, labels: np.ndarray, count: int, type_map: TypeMap,
           parameters, data, cancel, progress) -> dict[int, tuple[float, float, float]]:
    """Per scan-order label: (largest finite value of ``quantity``, x, y of its node; the last such node in
    scan order on ties), evaluated a block of rows at a time on the labelled nodes only."""
    x, y = type_map.x, type_map.y
    ny, nx = labels.shape
    chosen = dict(type_map.parameters) if parameters is None else parameters
    prepared = compiled.prepare(compiled.parameter_vector(chosen))
    best = np.full(count + 1, -np.inf)
    where = np.full(count + 1, -1, dtype=np.int64)            # flat node index of the peak so far
    total = max(1, int(np.count_nonzero(labels)))
    done = 0
    step = _rows_per_chunk(nx)
    for start in range(0, ny, step):
        if cancel is not None and cancel():
            raise Cancelled("pocket statistics cancelled")
        flat = labels[start:start + step].ravel()
        inside = np.flatnonzero(flat)
        if inside.size == 0:
            continue
        region = flat[inside]
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
        done += flat.size - int(np.count_nonzero(flat == 0))
        if progress is not None:
            progress(done / total)
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
