"""Commands whose keys work whatever widget of the window has focus.

Before Qt runs a shortcut it offers the key to the focused widget (a ShortcutOverride event), and a text field
takes keys it uses for editing: under X11's key bindings Ctrl+E moves a line edit's cursor to the end of the
line, so the window's Ctrl+E command never ran while a coefficient field or a table cell was being edited. This
guard watches the focused widget of its window: it takes the override for the keys of the actions it was given
(so neither the widget nor a parent of it claims them) and runs the action when the key press itself arrives.
Every other key (Ctrl+C, Ctrl+Z, Delete...) stays with the widget.
"""

from __future__ import annotations

import shiboken6
from PySide6.QtCore import QEvent, QKeyCombination, QObject, Qt
from PySide6.QtGui import QAction
from PySide6.QtWidgets import QApplication, QWidget

__all__ = ["WindowWideShortcuts"]


class WindowWideShortcuts(QObject):
    """Keeps ``actions``' shortcuts (window context) working with focus anywhere in ``window``."""

    def __init__(self, window: QWidget, actions: list[QAction]) -> None:
        super().__init__(window)
        self.window = window
        self.actions = list(actions)
        for action in self.actions:
            action.setShortcutContext(Qt.ShortcutContext.WindowShortcut)
        self._watched: QWidget | None = None
        application = QApplication.instance()
        application.focusChanged.connect(self._focus_changed)
        self._focus_changed(None, application.focusWidget())

    def _belongs(self, widget: QWidget) -> bool:
        """Inside the window, or inside one of its floating panels (tool windows parented to it)."""
        top = widget.window()
        if top is self.window:
            return True
        parent = top.parentWidget()
        return parent is not None and parent.window() is self.window

    def _focus_changed(self, old: QWidget | None, new: QWidget | None) -> None:
        if self._watched is not None and shiboken6.isValid(self._watched):
            self._watched.removeEventFilter(self)
        self._watched = None
        if new is not None and shiboken6.isValid(self) and self._belongs(new):
            new.installEventFilter(self)
            self._watched = new

    def _action_for(self, combination: QKeyCombination) -> QAction | None:
        for action in self.actions:
            if any(s.count() == 1 and s[0] == combination for s in action.shortcuts()):
                return action
        return None

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        kind = event.type()
        if kind not in (QEvent.Type.ShortcutOverride, QEvent.Type.KeyPress):
            return False
        action = self._action_for(event.keyCombination())
        if action is None:
            return False
        event.accept()      # the override: the key comes to this widget as a key press, to be run here
        if kind == QEvent.Type.KeyPress and not event.isAutoRepeat():
            action.trigger()
        return True
