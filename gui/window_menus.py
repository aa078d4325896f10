"""The window's menus and shortcuts: File, Edit, View and Help, built from the window's commands.

A mixin of gui.main_window.MainWindow: ``_build_actions`` runs once in its constructor, after the panels
exist (several actions act on them); ``_action`` makes one QAction for any slot. The View menu shows or hides
every panel (each can be closed, and its entry is ticked while it is shown); the Help menu's windows are
gui.help's; gui.window_shortcuts keeps Ctrl+E working whatever widget has focus.
"""

from __future__ import annotations

from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QDockWidget

import core
from gui.export_commands import TABLES
from gui.help import WindowHelp
from gui.widgets import scope_shortcut
from gui.window_shortcuts import WindowWideShortcuts

__all__ = ["WindowMenus"]


class WindowMenus:
    """Menus and actions of the study window (mixed into MainWindow, which is a QMainWindow)."""

    def _action(self, text: str, slot, *, shortcut=None, tip: str = "") -> QAction:
        action = QAction(text, self)
        if shortcut is not None:
            action.setShortcut(QKeySequence(shortcut))
        if tip:
            action.setToolTip(tip)
            action.setStatusTip(tip)
        action.triggered.connect(lambda checked=False: slot())
        return action

    def _build_actions(self) -> None:
        keys = QKeySequence.StandardKey
        menu = self.menuBar().addMenu("&File")
        self.new_action = self._action("&New study", self.new_study, shortcut=keys.New,
                                       tip="Start a new study from the built-in example")
        self.open_action = self._action("&Open…", self.open_dialog, shortcut=keys.Open, tip="Open a study file")
        self.save_action = self._action("&Save", self.save, shortcut=keys.Save, tip="Save the study")
        self.save_as_action = self._action("Save &as…", self.save_as, shortcut=keys.SaveAs,
                                           tip="Save the study under a new name")
        self.template_action = self._action("New &equation from template…", self.template_dialog,
                                            shortcut="Ctrl+Shift+N",
                                            tip="Add a ready-made equation of the trades to the study")
        self.add_data_action = self._action("Add &data file…", self.add_data_dialog,
                                            tip="Add a data file whose quantities equations can use")
        menu.addActions([self.new_action, self.template_action, self.open_action])
        self.recent_menu = menu.addMenu("Open &recent")
        menu.addActions([self.save_action, self.save_as_action])
        menu.addSeparator()
        menu.addAction(self.add_data_action)
        menu.addSeparator()
        export = menu.addMenu("&Export")
        self.export_picture_action = self._action("Map as picture (PNG, SVG, PDF)…", self.export_picture_dialog,
                                                  shortcut="Ctrl+E", tip="Save the map with its legend")
        export.addAction(self.export_picture_action)
        for name, text in TABLES.items():
            export.addAction(self._action(text, lambda name=name: self.export_table_dialog(name)))
        export.addAction(self._action("Everything as JSON…", self.export_json_dialog,
                                      tip="The whole study and its results in one JSON document"))
        export.addSeparator()
        self.export_report_action = self._action(
            "Study &report (HTML or PDF)…", self.export_report_dialog,
            tip="One document with the equation, caution, data files, maps, lines, pockets, pins and notes")
        export.addAction(self.export_report_action)
        menu.addSeparator()
        menu.addAction(self._action("&Quit", self.close, shortcut=keys.Quit, tip="Close Mixtype"))

        edit = self.menuBar().addMenu("&Edit")
        self.undo_action = self.document.undo_stack.createUndoAction(self, "&Undo")
        self.undo_action.setShortcut(QKeySequence(keys.Undo))
        self.redo_action = self.document.undo_stack.createRedoAction(self, "&Redo")
        self.redo_action.setShortcut(QKeySequence(keys.Redo))
        edit.addActions([self.undo_action, self.redo_action])
        edit.addSeparator()
        # Copy and Delete act on pins only from the pins panel or the map; elsewhere the keys are the widget's.
        edit.addAction(scope_shortcut(self._action("&Copy pin readouts", self.pins_panel.copy_text,
                                                   shortcut=keys.Copy, tip="Copy every pin's readout as text"),
                                      self.pins_panel, self.map_view))
        edit.addAction(scope_shortcut(self._action("&Delete selected pin", self.pins_panel.delete_selected,
                                                   shortcut=keys.Delete), self.pins_panel, self.map_view))
        edit.addAction(self._action("&Trace through selected pin", self.pins_panel.trace_selected,
                                    shortcut="Ctrl+T", tip="Draw both characteristics through the pin"))
        edit.addAction(self._action("Remove all characteristics", self.document.clear_seeds))

        view = self.menuBar().addMenu("&View")
        view.addAction(self._action("Zoom &in", lambda: self.map_view.view_box.scaleBy((0.8, 0.8)),
                                    shortcut=keys.ZoomIn))
        view.addAction(self._action("Zoom &out", lambda: self.map_view.view_box.scaleBy((1.25, 1.25)),
                                    shortcut=keys.ZoomOut))
        view.addAction(self._action("&Fit domain", self.map_view.fit_domain, shortcut="Ctrl+0"))
        view.addSeparator()
        view.addAction(self._action("&Recompute", self.analysis.refresh_all, shortcut=keys.Refresh))
        self.cancel_action = self._action("&Cancel computation", self.cancel_work, shortcut=keys.Cancel)
        view.addAction(self.cancel_action)
        self.addAction(self.cancel_action)
        view.addSeparator()
        self.panel_actions = {}
        for dock in self.findChildren(QDockWidget):
            # A panel that cannot be closed has its View entry greyed out: closable, the entry shows or hides it.
            dock.setFeatures(dock.features() | QDockWidget.DockWidgetFeature.DockWidgetClosable)
            toggle = dock.toggleViewAction()
            toggle.setStatusTip(f"Show or hide the panel “{dock.windowTitle()}”")
            self.panel_actions[dock.objectName()] = toggle
            view.addAction(toggle)

        self.help = WindowHelp(self)
        help_menu = self.menuBar().addMenu("&Help")
        self.guide_action = self._action("User &guide", self.help.show_guide, shortcut=keys.HelpContents,
                                         tip="What Mixtype answers and how to use the window (works offline)")
        help_menu.addAction(self.guide_action)
        help_menu.addAction(self._action("&Keyboard shortcuts", self.help.show_shortcuts,
                                         tip="Every key the window answers to"))
        help_menu.addSeparator()
        help_menu.addAction(self._action("What the results are &for (caution)", self.help.show_caution))
        help_menu.addAction(self._action(f"Copy &version details (Mixtype {core.__version__})",
                                         self.help.copy_version,
                                         tip="Mixtype's version and its libraries', for a bug report"))
        help_menu.addAction(self._action("&About Mixtype", self.help.show_about))
        self.window_wide_shortcuts = WindowWideShortcuts(self, [self.export_picture_action])
        self._refresh_recent_menu()
