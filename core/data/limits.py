"""How much a data file may cost: one cap on its size on disk and on the values it decodes to.

A data file comes from anywhere (a project file from someone else names it), so reading one must not take
unbounded memory or time. ``data_cap()`` is the number of bytes a data file may be on disk, and also the
number of bytes its values may take once decoded or decompressed, counted as 8-byte numbers (what every
reader converts them to). Readers check sizes a file *declares* (an archive's member sizes, an array
header's shape, a NetCDF variable's shape, a mesh's point and cell counts) before allocating anything, and
count values as they stream (CSV). The default is DEFAULT_DATA_CAP (1 GiB); the environment variable
DATA_CAP_VARIABLE (``MIXTYPE_DATA_CAP_GIB``, in GiB) raises or lowers it for every study, and
``data_cap_raised`` for one block of work (the command line's ``--data-cap GIB``).
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar

from core.data.raw import DataError

__all__ = [
    "DATA_CAP_VARIABLE",
    "DEFAULT_DATA_CAP",
    "MAX_CSV_LINE",
    "ValueBudget",
    "check_file_size",
    "data_cap",
    "data_cap_raised",
    "gib_text",
    "parse_gib",
]

GIB = 1 << 30
DEFAULT_DATA_CAP = GIB                       # bytes on disk, and bytes of decoded values (8 bytes a value)
DATA_CAP_VARIABLE = "MIXTYPE_DATA_CAP_GIB"   # the same cap in GiB, for every study the process opens
MAX_CSV_LINE = 1 << 20                       # characters in one line of a CSV file
VALUE_BYTES = 8                              # every reader converts values to float64

_override: ContextVar[int | None] = ContextVar("data_cap_override", default=None)


def parse_gib(text: str, where: str) -> int:
    """A cap written in GiB ("2", "0.5") as bytes; DataError naming ``where`` when it is not a positive number."""
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise DataError(f"{where}: expected a size in GiB (a positive number such as 2 or 0.5), got "
                        f"{str(text)[:40]!r}") from None
    if not math.isfinite(value) or value <= 0 or value * GIB > 1 << 62:
        raise DataError(f"{where}: expected a size in GiB above 0 and below 2**32, got {str(text)[:40]!r}")
    return max(1, int(value * GIB))


def data_cap() -> int:
    """The bytes a data file may take, on disk and decoded: ``data_cap_raised``'s, else the environment's, else
    DEFAULT_DATA_CAP. A bad environment value is a DataError naming the variable."""
    override = _override.get()
    if override is not None:
        return override
    text = os.environ.get(DATA_CAP_VARIABLE, "").strip()
    return parse_gib(text, f"environment variable {DATA_CAP_VARIABLE}") if text else DEFAULT_DATA_CAP


@contextmanager
def data_cap_raised(cap_bytes: int | None) -> Iterator[None]:
    """Within the block (this thread), data files may take ``cap_bytes`` (None: leave the cap as it is)."""
    if cap_bytes is None:
        yield
        return
    token = _override.set(int(cap_bytes))
    try:
        yield
    finally:
        _override.reset(token)


def gib_text(size: int) -> str:
    """A byte count for messages: '3.2 GiB', '512 MiB', '40 KiB' or '17 bytes'."""
    for unit, name in ((GIB, "GiB"), (1 << 20, "MiB"), (1 << 10, "KiB")):
        if size >= unit:
            return f"{size / unit:.3g} {name}"
    return f"{size} bytes"


def _over_message(path: str, what: str, size: int, cap: int) -> str:
    return (f"{path}: {what} {gib_text(size)}, more than the data cap of {gib_text(cap)} (raise it with "
            f"--data-cap GIB or the environment variable {DATA_CAP_VARIABLE})")


def check_file_size(path: str) -> int:
    """The file's size in bytes; DataError when it cannot be looked at or is larger than the data cap."""
    try:
        size = os.stat(path).st_size
    except OSError as error:
        raise DataError(f"{path}: cannot be read ({error.strerror or type(error).__name__})") from None
    cap = data_cap()
    if size > cap:
        raise DataError(_over_message(path, "the file is", size, cap))
    return size


class ValueBudget:
    """Counts the values a reader is about to hold for one file; DataError once they pass the data cap.

    ``take`` is called with what a file declares *before* the arrays are made, so nothing is allocated for
    a file that asks for too much.
    """

    def __init__(self, path: str, cap: int | None = None) -> None:
        self.path = path
        self.cap = data_cap() if cap is None else cap
        self.used = 0

    def take(self, count: int, what: str = "its values") -> None:
        """Reserve ``count`` values (8 bytes each) for ``what``."""
        self.used += max(0, int(count)) * VALUE_BYTES
        if self.used > self.cap:
            raise DataError(_over_message(self.path, f"{what} would take", self.used, self.cap))

    def take_bytes(self, size: int, what: str) -> None:
        """Reserve ``size`` bytes (a decompressed member or block) for ``what``."""
        self.used += max(0, int(size))
        if self.used > self.cap:
            raise DataError(_over_message(self.path, f"{what} would take", self.used, self.cap))
