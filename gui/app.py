"""Start-up of the desktop window: the QApplication, global pyqtgraph options, and ``main``."""

from __future__ import annotations

import argparse
import os
import sys

__all__ = ["configure_plotting", "ensure_application", "main"]

_CONFIGURED = False


def configure_plotting() -> None:
    """Global pyqtgraph options, set once before any plot exists: row-major images, antialiased lines."""
    global _CONFIGURED
    if _CONFIGURED:
        return
    import pyqtgraph as pg

    pg.setConfigOptions(imageAxisOrder="row-major", antialias=True, background="w", foreground="#222222")
    _CONFIGURED = True


def ensure_application(argv: list[str] | None = None):
    """The running QApplication, created (offscreen when there is no display) if there is none yet."""
    from PySide6.QtWidgets import QApplication

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


def main(argv: list[str] | None = None) -> int:
    """Open the window (on FILE when given, else the demo study) and run until it closes."""
    parser = argparse.ArgumentParser(prog="mixtype", description="Map where a PDE changes type.")
    parser.add_argument("file", nargs="?", help="a study file (.mixtype.json) to open")
    arguments = parser.parse_args(list(sys.argv[1:] if argv is None else argv))
    app = ensure_application([sys.argv[0]])

    from gui.main_window import MainWindow
    from gui.project_bridge import starting_project

    project, path = starting_project()
    window = MainWindow(project, path=path)
    geometry, state = window.preferences.window_state()
    if geometry is not None:
        window.restoreGeometry(geometry)
    if state is not None:
        window.restoreState(state)
    window.show()
    if not window.offer_recovery() and arguments.file:
        window.open_path(arguments.file, ask=False)
    return int(app.exec())


if __name__ == "__main__":
    raise SystemExit(main())
