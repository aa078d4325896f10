"""Mixtype's desktop window: a thin PySide6 + pyqtgraph layer over core/."""
