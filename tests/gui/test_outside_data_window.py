"""Opening a study whose data files lie outside its folder: the window asks first, naming the paths; render
refuses them unless allowed."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication, QMessageBox

from core.domain import Domain
from core.equations.equation import Equation
from core.project.data_files import data_source_ref
from core.project.io import save_project
from core.project.model import new_project
from tests.gui.conftest import tricomi_project


def _study_reading_outside(tmp_path):
    """tmp/projects/study.mixtype.json reading ../shared/grid.npz (k = 0.5 everywhere)."""
    (tmp_path / "projects").mkdir()
    (tmp_path / "shared").mkdir()
    data = tmp_path / "shared" / "grid.npz"
    np.savez(data, x=np.linspace(-1, 1, 5), y=np.linspace(-1, 1, 4), k=np.full((4, 5), 0.5))
    path = tmp_path / "projects" / "study.mixtype.json"
    project = new_project(Equation("k", "0", "1", name="reads k"), Domain(-1, 1, -1, 1, 9, 9))
    save_project(project.with_data_source(data_source_ref(data, path)), path)
    return path, data


def _answer(button_text: str, seen: list[str]) -> None:
    """Answer the next modal question by pressing the button labelled ``button_text``; keep its text."""

    def press():
        box = QApplication.activeModalWidget()
        if not isinstance(box, QMessageBox):
            QTimer.singleShot(10, press)          # not shown yet: look again once events ran
            return
        seen.append(box.text())
        (button,) = [b for b in box.buttons() if b.text() == button_text]
        button.click()

    QTimer.singleShot(0, press)


@pytest.mark.parametrize("answer", ["Read them", "Do not open the study"])
def test_the_window_asks_before_reading_data_outside_the_study_folder(make_window, tmp_path, answer):
    path, data = _study_reading_outside(tmp_path)
    window = make_window(tricomi_project())
    seen: list[str] = []
    _answer(answer, seen)
    opened = window.open_path(path)
    (question,) = seen
    assert str(data) in question and "outside its own folder" in question
    if answer == "Read them":
        assert opened and window.document.path == path
        loaded = window.data_loader.result
        assert loaded is not None and loaded.ok and loaded.names == ("k",)
        assert loaded.sources.sample("k", 0.0, 0.0) == pytest.approx(0.5)
    else:
        assert not opened and window.document.path is None
        assert window.document.project.shown()[0].name == tricomi_project().shown()[0].name


def test_a_study_with_its_data_beside_it_opens_without_a_question(make_window, tmp_path):
    path, data = _study_reading_outside(tmp_path)
    inside = tmp_path / "projects" / "grid.npz"
    data.rename(inside)
    project = new_project(Equation("k", "0", "1"), Domain(-1, 1, -1, 1, 9, 9))
    save_project(project.with_data_source(data_source_ref(inside, path)), path)
    window = make_window(tricomi_project())
    window.ask_read_outside = lambda paths: pytest.fail(f"asked about {paths}")
    assert window.open_path(path)
    assert window.data_loader.result.ok


def test_render_refuses_outside_data_unless_allowed(tmp_path):
    from gui.project_bridge import ProjectFileError
    from gui.render import render_project

    path, data = _study_reading_outside(tmp_path)
    with pytest.raises(ProjectFileError, match="--allow-outside-data") as caught:
        render_project(path, tmp_path / "map.png", size=(400, 300))
    assert str(data.relative_to(tmp_path)) in str(caught.value) or "../shared/grid.npz" in str(caught.value)
    assert not (tmp_path / "map.png").exists()
    render_project(path, tmp_path / "map.png", size=(400, 300), allow_outside_data=True)
    assert (tmp_path / "map.png").stat().st_size > 0
