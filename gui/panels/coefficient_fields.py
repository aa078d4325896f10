"""The fields of the second-order coefficients a, b and c, each checked as the user types.

Every keystroke compiles a candidate equation through core (the whitelist parser) and shows what is wrong
under the field at fault, with its column. The text reaches the document only once it settles (a pause,
Enter or leaving the field: gui.settled_edits) and compiles; the settled texts of one visit to a field are one
undo step. A text that settles with an error leaves the document, and so the map, as it was, and the
document records it so the window can say that the map shows the last valid formula.
"""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtWidgets import QFormLayout, QGroupBox, QLabel, QLineEdit

from core.equations.equation import COEFFICIENT_NAMES, Equation
from gui.document import Document
from gui.settled_edits import CheckedFields, SettledText, checked_row

__all__ = ["CoefficientFields"]

_MULTIPLIES = {"a": "multiplies u_xx", "b": "multiplies u_xy", "c": "multiplies u_yy"}


class CoefficientFields(CheckedFields, QGroupBox):
    """One line edit per coefficient (``edits``) with an error line under each (``errors``), by name."""

    def __init__(self, document: Document) -> None:
        super().__init__("Second-order coefficients")
        self.document = document
        self._merge_keys: dict[str, str] = {}
        self._equation_name: str | None = None
        self.edits: dict[str, QLineEdit] = {}
        self.errors: dict[str, QLabel] = {}
        self.settling: dict[str, SettledText] = {}
        form = QFormLayout(self)
        for which in COEFFICIENT_NAMES:
            tip = (f"Coefficient {which}: {_MULTIPLIES[which]}; an expression in the variables, parameters and "
                   "definitions")
            self.edits[which], self.errors[which], self.settling[which] = checked_row(
                form, f"{which} =", f"coefficient_{which}", tip, self, which)

    def refresh(self, equation: Equation) -> None:
        """Show the coefficients of ``equation`` (a field already showing its text keeps its cursor; one holding
        a draft typed over the same coefficient of the same equation keeps the draft and says again what is
        wrong with it)."""
        if equation.name != self._equation_name:
            self.forget_drafts()
            self._equation_name = equation.name
        for which, settling in self.settling.items():
            if settling.show(equation.coefficient_text(which)):
                self._show_error(which, "")
                self.document.set_unapplied(which, "")
            else:
                self._typed(which, self.edits[which].text())

    def _problem(self, which: str, text: str) -> str:
        """What is wrong with the equation if coefficient ``which`` read ``text``; empty when it compiles."""
        error = self.document.check_equation(replace(self.document.equation, **{which: text}))
        if error is None:
            return ""
        where = f"column {error.column}: " if error.column is not None else ""
        if error.field in self.errors and error.field != which:
            where = f"{error.field}, " + where
        return f"{where}{error.message}"

    def _settled(self, which: str, text: str) -> None:
        problem = self._problem(which, text)
        self._show_error(which, problem)
        self.document.set_unapplied(which, problem)
        if problem or text == self.document.equation.coefficient_text(which):
            return
        if which not in self._merge_keys:
            self._merge_keys[which] = self.document.new_merge_key(which)
        self.document.set_coefficient(which, text, merge_key=self._merge_keys[which])
