"""The equation editor: coefficients a, b, c, definitions and parameters, checked as the user types.

Every keystroke compiles a candidate equation through core (the whitelist parser). A candidate that compiles
becomes an edit of the document (a burst of typing in one field is one undo step); one that does not leaves
the document, and so the map, as it was and shows the error beside the field at fault with its column.
Parameters with a range get a slider; a whole drag is one undo step.
"""

from __future__ import annotations

import math
from dataclasses import replace

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QFormLayout,
    QFrame,
    QGridLayout,
    QGroupBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPushButton,
    QSlider,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from core.equations.equation import Equation, Parameter
from core.equations.parser import ExpressionError
from gui.document import Document
from gui.math_render import equation_html
from gui.widgets import button_row, copy_name, push_button

__all__ = ["SLIDER_STEPS", "EquationPanel"]

SLIDER_STEPS = 1000
_ERROR_STYLE = "color: #B00020;"
_BAD_FIELD = "QLineEdit { border: 2px solid #B00020; }"


def _error_label() -> QLabel:
    label = QLabel()
    label.setStyleSheet(_ERROR_STYLE)
    label.setWordWrap(True)
    label.setVisible(False)
    return label


def _format_number(value: float | None) -> str:
    return "" if value is None else f"{value:.10g}"


def _parse_optional(text: str, what: str) -> float | None:
    text = text.strip()
    if not text:
        return None
    try:
        value = float(text)
    except ValueError:
        raise ValueError(f"{what} must be a number, got {text!r}") from None
    if not math.isfinite(value):
        raise ValueError(f"{what} must be finite, got {text!r}")
    return value


class EquationPanel(QWidget):
    """Edits the shown equation of a Document; emits drag signals so the map can switch to drag mode."""

    drag_started = Signal()
    drag_finished = Signal()
    template_requested = Signal()

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self._merge_keys: dict[str, str] = {}
        self._updating = False
        self._drag_key = ""

        intro = QLabel("Coefficients of  a u<sub>xx</sub> + b u<sub>xy</sub> + c u<sub>yy</sub> + ... = 0. "
                       "Functions: sin, cos, exp, log, sqrt, abs, min, max, piecewise(cond, value, ..., else).")
        intro.setWordWrap(True)
        intro.setObjectName("panelPurpose")

        self.equation_choice = QComboBox()
        self.equation_choice.setToolTip("Which of the study's equations is shown and edited")
        self.equation_choice.activated.connect(self._choose_equation)
        self.duplicate_button = QPushButton("Duplicate")
        self.duplicate_button.setToolTip("Add a copy of this equation to the study and show it")
        self.duplicate_button.clicked.connect(self._duplicate)
        self.template_button = QPushButton("From template…")
        self.template_button.setToolTip("Add a ready-made equation of the trades (undoable)")
        self.template_button.clicked.connect(self.template_requested)
        chooser = QHBoxLayout()
        chooser.addWidget(QLabel("Equation:"))
        chooser.addWidget(self.equation_choice, 1)
        chooser.addWidget(self.duplicate_button)
        chooser.addWidget(self.template_button)

        self.rendered = QLabel()
        self.rendered.setObjectName("renderedEquation")
        self.rendered.setTextFormat(Qt.TextFormat.RichText)
        self.rendered.setWordWrap(True)
        self.rendered.setFrameShape(QFrame.Shape.StyledPanel)
        self.rendered.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.rendered.setStyleSheet("QLabel { background: white; padding: 6px; font-size: 12pt; }")
        self.rendered.setToolTip("The equation as typed, in mathematical form, and its discriminant D")

        coefficient_box = QGroupBox("Second-order coefficients")
        form = QFormLayout(coefficient_box)
        self.coefficient_edits: dict[str, QLineEdit] = {}
        self.coefficient_errors: dict[str, QLabel] = {}
        tips = {"a": "multiplies u_xx", "b": "multiplies u_xy", "c": "multiplies u_yy"}
        for which in ("a", "b", "c"):
            edit = QLineEdit()
            edit.setObjectName(f"coefficient_{which}")
            edit.setToolTip(f"Coefficient {which}: {tips[which]}; an expression in the variables, "
                            "parameters and definitions")
            edit.textEdited.connect(lambda text, which=which: self._coefficient_typed(which, text))
            edit.editingFinished.connect(lambda which=which: self._merge_keys.pop(which, None))
            error = _error_label()
            column = QVBoxLayout()
            column.setSpacing(1)
            column.addWidget(edit)
            column.addWidget(error)
            form.addRow(f"{which} =", column)
            self.coefficient_edits[which] = edit
            self.coefficient_errors[which] = error

        definition_box = QGroupBox("Definitions (named expressions usable in a, b, c)")
        self.definitions = QTableWidget(0, 2)
        self.definitions.setHorizontalHeaderLabels(["name", "expression"])
        self.definitions.horizontalHeader().setSectionResizeMode(1, QHeaderView.ResizeMode.Stretch)
        self.definitions.verticalHeader().setVisible(False)
        self.definitions.setToolTip("Each row defines a name; rows may use each other in any order")
        self.definitions.itemChanged.connect(self._definitions_edited)
        self.definition_error = _error_label()
        layout = QVBoxLayout(definition_box)
        layout.addWidget(self.definitions)
        layout.addWidget(self.definition_error)
        layout.addLayout(button_row(
            push_button("Add", "Add a definition row", self._add_definition),
            push_button("Remove", "Remove the selected definition", self._remove_definition)))

        parameter_box = QGroupBox("Parameters (drag a slider to watch the zones move)")
        self.parameters = QTableWidget(0, 5)
        self.parameters.setHorizontalHeaderLabels(["name", "value", "minimum", "maximum", "unit"])
        self.parameters.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.parameters.verticalHeader().setVisible(False)
        self.parameters.setToolTip("Numbers used in the expressions; give a minimum and maximum for a slider; "
                                   "leave the unit empty for a dimensionless parameter")
        self.parameters.itemChanged.connect(self._parameters_edited)
        self.parameter_error = _error_label()
        self.slider_area = QWidget()
        self.slider_grid = QGridLayout(self.slider_area)
        self.slider_grid.setContentsMargins(0, 0, 0, 0)
        self.sliders: dict[str, QSlider] = {}
        self.slider_values: dict[str, QLabel] = {}
        layout = QVBoxLayout(parameter_box)
        layout.addWidget(self.slider_area)
        layout.addWidget(self.parameters)
        layout.addWidget(self.parameter_error)
        layout.addLayout(button_row(
            push_button("Add", "Add a parameter", self._add_parameter),
            push_button("Remove", "Remove the selected parameter", self._remove_parameter)))
        for table in (self.definitions, self.parameters):
            table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
            table.setMinimumHeight(90)

        main = QVBoxLayout(self)
        main.addWidget(intro)
        main.addLayout(chooser)
        main.addWidget(self.rendered)
        main.addWidget(coefficient_box)
        main.addWidget(definition_box)
        main.addWidget(parameter_box)
        main.addStretch(1)

        document.equation_changed.connect(self.refresh)
        document.parameters_changed.connect(self._refresh_parameter_values)
        document.equations_listed.connect(self._refresh_choice)
        document.data_changed.connect(lambda: self._render(self.document.equation))
        self._refresh_choice()
        self.refresh()

    # -- from the document ----------------------------------------------------------------------------------
    def refresh(self) -> None:
        """Show the document's equation (texts, tables, sliders, rendered form); clears stale errors."""
        equation = self.document.equation
        self._updating = True
        try:
            for which, edit in self.coefficient_edits.items():
                text = equation.coefficient_text(which)
                if edit.text() != text:
                    edit.setText(text)
                self._show_error(which, "")
            self._fill_definitions(equation)
            self._fill_parameters(equation)
            self.definition_error.setVisible(False)
            self.parameter_error.setVisible(False)
        finally:
            self._updating = False
        self._build_sliders(equation)
        self._render(equation)
        self.equation_choice.setCurrentIndex(self.document.project.shown_equation_index)

    def _refresh_choice(self) -> None:
        self.equation_choice.blockSignals(True)
        self.equation_choice.clear()
        for equation in self.document.project.equations:
            self.equation_choice.addItem(equation.name)
        self.equation_choice.setCurrentIndex(self.document.project.shown_equation_index)
        self.equation_choice.blockSignals(False)

    def _refresh_parameter_values(self) -> None:
        equation = self.document.equation
        self._updating = True
        try:
            self._fill_parameters(equation)
        finally:
            self._updating = False
        for name, parameter in equation.parameters.items():
            slider = self.sliders.get(name)
            if slider is not None and not slider.isSliderDown():
                slider.blockSignals(True)
                slider.setValue(self._slider_position(parameter))
                slider.blockSignals(False)
            if name in self.slider_values:
                self.slider_values[name].setText(self._value_text(parameter))

    def _render(self, equation: Equation) -> None:
        compiled = self.document.compiled
        if compiled is None and self.document.data_pending:
            self.rendered.setText("<span style='color:#555'>Waiting for the data files to load…</span>")
        elif compiled is None:
            self.rendered.setText(f"<span style='{_ERROR_STYLE}'>{self.document.compile_error}</span>")
        else:
            self.rendered.setText(equation_html(compiled))

    def _fill_definitions(self, equation: Equation) -> None:
        self.definitions.setRowCount(len(equation.definitions))
        for row, (name, text) in enumerate(equation.definitions.items()):
            self.definitions.setItem(row, 0, QTableWidgetItem(name))
            self.definitions.setItem(row, 1, QTableWidgetItem(text))

    def _fill_parameters(self, equation: Equation) -> None:
        self.parameters.setRowCount(len(equation.parameters))
        for row, (name, p) in enumerate(equation.parameters.items()):
            for column, text in enumerate((name, _format_number(p.value), _format_number(p.minimum),
                                           _format_number(p.maximum), p.unit)):
                item = self.parameters.item(row, column)
                if item is None:
                    self.parameters.setItem(row, column, QTableWidgetItem(text))
                elif item.text() != text:
                    item.setText(text)

    @staticmethod
    def _value_text(parameter: Parameter) -> str:
        unit = parameter.unit or "dimensionless"
        return f"{parameter.value:.4g} ({unit})"

    @staticmethod
    def _slider_position(parameter: Parameter) -> int:
        span = parameter.maximum - parameter.minimum
        fraction = (parameter.value - parameter.minimum) / span if span > 0 else 0.0
        return round(min(1.0, max(0.0, fraction)) * SLIDER_STEPS)

    def _build_sliders(self, equation: Equation) -> None:
        while self.slider_grid.count():
            widget = self.slider_grid.takeAt(0).widget()
            if widget is not None:
                widget.deleteLater()
        self.sliders.clear()
        self.slider_values.clear()
        row = 0
        for name, parameter in equation.parameters.items():
            if parameter.minimum is None or parameter.maximum is None or not parameter.minimum < parameter.maximum:
                continue
            slider = QSlider(Qt.Orientation.Horizontal)
            slider.setObjectName(f"slider_{name}")
            slider.setRange(0, SLIDER_STEPS)
            slider.setValue(self._slider_position(parameter))
            slider.setToolTip(f"{name} from {parameter.minimum:g} to {parameter.maximum:g}"
                              f"{' ' + parameter.unit if parameter.unit else ' (dimensionless)'}"
                              f"{': ' + parameter.description if parameter.description else ''}")
            slider.sliderPressed.connect(lambda name=name: self._slider_pressed(name))
            slider.sliderReleased.connect(self._slider_released)
            slider.valueChanged.connect(lambda position, name=name: self._slider_moved(name, position))
            value = QLabel(self._value_text(parameter))
            value.setMinimumWidth(120)
            self.slider_grid.addWidget(QLabel(name), row, 0)
            self.slider_grid.addWidget(slider, row, 1)
            self.slider_grid.addWidget(value, row, 2)
            self.sliders[name] = slider
            self.slider_values[name] = value
            row += 1

    # -- edits ----------------------------------------------------------------------------------------------
    def _merge_key(self, field: str) -> str:
        if field not in self._merge_keys:
            self._merge_keys[field] = self.document.new_merge_key(field)
        return self._merge_keys[field]

    def _check(self, candidate: Equation) -> ExpressionError | None:
        return self.document.check_equation(candidate)

    def _show_error(self, which: str, text: str) -> None:
        label = self.coefficient_errors[which]
        label.setText(text)
        label.setVisible(bool(text))
        self.coefficient_edits[which].setStyleSheet(_BAD_FIELD if text else "")

    def _coefficient_typed(self, which: str, text: str) -> None:
        candidate = replace(self.document.equation, **{which: text})
        error = self._check(candidate)
        if error is not None:
            where = f"column {error.column}: " if error.column is not None else ""
            owner = error.field if error.field in self.coefficient_errors else which
            if owner != which:
                where = f"{error.field}, " + where
            self._show_error(which, f"{where}{error.message}")
            return
        self._show_error(which, "")
        self.document.set_coefficient(which, text, merge_key=self._merge_key(which))

    def _definitions_edited(self, item: QTableWidgetItem) -> None:
        if self._updating:
            return
        definitions: dict[str, str] = {}
        for row in range(self.definitions.rowCount()):
            name_item, text_item = self.definitions.item(row, 0), self.definitions.item(row, 1)
            name = name_item.text().strip() if name_item else ""
            text = text_item.text() if text_item else ""
            if not name:
                continue
            if name in definitions:
                self._table_error(self.definition_error, f"row {row + 1}: {name!r} is defined twice")
                return
            definitions[name] = text
        candidate = replace(self.document.equation, definitions=definitions)
        error = self._check(candidate)
        if error is not None:
            self._table_error(self.definition_error, str(error))
            return
        self.definition_error.setVisible(False)
        self.document.set_definitions(definitions, merge_key=self._merge_key("definitions"))

    def _parameters_edited(self, item: QTableWidgetItem) -> None:
        if self._updating:
            return
        old = self.document.equation.parameters
        parameters: dict[str, Parameter] = {}
        try:
            for row in range(self.parameters.rowCount()):
                cells = [self.parameters.item(row, c) for c in range(5)]
                name, value, low, high, unit = (cell.text().strip() if cell else "" for cell in cells)
                if not name:
                    continue
                if name in parameters:
                    raise ValueError(f"row {row + 1}: {name!r} is named twice")
                number = _parse_optional(value, f"{name}: value")
                if number is None:
                    raise ValueError(f"{name}: value is missing")
                minimum = _parse_optional(low, f"{name}: minimum")
                maximum = _parse_optional(high, f"{name}: maximum")
                if minimum is not None and maximum is not None and not minimum < maximum:
                    raise ValueError(f"{name}: minimum ({minimum:g}) must be below maximum ({maximum:g})")
                description = old[name].description if name in old else ""
                parameters[name] = Parameter(number, minimum, maximum, unit, description)
        except ValueError as error:
            self._table_error(self.parameter_error, str(error))
            return
        candidate = replace(self.document.equation, parameters=parameters)
        error = self._check(candidate)
        if error is not None:
            self._table_error(self.parameter_error, str(error))
            return
        self.parameter_error.setVisible(False)
        self.document.set_parameters(parameters, merge_key=self._merge_key("parameters"))

    @staticmethod
    def _table_error(label: QLabel, text: str) -> None:
        label.setText(text)
        label.setVisible(True)

    def _add_definition(self) -> None:
        existing = set(self.document.equation.definitions) | set(self.document.equation.parameters)
        number = 1
        while f"q{number}" in existing:
            number += 1
        definitions = dict(self.document.equation.definitions)
        definitions[f"q{number}"] = "0"
        self.document.set_definitions(definitions)

    def _remove_definition(self) -> None:
        row = self.definitions.currentRow()
        names = list(self.document.equation.definitions)
        if not 0 <= row < len(names):
            return
        definitions = dict(self.document.equation.definitions)
        del definitions[names[row]]
        candidate = replace(self.document.equation, definitions=definitions)
        error = self._check(candidate)
        if error is not None:
            self._table_error(self.definition_error, f"cannot remove {names[row]!r}: {error}")
            return
        self.document.set_definitions(definitions)

    def _add_parameter(self) -> None:
        equation = self.document.equation
        existing = set(equation.definitions) | set(equation.parameters)
        number = 1
        while f"k{number}" in existing:
            number += 1
        parameters = dict(equation.parameters)
        parameters[f"k{number}"] = Parameter(1.0, 0.0, 2.0)
        self.document.set_parameters(parameters, f"Add parameter k{number}")

    def _remove_parameter(self) -> None:
        row = self.parameters.currentRow()
        names = list(self.document.equation.parameters)
        if not 0 <= row < len(names):
            return
        parameters = dict(self.document.equation.parameters)
        del parameters[names[row]]
        error = self._check(replace(self.document.equation, parameters=parameters))
        if error is not None:
            self._table_error(self.parameter_error, f"cannot remove {names[row]!r}: {error}")
            return
        self.document.set_parameters(parameters, f"Remove parameter {names[row]}")

    def _choose_equation(self, index: int) -> None:
        self.document.show_equation(index)

    def _duplicate(self) -> None:
        equation = self.document.equation
        taken = {e.name for e in self.document.project.equations}
        self.document.add_equation(replace(equation, name=copy_name(equation.name, taken)))

    # -- sliders --------------------------------------------------------------------------------------------
    def _slider_pressed(self, name: str) -> None:
        self._drag_key = self.document.new_merge_key(f"slider {name}")
        self.drag_started.emit()

    def _slider_released(self) -> None:
        self._drag_key = ""
        self.drag_finished.emit()

    def _slider_moved(self, name: str, position: int) -> None:
        parameter = self.document.equation.parameters.get(name)
        if parameter is None or parameter.minimum is None or parameter.maximum is None:
            return
        value = parameter.minimum + (parameter.maximum - parameter.minimum) * position / SLIDER_STEPS
        key = self._drag_key or self.document.new_merge_key(f"slider {name}")
        self.document.set_parameter_value(name, value, merge_key=key)
