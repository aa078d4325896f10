"""Data quantities for one band of rows of a gridded file read by windows (core.data.gridded_store): what
the equations sample while a grid larger than memory is classified band by band.

A band's nodes are the file's own nodes (rows ``start`` to ``stop`` of y, every column of x, or every k-th).
Its window reaches two rows further on each side (a halo, cut at the grid's edges), because a node's value
is interpolated bilinearly from its cell (a node reads its neighbour with weight 0, so a NaN there still
shows) and a first derivative at a node is the finite difference of the nodes beside it. Derivatives along
y are computed on the window with the formulas of ``np.gradient`` (edge_order 2, or 1 on a grid of fewer
than 3 nodes along an axis) and the whole axis' spacing, uniform or not as numpy would decide for the whole
axis; along x the window holds whole rows, so np.gradient itself runs. Sampling then goes through
core.data.fields.GridField on the window: every value is the double an in-memory GridField of the whole
file gives at that node.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from core.data.fields import GridField
from core.data.gridded_store import GriddedStore
from core.data.sources import DataSources, parse_quantity_key

__all__ = ["HALO_ROWS", "BandSource", "axis_spacing", "band_window", "window_gradient"]

HALO_ROWS = 2          # rows read beyond a band on each side: a derivative at the neighbour of its last row


def axis_spacing(coordinate: np.ndarray) -> np.ndarray | np.float64:
    """The spacing np.gradient uses for ``coordinate``: the common step when every step is equal (a 0-d
    value), else the steps (n-1,)."""
    steps = np.diff(np.asarray(coordinate, dtype=np.float64))
    return steps[0] if (steps == steps[0]).all() else steps


def band_window(start: int, stop: int, rows: int) -> tuple[int, int]:
    """The rows to read for a band of rows [start, stop) of a grid of ``rows`` rows: HALO_ROWS more each side."""
    return max(0, start - HALO_ROWS), min(rows, stop + HALO_ROWS)


def window_gradient(values: np.ndarray, spacing, start: int, total: int, edge_order: int) -> np.ndarray:
    """d values / d (axis 0) for a window of rows [start, start + len) of an axis of ``total`` nodes, as
    ``np.gradient`` of the whole axis gives it (``spacing`` from ``axis_spacing`` of the whole coordinate).

    Rows at the window's ends that are not the grid's ends have no neighbour in the window: they are NaN, as
    are the grid's end rows when the window holds fewer than edge_order + 1 rows.
    """
    f = values
    n = f.shape[0]
    out = np.full(f.shape, np.nan)
    uniform = np.ndim(spacing) == 0
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if n >= 3:
            if uniform:
                out[1:-1] = (f[2:] - f[:-2]) / (2. * spacing)
            else:
                dx1 = spacing[start:start + n - 2]
                dx2 = spacing[start + 1:start + n - 1]
                a = (-(dx2) / (dx1 * (dx1 + dx2)))[:, np.newaxis]
                b = ((dx2 - dx1) / (dx1 * dx2))[:, np.newaxis]
                c = (dx1 / (dx2 * (dx1 + dx2)))[:, np.newaxis]
                out[1:-1] = a * f[:-2] + b * f[1:-1] + c * f[2:]
        if start == 0 and n > edge_order:
            out[0] = _first_row(f, spacing, uniform, edge_order)
        if start + n == total and n > edge_order:
            out[-1] = _last_row(f, spacing, uniform, edge_order)
    return out


def _first_row(f: np.ndarray, spacing, uniform: bool, edge_order: int) -> np.ndarray:
    if edge_order == 1:
        return (f[1] - f[0]) / (spacing if uniform else spacing[0])
    if uniform:
        a, b, c = -1.5 / spacing, 2. / spacing, -0.5 / spacing
    else:
        dx1, dx2 = spacing[0], spacing[1]
        a = -(2. * dx1 + dx2) / (dx1 * (dx1 + dx2))
        b = (dx1 + dx2) / (dx1 * dx2)
        c = - dx1 / (dx2 * (dx1 + dx2))
    return a * f[0] + b * f[1] + c * f[2]


def _last_row(f: np.ndarray, spacing, uniform: bool, edge_order: int) -> np.ndarray:
    if edge_order == 1:
        return (f[-1] - f[-2]) / (spacing if uniform else spacing[-1])
    if uniform:
        a, b, c = 0.5 / spacing, -2. / spacing, 1.5 / spacing
    else:
        dx1, dx2 = spacing[-2], spacing[-1]
        a = (dx2) / (dx1 * (dx1 + dx2))
        b = - (dx2 + dx1) / (dx1 * dx2)
        c = (2. * dx2 + dx1) / (dx2 * (dx1 + dx2))
    return a * f[-3] + b * f[-2] + c * f[-1]


class BandSource:
    """The QuantitySource of one band: ``store``'s quantities from a window of rows [lo, hi), read now, with
    the derivatives ``keys`` asks for; any other quantity from ``others`` (files read into memory)."""

    def __init__(self, store: GriddedStore, lo: int, hi: int, keys: Iterable[str],
                 others: DataSources | None = None) -> None:
        self.store = store
        self.others = others
        ny, nx = store.shape
        order = 2 if min(ny, nx) >= 3 else 1          # as GridField._gradient decides for the whole grid
        wanted: dict[str, set[int]] = {}
        for key in keys:
            quantity, variable = parse_quantity_key(key)
            if quantity in store.quantities:
                wanted.setdefault(quantity, set())
                if variable is not None:
                    wanted[quantity].add(store.variables.index(variable))
        arrays = {name: store.read_rows(name, lo, hi) for name in wanted}
        gradients = {}
        for name, axes in wanted.items():
            if axes:
                values = arrays[name]
                with np.errstate(invalid="ignore"):
                    d_dx = np.gradient(values, store.x, axis=1, edge_order=order) if 0 in axes else None
                d_dy = window_gradient(values, axis_spacing(store.y), lo, ny, order) if 1 in axes else None
                gradients[name] = (d_dx, d_dy)
        self.field = GridField(store.x, store.y[lo:hi], arrays, gradients=gradients)

    def sample(self, key: str, x, y) -> np.ndarray:
        quantity, variable = parse_quantity_key(key)
        if quantity not in self.store.quantities:
            if self.others is None:
                raise KeyError(key)
            return self.others.sample(key, x, y)
        if variable is None:
            return self.field.sample(quantity, x, y)
        return self.field.sample_derivative(quantity, self.store.variables.index(variable), x, y)
