"""Headless pictures of a study: the map (or the whole window) as the desktop window would show it.

Builds the window offscreen with synchronous computation, so the picture holds the finished map, lines,
characteristics and pins of the project's shown equation and domain. The file's suffix picks the format
(PNG, SVG or PDF, written by gui.export).
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from PySide6.QtWidgets import QApplication, QDockWidget

from core.project.data_files import outside_data_paths
from gui.export import PICTURE_SUFFIXES, export_picture
from gui.main_window import MainWindow
from gui.preferences import Preferences
from gui.project_bridge import ProjectFileError, open_project_file, with_absolute_data_paths
from gui.qt_setup import ensure_application

__all__ = ["DEFAULT_RENDER_SIZE", "render_project"]

DEFAULT_RENDER_SIZE = (1200, 900)   # window width and height in pixels when no size is asked for


def render_project(project_path_or_project, out: str | os.PathLike, *, whole_window: bool = False,
                   size: tuple[int, int] | None = None, allow_outside_data: bool = False) -> None:
    """Write a picture of the study at ``project_path_or_project`` (a path, or a core Project) to ``out``,
    whose suffix (.png, .svg, .pdf) picks the format.

    ``whole_window`` pictures the window with its panels; otherwise the map with its title and legend.
    ``size`` is the window size in pixels (width, height), DEFAULT_RENDER_SIZE when None.
    Raises ValueError for another suffix, ProjectFileError when the file is unusable, or lists data files
    outside its folder and ``allow_outside_data`` is False.
    """
    out = Path(out)
    if out.suffix.lower() not in PICTURE_SUFFIXES:
        raise ValueError(f"{out.name}: the picture's name must end in {', '.join(PICTURE_SUFFIXES)}")
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
            width, height = (int(v) for v in (size or DEFAULT_RENDER_SIZE))
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
            export_picture(window if whole_window else window.map_view, out,
                           title=window.map_view.title.text(), scale=1.0)
        finally:
            window.document.undo_stack.setClean()
            window.close()
            window.deleteLater()
