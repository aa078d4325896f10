"""Small widget helpers shared by the panels: buttons with tooltips, button rows, purpose and error labels,
the row that chooses one of the study's equations or domains."""

from __future__ import annotations

from collections.abc import Callable, Sequence

from PySide6.QtCore import SignalInstance
from PySide6.QtWidgets import QComboBox, QHBoxLayout, QLabel, QPushButton

__all__ = ["ERROR_STYLE", "button_row", "chooser_row", "error_label", "purpose_label", "push_button",
           "show_choices", "show_error"]

ERROR_STYLE = "color: #B00020;"


def push_button(text: str, tooltip: str, slot: Callable[[], object] | SignalInstance) -> QPushButton:
    """A push button with its tooltip, calling ``slot`` (or emitting that signal) when clicked."""
    button = QPushButton(text)
    button.setToolTip(tooltip)
    button.clicked.connect(slot)
    return button


def button_row(*buttons: QPushButton) -> QHBoxLayout:
    """The buttons side by side, pushed to the left."""
    row = QHBoxLayout()
    for button in buttons:
        row.addWidget(button)
    row.addStretch(1)
    return row


def chooser_row(label: str, choice: QComboBox, *buttons: QPushButton) -> QHBoxLayout:
    """``label``, the combo box taking the spare width, then the buttons: picks one item of the study."""
    row = QHBoxLayout()
    row.addWidget(QLabel(label))
    choice.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
    choice.setMinimumContentsLength(10)     # long names are elided, so the side panels can stay narrow
    row.addWidget(choice, 1)
    for button in buttons:
        row.addWidget(button)
    return row


def show_choices(choice: QComboBox, names: Sequence[str], current: int) -> None:
    """List ``names`` in ``choice`` with the one at ``current`` selected, without emitting its signals."""
    choice.blockSignals(True)
    choice.clear()
    choice.addItems(list(names))
    choice.setCurrentIndex(current)
    choice.blockSignals(False)


def purpose_label(text: str) -> QLabel:
    """The wrapped line at the top of a panel saying what the panel is for."""
    label = QLabel(text)
    label.setWordWrap(True)
    label.setObjectName("panelPurpose")
    return label


def error_label() -> QLabel:
    """A hidden, wrapped label for what is wrong with a field; ``show_error`` fills and shows it."""
    label = QLabel()
    label.setStyleSheet(ERROR_STYLE)
    label.setWordWrap(True)
    label.setVisible(False)
    return label


def show_error(label: QLabel, text: str) -> None:
    """Show ``text`` in ``label``, or hide the label when ``text`` is empty."""
    label.setText(text)
    label.setVisible(bool(text))
