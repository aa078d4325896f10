"""VTK legacy (.vtk) and XML (.vtu) meshes, read through meshio once their declared sizes are checked.

meshio decompresses a compressed VTU file's blocks without a bound, so before it runs, ``check_declared_sizes``
reads what the file declares: the point and cell counts of every piece, and for a compressed file every
array's block header (the uncompressed size of each block), and decompresses each block once with the output
capped at its declared size (a block that holds more is refused). Everything is counted against the data
cap (core.data.limits). Uncompressed files hold at most a few values per byte, so the file-size cap bounds
them. Point data on 2-D triangles or quads (quads split in two); the third coordinate is ignored.
"""

from __future__ import annotations

import base64
import lzma
import re
import zlib

import numpy as np

from core.data.limits import ValueBudget
from core.data.raw import DataError, RawData, failure_reason

__all__ = ["check_declared_sizes", "read_mesh"]

_ATTRIBUTE = re.compile(rb'([A-Za-z_]+)\s*=\s*"([^"]*)"')
_PIECE = re.compile(rb"<Piece\b([^>]*)>")
_DATA_ARRAY = re.compile(rb"<DataArray\b([^>]*?)(/?)>")
_LEGACY_COUNTS = re.compile(rb"^(POINTS|CELLS|POINT_DATA|CELL_DATA)[ \t]+(\d+)(?:[ \t]+(\d+))?", re.MULTILINE)
_HEADER_TYPES = {b"UInt32": np.dtype("<u4"), b"UInt64": np.dtype("<u8")}


def _attributes(text: bytes) -> dict[bytes, bytes]:
    return dict(_ATTRIBUTE.findall(text))


def check_declared_sizes(path: str, fmt: str) -> None:
    """DataError when the mesh file declares more than the data cap, or a compressed block holds more than its
    header declares; reads the file once (its size is within the cap already)."""
    with open(path, "rb") as handle:
        data = handle.read()
    budget = ValueBudget(path)
    if fmt == "vtk":
        for keyword, first, second in _LEGACY_COUNTS.findall(data):
            count = int(first) * 3 if keyword == b"POINTS" else int(second or first)
            budget.take(count, "its declared points and cells")
        return
    for match in _PIECE.finditer(data):
        piece = _attributes(match.group(1))
        budget.take(3 * int(piece.get(b"NumberOfPoints", b"0") or 0) + 8 * int(piece.get(b"NumberOfCells", b"0") or 0),
                    "its declared points and cells")
    start = data.find(b"<VTKFile")
    root = _attributes(data[start:data.find(b">", start)]) if start >= 0 else {}
    compressor = root.get(b"compressor")
    if compressor is None:
        return
    if compressor not in (b"vtkZLibDataCompressor", b"vtkLZMADataCompressor"):
        raise DataError(f"{path}: the mesh is compressed with an unknown compressor")
    decompressor = zlib.decompressobj if compressor == b"vtkZLibDataCompressor" else lzma.LZMADecompressor
    header_type = _HEADER_TYPES.get(root.get(b"header_type", b"UInt32"))
    if header_type is None:
        raise DataError(f"{path}: the mesh's header_type is neither UInt32 nor UInt64")
    if root.get(b"byte_order") == b"BigEndian":
        header_type = header_type.newbyteorder(">")
    appended, raw_appended = _appended_section(data)
    for match in _DATA_ARRAY.finditer(data):
        array = _attributes(match.group(1))
        kind = array.get(b"format", b"ascii")
        if kind == b"binary" and not match.group(2):
            end = data.find(b"<", match.end())
            _check_blocks(path, data[match.end():end].strip(), False, header_type, decompressor, budget)
        elif kind == b"appended":
            offset = int(array.get(b"offset", b"0") or 0)
            _check_blocks(path, appended[offset:], raw_appended, header_type, decompressor, budget)


def _appended_section(data: bytes) -> tuple[bytes, bool]:
    """(bytes after the '_' of the AppendedData element, whether they are raw rather than base64)."""
    start = data.find(b"<AppendedData")
    if start < 0:
        return b"", False
    tag_end = data.find(b">", start)
    raw = _attributes(data[start:tag_end]).get(b"encoding", b"raw") == b"raw"
    underscore = data.find(b"_", tag_end)
    stop = data.rfind(b"</AppendedData>")
    return data[underscore + 1:stop if stop > underscore else len(data)], raw


def _check_blocks(path: str, payload: bytes, raw: bool, header_type: np.dtype, decompressor,
                  budget: ValueBudget) -> None:
    """One compressed array: its block header's sizes counted, each block decompressed within its size."""
    item = header_type.itemsize
    if raw:
        first = payload[:item]
    else:
        first = base64.b64decode(payload[:_base64_chars(item)])[:item]
    if len(first) < item:
        raise DataError(f"{path}: a compressed array's header is cut short")
    blocks = int(np.frombuffer(first, header_type)[0])
    header_bytes = item * (3 + blocks)
    if header_bytes > len(payload):
        raise DataError(f"{path}: a compressed array declares {blocks} blocks, more than the file holds")
    if raw:
        header, body = payload[:header_bytes], payload[header_bytes:]
    else:
        chars = _base64_chars(header_bytes)
        header, body = base64.b64decode(payload[:chars]), base64.b64decode(payload[chars:])
    sizes = np.frombuffer(header[:header_bytes], header_type).astype(np.int64)
    if sizes.size < 3 + blocks:
        raise DataError(f"{path}: a compressed array's header is cut short")
    block_size, last_size = int(sizes[1]), int(sizes[2])
    expected = [block_size] * blocks
    if blocks and last_size:
        expected[-1] = last_size
    budget.take_bytes(sum(expected), "its compressed arrays, decompressed,")
    position = 0
    for compressed, limit in zip(sizes[3:], expected, strict=True):
        piece = body[position:position + int(compressed)]
        position += int(compressed)
        output = decompressor().decompress(piece, limit + 1)
        if len(output) > limit:
            raise DataError(f"{path}: a compressed block holds more than its header declares ({limit} bytes)")


def _base64_chars(size: int) -> int:
    return -(-size // 3) * 4


# -- reading, through meshio ------------------------------------------------------------------------------
_TWO_D_CELLS = {"triangle": 3, "triangle6": 3, "triangle7": 3, "quad": 4, "quad8": 4, "quad9": 4}
_IGNORED_CELLS = {"vertex", "line", "line3", "polyline"}


def read_mesh(path: str, variables: tuple[str, str], fmt: str = "vtu") -> RawData:
    """Point data on 2-D triangles or quads (quads split in two); the third coordinate is ignored."""
    # The format's own reader: meshio.read() prints and calls sys.exit() when a file cannot be read.
    # Imported here, not at the top: meshio's VTU reader takes about 0.5 s to import (measured with
    # python -X importtime) and only mesh files need it.
    from meshio import vtk, vtu

    check_declared_sizes(path, fmt)
    try:
        mesh = (vtk.read if fmt == "vtk" else vtu.read)(path)
    except Exception as error:  # noqa: BLE001 - meshio raises many kinds (XML, zlib, KeyError, ReadError)
        raise DataError(f"{path}: cannot be read as a VTK/VTU mesh (truncated or another format: "
                        f"{failure_reason(error)})") from None
    points = np.asarray(mesh.points, dtype=np.float64)
    if points.ndim != 2 or points.shape[1] < 2 or points.shape[0] < 3:
        raise DataError(f"{path}: the mesh needs at least 3 points with 2 coordinates, got points of shape "
                        f"{points.shape}")
    bad = np.flatnonzero(~np.all(np.isfinite(points[:, :2]), axis=1))
    if bad.size:
        raise DataError(f"{path}: point {bad[0]} has a non-finite coordinate")
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
