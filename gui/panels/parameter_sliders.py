"""One slider per ranged parameter of the shown equation: dragging one moves the zones on the map live.

A parameter with a minimum below its maximum gets a slider of ``SLIDER_STEPS`` steps across that range and a
label with its value and unit; a range spanning decades gets a logarithmic slider (gui.slider_scale). A whole
drag is one undo step (one merge key from press to release), named by the value it ends at; the drag signals
let the map switch to its faster drag mode. The wheel moves a slider only once it has keyboard focus
(gui.widgets.SteadySlider): scrolling the panel past one changes nothing. The wheel and arrow-key steps of one
visit to a slider (until it loses focus) are one undo step too.
"""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QGridLayout, QLabel, QWidget

from core.equations.equation import Equation, Parameter
from gui.document import Document
from gui.slider_scale import slider_scale
from gui.widgets import SteadySlider

__all__ = ["SLIDER_STEPS", "ParameterSliders", "range_note", "slider_position", "value_text"]

SLIDER_STEPS = 1000


def value_text(parameter: Parameter) -> str:
    """The value beside a slider, with its unit or "dimensionless"."""
    unit = parameter.unit or "dimensionless"
    return f"{parameter.value:.4g} ({unit})"


def range_note(parameter: Parameter) -> str:
    """'' inside the slider's range; else a note that the value (accepted as typed) lies outside it and the
    slider sits at its end."""
    if not _has_range(parameter) or parameter.minimum <= parameter.value <= parameter.maximum:
        return ""
    side = "below" if parameter.value < parameter.minimum else "above"
    return f"{side} the slider's range {parameter.minimum:g} to {parameter.maximum:g}"


def _show_value(label: QLabel, parameter: Parameter) -> None:
    """The value beside a slider, with the out-of-range note on a second line, in a warning colour."""
    note = range_note(parameter)
    label.setText(value_text(parameter) + (f"\n{note}" if note else ""))
    label.setStyleSheet("QLabel { color: #8A4B00; }" if note else "")
    label.setToolTip(f"The value is used as it is; the slider only spans {parameter.minimum:g} to "
                     f"{parameter.maximum:g}" if note else "")


def slider_position(parameter: Parameter) -> int:
    """Where the value sits on its slider, 0 to SLIDER_STEPS (clamped to the range; logarithmic for decades)."""
    if not parameter.maximum > parameter.minimum:
        return 0
    return slider_scale(parameter.minimum, parameter.maximum, SLIDER_STEPS).position_of(parameter.value)


def _has_range(parameter: Parameter) -> bool:
    return parameter.minimum is not None and parameter.maximum is not None \
        and parameter.minimum < parameter.maximum


class ParameterSliders(QWidget):
    """The sliders of the shown equation's ranged parameters, by name in ``sliders`` and ``slider_values``."""

    drag_started = Signal()
    drag_finished = Signal()

    def __init__(self, document: Document, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self._drag_key = ""
        self._step_keys: dict[str, str] = {}
        self.grid = QGridLayout(self)
        self.grid.setContentsMargins(0, 0, 0, 0)
        self.sliders: dict[str, SteadySlider] = {}
        self.slider_values: dict[str, QLabel] = {}

    def rebuild(self, equation: Equation) -> None:
        """One row (name, slider, value) per ranged parameter of ``equation``, replacing the old rows."""
        while self.grid.count():
            widget = self.grid.takeAt(0).widget()
            if widget is not None:
                widget.deleteLater()
        self.sliders.clear()
        self.slider_values.clear()
        self._step_keys.clear()
        row = 0
        for name, parameter in equation.parameters.items():
            if not _has_range(parameter):
                continue
            slider = SteadySlider(Qt.Orientation.Horizontal)
            slider.setObjectName(f"slider_{name}")
            slider.setRange(0, SLIDER_STEPS)
            slider.setValue(slider_position(parameter))
            scale = slider_scale(parameter.minimum, parameter.maximum, SLIDER_STEPS)
            slider.setProperty("logarithmic", scale.logarithmic)
            slider.setToolTip(f"{name} from {parameter.minimum:g} to {parameter.maximum:g}"
                              f"{' ' + parameter.unit if parameter.unit else ' (dimensionless)'}"
                              f"{', logarithmic slider' if scale.logarithmic else ''}"
                              f"{': ' + parameter.description if parameter.description else ''}")
            slider.sliderPressed.connect(lambda name=name: self._pressed(name))
            slider.sliderReleased.connect(self._released)
            slider.valueChanged.connect(lambda position, name=name: self._moved(name, position))
            slider.focus_left.connect(lambda name=name: self._step_keys.pop(name, None))
            value = QLabel()
            value.setObjectName(f"sliderValue_{name}")
            value.setMinimumWidth(120)
            _show_value(value, parameter)
            self.grid.addWidget(QLabel(name), row, 0)
            self.grid.addWidget(slider, row, 1)
            self.grid.addWidget(value, row, 2)
            self.sliders[name] = slider
            self.slider_values[name] = value
            row += 1

    def show_values(self, equation: Equation) -> None:
        """Move the sliders (except one being dragged) and their labels to the values of ``equation``."""
        for name, parameter in equation.parameters.items():
            slider = self.sliders.get(name)
            if slider is not None and not slider.isSliderDown():
                slider.blockSignals(True)
                slider.setValue(slider_position(parameter))
                slider.blockSignals(False)
            if name in self.slider_values:
                _show_value(self.slider_values[name], parameter)

    def _pressed(self, name: str) -> None:
        self._drag_key = self.document.new_merge_key(f"slider {name}")
        self.drag_started.emit()

    def _released(self) -> None:
        self._drag_key = ""
        self.drag_finished.emit()

    def _moved(self, name: str, position: int) -> None:
        parameter = self.document.equation.parameters.get(name)
        if parameter is None or parameter.minimum is None or parameter.maximum is None:
            return
        value = slider_scale(parameter.minimum, parameter.maximum, SLIDER_STEPS).value_at(position)
        if not self._drag_key and name not in self._step_keys:
            self._step_keys[name] = self.document.new_merge_key(f"slider {name}")
        key = self._drag_key or self._step_keys[name]
        self.document.set_parameter_value(name, value, merge_key=key)
