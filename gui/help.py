"""The Help menu's windows: the bundled user guide, the keyboard shortcuts, the version, the caution, About.

The guide is an HTML file shipped with the package (resources/guide/guide.html, found through core.bundled),
shown in a window of the app so it works offline, with a button that hands it to the system browser. The
shortcuts dialog reads every key sequence from the window's own actions (and any QShortcut), so it stays true
whatever the menus define.
"""

from __future__ import annotations

import importlib.metadata
import platform
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from PySide6.QtCore import QObject, QUrl, qVersion
from PySide6.QtGui import QAction, QDesktopServices, QGuiApplication, QKeySequence, QShortcut
from PySide6.QtWidgets import (
    QAbstractItemView,
    QDialog,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QMenu,
    QMessageBox,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

import core
from core.bundled import bundled_path

__all__ = ["ABOUT_TEXT", "CAUTION", "GUIDE_PARTS", "GuideWindow", "ShortcutRow", "ShortcutsDialog", "WindowHelp",
           "guide_path", "shortcut_rows", "version_details"]

CAUTION = ("Mixtype is an aid for analysing model equations; it validates no design. For engineering "
           "decisions, rely on validated solvers, the applicable codes and standards, and licensed "
           "professional judgement.")
ABOUT_TEXT = (f"<h3>Mixtype</h3><p>Version {core.__version__}</p>"
              "<p>Maps where a second-order equation a u<sub>xx</sub> + b u<sub>xy</sub> + "
              "c u<sub>yy</sub> = 0 is elliptic, parabolic or hyperbolic, finds the lines where its type "
              "changes, reads single points and traces characteristic curves.</p>"
              f"<p><b>Caution.</b> {CAUTION}</p>")
GUIDE_PARTS = ("guide", "guide.html")


def guide_path() -> Path:
    """The bundled user guide (a checkout's resources/guide/guide.html, or the installed copy)."""
    return bundled_path(*GUIDE_PARTS)


def _installed(distribution: str) -> str:
    """The installed version of ``distribution`` from its metadata (nothing is imported), or 'not found'."""
    try:
        return importlib.metadata.version(distribution)
    except importlib.metadata.PackageNotFoundError:
        return "not found"


def version_details() -> str:
    """Mixtype's version and those of what it runs on, one per line (for a bug report)."""
    libraries = ", ".join(f"{name} {_installed(name)}" for name in ("numpy", "scipy", "sympy", "pyqtgraph"))
    return "\n".join([
        f"Mixtype {core.__version__}",
        f"Python {platform.python_version()} on {platform.system()} {platform.machine()}",
        f"Qt {qVersion()} (PySide6 {_installed('PySide6-Essentials')})",
        libraries,
    ])


@dataclass(frozen=True)
class ShortcutRow:
    """One line of the shortcuts dialog: the keys, the command, and where the command lives."""

    keys: str
    command: str
    where: str


def _plain(text: str) -> str:
    """A menu text without its mnemonic marks and trailing ellipsis."""
    return text.replace("&&", "\0").replace("&", "").replace("\0", "&").rstrip("…").rstrip(".").strip()


def _keys_text(sequences: list[QKeySequence]) -> str:
    return ", ".join(s.toString(QKeySequence.SequenceFormat.NativeText) for s in sequences if not s.isEmpty())


def shortcut_rows(window: QWidget) -> list[ShortcutRow]:
    """Every shortcut ``window`` answers to, read from its actions: menu commands in menu order, then actions
    outside the menus, then QShortcut objects (described by their whatsThis text)."""
    rows: list[ShortcutRow] = []
    seen: set[int] = set()

    def walk(menu: QMenu, where: str) -> None:
        for action in menu.actions():
            if action.menu() is not None:
                walk(action.menu(), f"{where} › {_plain(action.text())}")
                continue
            seen.add(id(action))
            keys = _keys_text(action.shortcuts())
            if keys:
                rows.append(ShortcutRow(keys, _plain(action.text()), where))

    for top in window.menuBar().actions():
        if top.menu() is not None:
            walk(top.menu(), _plain(top.text()))
    for action in window.findChildren(QAction):
        keys = _keys_text(action.shortcuts())
        if keys and id(action) not in seen and action.isEnabled():
            seen.add(id(action))
            rows.append(ShortcutRow(keys, _plain(action.text()), "window"))
    for shortcut in window.findChildren(QShortcut):
        keys = _keys_text([shortcut.key()])
        if keys and shortcut.isEnabled():
            owner = shortcut.parent()
            where = owner.objectName() if isinstance(owner, QWidget) and owner.objectName() else "window"
            rows.append(ShortcutRow(keys, shortcut.whatsThis() or "(no description)", where))
    return rows


class ShortcutsDialog(QDialog):
    """A table of every keyboard shortcut of the window (see ``shortcut_rows``)."""

    def __init__(self, window: QWidget) -> None:
        super().__init__(window)
        self.setWindowTitle("Keyboard shortcuts")
        self.setObjectName("shortcutsDialog")
        self.rows = shortcut_rows(window)
        intro = QLabel("Every key the study window answers to, read from its commands as they are now.")
        intro.setWordWrap(True)
        self.table = QTableWidget(len(self.rows), 3)
        self.table.setObjectName("shortcutsTable")
        self.table.setHorizontalHeaderLabels(["keys", "command", "menu"])
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 8)
        for row, line in enumerate(self.rows):
            for column, text in enumerate((line.keys, line.command, line.where)):
                self.table.setItem(row, column, QTableWidgetItem(text))
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setStretchLastSection(True)
        close = QPushButton("Close")
        close.clicked.connect(self.close)
        layout = QVBoxLayout(self)
        layout.addWidget(intro)
        layout.addWidget(self.table, 1)
        row = QHBoxLayout()
        row.addStretch(1)
        row.addWidget(close)
        layout.addLayout(row)
        rows_height = self.table.verticalHeader().length() + self.table.horizontalHeader().height()
        self.resize(600, min(760, rows_height + 120))


class GuideWindow(QDialog):
    """The user guide in a window of the app: an offline HTML browser with contents, back and 'open outside'."""

    def __init__(self, path: Path, parent: QWidget | None, open_url: Callable[[QUrl], object]) -> None:
        super().__init__(parent)
        self.setWindowTitle("Mixtype user guide")
        self.setObjectName("guideWindow")
        self.path = path
        self._open_url = open_url
        self.browser = QTextBrowser()
        self.browser.setObjectName("guideBrowser")
        self.browser.setOpenExternalLinks(True)
        self.contents_button = QPushButton("Contents")
        self.back_button = QPushButton("Back")
        self.outside_button = QPushButton("Open in the system browser")
        self.outside_button.setToolTip("Show this page in your web browser (the file is on this computer)")
        close = QPushButton("Close")
        self.back_button.setEnabled(False)
        self.browser.backwardAvailable.connect(self.back_button.setEnabled)
        self.back_button.clicked.connect(self.browser.backward)
        self.contents_button.clicked.connect(self.browser.home)
        self.outside_button.clicked.connect(self.open_outside)
        close.clicked.connect(self.close)
        buttons = QHBoxLayout()
        for button in (self.contents_button, self.back_button):
            buttons.addWidget(button)
        buttons.addStretch(1)
        buttons.addWidget(self.outside_button)
        buttons.addWidget(close)
        layout = QVBoxLayout(self)
        layout.addWidget(self.browser, 1)
        layout.addLayout(buttons)
        if path.is_file():
            self.browser.setSource(QUrl.fromLocalFile(str(path)))
        else:
            self.browser.setPlainText(f"The user guide is missing (looked for {path}); reinstall Mixtype.")
            self.outside_button.setEnabled(False)
        self.resize(760, 820)

    def show_section(self, anchor: str) -> None:
        """Scroll to the section with id ``anchor`` (e.g. 'caution')."""
        self.browser.scrollToAnchor(anchor)

    def open_outside(self) -> QUrl:
        """Hand the guide (at the section shown, when known) to the system browser; returns the URL opened."""
        url = self.browser.source() if not self.browser.source().isEmpty() else QUrl.fromLocalFile(str(self.path))
        self._open_url(url)
        return url


class WindowHelp(QObject):
    """The Help menu's commands for one study window; keeps its dialogs so each opens once and stays usable."""

    def __init__(self, window, *, open_url: Callable[[QUrl], object] = QDesktopServices.openUrl) -> None:
        super().__init__(window)
        self.window = window
        self.open_url = open_url
        self.guide: GuideWindow | None = None
        self.shortcuts: ShortcutsDialog | None = None
        self.about_box: QMessageBox | None = None
        self.caution_box: QMessageBox | None = None

    def show_guide(self, anchor: str = "") -> GuideWindow:
        if self.guide is None:
            self.guide = GuideWindow(guide_path(), self.window, lambda url: self.open_url(url))
        self.guide.show()
        self.guide.raise_()
        self.guide.activateWindow()
        if anchor:
            self.guide.show_section(anchor)
        return self.guide

    def show_shortcuts(self) -> ShortcutsDialog:
        if self.shortcuts is not None:
            self.shortcuts.close()
            self.shortcuts.deleteLater()
        self.shortcuts = ShortcutsDialog(self.window)   # built afresh: it reads the actions as they are now
        self.shortcuts.show()
        return self.shortcuts

    def copy_version(self) -> str:
        """Put the version details on the clipboard (for a bug report) and say so in the status bar."""
        text = version_details()
        QGuiApplication.clipboard().setText(text)
        self.window.statusBar().showMessage(f"Copied: {text.splitlines()[0]} and the versions it runs on", 6000)
        return text

    def show_caution(self) -> QMessageBox:
        if self.caution_box is None:
            self.caution_box = QMessageBox(QMessageBox.Icon.Warning, "What Mixtype's results are for", CAUTION,
                                           QMessageBox.StandardButton.Ok, self.window)
        self.caution_box.open()
        return self.caution_box

    def show_about(self) -> QMessageBox:
        if self.about_box is None:
            box = QMessageBox(QMessageBox.Icon.Information, "About Mixtype", ABOUT_TEXT,
                              QMessageBox.StandardButton.Ok, self.window)
            box.setDetailedText(version_details())
            self.about_box = box
        self.about_box.open()
        return self.about_box
