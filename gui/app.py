"""Start-up of the desktop window: ``main`` opens a study (or the demo) and runs until the window closes."""

from __future__ import annotations

import argparse
import sys

from gui.main_window import MainWindow
from gui.project_bridge import starting_project
from gui.qt_setup import ensure_application

__all__ = ["main"]


def main(argv: list[str] | None = None) -> int:
    """Open the window (on FILE when given, else the demo study) and run until it closes."""
    parser = argparse.ArgumentParser(prog="mixtype", description="Map where a PDE changes type.")
    parser.add_argument("file", nargs="?", help="a study file (.mixtype.json) to open")
    arguments = parser.parse_args(list(sys.argv[1:] if argv is None else argv))
    app = ensure_application([sys.argv[0]])
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
