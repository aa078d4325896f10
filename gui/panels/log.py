"""The log panel: the session's computations, cancellations, failures and warnings, newest at the bottom.

Shows gui.computation_log.ComputationLog's entries in a table (time, what, grid, duration, outcome, details)
and follows it as entries arrive. Copy puts the whole log on the clipboard as plain text; Clear empties it.
"""

from __future__ import annotations

from datetime import datetime

from PySide6.QtGui import QBrush, QColor, QGuiApplication
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QHeaderView,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from gui.computation_log import CANCELLED, FAILED, WARNING, ComputationLog, LogEntry, duration_text

__all__ = ["LOG_COLUMNS", "LogPanel", "entry_cells", "log_text"]

LOG_COLUMNS = ("time", "what", "on", "took", "outcome", "details")
_OUTCOME_COLOURS = {FAILED: "#B00020", CANCELLED: "#8A5A00", WARNING: "#8A5A00"}


def _clock_text(at: str) -> str:
    """The time of day of an ISO time stamp; the date too when it is not today (a restored log)."""
    try:
        moment = datetime.fromisoformat(at)
    except ValueError:
        return at
    if moment.date() == datetime.now().date():
        return moment.strftime("%H:%M:%S")
    return moment.strftime("%Y-%m-%d %H:%M:%S")


def entry_cells(entry: LogEntry) -> tuple[str, ...]:
    """The texts of one row, in LOG_COLUMNS order."""
    what = entry.what if entry.repeats == 1 else f"{entry.what} (×{entry.repeats})"
    return (_clock_text(entry.at), what, entry.grid, duration_text(entry.seconds), entry.outcome, entry.detail)


def log_text(entries: list[LogEntry]) -> str:
    """The log as plain text, one tab-separated line per entry under a header line."""
    lines = ["\t".join(LOG_COLUMNS)]
    lines += ["\t".join(entry_cells(entry)) for entry in entries]
    return "\n".join(lines) + "\n"


class LogPanel(QWidget):
    """A read-only table of the log's entries with Copy and Clear buttons."""

    def __init__(self, log: ComputationLog, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.log = log
        self.table = QTableWidget(0, len(LOG_COLUMNS))
        self.table.setObjectName("logTable")
        self.table.setToolTip("What the window computed in this session, on which grid and how long it took; what "
                              "was cancelled or failed and why; warnings about data files. Kept with the autosave, "
                              "not in the study.")
        self.table.setHorizontalHeaderLabels(list(LOG_COLUMNS))
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 6)
        self.table.setWordWrap(False)
        header = self.table.horizontalHeader()
        for column in range(len(LOG_COLUMNS) - 1):
            header.setSectionResizeMode(column, QHeaderView.ResizeMode.ResizeToContents)
        header.setStretchLastSection(True)
        self.copy_button = QPushButton("Copy")
        self.copy_button.setToolTip("Copy every entry as tab-separated text")
        self.copy_button.clicked.connect(self.copy_text)
        self.clear_button = QPushButton("Clear")
        self.clear_button.setToolTip("Empty the log (the study is not affected)")
        self.clear_button.clicked.connect(log.clear)
        buttons = QVBoxLayout()
        buttons.addWidget(self.copy_button)
        buttons.addWidget(self.clear_button)
        buttons.addStretch(1)
        layout = QHBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addWidget(self.table, 1)
        layout.addLayout(buttons)
        log.added.connect(self._append)
        log.updated.connect(self._replace_last)
        log.reset.connect(self._fill)
        self._fill()

    def _set_row(self, row: int, entry: LogEntry) -> None:
        colour = _OUTCOME_COLOURS.get(entry.outcome)
        for column, text in enumerate(entry_cells(entry)):
            item = QTableWidgetItem(text)
            if column == len(LOG_COLUMNS) - 1:
                item.setToolTip(text)
            if colour is not None and LOG_COLUMNS[column] in ("outcome", "details"):
                item.setForeground(QBrush(QColor(colour)))
            self.table.setItem(row, column, item)

    def _follow(self) -> None:
        """Keep the newest entry in view, unless the user scrolled up to read older ones."""
        bar = self.table.verticalScrollBar()
        if bar.value() >= bar.maximum() - 2:
            self.table.scrollToBottom()

    def _append(self, entry: LogEntry) -> None:
        row = self.table.rowCount()
        self.table.insertRow(row)
        self._set_row(row, entry)
        self._follow()

    def _replace_last(self, entry: LogEntry) -> None:
        if self.table.rowCount() == 0:
            self._fill()
            return
        self._set_row(self.table.rowCount() - 1, entry)

    def _fill(self) -> None:
        self.table.setRowCount(0)
        self.table.setRowCount(len(self.log.entries))
        for row, entry in enumerate(self.log.entries):
            self._set_row(row, entry)
        self.table.scrollToBottom()

    def copy_text(self) -> str:
        text = log_text(self.log.entries)
        QGuiApplication.clipboard().setText(text)
        return text
