"""Picking a ready-made equation of the trades (core.equations.templates) to add to the study.

The dialog lists the templates by title; the one selected is described below the list (what it models, its
equation in mathematical form, its parameters with units, the trade quantities a pin reads, the data
quantities it can take and its suggested region). When the study's loaded data provide quantities the template
declares, a check box substitutes them for the template's own formulas. A template that would define a name
the loaded data already provide (and so hide the data silently) is never added without a question:
``template_equation`` finds such clashes, the dialog asks on "Add equation", and the window refuses a clash
nobody answered.
"""

from __future__ import annotations

import html
from dataclasses import dataclass, replace

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QCheckBox,
    QDialog,
    QDialogButtonBox,
    QLabel,
    QListWidget,
    QListWidgetItem,
    QMessageBox,
    QSplitter,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from core.equations.compiled import compile_equation
from core.equations.language import ExpressionError
from core.equations.templates import Template, TemplateError, list_templates, load_template
from gui.math_render import equation_html

__all__ = ["TemplateChoice", "TemplateDialog", "available_templates", "template_equation", "template_html"]

_TRADE_WORDS = {"mach": "local Mach number, flow angle, Mach angle, characteristic directions θ ± μ, "
                        "isentropic ratios",
                "small_disturbance": "local Mach number, Mach angle, characteristic directions ± μ",
                "froude": "Froude number, wave celerity, flow angle, wave angle, characteristic directions",
                "internal_wave": "ray slope and angle, whether the frequency lies in the window f < ω < N"}


@dataclass(frozen=True)
class TemplateChoice:
    """What the user picked: the template's name, whether loaded data replace the formulas the template
    declares they may (``use_data``), and how a remaining clash was settled (``clash``): "data" (the loaded
    quantity is read, the template's formula or parameter of that name dropped), "formulas" (the template's
    own stand, hiding those data) or "" (nobody was asked)."""

    name: str
    use_data: bool = True
    clash: str = ""


def template_equation(template: Template, data_names, use_data: bool, clash: str = ""):
    """(equation, unsettled): the template's equation as it would be added beside the loaded ``data_names``,
    and the loaded names its own definitions or parameters would hide without a ``clash`` answer (empty
    once ``clash`` is "data" or "formulas"). Quantities the template declares are settled by ``use_data``
    (the dialog's check box asks about exactly those)."""
    data_names = tuple(data_names)
    equation = template.equation
    declared = [name for name in template.quantities if name in data_names]
    if use_data and declared:
        equation = template.equation_with_data(declared)
    clashing = tuple(name for name in data_names if name in equation.definitions or name in equation.parameters)
    if clash == "data" and clashing:
        definitions = {k: v for k, v in equation.definitions.items() if k not in clashing}
        parameters = {k: v for k, v in equation.parameters.items() if k not in clashing}
        equation = replace(equation, definitions=definitions, parameters=parameters)
    unsettled = tuple(name for name in clashing if name not in template.quantities)
    return equation, () if clash in ("data", "formulas") else unsettled


def available_templates() -> tuple[tuple[Template | None, str], ...]:
    """(template, problem) for every shipped template, in name order; a broken file gives (None, reason)."""
    found = []
    for name in list_templates():
        try:
            found.append((load_template(name), ""))
        except TemplateError as error:
            found.append((None, str(error)))
    return tuple(found)


def template_html(template: Template, data_names: tuple[str, ...] = ()) -> str:
    """A description of ``template`` as rich text for the dialog."""
    parts = [f"<h3>{html.escape(template.title)}</h3><p>{html.escape(template.description)}</p>"]
    try:
        parts.append(f"<p style='font-size:12pt'>{equation_html(compile_equation(template.equation))}</p>")
    except ExpressionError as error:   # a template that does not compile is shipped broken: say so
        parts.append(f"<p style='color:#B00020'>This template does not compile: {html.escape(str(error))}</p>")
    rows = []
    for name, parameter in template.equation.parameters.items():
        unit = parameter.unit or "dimensionless"
        what = f" — {html.escape(parameter.description)}" if parameter.description else ""
        rows.append(f"<li><i>{html.escape(name)}</i> = {parameter.value:g} ({html.escape(unit)}){what}</li>")
    if rows:
        parts.append(f"<p><b>Parameters</b></p><ul>{''.join(rows)}</ul>")
    if template.trade:
        kinds = "; ".join(_TRADE_WORDS.get(kind, kind) for kind in template.trade)
        parts.append(f"<p><b>Pins also read:</b> {html.escape(kinds)}.</p>")
    if template.peak_quantity:
        parts.append(f"<p><b>Pockets report the peak of</b> <i>{html.escape(template.peak_quantity)}</i>.</p>")
    if template.quantities:
        items = []
        for name, quantity in template.quantities.items():
            unit = f" ({html.escape(quantity.unit)})" if quantity.unit else ""
            loaded = " — <b>loaded</b>" if name in data_names else ""
            items.append(f"<li><i>{html.escape(name)}</i>{unit} in place of the formula for "
                         f"<i>{html.escape(quantity.replaces)}</i>{loaded}</li>")
        parts.append(f"<p><b>Data it can use</b></p><ul>{''.join(items)}</ul>")
    domain = template.domain
    if domain is not None:
        x, y = template.equation.variables
        parts.append(f"<p><b>Suggested region:</b> {x} from {domain.xmin:g} to {domain.xmax:g}, {y} from "
                     f"{domain.ymin:g} to {domain.ymax:g} ({domain.nx} × {domain.ny} grid nodes).</p>")
    return "".join(parts)


class TemplateDialog(QDialog):
    """Lists the templates; ``choice()`` after ``exec()`` says which one was taken."""

    def __init__(self, data_names: tuple[str, ...] = (), parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("New equation from a template")
        self.data_names = tuple(data_names)
        self.templates = [t for t, _ in available_templates() if t is not None]
        purpose = QLabel("Ready-made mixed-type equations. The one chosen is added to the study as a new "
                         "equation (with its suggested region) and shown; Undo removes it again.")
        purpose.setWordWrap(True)
        self.listing = QListWidget()
        self.listing.setObjectName("templateList")
        for template in self.templates:
            item = QListWidgetItem(template.title)
            item.setData(Qt.ItemDataRole.UserRole, template.name)
            item.setToolTip(template.description)
            self.listing.addItem(item)
        self.description = QTextBrowser()
        self.description.setObjectName("templateDescription")
        self.use_data = QCheckBox()
        self.use_data.setChecked(True)
        self.use_data.setVisible(False)
        self._usable = False
        splitter = QSplitter(Qt.Orientation.Vertical)
        splitter.addWidget(self.listing)
        splitter.addWidget(self.description)
        splitter.setSizes([170, 330])
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel)
        buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Add equation")
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        self.listing.currentRowChanged.connect(self._show)
        self.listing.itemDoubleClicked.connect(lambda item: self.accept())
        layout = QVBoxLayout(self)
        layout.addWidget(purpose)
        layout.addWidget(splitter, 1)
        layout.addWidget(self.use_data)
        layout.addWidget(buttons)
        self.resize(640, 620)
        if self.templates:
            self.listing.setCurrentRow(0)

    def _show(self, row: int) -> None:
        if not 0 <= row < len(self.templates):
            self.description.clear()
            self.use_data.setVisible(False)
            self._usable = False
            return
        template = self.templates[row]
        self.description.setHtml(template_html(template, self.data_names))
        usable = [name for name in template.quantities if name in self.data_names]
        self.use_data.setText(f"Use the loaded data for {', '.join(usable)} instead of the template's formulas")
        self.use_data.setVisible(bool(usable))
        self._usable = bool(usable)

    def choice(self) -> TemplateChoice | None:
        row = self.listing.currentRow()
        if not 0 <= row < len(self.templates):
            return None
        use_data = self.use_data.isChecked() and self._usable
        return TemplateChoice(self.templates[row].name, use_data, getattr(self, "_clash", ""))

    def accept(self) -> None:
        """Add the chosen template, asking first when its formulas would hide loaded data of the same name."""
        row = self.listing.currentRow()
        self._clash = ""
        if 0 <= row < len(self.templates):
            template = self.templates[row]
            use_data = self.use_data.isChecked() and self._usable
            _, unsettled = template_equation(template, self.data_names, use_data)
            if unsettled:
                answer = self.ask_clash(template, unsettled)
                if answer == "cancel":
                    return
                self._clash = answer
        super().accept()

    def ask_clash(self, template: Template, hidden: tuple[str, ...]) -> str:
        """'data', 'formulas' or 'cancel': which of two things named alike the new equation should read."""
        names = ", ".join(hidden)
        box = QMessageBox(QMessageBox.Icon.Question, "Loaded data and template formulas share names",
                          f"The study's loaded data provide {names}, and the template “{template.title}” defines "
                          f"{names} itself. Its equation can read either, not both.", parent=self)
        box.setObjectName("templateClash")
        data = box.addButton("Use the loaded data", QMessageBox.ButtonRole.AcceptRole)
        formulas = box.addButton("Use the template's formulas", QMessageBox.ButtonRole.ActionRole)
        box.addButton(QMessageBox.StandardButton.Cancel)
        box.setDefaultButton(data)
        box.exec()
        clicked = box.clickedButton()
        return "data" if clicked is data else "formulas" if clicked is formulas else "cancel"
