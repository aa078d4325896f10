"""Type maps of gridded data larger than memory: the data's own grid classified band by band.

The nodes are the data file's own nodes (every ``stride``-th along each variable, inside an optional
rectangle). Bands of rows are read one at a time (core.data.gridded_store, with a halo of two rows:
core.data.band_source) and classified by core.analysis.classify.classify_nodes, the very blocks an
in-memory run uses, so every code is the same as an in-memory run on the same nodes. What is kept from a
band: the count of each type, the area of the nodes of each type (each node stands for the cell between the
midpoints to its neighbours, half cells at the edges, so the areas add up to the rectangle the nodes span),
and optionally its codes, appended to an ``.npy`` file (int8, (ny, nx), written as a stream beside the
target and renamed over it when complete). Type-change lines, parabolic regions and pockets need the whole
map and are not computed.

Memory: a band's window holds, per data quantity read, 8 bytes a node plus 8 a node for each derivative
axis, plus three window-sized temporaries while reading and differentiating, plus the codes and D/S of its
nodes (5 bytes a node); bands are sized so that this stays within ``block_budget`` bytes. Reading a storage
chunk decodes all of it, so the store's chunk rows are counted on top (a store whose chunk is larger than
the budget is refused when opened). The classification blocks inside a band add what classify_grid adds
(a few MiB per thread, whatever the grid).
"""

from __future__ import annotations

import math
import os
import secrets
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from core.analysis.classify import DEFAULT_TOLERANCE, TypeCode, classify_nodes
from core.data.band_source import HALO_ROWS, BandSource, band_window
from core.data.gridded_store import GriddedStore
from core.data.raw import DataError
from core.data.sources import DataSources, parse_quantity_key
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["DEFAULT_BLOCK_BUDGET", "OutOfCoreMap", "classify_out_of_core", "node_indices", "node_weights"]

DEFAULT_BLOCK_BUDGET = 256 << 20      # bytes a band may hold (see the module docstring)
_WINDOW_TEMPORARIES = 3               # window-sized arrays alive at once while a quantity is read or differentiated


@dataclass(frozen=True)
class OutOfCoreMap:
    """What an out-of-core run found. ``columns`` and ``rows`` are (first, last, step) indices of the data's
    nodes classified; ``extent`` (xmin, xmax, ymin, ymax) the nodes' span; ``counts``, ``fractions`` and
    ``areas`` by type name (fractions of the nodes, exactly as classify_grid counts them; areas in the
    variables' units squared); ``band_rows`` the node rows a band classifies (the last may hold fewer);
    ``codes_path`` the .npy written."""

    path: str
    grid: tuple[int, int]
    columns: tuple[int, int, int]
    rows: tuple[int, int, int]
    extent: tuple[float, float, float, float]
    counts: Mapping[str, int]
    fractions: Mapping[str, float]
    areas: Mapping[str, float]
    tolerance: float
    parameters: Mapping[str, float]
    bands: int
    band_rows: int
    block_budget: int
    codes_path: str | None


def node_indices(coordinate: np.ndarray, step: int, low: float | None = None, high: float | None = None
                 ) -> np.ndarray:
    """Indices of the nodes of ``coordinate`` in [low, high] (None: no bound), every ``step``-th from the first."""
    first = 0 if low is None else int(np.searchsorted(coordinate, low, side="left"))
    last = coordinate.size - 1 if high is None else int(np.searchsorted(coordinate, high, side="right")) - 1
    return np.arange(first, last + 1, step) if last >= first else np.arange(0)


def node_weights(nodes: np.ndarray) -> np.ndarray:
    """Each node's share of [nodes[0], nodes[-1]]: half the distance between its two neighbours (one at the
    ends), so the weights add up to the span."""
    weights = np.empty(nodes.size)
    weights[1:-1] = (nodes[2:] - nodes[:-2]) / 2
    weights[0] = (nodes[1] - nodes[0]) / 2
    weights[-1] = (nodes[-1] - nodes[-2]) / 2
    return weights


def _band_rows(store: GriddedStore, keys: tuple[str, ...], columns: int, step: int, budget: int) -> int:
    """How many data rows a band's window may hold within ``budget`` bytes; DataError when not even one band
    of a single node row fits."""
    ny, nx = store.shape
    parsed = [parse_quantity_key(key) for key in keys]
    read = {quantity for quantity, _ in parsed if quantity in store.quantities}
    derivatives = sum(1 for quantity, variable in parsed if variable is not None and quantity in store.quantities)
    per_row = 8 * nx * (len(read) + derivatives + _WINDOW_TEMPORARIES)
    per_node_row = 5 * columns                             # codes and D/S of the band's nodes
    if store.format == "zarr":
        # dask gathers every chunk a window touches before cutting the window out of them
        per_row += 8 * nx
        chunk = 2 * 8 * nx * store.chunk_rows
    else:
        chunk = store.chunk_bytes                          # the netCDF library decodes one chunk at a time
    room = budget - chunk
    smallest = (1 + 2 * HALO_ROWS) * per_row + per_node_row
    if room < smallest:
        need = math.ceil((smallest + chunk) / 2**20)
        raise DataError(f"{store.path}: a band of rows needs at least {need} MiB here (rows of {nx} values, "
                        f"{len(read)} quantities read); raise --block-mib")
    rows = (room - 2 * HALO_ROWS * per_row) // (per_row + per_node_row / step)
    return int(max(1, min(rows, ny)))


def classify_out_of_core(compiled: CompiledEquation, store: GriddedStore, *,
                         parameters: Mapping[str, float] | None = None, others: DataSources | None = None,
                         tolerance: float = DEFAULT_TOLERANCE, stride: tuple[int, int] = (1, 1),
                         rectangle: tuple[float, float, float, float] | None = None,
                         block_budget: int = DEFAULT_BLOCK_BUDGET, codes_path: str | None = None,
                         cancel: CancelCheck | None = None, progress: ProgressReport | None = None
                         ) -> OutOfCoreMap:
    """Classify the nodes of ``store``'s grid (every ``stride`` = (kx, ky)-th, inside ``rectangle`` (xmin,
    xmax, ymin, ymax) if given) band by band; ``others`` serve the quantities of files read into memory.

    ``codes_path`` (ending in .npy) receives the type codes; it is replaced only when the run completes.
    ``cancel``/``progress`` are polled/told between bands. DataError for unreadable data or a rectangle
    holding fewer than 2 nodes along a variable.
    """
    kx, ky = (int(k) for k in stride)
    if kx < 1 or ky < 1:
        raise ValueError(f"stride must be at least 1 along each variable, got {stride}")
    low_x, high_x, low_y, high_y = rectangle if rectangle is not None else (None,) * 4
    columns = node_indices(store.x, kx, low_x, high_x)
    rows = node_indices(store.y, ky, low_y, high_y)
    for name, nodes, axis in ((store.variables[0], columns, store.x), (store.variables[1], rows, store.y)):
        if nodes.size < 2:
            raise DataError(f"{store.path}: fewer than 2 nodes along {name} (the data hold {axis.size} from "
                            f"{axis[0]:g} to {axis[-1]:g})")
    values = compiled.parameter_vector(parameters)
    keys = compiled.plan(COEFFICIENT_NAMES).data_keys
    band_rows = _band_rows(store, keys, columns.size, ky, block_budget)
    per_band = max(1, band_rows // ky)                   # node rows a band classifies
    if ky == 1 and rows.size > per_band > store.chunk_rows > 1:
        per_band -= per_band % store.chunk_rows           # bands start on storage chunk rows
    x_nodes = store.x[columns]
    y_nodes = store.y[rows]
    x_weights, y_weights = node_weights(x_nodes), node_weights(y_nodes)
    counts = np.zeros(len(TypeCode), dtype=np.int64)
    areas = np.zeros(len(TypeCode))
    codes = np.empty((per_band, columns.size), dtype=np.int8)
    normalized = np.empty((per_band, columns.size), dtype=np.float32)
    writer = _CodesWriter(codes_path, (rows.size, columns.size)) if codes_path else None
    bands = 0
    try:
        for first in range(0, rows.size, per_band):
            if cancel is not None and cancel():
                raise Cancelled("out-of-core classification cancelled")
            last = min(rows.size, first + per_band)
            lo, hi = band_window(int(rows[first]), int(rows[last - 1]) + 1, store.y.size)
            source = BandSource(store, lo, hi, keys, others)
            out = (codes[:last - first], normalized[:last - first])
            counts += classify_nodes(compiled, x_nodes, y_nodes[first:last], parameters=values, data=source,
                                     tolerance=tolerance, out=out)
            for row, weight in zip(out[0], y_weights[first:last], strict=True):
                areas += weight * np.bincount(row.view(np.uint8), weights=x_weights, minlength=len(TypeCode))
            if writer is not None:
                writer.write(out[0])
            del source
            _forget_locations(others)
            bands += 1
            if progress is not None:
                progress(last / rows.size)
        if writer is not None:
            writer.finish()
    finally:
        if writer is not None:
            writer.abandon()
    total = float(columns.size * rows.size)
    return OutOfCoreMap(
        path=store.path, grid=(int(columns.size), int(rows.size)),
        columns=(int(columns[0]), int(columns[-1]), kx), rows=(int(rows[0]), int(rows[-1]), ky),
        extent=(float(x_nodes[0]), float(x_nodes[-1]), float(y_nodes[0]), float(y_nodes[-1])),
        counts={code.label: int(counts[code]) for code in TypeCode},
        fractions={code.label: counts[code] / total for code in TypeCode},
        areas={code.label: float(areas[code]) for code in TypeCode},
        tolerance=float(tolerance), parameters=values, bands=bands, band_rows=per_band,
        block_budget=int(block_budget), codes_path=codes_path)


def _forget_locations(others: DataSources | None) -> None:
    """Drop the point locations a mesh read into memory keeps per set of points (up to 256 MiB a mesh): a band's
    nodes are never sampled again."""
    for dataset in others.datasets if others is not None else ():
        clear = getattr(dataset.interpolator, "clear_location_cache", None)
        if clear is not None:
            clear()


class _CodesWriter:
    """Type codes streamed band by band into a NumPy .npy file (int8, C order) beside ``path``, renamed over
    it by ``finish``; ``abandon`` removes an unfinished file."""

    def __init__(self, path: str, shape: tuple[int, int]) -> None:
        self.path = os.path.realpath(path)
        folder, name = os.path.split(self.path)
        self.temporary = os.path.join(folder, f".{name}.{secrets.token_hex(6)}.partial")
        self.expected = shape[0] * shape[1]
        self.written = 0
        try:
            self.handle = open(self.temporary, "xb")  # noqa: SIM115 - kept open across bands, closed by finish/abandon
        except OSError as error:
            raise DataError(f"{path}: cannot be written ({error.strerror or type(error).__name__})") from None
        np.lib.format.write_array_header_1_0(self.handle, {"descr": "|i1", "fortran_order": False,
                                                           "shape": shape})

    def write(self, codes: np.ndarray) -> None:
        try:
            self.handle.write(np.ascontiguousarray(codes).data)
        except OSError as error:
            raise DataError(f"{self.path}: cannot be written ({error.strerror or type(error).__name__})") from None
        self.written += codes.size

    def finish(self) -> None:
        if self.written != self.expected:
            raise RuntimeError(f"{self.written} codes written of {self.expected}")
        self.handle.flush()
        os.fsync(self.handle.fileno())
        self.handle.close()
        os.replace(self.temporary, self.path)
        self.temporary = None

    def abandon(self) -> None:
        if self.temporary is not None:
            self.handle.close()
            try:
                os.remove(self.temporary)
            except OSError:
                pass
