"""The study's notes: free text saved with the project (what was assumed, where the data came from).

A burst of typing is one undo step: the edits merge until the editor loses focus or the user pauses for
``PAUSE_MS``. Undo and redo put the text back without moving the cursor further than needed.
"""

from __future__ import annotations

from PySide6.QtCore import QTimer
from PySide6.QtGui import QTextCursor
from PySide6.QtWidgets import QLabel, QPlainTextEdit, QVBoxLayout, QWidget

from gui.document import Document

__all__ = ["PAUSE_MS", "NotesPanel"]

PAUSE_MS = 1500


class _NotesEdit(QPlainTextEdit):
    """A plain-text editor that tells its panel when it loses focus (the end of a burst of typing)."""

    def __init__(self, on_focus_out) -> None:
        super().__init__()
        self._on_focus_out = on_focus_out

    def focusOutEvent(self, event) -> None:
        self._on_focus_out()
        super().focusOutEvent(event)


class NotesPanel(QWidget):
    """Edits ``Project.notes`` through the document (undoable)."""

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self._merge_key = ""
        self._updating = False
        purpose = QLabel("Notes kept with the study: assumptions, data sources, findings. Saved in the study file; "
                         "edits can be undone.")
        purpose.setWordWrap(True)
        purpose.setObjectName("panelPurpose")
        self.editor = _NotesEdit(self._end_burst)
        self.editor.setObjectName("notesEditor")
        self.editor.setPlaceholderText("Write notes about this study…")
        self.editor.textChanged.connect(self._typed)
        self._pause = QTimer(self)
        self._pause.setSingleShot(True)
        self._pause.setInterval(PAUSE_MS)
        self._pause.timeout.connect(self._end_burst)
        layout = QVBoxLayout(self)
        layout.addWidget(purpose)
        layout.addWidget(self.editor, 1)
        document.notes_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        """Show the document's notes (after undo, redo or opening a study)."""
        text = self.document.project.notes
        if self.editor.toPlainText() == text:
            return
        position = self.editor.textCursor().position()
        self._updating = True
        try:
            self.editor.setPlainText(text)
            cursor = self.editor.textCursor()
            cursor.setPosition(min(position, len(text)), QTextCursor.MoveMode.MoveAnchor)
            self.editor.setTextCursor(cursor)
        finally:
            self._updating = False
        self._end_burst()

    def _typed(self) -> None:
        if self._updating:
            return
        if not self._merge_key:
            self._merge_key = self.document.new_merge_key("notes")
        self._pause.start()
        self.document.set_notes(self.editor.toPlainText(), merge_key=self._merge_key)

    def _end_burst(self) -> None:
        self._pause.stop()
        self._merge_key = ""
