"""Headless pictures of a study: the map (or the whole window) as the desktop window would show it.

Builds the window offscreen with synchronous computation, so the picture holds the finished map, lines,
characteristics and pins of the project's shown equation and domain.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from PySide6.QtWidgets import QApplication, QDockWidget

from core.project.data_files import outside_data_paths
from gui.main_window import MainWindow
from gui.preferences import Preferences
from gui.project_bridge import ProjectFileError, open_project_file, with_absolute_data_paths
from gui.qt_setup import ensure_application

__all__ = ["render_project"]


def render_project(project_path_or_project, out_png: str | os.PathLike, *, whole_window: bool = False,
                   size: tuple[int, int] | None = None, allow_outside_data: bool = False) -> None:
    """Write a PNG of the study at ``project_path_or_project`` (a path, or a core Project).

    ``whole_window`` pictures the window with its panels; otherwise the map with its title and legend.
    ``size`` is the window size in pixels (width, height), 1200 x 900 when None. 
    Raises ProjectFileError when the file is unusable, or lists data files outside its folder and
    ``allow_outside_data`` is False.
    """
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # before the application exists: no display needed
    ensure_application()
    source = project_path_or_project
    path = None
    if isinstance(source, str | os.PathLike):
        path = Path(source)
        project = open_project_file(path)
        outside = () if allow_outside_data else outside_data_paths(project, path)
        if outside:
            raise ProjectFileError(f"{path}: data files outside the project's folder are not read unless allowed "
                                   f"(--allow-outside-data): {', '.join(outside)}")
    else:
        project = with_absolute_data_paths(source)
    with tempfile.TemporaryDirectory(prefix="mixtype-render-") as folder:
        window = MainWindow(project, path=path, preferences=Preferences(Path(folder)), synchronous=True,
                            autosave_ms=3_600_000)
        try:
            width, height = (int(v) for v in (size or (1200, 900)))
            if not whole_window:
                for dock in window.findChildren(QDockWidget):
                    dock.hide()
            window.resize(width, height)
            window.show()
            window.analysis.flush()
            window.runner.wait_idle()
            QApplication.processEvents()
            window.map_view.fit_domain()
            QApplication.processEvents()
            if whole_window:
                picture = window.grab()
            else:
                picture = window.map_view.grab()
            out = Path(out_png)
            if not picture.save(str(out), "PNG"):
                raise OSError(f"could not write {out}")
        finally:
            window.document.undo_stack.setClean()
            window.close()
            window.deleteLater()
