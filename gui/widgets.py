"""Small widget helpers shared by the panels: buttons with tooltips, button rows, names for copies."""

from __future__ import annotations

from collections.abc import Callable, Collection

from PySide6.QtWidgets import QHBoxLayout, QPushButton

__all__ = ["button_row", "copy_name", "push_button"]


def push_button(text: str, tooltip: str, slot: Callable[[], object]) -> QPushButton:
    """A push button with its tooltip, calling ``slot`` when clicked."""
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


def copy_name(name: str, taken: Collection[str]) -> str:
    """'name (2)', 'name (3)', ...: the first such name not in ``taken`` (names stay unique in a project)."""
    number = 2
    while f"{name} ({number})" in taken:
        number += 1
    return f"{name} ({number})"
