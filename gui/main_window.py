"""Mixtype's main window: the map in the middle, the equation and domain on the left, pins and layers right.

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
    QWidget,
)

from core.equations.templates import TemplateError, load_template
from core.project.model import Project, Seed
from gui.analysis import StudyAnalysis
from gui.computation_log import ComputationLog
from gui.data_loading import DATA_FILTER, DataLoader, problem_text
from gui.document import Document
from gui.export_commands import ExportCommands
from gui.file_commands import FileCommands
from gui.help import ABOUT_TEXT, CAUTION
from gui.jobs import JobRunner
from gui.map_view import MAX_STRETCH, MapView
from gui.panels.data import DataPanel
from gui.panels.domain import DomainPanel
from gui.panels.equation import EquationPanel
from gui.panels.layers import LayersPanel
from gui.panels.log import LogPanel
from gui.panels.notes import NotesPanel
from gui.panels.pins import PinsPanel, main_trade_text
from gui.panels.pockets import PocketsPanel
from gui.panels.template_dialog import TemplateChoice, TemplateDialog
from gui.preferences import Preferences
from gui.project_bridge import scratch_project
from gui.window_menus import WindowMenus

__all__ = ["ABOUT_TEXT", "CAUTION", "MainWindow"]

CHANNEL_NAMES = ("map", "lines", "characteristics", "probes", "pockets", "data", "data-add")


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
        self.map_view.layout().insertWidget(2, self.notice)
        self.data_notice = QLabel()
        self.data_notice.setObjectName("dataNotice")
        self.data_notice.setWordWrap(True)
        self.data_notice.setStyleSheet("QLabel { color: #5C3B00; background: #FFF1CC; border: 1px solid #E0B85C;"
                                       " padding: 3px 6px; }")
        self.data_notice.setVisible(False)
        self.map_view.layout().insertWidget(3, self.data_notice)
        self.setCentralWidget(self.map_view)

        self.equation_panel = EquationPanel(self.document)
        self.domain_panel = DomainPanel(self.document)
        self.pins_panel = PinsPanel(self.document)
        self.layers_panel = LayersPanel(self.document)
        self.pockets_panel = PocketsPanel(self.document)
        self.notes_panel = NotesPanel(self.document)
        self.data_panel = DataPanel(self.document)
        left, right = Qt.DockWidgetArea.LeftDockWidgetArea, Qt.DockWidgetArea.RightDockWidgetArea
        self._dock("Equation: coefficients, definitions, parameters", self.equation_panel, left, "equationDock",
                   scroll=True)
        domain_dock = self._dock("Domain and grid", self.domain_panel, left, "domainDock")
        self.data_dock = self._dock("Data files", self.data_panel, left, "dataDock")
        notes_dock = self._dock("Notes", self.notes_panel, left, "notesDock")
        self.tabifyDockWidget(domain_dock, self.data_dock)
        self.tabifyDockWidget(domain_dock, notes_dock)
        log_dock = self._dock("Log of computations", LogPanel(self.computation_log), left, "logDock")
        self.tabifyDockWidget(domain_dock, log_dock)
        domain_dock.raise_()
        pins_dock = self._dock("Pins: readouts at points", self.pins_panel, right, "pinsDock")
        self._dock("Layers and mouse tool", self.layers_panel, right, "layersDock", scroll=True)
        # The side columns run the full height; the pockets table sits under the map only.
        self.setCorner(Qt.Corner.BottomLeftCorner, left)
        self.setCorner(Qt.Corner.BottomRightCorner, right)
        pockets_dock = self._dock("Hyperbolic pockets of the map", self.pockets_panel,
                                  Qt.DockWidgetArea.BottomDockWidgetArea, "pocketsDock")
        self.resizeDocks([pockets_dock], [150], Qt.Orientation.Vertical)
        self.resizeDocks([pins_dock], [380], Qt.Orientation.Horizontal)

        self.hover_label = QLabel("Move over the map to read the type and D at a point.")
        self.hover_label.setObjectName("hoverReadout")
        self.progress = QProgressBar()
        self.progress.setRange(0, 1000)
        self.progress.setMaximumWidth(220)
        self.progress.setVisible(False)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setToolTip("Stop the computation in progress (Esc)")
        self.cancel_button.clicked.connect(self.cancel_work)
        self.cancel_button.setVisible(False)
        self.statusBar().addWidget(self.hover_label, 1)
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
                         | QDockWidget.DockWidgetFeature.DockWidgetFloatable)
        self.addDockWidget(area, dock)
        return dock

    def _connect(self) -> None:
        d, a, m = self.document, self.analysis, self.map_view
        d.equation_changed.connect(self._equation_shown)
        d.parameters_changed.connect(self._update_titles)
        d.domain_changed.connect(self._domain_shown)
        d.pins_changed.connect(lambda: m.show_pins(d.project.pins))
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
        self.pockets_panel.pocket_chosen.connect(self._pocket_chosen)
        self.equation_panel.template_requested.connect(self.template_dialog)
        self.data_loader.loaded.connect(self.data_panel.set_loaded)
        self.data_loader.loaded.connect(self._data_loaded)
        self.data_loader.message.connect(self.show_notice)
        self.data_loader.settled.connect(a.refresh_all)
        self.data_panel.add_requested.connect(self.add_data_dialog)
        self.data_panel.reload_requested.connect(self.data_loader.reload)
        d.data_changed.connect(self._equation_shown)
        a.hover_ready.connect(self._show_hover)
        a.message.connect(self.show_notice)
        m.clicked.connect(lambda x, y: d.add_pin(x, y))
        m.pin_clicked.connect(self.pins_panel.select)
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
        self.map_view.show_pins(project.pins)
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
        equation = self.document.equation
        values = []
        for name, parameter in equation.parameters.items():
            unit = f" {parameter.unit}" if parameter.unit else ""
            values.append(f"{name} = {parameter.value:.4g}{unit}")
        domain = self.document.domain
        title = f"Type of “{equation.name}” on “{domain.name}”"
        ratio = (domain.ymax - domain.ymin) / (domain.xmax - domain.xmin)
        scale = "" if 1 / MAX_STRETCH <= ratio <= MAX_STRETCH else \
            "; axes not to scale (angles on screen are stretched, readouts are exact)"
        subtitle = (f"{domain.nx} × {domain.ny} grid nodes; parabolic when |D|/(b² + 4|ac|) ≤ "
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

    def _show_hover(self, reading) -> None:
        x_name, y_name = self.document.equation.variables
        where = f"{x_name} = {reading.x:.5g}, {y_name} = {reading.y:.5g}"
        outside = "" if reading.inside else " (outside the domain)"
        d = "undefined" if reading.discriminant != reading.discriminant else f"{reading.discriminant:.5g}"
        trade = main_trade_text(reading.trade)
        trade = f"   |   {trade}" if trade else ""
        self.hover_label.setText(f"{where}{outside}   |   {reading.type.label}   |   D = {d} (units of b²){trade}")

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
        self.data_dock.setWindowTitle(f"Data files ({len(loaded.statuses)})" if loaded.statuses else "Data files")

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
            equation = template.equation
            usable = [name for name in template.quantities if name in self.document.data_names]
            if choice.use_data and usable:
                equation = template.equation_with_data(usable)
        except TemplateError as error:
            self.report_error("Could not use the template", str(error))
            return False
        equation = replace(equation, name=template.title)
        domain = None if template.domain is None else replace(template.domain, name=f"{template.name} region")
        return self.document.add_equation_and_domain(equation, domain, f"Add equation from template {template.name}")

    def show_notice(self, text: str) -> None:
        self.notice.setText(text)
        self.notice.setVisible(bool(text))
        if text:
            self.statusBar().showMessage(text, 8000)

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
        self.progress.setFormat(f"{label} %p%")
        self.progress.setValue(round(1000 * fraction))

    def _busy(self, busy: bool) -> None:
        shown = busy and any(self.runner.is_busy(c) for c in CHANNEL_NAMES)
        self.progress.setVisible(shown)
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
        self.preferences.set_window_state(self.saveGeometry(), self.saveState())
        event.accept()

    def report_error(self, title: str, text: str) -> None:
        self.show_notice(f"{title}: {text}")
        if QApplication.platformName() != "offscreen":
            QMessageBox.warning(self, title, text)

