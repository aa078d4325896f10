"""What the map shows and what the mouse does: layer switches, the field layer (which quantity shades the map,
its colour map and iso-lines), the certified layer (its minimum cell and cell budget), the seeding tool for characteristics and how far characteristics go on past the
domain edge and the type-change line (all kept in the study)."""

from __future__ import annotations

import math
from dataclasses import replace

from PySide6.QtCore import Signal
from PySide6.QtWidgets import (
    QButtonGroup,
    QCheckBox,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QPushButton,
    QRadioButton,
    QVBoxLayout,
    QWidget,
)

from core.analysis.field_values import field_quantities
from core.analysis.tracing import MAX_BOUNCES
from core.project.model import FIELD_COLOUR_MAPS, MAX_ISO_VALUES, CertifiedLayerSettings, FieldLayerSettings
from gui.document import LAYER_LABELS, Document
from gui.field_layer import COLOUR_MAP_LABELS
from gui.palette import FAMILY_COLOURS, PIN_COLOUR, SEGMENT_COLOUR, TYPE_COLOURS, TYPE_LINE_COLOUR
from gui.widgets import SteadyComboBox, SteadySpinBox

__all__ = ["LayersPanel", "parse_iso_values"]


def parse_iso_values(text: str) -> tuple[float, ...]:
    """'0, 0.5 1' -> (0.0, 0.5, 1.0); ValueError with a one-line reason for anything else."""
    parts = [part for part in text.replace(";", ",").replace(",", " ").split() if part]
    values = []
    for part in parts:
        try:
            value = float(part)
        except ValueError:
            raise ValueError(f"{part!r} is not a number") from None
        if not math.isfinite(value):
            raise ValueError(f"{part!r} is not a finite number")
        values.append(value)
    if len(values) > MAX_ISO_VALUES:
        raise ValueError(f"at most {MAX_ISO_VALUES} iso values, got {len(values)}")
    return tuple(values)

MIN_CELL_CHOICES = (1e-2, 1e-3, 1e-4, 1e-5, 1e-6)          # of the domain's shorter side
CELL_BUDGET_CHOICES = (100_000, 1_000_000, 4_000_000, 16_000_000, 64_000_000)

_SAMPLE_COLOURS = {
    "type_map": TYPE_COLOURS[1],
    "type_lines": TYPE_LINE_COLOUR,
    "family_1": FAMILY_COLOURS[1],
    "family_2": FAMILY_COLOURS[2],
    "pins": PIN_COLOUR,
    "seeds": SEGMENT_COLOUR,
    "legend": "#555555",
}
_TIPS = {
    "type_map": "Colour each grid node by the local type of the equation",
    "type_lines": "Draw the curves where the type changes (D = 0)",
    "family_1": "Characteristics of family 1 (solid blue)",
    "family_2": "Characteristics of family 2 (dashed bluish green)",
    "pins": "Show pinned points and their labels",
    "seeds": "Show the segments that seeded characteristic nets",
    "legend": "Show the legend under the map",
}


class LayersPanel(QWidget):
    """Layer check boxes bound to the document, plus the click/drag tool and its seeding options."""

    mode_changed = Signal(str)   # 'pin' or 'segment'

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        layers_box = QGroupBox("Map layers (what is drawn)")
        layers_layout = QVBoxLayout(layers_box)
        self.boxes: dict[str, QCheckBox] = {}
        for name, label in LAYER_LABELS.items():
            box = QCheckBox(label)
            box.setObjectName(f"layer_{name}")
            box.setToolTip(_TIPS[name])
            box.setStyleSheet(f"QCheckBox {{ border-left: 5px solid {_SAMPLE_COLOURS[name]}; padding-left: 4px; }}")
            box.toggled.connect(lambda checked, name=name: self.document.set_layer(name, checked))
            layers_layout.addWidget(box)
            self.boxes[name] = box

        field_box = self._field_box()
        certified_box = self._certified_box()

        tool_box = QGroupBox("Mouse tool (left button on the map)")
        self.pin_tool = QRadioButton("Click: pin a point")
        self.pin_tool.setToolTip("A left click pins a point and reads it in the Pins panel")
        self.segment_tool = QRadioButton("Drag: seed characteristics along a segment")
        self.segment_tool.setToolTip("A left drag draws a segment; characteristics start from evenly spaced "
                                     "points along it")
        self.pin_tool.setChecked(True)
        group = QButtonGroup(self)
        group.addButton(self.pin_tool)
        group.addButton(self.segment_tool)
        self.pin_tool.toggled.connect(lambda on: self.mode_changed.emit("pin" if on else "segment"))
        self.seed_count = SteadySpinBox()
        self.seed_count.setRange(1, 200)
        self.seed_count.setValue(12)
        self.seed_count.setToolTip("How many seed points along a dragged segment (ends included)")
        self.family_boxes = {}
        families_row = QHBoxLayout()
        families_row.addWidget(QLabel("families:"))
        for family in (1, 2):
            box = QCheckBox(str(family))
            box.setChecked(True)
            box.setToolTip(f"Trace family {family} from each seed")
            box.setStyleSheet(f"QCheckBox {{ color: {FAMILY_COLOURS[family]}; font-weight: bold; }}")
            families_row.addWidget(box)
            self.family_boxes[family] = box
        families_row.addStretch(1)
        count_row = QHBoxLayout()
        count_row.addWidget(QLabel("seeds per segment:"))
        count_row.addWidget(self.seed_count)
        count_row.addStretch(1)
        self.bounces = SteadySpinBox()
        self.bounces.setObjectName("characteristic_bounces")
        self.bounces.setRange(0, MAX_BOUNCES)
        self.bounces.setKeyboardTracking(False)      # typed numbers apply on Enter or leaving the box
        self.bounces.setToolTip("Every characteristic of the study goes on as the other family where it meets the "
                                "domain edge (reflected) or the type-change line (turned back), up to this many "
                                "times on each side of its seed; 0 stops it there (undoable, saved with the study)")
        self.bounces.valueChanged.connect(self.document.set_bounces)
        bounces_row = QHBoxLayout()
        bounces_row.addWidget(QLabel("go on past edges / type-change lines:"))
        bounces_row.addWidget(self.bounces)
        bounces_row.addWidget(QLabel("times each way"))
        bounces_row.addStretch(1)
        self.clear_button = QPushButton("Remove all characteristics")
        self.clear_button.setToolTip("Remove every seed point and segment (undoable)")
        self.clear_button.clicked.connect(self.document.clear_seeds)
        tool_layout = QVBoxLayout(tool_box)
        tool_layout.addWidget(self.pin_tool)
        tool_layout.addWidget(self.segment_tool)
        tool_layout.addLayout(count_row)
        tool_layout.addLayout(families_row)
        tool_layout.addLayout(bounces_row)
        tool_layout.addWidget(self.clear_button)

        layout = QVBoxLayout(self)
        layout.addWidget(layers_box)
        layout.addWidget(field_box)
        layout.addWidget(certified_box)
        layout.addWidget(tool_box)
        layout.addStretch(1)
        document.layers_changed.connect(self.refresh)
        document.seeds_changed.connect(self.refresh)
        for signal in (document.equation_changed, document.data_changed, document.project_replaced):
            signal.connect(self.refresh)
        self.refresh()

    # -- the field layer -----------------------------------------------------------------------------------
    def _field_box(self) -> QGroupBox:
        box = QGroupBox("Field layer (shade a quantity)")
        self.field_shown = QCheckBox("Shade the map by a quantity")
        self.field_shown.setObjectName("field_shown")
        self.field_shown.setToolTip("Draw the chosen quantity over the map with a colour bar; the type-change "
                                    "lines stay on top (undoable, saved with the study)")
        self.field_shown.toggled.connect(lambda on: self._set_field(shown=on))
        self.field_quantity = SteadyComboBox()
        self.field_quantity.setObjectName("field_quantity")
        self.field_quantity.setToolTip("D / (b² + 4|ac|) says how close to changing type each place is (0 on the "
                                       "type-change line, −1 and 1 far from it)")
        self.field_quantity.activated.connect(self._quantity_chosen)
        self.field_colours = SteadyComboBox()
        self.field_colours.setObjectName("field_colour_map")
        for name in FIELD_COLOUR_MAPS:
            self.field_colours.addItem(COLOUR_MAP_LABELS[name], name)
        self.field_colours.setToolTip("Perceptually uniform colour maps that stay readable with colour-vision "
                                      "deficiencies; the diverging one puts 0 in its middle")
        self.field_colours.activated.connect(lambda index: self._set_field(colour_map=self.field_colours.itemData(index)))
        self.field_iso = QLineEdit()
        self.field_iso.setObjectName("field_iso_values")
        self.field_iso.setPlaceholderText("e.g. -0.5, 0, 0.5")
        self.field_iso.setToolTip("Values at which iso-lines are drawn, separated by commas or spaces (Enter "
                                  "applies; empty: none)")
        self.field_iso.editingFinished.connect(self._iso_edited)
        self.field_iso_problem = QLabel("")
        self.field_iso_problem.setStyleSheet("QLabel { color: #B00020; }")
        self.field_iso_problem.setVisible(False)
        form = QFormLayout(box)
        form.addRow(self.field_shown)
        form.addRow("quantity:", self.field_quantity)
        form.addRow("colours:", self.field_colours)
        form.addRow("iso-lines at:", self.field_iso)
        form.addRow(self.field_iso_problem)
        return box

    def _set_field(self, **changes) -> bool:
        view = self.document.project.view
        field = replace(view.field, **changes)
        if field == view.field:
            return False
        what = ("Show" if field.shown else "Hide") + " the field layer" if "shown" in changes else "Change the field layer"
        return self.document.edit(replace(self.document.project, view=replace(view, field=field)), what)

    def _quantity_chosen(self, index: int) -> None:
        kind, name = self.field_quantity.itemData(index)
        self._set_field(kind=kind, quantity=name)

    def _iso_edited(self) -> None:
        try:
            values = parse_iso_values(self.field_iso.text())
        except ValueError as error:
            self.field_iso_problem.setText(f"Not applied: {error}")
            self.field_iso_problem.setVisible(True)
            return
        self.field_iso_problem.setVisible(False)
        self._set_field(iso_values=values)

    def _refresh_field(self, field: FieldLayerSettings) -> None:
        widgets = (self.field_shown, self.field_quantity, self.field_colours)
        for widget in widgets:
            widget.blockSignals(True)
        self.field_shown.setChecked(field.shown)
        self.field_quantity.clear()
        chosen = -1
        for quantity in field_quantities(self.document.equation, self.document.data_names):
            self.field_quantity.addItem(quantity.title, (quantity.kind, quantity.name))
            if (quantity.kind, quantity.name) == (field.kind, field.quantity):
                chosen = self.field_quantity.count() - 1
        if chosen < 0:
            self.field_quantity.addItem(f"{field.quantity} (not in this equation)", (field.kind, field.quantity))
            chosen = self.field_quantity.count() - 1
        self.field_quantity.setCurrentIndex(chosen)
        self.field_colours.setCurrentIndex(max(0, self.field_colours.findData(field.colour_map)))
        for widget in widgets:
            widget.blockSignals(False)
        if not self.field_iso.hasFocus() and not self.field_iso_problem.isVisible():
            self.field_iso.setText(", ".join(f"{v:g}" for v in field.iso_values))

    # -- the certified layer -------------------------------------------------------------------------------
    def _certified_box(self) -> QGroupBox:
        box = QGroupBox("Certified layer (proven by interval bounds)")
        self.certified_shown = QCheckBox("Prove the types cell by cell")
        self.certified_shown.setObjectName("certified_shown")
        self.certified_shown.setToolTip("Bound D over cells and refine where the bounds cannot tell: proven zones "
                                        "are tinted, undecided cells hatched, and pockets the grid missed ringed "
                                        "(runs in the background; undoable, saved with the study)")
        self.certified_shown.toggled.connect(lambda on: self._set_certified(shown=on))
        self.certified_min_cell = SteadyComboBox()
        self.certified_min_cell.setObjectName("certified_min_cell")
        self.certified_min_cell.setToolTip("The smallest cell side refined, as a fraction of the domain's shorter "
                                           "side (dimensionless): smaller cells find smaller pockets, at a cost")
        self.certified_min_cell.activated.connect(
            lambda index: self._set_certified(min_cell=self.certified_min_cell.itemData(index)))
        self.certified_budget = SteadyComboBox()
        self.certified_budget.setObjectName("certified_max_cells")
        self.certified_budget.setToolTip("How many cells the refinement may examine in all; what is still "
                                         "undecided when it runs out stays hatched")
        self.certified_budget.activated.connect(
            lambda index: self._set_certified(max_cells=self.certified_budget.itemData(index)))
        form = QFormLayout(box)
        form.addRow(self.certified_shown)
        form.addRow("smallest cell (of shorter side):", self.certified_min_cell)
        form.addRow("cell budget:", self.certified_budget)
        return box

    def _set_certified(self, **changes) -> bool:
        view = self.document.project.view
        certified = replace(view.certified, **changes)
        if certified == view.certified:
            return False
        what = (("Show" if certified.shown else "Hide") + " the certified layer" if "shown" in changes
                else "Change the certified layer")
        return self.document.edit(replace(self.document.project, view=replace(view, certified=certified)), what)

    def _refresh_certified(self, certified: CertifiedLayerSettings) -> None:
        for combo, choices, value, text in (
                (self.certified_min_cell, MIN_CELL_CHOICES, certified.min_cell, "{:g}"),
                (self.certified_budget, CELL_BUDGET_CHOICES, certified.max_cells, "{:,}")):
            combo.blockSignals(True)
            combo.clear()
            for choice in sorted({*choices, value}, reverse=combo is self.certified_min_cell):
                combo.addItem(text.format(choice), choice)
            combo.setCurrentIndex(combo.findData(value))
            combo.blockSignals(False)
        self.certified_shown.blockSignals(True)
        self.certified_shown.setChecked(certified.shown)
        self.certified_shown.blockSignals(False)

    def families(self) -> tuple[int, ...]:
        chosen = tuple(f for f, box in self.family_boxes.items() if box.isChecked())
        return chosen or (1, 2)

    def refresh(self) -> None:
        for name, box in self.boxes.items():
            box.blockSignals(True)
            box.setChecked(self.document.layer_visible(name))
            box.blockSignals(False)
        self.bounces.blockSignals(True)
        self.bounces.setValue(self.document.bounces)
        self.bounces.blockSignals(False)
        self._refresh_field(self.document.project.view.field)
        self._refresh_certified(self.document.project.view.certified)
