"""Typed text reaches the study only once it has settled, and the map says when it shows an older text.

Half-typed formulas are often valid ("c2 - u" on the way to "c2 - u^2"), so applying every keystroke would
recompute the map, re-read the pins and add undo steps for texts the user never meant. A field's text is
checked at every key (the error shows at the field at once) but applied only when it settles: a pause of
``SETTLE_MS`` after the last key, Enter, or leaving the field. ``SettledText`` does this for a QLineEdit,
``SettlingDelegate`` for the cells of a table. A text that settles while invalid is not applied: the document
records it (``Document.set_unapplied``) and ``UnappliedNote`` says under the map that it shows the last
valid one.
"""

from __future__ import annotations

from collections.abc import Mapping

from PySide6.QtCore import QModelIndex, QObject, QTimer, Signal
from PySide6.QtWidgets import (
    QFormLayout,
    QLabel,
    QLineEdit,
    QStyledItemDelegate,
    QStyleOptionViewItem,
    QVBoxLayout,
    QWidget,
)

from gui.document import Document
from gui.widgets import error_label, show_error

__all__ = [
    "SETTLE_MS",
    "UNAPPLIED_WHAT",
    "CheckedFields",
    "SettledText",
    "SettlingDelegate",
    "UnappliedNote",
    "checked_row",
    "settle_timer",
    "unapplied_text",
]

SETTLE_MS = 600

# What the note calls each place whose typed text may be held back.
UNAPPLIED_WHAT = {
    "a": "formula for a",
    "b": "formula for b",
    "c": "formula for c",
    "definitions": "definitions",
    "parameters": "parameters",
    "domain": "domain",
    "tolerance": "parabolic tolerance",
    "lower_order.d": "lower-order term d",
    "lower_order.e": "lower-order term e",
    "lower_order.f": "lower-order term f",
    "cauchy.line": "Cauchy data line",
    "cauchy.u": "Cauchy data u",
    "cauchy.du": "Cauchy normal derivative",
}


def settle_timer(parent: QObject, interval_ms: int = SETTLE_MS) -> QTimer:
    """A single-shot timer of ``interval_ms``, restarted by each key: it fires when the typing pauses."""
    timer = QTimer(parent)
    timer.setSingleShot(True)
    timer.setInterval(interval_ms)
    return timer


class CheckedFields:
    """What the panels of formula fields built by ``checked_row`` share (a mixin): ``edits``, ``errors`` and
    ``settling`` keyed by field, and ``_problem(which, text)`` saying what is wrong ('' when nothing)."""

    BAD_FIELD = "QLineEdit { border: 2px solid #B00020; }"
    edits: dict[str, QLineEdit]
    errors: dict[str, QLabel]
    settling: dict[str, SettledText]

    def forget_drafts(self) -> None:
        """The next refresh shows the document's texts whatever was typed (another study or equation)."""
        for settling in self.settling.values():
            settling.forget_draft()

    def _show_error(self, which: str, text: str) -> None:
        show_error(self.errors[which], text)
        self.edits[which].setStyleSheet(self.BAD_FIELD if text else "")

    def _typed(self, which: str, text: str) -> None:
        self._show_error(which, self._problem(which, text))


def checked_row(form: QFormLayout, label: str, name: str, tip: str, owner, which: str
                ) -> tuple[QLineEdit, QLabel, SettledText]:
    """A formula field with its error line below it, added to ``form``: typing calls ``owner._typed(which,
    text)``, a settled text ``owner._settled(which, text)``, and the end of an edit drops ``which`` from
    ``owner._merge_keys`` (the coefficient, lower-order and Cauchy fields all work this way)."""
    edit = QLineEdit()
    edit.setObjectName(name)
    edit.setToolTip(tip)
    settling = SettledText(edit)
    settling.typed.connect(lambda text: owner._typed(which, text))
    settling.settled.connect(lambda text: owner._settled(which, text))
    settling.finished.connect(lambda: owner._merge_keys.pop(which, None))
    error = error_label()
    column = QVBoxLayout()
    column.setSpacing(1)
    column.addWidget(edit)
    column.addWidget(error)
    form.addRow(label, column)
    return edit, error, settling


class SettledText(QObject):
    """Watches one QLineEdit: ``typed`` at every key the user presses, ``settled`` when the text settles.

    ``settled(text)`` comes after a pause of ``interval_ms``, or at once on Enter or when the field loses
    focus (then ``finished`` follows: a burst of typing ends). Text put in by the program (``show``) emits
    neither. ``show`` keeps what the user typed over a study text that has not changed since, so an edit
    elsewhere does not wipe a draft.
    """

    typed = Signal(str)
    settled = Signal(str)
    finished = Signal()

    def __init__(self, edit: QLineEdit, interval_ms: int = SETTLE_MS) -> None:
        super().__init__(edit)
        self.edit = edit
        self.timer = settle_timer(self, interval_ms)
        self.timer.timeout.connect(self._settle)
        self._shown: str | None = None
        edit.textEdited.connect(self._typed)
        edit.editingFinished.connect(self._finished)

    @property
    def is_draft(self) -> bool:
        """True while the field holds typed text other than the study's."""
        return self._shown is not None and self.edit.text() != self._shown

    def show(self, text: str) -> bool:
        """Put the study's ``text`` in the field, unless it is the study text the user's draft was typed over.

        Returns whether the field now shows ``text``; a pending settle is dropped when it does."""
        if self.is_draft and text == self._shown:
            return False
        self._shown = text
        self.timer.stop()
        if self.edit.text() != text:
            self.edit.setText(text)
        return True

    def forget_draft(self) -> None:
        """Let the next ``show`` replace whatever the field holds (another study or equation is shown)."""
        self._shown = None

    def adopt(self) -> None:
        """The field's text is what the study now holds (in another spelling, such as 1.50 for 1.5)."""
        self._shown = self.edit.text()
        self.timer.stop()

    def _typed(self, text: str) -> None:
        self.timer.start()
        self.typed.emit(text)

    def _settle(self) -> None:
        self.timer.stop()
        self.settled.emit(self.edit.text())

    def _finished(self) -> None:
        self._settle()
        self.finished.emit()


class SettlingDelegate(QStyledItemDelegate):
    """Table cells edited in a line edit commit their text after a typing pause, not only on Enter or leaving.

    The editor stays open after such a commit; the table's ``itemChanged`` handler checks and applies the
    text as it would on Enter.
    """

    def __init__(self, parent: QObject | None = None, interval_ms: int = SETTLE_MS) -> None:
        super().__init__(parent)
        self.interval_ms = interval_ms

    def createEditor(self, parent: QWidget, option: QStyleOptionViewItem, index: QModelIndex) -> QWidget:
        editor = super().createEditor(parent, option, index)
        if isinstance(editor, QLineEdit):
            timer = settle_timer(editor, self.interval_ms)
            timer.setObjectName("settleTimer")
            timer.timeout.connect(lambda: self.commitData.emit(editor))
            editor.textEdited.connect(timer.start)
        return editor


def unapplied_text(unapplied: Mapping[str, str]) -> str:
    """The note for places whose typed text has an error (keys of UNAPPLIED_WHAT), empty when there are none."""
    if not unapplied:
        return ""
    names = [UNAPPLIED_WHAT.get(where, where) for where in unapplied]
    listed = names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]
    return f"Showing the last valid {listed}: the text typed there has an error."


class UnappliedNote(QLabel):
    """A note under the map (never in exports) while some typed text is held back because it has an error."""

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.setObjectName("unappliedNote")
        self.setWordWrap(True)
        self.setStyleSheet("QLabel { color: #5C3B00; background: #FFF1CC; border: 1px solid #E0B85C;"
                           " padding: 3px 6px; }")
        self.setVisible(False)
        document.unapplied_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        text = unapplied_text(self.document.unapplied)
        self.setText(text)
        self.setVisible(bool(text))
