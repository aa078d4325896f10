"""The Cauchy panel: u and its normal derivative given on a straight line, the solution in closed form.

For a study whose a, b, c are constant once the definitions and parameters are substituted (otherwise the panel
says why it is disabled), the user types the data line (ALPHA*x + BETA*y = GAMMA in the study's variables),
u on it and its derivative along the line's unit normal (formulas in s, the arc length along the line, or in
the variables). Each text is checked as typed through core (core.analysis.cauchy_input) and saved with the
equation when it settles (one undo step each; format 6 ``cauchy_data``). Once all three are stated the problem
is solved in the background (gui.cauchy_runs), again after every change of the equation, its parameters or the
data; Solve runs it again by hand. The panel shows the type, the solution in mathematical form (gui.math_render)
and as formula text with a Copy button, the notes, and a refusal (an elliptic equation, a characteristic line)
as a message. ``map_changed`` tells gui.cauchy_overlay what to draw: u as the map's field layer and the
selected pin's domain of dependence.
"""

from __future__ import annotations

import math

import numpy as np
import sympy
from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtWidgets import (
    QApplication,
    QCheckBox,
    QFormLayout,
    QFrame,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QProgressBar,
    QScrollArea,
    QVBoxLayout,
    QWidget,
)

from core.analysis.cauchy_field import DependenceSketch, dependence_sketch
from core.analysis.cauchy_input import (
    CAUCHY_FIELDS,
    LINE_PARAMETER,
    CauchyInputError,
    parse_data_line,
    parse_line_data,
    study_coefficients,
)
from core.analysis.cauchy_study import CauchyRefusal, StudyCauchy
from gui.cauchy_runs import CHANNEL, FIELD_CHANNEL, CauchyRuns
from gui.document import Document
from gui.jobs import JobRunner
from gui.math_render import expression_html
from gui.settled_edits import CheckedFields, SettledText, checked_row
from gui.widgets import push_button

__all__ = ["CHANNEL", "FIELD_CHANNEL", "CauchyPanel"]

_NOTICE_STYLE = "QLabel { color: #5C3B00; background: #FFF1CC; border: 1px solid #E0B85C; padding: 3px 6px; }"
_REFUSAL_STYLE = "QLabel { color: #8A0016; background: #FDECEE; border: 1px solid #E8A0AA; padding: 4px 6px; }"
_LABELS = {"line": "data line", "u": "u on the line", "du": "∂u/∂n on the line"}
_TIPS = {
    "line": "The straight data line, typed as ALPHA*x + BETA*y = GAMMA in the study's variables",
    "u": f"u on the data line: a formula in {LINE_PARAMETER} (arc length along the line from the foot of the "
         "perpendicular from the origin, growing with the first variable) or in the variables",
    "du": f"The derivative of u along the line's unit normal (ALPHA, BETA)/|(ALPHA, BETA)|: a formula in "
          f"{LINE_PARAMETER} or in the variables",
}


def _point(point) -> str:
    return f"({point[0]:.6g}, {point[1]:.6g})"


class CauchyPanel(CheckedFields, QWidget):
    """Edits, solves and shows the shown study's Cauchy problem; ``map_changed`` when the map should change."""

    map_changed = Signal()

    def __init__(self, document: Document, runner: JobRunner, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.runs = CauchyRuns(document, runner, self)
        self.pin_index = -1
        self.sketch: DependenceSketch | None = None
        self.available = False
        self._merge_keys: dict[str, str] = {}
        self._equation_name: str | None = None

        self.status = QLabel()
        self.status.setObjectName("cauchyStatus")
        self.status.setWordWrap(True)
        self.edits: dict[str, QLineEdit] = {}
        self.errors: dict[str, QLabel] = {}
        self.settling: dict[str, SettledText] = {}
        form = QFormLayout()
        form.setContentsMargins(0, 0, 0, 0)
        for which in CAUCHY_FIELDS:
            self.edits[which], self.errors[which], self.settling[which] = checked_row(
                form, _LABELS[which], f"cauchy_{which}", _TIPS[which], self, which)
        self.solve_button = push_button("Solve", "Solve the problem again in the background (it is solved by "
                                        "itself whenever the equation or the data change)", self.solve)
        self.solve_button.setObjectName("cauchySolve")
        self.cancel_button = push_button("Cancel", "Stop solving; the panel keeps no solution", self.runs.cancel)
        self.cancel_button.setObjectName("cauchyCancel")
        self.cancel_button.setEnabled(False)
        self.progress = QProgressBar()
        self.progress.setObjectName("cauchyProgress")
        self.progress.setMaximumWidth(150)
        self.progress.setVisible(False)
        buttons = QHBoxLayout()
        buttons.addWidget(self.solve_button)
        buttons.addWidget(self.cancel_button)
        buttons.addWidget(self.progress)
        buttons.addStretch(1)
        self.show_field = QCheckBox("Show u on the map")
        self.show_field.setObjectName("cauchyShowField")
        self.show_field.setToolTip("Shade the map by the solution u (the field layer), in place of the types")
        self.show_field.toggled.connect(lambda checked: self.map_changed.emit())
        self.show_dependence = QCheckBox("Draw the selected pin's domain of dependence")
        self.show_dependence.setObjectName("cauchyShowDependence")
        self.show_dependence.setChecked(True)
        self.show_dependence.setToolTip("The data line, the two characteristics from the selected pin to it and the "
                                        "stretch of data between their feet")
        self.show_dependence.toggled.connect(lambda checked: self.map_changed.emit())
        controls = QVBoxLayout()
        controls.addWidget(self.status)
        controls.addLayout(form)
        controls.addLayout(buttons)
        controls.addWidget(self.show_field)
        controls.addWidget(self.show_dependence)
        controls.addStretch(1)

        self.heading = QLabel()
        self.heading.setObjectName("cauchyHeading")
        self.heading.setWordWrap(True)
        self.rendered = QLabel()
        self.rendered.setObjectName("cauchyRendered")
        self.rendered.setTextFormat(Qt.TextFormat.RichText)
        self.rendered.setWordWrap(True)
        self.rendered.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.rendered.setStyleSheet("QLabel { background: white; padding: 6px; font-size: 12pt; }")
        self.rendered.setAlignment(Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft)
        self.refusal = QLabel()
        self.refusal.setObjectName("cauchyRefusal")
        self.refusal.setWordWrap(True)
        self.refusal.setStyleSheet(_REFUSAL_STYLE)
        self.refusal.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        shown = QWidget()                            # the solution, or why there is none, scrolled together
        shown.setStyleSheet("background: white;")
        column = QVBoxLayout(shown)
        column.setContentsMargins(0, 0, 0, 0)
        column.addWidget(self.refusal)
        column.addWidget(self.rendered, 1)
        holder = QScrollArea()
        holder.setWidgetResizable(True)
        holder.setFrameShape(QFrame.Shape.StyledPanel)
        holder.setWidget(shown)
        self.formula = QLineEdit()
        self.formula.setObjectName("cauchyFormula")
        self.formula.setReadOnly(True)
        self.formula.setToolTip("The solution as formula text: it pastes back into a coefficient or a definition")
        self.copy_button = push_button("Copy", "Copy the solution's formula text", self.copy_formula)
        self.copy_button.setObjectName("cauchyCopy")
        formula_row = QHBoxLayout()
        formula_row.addWidget(QLabel("u ="))
        formula_row.addWidget(self.formula, 1)
        formula_row.addWidget(self.copy_button)
        self.notes = QLabel()
        self.notes.setObjectName("cauchyNotes")
        self.notes.setWordWrap(True)
        self.pin_text = QLabel()
        self.pin_text.setObjectName("cauchyPin")
        self.pin_text.setWordWrap(True)
        results = QVBoxLayout()
        results.addWidget(self.heading)
        results.addWidget(holder, 1)
        results.addLayout(formula_row)
        results.addWidget(self.notes)
        results.addWidget(self.pin_text)
        layout = QHBoxLayout(self)
        layout.addLayout(controls, 2)
        layout.addLayout(results, 3)

        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self._study_changed)
        for signal in (document.equation_changed, document.parameters_changed, document.cauchy_data_changed,
                       document.data_changed, document.project_replaced):
            signal.connect(self._timer.start)
        document.project_replaced.connect(self.forget_drafts)
        document.domain_changed.connect(self._domain_changed)
        document.pins_changed.connect(self._show_pin)
        self.runs.solved.connect(self._solved)
        self.runs.refused.connect(self._refused)
        self.runs.failed.connect(lambda text: self._show_refusal(f"Not solved: {text}"))
        self.runs.busy_changed.connect(self._busy)
        self.runs.progressed.connect(self._progressed)
        self._show_result(None)
        self._study_changed()

    # -- the study ------------------------------------------------------------------------------------------
    def flush(self) -> None:
        """Act now on study changes that are waiting for the next turn of the event loop (tests)."""
        if self._timer.isActive():
            self._timer.stop()
            self._study_changed()

    def _symbols(self) -> dict[str, sympy.Symbol]:
        return {name: sympy.Symbol(name, real=True) for name in self.document.equation.variables}

    def _availability(self) -> tuple[bool, str]:
        """Whether the study's problem can be solved here, and the status line saying why (not)."""
        compiled = self.document.compiled
        if compiled is None:
            if self.document.data_pending:
                return False, "Waiting for the data files to load."
            return False, f"Disabled: the equation does not compile ({self.document.compile_error})."
        try:
            if LINE_PARAMETER in compiled.variables:
                raise CauchyInputError("coefficients", f"a variable is called {LINE_PARAMETER}, the name of the "
                                                       "arc length along the data line")
            a, b, c = study_coefficients(compiled)
        except CauchyInputError as error:
            return False, f"Disabled: {error.message}."
        discriminant = b ** 2 - 4 * a * c
        kind = "hyperbolic" if discriminant > 0 else "parabolic" if discriminant == 0 else "elliptic"
        if a == 0 and b == 0 and c == 0:
            kind = "no second-order terms"
        numbers = ", ".join(f"{name} = {value}" for name, value in zip("abc", (a, b, c), strict=True))
        return True, f"Constant coefficients {numbers}: {kind} (D = b² − 4ac = {discriminant})."

    def _study_changed(self) -> None:
        """Show the study's Cauchy texts and whether it can be solved; solve it when all three are stated."""
        self._timer.stop()
        equation = self.document.equation
        if equation.name != self._equation_name:
            self.forget_drafts()
            self._equation_name = equation.name
        self.available, status = self._availability()
        self.status.setText(status)
        self.status.setStyleSheet("" if self.available else _NOTICE_STYLE)
        for which, settling in self.settling.items():
            self.edits[which].setEnabled(self.available)
            if settling.show(equation.cauchy_data.get(which, "")):
                self._show_error(which, "")
                self.document.set_unapplied(f"cauchy.{which}", "")
            else:
                self._typed(which, self.edits[which].text())
        if self.runs.stale():
            self.runs.clear()
        if self.available and self._complete():
            self.runs.solve()
        else:
            self.runs.clear()
            self._show_result(None)
            if self.available:
                missing = [_LABELS[w] for w in CAUCHY_FIELDS if not equation.cauchy_data.get(w)]
                self.heading.setText(f"State the {', '.join(missing)} to solve." if missing else "")
        self._busy(self.runs.working())

    def _complete(self) -> bool:
        data = self.document.equation.cauchy_data
        return all(data.get(which) for which in CAUCHY_FIELDS) and not any(
            self.errors[which].text() for which in CAUCHY_FIELDS)

    def _domain_changed(self) -> None:
        if self.runs.current is not None:
            self.runs.evaluate_on(self.document.domain)

    # -- typed data -----------------------------------------------------------------------------------------
    def _problem(self, which: str, text: str) -> str:
        """What is wrong with ``text`` as the field ``which``; empty when it reads (or is empty)."""
        if not text.strip():
            return ""
        symbols = self._symbols()
        try:
            if which == "line":
                parse_data_line(text, symbols)
            else:
                parse_line_data(text, which, symbols, sympy.Symbol(LINE_PARAMETER, real=True))
        except CauchyInputError as error:
            return error.message
        return ""

    def _settled(self, which: str, text: str) -> None:
        problem = self._problem(which, text)
        self._show_error(which, problem)
        self.document.set_unapplied(f"cauchy.{which}", problem)
        if problem or text.strip() == self.document.equation.cauchy_data.get(which, ""):
            return
        if which not in self._merge_keys:
            self._merge_keys[which] = self.document.new_merge_key(f"cauchy {which}")
        self.document.set_cauchy_data(which, text, merge_key=self._merge_keys[which])

    # -- solving --------------------------------------------------------------------------------------------
    def solve(self) -> int:
        """Solve the study's problem again in the background; the job number (0: nothing to solve)."""
        if not self.available:
            return 0
        if not self._complete():
            self.heading.setText("State the data line, u and its normal derivative first (without errors).")
            return 0
        return self.runs.solve()

    def _busy(self, busy: bool) -> None:
        if busy and not self.progress.isVisibleTo(self):
            self.progress.setRange(0, 0)            # sympy's steps report no progress: a busy bar
        self.progress.setVisible(busy)
        self.cancel_button.setEnabled(busy)
        self.solve_button.setEnabled(self.available and not busy)

    def _progressed(self, fraction: float) -> None:
        if fraction >= 0.5:                         # evaluating u on the grid: measurable
            self.progress.setRange(0, 1000)
            self.progress.setValue(round(1000 * fraction))

    def _solved(self, study: StudyCauchy | None) -> None:
        self._show_result(study)
        self._show_pin()
        self.map_changed.emit()

    def _refused(self, refusal: CauchyRefusal) -> None:
        if refusal.field in ("line", "u", "du"):
            self._show_error(refusal.field, refusal.message)
        self._show_refusal(f"Not solved: {refusal.message}")

    def _show_refusal(self, text: str) -> None:
        self._show_result(None)
        self.heading.setText("")
        self.refusal.setText(text)
        self.refusal.setVisible(True)

    def _show_result(self, study: StudyCauchy | None) -> None:
        self.refusal.setVisible(False)
        if study is None:
            self.heading.setText("")
            self.rendered.setText("")
            self.formula.setText("")
            self.formula.setPlaceholderText("")
            self.copy_button.setEnabled(False)
            self.notes.setText("")
            self.pin_text.setText("")
            return
        solution = study.solution
        closed = solution.solution is not None
        self.heading.setText(f"{solution.type.capitalize()}: " + (
            "d'Alembert's solution in the characteristic coordinates." if solution.type == "hyperbolic" else
            "u is linear along each characteristic.") + ("" if closed else " No closed form: u holds an integral "
                                                         "of the normal derivative, evaluated numerically."))
        lines = [f"<i>u</i> = {expression_html(solution.exact)}",
                 f"general solution: <i>u</i> = {expression_html(solution.general)}"]
        for family, (direction, invariant) in enumerate(zip(solution.directions, solution.invariants, strict=True),
                                                        1):
            along = ", ".join(expression_html(v) for v in direction)
            lines.append(f"characteristics{'' if len(solution.directions) == 1 else f' of family {family}'}: "
                         f"along ({along}), {expression_html(invariant)} constant")
        self.rendered.setText("<br>".join(lines))
        self.formula.setText(study.formula or "")
        self.formula.setPlaceholderText("" if study.formula else "no formula text (see the notes)")
        self.copy_button.setEnabled(study.formula is not None)
        self.notes.setText("\n".join(f"Note: {note}" for note in study.notes))

    def copy_formula(self) -> str:
        """Put the solution's formula text on the clipboard; returns it ('' when there is none)."""
        text = self.formula.text()
        if text:
            QApplication.clipboard().setText(text)
        return text

    # -- the selected pin ----------------------------------------------------------------------------------
    def set_pin(self, index: int) -> None:
        """The pin whose domain of dependence is drawn (-1: none)."""
        self.pin_index = index
        self._show_pin()

    def _show_pin(self) -> None:
        study, pins = self.runs.current, self.document.project.pins
        index = self.pin_index
        shown = self.document.project.pins_shown()
        if study is None or not 0 <= index < len(pins) or not shown[index]:
            self.sketch = None
            self.pin_text.setText("" if study is None else "Select a pin to read u there and draw what it depends on.")
        else:
            pin, domain = pins[index], self.document.domain
            self.sketch = dependence_sketch(study.evaluator, pin.x, pin.y,
                                            (domain.xmin, domain.xmax, domain.ymin, domain.ymax))
            value = "undefined" if math.isnan(self.sketch.value) else f"{self.sketch.value:.10g}"
            feet = self.sketch.feet
            where = (f"on the data between {_point(feet[0])} and {_point(feet[1])}" if len(feet) == 2 else
                     f"on the value and slope of the data at {_point(feet[0])}")
            self.pin_text.setText(f"At pin {pin.label} {_point((pin.x, pin.y))}: u = {value}; it depends {where}.")
        self.map_changed.emit()

    def reader(self):
        """u at one point of the current solution, for the map's hover readout."""
        study = self.runs.current
        return None if study is None else (lambda x, y: float(study.evaluator(np.array([x]), np.array([y]))[0]))

