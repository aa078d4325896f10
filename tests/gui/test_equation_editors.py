"""The equation panel's editors on their own: definitions, parameters with sliders, coefficients, duplicates."""

from __future__ import annotations

import pytest
from PySide6.QtWidgets import QPushButton, QTableWidgetItem

from core.equations.equation import Parameter
from gui.document import Document
from gui.panels.equation import EquationPanel
from gui.panels.equation_tables import format_number, parse_optional_number
from gui.panels.parameter_sliders import SLIDER_STEPS, slider_position, value_text
from tests.gui.conftest import hump_project


@pytest.fixture
def panel(qtbot):
    widget = EquationPanel(Document(hump_project()))
    qtbot.addWidget(widget)
    return widget


def _type(table, row: int, column: int, text: str) -> None:
    item = table.item(row, column)
    if item is None:
        table.setItem(row, column, QTableWidgetItem(text))
    else:
        item.setText(text)


def _button(box, text: str) -> QPushButton:
    (button,) = (b for b in box.findChildren(QPushButton) if b.text() == text)
    return button


def test_the_panel_shows_the_equation(panel):
    assert [panel.coefficient_edits[k].text() for k in "abc"] == ["1 - M**2", "0", "1"]
    assert panel.definitions.rowCount() == 1 and panel.definitions.item(0, 0).text() == "M"
    assert [panel.parameters.item(0, c).text() for c in range(5)] == ["M_inf", "0.8", "0.3", "1.2", ""]
    assert list(panel.sliders) == ["M_inf"] and panel.sliders["M_inf"].value() == 556  # (0.8-0.3)/0.9
    assert panel.slider_values["M_inf"].text() == "0.8 (dimensionless)"
    assert panel.equation_choice.currentText() == "hump flow"


def test_a_definition_edit_that_compiles_is_one_undo_step(panel):
    document = panel.document
    _type(panel.definitions, 0, 1, "M_inf*(1 + 0.5*exp(-x**2))")
    _type(panel.definitions, 0, 1, "M_inf*(1 + 0.4*exp(-x**2))")
    assert document.equation.definitions == {"M": "M_inf*(1 + 0.4*exp(-x**2))"}
    assert document.undo_stack.count() == 1 and document.undo_stack.undoText() == "Edit definitions"
    assert not panel.definition_error.isVisibleTo(panel)


def test_a_definition_that_does_not_compile_leaves_the_document(panel):
    _type(panel.definitions, 0, 1, "M_inf*(1 + nowhere)")
    assert panel.document.equation.definitions["M"] == "M_inf*(1 + 0.35*exp(-(x**2 + 4*y**2)))"
    assert panel.definition_error.isVisibleTo(panel) and "nowhere" in panel.definition_error.text()
    assert panel.document.undo_stack.count() == 0


def test_parameter_rows_are_checked_before_they_reach_the_document(panel):
    _type(panel.parameters, 0, 2, "2")
    assert panel.parameter_error.text() == "M_inf: minimum (2) must be below maximum (1.2)"
    _type(panel.parameters, 0, 2, "lots")
    assert panel.parameter_error.text() == "M_inf: minimum must be a number, got 'lots'"
    assert panel.document.equation.parameters["M_inf"] == Parameter(0.8, 0.3, 1.2)
    _type(panel.parameters, 0, 2, "0.5")
    assert panel.document.equation.parameters["M_inf"] == Parameter(0.8, 0.5, 1.2)
    assert not panel.parameter_error.isVisibleTo(panel)
    assert panel.sliders["M_inf"].value() == 429                    # (0.8 - 0.5) / 0.7 of the way


def test_add_and_remove_rows_with_free_names(panel, qtbot):
    document = panel.document
    add_parameter, remove_parameter = _button(panel.parameter_box, "Add"), _button(panel.parameter_box, "Remove")
    add_parameter.click()
    add_parameter.click()
    assert list(document.equation.parameters) == ["M_inf", "k1", "k2"]
    assert document.equation.parameters["k2"] == Parameter(1.0, 0.0, 2.0)
    assert document.undo_stack.undoText() == "Add parameter k2"
    assert list(panel.sliders) == ["M_inf", "k1", "k2"]
    panel.parameters.setCurrentCell(0, 0)
    remove_parameter.click()                                         # M_inf is used by the definition M
    assert "cannot remove 'M_inf'" in panel.parameter_error.text()
    assert "M_inf" in document.equation.parameters
    panel.parameters.setCurrentCell(1, 0)
    remove_parameter.click()
    assert list(document.equation.parameters) == ["M_inf", "k2"]
    assert document.undo_stack.undoText() == "Remove parameter k1"
    _button(panel.definition_box, "Add").click()
    assert document.equation.definitions == {"M": "M_inf*(1 + 0.35*exp(-(x**2 + 4*y**2)))", "q1": "0"}
    assert panel.definitions.rowCount() == 2 and panel.definitions.item(1, 0).text() == "q1"


def test_a_coefficient_error_in_another_coefficient_names_it(panel, qtbot):
    panel.document.set_coefficient("b", "zeta")   # the document takes it (e.g. a data name no longer loaded)
    qtbot.keyClicks(panel.coefficient_edits["a"], "1")
    assert panel.coefficient_errors["a"].text() == "b, column 1: unknown name 'zeta'"
    assert panel.coefficient_edits["a"].styleSheet() and not panel.coefficient_edits["b"].styleSheet()
    assert panel.document.equation.a == "1 - M**2"


def test_duplicate_equation_button_shows_the_copy(panel):
    panel.duplicate_button.click()
    assert panel.document.project.equation_names == ("hump flow", "hump flow (2)")
    assert panel.equation_choice.count() == 2 and panel.equation_choice.currentText() == "hump flow (2)"


def test_number_cells_and_slider_positions():
    assert format_number(None) == "" and format_number(0.1 + 0.2) == "0.3"
    assert parse_optional_number("  ", "x") is None and parse_optional_number("1e-3", "x") == 0.001
    with pytest.raises(ValueError, match="x must be finite"):
        parse_optional_number("inf", "x")
    assert slider_position(Parameter(5.0, 0.0, 4.0)) == SLIDER_STEPS      # clamped to the range
    assert slider_position(Parameter(1.0, 0.0, 4.0)) == SLIDER_STEPS // 4
    assert value_text(Parameter(0.07, 0.0, 0.12, "chord")) == "0.07 (chord)"
