"""Qt's own console messages, with the one known to be noise left out.

The offscreen platform warns "This plugin does not support propagateSizeHints()" each time a window is shown,
twice on every headless render; it says nothing about the picture. A message handler installed where the
application starts (gui.qt_setup.ensure_application) drops exactly that text and passes every other message
on to the handler that was there before (Qt's own format on stderr when there was none).
"""

from __future__ import annotations

import sys

from PySide6.QtCore import QMessageLogContext, QtMsgType, qFormatLogMessage, qInstallMessageHandler

__all__ = ["SILENCED_MESSAGES", "install_message_filter"]

SILENCED_MESSAGES = frozenset({"This plugin does not support propagateSizeHints()"})

_previous = None
_installed = False


def _filtered(kind: QtMsgType, context: QMessageLogContext, message: str) -> None:
    if message in SILENCED_MESSAGES:
        return
    if _previous is not None:
        _previous(kind, context, message)
    else:
        sys.stderr.write(qFormatLogMessage(kind, context, message) + "\n")


def install_message_filter() -> None:
    """Install the filter once per process (later calls do nothing)."""
    global _previous, _installed
    if _installed:
        return
    _previous = qInstallMessageHandler(_filtered)
    _installed = True
