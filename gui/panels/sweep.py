"""The sweep panel: how each type's area and the pockets' peak change as one parameter of the study moves.

Choose a parameter of the shown equation, its range and number of values (evenly or on a logarithmic scale)
and Run: core.analysis.sweep.run_sweep classifies the grid at every value off the GUI thread (the "sweep" job
channel, with progress and Cancel). The results are saved with the study through the document (one undo step
each run), as are the settings when they are edited (core.project.sweeps.SavedSweep: one sweep per study and
parameter). Two plots: the area of each type against the parameter (type colours of gui.palette, in units of
the variables' product), and the largest pocket peak of the study's peak quantity. Dashed vertical lines mark
the critical values saved with the sweep; a dotted one the parameter's current value. A click on either plot
sets the study's parameter to the value clicked (one undoable edit, as a slider step is). The panel draws
what core computed and computes nothing itself.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QCheckBox,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QProgressBar,
    QVBoxLayout,
    QWidget,
)

from core.analysis.classify import FRACTION_ORDER
from core.analysis.sweep import MAX_SWEEP_VALUES, run_sweep
from core.equations.equation import Parameter
from core.project.sweeps import SavedSweep
from core.results.readouts import peak_quantity
from gui.document import Document
from gui.jobs import JobRunner
from gui.palette import PIN_COLOUR, TYPE_COLOURS
from gui.settled_edits import SettledText
from gui.slider_scale import slider_scale
from gui.widgets import SteadyComboBox, SteadySpinBox, error_label, push_button, show_error

__all__ = ["CHANNEL", "DEFAULT_COUNT", "SweepPanel", "default_sweep", "rounded_value"]

CHANNEL = "sweep"
DEFAULT_COUNT = 41
CRITICAL_COLOUR = "#000000"
PEAK_COLOUR = "#CC79A7"         # reddish purple (Okabe-Ito): apart from every type colour


def default_sweep(study: tuple[str, str], name: str, parameter: Parameter) -> SavedSweep:
    """The settings a parameter starts with: its slider's range (logarithmic where its slider is), else half
    to one and a half times its value (-1 to 1 about 0)."""
    if parameter.minimum is not None and parameter.maximum is not None and parameter.minimum < parameter.maximum:
        low, high = parameter.minimum, parameter.maximum
        log = slider_scale(low, high, 1000).logarithmic
    else:
        value = parameter.value
        low, high = (-1.0, 1.0) if value == 0 else sorted((0.5 * value, 1.5 * value))
        log = False
    return SavedSweep(study, name, low, high, DEFAULT_COUNT, log)


def rounded_value(value: float, low: float, high: float, *, log: bool = False) -> float:
    """A clicked value rounded to about a thousandth of the plotted range (relative on a log scale), inside it."""
    value = min(max(value, low), high)
    if log:
        step = 10.0 ** math.floor(math.log10(value) - 3)
    else:
        step = 10.0 ** math.floor(math.log10((high - low) / 1000))
    rounded = round(value / step) * step
    return float(f"{min(max(rounded, low), high):.12g}")


class SweepPanel(QWidget):
    """Runs, plots and saves the sweeps of the shown study; ``value_chosen`` when a plot click sets a value."""

    value_chosen = Signal(str, float)      # parameter, value set by a click on a plot

    def __init__(self, document: Document, runner: JobRunner, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.runner = runner
        self._job = 0
        self._updating = False
        self._parameter: str | None = None
        self.setToolTip("Sweep one parameter: the area of each type and the largest pocket peak at each value. "
                        "Click a plot to set the parameter there.")

        self.parameter = SteadyComboBox()
        self.parameter.setObjectName("sweepParameter")
        self.parameter.setToolTip("Which parameter of the shown equation to sweep")
        self.parameter.activated.connect(self._parameter_picked)
        self.low, self.high = QLineEdit(), QLineEdit()
        self.settling = {}
        for key, edit, tip in (("low", self.low, "The first value of the sweep"),
                               ("high", self.high, "The last value of the sweep")):
            edit.setObjectName(f"sweep_{key}")
            edit.setToolTip(tip)
            edit.setMaximumWidth(120)
            self.settling[key] = SettledText(edit)
            self.settling[key].settled.connect(self._apply_settings)
        self.count = SteadySpinBox()
        self.count.setObjectName("sweepCount")
        self.count.setRange(2, MAX_SWEEP_VALUES)
        self.count.setKeyboardTracking(False)
        self.count.setToolTip(f"How many values, both ends included (2 to {MAX_SWEEP_VALUES}); each is one map")
        self.count.valueChanged.connect(self._apply_settings)
        self.log = QCheckBox("logarithmic")
        self.log.setObjectName("sweepLog")
        self.log.setToolTip("Spread the values evenly on a logarithmic scale (the range must be above 0)")
        self.log.toggled.connect(self._apply_settings)
        self.run_button = push_button("Run", "Classify the grid at every value, in the background", self.run)
        self.run_button.setObjectName("sweepRun")
        self.cancel_button = push_button("Cancel", "Stop the sweep; the plot keeps the last finished one",
                                         self.cancel)
        self.cancel_button.setObjectName("sweepCancel")
        self.cancel_button.setEnabled(False)
        self.progress = QProgressBar()
        self.progress.setObjectName("sweepProgress")
        self.progress.setRange(0, 1000)
        self.progress.setMaximumWidth(170)
        self.progress.setVisible(False)
        self.parameter.setSizeAdjustPolicy(SteadyComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.parameter.setMinimumContentsLength(8)
        form = QFormLayout()
        form.setContentsMargins(0, 0, 0, 0)
        form.addRow("parameter", self.parameter)
        form.addRow("from", self.low)
        form.addRow("to", self.high)
        form.addRow("values", self.count)
        form.addRow("", self.log)
        buttons = QHBoxLayout()
        buttons.addWidget(self.run_button)
        buttons.addWidget(self.cancel_button)
        controls = QVBoxLayout()
        controls.addLayout(form)
        controls.addLayout(buttons)
        controls.addWidget(self.progress)
        controls.addStretch(1)
        self.summary = QLabel("")
        self.summary.setObjectName("sweepSummary")
        self.summary.setWordWrap(True)
        self.error = error_label()

        self.plots = pg.GraphicsLayoutWidget()
        self.plots.setObjectName("sweepPlots")
        self.plots.setBackground("w")
        self.area_plot = self.plots.addPlot(row=0, col=0)
        self.peak_plot = self.plots.addPlot(row=0, col=1)
        self.legend = self.area_plot.addLegend(offset=(6, 4), colCount=2,
                                               labelTextSize="8pt")
        for plot in (self.area_plot, self.peak_plot):
            plot.showGrid(x=True, y=True, alpha=0.25)
            plot.setMenuEnabled(False)
            for side in ("bottom", "left"):
                plot.getAxis(side).enableAutoSIPrefix(False)     # no "(x0.001)" beside a dimensionless name
        self.area_curves: dict[str, pg.PlotDataItem] = {}
        for code in FRACTION_ORDER:
            curve = self.area_plot.plot([], [], pen=pg.mkPen(TYPE_COLOURS[code], width=2.2), name=code.label,
                                        symbol="o", symbolSize=4, symbolBrush=TYPE_COLOURS[code],
                                        symbolPen=None)
            self.area_curves[code.label] = curve
        self.peak_curve = self.peak_plot.plot([], [], pen=pg.mkPen(PEAK_COLOUR, width=2.2), symbol="o",
                                              symbolSize=4, symbolBrush=PEAK_COLOUR, symbolPen=None,
                                              connect="finite")
        self.critical_lines: list[tuple[pg.PlotItem, pg.InfiniteLine]] = []
        self.now_lines = [pg.InfiniteLine(angle=90, pen=pg.mkPen(PIN_COLOUR, width=1.5, style=Qt.PenStyle.DotLine))
                          for _ in range(2)]
        for plot, line in zip((self.area_plot, self.peak_plot), self.now_lines, strict=True):
            plot.addItem(line, ignoreBounds=True)
        self.plots.scene().sigMouseClicked.connect(self._plot_clicked)

        results = QVBoxLayout()
        results.addWidget(self.summary)
        results.addWidget(self.error)
        results.addWidget(self.plots, 1)
        layout = QHBoxLayout(self)
        layout.addLayout(controls)
        layout.addLayout(results, 1)
        runner.progressed.connect(self._progressed)
        runner.finished.connect(self._finished)
        runner.failed.connect(self._failed)
        runner.cancelled.connect(self._cancelled)
        document.project_replaced.connect(self._forget)
        document.equation_changed.connect(self.refresh)
        document.equations_listed.connect(self.refresh)
        document.domain_changed.connect(self.refresh)
        document.parameters_changed.connect(self._show_now)
        document.sweeps_changed.connect(self.refresh)
        self.refresh()

    # -- what is shown --------------------------------------------------------------------------------------
    @property
    def study(self) -> tuple[str, str]:
        return self.document.project.shown_study

    def current(self) -> SavedSweep | None:
        """The sweep the panel shows: the study's saved sweep of the chosen parameter, else its default
        settings (not in the study until edited or run); None when the equation has no parameters."""
        parameters = self.document.equation.parameters
        if self._parameter not in parameters:
            return None
        for sweep in self.document.project.sweeps_of(*self.study):
            if sweep.parameter == self._parameter:
                return sweep
        return default_sweep(self.study, self._parameter, parameters[self._parameter])

    def _forget(self) -> None:
        self._parameter = None
        for settling in self.settling.values():
            settling.forget_draft()

    def refresh(self) -> None:
        """Show the study's parameters, the chosen sweep's settings and its results."""
        parameters = list(self.document.equation.parameters)
        if self._parameter not in parameters:
            saved = [s.parameter for s in self.document.project.sweeps_of(*self.study) if s.parameter in parameters]
            self._parameter = saved[-1] if saved else (parameters[0] if parameters else None)
            for settling in self.settling.values():
                settling.forget_draft()
        sweep = None
        self._updating = True
        try:
            self.parameter.clear()
            self.parameter.addItems(parameters)
            if self._parameter is not None:
                self.parameter.setCurrentIndex(parameters.index(self._parameter))
            sweep = self.current()
            for widget in (self.parameter, self.low, self.high, self.count, self.log, self.run_button):
                widget.setEnabled(sweep is not None)
            if sweep is not None:
                self.settling["low"].show(f"{sweep.low:.10g}")
                self.settling["high"].show(f"{sweep.high:.10g}")
                self.count.setValue(sweep.count)
                self.log.setChecked(sweep.log)
        finally:
            self._updating = False
        self.run_button.setEnabled(sweep is not None and not self.runner.is_busy(CHANNEL))
        self._plot(sweep)

    def _axis_labels(self, sweep: SavedSweep | None, quantity: str | None) -> None:
        first, second = self.document.equation.variables
        name = "" if sweep is None else sweep.parameter
        parameter = self.document.equation.parameters.get(name)
        unit = (parameter.unit if parameter is not None else "") or "dimensionless"
        for plot in (self.area_plot, self.peak_plot):
            plot.setLabel("bottom", f"{name} ({unit})" if name else "")
            plot.setLogMode(x=bool(sweep is not None and sweep.log), y=False)
        # titles rather than left labels: the plots are short, and a rotated label would be cut
        self.area_plot.setTitle(f"area of each type ({first} unit × {second} unit)", size="9pt")
        self.peak_plot.setTitle(f"largest pocket peak of {quantity}" if quantity else
                                "largest pocket peak (the equation names no peak quantity)", size="9pt")

    def _plot(self, sweep: SavedSweep | None) -> None:
        rows = () if sweep is None or sweep.rows is None else sweep.rows
        values = np.array([row.value for row in rows], dtype=np.float64)
        self.legend.clear()
        for label, curve in self.area_curves.items():
            areas = np.array([row.areas[label] for row in rows], dtype=np.float64)
            shown = label in ("elliptic", "hyperbolic") or bool(np.any(areas > 0))
            curve.setData(values if shown else [], areas if shown else [])
            curve.setVisible(shown)
            if shown:
                self.legend.addItem(curve, label)
        quantities = [row.peak["quantity"] for row in rows if row.peak is not None]
        peaks = np.array([np.nan if row.peak is None else row.peak["value"] for row in rows], dtype=np.float64)
        if np.isfinite(peaks).any():
            self.peak_curve.setData(values, peaks, connect="finite")
        else:
            self.peak_curve.setData([], [])
        quantity = quantities[0] if quantities else self._peak_quantity()
        self._axis_labels(sweep, quantity)
        for plot, line in self.critical_lines:
            plot.removeItem(line)
        self.critical_lines = []
        for critical in () if sweep is None or sweep.critical is None else sweep.critical:
            for plot in (self.area_plot, self.peak_plot):
                line = pg.InfiniteLine(pos=critical.value, angle=90, movable=False,
                                       pen=pg.mkPen(CRITICAL_COLOUR, width=1.2, style=Qt.PenStyle.DashLine),
                                       label=f"{critical.type} {critical.event}\n{critical.value:.5g}",
                                       labelOpts={"position": 0.85, "color": CRITICAL_COLOUR, "fill": "#FFFFFFC0"})
                if sweep.log:
                    line.setPos(math.log10(critical.value))
                plot.addItem(line, ignoreBounds=True)
                self.critical_lines.append((plot, line))
        self.summary.setText(self._summary_text(sweep, rows))
        self._show_now()
        for plot in (self.area_plot, self.peak_plot):
            plot.enableAutoRange()

    def _peak_quantity(self) -> str | None:
        compiled = self.document.compiled
        return None if compiled is None else peak_quantity(self.document.equation, compiled, self.document.data_names)

    def _summary_text(self, sweep: SavedSweep | None, rows) -> str:
        if sweep is None:
            return "The shown equation has no parameter to sweep."
        scale = "on a logarithmic scale" if sweep.log else "evenly spaced"
        settings = f"{sweep.count} values of {sweep.parameter} from {sweep.low:g} to {sweep.high:g}, {scale}"
        if not rows:
            return f"{settings}. Not run yet: press Run."
        pockets = [row.pockets for row in rows]
        text = (f"Last run: {len(rows)} values from {rows[0].value:g} to {rows[-1].value:g}; hyperbolic pockets "
                f"{min(pockets)} to {max(pockets)}")
        if sweep.critical:
            marks = ", ".join(f"{c.type} {c.event} at {c.value:.5g}" for c in sweep.critical)
            text += f"; critical values: {marks}"
        elif sweep.critical is not None:
            text += "; no critical value in the range"
        return text + f". Settings: {settings}."

    def _show_now(self) -> None:
        """The dotted line at the parameter's current value."""
        sweep = self.current()
        parameter = None if sweep is None else self.document.equation.parameters.get(sweep.parameter)
        for line in self.now_lines:
            visible = parameter is not None and (not sweep.log or parameter.value > 0)
            line.setVisible(visible)
            if visible:
                line.setPos(math.log10(parameter.value) if sweep.log else parameter.value)

    # -- settings -------------------------------------------------------------------------------------------
    def _parameter_picked(self, index: int) -> None:
        names = list(self.document.equation.parameters)
        if 0 <= index < len(names):
            self._parameter = names[index]
            for settling in self.settling.values():
                settling.forget_draft()
            self.refresh()

    def _settings(self) -> SavedSweep:
        """The sweep with the fields' settings (ValueError saying which field is wrong)."""
        sweep = self.current()
        if sweep is None:
            raise ValueError("the shown equation has no parameter to sweep")
        ends = {}
        for key in ("low", "high"):
            text = self.settling[key].edit.text()
            try:
                ends[key] = float(text)
            except ValueError:
                raise ValueError(f"{'from' if key == 'low' else 'to'}: {text!r} is not a number") from None
        return replace(sweep, low=ends["low"], high=ends["high"], count=self.count.value(), log=self.log.isChecked())

    def _apply_settings(self, *args) -> SavedSweep | None:
        """Save the fields' settings in the study (keeping the last results); show what is wrong instead."""
        if self._updating:
            return None
        try:
            sweep = self._settings()
        except ValueError as error:
            show_error(self.error, f"Sweep settings: {error}")
            return None
        show_error(self.error, "")
        if sweep != self.current():
            self.document.set_sweep(sweep, f"Sweep {sweep.parameter} from {sweep.low:g} to {sweep.high:g} "
                                           f"({sweep.count} values{', logarithmic' if sweep.log else ''})")
        return sweep

    # -- running --------------------------------------------------------------------------------------------
    def run(self) -> int:
        """Start the sweep of the fields' settings in the background; returns the job number (0: not started)."""
        sweep = self._apply_settings()
        compiled = self.document.compiled
        if sweep is None:
            return 0
        if compiled is None or self.document.data_pending:
            reason = "the data files are still loading" if compiled is not None else self.document.compile_error
            show_error(self.error, f"Cannot sweep: {reason}")
            return 0
        document = self.document
        domain, data, tolerance = document.domain, document.data, document.tolerance
        parameters = document.equation.parameter_values()
        quantity = peak_quantity(document.equation, compiled, document.data_names)
        values = sweep.values()

        def work(cancel, progress):
            return sweep, run_sweep(compiled, domain, sweep.parameter, values, parameters=parameters, data=data,
                                    tolerance=tolerance, quantity=quantity, cancel=cancel, progress=progress,
                                    log=sweep.log)

        self._job = self.runner.request(CHANNEL, work, label=f"Sweeping {sweep.parameter}")
        if self.runner.is_busy(CHANNEL):
            self._busy(True)
        return self._job

    def cancel(self) -> None:
        self.runner.cancel(CHANNEL)

    def _busy(self, busy: bool) -> None:
        self.progress.setVisible(busy)
        self.progress.setValue(0)
        self.cancel_button.setEnabled(busy)
        self.run_button.setEnabled(not busy and self.current() is not None)

    def _progressed(self, channel: str, fraction: float, label: str) -> None:
        if channel == CHANNEL:
            self.progress.setValue(round(1000 * fraction))

    def _finished(self, channel: str, number: int, result) -> None:
        if channel != CHANNEL:
            return
        self._busy(False)
        started, computed = result
        saved = next((s for s in self.document.project.sweeps if s.key == started.key), started)
        after = replace(saved, low=started.low, high=started.high, count=started.count, log=started.log,
                        rows=computed.rows)
        try:
            self.document.set_sweep(after, f"Run the sweep of {started.parameter} ({len(computed.rows)} values)")
        except ValueError as error:       # the study was renamed or replaced while the sweep ran
            show_error(self.error, f"The sweep's results were not kept: {error}")

    def _failed(self, channel: str, number: int, text: str) -> None:
        if channel == CHANNEL:
            self._busy(False)
            show_error(self.error, f"The sweep failed: {text}")

    def _cancelled(self, channel: str, number: int) -> None:
        if channel == CHANNEL and not self.runner.is_busy(CHANNEL):
            self._busy(False)
            self.summary.setText("Sweep cancelled; the plot shows the last finished sweep.")

    # -- clicks ---------------------------------------------------------------------------------------------
    def _plot_clicked(self, event) -> None:
        if event.button() != Qt.MouseButton.LeftButton:
            return
        for plot in (self.area_plot, self.peak_plot):
            box = plot.getViewBox()
            if box.sceneBoundingRect().contains(event.scenePos()):
                self.choose_value(box.mapSceneToView(event.scenePos()).x())
                event.accept()
                return

    def choose_value(self, x: float) -> bool:
        """Set the swept parameter to the plot's value ``x`` (log10 of the value on a logarithmic axis), rounded
        and kept within the sweep's range: one undoable edit. False when there is nothing to set."""
        sweep = self.current()
        if sweep is None or not math.isfinite(x):
            return False
        value = 10.0 ** x if sweep.log else x
        rows = sweep.rows or ()
        low = min([sweep.low, *(row.value for row in rows)])
        high = max([sweep.high, *(row.value for row in rows)])
        value = rounded_value(value, low, high, log=sweep.log)
        changed = self.document.set_parameter_value(sweep.parameter, value)
        if changed:
            self.value_chosen.emit(sweep.parameter, value)
        return changed
