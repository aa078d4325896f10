"""NumPy .npz archives of named arrays, read with every size checked before anything is decompressed.

An .npz file is a zip archive of .npy members. Before reading, the archive's declared uncompressed sizes and
each member's array header (shape and type, numpy.lib.format) are checked against the data cap
(core.data.limits): a small file that would decompress to gigabytes, or an array header declaring a huge
shape, is refused in milliseconds, and the zip reader never decompresses past a member's declared size.
Arrays of Python objects are refused (pickled data are never loaded). Layouts: 1-D arrays named after the
variables, quantities (ny, nx); or one variable and (n,) quantities (a profile).
"""

from __future__ import annotations

import math
import zipfile

import numpy as np

from core.data.limits import ValueBudget
from core.data.raw import DataError, RawData, checked_axis, failure_reason, float_array

__all__ = ["MAX_NPZ_ARRAYS", "read_npz"]

MAX_NPZ_ARRAYS = 10_000        # members of one archive
_NPY_MAGIC = b"\x93NUMPY"


def _member_header(archive: zipfile.ZipFile, info: zipfile.ZipInfo, path: str, number: int
                   ) -> tuple[tuple[int, ...], np.dtype]:
    """(shape, dtype) from a member's .npy header, read without reading its data."""
    with archive.open(info) as stream:
        try:
            version = np.lib.format.read_magic(stream)
            if version == (1, 0):
                shape, _, dtype = np.lib.format.read_array_header_1_0(stream)
            elif version == (2, 0):
                shape, _, dtype = np.lib.format.read_array_header_2_0(stream)
            else:
                raise DataError(f"{path}: array {number} of the archive has .npy format version "
                                f"{version[0]}.{version[1]}; Mixtype reads versions 1.0 and 2.0")
        except (ValueError, SyntaxError, TypeError) as error:
            raise DataError(f"{path}: array {number} of the archive has no valid .npy header "
                            f"({failure_reason(error)})") from None
    return tuple(int(n) for n in shape), dtype


def _npz_arrays(path: str) -> dict[str, np.ndarray]:
    """{name: array} of an .npz file, refused before decompression when it would pass the data cap."""
    with open(path, "rb") as handle:
        if handle.read(len(_NPY_MAGIC)) == _NPY_MAGIC:
            raise DataError(f"{path}: holds a single array, not a .npz archive of named arrays")
        handle.seek(0)
        with zipfile.ZipFile(handle) as archive:
            members = [info for info in archive.infolist() if not info.is_dir()]
            if len(members) > MAX_NPZ_ARRAYS:
                raise DataError(f"{path}: the archive holds {len(members)} members; Mixtype reads at most "
                                f"{MAX_NPZ_ARRAYS}")
            ValueBudget(path).take_bytes(sum(info.file_size for info in members), "its arrays, decompressed,")
            values = ValueBudget(path)
            wanted = []
            for number, info in enumerate(members, start=1):
                if not info.filename.endswith(".npy"):
                    continue
                shape, dtype = _member_header(archive, info, path, number)
                if dtype.hasobject:
                    raise DataError(f"{path}: array {number} of the archive holds Python objects; pickled "
                                    "objects are never loaded")
                count = math.prod(shape)
                if count * dtype.itemsize > info.file_size:
                    raise DataError(f"{path}: array {number} of the archive declares shape {shape} of "
                                    f"{dtype.itemsize}-byte values, more than the member holds "
                                    f"({info.file_size} bytes)")
                values.take(count * max(1, math.ceil(dtype.itemsize / 8)), "its arrays")
                wanted.append(info)
            arrays = {}
            for info in wanted:
                with archive.open(info) as stream:
                    arrays[info.filename[:-4]] = np.lib.format.read_array(stream, allow_pickle=False)
    return arrays


def read_npz(path: str, variables: tuple[str, str]) -> RawData:
    """1-D arrays named after the variables, other arrays (ny, nx); or one variable and (n,) arrays."""
    try:
        contents = _npz_arrays(path)
    except DataError:
        raise
    except (OSError, ValueError, EOFError, zipfile.BadZipFile, KeyError) as error:
        raise DataError(f"{path}: cannot be read as a NumPy .npz archive (truncated or another format: "
                        f"{failure_reason(error)})") from None
    present = [v for v in variables if v in contents]
    if not present:
        raise DataError(f"{path}: missing variables: no array named {variables[0]!r} or {variables[1]!r} "
                        f"(the archive holds {len(contents)} array(s))")
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
            notes.append(f"scalar {name!r} is not a quantity (ignored)")
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


