"""The shown equation's definitions and parameters as editable tables, checked as the user types.

Each table lists named rows of the equation. A cell's text is committed on Enter, on leaving the cell or after
a typing pause (gui.settled_edits.SettlingDelegate). A commit that leaves an equation that compiles becomes an
edit of the document (all edits of one table merge into one undo step until another edit comes between); one
that does not leaves the document as it was, says why under the table and is recorded in the document so the
window says the map shows the last valid rows. Removing a row that others still use is refused the same way.
The parameters' box also holds their sliders (gui.panels.parameter_sliders).
"""

from __future__ import annotations

import math
from dataclasses import replace

from PySide6.QtWidgets import (
    QAbstractItemView,
    QGroupBox,
    QHeaderView,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from core.equations.equation import Equation, Parameter
from core.project.names import numbered_name
from gui.document import Document
from gui.panels.parameter_sliders import ParameterSliders
from gui.settled_edits import SettlingDelegate
from gui.widgets import button_row, error_label, push_button, show_error

__all__ = ["DefinitionTable", "ParameterTable", "format_number", "parse_optional_number"]


def format_number(value: float | None) -> str:
    """A number as a table shows it (up to 10 significant digits); empty for None."""
    return "" if value is None else f"{value:.10g}"


def parse_optional_number(text: str, what: str) -> float | None:
    """The finite number in ``text``, None for an empty cell; ValueError naming ``what`` otherwise."""
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


class _NamedRowsTable(QGroupBox):
    """A titled table of one kind of named rows of the shown equation, its error line and Add/Remove buttons.

    ``field`` is the Equation attribute the rows are (a dict by name); subclasses fill the table, read it
    back, make a new row and name each kind of edit for the undo stack.
    """

    field = ""

    def __init__(self, document: Document, title: str, headers: list[str], tooltip: str,
                 what: str, above: QWidget | None = None) -> None:
        super().__init__(title)
        self.document = document
        self._updating = False
        self._merge_key = ""
        self._draft_over: dict | None = None     # the document's rows a table with an error was typed over
        self._equation_name: str | None = None
        self.table = QTableWidget(0, len(headers))
        self.table.setItemDelegate(SettlingDelegate(self.table))
        self.table.setHorizontalHeaderLabels(headers)
        self.table.verticalHeader().setVisible(False)
        self.table.setToolTip(tooltip)
        self.table.itemChanged.connect(self._edited)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setMinimumHeight(90)
        self.error = error_label()
        layout = QVBoxLayout(self)
        if above is not None:
            layout.addWidget(above)
        layout.addWidget(self.table)
        layout.addWidget(self.error)
        layout.addLayout(button_row(
            push_button("Add", f"Add a {what}" + (" row" if what == "definition" else ""), self._add),
            push_button("Remove", f"Remove the selected {what}", self._remove)))

    # -- to be given by each kind of rows -------------------------------------------------------------------
    def _fill(self, equation: Equation) -> None:
        raise NotImplementedError

    def _read(self) -> dict:
        """The rows as the table shows them; ValueError saying what is wrong with them."""
        raise NotImplementedError

    def _new_row(self) -> tuple[str, object]:
        """A name no definition or parameter has yet, and the row to add under it."""
        raise NotImplementedError

    def _undo_text(self, action: str, name: str) -> str:
        """What the undo stack calls an ``action`` ("edit", "add", "remove") of the row ``name``."""
        raise NotImplementedError

    # -- shared ---------------------------------------------------------------------------------------------
    def refresh(self, equation: Equation) -> None:
        """Show the rows of ``equation``; clears a stale error. Rows with an error typed over rows the
        document still has stay as typed (an edit elsewhere does not wipe them)."""
        if self._draft_over is not None and getattr(equation, self.field) == self._draft_over \
                and equation.name == self._equation_name:
            return
        self._equation_name = equation.name
        self._fill_quietly(equation)
        self.error.setVisible(False)
        self._forget_draft()

    def _fill_quietly(self, equation: Equation) -> None:
        self._updating = True
        try:
            self._fill(equation)
        finally:
            self._updating = False

    def forget_drafts(self) -> None:
        """The next refresh shows the document's rows whatever was typed (another study is shown)."""
        self._draft_over = None

    def _forget_draft(self) -> None:
        self._draft_over = None
        self.document.set_unapplied(self.field, "")

    def _put(self, row: int, column: int, text: str) -> None:
        """Show ``text`` in a cell, changing the item in place; the cell being edited is left alone."""
        item = self.table.item(row, column)
        if item is None:
            self.table.setItem(row, column, QTableWidgetItem(text))
        elif item.text() != text and not self._is_being_edited(row, column):
            item.setText(text)

    def _is_being_edited(self, row: int, column: int) -> bool:
        current = self.table.currentIndex()
        return self.table.state() == QAbstractItemView.State.EditingState \
            and (current.row(), current.column()) == (row, column)

    def _rows(self) -> dict:
        return getattr(self.document.equation, self.field)

    def _edited(self, item: QTableWidgetItem) -> None:
        if self._updating:
            return
        try:
            rows = self._read()
            error = self.document.check_equation(replace(self.document.equation, **{self.field: rows}))
            if error is not None:
                raise ValueError(str(error))
        except ValueError as error:
            show_error(self.error, str(error))
            self._draft_over = dict(self._rows())
            self.document.set_unapplied(self.field, str(error))
            return
        self.error.setVisible(False)
        self._forget_draft()
        if not self._merge_key:
            self._merge_key = self.document.new_merge_key(self.field)
        self._store(rows, self._undo_text("edit", ""), merge_key=self._merge_key)

    def _store(self, rows: dict, text: str, *, merge_key: str = "") -> None:
        self.document.set_equation(replace(self.document.equation, **{self.field: rows}), text,
                                   merge_key=merge_key)

    def _add(self) -> None:
        name, row = self._new_row()
        self._store({**self._rows(), name: row}, self._undo_text("add", name))

    def _remove(self) -> None:
        row = self.table.currentRow()
        names = list(self._rows())
        if not 0 <= row < len(names):
            return
        rows = dict(self._rows())
        del rows[names[row]]
        error = self.document.check_equation(replace(self.document.equation, **{self.field: rows}))
        if error is not None:
            show_error(self.error, f"cannot remove {names[row]!r}: {error}")
            return
        self._store(rows, self._undo_text("remove", names[row]))

    def _free_name(self, prefix: str) -> str:
        equation = self.document.equation
        return numbered_name(prefix, set(equation.definitions) | set(equation.parameters))


class DefinitionTable(_NamedRowsTable):
    """The equation's definitions: a name and an expression per row; rows may use each other in any order."""

    field = "definitions"

    def __init__(self, document: Document) -> None:
        super().__init__(document, "Definitions (named expressions usable in a, b, c)", ["name", "expression"],
                         "Each row defines a name; rows may use each other in any order", "definition")
        self.table.horizontalHeader().setSectionResizeMode(1, QHeaderView.ResizeMode.Stretch)

    def _fill(self, equation: Equation) -> None:
        self.table.setRowCount(len(equation.definitions))
        for row, (name, text) in enumerate(equation.definitions.items()):
            self._put(row, 0, name)
            self._put(row, 1, text)

    def _read(self) -> dict[str, str]:
        definitions: dict[str, str] = {}
        for row in range(self.table.rowCount()):
            name_item, text_item = self.table.item(row, 0), self.table.item(row, 1)
            name = name_item.text().strip() if name_item else ""
            text = text_item.text() if text_item else ""
            if not name:
                continue
            if name in definitions:
                raise ValueError(f"row {row + 1}: {name!r} is defined twice")
            definitions[name] = text
        return definitions

    def _new_row(self) -> tuple[str, str]:
        return self._free_name("q"), "0"

    def _undo_text(self, action: str, name: str) -> str:
        return "Edit definitions"


class ParameterTable(_NamedRowsTable):
    """The equation's parameters: value, optional slider range and unit per row, with the sliders above."""

    field = "parameters"

    def __init__(self, document: Document) -> None:
        self.slider_area = ParameterSliders(document)
        super().__init__(document, "Parameters (drag a slider to watch the zones move)",
                         ["name", "value", "minimum", "maximum", "unit"],
                         "Numbers used in the expressions; give a minimum and maximum for a slider; leave the "
                         "unit empty for a dimensionless parameter", "parameter", above=self.slider_area)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)

    def refresh(self, equation: Equation) -> None:
        """Show the parameters of ``equation`` and build their sliders anew."""
        super().refresh(equation)
        self.slider_area.rebuild(equation)

    def show_values(self, equation: Equation) -> None:
        """Only parameter values changed: update the cells, sliders and value labels in place."""
        self._fill_quietly(equation)
        if self._draft_over is not None:
            self.error.setVisible(False)
            self._forget_draft()
        self.slider_area.show_values(equation)

    def _fill(self, equation: Equation) -> None:
        self.table.setRowCount(len(equation.parameters))
        for row, (name, p) in enumerate(equation.parameters.items()):
            for column, text in enumerate((name, format_number(p.value), format_number(p.minimum),
                                           format_number(p.maximum), p.unit)):
                self._put(row, column, text)

    def _read(self) -> dict[str, Parameter]:
        old = self.document.equation.parameters
        parameters: dict[str, Parameter] = {}
        for row in range(self.table.rowCount()):
            cells = [self.table.item(row, c) for c in range(5)]
            name, value, low, high, unit = (cell.text().strip() if cell else "" for cell in cells)
            if not name:
                continue
            if name in parameters:
                raise ValueError(f"row {row + 1}: {name!r} is named twice")
            number = parse_optional_number(value, f"{name}: value")
            if number is None:
                raise ValueError(f"{name}: value is missing")
            minimum = parse_optional_number(low, f"{name}: minimum")
            maximum = parse_optional_number(high, f"{name}: maximum")
            if minimum is not None and maximum is not None and not minimum < maximum:
                raise ValueError(f"{name}: minimum ({minimum:g}) must be below maximum ({maximum:g})")
            description = old[name].description if name in old else ""
            parameters[name] = Parameter(number, minimum, maximum, unit, description)
        return parameters

    def _new_row(self) -> tuple[str, Parameter]:
        return self._free_name("k"), Parameter(1.0, 0.0, 2.0)

    def _undo_text(self, action: str, name: str) -> str:
        return {"edit": "Edit parameters", "add": f"Add parameter {name}", "remove": f"Remove parameter {name}"}[action]
