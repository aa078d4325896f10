"""What every data reader shares: the raw arrays a reader returns, its error, formats, coordinate checks.

A reader turns a file into ``RawData`` (coordinates, quantities and a layout) and raises ``DataError`` naming
the file and the problem. A message never quotes a line or a value of the file, and quotes names from it
(columns, arrays) only once the file is recognised as data for the equation's variables: a project file
from someone else may point at any file, whose contents must not reach the screen. Layouts: ``grid`` (1-D coordinates x (nx,), y (ny,) and arrays (ny, nx)),
``profile`` (one coordinate (n,) and arrays (n,), extended over the other variable), ``points`` (scattered
x, y (n,) and arrays (n,)) and ``mesh`` (points plus the file's own triangles (m, 3)).
"""

from __future__ import annotations

import binascii
import lzma
import struct
import zipfile
import zlib
from dataclasses import dataclass, field
from xml.etree import ElementTree

import numpy as np

__all__ = ["FORMATS", "DataError", "RawData", "checked_axis", "failure_reason", "float_array", "format_for_path"]


# file extension -> format name
FORMATS = {
    ".csv": "csv",
    ".npz": "npz",
    ".nc": "netcdf",
    ".nc4": "netcdf",
    ".cdf": "netcdf",
    ".netcdf": "netcdf",
    ".vtu": "vtu",
    ".vtk": "vtk",
}


class DataError(ValueError):
    """A data file cannot be used; the message names the file and says what is wrong with it."""


@dataclass
class RawData:
    """What a reader found in a file, before names are chosen and fields are built (mutable scratch)."""

    format: str
    layout: str                                    # "grid" | "profile" | "points" | "mesh"
    coordinates: tuple[np.ndarray, ...]            # grid: (x, y); profile: (s,); points/mesh: (x, y)
    arrays: dict[str, np.ndarray]                  # name in the file -> float64 values
    profile_axis: int | None = None                # profile: index of the variable it follows
    triangles: np.ndarray | None = None            # mesh: (m, 3) vertex indices
    units: dict[str, str] = field(default_factory=dict)
    rejected: dict[str, str] = field(default_factory=dict)   # name in the file -> why it is unusable
    notes: list[str] = field(default_factory=list)


def format_for_path(path: str) -> str:
    """The format name for ``path``'s extension; DataError for an unknown one."""
    lowered = path.lower()
    for extension, name in FORMATS.items():
        if lowered.endswith(extension):
            return name
    known = ", ".join(sorted(FORMATS))
    raise DataError(f"{path}: unknown file extension; Mixtype reads {known}")



def failure_reason(error: BaseException) -> str:
    """What went wrong, for a one-line message: the system's words for an OSError, else the error's type name.

    Other libraries' texts are left out: a parser's message may quote the bytes it choked on.
    """
    for kind, words in _FAILURES:
        if isinstance(error, kind):
            return words
    if isinstance(error, OSError) and error.strerror:
        return error.strerror
    return type(error).__name__


_FAILURES: tuple[tuple[type[BaseException], str], ...] = (
    (UnicodeDecodeError, "not UTF-8 text"),
    (zlib.error, "a compressed stream is corrupt"),
    (lzma.LZMAError, "a compressed stream is corrupt"),
    (binascii.Error, "base64 text is corrupt"),
    (zipfile.BadZipFile, "not a valid zip archive"),
    (EOFError, "the file ends too early"),
    (struct.error, "a binary header is cut short"),
    (ElementTree.ParseError, "not well-formed XML"),
    (RecursionError, "nested too deeply"),
)


# -- coordinates -----------------------------------------------------------------------------------------
def checked_axis(values: np.ndarray, name: str, path: str) -> tuple[np.ndarray, bool]:
    """A 1-D coordinate as float64, increasing; returns (coordinate, reversed) or raises DataError.

    Decreasing coordinates are accepted and reversed (the caller flips its arrays); repeated, unordered or
    non-finite values are refused, because interpolation along them would be ambiguous.
    """
    values = np.asarray(values, dtype=np.float64)
    if values.ndim != 1:
        raise DataError(f"{path}: coordinate {name!r} must be 1-D, got shape {values.shape}")
    if values.size < 2:
        raise DataError(f"{path}: coordinate {name!r} needs at least 2 values, got {values.size}")
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        raise DataError(f"{path}: coordinate {name!r} has {bad.size} missing or non-finite value(s) "
                        f"(first at index {bad[0]}: {values[bad[0]]}); coordinates must not have holes")
    steps = np.diff(values)
    if np.all(steps > 0):
        return values, False
    if np.all(steps < 0):
        return values[::-1].copy(), True
    kind = "repeats a value" if np.any(steps == 0) else "is not monotonic"
    direction = np.sign(steps[0])
    where = 1 if direction == 0 else int(np.flatnonzero(np.sign(steps) != direction)[0]) + 1
    raise DataError(f"{path}: coordinate {name!r} {kind} ({name}[{where - 1}] = {values[where - 1]:g}, "
                    f"{name}[{where}] = {values[where]:g}); coordinates must be strictly increasing or "
                    f"strictly decreasing")


def float_array(value, name: str, path: str) -> np.ndarray:
    """``value`` (masked values become NaN) as float64; DataError if it does not hold numbers."""
    array = np.asarray(value)
    if np.ma.isMaskedArray(value):
        array = np.ma.filled(np.ma.asarray(value).astype(np.float64), np.nan)
    if array.dtype.kind not in "biuf":
        raise DataError(f"{path}: array {name!r} holds {array.dtype} values, not numbers")
    return np.asarray(array, dtype=np.float64)
