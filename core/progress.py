"""Cancellation and progress hooks shared by every long core loop.

Long loops poll a ``cancel`` callable between blocks of work and raise ``Cancelled`` when it returns True,
and report a fraction done through ``progress``. The GUI wires these to its job runner; tests and the CLI
pass nothing.
"""

from __future__ import annotations

from collections.abc import Callable

__all__ = ["CancelCheck", "Cancelled", "ProgressReport"]

CancelCheck = Callable[[], bool]
ProgressReport = Callable[[float], None]


class Cancelled(Exception):
    """A computation stopped early because its caller asked it to."""
