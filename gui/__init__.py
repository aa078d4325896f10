"""Mixtype's desktop window: a thin PySide6 + pyqtgraph layer over core/."""

from gui.qt_fixes import guard_emit_reference_leak

guard_emit_reference_leak()
