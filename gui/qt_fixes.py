"""Work-arounds for defects of the Qt binding that would otherwise crash the window.

PySide6 6.12.0 returns ``True`` from ``SignalInstance.emit`` without taking a reference to it, so every
signal emitted from Python lowers the reference count of ``True`` by one. pyqtgraph and the window emit
several signals per mouse move: after a few thousand moves the count reaches zero and the interpreter aborts
("bool_dealloc: deallocating True or False"). ``guard_emit_reference_leak`` measures whether the running
binding has the defect and, if so, gives ``True`` a reference count so large that the leak can never
exhaust it (as Python 3.12 does for every build by making the booleans immortal).
"""

from __future__ import annotations

import ctypes
import sys

__all__ = ["emit_leaks_true", "guard_emit_reference_leak"]

_PINNED_REFERENCES = 1 << 40      # more emits than a session can make (about 1e12)
_guarded = False


def emit_leaks_true(trials: int = 64) -> bool:
    """True when emitting a signal from Python drops a reference to ``True`` (measured, not assumed)."""
    from PySide6.QtCore import QObject, Signal

    class _Probe(QObject):
        ping = Signal()

    probe = _Probe()
    before = sys.getrefcount(True)
    for _ in range(trials):
        probe.ping.emit()
    after = sys.getrefcount(True)
    probe.deleteLater()
    return before - after >= trials // 2


def guard_emit_reference_leak() -> bool:
    """Pin ``True`` when the binding leaks it on emit; returns whether the guard was applied (once)."""
    global _guarded
    if _guarded:
        return True
    # Only CPython before 3.12 keeps a plain reference count in the first field of every object; from 3.12
    # the booleans are immortal and the leak is harmless.
    if sys.implementation.name != "cpython" or sys.version_info >= (3, 12) or hasattr(sys, "gettotalrefcount"):
        return False
    if not emit_leaks_true():
        return False
    ctypes.c_ssize_t.from_address(id(True)).value += _PINNED_REFERENCES
    _guarded = True
    return True
