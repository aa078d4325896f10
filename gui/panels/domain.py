"""The domain editor: which rectangle of the plane is mapped and how fine the grid over it is.

Bounds and the parabolic tolerance apply once their text settles (a pause, Enter or leaving the field:
gui.settled_edits); node counts on Enter, leaving the box or a step of its arrows. A text with an error stays
in its field, the error shows under the form, and the document records it so the window says that the map
shows the last valid domain.
"""

from __future__ import annotations

import math

from PySide6.QtWidgets import QFormLayout, QLabel, QLineEdit, QVBoxLayout, QWidget

from core.domain import MAX_GRID, MIN_GRID, Domain
from gui.document import Document
from gui.settled_edits import SettledText
from gui.widgets import (
    SteadyComboBox,
    SteadySpinBox,
    chooser_row,
    error_label,
    purpose_label,
    push_button,
    show_choices,
    show_error,
)

__all__ = ["DomainPanel"]


class DomainPanel(QWidget):
    """Edits the shown domain of a Document: bounds, grid nodes, name; switches between domains."""

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        purpose = purpose_label("The rectangle that is classified, in the equation's own length units, and "
                                "the number of grid nodes across it (more nodes: finer zones, slower maps).")

        self.choice = SteadyComboBox()
        self.choice.setToolTip("Which of the study's domains is shown")
        self.choice.activated.connect(self.document.show_domain)
        self.duplicate_button = push_button("Duplicate", "Add a copy of this domain to the study and show it",
                                            self.document.duplicate_domain)
        row = chooser_row("Domain:", self.choice, self.duplicate_button)

        self.name = QLineEdit()
        self.name.setToolTip("A name for this domain")
        self.bounds: dict[str, QLineEdit] = {}
        self.settling: dict[str, SettledText] = {}
        form = QFormLayout()
        form.addRow("name", self.name)
        self.name.editingFinished.connect(self.apply)
        for key in ("xmin", "xmax", "ymin", "ymax"):
            edit = QLineEdit()
            edit.setObjectName(f"domain_{key}")
            edit.setToolTip(f"{key[0]} {'lower' if key.endswith('min') else 'upper'} bound")
            settling = SettledText(edit)
            settling.settled.connect(self.apply)
            self.bounds[key] = edit
            self.settling[key] = settling
        self.labels = {key: QLabel(key) for key in self.bounds}
        for key, edit in self.bounds.items():
            form.addRow(self.labels[key], edit)
        self.nodes: dict[str, SteadySpinBox] = {}
        for key, what in (("nx", "first"), ("ny", "second")):
            spin = SteadySpinBox()
            spin.setObjectName(f"domain_{key}")
            spin.setRange(MIN_GRID, MAX_GRID)
            spin.setToolTip(f"Grid nodes along the {what} variable, edges included ({MIN_GRID} to {MAX_GRID})")
            spin.setKeyboardTracking(False)
            spin.valueChanged.connect(self.apply)
            self.nodes[key] = spin
        self.node_labels = {"nx": QLabel("nodes across"), "ny": QLabel("nodes up")}
        form.addRow(self.node_labels["nx"], self.nodes["nx"])
        form.addRow(self.node_labels["ny"], self.nodes["ny"])
        self.tolerance = QLineEdit()
        self.tolerance.setObjectName("parabolic_tolerance")
        self.tolerance.setToolTip("A node counts as parabolic when |D| / (b² + 4|ac|) is at or below this "
                                  "dimensionless number (0 up to, not including, 1)")
        self.tolerance_settling = SettledText(self.tolerance)
        self.tolerance_settling.settled.connect(self._apply_tolerance)
        form.addRow("parabolic tolerance", self.tolerance)
        self.error = error_label()

        layout = QVBoxLayout(self)
        layout.addWidget(purpose)
        layout.addLayout(row)
        layout.addLayout(form)
        layout.addWidget(self.error)
        layout.addStretch(1)
        self._updating = False
        self._domain_name: str | None = None
        document.project_replaced.connect(self._forget_drafts)
        document.domain_changed.connect(self.refresh)
        document.equations_listed.connect(self.refresh)
        document.equation_changed.connect(self._name_axes)
        self.refresh()

    def refresh(self) -> None:
        project = self.document.project
        domain = self.document.domain
        if domain.name != self._domain_name:
            self._forget_drafts()
            self._domain_name = domain.name
        self._updating = True
        try:
            show_choices(self.choice, project.domain_names, project.shown_domain_index)
            self.name.setText(domain.name)
            kept = [_show_number(self.settling[key], getattr(domain, key), ".10g") for key in self.bounds]
            self.nodes["nx"].setValue(domain.nx)
            self.nodes["ny"].setValue(domain.ny)
            kept.append(_show_number(self.tolerance_settling, self.document.tolerance, "g"))
            if not any(kept):
                self.error.setVisible(False)
                self.document.set_unapplied("domain", "")
                self.document.set_unapplied("tolerance", "")
        finally:
            self._updating = False
        self._name_axes()

    def _forget_drafts(self) -> None:
        for settling in (*self.settling.values(), self.tolerance_settling):
            settling.forget_draft()

    def _name_axes(self) -> None:
        first, second = self.document.equation.variables
        for key in self.bounds:
            variable = first if key.startswith("x") else second
            self.labels[key].setText(f"{variable} {'from' if key.endswith('min') else 'to'}")
        self.node_labels["nx"].setText(f"nodes along {first}")
        self.node_labels["ny"].setText(f"nodes along {second}")

    def apply(self) -> None:
        """Build a Domain from the fields; show what is wrong instead when it is not valid."""
        if self._updating:
            return
        try:
            values = {}
            for key, edit in self.bounds.items():
                try:
                    values[key] = float(edit.text())
                except ValueError:
                    raise ValueError(f"{self.labels[key].text()}: {edit.text()!r} is not a number") from None
                if not math.isfinite(values[key]):
                    raise ValueError(f"{self.labels[key].text()} must be finite")
            domain = Domain(values["xmin"], values["xmax"], values["ymin"], values["ymax"],
                            self.nodes["nx"].value(), self.nodes["ny"].value(),
                            self.name.text().strip() or "domain")
            self.document.set_unapplied("domain", "")
            self.document.set_domain(domain)  # ValueError for a name another domain of the project has
        except ValueError as error:
            show_error(self.error, str(error))
            self.document.set_unapplied("domain", str(error))
            return
        self.error.setVisible(False)

    def _apply_tolerance(self) -> None:
        if self._updating:
            return
        try:
            self.document.set_unapplied("tolerance", "")
            self.document.set_tolerance(float(self.tolerance.text()))
        except ValueError as error:
            show_error(self.error, f"parabolic tolerance: {error}")
            self.document.set_unapplied("tolerance", str(error))
            return
        self.error.setVisible(False)


def _show_number(settling: SettledText, value: float, spec: str) -> bool:
    """Show ``value`` in a settled field; True when the field keeps a draft with an error instead.

    A field whose text already reads as ``value`` (1.50 for 1.5) keeps its spelling and cursor."""
    try:
        same = float(settling.edit.text()) == value
    except ValueError:
        same = False
    if same:
        settling.adopt()
        return False
    return not settling.show(format(value, spec))
