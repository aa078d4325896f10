"""The fields of the second-order coefficients a, b and c, each checked as the user types.

Every keystroke compiles a candidate equation through core (the whitelist parser). A candidate that compiles
becomes an edit of the document (a burst of typing in one field, until it loses focus, is one undo step); one
that does not leaves the document, and so the map, as it was and shows the error under the field at fault,
with its column.
"""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtWidgets import QFormLayout, QGroupBox, QLabel, QLineEdit, QVBoxLayout

from core.equations.equation import COEFFICIENT_NAMES, Equation
from gui.document import Document
from gui.widgets import error_label, show_error

__all__ = ["CoefficientFields"]

_BAD_FIELD = "QLineEdit { border: 2px solid #B00020; }"
_MULTIPLIES = {"a": "multiplies u_xx", "b": "multiplies u_xy", "c": "multiplies u_yy"}


class CoefficientFields(QGroupBox):
    """One line edit per coefficient (``edits``) with an error line under each (``errors``), by name."""

    def __init__(self, document: Document) -> None:
        super().__init__("Second-order coefficients")
        self.document = document
        self._merge_keys: dict[str, str] = {}
        self.edits: dict[str, QLineEdit] = {}
        self.errors: dict[str, QLabel] = {}
        form = QFormLayout(self)
        for which in COEFFICIENT_NAMES:
            edit = QLineEdit()
            edit.setObjectName(f"coefficient_{which}")
            edit.setToolTip(f"Coefficient {which}: {_MULTIPLIES[which]}; an expression in the variables, "
                            "parameters and definitions")
            edit.textEdited.connect(lambda text, which=which: self._typed(which, text))
            edit.editingFinished.connect(lambda which=which: self._merge_keys.pop(which, None))
            error = error_label()
            column = QVBoxLayout()
            column.setSpacing(1)
            column.addWidget(edit)
            column.addWidget(error)
            form.addRow(f"{which} =", column)
            self.edits[which] = edit
            self.errors[which] = error

    def refresh(self, equation: Equation) -> None:
        """Show the coefficients of ``equation`` (a field already showing its text keeps its cursor)."""
        for which, edit in self.edits.items():
            text = equation.coefficient_text(which)
            if edit.text() != text:
                edit.setText(text)
            self._show_error(which, "")

    def _show_error(self, which: str, text: str) -> None:
        show_error(self.errors[which], text)
        self.edits[which].setStyleSheet(_BAD_FIELD if text else "")

    def _typed(self, which: str, text: str) -> None:
        error = self.document.check_equation(replace(self.document.equation, **{which: text}))
        if error is not None:
            where = f"column {error.column}: " if error.column is not None else ""
            if error.field in self.errors and error.field != which:
                where = f"{error.field}, " + where
            self._show_error(which, f"{where}{error.message}")
            return
        self._show_error(which, "")
        if which not in self._merge_keys:
            self._merge_keys[which] = self.document.new_merge_key(which)
        self.document.set_coefficient(which, text, merge_key=self._merge_keys[which])
