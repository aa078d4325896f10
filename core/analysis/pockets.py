"""Connected regions of one type (supersonic pockets, elliptic islands) and their statistics.

From a type map (core.analysis.classify) the nodes of one type are grouped into connected regions with
scipy.ndimage.label; each region gets its area (trapezoid weights of its nodes: the weights of all nodes
sum to the domain's area exactly, so areas are in the variables' units squared and accurate to O(h) at the
region's edge), its bounding box and centroid, whether it reaches the domain's edge, and the peak of a
chosen quantity over its nodes (e.g. the peak Mach number of a supersonic pocket).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import contourpy
import numpy as np
from scipy import ndimage

from core.analysis.classify import TypeCode, TypeMap
from core.equations.equation import CompiledEquation, QuantitySource
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["Pocket", "label_pockets", "node_areas", "pocket_outline", "pocket_statistics"]

_CHUNK = 1 << 17


@dataclass(frozen=True)
class Pocket:
    """One connected region of a type map; ``label`` is its value in ``label_pockets``' array.

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
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)

    def weights(nodes: np.ndarray) -> np.ndarray:
        steps = np.diff(nodes)
        w = np.zeros(nodes.size)
        w[:-1] += steps / 2
        w[1:] += steps / 2
        return w

    return np.outer(weights(y), weights(x))


def label_pockets(type_map: TypeMap, *, code: TypeCode | int | str = TypeCode.HYPERBOLIC,
                  connectivity: int = 8) -> tuple[np.ndarray, int]:
    """(labels (ny, nx) int32, count): 0 off the type, 1..count per region, largest area first.

    ``connectivity`` 8 joins nodes that touch diagonally, 4 only along the grid lines.
    """
    if connectivity not in (4, 8):
        raise ValueError(f"connectivity must be 4 or 8, got {connectivity!r}")
    mask = type_map.codes == TypeCode.coerce(code)
    structure = np.ones((3, 3), dtype=bool) if connectivity == 8 else None
    labels, count = ndimage.label(mask, structure=structure)
    if count == 0:
        return labels.astype(np.int32), 0
    areas = np.bincount(labels.ravel(), weights=node_areas(type_map.x, type_map.y).ravel(),
                        minlength=count + 1)[1:]
    order = np.lexsort((np.arange(count), -areas))             # largest first; ties in scan order
    relabel = np.zeros(count + 1, dtype=np.int32)
    relabel[order + 1] = np.arange(1, count + 1, dtype=np.int32)
    return relabel[labels], int(count)


def pocket_statistics(compiled: CompiledEquation, type_map: TypeMap, *, quantity: str | None = None,
                      parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                      code: TypeCode | int | str = TypeCode.HYPERBOLIC, connectivity: int = 8,
                      cancel: CancelCheck | None = None, progress: ProgressReport | None = None
                      ) -> tuple[Pocket, ...]:
    """Every connected region of type ``code`` (default hyperbolic) in ``type_map``, largest area first.

    ``quantity`` names a definition, a coefficient (a, b, c) or a data key, evaluated on the regions' nodes
    with ``parameters`` (default: those the map was computed with) to give each region's peak.
    """
    labels, count = label_pockets(type_map, code=code, connectivity=connectivity)
    if count == 0:
        return ()
    x, y = type_map.x, type_map.y
    ny, nx = labels.shape
    flat = labels.ravel()
    inside = np.flatnonzero(flat)
    region = flat[inside]
    rows, columns = np.divmod(inside, nx)
    weight = node_areas(x, y).ravel()[inside]
    px, py = x[columns], y[rows]
    bins = count + 1
    area = np.bincount(region, weights=weight, minlength=bins)
    nodes = np.bincount(region, minlength=bins)
    cx = np.bincount(region, weights=weight * px, minlength=bins) / np.where(area > 0, area, 1)
    cy = np.bincount(region, weights=weight * py, minlength=bins) / np.where(area > 0, area, 1)
    box = np.full((bins, 4), np.nan)
    every = np.arange(1, bins)
    box[1:, 0] = ndimage.minimum(px, region, every)
    box[1:, 1] = ndimage.maximum(px, region, every)
    box[1:, 2] = ndimage.minimum(py, region, every)
    box[1:, 3] = ndimage.maximum(py, region, every)
    edge = np.zeros(bins, dtype=bool)
    on_edge = (rows == 0) | (rows == ny - 1) | (columns == 0) | (columns == nx - 1)
    edge[np.unique(region[on_edge])] = True
    peaks: dict[int, tuple[float, float, float]] = {}
    if quantity is not None:
        values = _quantity_values(compiled, quantity, px, py, type_map, parameters, data, cancel, progress)
        finite = np.flatnonzero(np.isfinite(values))
        if finite.size:
            # sort by region, then value: the last entry of each region's run is its peak
            order = finite[np.lexsort((values[finite], region[finite]))]
            last = np.r_[np.flatnonzero(np.diff(region[order])), order.size - 1]
            for index in order[last]:
                peaks[int(region[index])] = (float(values[index]), float(px[index]), float(py[index]))
    code = TypeCode.coerce(code)
    pockets = []
    for label in range(1, count + 1):
        peak = peaks.get(label)
        pockets.append(Pocket(
            label=label, type=code, node_count=int(nodes[label]), area=float(area[label]),
            bounding_box=tuple(float(v) for v in box[label]), centroid=(float(cx[label]), float(cy[label])),
            touches_boundary=bool(edge[label]), quantity=quantity,
            peak=None if peak is None else peak[0], peak_at=None if peak is None else (peak[1], peak[2])))
    return tuple(pockets)


def _quantity_values(compiled: CompiledEquation, quantity: str, px: np.ndarray, py: np.ndarray,
                     type_map: TypeMap, parameters, data, cancel, progress) -> np.ndarray:
    """``quantity`` at the points (px, py), evaluated in chunks of bounded memory."""
    names = (*compiled.definition_order, "a", "b", "c")
    data_names = tuple(getattr(data, "names", ()))
    if quantity not in names and quantity not in data_names and not quantity.startswith("diff("):
        raise ValueError(f"unknown quantity {quantity!r}; expected a definition, a, b, c or a data quantity "
                         f"({', '.join(names + data_names)})")
    values = np.empty(px.size)
    chosen = dict(type_map.parameters) if parameters is None else parameters
    prepared = compiled.prepare(compiled.parameter_vector(chosen))
    for start in range(0, px.size, _CHUNK):
        if cancel is not None and cancel():
            raise Cancelled("pocket statistics cancelled")
        stop = min(px.size, start + _CHUNK)
        if quantity in names:
            raw = compiled.evaluate_raw(px[start:stop], py[start:stop], data=data, prepared=prepared)[quantity]
            values[start:stop] = np.broadcast_to(raw, (stop - start,))
        else:
            if data is None:
                raise ValueError(f"quantity {quantity!r} needs background data")
            values[start:stop] = data.sample(quantity, px[start:stop], py[start:stop])
        if progress is not None:
            progress(stop / px.size)
    return values


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
