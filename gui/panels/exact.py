"""The exact analysis panel: the shown equation analysed symbolically over the whole plane, in mathematics.

core.analysis.exact.analyze_equation runs off the GUI thread (gui.jobs, channel "exact"; its sympy steps share
one deadline and stop when cancelled) a short pause after the equation, its parameters, its lower-order terms or
the loaded data change, while the panel can be seen (a hidden tab waits until it is shown); a result for inputs
the study no longer has is dropped. The panel shows D and its
factors, the type-change curves and tangencies, the zones with their conditions, each characteristic family's
slope and invariant, the canonical form of each type and the notes, each formula rendered (gui.math_render)
with a Copy button for its formula text (core.results.exact_analysis.document: the text that pastes back
into a coefficient or a definition; for a canonical form the whole line).
"""

from __future__ import annotations

import html
from dataclasses import dataclass, replace

import sympy
from PySide6.QtCore import QTimer, Signal
from PySide6.QtWidgets import QCheckBox, QHBoxLayout, QLabel, QProgressBar, QScrollArea, QVBoxLayout, QWidget

from core.analysis.exact import ExactAnalysis, analyze_equation
from core.equations.equation import Equation
from core.results.exact_analysis import document as analysis_document
from gui.document import Document
from gui.formula_rows import FormulaRow, FormulaRows
from gui.jobs import JobRunner
from gui.math_render import expression_html, terms_html
from gui.widgets import ERROR_STYLE, purpose_label, push_button

__all__ = ["CHANNEL", "DEBOUNCE_MS", "ExactInputs", "ExactPanel", "analysis_groups"]

CHANNEL = "exact"
DEBOUNCE_MS = 400          # a burst of changes (a slider drag) asks for one analysis once it pauses
_GREEK = {"xi": "ξ", "eta": "η", "alpha": "α", "beta": "β"}


@dataclass(frozen=True)
class ExactInputs:
    """What one analysis depends on: the shown equation (without its Cauchy data), the loaded data names and
    whether the parameters' values are put in."""

    equation: Equation
    data_names: tuple[str, ...]
    substitute_parameters: bool


def _derivative_html(name: str) -> str:
    """'u_xi_eta' -> u with the subscript ξη; 'u' stays u."""
    head, *subscripts = name.split("_")
    if not subscripts:
        return f"<i>{html.escape(head)}</i>"
    return f"<i>{html.escape(head)}</i><sub>{''.join(_GREEK.get(s, html.escape(s)) for s in subscripts)}</sub>"


def _relation_html(condition) -> str:
    """A zone's condition; |Z| <= 0 (how a parabolic zone's text says Z = 0) reads Z = 0."""
    if condition is None:
        return "everywhere"
    if isinstance(condition, sympy.LessThan) and isinstance(condition.lhs, sympy.Abs) and condition.rhs == 0:
        return f"{expression_html(condition.lhs.args[0])} = 0"
    return expression_html(condition)


def analysis_groups(analysis: ExactAnalysis, texts: dict) -> list[tuple[str, list]]:
    """The panel's groups of FormulaRow lines (and plain lines) for ``analysis``; ``texts`` is its JSON
    document (core.results.exact_analysis.document), whose formula text each Copy button copies."""
    def row(label: str, expression, text, *, suffix: str = "") -> FormulaRow:
        shown = "not found" if expression is None else expression_html(expression) + suffix
        why = "" if text is not None else "not expressible in the formula language (see the notes)"
        return FormulaRow(label, shown, text, why if expression is not None else "not found")

    groups: list[tuple[str, list]] = []
    groups.append(("Discriminant", [
        row("D = b² − 4ac =", analysis.discriminant, texts["discriminant"]),
        row("factored: D =", analysis.discriminant_factored, texts["discriminant_factored"])]))
    changes: list = [row("across", f, t, suffix=" = 0") for f, t in zip(analysis.type_change, texts["type_change"],
                                                                     strict=True)]
    changes += [row("tangency", f, t, suffix=" = 0") for f, t in zip(analysis.tangencies, texts["tangencies"],
                                                                    strict=True)]
    groups.append(("Type changes", changes or ["The type is the same wherever the coefficients are defined."]))
    groups.append(("Zones", [FormulaRow(f"{zone.type} where", _relation_html(zone.condition), text["condition"],
                                        "everywhere: no condition to copy" if zone.condition is None else
                                        "not expressible in the formula language")
                             for zone, text in zip(analysis.zones, texts["zones"], strict=True)]))
    families: list = []
    for family, text in zip(analysis.characteristics, texts["characteristics"], strict=True):
        label = f"family {family.family}"
        if family.direction is not None and family.slope is None:
            families.append(f"{label}: vertical (dx = 0), its slope dy/dx is infinite")
        elif family.slope is not None:
            families.append(row(f"{label}: dy/dx =", family.slope, text["slope"]))
        families.append(row(f"{label}: constant along it", family.invariant, text["invariant"]))
    groups.append(("Characteristics", families or ["No real characteristics."]))
    forms: list = []
    for form, text in zip(analysis.canonical, texts["canonical"], strict=True):
        if form.coordinates is not None:
            for name, coordinate, typed in zip(form.names, form.coordinates, text["coordinates"] or (None, None),
                                               strict=True):
                forms.append(row(f"{form.type}: {_GREEK.get(name, name)} =", coordinate, typed))
        if form.lower is None:
            forms.append(f"{form.type}: not found (see the notes)")
            continue
        terms = [(sympy.S.One, _derivative_html(name)) for name in form.principal]
        terms += [(coefficient, _derivative_html(name)) for name, coefficient in form.lower]
        forms.append(FormulaRow(f"{form.type} canonical form", f"{terms_html(terms)} = 0", text["form"],
                                "not expressible in the formula language (see the notes)"))
    groups.append(("Canonical forms", forms or ["None found (see the notes)."]))
    if texts["notes"]:
        groups.append(("Notes", list(texts["notes"])))
    return groups


class ExactPanel(QWidget):
    """Runs and shows the exact analysis of the shown equation; ``shown`` when a result is put on screen."""

    shown = Signal(object)            # the ExactAnalysis shown (None: cleared)

    def __init__(self, document: Document, runner: JobRunner, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.runner = runner
        self.analysis: ExactAnalysis | None = None
        self.texts: dict | None = None
        self.inputs: ExactInputs | None = None          # what the analysis on screen was computed from
        intro = purpose_label("The equation analysed symbolically over the whole plane: D factored, where the "
                              "type changes, each zone's condition, the characteristics and the canonical forms. "
                              "Copy puts a formula's text on the clipboard, ready to paste into a coefficient.")
        self.status = QLabel()
        self.status.setObjectName("exactStatus")
        self.status.setWordWrap(True)
        self.substitute = QCheckBox("Put the parameters' values in")
        self.substitute.setObjectName("exactSubstitute")
        self.substitute.setToolTip("Write the formulas with the parameters' values (otherwise the parameters stay "
                                   "symbols and their values only decide signs)")
        self.substitute.toggled.connect(lambda checked: self.request())
        self.progress = QProgressBar()
        self.progress.setObjectName("exactProgress")
        self.progress.setRange(0, 0)                   # sympy's steps report no progress: a busy bar
        self.progress.setMaximumWidth(120)
        self.progress.setVisible(False)
        self.cancel_button = push_button("Cancel", "Stop the analysis; the panel keeps the last finished one",
                                         self.cancel)
        self.cancel_button.setObjectName("exactCancel")
        self.cancel_button.setEnabled(False)
        top = QHBoxLayout()
        top.addWidget(self.status, 1)
        top.addWidget(self.progress)
        top.addWidget(self.cancel_button)
        top.addWidget(self.substitute)
        self.rows = FormulaRows()
        holder = QScrollArea()
        holder.setWidgetResizable(True)
        holder.setWidget(self.rows)
        layout = QVBoxLayout(self)
        layout.addWidget(intro)
        layout.addLayout(top)
        layout.addWidget(holder, 1)

        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(DEBOUNCE_MS)
        self._timer.timeout.connect(self._paused)
        self._waiting = True            # the study changed while the panel was hidden: analyse once shown
        self.seen = False               # set by the window from the dock's visibility (set_seen)
        for signal in (document.equation_changed, document.parameters_changed, document.lower_order_changed,
                       document.data_changed, document.project_replaced):
            signal.connect(self._timer.start)
        runner.finished.connect(self._finished)
        runner.failed.connect(self._failed)
        runner.cancelled.connect(self._cancelled)
        self._timer.start()

    def _paused(self) -> None:
        """The changes have paused: analyse now if the panel can be seen, else once it is shown (sympy's work
        can take the whole deadline: a hidden tab spends none)."""
        if self.seen:
            self.request()
        else:
            self._waiting = True

    def set_seen(self, seen: bool) -> None:
        """Whether the panel can be seen (its dock's visibilityChanged: a tab behind another cannot); shown
        with changes waiting, it analyses at once."""
        self.seen = bool(seen)
        if self.seen and self._waiting and not self._timer.isActive():
            self.request()

    def current_inputs(self) -> ExactInputs:
        return ExactInputs(replace(self.document.equation, cauchy_data={}), tuple(self.document.data_names),
                           self.substitute.isChecked())

    def flush(self) -> None:
        """Ask now for an analysis that waits for the debounce pause or for the panel to be shown (tests)."""
        if self._timer.isActive() or self._waiting:
            self.request()

    def request(self) -> int:
        """Analyse the shown equation in the background; the job number (0: nothing to analyse)."""
        self._timer.stop()
        self._waiting = False
        document = self.document
        compiled = document.compiled
        if compiled is None:
            if not document.data_pending:
                self.status.setText(f"Not analysed: the equation does not compile ({document.compile_error}).")
            return 0
        inputs = self.current_inputs()
        parameters = document.equation.parameter_values()
        lower_order = dict(document.equation.lower_order)

        def work(cancel, progress):
            analysis = analyze_equation(compiled, parameters=parameters, lower_order=lower_order, cancel=cancel,
                                        substitute_parameters=inputs.substitute_parameters)
            return inputs, analysis, analysis_document(analysis)

        number = self.runner.request(CHANNEL, work, label="Exact analysis")
        self._busy()
        if self.runner.is_busy(CHANNEL):
            self.status.setText("Analysing… (sympy, within the analysis' deadline)")
        return number

    def cancel(self) -> None:
        self.runner.cancel(CHANNEL)

    def _busy(self) -> None:
        busy = self.runner.is_busy(CHANNEL)
        self.progress.setVisible(busy)
        self.cancel_button.setEnabled(busy)

    def _finished(self, channel: str, number: int, result) -> None:
        if channel != CHANNEL:
            return
        self._busy()
        inputs, analysis, texts = result
        if inputs != self.current_inputs():
            return                      # computed for an equation the study no longer has: a newer one follows
        self.analysis, self.texts, self.inputs = analysis, texts, inputs
        self.rows.show_groups(analysis_groups(analysis, texts))
        kinds = ", ".join(zone.type for zone in analysis.zones) or "no zone"
        self.status.setStyleSheet("")
        self.status.setText(f"“{inputs.equation.name}”: {kinds}"
                            + (" (parameters put in)" if inputs.substitute_parameters else ""))
        self.shown.emit(analysis)

    def _failed(self, channel: str, number: int, text: str) -> None:
        if channel == CHANNEL:
            self._busy()
            self.status.setStyleSheet(f"QLabel {{ {ERROR_STYLE} }}")
            self.status.setText(f"Not analysed: {text}")

    def _cancelled(self, channel: str, number: int) -> None:
        if channel == CHANNEL and not self.runner.is_busy(CHANNEL):
            self._busy()
            if self.runner.latest(CHANNEL) == -1:       # stopped by the user, not replaced by a newer request
                self.status.setText("Cancelled; " + ("the analysis shown is of an earlier equation."
                                                     if self.analysis is not None else "nothing analysed yet."))

