"""Small widget helpers shared by the panels: buttons with tooltips, button rows, purpose and error labels,
the row that chooses one of the study's equations or domains, value widgets the mouse wheel moves only once
focused, and shortcuts that act only inside the widgets they belong to.

A slider, spin box or combo box under the pointer of a scrolling panel must not change the study: the
``Steady*`` classes take wheel events only with keyboard focus (a click or Tab gives it; the wheel never
does) and otherwise hand the event to the scroll area around them, which scrolls. Every such
widget of the window is made from these classes (tests/gui/test_edits_when_meant.py checks it).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

from PySide6.QtCore import QPointF, Qt, Signal, SignalInstance
from PySide6.QtGui import QAction, QFocusEvent, QWheelEvent
from PySide6.QtWidgets import (
    QAbstractScrollArea,
    QApplication,
    QComboBox,
    QDoubleSpinBox,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QSlider,
    QSpinBox,
    QWidget,
)

__all__ = ["ERROR_STYLE", "STEADY_WIDGETS", "SteadyComboBox", "SteadyDoubleSpinBox", "SteadySlider",
           "SteadySpinBox", "button_row", "chooser_row", "error_label", "purpose_label", "push_button",
           "scope_shortcut", "show_choices", "show_error"]

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


def _scroll_area_around(widget: QWidget) -> QAbstractScrollArea | None:
    """The nearest scroll area ``widget`` sits in (inside its viewport), or None."""
    parent = widget.parentWidget()
    while parent is not None:
        if isinstance(parent, QAbstractScrollArea) and parent.viewport().isAncestorOf(widget):
            return parent
        parent = parent.parentWidget()
    return None


class _WheelNeedsFocus:
    """Mixin of the Steady* widgets: focus by click or Tab only, and the wheel acts only with focus.

    Without focus the wheel event goes to the viewport of the scroll area around the widget, which scrolls.
    It is sent there rather than left to propagate because Qt passes only spontaneous wheel events on to
    parents: this way synthesised events (tests, accessibility tools) scroll the same way.
    """

    def _steady(self) -> None:
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)

    def wheelEvent(self, event: QWheelEvent) -> None:
        if self.hasFocus():
            super().wheelEvent(event)
            return
        area = _scroll_area_around(self)
        if area is None:
            event.ignore()
            return
        viewport = area.viewport()
        where = QPointF(viewport.mapFromGlobal(event.globalPosition().toPoint()))
        QApplication.sendEvent(viewport, QWheelEvent(
            where, event.globalPosition(), event.pixelDelta(), event.angleDelta(), event.buttons(),
            event.modifiers(), event.phase(), event.inverted(), event.source()))
        event.accept()


class SteadySlider(_WheelNeedsFocus, QSlider):
    """A QSlider the wheel moves only while it has keyboard focus; ``focus_left`` when it loses the focus
    (the wheel and key steps of one visit can then be one undo step)."""

    focus_left = Signal()

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self._steady()

    def focusOutEvent(self, event: QFocusEvent) -> None:
        super().focusOutEvent(event)
        self.focus_left.emit()


class SteadySpinBox(_WheelNeedsFocus, QSpinBox):
    """A QSpinBox the wheel steps only while it has keyboard focus."""

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self._steady()


class SteadyDoubleSpinBox(_WheelNeedsFocus, QDoubleSpinBox):
    """A QDoubleSpinBox the wheel steps only while it has keyboard focus."""

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self._steady()


class SteadyComboBox(_WheelNeedsFocus, QComboBox):
    """A QComboBox the wheel changes only while it has keyboard focus."""

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self._steady()


STEADY_WIDGETS = (SteadySlider, SteadySpinBox, SteadyDoubleSpinBox, SteadyComboBox)


def scope_shortcut(action: QAction, *widgets: QWidget) -> QAction:
    """Let ``action``'s shortcut act only while the keyboard focus is inside one of ``widgets``.

    The action stays in its menu (listed with its shortcut, triggered by a click there); a key press elsewhere
    in the window (say Delete in a table being edited) is left to the widget that has the focus.
    """
    action.setShortcutContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)
    for widget in widgets:
        widget.addAction(action)
    return action
