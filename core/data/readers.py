"""Readers that turn a data file into raw arrays: CSV, NumPy .npz and VTK/VTU meshes here, NetCDF in
core.data.netcdf; ``read_raw`` picks the reader for a format.

Each reader checks what it can about the file itself (coordinates present, finite and monotonic; arrays of
the right shape; rows complete) and raises ``DataError`` naming the file and the problem (layouts and the
shared checks: core.data.raw). What the arrays mean for interpolation is decided in core.data.fields; name
selection and renaming in core.data.sources.
"""

from __future__ import annotations

import csv
import io
import math
import zipfile

import numpy as np

from core.data.netcdf import read_netcdf
from core.data.raw import DataError, RawData, checked_axis, float_array

__all__ = ["read_raw"]

_MISSING_TEXT = {"", "nan", "na", "n/a", "null", "none", "-"}


def read_raw(path: str, fmt: str, variables: tuple[str, str]) -> RawData:
    """Read ``path`` as format ``fmt`` for the two equation ``variables``."""
    readers = {"csv": _read_csv, "npz": _read_npz, "netcdf": read_netcdf,
               "vtu": lambda p, v: _read_mesh(p, v, "vtu"), "vtk": lambda p, v: _read_mesh(p, v, "vtk")}
    if fmt not in readers:
        raise DataError(f"{path}: unknown data format {fmt!r}; expected one of {', '.join(sorted(readers))}")
    raw = readers[fmt](path, variables)
    raw.format = fmt
    return raw



# -- CSV -------------------------------------------------------------------------------------------------
def _read_csv(path: str, variables: tuple[str, str]) -> RawData:
    """Columns under a header; '#' lines are comments. Layout from which variable columns are present."""
    try:
        with open(path, encoding="utf-8-sig", newline="") as handle:
            text = handle.read()
    except UnicodeDecodeError:
        raise DataError(f"{path}: not a UTF-8 text file, so not CSV") from None
    except OSError as error:
        raise DataError(f"{path}: cannot be read ({error.strerror or error})") from None
    lines = [(number, line) for number, line in enumerate(text.splitlines(), start=1)
             if line.strip() and not line.lstrip().startswith("#")]
    if not lines:
        raise DataError(f"{path}: no header row (the file is empty or holds only comments)")
    rows = list(csv.reader(io.StringIO("\n".join(line for _, line in lines))))
    header = [name.strip() for name in rows[0]]
    if any(not name for name in header):
        raise DataError(f"{path}: the header (line {lines[0][0]}) has an empty column name: {rows[0]}")
    duplicates = sorted({name for name in header if header.count(name) > 1})
    if duplicates:
        raise DataError(f"{path}: the header names column(s) {', '.join(duplicates)} more than once")
    if len(rows) < 3:
        raise DataError(f"{path}: needs at least 2 data rows under the header, got {len(rows) - 1}")
    values = np.empty((len(rows) - 1, len(header)))
    for index, row in enumerate(rows[1:]):
        line_number = lines[index + 1][0]
        if len(row) != len(header):
            raise DataError(f"{path}: line {line_number} has {len(row)} value(s) but the header names "
                            f"{len(header)} columns (a truncated or malformed row)")
        for column, text_value in enumerate(row):
            cell = text_value.strip()
            if cell.lower() in _MISSING_TEXT:
                values[index, column] = math.nan
                continue
            try:
                values[index, column] = float(cell)
            except ValueError:
                raise DataError(f"{path}: line {line_number}, column {header[column]!r}: {cell!r} is not a "
                                f"number") from None
    columns = {name: values[:, k] for k, name in enumerate(header)}
    present = [v for v in variables if v in columns]
    if not present:
        raise DataError(f"{path}: missing variables: no column named {variables[0]!r} or {variables[1]!r} "
                        f"(the header names {', '.join(header)})")
    for name in present:
        bad = np.flatnonzero(~np.isfinite(columns[name]))
        if bad.size:
            raise DataError(f"{path}: coordinate column {name!r} is missing or not finite on line "
                            f"{lines[bad[0] + 1][0]}; coordinates must not have holes")
    quantities = {name: column for name, column in columns.items() if name not in variables}
    if len(present) == 1:
        axis = variables.index(present[0])
        coordinate, flipped = checked_axis(columns[present[0]], present[0], path)
        arrays = {name: (v[::-1].copy() if flipped else v) for name, v in quantities.items()}
        return RawData("csv", "profile", (coordinate,), arrays, profile_axis=axis,
                       notes=[f"a profile along {present[0]}, extended over {variables[1 - axis]}"])
    return _points_or_grid(path, "csv", columns[variables[0]], columns[variables[1]], quantities,
                           variables)


def _points_or_grid(path: str, fmt: str, x: np.ndarray, y: np.ndarray, quantities: dict[str, np.ndarray],
                    variables: tuple[str, str]) -> RawData:
    """Scattered points, or a full rectilinear grid written point by point (then interpolated bilinearly)."""
    x_nodes, x_index = np.unique(x, return_inverse=True)
    y_nodes, y_index = np.unique(y, return_inverse=True)
    flat = y_index * x_nodes.size + x_index
    counts = np.bincount(flat, minlength=x_nodes.size * y_nodes.size)
    if counts.max() > 1:
        first = int(np.flatnonzero(counts > 1)[0])
        rows = np.flatnonzero(flat == first)[:2]
        raise DataError(f"{path}: the point ({variables[0]}, {variables[1]}) = ({x[rows[0]]:g}, "
                        f"{y[rows[0]]:g}) appears more than once (data rows {rows[0] + 1} and {rows[1] + 1})")
    if x_nodes.size >= 2 and y_nodes.size >= 2 and counts.min() == 1:
        arrays = {}
        for name, column in quantities.items():
            grid = np.empty(x_nodes.size * y_nodes.size)
            grid[flat] = column
            arrays[name] = grid.reshape(y_nodes.size, x_nodes.size)
        return RawData(fmt, "grid", (x_nodes, y_nodes), arrays,
                       notes=[f"points form a full {y_nodes.size} x {x_nodes.size} rectilinear grid"])
    if x.size < 3:
        raise DataError(f"{path}: scattered data need at least 3 points, got {x.size}")
    return RawData(fmt, "points", (x, y), dict(quantities), notes=["scattered points, triangulated (Delaunay)"])


# -- NumPy .npz ------------------------------------------------------------------------------------------
def _read_npz(path: str, variables: tuple[str, str]) -> RawData:
    """1-D arrays named after the variables, other arrays (ny, nx); or one variable and (n,) arrays."""
    try:
        with open(path, "rb") as handle:
            archive = np.load(handle, allow_pickle=False)
            if not isinstance(archive, np.lib.npyio.NpzFile):
                raise DataError(f"{path}: holds a single array, not a .npz archive of named arrays")
            with archive:
                contents = {name: archive[name] for name in archive.files}
    except DataError:
        raise
    except (OSError, ValueError, EOFError, zipfile.BadZipFile, KeyError) as error:
        # numpy's own text about pickles suggests unsafe loading: Mixtype never loads pickled objects
        reason = "pickled objects are never loaded" if "pickle" in str(error) else str(error)
        raise DataError(f"{path}: cannot be read as a NumPy .npz archive (truncated or another format: "
                        f"{reason})") from None
    present = [v for v in variables if v in contents]
    if not present:
        raise DataError(f"{path}: missing variables: no array named {variables[0]!r} or {variables[1]!r} "
                        f"(the archive holds {', '.join(sorted(contents)) or 'nothing'})")
    axes = {}
    for name in present:
        axes[name] = checked_axis(float_array(contents[name], name, path), name, path)
    notes = []
    arrays = {}
    rejected = {}
    flips = [flipped for _, flipped in axes.values()]          # in variable order
    if len(present) == 2:
        (x, _), (y, _) = axes[variables[0]], axes[variables[1]]
        expected = (y.size, x.size)
        layout, coordinates = "grid", (x, y)
    else:
        ((s, _),) = axes.values()
        expected = (s.size,)
        layout, coordinates = "profile", (s,)
    for name, value in contents.items():
        if name in variables:
            continue
        if value.ndim == 0:
            notes.append(f"scalar {name!r} = {value!r} is not a quantity (ignored)")
            continue
        if value.shape != expected:
            if layout == "profile" and value.ndim == 2:
                missing = next(v for v in variables if v not in present)
                rejected[name] = (f"missing variable: array {name!r} is 2-D {value.shape} but the archive has "
                                  f"no coordinate array {missing!r}")
                continue
            what = f"(ny, nx) = {expected}: rows follow {variables[1]}, columns {variables[0]}" \
                if layout == "grid" else f"{expected}, the length of coordinate {present[0]!r}"
            rejected[name] = f"array {name!r} has shape {value.shape}; expected {what}"
            continue
        array = float_array(value, name, path)
        for axis, flipped in enumerate(reversed(flips)):        # array axes are (y, x) or (s,)
            if flipped:
                array = np.flip(array, axis=axis)
        arrays[name] = np.ascontiguousarray(array)
    raw = RawData("npz", layout, coordinates, arrays, notes=notes, rejected=rejected)
    if layout == "profile":
        raw.profile_axis = variables.index(present[0])
        raw.notes.append(f"a profile along {present[0]}, extended over {variables[1 - raw.profile_axis]}")
    return raw


# -- VTK / VTU meshes (through meshio) -------------------------------------------------------------------
_TWO_D_CELLS = {"triangle": 3, "triangle6": 3, "triangle7": 3, "quad": 4, "quad8": 4, "quad9": 4}
_IGNORED_CELLS = {"vertex", "line", "line3", "polyline"}


def _read_mesh(path: str, variables: tuple[str, str], fmt: str = "vtu") -> RawData:
    """Point data on 2-D triangles or quads (quads split in two); the third coordinate is ignored."""
    # The format's own reader: meshio.read() prints and calls sys.exit() when a file cannot be read.
    # Imported here, not at the top: meshio's VTU reader takes about 0.5 s to import (measured with
    # python -X importtime) and only mesh files need it.
    from meshio import vtk, vtu

    try:
        mesh = (vtk.read if fmt == "vtk" else vtu.read)(path)
    except Exception as error:  # noqa: BLE001 - meshio raises many kinds (XML, zlib, KeyError, ReadError)
        raise DataError(f"{path}: cannot be read as a VTK/VTU mesh (truncated or another format: "
                        f"{type(error).__name__}: {error})") from None
    points = np.asarray(mesh.points, dtype=np.float64)
    if points.ndim != 2 or points.shape[1] < 2 or points.shape[0] < 3:
        raise DataError(f"{path}: the mesh needs at least 3 points with 2 coordinates, got points of shape "
                        f"{points.shape}")
    bad = np.flatnonzero(~np.all(np.isfinite(points[:, :2]), axis=1))
    if bad.size:
        raise DataError(f"{path}: point {bad[0]} has a non-finite coordinate {points[bad[0]]}")
    notes = [f"{variables[0]}, {variables[1]} = the mesh's first two coordinates"]
    if points.shape[1] > 2 and np.ptp(points[:, 2]) > 0:
        notes.append("the mesh's third coordinate varies and is ignored")
    triangles, solid = [], []
    for block in mesh.cells:
        corners = _TWO_D_CELLS.get(block.type)
        data = np.asarray(block.data, dtype=np.int64)
        if corners == 3:
            triangles.append(data[:, :3])
        elif corners == 4:
            triangles.append(data[:, [0, 1, 2]])
            triangles.append(data[:, [0, 2, 3]])
        elif block.type not in _IGNORED_CELLS:
            solid.append(block.type)
    if solid and not triangles:
        raise DataError(f"{path}: the mesh has only {', '.join(sorted(set(solid)))} cells; Mixtype reads 2-D "
                        f"meshes of triangles or quads")
    if solid:
        notes.append(f"cells of type {', '.join(sorted(set(solid)))} ignored")
    if mesh.cell_data:
        notes.append(f"cell data {', '.join(sorted(mesh.cell_data))} ignored (point data are interpolated)")
    arrays, rejected = {}, {}
    for name, value in mesh.point_data.items():
        value = np.asarray(value)
        if value.dtype.kind not in "biuf":
            rejected[name] = f"point data {name!r} do not hold numbers"
        elif value.shape == (points.shape[0],):
            arrays[name] = value.astype(np.float64)
        elif value.ndim == 2 and value.shape[0] == points.shape[0] and value.shape[1] in (2, 3):
            for k in range(value.shape[1]):
                arrays[f"{name}_{'xyz'[k]}"] = value[:, k].astype(np.float64)
        else:
            rejected[name] = f"point data {name!r} have shape {value.shape}; expected ({points.shape[0]},) " \
                             f"or ({points.shape[0]}, 2|3)"
    coordinates = (points[:, 0].copy(), points[:, 1].copy())
    if not triangles:
        notes.append("the mesh has no 2-D cells: its points are triangulated (Delaunay)")
        return RawData(fmt, "points", coordinates, arrays, rejected=rejected, notes=notes)
    all_triangles = np.concatenate(triangles)
    if all_triangles.min() < 0 or all_triangles.max() >= points.shape[0]:
        raise DataError(f"{path}: a cell refers to a point that does not exist (index "
                        f"{int(all_triangles.max())} with {points.shape[0]} points)")
    return RawData(fmt, "mesh", coordinates, arrays, triangles=all_triangles, rejected=rejected,
                   notes=notes)
