"""Mixtype's main window: the map takes most of it; the study's panels on the left, pins, pockets, the parameter
sweep, the Cauchy problem and the exact analysis below it.

Lays out the widgets and wires the document (edits, undo), the analysis (background results) and the widgets
together. Its commands live beside it: gui.file_commands (new, open, recent, save, autosave, recovery),
gui.export_commands (pictures, CSV tables, the results document) and gui.window_menus (menus, shortcuts).
Dialogs go through small ``ask_*`` / ``choose_*`` methods so tests can answer them.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from PySide6.QtCore import Qt, QTimer
from PySide6.QtGui import QCloseEvent
from PySide6.QtWidgets import (
    QApplication,
    QDockWidget,
    QFileDialog,
    QLabel,
    QMainWindow,
    QMessageBox,
    QProgressBar,
    QPushButton,
    QScrollArea,
    QStyle,
    QVBoxLayout,
    QWidget,
)

from core.equations.templates import TemplateError, load_template
from core.project.model import Project, Seed
from gui.analysis import StudyAnalysis
from gui.cauchy_overlay import CauchyOverlay
from gui.certified_layer import CertifiedLayer
from gui.computation_log import ComputationLog
from gui.data_loading import DATA_FILTER, DataLoader, problem_text
from gui.document import Document
from gui.export_commands import ExportCommands
from gui.field_layer import FieldLayer
from gui.file_commands import FileCommands
from gui.help import ABOUT_TEXT, CAUTION
from gui.jobs import JobRunner
from gui.map_view import MAX_STRETCH, MapView
from gui.panels.cauchy import CauchyPanel
from gui.panels.data import DataPanel
from gui.panels.domain import DomainPanel
from gui.panels.equation import EquationPanel
from gui.panels.exact import ExactPanel
from gui.panels.layers import LayersPanel
from gui.panels.log import LogPanel
from gui.panels.notes import NotesPanel
from gui.panels.pins import PinsPanel
from gui.panels.pockets import PocketsPanel
from gui.panels.sweep import SweepPanel
from gui.panels.template_dialog import TemplateChoice, TemplateDialog, template_equation
from gui.preferences import Preferences
from gui.project_bridge import scratch_project
from gui.settled_edits import UnappliedNote
from gui.status_words import ScreenWords, grid_words, parameter_words
from gui.window_menus import WindowMenus

__all__ = ["ABOUT_TEXT", "CAUTION", "LAYOUT_VERSION", "MainWindow"]

LAYOUT_VERSION = 4     # saved panel layouts of other versions are not restored (4: the Cauchy and exact tabs)

CHANNEL_NAMES = ("map", "lines", "characteristics", "probes", "pockets", "data", "data-add", "certified",
                 "report")


class MainWindow(FileCommands, ExportCommands, WindowMenus, QMainWindow):
    """The whole study window. ``synchronous`` computes on the calling thread (tests, headless render)."""

    def __init__(self, project: Project | None = None, *, path: str | Path | None = None,
                 preferences: Preferences | None = None, synchronous: bool = False,
                 autosave_ms: int = 30_000) -> None:
        super().__init__()
        self.preferences = preferences or Preferences()
        self.document = Document(project or scratch_project(), self)
        if path is not None:
            self.document.set_path(path)
        self.runner = JobRunner(self, synchronous=synchronous)
        self.computation_log = ComputationLog(self.document, self.runner, self)
        self.analysis = StudyAnalysis(self.document, self.runner, self)
        self.data_loader = DataLoader(self.document, self.runner, self)
        self.computation_log.follow(self.analysis, self.data_loader)
        self._pin_drag_key = ""

        self.map_view = MapView()
        self.map_view.setToolTip("")
        self.notice = QLabel()
        self.notice.setObjectName("notice")
        self.notice.setWordWrap(True)
        self.notice.setStyleSheet("QLabel { color: #B00020; padding: 2px 6px; }")
        self.notice.setVisible(False)
        self._error_shown = False
        self.data_notice = QLabel()
        self.data_notice.setObjectName("dataNotice")
        self.data_notice.setWordWrap(True)
        self.data_notice.setStyleSheet("QLabel { color: #5C3B00; background: #FFF1CC; border: 1px solid #E0B85C;"
                                       " padding: 3px 6px; }")
        self.data_notice.setVisible(False)
        # Notices sit under the map, outside the map view: they never cover it and never enter its exports.
        self.map_column = QWidget()
        column = QVBoxLayout(self.map_column)
        column.setContentsMargins(0, 0, 0, 0)
        column.setSpacing(0)
        self.unapplied_note = UnappliedNote(self.document)
        column.addWidget(self.map_view, 1)
        column.addWidget(self.unapplied_note)
        column.addWidget(self.notice)
        column.addWidget(self.data_notice)
        self.setCentralWidget(self.map_column)

        self.equation_panel = EquationPanel(self.document)
        self.domain_panel = DomainPanel(self.document)
        self.pins_panel = PinsPanel(self.document)
        self.layers_panel = LayersPanel(self.document)
        self.pockets_panel = PocketsPanel(self.document)
        self.notes_panel = NotesPanel(self.document)
        self.data_panel = DataPanel(self.document)
        self.sweep_panel = SweepPanel(self.document, self.runner)
        self.cauchy_panel = CauchyPanel(self.document, self.runner)
        self.exact_panel = ExactPanel(self.document, self.runner)
        # One column of the study's panels on the left (the equation above, the rest as tabs below it); pins,
        # pockets and sweep as tabs under the map. Every panel can be closed and reopened from the View menu.
        left, bottom = Qt.DockWidgetArea.LeftDockWidgetArea, Qt.DockWidgetArea.BottomDockWidgetArea
        self.equation_dock = self._dock("Equation: coefficients, definitions, parameters", self.equation_panel,
                                        left, "equationDock", scroll=True)
        domain_dock = self._dock("Domain", self.domain_panel, left, "domainDock", scroll=True)
        self.data_dock = self._dock("Data", self.data_panel, left, "dataDock", scroll=True)
        notes_dock = self._dock("Notes", self.notes_panel, left, "notesDock", scroll=True)
        self.layers_dock = self._dock("Layers", self.layers_panel, left, "layersDock", scroll=True)
        log_dock = self._dock("Log", LogPanel(self.computation_log), left, "logDock")
        for dock in (self.data_dock, notes_dock, self.layers_dock, log_dock):
            self.tabifyDockWidget(domain_dock, dock)
        domain_dock.raise_()
        # The left column runs the full height; the pins, pockets and sweep sit under the map only.
        self.setCorner(Qt.Corner.BottomLeftCorner, left)
        self.setCorner(Qt.Corner.BottomRightCorner, Qt.DockWidgetArea.RightDockWidgetArea)
        self.pins_dock = self._dock("Pins: readouts at points", self.pins_panel, bottom, "pinsDock")
        self.pockets_dock = self._dock("Hyperbolic pockets of the map", self.pockets_panel, bottom, "pocketsDock")
        self.sweep_dock = self._dock("Parameter sweep", self.sweep_panel, bottom, "sweepDock")
        self.cauchy_dock = self._dock("Cauchy problem", self.cauchy_panel, bottom, "cauchyDock")
        self.exact_dock = self._dock("Exact analysis", self.exact_panel, bottom, "exactDock")
        # Docks beyond the first three under the map wait under the pins until the default layout tabs them:
        # side by side they would widen the window before it is first shown.
        self._tabbed_later = (self.cauchy_dock, self.exact_dock)
        for dock in self._tabbed_later:
            self.splitDockWidget(self.pins_dock, dock, Qt.Orientation.Vertical)
        self.pins_dock.dockLocationChanged.connect(
            lambda area: self.pins_panel.set_side_by_side(area in (bottom, Qt.DockWidgetArea.TopDockWidgetArea)))
        self.pins_panel.set_side_by_side(True)
        self._default_layout_pending = True

        self.hover_label = QLabel()
        self.hover_label.setObjectName("hoverReadout")
        self.screen_words = ScreenWords(self, self.hover_label)
        self.progress_text = QLabel()      # what is being computed: its own label, never wrapped or cut
        self.progress_text.setObjectName("progressText")
        self.progress_text.setVisible(False)
        self.progress = QProgressBar()
        self.progress.setRange(0, 1000)
        self.progress.setFormat("%p%")
        self.progress.setFixedWidth(120)
        self.progress.setVisible(False)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setToolTip("Stop the computation in progress (Esc)")
        self.cancel_button.clicked.connect(self.cancel_work)
        self.cancel_button.setVisible(False)
        self.field_layer = FieldLayer(self.map_view, self.document, self.analysis, self.runner, self)
        self.certified_layer = CertifiedLayer(self.map_view, self.analysis, self)
        self.cauchy_overlay = CauchyOverlay(self.map_view, self.field_layer, self.cauchy_panel, self)
        self.statusBar().addWidget(self.hover_label, 1)
        self.statusBar().addWidget(self.field_layer.readout)
        self.statusBar().addPermanentWidget(self.progress_text)
        self.statusBar().addPermanentWidget(self.progress)
        self.statusBar().addPermanentWidget(self.cancel_button)

        self._build_actions()
        self._connect()
        self._autosave = QTimer(self)
        self._autosave.setInterval(autosave_ms)
        self._autosave.timeout.connect(self.autosave)
        self._autosave.start()
        self.resize(1400, 880)
        self._update_title()
        self.data_loader.schedule()
        self._show_everything()

    # -- construction ---------------------------------------------------------------------------------------
    def _dock(self, title: str, widget: QWidget, area, name: str, *, scroll: bool = False) -> QDockWidget:
        dock = QDockWidget(title, self)
        dock.setObjectName(name)
        if scroll:
            holder = QScrollArea()
            holder.setWidgetResizable(True)
            holder.setWidget(widget)
            widget = holder
        dock.setWidget(widget)
        dock.setFeatures(QDockWidget.DockWidgetFeature.DockWidgetMovable
                         | QDockWidget.DockWidgetFeature.DockWidgetFloatable
                         | QDockWidget.DockWidgetFeature.DockWidgetClosable)
        self.addDockWidget(area, dock)
        return dock

    def showEvent(self, event) -> None:
        super().showEvent(event)
        if self._default_layout_pending:
            self._default_layout_pending = False
            self.apply_default_layout()

    def restoreState(self, state, version: int = LAYOUT_VERSION) -> bool:
        """Restore a saved panel layout of this LAYOUT_VERSION (others are ignored: the default layout stays)."""
        restored = super().restoreState(state, version)
        if restored:
            self._default_layout_pending = False
        return restored

    def apply_default_layout(self) -> None:
        """Give the map most of the window: the left column just wide enough for its panels (at most 42 % of
        the width), the pins, pockets and sweep about three tenths of the height."""
        # Tabified only once the window is shown: tabs made before in the bottom area leave a stray tab bar.
        self.tabifyDockWidget(self.pins_dock, self.pockets_dock)
        self.tabifyDockWidget(self.pockets_dock, self.sweep_dock)
        previous = self.sweep_dock
        for dock in self._tabbed_later:
            self.tabifyDockWidget(previous, dock)
            previous = dock
        self.pins_dock.raise_()
        width, height = self.width(), self.height()
        scroll_bar = self.style().pixelMetric(QStyle.PixelMetric.PM_ScrollBarExtent)
        needed = max(panel.minimumSizeHint().width() for panel in
                     (self.equation_panel, self.domain_panel, self.data_panel, self.notes_panel, self.layers_panel))
        left = min(round(0.42 * width), max(round(0.3 * width), needed + scroll_bar + 8))
        self.resizeDocks([self.equation_dock], [left], Qt.Orientation.Horizontal)
        self.resizeDocks([self.equation_dock], [round(0.5 * height)], Qt.Orientation.Vertical)
        self.resizeDocks([self.pins_dock], [max(190, min(340, round(0.3 * height)))], Qt.Orientation.Vertical)

    def _connect(self) -> None:
        d, a, m = self.document, self.analysis, self.map_view
        d.equation_changed.connect(self._equation_shown)
        d.parameters_changed.connect(self._update_titles)
        d.domain_changed.connect(self._domain_shown)
        d.pins_changed.connect(lambda: m.show_pins(d.project.pins, d.project.pins_shown()))
        d.seeds_changed.connect(lambda: m.show_seeds(d.project.seeds))
        d.layers_changed.connect(self._layers_shown)
        d.dirty_changed.connect(lambda dirty: self._update_title())
        d.path_changed.connect(lambda path: self._update_title())
        a.map_ready.connect(self._map_ready)
        a.lines_ready.connect(m.show_lines)
        a.characteristics_ready.connect(m.show_characteristics)
        a.trade_ready.connect(self.pins_panel.set_trade_readouts)
        a.probes_ready.connect(self.pins_panel.set_results)
        a.map_ready.connect(self.pockets_panel.mark_stale)
        a.pockets_ready.connect(self.pockets_panel.set_report)
        a.certified_ready.connect(self.pockets_panel.set_certified)
        self.pockets_panel.pocket_chosen.connect(self._pocket_chosen)
        self.pins_panel.selection_changed.connect(self.cauchy_panel.set_pin)
        self.exact_dock.visibilityChanged.connect(self.exact_panel.set_seen)
        self.equation_panel.template_requested.connect(self.template_dialog)
        self.data_loader.loaded.connect(self.data_panel.set_loaded)
        self.data_loader.loaded.connect(self._data_loaded)
        self.data_loader.message.connect(self.show_notice)
        self.data_loader.settled.connect(a.refresh_all)
        self.data_panel.add_requested.connect(self.add_data_dialog)
        self.data_panel.reload_requested.connect(self.data_loader.reload)
        d.data_changed.connect(self._equation_shown)
        self.screen_words.changed.connect(self._update_titles)
        d.undo_stack.indexChanged.connect(lambda index: self._clear_error())
        d.project_replaced.connect(self._clear_error)
        d.dirty_changed.connect(lambda dirty: dirty or self._clear_error())
        a.message.connect(self.show_notice)
        m.clicked.connect(self._pin_clicked_in)
        m.pin_clicked.connect(self._pin_chosen)
        m.pin_moved.connect(self._pin_dragged)
        m.segment_drawn.connect(self._segment_drawn)
        m.hovered.connect(a.request_hover)
        self.equation_panel.drag_started.connect(lambda: setattr(a, "dragging", True))
        self.equation_panel.drag_finished.connect(a.end_drag)
        self.layers_panel.mode_changed.connect(m.set_mode)
        self.runner.progressed.connect(self._progress)
        self.runner.busy_changed.connect(self._busy)
        self.runner.failed.connect(lambda channel, number, text: None)

    def _show_everything(self) -> None:
        project = self.document.project
        self._equation_shown()
        self.map_view.show_domain(self.document.domain)
        self.map_view.show_pins(project.pins, project.pins_shown())
        self.map_view.show_seeds(project.seeds)
        self._layers_shown()
        self.analysis.refresh_all()

    # -- reactions ------------------------------------------------------------------------------------------
    def _equation_shown(self) -> None:
        variables = self.document.equation.variables
        self.map_view.set_variables(*variables)
        self._update_titles()
        if self.document.data_pending:
            self.show_notice("")
        elif self.document.compiled is None:
            self.show_notice(f"Not recomputed: {self.document.compile_error}")
        else:
            self.show_notice("")

    def _update_titles(self) -> None:
        """The header: what the map on screen shows (its grid and parameters; a newer request's state)."""
        equation = self.document.equation
        shown = self.analysis.type_map
        values = parameter_words(equation, None if shown is None else shown.parameters)
        domain = self.document.domain
        title = f"Type of “{equation.name}” on “{domain.name}”"
        ratio = (domain.ymax - domain.ymin) / (domain.xmax - domain.xmin)
        scale = "" if 1 / MAX_STRETCH <= ratio <= MAX_STRETCH else \
            "; axes not to scale (angles on screen are stretched, readouts are exact)"
        grid = grid_words(None if shown is None else shown.domain, domain, computing=self.runner.is_busy("map"),
                          state=self.screen_words.map_state)
        subtitle = (f"{grid}; parabolic when |D|/(b² + 4|ac|) ≤ "
                    f"{self.document.tolerance:g}" + (f"; {', '.join(values)}" if values else "") + scale)
        self.map_view.set_titles(title, subtitle)

    def _domain_shown(self) -> None:
        previous = self.map_view._domain
        domain = self.document.domain
        same_box = previous is not None and (previous.xmin, previous.xmax, previous.ymin, previous.ymax) == \
            (domain.xmin, domain.xmax, domain.ymin, domain.ymax)
        self.map_view.show_domain(domain, fit=not same_box)
        self._update_titles()

    def _layers_shown(self) -> None:
        view = self.document.project.view
        self.map_view.set_layers(view)
        self.map_view.legend.setVisible(view.show_legend)

    def _map_ready(self, type_map) -> None:
        self.map_view.show_type_map(type_map)

    def _pocket_chosen(self, pocket) -> None:
        report = self.pockets_panel.report
        if pocket is None or report is None:
            self.map_view.highlight_pocket(None)
            return
        self.map_view.highlight_pocket(pocket, report.labels, report.type_map)

    # -- data -----------------------------------------------------------------------------------------------
    def choose_data_path(self) -> str:
        """Ask for a data file (tests replace this method)."""
        path, _ = QFileDialog.getOpenFileName(self, "Add a data file", self.preferences.last_folder(), DATA_FILTER)
        return path

    def add_data_dialog(self) -> None:
        path = self.choose_data_path()
        if path:
            self.add_data_file(path)

    def add_data_file(self, path: str | Path) -> None:
        """Read ``path`` in the background and add it to the study (undoable) once it loads."""
        self.data_loader.add_file(str(path))

    def _data_loaded(self, loaded) -> None:
        text = problem_text(loaded)
        self.data_notice.setText(text)
        self.data_notice.setVisible(bool(text))
        if text:
            self.statusBar().showMessage(text, 8000)
        self.data_dock.setWindowTitle(f"Data ({len(loaded.statuses)})" if loaded.statuses else "Data")

    # -- templates ------------------------------------------------------------------------------------------
    def choose_template(self) -> TemplateChoice | None:
        """Ask which template to add (tests replace this method)."""
        dialog = TemplateDialog(self.document.data_names, self)
        if dialog.exec() != TemplateDialog.DialogCode.Accepted:
            return None
        return dialog.choice()

    def template_dialog(self) -> bool:
        choice = self.choose_template()
        return self.add_template(choice) if choice is not None else False

    def add_template(self, choice: TemplateChoice | str) -> bool:
        """Add the template's equation (and its region, unless the study has one with the same bounds) and
        show both, as one undo step. With loaded data the template declares, they replace its formulas."""
        if isinstance(choice, str):
            choice = TemplateChoice(choice)
        try:
            template = load_template(choice.name)
            equation, hidden = template_equation(template, self.document.data_names, choice.use_data,
                                                 choice.clash)
        except TemplateError as error:
            self.report_error("Could not use the template", str(error))
            return False
        if hidden:
            self.report_error("Did not add the template", f"its formulas for {', '.join(hidden)} would hide the "
                              "loaded data of the same names; choose which to use in the template dialog")
            return False
        equation = replace(equation, name=template.title)
        domain = None if template.domain is None else replace(template.domain, name=f"{template.name} region")
        return self.document.add_equation_and_domain(equation, domain, f"Add equation from template {template.name}")

    def show_notice(self, text: str) -> None:
        self._error_shown = False
        self.notice.setText(text)
        self.notice.setVisible(bool(text))
        if text:
            self.statusBar().showMessage(text, 8000)

    def _pin_clicked_in(self, x: float, y: float) -> None:
        """A click on the map pins the point; the new pin is selected, shown in its table and read out."""
        if self.document.add_pin(x, y):
            self._pin_chosen(len(self.document.project.pins) - 1)

    def _pin_chosen(self, index: int) -> None:
        self.pins_panel.select(index)
        if self.pins_dock.isVisible() or self.pins_dock.isFloating():
            self.pins_dock.raise_()

    def _pin_dragged(self, index: int, x: float, y: float, finished: bool) -> None:
        if not self._pin_drag_key:
            self._pin_drag_key = self.document.new_merge_key("pin drag")
        self.document.move_pin(index, x, y, merge_key=self._pin_drag_key)
        if finished:
            self._pin_drag_key = ""

    def _segment_drawn(self, x0: float, y0: float, x1: float, y1: float) -> None:
        if (x0, y0) == (x1, y1):
            return
        seed = Seed(start=(x0, y0), end=(x1, y1), curves=self.layers_panel.seed_count.value(),
                    families=self.layers_panel.families())
        self.document.add_seed(seed)

    def _progress(self, channel: str, fraction: float, label: str) -> None:
        if channel not in CHANNEL_NAMES:
            return
        self.progress_text.setText(label)
        self.progress.setValue(round(1000 * fraction))

    def _busy(self, busy: bool) -> None:
        shown = busy and any(self.runner.is_busy(c) for c in CHANNEL_NAMES)
        self.progress.setVisible(shown)
        self.progress_text.setVisible(shown)
        self.cancel_button.setVisible(shown)

    def cancel_work(self) -> None:
        """Stop every background computation; what is on screen stays."""
        if self.runner.is_busy():
            self.computation_log.note_user_cancel()
            self.runner.cancel()
            self.statusBar().showMessage("Computation cancelled; the map shows the last finished result.", 6000)

    # -- lifecycle ------------------------------------------------------------------------------------------
    def closeEvent(self, event: QCloseEvent) -> None:
        if not self.may_discard():
            event.ignore()
            return
        self.runner.cancel()
        self.remove_recovery()
        self.preferences.set_window_state(self.saveGeometry(), self.saveState(LAYOUT_VERSION))
        event.accept()

    def report_error(self, title: str, text: str) -> None:
        """Say what failed under the map (until the next successful action) and, on a desktop, in a box."""
        self.show_notice(f"{title}: {text}")
        self._error_shown = True
        if QApplication.platformName() != "offscreen":
            QMessageBox.warning(self, title, text)

    def _clear_error(self) -> None:
        """A successful action (an edit, undo, save, another study) retires the last failure's notice."""
        if self._error_shown:
            self.show_notice("")
