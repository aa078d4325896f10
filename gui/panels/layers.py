"""What the map shows and what the mouse does: layer switches, the seeding tool for characteristics and how far
characteristics go on past the domain edge and the type-change line (kept in the study)."""

from __future__ import annotations

from PySide6.QtCore import Signal
from PySide6.QtWidgets import (
    QButtonGroup,
    QCheckBox,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QRadioButton,
    QVBoxLayout,
    QWidget,
)

from core.analysis.tracing import MAX_BOUNCES
from gui.document import LAYER_LABELS, Document
from gui.palette import FAMILY_COLOURS, PIN_COLOUR, SEGMENT_COLOUR, TYPE_COLOURS, TYPE_LINE_COLOUR
from gui.widgets import SteadySpinBox

__all__ = ["LayersPanel"]

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
        layout.addWidget(tool_box)
        layout.addStretch(1)
        document.layers_changed.connect(self.refresh)
        document.seeds_changed.connect(self.refresh)
        self.refresh()

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
