"""Rows of rendered formulas, each with a Copy button that puts its formula text on the clipboard.

A row is a label, the formula in mathematical form (gui.math_render, Qt rich text) and, when the formula can be
written in Mixtype's formula language, a Copy button for that text (it pastes back into a coefficient or a
definition). Rows come in titled groups; a group may also hold plain lines of text (conditions, notes). Used
by the exact analysis panel.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication, QGridLayout, QLabel, QPushButton, QVBoxLayout, QWidget

__all__ = ["FormulaRow", "FormulaRows"]


@dataclass(frozen=True)
class FormulaRow:
    """One line: ``label``, the formula as rich text ``html`` and its formula ``text`` (None: nothing to copy,
    ``why`` says why, shown as the button's tooltip)."""

    label: str
    html: str
    text: str | None = None
    why: str = ""


class FormulaRows(QWidget):
    """Titled groups of FormulaRow lines; ``copy_buttons`` maps each copyable row's label to its button."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("formulaRows")
        self._layout = QVBoxLayout(self)
        self._layout.setContentsMargins(4, 4, 4, 4)
        self._layout.setSpacing(6)
        self.copy_buttons: dict[str, QPushButton] = {}
        self.copied = ""

    def clear(self) -> None:
        _empty(self._layout)
        self.copy_buttons = {}

    def show_groups(self, groups: Sequence[tuple[str, Sequence[FormulaRow | str]]]) -> None:
        """Replace what is shown by ``groups``: (title, rows) pairs, a row a FormulaRow or a plain line of text.
        One grid holds every group, so the formulas of all groups line up."""
        self.clear()
        grid = QGridLayout()
        grid.setHorizontalSpacing(8)
        grid.setColumnStretch(1, 1)
        line = 0
        for title, rows in groups:
            heading = QLabel(f"<b>{title}</b>")
            heading.setTextFormat(Qt.TextFormat.RichText)
            grid.addWidget(heading, line, 0, 1, 3)
            line += 1
            for row in rows:
                if isinstance(row, str):
                    plain = QLabel(row)
                    plain.setWordWrap(True)
                    plain.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
                    plain.setContentsMargins(8, 0, 0, 0)
                    grid.addWidget(plain, line, 0, 1, 3)
                    line += 1
                    continue
                label = QLabel(row.label)
                label.setContentsMargins(8, 0, 0, 0)
                label.setAlignment(Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft)
                formula = QLabel(row.html)
                formula.setTextFormat(Qt.TextFormat.RichText)
                formula.setWordWrap(True)
                formula.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
                formula.setStyleSheet("QLabel { font-size: 11.5pt; }")
                button = QPushButton("Copy")
                button.setToolTip(f"Copy as formula text: {row.text}" if row.text is not None else
                                  (row.why or "This formula has no formula text"))
                button.setEnabled(row.text is not None)
                if row.text is not None:
                    button.clicked.connect(lambda checked=False, text=row.text: self.copy(text))
                    self.copy_buttons[f"{title}: {row.label}"] = button
                grid.addWidget(label, line, 0)
                grid.addWidget(formula, line, 1)
                grid.addWidget(button, line, 2, Qt.AlignmentFlag.AlignTop)
                line += 1
        self._layout.addLayout(grid)
        self._layout.addStretch(1)

    def copy(self, text: str) -> None:
        """Put ``text`` on the clipboard (and remember it: ``copied``)."""
        self.copied = text
        QApplication.clipboard().setText(text)


def _empty(layout) -> None:
    """Remove every item of ``layout``, deleting its widgets and nested layouts."""
    while layout.count():
        item = layout.takeAt(0)
        if item.widget() is not None:
            item.widget().setParent(None)
            item.widget().deleteLater()
        elif item.layout() is not None:
            _empty(item.layout())
            item.layout().deleteLater()
