"""The optional lower-order terms d u_x + e u_y + f u of the shown equation, each checked as the user types.

The fields work as the coefficients' do (gui.panels.coefficient_fields): every key parses the text through core
(core.equations.lower_order) and shows what is wrong under the field with its column; the text reaches the
document only once it settles (gui.settled_edits) and parses, the settled texts of one visit to a field being
one undo step. An empty field states no term. The terms never change the type, so an edit here recomputes
nothing on the map (the document emits only ``lower_order_changed``).
"""

from __future__ import annotations

from PySide6.QtWidgets import QFormLayout, QGroupBox, QLabel, QLineEdit

from core.equations.equation import LOWER_ORDER_NAMES, Equation
from gui.document import Document
from gui.settled_edits import CheckedFields, SettledText, checked_row

__all__ = ["LowerOrderFields"]



class LowerOrderFields(CheckedFields, QGroupBox):
    """One line edit per term (``edits``: "d", "e", "f") with an error line under each (``errors``)."""

    def __init__(self, document: Document) -> None:
        super().__init__("Lower-order terms (optional)")
        self.document = document
        self.setToolTip("d u_x + e u_y + f u: leave a field empty when the study does not state that term. "
                        "They never change the type or the map.")
        self._merge_keys: dict[str, str] = {}
        self._equation_name: str | None = None
        self.edits: dict[str, QLineEdit] = {}
        self.errors: dict[str, QLabel] = {}
        self.settling: dict[str, SettledText] = {}
        form = QFormLayout(self)
        for which in LOWER_ORDER_NAMES:
            self.edits[which], self.errors[which], self.settling[which] = checked_row(
                form, f"{which} =", f"lower_order_{which}", self._tip(which, ("x", "y")), self, which)
            self.edits[which].setPlaceholderText("not stated")

    @staticmethod
    def _tip(which: str, variables: tuple[str, str]) -> str:
        multiplies = {"d": f"u_{variables[0]}", "e": f"u_{variables[1]}", "f": "u"}[which]
        return (f"Coefficient {which} of {multiplies}, an expression in the variables, parameters and definitions; "
                "empty: not stated")

    def refresh(self, equation: Equation) -> None:
        """Show the terms of ``equation`` (drafts typed over an unchanged term are kept, as the coefficients')."""
        if equation.name != self._equation_name:
            self.forget_drafts()
            self._equation_name = equation.name
        for which, settling in self.settling.items():
            self.edits[which].setToolTip(self._tip(which, tuple(equation.variables)))
            if settling.show(equation.lower_order.get(which, "")):
                self._show_error(which, "")
                self.document.set_unapplied(f"lower_order.{which}", "")
            else:
                self._typed(which, self.edits[which].text())

    def _problem(self, which: str, text: str) -> str:
        error = self.document.check_lower_order(which, text)
        if error is None:
            return ""
        return (f"column {error.column}: " if error.column is not None else "") + error.message

    def _settled(self, which: str, text: str) -> None:
        problem = self._problem(which, text)
        self._show_error(which, problem)
        self.document.set_unapplied(f"lower_order.{which}", problem)
        if problem or text.strip() == self.document.equation.lower_order.get(which, ""):
            return
        if which not in self._merge_keys:
            self._merge_keys[which] = self.document.new_merge_key(f"lower order {which}")
        self.document.set_lower_order(which, text, merge_key=self._merge_keys[which])
