"""The equation editor: which equation of the study is shown, its mathematical form, and its parts to edit.

The panel stacks the chooser, the rendered form (equation, definitions and discriminant as typeset text) and
four editors: the coefficients a, b, c (gui.panels.coefficient_fields), the optional lower-order terms d, e, f
(gui.panels.lower_order_fields), the definitions and the parameters with their sliders (gui.panels.equation_tables,
gui.panels.parameter_sliders). Each editor checks what is typed through core and edits the document only with
text that compiles (the lower-order terms: that parses; they never change the map).
"""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QFrame, QLabel, QVBoxLayout, QWidget

from core.equations.equation import Equation
from core.equations.language import ExpressionError
from core.equations.lower_order import lower_order_terms
from gui.document import Document
from gui.math_render import equation_html
from gui.panels.coefficient_fields import CoefficientFields
from gui.panels.equation_tables import DefinitionTable, ParameterTable
from gui.panels.lower_order_fields import LowerOrderFields
from gui.panels.parameter_sliders import SLIDER_STEPS
from gui.widgets import ERROR_STYLE, SteadyComboBox, chooser_row, purpose_label, push_button, show_choices

__all__ = ["SLIDER_STEPS", "EquationPanel"]


class EquationPanel(QWidget):
    """Edits the shown equation of a Document; emits drag signals so the map can switch to drag mode."""

    drag_started = Signal()
    drag_finished = Signal()
    template_requested = Signal()

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        intro = purpose_label("Coefficients of  a u<sub>xx</sub> + b u<sub>xy</sub> + c u<sub>yy</sub> + "
                              "d u<sub>x</sub> + e u<sub>y</sub> + f u = 0 (d, e, f optional). "
                              "Functions: sin, cos, exp, log, sqrt, abs, min, max, "
                              "piecewise(cond, value, ..., else).")

        self.equation_choice = SteadyComboBox()
        self.equation_choice.setToolTip("Which of the study's equations is shown and edited")
        self.equation_choice.activated.connect(self.document.show_equation)
        self.duplicate_button = push_button("Duplicate", "Add a copy of this equation to the study and show it",
                                            self.document.duplicate_equation)
        self.template_button = push_button("From template…", "Add a ready-made equation of the trades (undoable)",
                                           self.template_requested)
        chooser = chooser_row("Equation:", self.equation_choice, self.duplicate_button, self.template_button)

        self.rendered = QLabel()
        self.rendered.setObjectName("renderedEquation")
        self.rendered.setTextFormat(Qt.TextFormat.RichText)
        self.rendered.setWordWrap(True)
        self.rendered.setFrameShape(QFrame.Shape.StyledPanel)
        self.rendered.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.rendered.setStyleSheet("QLabel { background: white; padding: 6px; font-size: 12pt; }")
        self.rendered.setToolTip("The equation as typed, in mathematical form, and its discriminant D")

        self.coefficient_box = CoefficientFields(document)
        self.lower_order_box = LowerOrderFields(document)
        self.definition_box = DefinitionTable(document)
        self.parameter_box = ParameterTable(document)
        self.parameter_box.slider_area.drag_started.connect(self.drag_started)
        self.parameter_box.slider_area.drag_finished.connect(self.drag_finished)
        # The editors' widgets by the names the window and its tests use.
        self.coefficient_edits = self.coefficient_box.edits
        self.coefficient_errors = self.coefficient_box.errors
        self.lower_order_edits = self.lower_order_box.edits
        self.lower_order_errors = self.lower_order_box.errors
        self.definitions = self.definition_box.table
        self.definition_error = self.definition_box.error
        self.parameters = self.parameter_box.table
        self.parameter_error = self.parameter_box.error
        self.slider_area = self.parameter_box.slider_area
        self.sliders = self.slider_area.sliders
        self.slider_values = self.slider_area.slider_values

        main = QVBoxLayout(self)
        main.addWidget(intro)
        main.addLayout(chooser)
        main.addWidget(self.rendered)
        main.addWidget(self.coefficient_box)
        main.addWidget(self.lower_order_box)
        main.addWidget(self.definition_box)
        main.addWidget(self.parameter_box)
        main.addStretch(1)

        document.project_replaced.connect(self._forget_drafts)
        document.equation_changed.connect(self.refresh)
        document.lower_order_changed.connect(self._lower_order_shown)
        document.parameters_changed.connect(lambda: self.parameter_box.show_values(self.document.equation))
        document.equations_listed.connect(self._refresh_choice)
        document.data_changed.connect(lambda: self._render(self.document.equation))
        self._refresh_choice()
        self.refresh()

    def refresh(self) -> None:
        """Show the document's equation (texts, tables, sliders, rendered form); clears stale errors."""
        equation = self.document.equation
        self.coefficient_box.refresh(equation)
        self.lower_order_box.refresh(equation)
        self.definition_box.refresh(equation)
        self.parameter_box.refresh(equation)
        self._render(equation)
        self.equation_choice.setCurrentIndex(self.document.project.shown_equation_index)

    def _forget_drafts(self) -> None:
        for editor in (self.coefficient_box, self.lower_order_box, self.definition_box, self.parameter_box):
            editor.forget_drafts()

    def _refresh_choice(self) -> None:
        project = self.document.project
        show_choices(self.equation_choice, project.equation_names, project.shown_equation_index)

    def _render(self, equation: Equation) -> None:
        compiled = self.document.compiled
        if compiled is None and self.document.data_pending:
            self.rendered.setText("<span style='color:#555'>Waiting for the data files to load…</span>")
        elif compiled is None:
            self.rendered.setText(f"<span style='{ERROR_STYLE}'>{self.document.compile_error}</span>")
        else:
            try:
                lower = lower_order_terms(equation, data_names=self.document.data_names)
            except ExpressionError as error:      # a study whose data are not loaded: its terms may not read
                self.rendered.setText(equation_html(compiled) + f"<br><span style='{ERROR_STYLE}'>{error}</span>")
                return
            self.rendered.setText(equation_html(compiled, lower))

    def _lower_order_shown(self) -> None:
        equation = self.document.equation
        self.lower_order_box.refresh(equation)
        self._render(equation)
