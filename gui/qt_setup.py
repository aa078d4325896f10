"""The QApplication and the global pyqtgraph options, set up once before any widget exists."""

from __future__ import annotations

import os
import sys

import pyqtgraph as pg
from PySide6.QtWidgets import QApplication

from gui.qt_messages import install_message_filter

__all__ = ["configure_plotting", "ensure_application"]

_CONFIGURED = False


def configure_plotting() -> None:
    """Global pyqtgraph options, set once before any plot exists: row-major images, antialiased lines."""
    global _CONFIGURED
    if _CONFIGURED:
        return
    pg.setConfigOptions(imageAxisOrder="row-major", antialias=True, background="w", foreground="#222222")
    _CONFIGURED = True


def ensure_application(argv: list[str] | None = None) -> QApplication:
    """The running QApplication, created (offscreen when there is no display) if there is none yet."""
    install_message_filter()
    app = QApplication.instance()
    if app is None:
        if sys.platform.startswith("linux") and not os.environ.get("DISPLAY") \
                and not os.environ.get("WAYLAND_DISPLAY"):
            os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
        app = QApplication(list(argv) if argv is not None else [sys.argv[0]])
        app.setApplicationName("Mixtype")
        app.setOrganizationName("Mixtype")
    configure_plotting()
    return app
