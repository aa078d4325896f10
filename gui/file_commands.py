"""The window's file commands: new, open, recent files, save, save as, autosave and crash recovery.

A mixin of gui.main_window.MainWindow (it uses the window's document, preferences, menus and status bar).
Questions to the user go through ``ask_*`` / ``choose_*`` methods so tests can answer them; the file layer
itself is gui.project_bridge over core.project.io.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtGui import QAction
from PySide6.QtWidgets import QFileDialog, QMessageBox

from core.project.data_files import outside_data_paths
from gui.computation_log import recovery_log_path
from gui.project_bridge import (
    PROJECT_FILTER,
    ProjectFileError,
    open_project_file,
    save_project_file,
    scratch_project,
)

__all__ = ["FileCommands"]


class FileCommands:
    """New, open, save and recovery for the study window (mixed into MainWindow, which is a QMainWindow)."""

    def _update_title(self) -> None:
        path = self.document.path
        name = path.name if path else "untitled study"
        self.setWindowTitle(f"{name}[*] — Mixtype")
        self.setWindowModified(self.document.is_dirty)

    def ask_unsaved(self) -> str:
        """'save', 'discard' or 'cancel' for a study with unsaved changes."""
        answer = QMessageBox.question(
            self, "Unsaved changes", "The study has changes that are not saved. Save them first?",
            QMessageBox.StandardButton.Save | QMessageBox.StandardButton.Discard
            | QMessageBox.StandardButton.Cancel, QMessageBox.StandardButton.Save)
        return {QMessageBox.StandardButton.Save: "save",
                QMessageBox.StandardButton.Discard: "discard"}.get(answer, "cancel")

    def ask_restore(self, path: Path) -> bool:
        answer = QMessageBox.question(
            self, "Recover unsaved work?",
            "Mixtype did not close normally last time. Restore the study as it was at the last autosave?")
        return answer == QMessageBox.StandardButton.Yes

    def ask_read_outside(self, paths: tuple[str, ...]) -> bool:
        """True when the user lets the study read these data files outside its folder (named in the question)."""
        box = QMessageBox(QMessageBox.Icon.Warning, "Data files outside the study's folder",
                          "This study reads data files outside its own folder:\n\n" + "\n".join(paths)
                          + "\n\nA study file can come from anyone. Read these files?", parent=self)
        read = box.addButton("Read them", QMessageBox.ButtonRole.AcceptRole)
        box.addButton("Do not open the study", QMessageBox.ButtonRole.RejectRole)
        box.exec()
        return box.clickedButton() is read

    def choose_open_path(self) -> str:
        path, _ = QFileDialog.getOpenFileName(self, "Open study", self.preferences.last_folder(), PROJECT_FILTER)
        return path

    def choose_save_path(self, caption: str = "Save study", filter_text: str = PROJECT_FILTER,
                         suggestion: str = "study.mixtype.json") -> str:
        start = str(Path(self.preferences.last_folder()) / suggestion)
        path, _ = QFileDialog.getSaveFileName(self, caption, start, filter_text)
        return path

    def may_discard(self) -> bool:
        """True when the current study may be replaced (saved, discarded on request, or unchanged)."""
        if not self.document.is_dirty:
            return True
        answer = self.ask_unsaved()
        if answer == "save":
            return self.save()
        return answer == "discard"

    def new_study(self) -> bool:
        if not self.may_discard():
            return False
        self.document.replace_project(scratch_project())
        self._after_replace()
        return True

    def open_dialog(self) -> bool:
        if not self.may_discard():
            return False
        path = self.choose_open_path()
        return self.open_path(path, ask=False) if path else False

    def open_path(self, path: str | Path, *, ask: bool = True) -> bool:
        """Open a study file; on failure the current study stays and the problems are shown."""
        if ask and not self.may_discard():
            return False
        try:
            project = open_project_file(path)
        except ProjectFileError as error:
            self.report_error("Could not open the study", str(error))
            return False
        outside = outside_data_paths(project, path)
        if outside and not self.ask_read_outside(outside):
            self.statusBar().showMessage(f"Did not open {path}: its data files outside its folder were not allowed",
                                         8000)
            return False
        self.document.replace_project(project, path)
        self._remember(path)
        self._after_replace()
        return True

    def _after_replace(self) -> None:
        self.map_view.show_domain(self.document.domain)
        self._layers_shown()
        self.show_notice("")

    def save(self) -> bool:
        if self.document.path is None:
            return self.save_as()
        return self.save_to(self.document.path)

    def save_as(self) -> bool:
        path = self.choose_save_path()
        if not path:
            return False
        if not path.endswith(".json"):
            path += ".mixtype.json"
        return self.save_to(path)

    def save_to(self, path: str | Path) -> bool:
        try:
            written = save_project_file(self.document.project, path)
        except ProjectFileError as error:
            self.report_error("Could not save the study", str(error))
            return False
        self.document.mark_saved(path, written)
        self._remember(path)
        self.remove_recovery()
        self.statusBar().showMessage(f"Saved {path}", 5000)
        return True

    def _remember(self, path: str | Path) -> None:
        """A study just opened or saved at ``path``: first of the recent files, its folder the next to offer."""
        self.preferences.add_recent_file(path)
        self.preferences.set_last_folder(str(Path(path).resolve().parent))
        self._refresh_recent_menu()

    def _refresh_recent_menu(self) -> None:
        self.recent_menu.clear()
        files = self.preferences.recent_files()
        for path in files:
            action = QAction(Path(path).name, self)
            action.setToolTip(path)
            action.setStatusTip(path)
            action.triggered.connect(lambda checked=False, path=path: self.open_path(path))
            self.recent_menu.addAction(action)
        if files:
            self.recent_menu.addSeparator()
            self.recent_menu.addAction(self._action("Clear list", self._clear_recent))
        self.recent_menu.setEnabled(bool(files))

    def _clear_recent(self) -> None:
        self.preferences.clear_recent_files()
        self._refresh_recent_menu()

    # -- autosave and recovery ------------------------------------------------------------------------------
    def autosave(self) -> bool:
        """Write unsaved edits to the recovery file (never to the study's own file), the log beside it."""
        if not self.document.is_dirty:
            return False
        try:
            save_project_file(self.document.project, self.preferences.recovery_path)
            self.computation_log.write(recovery_log_path(self.preferences.recovery_path))
        except (ProjectFileError, OSError) as error:
            self.statusBar().showMessage(f"Autosave failed: {error}", 8000)
            return False
        return True

    def remove_recovery(self) -> None:
        for path in (self.preferences.recovery_path, recovery_log_path(self.preferences.recovery_path),
                     self.preferences.recovery_path.with_name(self.preferences.recovery_path.name + ".backup")):
            path.unlink(missing_ok=True)

    def offer_recovery(self) -> bool:
        """After a crash: offer the autosaved study; returns True when it was restored."""
        path = self.preferences.recovery_path
        if not path.exists():
            return False
        try:
            project = open_project_file(path)
        except ProjectFileError:
            self.remove_recovery()
            return False
        if not self.ask_restore(path):
            self.remove_recovery()
            return False
        self.document.replace_project(project, None, dirty=True)
        self.computation_log.restore(recovery_log_path(path))
        self._after_replace()
        return True
