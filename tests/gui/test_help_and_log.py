"""The Help menu (bundled guide on F1, shortcuts, caution, version, About), the log panel, the View menu's
panel toggles, and Ctrl+E with focus in a text field or a table."""

from __future__ import annotations

import json
import re
import shutil
import threading
from pathlib import Path

import numpy as np
from PySide6.QtCore import QEvent, QObject, Qt, QUrl
from PySide6.QtGui import QAction, QGuiApplication, QKeySequence
from PySide6.QtWidgets import QAbstractButton, QDockWidget, QLineEdit, QMainWindow, QSpinBox, QTableWidget

import core
from core.progress import Cancelled
from gui.computation_log import (
    CANCELLED,
    DONE,
    FAILED,
    MAX_ENTRIES,
    NOTE,
    WARNING,
    LogEntry,
    duration_text,
    recovery_log_path,
)
from gui.help import ABOUT_TEXT, CAUTION, guide_path, shortcut_rows
from gui.panels.log import LOG_COLUMNS
from tests.ceilings import HANG_CEILING_MS, HANG_CEILING_S
from tests.gui.conftest import hump_project

ROOT = Path(__file__).resolve().parents[2]
DEMO_DATA = ROOT / "resources" / "demo" / "data"
GUIDE_SECTIONS = ("answers", "window", "map", "pins", "characteristics", "data", "studies", "cli", "limits",
                  "caution")


class _TakesCtrlE(QObject):
    """Claims Ctrl+E for the widget it watches, as a line edit does under X11's key bindings (Ctrl+E: end of
    line). The offscreen platform's bindings leave Ctrl+E alone, so tests put this filter in their place."""

    def eventFilter(self, watched, event):
        if event.type() == QEvent.Type.ShortcutOverride and event.keyCombination() == QKeySequence("Ctrl+E")[0]:
            event.accept()
            return True
        return False


def _fake_clock(step: float):
    """A clock that moves ``step`` seconds at every reading."""
    ticks = iter(range(1, 1_000_000))
    return lambda: step * next(ticks)


def _log_row(window, row: int) -> dict[str, str]:
    table = window.findChild(QDockWidget, "logDock").widget().table
    return {name: table.item(row, column).text() for column, name in enumerate(LOG_COLUMNS)}


# -- help ---------------------------------------------------------------------------------------------------
def test_the_guide_is_bundled_with_every_section_and_its_contents_resolve():
    path = guide_path()
    assert path == ROOT / "resources" / "guide" / "guide.html" and path.is_file()
    text = path.read_text(encoding="utf-8")
    ids = set(re.findall(r'id="([^"]+)"', text))
    links = set(re.findall(r'href="#([^"]+)"', text))
    assert set(GUIDE_SECTIONS) <= ids and links <= ids
    assert "validates no design" in text and "licensed professional" in text   # the caution, in the guide too
    assert not re.search(r"https?://", text)        # nothing to fetch: the guide works offline


def test_f1_opens_the_guide_in_a_window_and_it_can_go_to_the_system_browser(make_window, qtbot):
    window = make_window()
    opened = []
    window.help.open_url = opened.append
    qtbot.keyClick(window, Qt.Key.Key_F1)
    guide = window.help.guide
    assert guide is not None and guide.isVisible()
    assert window.help.about_box is None                          # F1 is the guide, not About
    assert guide.browser.source() == QUrl.fromLocalFile(str(guide_path()))
    plain = guide.browser.toPlainText()
    assert "What Mixtype answers" in plain and "Characteristics and bounces" in plain
    qtbot.mouseClick(guide.outside_button, Qt.MouseButton.LeftButton)
    assert [url.toLocalFile() for url in opened] == [str(guide_path())]
    guide.close()
    qtbot.keyClick(window, Qt.Key.Key_F1)                         # the same window comes back
    assert window.help.guide is guide and guide.isVisible()


def test_the_shortcuts_dialog_lists_every_shortcut_the_actions_define(make_window):
    window = make_window()
    dialog = window.help.show_shortcuts()
    listed = {(row.keys, row.command) for row in dialog.rows}
    native = QKeySequence.SequenceFormat.NativeText
    assert ("Ctrl+E", "Map as picture (PNG, SVG, PDF)") in listed
    assert (QKeySequence(QKeySequence.StandardKey.HelpContents).toString(native), "User guide") in listed
    for action in window.findChildren(QAction):
        for sequence in action.shortcuts():
            if action.isEnabled() and not sequence.isEmpty():
                assert any(row.keys.split(", ").count(sequence.toString(native)) for row in dialog.rows), \
                    f"{action.text()} ({sequence.toString(native)}) is not listed"
    assert dialog.table.rowCount() == len(dialog.rows) and dialog.table.item(0, 0).text() == dialog.rows[0].keys
    # Read from the actions as they are: a command added later is listed the next time.
    window.menuBar().actions()[0].menu().addAction(window._action("Reload the study", lambda: None,
                                                                   shortcut="Ctrl+Shift+R"))
    assert ("Ctrl+Shift+R", "Reload the study", "File") in {(r.keys, r.command, r.where) for r in shortcut_rows(window)}


def test_about_caution_and_version_from_the_help_menu(make_window):
    window = make_window()
    help_menu = next(a.menu() for a in window.menuBar().actions() if a.text() == "&Help")
    actions = {action.text(): action for action in help_menu.actions() if not action.isSeparator()}
    assert list(actions)[:2] == ["User &guide", "&Keyboard shortcuts"]
    actions["&About Mixtype"].trigger()
    about = window.help.about_box
    assert about.isVisible() and about.text() == ABOUT_TEXT
    assert f"Version {core.__version__}" in about.text() and CAUTION in about.text()
    assert about.detailedText().startswith(f"Mixtype {core.__version__}\nPython ")
    actions["What the results are &for (caution)"].trigger()
    assert window.help.caution_box.isVisible() and window.help.caution_box.text() == CAUTION
    version = next(action for text, action in actions.items() if "version" in text)
    assert core.__version__ in version.text()
    version.trigger()
    copied = QGuiApplication.clipboard().text()
    assert copied.splitlines()[0] == f"Mixtype {core.__version__}" and "numpy " in copied


# -- View menu and Ctrl+E -------------------------------------------------------------------------------------
def test_every_panel_toggle_in_the_view_menu_works_and_follows_its_panel(make_window, qtbot):
    window = make_window()
    docks = window.findChildren(QDockWidget)
    assert {dock.objectName() for dock in docks} == set(window.panel_actions) and "logDock" in window.panel_actions
    for dock in docks:
        toggle = window.panel_actions[dock.objectName()]
        assert toggle.isEnabled() and toggle.isChecked()
        toggle.trigger()
        assert dock.isHidden() and not toggle.isChecked()
        toggle.trigger()
        assert not dock.isHidden() and toggle.isChecked()
    # Closing a panel with its own close button unticks its entry.
    pins_dock = window.findChild(QDockWidget, "pinsDock")
    close = pins_dock.findChild(QAbstractButton, "qt_dockwidget_closebutton")
    qtbot.mouseClick(close, Qt.MouseButton.LeftButton)
    assert pins_dock.isHidden() and not window.panel_actions["pinsDock"].isChecked()


def test_ctrl_e_exports_with_focus_in_a_line_edit_a_table_or_a_cell_editor(make_window, qtbot):
    window = make_window()
    asked = []
    window.choose_save_path = lambda caption="", *rest, **options: asked.append(caption) or ""
    claim = _TakesCtrlE()

    def press(widget) -> None:
        assert QGuiApplication.focusObject() is widget
        count = len(asked)
        qtbot.keyClick(widget, Qt.Key.Key_E, Qt.KeyboardModifier.ControlModifier)
        assert asked[count:] == ["Export the map"], type(widget).__name__

    for widget in (window.findChild(QLineEdit, "coefficient_a"), window.findChild(QSpinBox, "domain_nx")):
        widget.installEventFilter(claim)      # before focus: the window's guard is installed on focus, after it
        widget.setFocus()
        press(widget)
    table = next(t for t in window.equation_panel.findChildren(QTableWidget) if t.rowCount() > 0)
    table.installEventFilter(claim)
    table.setFocus()
    press(table)
    table.setCurrentCell(0, 0)
    table.editItem(table.item(0, 0))
    editor = QGuiApplication.focusObject()
    assert isinstance(editor, QLineEdit) and editor.parent() is table.viewport()
    # The cell editor got focus (and the guard) as it opened: put the stand-in under the guard, as above.
    editor.removeEventFilter(window.window_wide_shortcuts)
    editor.installEventFilter(claim)
    editor.installEventFilter(window.window_wide_shortcuts)
    press(editor)
    assert window.document.undo_stack.count() == 0          # nothing was edited on the way


def test_the_stand_in_really_takes_ctrl_e_from_an_unguarded_window(qtbot):
    """The control for the test above: without the guard, a field that claims Ctrl+E keeps the command from
    running (what users saw under X11)."""
    plain = QMainWindow()
    qtbot.addWidget(plain)
    field = QLineEdit()
    plain.setCentralWidget(field)
    fired = []
    action = QAction("export", plain)
    action.setShortcut(QKeySequence("Ctrl+E"))
    action.triggered.connect(lambda: fired.append(1))
    plain.addAction(action)
    with qtbot.waitActive(plain, timeout=HANG_CEILING_MS):
        plain.show()
        plain.activateWindow()
    claim = _TakesCtrlE()
    field.installEventFilter(claim)
    field.setFocus()
    qtbot.keyClick(field, Qt.Key.Key_E, Qt.KeyboardModifier.ControlModifier)
    assert fired == []
    field.removeEventFilter(claim)
    qtbot.keyClick(field, Qt.Key.Key_E, Qt.KeyboardModifier.ControlModifier)
    assert fired == [1]


# -- the log ------------------------------------------------------------------------------------------------
def test_a_computation_adds_an_entry_with_its_grid_and_duration(make_window, qtbot):
    window = make_window(hump_project(nx=121, ny=81))
    log = window.computation_log
    first = [entry for entry in log.entries if entry.what == "Type map"]
    assert first and first[0].grid == "121 × 81 nodes" and first[0].outcome == DONE
    log.clock = _fake_clock(0.75)
    spin = window.findChild(QSpinBox, "domain_nx")
    spin.setFocus()
    qtbot.keyClick(spin, Qt.Key.Key_Up)                 # 121 -> 122 nodes across: a new map
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    maps = [entry for entry in log.entries if entry.what == "Type map"]
    assert len(maps) == 2
    newest = maps[-1]
    assert (newest.grid, newest.seconds, newest.outcome) == ("122 × 81 nodes", 0.75, DONE)
    fractions = window.analysis.type_map.fractions
    assert newest.detail.startswith(f"elliptic {100 * fractions['elliptic']:.1f} %")
    lines = [entry for entry in log.entries if entry.what == "Type-change lines"][-1]
    assert lines.grid == "122 × 81 nodes" and lines.seconds == 0.75 and re.fullmatch(r"\d+ lines?.*", lines.detail)
    row = _log_row(window, log.entries.index(newest))
    assert (row["what"], row["on"], row["took"], row["outcome"]) == ("Type map", "122 × 81 nodes", "750 ms", "done")


def _blocking_map(window, started: threading.Event):
    """Stand in for a long map on the map channel: runs until cancelled (the ceiling only against a hang)."""
    def work(cancel, progress):
        started.set()
        for _ in range(int(HANG_CEILING_S * 1000)):
            if cancel():
                raise Cancelled("map cancelled")
            threading.Event().wait(0.001)
        raise AssertionError("never cancelled")
    return window.runner.request("map", work, label="Classifying the grid")


def test_esc_logs_the_running_map_as_stopped_by_the_user(make_window, qtbot):
    window = make_window(hump_project(nx=121, ny=81), synchronous=False)
    started = threading.Event()
    _blocking_map(window, started)
    assert started.wait(HANG_CEILING_S)
    qtbot.keyClick(window, Qt.Key.Key_Escape)
    assert window.runner.wait_idle(HANG_CEILING_S)
    last = window.computation_log.entries[-1]
    assert (last.what, last.outcome, last.grid) == ("Type map", CANCELLED, "121 × 81 nodes")
    assert last.detail.startswith("stopped by the user") and last.seconds is not None and last.seconds >= 0
    assert _log_row(window, len(window.computation_log.entries) - 1)["outcome"] == "cancelled"


def test_a_map_replaced_by_a_newer_request_is_logged_with_that_reason(make_window):
    window = make_window(hump_project(nx=121, ny=81), synchronous=False)
    started = threading.Event()
    _blocking_map(window, started)
    assert started.wait(HANG_CEILING_S)
    window.analysis.refresh_all()
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    cancelled = [entry for entry in window.computation_log.entries if entry.outcome == CANCELLED]
    assert [entry.detail for entry in cancelled] == ["replaced by a newer request after an edit"]
    assert window.computation_log.entries[-1].outcome == DONE   # the newer map, lines or traces


def test_a_failure_is_logged_with_its_reason(make_window):
    window = make_window()

    def work(cancel, progress):
        raise ValueError("the grid has no nodes inside the data")

    window.runner.request("pockets", work)
    last = window.computation_log.entries[-1]
    assert (last.what, last.outcome, last.detail) == ("Hyperbolic pockets", FAILED,
                                                      "the grid has no nodes inside the data")


def test_a_changed_data_file_is_a_warning_in_the_log(make_window, tmp_path):
    folder = tmp_path / "data"
    folder.mkdir()
    data = Path(shutil.copy(DEMO_DATA / "bump_flow.npz", folder / "bump_flow.npz"))
    window = make_window(hump_project(nx=41, ny=31))
    window.add_data_file(data)
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.save_to(tmp_path / "study.mixtype.json")
    with np.load(data) as archive:
        arrays = {name: archive[name] for name in archive.files}
    np.savez(data, **{**arrays, "u": arrays["u"] * 1.05})
    other = make_window(hump_project(nx=41, ny=31))
    assert other.open_path(tmp_path / "study.mixtype.json")
    warnings = [entry for entry in other.computation_log.entries if entry.outcome == WARNING]
    assert len(warnings) == 1 and "bump_flow.npz" in warnings[0].detail and "changed" in warnings[0].detail
    other.data_loader.reload()                          # the same warning again is not repeated
    assert [entry for entry in other.computation_log.entries if entry.outcome == WARNING] == warnings


def test_the_log_is_in_the_autosave_but_never_in_the_study_file(make_window, tmp_path, settings_folder):
    window = make_window()
    log = window.computation_log
    assert any(entry.what == "Type map" for entry in log.entries)
    study = tmp_path / "study.mixtype.json"
    assert window.save_to(study)
    text = study.read_text(encoding="utf-8")
    assert "Type map" not in text and "log" not in json.loads(text) and " × " not in text
    assert not recovery_log_path(window.preferences.recovery_path).exists()

    window.document.add_pin(0.5, 0.5)                   # unsaved work: the autosave writes both
    assert window.autosave()
    written = recovery_log_path(window.preferences.recovery_path)
    assert written.parent == settings_folder
    saved = json.loads(written.read_text(encoding="utf-8"))["entries"]
    assert [LogEntry.from_json(item) for item in saved] == log.entries
    assert "Type map" not in window.preferences.recovery_path.read_text(encoding="utf-8")

    restored = make_window()
    restored.ask_restore = lambda path: True
    own = list(restored.computation_log.entries)
    assert restored.offer_recovery()
    entries = restored.computation_log.entries
    assert entries[:len(log.entries)] == log.entries
    marker = entries[len(log.entries)]
    assert marker.outcome == NOTE and marker.detail.startswith(f"the {len(log.entries)} entries above")
    assert entries[len(log.entries) + 1:len(log.entries) + 1 + len(own)] == own
    restored.remove_recovery()
    assert not written.exists()


def test_log_entries_read_back_only_when_well_formed_and_repeats_merge(make_window):
    good = LogEntry(at="2024-03-01T10:00:00", what="Type map", outcome=DONE, grid="3 × 2 nodes", seconds=0.5)
    assert LogEntry.from_json(good.to_json()) == good
    for bad in ([], {"outcome": "exploded"}, {**good.to_json(), "seconds": "fast"},
                {**good.to_json(), "repeats": 0}, {**good.to_json(), "grid": 3}):
        assert LogEntry.from_json(bad) is None
    assert [duration_text(s) for s in (None, 0.0123, 2.414, 185)] == ["", "12 ms", "2.41 s", "3 min 05 s"]

    window = make_window()
    log = window.computation_log
    log.clear()
    replaced = LogEntry(at="", what="Type map", outcome=CANCELLED, grid="3 × 2 nodes", seconds=0.1,
                        detail="replaced by a newer request after an edit")
    for _ in range(3):
        log.add(replaced)
    assert len(log.entries) == 1 and log.entries[0].repeats == 3
    assert _log_row(window, 0)["what"] == "Type map (×3)"
    for number in range(MAX_ENTRIES + 5):
        log.note("Data files", f"warning {number}", WARNING)
    assert len(log.entries) == MAX_ENTRIES and log.entries[-1].detail == f"warning {MAX_ENTRIES + 4}"
    assert window.findChild(QDockWidget, "logDock").widget().table.rowCount() == MAX_ENTRIES
