"""The sweep panel: how each type's area and the pockets' peak change as one parameter of the study moves.

Choose a parameter of the shown equation, its range and number of values (evenly or on a logarithmic scale)
and Run: core.analysis.sweep.run_sweep classifies the grid at every value off the GUI thread, with progress and
Cancel. "Find critical values" runs core.analysis.critical.find_critical_values over the same range: the values
where a hyperbolic zone appears or vanishes, proven by certified maps where it can (gui.sweep_runs runs both and
keeps their results with the study through the document, one undo step each). The settings are saved when
edited (core.project.sweeps.SavedSweep: one sweep per study and parameter). The plots (gui.panels.sweep_plots) show the area of each type and the largest pocket peak
against the parameter, the critical values as dashed lines; a click on a plot sets the study's parameter to
the value clicked (one undoable edit, as a slider step is). The panel computes nothing itself.
"""

from __future__ import annotations

import math
from dataclasses import replace

from PySide6.QtCore import Signal
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

from core.analysis.sweep import MAX_SWEEP_VALUES
from core.equations.equation import Parameter
from core.project.sweeps import SavedSweep
from core.results.readouts import peak_quantity
from gui.document import Document
from gui.jobs import JobRunner
from gui.panels.sweep_plots import SweepPlots
from gui.settled_edits import SettledText
from gui.slider_scale import slider_scale
from gui.sweep_runs import CHANNEL, CRITICAL_CHANNEL, CRITICAL_TYPE, SweepRuns
from gui.widgets import SteadyComboBox, SteadySpinBox, error_label, push_button, show_error

__all__ = ["CHANNEL", "CRITICAL_CHANNEL", "CRITICAL_TYPE", "DEFAULT_COUNT", "SweepPanel", "default_sweep",
           "rounded_value"]

DEFAULT_COUNT = 41


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
    """A clicked value rounded to about a thousandth of the plotted range (four significant digits on a log
    scale), inside the range."""
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
        self.critical_button = push_button(
            "Find critical values", f"Search the range for the values where a {CRITICAL_TYPE} zone appears or "
            "vanishes (to 1e-9, proven by certified maps where they can), in the background", self.find_critical)
        self.critical_button.setObjectName("sweepCritical")
        self.cancel_button = push_button("Cancel", "Stop the sweep or the search; the plot keeps the last "
                                         "finished one", self.cancel)
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
        controls.addWidget(self.critical_button)
        controls.addWidget(self.progress)
        controls.addStretch(1)
        self.summary = QLabel("")
        self.summary.setObjectName("sweepSummary")
        self.summary.setWordWrap(True)
        self.error = error_label()

        self.plots = SweepPlots()
        self.area_plot, self.peak_plot = self.plots.plot_items
        self.area_curves, self.peak_curve = self.plots.area_curves, self.plots.peak_curve
        self.now_lines = self.plots.now_lines
        self.plots.clicked_at.connect(self.choose_value)

        results = QVBoxLayout()
        results.addWidget(self.summary)
        results.addWidget(self.error)
        results.addWidget(self.plots, 1)
        layout = QHBoxLayout(self)
        layout.addLayout(controls)
        layout.addLayout(results, 1)
        self.runs = SweepRuns(document, runner, self)
        self.runs.busy_changed.connect(self._busy)
        self.runs.progressed.connect(lambda fraction: self.progress.setValue(round(1000 * fraction)))
        self.runs.problem.connect(lambda text: show_error(self.error, text))
        self.runs.stopped.connect(self._stopped)
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
            for widget in (self.parameter, self.low, self.high, self.count, self.log):
                widget.setEnabled(sweep is not None)
            if sweep is not None:
                self.settling["low"].show(f"{sweep.low:.10g}")
                self.settling["high"].show(f"{sweep.high:.10g}")
                self.count.setValue(sweep.count)
                self.log.setChecked(sweep.log)
        finally:
            self._updating = False
        self._busy(self.runs.working())
        self._plot(sweep)

    def _plot(self, sweep: SavedSweep | None) -> None:
        parameter = None if sweep is None else self.document.equation.parameters.get(sweep.parameter)
        self.plots.show_sweep(sweep, variables=self.document.equation.variables,
                              unit="" if parameter is None else parameter.unit, quantity=self._peak_quantity())
        self.summary.setText(self._summary_text(sweep))
        self._show_now()

    @property
    def critical_lines(self):
        """(plot, line) pairs of the critical values drawn (gui.panels.sweep_plots)."""
        return self.plots.critical_lines

    def _peak_quantity(self) -> str | None:
        compiled = self.document.compiled
        return None if compiled is None else peak_quantity(self.document.equation, compiled, self.document.data_names)

    def _summary_text(self, sweep: SavedSweep | None) -> str:
        rows = () if sweep is None or sweep.rows is None else sweep.rows
        if sweep is None:
            return "The shown equation has no parameter to sweep."
        scale = "on a logarithmic scale" if sweep.log else "evenly spaced"
        settings = f"{sweep.count} values of {sweep.parameter} from {sweep.low:g} to {sweep.high:g}, {scale}"
        if rows:
            pockets = [row.pockets for row in rows]
            text = (f"Last run: {len(rows)} values from {rows[0].value:g} to {rows[-1].value:g}; hyperbolic "
                    f"pockets {min(pockets)} to {max(pockets)}")
        else:
            text = "Not run yet: press Run"
        if sweep.critical:
            marks = ", ".join(f"{c.type} {c.event} at {c.value:.6g}" for c in sweep.critical)
            text += f"; critical values: {marks}"
        elif sweep.critical is not None:
            text += "; no critical value in the range"
        proof = self.runs.proofs.get(sweep.key)
        if sweep.critical is not None and proof:
            text += f" ({proof})"
        return text + f". Settings: {settings}."

    def _show_now(self) -> None:
        """The dotted line at the parameter's current value."""
        sweep = self.current()
        parameter = None if sweep is None else self.document.equation.parameters.get(sweep.parameter)
        self.plots.show_now(None if parameter is None else parameter.value)

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
        """Save the fields' settings and sweep them in the background; the job number (0: not started)."""
        sweep = self._apply_settings()
        return 0 if sweep is None else self.runs.run(sweep)

    def find_critical(self) -> int:
        """Save the fields' settings and search their range for critical values in the background."""
        sweep = self._apply_settings()
        return 0 if sweep is None else self.runs.find_critical(sweep)

    def cancel(self) -> None:
        self.runs.cancel()

    def _busy(self, busy: bool) -> None:
        if busy != self.progress.isVisibleTo(self):
            self.progress.setValue(0)
        self.progress.setVisible(busy)
        self.cancel_button.setEnabled(busy)
        for button in (self.run_button, self.critical_button):
            button.setEnabled(not busy and self.current() is not None)

    def _stopped(self, what: str) -> None:
        self.summary.setText(f"{what} cancelled; the plot shows the last finished results.")

    # -- clicks ---------------------------------------------------------------------------------------------
    def choose_value(self, value: float) -> bool:
        """Set the swept parameter to ``value`` (a click on a plot), rounded and kept within the sweep's range:
        one undoable edit. False when there is nothing to set."""
        sweep = self.current()
        if sweep is None or not math.isfinite(value):
            return False
        rows = sweep.rows or ()
        low = min([sweep.low, *(row.value for row in rows)])
        high = max([sweep.high, *(row.value for row in rows)])
        value = rounded_value(value, low, high, log=sweep.log)
        changed = self.document.set_parameter_value(sweep.parameter, value)
        if changed:
            self.value_chosen.emit(sweep.parameter, value)
        return changed
