"""The notes editor (undoable, saved) and the crash-recovery offer at start-up through gui.app.main."""

from __future__ import annotations

import json

from PySide6.QtWidgets import QApplication

from gui.main_window import MainWindow
from gui.project_bridge import save_project_file
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import hump_project, tricomi_project


def test_notes_typing_is_one_undo_step_and_saved(make_window, qtbot, tmp_path):
    window = make_window(hump_project(nx=41, ny=31))
    editor = window.notes_panel.editor
    editor.setFocus()
    qtbot.keyClicks(editor, "Pocket grows with M_inf")
    assert window.document.project.notes == "Pocket grows with M_inf"
    assert window.document.undo_stack.count() == 1
    assert window.isWindowModified()
    window.notes_panel._end_burst()            # a pause in typing: the next words are a new undo step
    qtbot.keyClicks(editor, ".")
    assert window.document.undo_stack.count() == 2
    window.document.undo_stack.undo()
    assert editor.toPlainText() == "Pocket grows with M_inf"
    window.document.undo_stack.undo()
    assert editor.toPlainText() == "" and window.document.project.notes == ""
    window.document.undo_stack.redo()
    assert editor.toPlainText() == "Pocket grows with M_inf"

    path = tmp_path / "noted.mixtype.json"
    assert window.save_to(path)
    assert json.loads(path.read_text(encoding="utf-8"))["notes"] == "Pocket grows with M_inf"
    other = make_window(tricomi_project(21))
    assert other.open_path(path)
    assert other.notes_panel.editor.toPlainText() == "Pocket grows with M_inf"


class _NoEventLoop:
    """Stands in for the QApplication in main(): exec() checks the window instead of running."""

    def __init__(self, check) -> None:
        self.check = check

    def exec(self) -> int:
        return self.check()


def test_main_offers_to_restore_the_recovery_file(monkeypatch, settings_folder, qtbot):
    from gui import app as app_module
    from gui.preferences import Preferences

    recovered = tricomi_project(21)
    save_project_file(recovered, Preferences(settings_folder).recovery_path)
    asked, seen = [], {}

    def answer(self, path):
        asked.append(path)
        return True

    def check() -> int:
        window = next(w for w in QApplication.topLevelWidgets() if isinstance(w, MainWindow) and w.isVisible())
        seen["equation"] = window.document.equation
        seen["dirty"] = window.document.is_dirty
        window.runner.cancel()
        assert window.runner.wait_idle(HANG_CEILING_S)
        window.close()
        window.deleteLater()
        return 0

    real_application = app_module.ensure_application
    monkeypatch.setattr(app_module, "ensure_application",
                        lambda argv=None: (real_application(argv), _NoEventLoop(check))[1])
    monkeypatch.setattr(MainWindow, "ask_restore", answer)
    monkeypatch.setattr(MainWindow, "ask_unsaved", lambda self: "discard")
    assert app_module.main([]) == 0
    assert asked == [Preferences(settings_folder).recovery_path]
    assert seen["equation"] == recovered.shown()[0]     # the autosaved study, not the demo
    assert seen["dirty"] is True                        # recovered work must be saved before it is safe


def test_main_without_restoring_removes_the_recovery_file(monkeypatch, settings_folder, qtbot):
    from gui import app as app_module
    from gui.preferences import Preferences

    recovery = Preferences(settings_folder).recovery_path
    save_project_file(tricomi_project(21), recovery)
    seen = {}

    def check() -> int:
        window = next(w for w in QApplication.topLevelWidgets() if isinstance(w, MainWindow) and w.isVisible())
        seen["equation"] = window.document.equation.name
        window.runner.cancel()
        assert window.runner.wait_idle(HANG_CEILING_S)
        window.close()
        window.deleteLater()
        return 0

    real_application = app_module.ensure_application
    monkeypatch.setattr(app_module, "ensure_application",
                        lambda argv=None: (real_application(argv), _NoEventLoop(check))[1])
    monkeypatch.setattr(MainWindow, "ask_restore", lambda self, path: False)
    monkeypatch.setattr(MainWindow, "ask_unsaved", lambda self: "discard")
    assert app_module.main([]) == 0
    assert seen["equation"] != "Tricomi" and not recovery.exists()
