"""A gridded data file opened for reading a window of rows at a time, never whole: how a study classifies data
larger than memory (core.analysis.out_of_core).

``open_gridded`` reads the header and the coordinates only. NetCDF windows are hyperslabs read through the
netCDF4 library with the layout of core.data.netcdf (the same coordinates, orientation, masking and scaling
as the whole-file reader, so every value is the same double); zarr stores are opened with xarray on dask
arrays in the store's own chunks (``xarray.open_zarr(..., chunks={})``, CF decoding by xarray), a window
computing only the chunks it touches. Rows are along the second variable, increasing; a window is
(rows, nx) float64 per quantity, NaN where values are missing.

Declared sizes are checked before reading: the coordinates count against the data cap (core.data.limits),
and a storage chunk of a quantity must fit the caller's block budget, since reading any part of a compressed
chunk decodes all of it.
"""

from __future__ import annotations

import hashlib
import math
import os
import types
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Self

import numpy as np

from core.data.limits import ValueBudget, gib_text
from core.data.netcdf import netcdf_layout, open_netcdf
from core.data.raw import DataError, RawData, checked_axis, failure_reason, float_array
from core.data.sources import _checked_variables, _choose_quantities

__all__ = ["LARGE_DATA_EXTRA", "GriddedStore", "gridded_format", "is_zarr_store", "open_gridded",
           "store_checksum"]

LARGE_DATA_EXTRA = "large-data"       # the pyproject extra that brings xarray, dask and zarr
_NETCDF_SUFFIXES = (".nc", ".nc4", ".cdf", ".netcdf")
_AXIS_LETTERS = {"x": "X", "y": "Y", "z": "Z", "t": "T"}


def is_zarr_store(path: str) -> bool:
    """A folder holding zarr metadata (v2 ``.zgroup``/``.zarray``, v3 ``zarr.json``), or named ``*.zarr``."""
    if not os.path.isdir(path):
        return False
    return path.rstrip("/\\").lower().endswith(".zarr") or any(
        os.path.isfile(os.path.join(path, name)) for name in ("zarr.json", ".zgroup", ".zarray"))


def gridded_format(path: str) -> str | None:
    """"netcdf" or "zarr" when ``path`` is data a window reader reads, else None."""
    if is_zarr_store(path):
        return "zarr"
    return "netcdf" if path.lower().endswith(_NETCDF_SUFFIXES) else None


def store_checksum(path: str) -> str:
    """SHA-256 of a file's bytes (as core.data.sources.file_checksum), or for a zarr folder of every file in
    it: relative path and bytes, in sorted order. Read in blocks of 1 MiB."""
    files = [path] if os.path.isfile(path) else sorted(
        os.path.join(folder, name) for folder, _, names in os.walk(path) for name in names)
    digest = hashlib.sha256()
    try:
        for name in files:
            if name != path:
                digest.update(os.path.relpath(name, path).replace(os.sep, "/").encode() + b"\0")
            with open(name, "rb") as handle:
                for block in iter(lambda handle=handle: handle.read(1 << 20), b""):
                    digest.update(block)
    except OSError as error:
        raise DataError(f"{path}: cannot be read ({failure_reason(error)})") from None
    return digest.hexdigest()


@dataclass(frozen=True, eq=False)
class GriddedStore:
    """A gridded data file read by windows of rows: coordinates x (nx,), y (ny,) increasing; ``quantities``
    by their study names (``source_names`` maps them to the file's); ``chunk_rows`` is the storage chunk's
    length along y (1 for contiguous storage), ``chunk_bytes`` the most one storage chunk of a quantity
    takes decoded (8 bytes a value). Close it when done (or use it as a context manager)."""

    path: str
    format: str
    variables: tuple[str, str]
    x: np.ndarray
    y: np.ndarray
    quantities: tuple[str, ...]
    source_names: Mapping[str, str]
    units: Mapping[str, str]
    notes: tuple[str, ...]
    chunk_rows: int
    chunk_bytes: int
    _read: object = field(repr=False)         # (file name, start, stop) -> (stop - start, nx) float64
    _close: object = field(repr=False)

    @property
    def shape(self) -> tuple[int, int]:
        return (self.y.size, self.x.size)

    def read_rows(self, quantity: str, start: int, stop: int) -> np.ndarray:
        """Rows [start, stop) of ``quantity`` as a C-contiguous (stop - start, nx) float64 array."""
        if not 0 <= start < stop <= self.y.size:
            raise ValueError(f"rows [{start}, {stop}) outside the grid's {self.y.size}")
        try:
            values = self._read(self.source_names[quantity], start, stop)
        except DataError:
            raise
        except MemoryError:
            raise DataError(f"{self.path}: needs more memory than is free to read rows {start} to {stop}") from None
        except Exception as error:  # noqa: BLE001 - a decoder or file failure is one line naming the file
            raise DataError(f"{self.path}: cannot read rows {start} to {stop} of {quantity!r} (truncated or "
                            f"corrupt: {failure_reason(error)})") from None
        return np.ascontiguousarray(values, dtype=np.float64)

    def close(self) -> None:
        self._close()

    def __enter__(self) -> Self:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def open_gridded(path: str | os.PathLike, *, variables: Sequence[str] = ("x", "y"),
                 names: Sequence[str] | Mapping[str, str] | None = None, format: str | None = None,
                 chunk_budget: int | None = None) -> GriddedStore:
    """Open a NetCDF file or zarr store on a grid over ``variables`` for windowed reading.

    ``names`` picks and renames quantities as core.data.sources.load_data does. ``chunk_budget`` (bytes)
    refuses a store whose storage chunks would take more than that decoded. DataError for anything wrong.
    """
    path = os.fspath(path)
    variables = _checked_variables(variables, path)
    fmt = format or gridded_format(path)
    if fmt == "zarr":
        return _open_zarr(path, variables, names, chunk_budget)
    if fmt != "netcdf":
        raise DataError(f"{path}: only NetCDF files and zarr stores are read block by block")
    if not os.path.isfile(path):
        raise DataError(f"{path}: no such file")
    return _open_netcdf(path, variables, names, chunk_budget)


def _store(path, fmt, variables, x, y, chosen, units, notes, chunks, read, close) -> GriddedStore:
    """The GriddedStore, once every chosen quantity's storage chunk is known: {name in file: (rows, bytes)}."""
    rows = max((chunks[source][0] for source in chosen.values()), default=1)
    largest = max((chunks[source][1] for source in chosen.values()), default=0)
    return GriddedStore(path=path, format=fmt, variables=variables, x=x, y=y, quantities=tuple(chosen),
                        source_names=types.MappingProxyType(dict(chosen)),
                        units=types.MappingProxyType({q: units[s] for q, s in chosen.items() if units.get(s)}),
                        notes=tuple(notes), chunk_rows=max(1, rows), chunk_bytes=largest, _read=read, _close=close)


def _check_chunks(path: str, chosen: Mapping[str, str], chunks: Mapping[str, tuple[int, int]],
                  budget: int | None) -> None:
    if budget is None:
        return
    for source in chosen.values():
        if chunks[source][1] > budget:
            raise DataError(f"{path}: a storage chunk of {source!r} takes {gib_text(chunks[source][1])} decoded, "
                            f"more than the block budget of {gib_text(budget)}; raise --block-mib or store the "
                            f"data in smaller chunks")


def _open_netcdf(path: str, variables: tuple[str, str], names, chunk_budget: int | None) -> GriddedStore:
    dataset = open_netcdf(path)
    try:
        layout = netcdf_layout(dataset, path, variables)
        if not layout.grid:
            raise DataError(f"{path}: holds a profile, not a grid over {variables[0]!r} and {variables[1]!r}; "
                            "a profile is small: read it without --out-of-core")
        x, y = layout.found[variables[0]][1], layout.found[variables[1]][1]
        raw = RawData("netcdf", "grid", (x, y), dict.fromkeys(layout.usable), rejected=layout.rejected)
        chosen, skipped = _choose_quantities(raw, names, path, variables)
        chunks = {}
        for source in chosen.values():
            variable = layout.usable[source].variable
            storage = variable.chunking()
            if storage == "contiguous" or storage is None:
                chunks[source] = (1, 0)
            else:
                # No chunk cache (the library's default is 64 MiB a variable): a band reads each chunk once
                # when bands start on chunk rows (core.analysis.out_of_core), so the cache would only hold memory.
                variable.set_var_chunk_cache(size=0)
                y_position = layout.usable[source].axes[0]
                chunks[source] = (int(storage[y_position]), 8 * math.prod(int(n) for n in storage))
        _check_chunks(path, chosen, chunks, chunk_budget)
    except DataError:
        dataset.close()
        raise
    except (OSError, RuntimeError, ValueError, IndexError) as error:
        dataset.close()
        raise DataError(f"{path}: cannot be read as NetCDF ({failure_reason(error)})") from None
    ny = y.size
    y_flipped = layout.found[variables[1]][2]

    def read(source: str, start: int, stop: int) -> np.ndarray:
        plan = layout.usable[source]
        variable = plan.variable
        first, last = (ny - stop, ny - start) if y_flipped else (start, stop)
        index = [0] * variable.ndim
        index[plan.axes[0]] = slice(first, last)
        index[plan.axes[1]] = slice(None)
        return layout.oriented(source, float_array(variable[tuple(index)], source, path))

    units = {name: plan.unit for name, plan in layout.usable.items()}
    return _store(path, "netcdf", variables, x, y, chosen, units, layout.notes + skipped, chunks, read,
                  dataset.close)


def _zarr_modules():
    """xarray (with dask and zarr behind it), or DataError naming the extra that installs them."""
    try:
        import dask.array  # noqa: F401 - here, not at the top: only zarr stores need them (about 1 s to import)
        import xarray
        import zarr  # noqa: F401
    except ImportError as error:
        raise DataError(f"reading zarr stores needs xarray, dask and zarr ({error.name} is missing): install "
                        f"them with pip install 'mixtype[{LARGE_DATA_EXTRA}]'") from None
    return xarray


def _zarr_coordinate(dataset, variable: str, path: str):
    """(xarray variable name, how it was found) for the equation variable ``variable``, or None."""
    candidates = {str(name): dataset.variables[name] for name in dataset.variables}
    if variable in candidates and candidates[variable].ndim == 1:
        return variable, "name"
    letter = _AXIS_LETTERS.get(variable.lower())
    if letter is None:
        return None
    matches = [name for name, v in candidates.items()
               if v.ndim == 1 and str(v.attrs.get("axis", "")).upper() == letter]
    if len(matches) > 1:
        raise DataError(f"{path}: several coordinate variables have axis = {letter!r} ({', '.join(matches)}); "
                        f"cannot tell which is {variable!r}")
    return (matches[0], "axis") if matches else None


def _open_zarr(path: str, variables: tuple[str, str], names, chunk_budget: int | None) -> GriddedStore:
    xarray = _zarr_modules()
    try:
        dataset = xarray.open_zarr(path, chunks={}, consolidated=False, decode_times=False)
    except Exception as error:  # noqa: BLE001 - any failure to open is one line naming the store
        raise DataError(f"{path}: cannot be read as a zarr store ({failure_reason(error)})") from None
    try:
        return _zarr_contents(dataset, path, variables, names, chunk_budget)
    except DataError:
        dataset.close()
        raise
    except Exception as error:  # noqa: BLE001
        dataset.close()
        raise DataError(f"{path}: cannot be read as a zarr store ({failure_reason(error)})") from None


def _zarr_contents(dataset, path: str, variables: tuple[str, str], names, chunk_budget: int | None
                   ) -> GriddedStore:
    budget = ValueBudget(path)
    found, notes = {}, []
    for variable in variables:
        match = _zarr_coordinate(dataset, variable, path)
        if match is None:
            raise DataError(f"{path}: missing variables: no coordinate named {variable!r} or with a matching CF "
                            "axis attribute (block-by-block reading needs a grid over both variables)")
        name, how = match
        item = dataset.variables[name]
        budget.take(item.size, f"coordinate {name!r}")
        values = float_array(item.values, name, path)
        if how == "axis" and str(item.attrs.get("positive", "")).lower() == "down":
            values = -values
            notes.append(f"{variable} = -{name} ({name} is positive down; {variable} points up)")
        elif how == "axis":
            notes.append(f"{variable} = {name} (axis {item.attrs.get('axis')})")
        coordinate, flipped = checked_axis(values, name, path)
        found[variable] = (item.dims[0], coordinate, flipped)
    if found[variables[0]][0] == found[variables[1]][0]:
        raise DataError(f"{path}: coordinates {variables[0]!r} and {variables[1]!r} share a dimension; "
                        "scattered data are not supported")
    y_dim, x_dim = found[variables[1]][0], found[variables[0]][0]
    usable, rejected, units, chunks = {}, {}, {}, {}
    for name, item in sorted(dataset.data_vars.items(), key=lambda pair: str(pair[0])):   # listing order varies
        name = str(name)
        extra = [d for d, n in zip(item.dims, item.shape, strict=True) if d not in (y_dim, x_dim) and n != 1]
        if extra or y_dim not in item.dims or x_dim not in item.dims:
            rejected[name] = (f"variable {name!r} has dimensions {tuple(item.dims)}; expected ({y_dim!r}, "
                              f"{x_dim!r}) (extra dimensions of length 1 are allowed)")
            continue
        if item.dtype.kind not in "biuf":
            rejected[name] = f"variable {name!r} does not hold numbers"
            continue
        usable[name] = item
        if item.attrs.get("units"):
            units[name] = str(item.attrs["units"])
        storage = item.encoding.get("chunks") or item.shape
        rows = int(storage[item.dims.index(y_dim)])
        chunks[name] = (rows, 8 * math.prod(int(n) for n in storage))
    raw = RawData("zarr", "grid", (found[variables[0]][1], found[variables[1]][1]), dict.fromkeys(usable),
                  rejected=rejected)
    chosen, skipped = _choose_quantities(raw, names, path, variables)
    _check_chunks(path, chosen, chunks, chunk_budget)
    ny = found[variables[1]][1].size
    y_flipped, x_flipped = found[variables[1]][2], found[variables[0]][2]

    def read(source: str, start: int, stop: int) -> np.ndarray:
        item = usable[source]
        first, last = (ny - stop, ny - start) if y_flipped else (start, stop)
        window = item.isel({d: 0 for d in item.dims if d not in (y_dim, x_dim)})
        window = window.isel({y_dim: slice(first, last)}).transpose(y_dim, x_dim)
        values = float_array(window.values, source, path)      # dask computes the chunks the window touches
        if y_flipped:
            values = values[::-1]
        return values[:, ::-1] if x_flipped else values

    return _store(path, "zarr", variables, found[variables[0]][1], found[variables[1]][1], chosen, units,
                  notes + skipped, chunks, read, dataset.close)
