"""Readers that turn a data file into raw arrays: CSV here, NumPy .npz in core.data.npz, VTK/VTU meshes in
core.data.mesh_files and NetCDF in core.data.netcdf; ``read_raw`` picks the reader for a format.

Each reader checks what it can about the file itself (coordinates present, finite and monotonic; arrays of
the right shape; rows complete) and raises ``DataError`` naming the file and the problem (layouts and the
shared checks: core.data.raw). ``read_raw`` refuses a file larger than the data cap before reading it, and
turns anything else a reader raises (zlib, XML, struct, memory, decoding errors) into one such line: a
message names the file and what is wrong, never a line or a value of the file (core.data.limits). What the
arrays mean for interpolation is decided in core.data.fields; name selection and renaming in
core.data.sources.
"""

from __future__ import annotations

import csv
import math
from collections import Counter
from collections.abc import Iterator

import numpy as np

from core.data.limits import MAX_CSV_LINE, ValueBudget, check_file_size
from core.data.mesh_files import read_mesh
from core.data.netcdf import read_netcdf
from core.data.npz import read_npz
from core.data.raw import DataError, RawData, checked_axis, failure_reason

__all__ = ["read_raw"]

_MISSING_TEXT = {"", "nan", "na", "n/a", "null", "none", "-"}
_CSV_CHUNK_ROWS = 1 << 14                      # rows held as text before they are parsed into values
_FORMAT_NAMES = {"csv": "CSV", "npz": "a NumPy .npz archive", "netcdf": "NetCDF", "vtu": "a VTU mesh",
                 "vtk": "a VTK mesh"}


def read_raw(path: str, fmt: str, variables: tuple[str, str]) -> RawData:
    """Read ``path`` as format ``fmt`` for the two equation ``variables``; DataError for any failure."""
    readers = {"csv": _read_csv, "npz": read_npz, "netcdf": read_netcdf,
               "vtu": lambda p, v: read_mesh(p, v, "vtu"), "vtk": lambda p, v: read_mesh(p, v, "vtk")}
    if fmt not in readers:
        raise DataError(f"{path}: unknown data format {fmt!r}; expected one of {', '.join(sorted(readers))}")
    check_file_size(path)
    try:
        raw = readers[fmt](path, variables)
    except DataError:
        raise
    except MemoryError:
        raise DataError(f"{path}: needs more memory than is free to read it as {_FORMAT_NAMES[fmt]}") from None
    except Exception as error:  # noqa: BLE001 - zlib, XML, struct, decoding...: every failure is one line
        raise DataError(f"{path}: cannot be read as {_FORMAT_NAMES[fmt]} (truncated, corrupt or another "
                        f"format: {failure_reason(error)})") from None
    raw.format = fmt
    return raw



# -- CSV -------------------------------------------------------------------------------------------------
class _ContentLines:
    """The lines of an open text file that are neither blank nor '#' comments, read one at a time.

    ``number`` is the line number (from 1) of the line last read; a line longer than MAX_CSV_LINE
    characters is a DataError, so no single line is held whole however the file is made.
    """

    def __init__(self, handle, path: str) -> None:
        self.handle = handle
        self.path = path
        self.number = 0

    def __iter__(self) -> Iterator[str]:
        while True:
            line = self.handle.readline(MAX_CSV_LINE + 1)
            if not line:
                return
            self.number += 1
            if len(line) > MAX_CSV_LINE:
                raise DataError(f"{self.path}: line {self.number} is longer than {MAX_CSV_LINE} characters "
                                "(not a CSV table Mixtype reads)")
            stripped = line.strip()
            if stripped and not stripped.startswith("#"):
                yield line


def _read_csv(path: str, variables: tuple[str, str]) -> RawData:
    """Columns under a header; '#' lines are comments. Layout from which variable columns are present.

    Read as a stream in blocks of rows: memory is the values (8 bytes each, counted against the data cap),
    never the text of the whole file.
    """
    try:
        with open(path, encoding="utf-8-sig", newline="") as handle:
            lines = _ContentLines(handle, path)
            reader = csv.reader(lines)
            try:
                header_row = next(reader, None)
                if header_row is None:
                    raise DataError(f"{path}: no header row (the file is empty or holds only comments)")
                header = [name.strip() for name in header_row]
                present = [v for v in variables if v in header]
                if not present:
                    raise DataError(f"{path}: missing variables: the header (line {lines.number}) has "
                                    f"{len(header)} column(s), none named {variables[0]!r} or {variables[1]!r}")
                _check_header(path, header, lines.number)
                values = _csv_values(path, reader, lines, header)
            except csv.Error as error:
                raise DataError(f"{path}: line {lines.number} is not well-formed CSV ({error})") from None
    except UnicodeDecodeError:
        raise DataError(f"{path}: not a UTF-8 text file, so not CSV") from None
    except OSError as error:
        raise DataError(f"{path}: cannot be read ({failure_reason(error)})") from None
    columns = {name: values[:, k] for k, name in enumerate(header)}
    for name in present:
        bad = np.flatnonzero(~np.isfinite(columns[name]))
        if bad.size:
            raise DataError(f"{path}: coordinate column {name!r} is missing or not finite on line "
                            f"{_line_of_row(path, int(bad[0]))}; coordinates must not have holes")
    quantities = {name: column for name, column in columns.items() if name not in variables}
    if len(present) == 1:
        axis = variables.index(present[0])
        coordinate, flipped = checked_axis(columns[present[0]], present[0], path)
        arrays = {name: (v[::-1].copy() if flipped else v) for name, v in quantities.items()}
        return RawData("csv", "profile", (coordinate,), arrays, profile_axis=axis,
                       notes=[f"a profile along {present[0]}, extended over {variables[1 - axis]}"])
    return _points_or_grid(path, "csv", columns[variables[0]], columns[variables[1]], quantities,
                           variables)


def _check_header(path: str, header: list[str], line: int) -> None:
    empty = [k + 1 for k, name in enumerate(header) if not name]
    if empty:
        raise DataError(f"{path}: the header (line {line}) has an empty column name (column {empty[0]})")
    duplicates = sorted(name for name, times in Counter(header).items() if times > 1)   # linear in columns
    if duplicates:
        raise DataError(f"{path}: the header names column(s) {', '.join(duplicates)} more than once")


def _csv_values(path: str, reader, lines: _ContentLines, header: list[str]) -> np.ndarray:
    """The data rows as a (rows, columns) float64 array, parsed in blocks; missing markers become NaN."""
    width = len(header)
    budget = ValueBudget(path)
    blocks: list[np.ndarray] = []
    pending: list[list[str]] = []
    first_line = 0                      # line number of pending[0]
    for row in reader:
        if len(row) != width:
            raise DataError(f"{path}: line {lines.number} has {len(row)} value(s) but the header names "
                            f"{width} columns (a truncated or malformed row)")
        if not pending:
            first_line = lines.number
        pending.append(row)
        if len(pending) == _CSV_CHUNK_ROWS:
            budget.take(len(pending) * width, "the table's values")
            blocks.append(_parsed_block(path, pending, header, first_line))
            pending = []
    if pending:
        budget.take(len(pending) * width, "the table's values")
        blocks.append(_parsed_block(path, pending, header, first_line))
    rows = sum(block.shape[0] for block in blocks)
    if rows < 2:
        raise DataError(f"{path}: needs at least 2 data rows under the header, got {rows}")
    return blocks[0] if len(blocks) == 1 else np.concatenate(blocks)


def _parsed_block(path: str, rows: list[list[str]], header: list[str], first_line: int) -> np.ndarray:
    """A block of rows as float64: numpy parses numbers as Python's float() does; cells with a missing
    marker or a problem are then read one by one (the message gives the line of the first bad cell)."""
    try:
        return np.array(rows, dtype=np.float64)
    except (ValueError, TypeError):
        pass
    values = np.empty((len(rows), len(header)))
    for index, row in enumerate(rows):
        for column, text_value in enumerate(row):
            cell = text_value.strip()
            if cell.lower() in _MISSING_TEXT:
                values[index, column] = math.nan
                continue
            try:
                values[index, column] = float(cell)
            except ValueError:
                line = _line_of_row_in_block(path, first_line, index)
                raise DataError(f"{path}: line {line}, column {header[column]!r}: the value is not a "
                                "number") from None
    return values


def _line_of_row_in_block(path: str, first_line: int, index: int) -> int:
    """The line of the ``index``-th data row counted from the one on ``first_line`` (re-read for a message)."""
    with open(path, encoding="utf-8-sig", newline="") as handle:
        lines = _ContentLines(handle, path)
        seen = -1
        for _ in csv.reader(lines):
            if lines.number >= first_line:
                seen += 1
                if seen == index:
                    return lines.number
    return lines.number


def _line_of_row(path: str, row: int) -> int:
    """The line number of data row ``row`` (from 0), found by reading the file again (only for a message)."""
    with open(path, encoding="utf-8-sig", newline="") as handle:
        lines = _ContentLines(handle, path)
        for index, _ in enumerate(csv.reader(lines)):
            if index == row + 1:
                return lines.number
    return lines.number


def _points_or_grid(path: str, fmt: str, x: np.ndarray, y: np.ndarray, quantities: dict[str, np.ndarray],
                    variables: tuple[str, str]) -> RawData:
    """Scattered points, or a full rectilinear grid written point by point (then interpolated bilinearly).

    Decided in memory linear in the points: the (row, column) node index of every point, sorted, shows
    repeated points; n distinct points on an nx x ny lattice fill it exactly when n = nx * ny.
    """
    x_nodes, x_index = np.unique(x, return_inverse=True)
    y_nodes, y_index = np.unique(y, return_inverse=True)
    flat = y_index.astype(np.int64) * x_nodes.size + x_index       # < n**2: int64 holds it for any file
    order = np.argsort(flat, kind="stable")
    ordered = flat[order]
    repeated = np.flatnonzero(ordered[1:] == ordered[:-1])
    if repeated.size:
        rows = order[repeated[0]], order[repeated[0] + 1]
        raise DataError(f"{path}: the point ({variables[0]}, {variables[1]}) = ({x[rows[0]]:g}, "
                        f"{y[rows[0]]:g}) appears more than once (data rows {rows[0] + 1} and {rows[1] + 1})")
    if x_nodes.size >= 2 and y_nodes.size >= 2 and x.size == x_nodes.size * y_nodes.size:
        arrays = {}
        for name, column in quantities.items():
            grid = np.empty(x.size)
            grid[flat] = column
            arrays[name] = grid.reshape(y_nodes.size, x_nodes.size)
        return RawData(fmt, "grid", (x_nodes, y_nodes), arrays,
                       notes=[f"points form a full {y_nodes.size} x {x_nodes.size} rectilinear grid"])
    if x.size < 3:
        raise DataError(f"{path}: scattered data need at least 3 points, got {x.size}")
    return RawData(fmt, "points", (x, y), dict(quantities), notes=["scattered points, triangulated (Delaunay)"])
