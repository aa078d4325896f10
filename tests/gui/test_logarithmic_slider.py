"""Parameters whose slider range spans decades move log-uniformly; typed values stay exactly as typed."""

from __future__ import annotations

import math

import pytest
from PySide6.QtCore import QPoint, Qt
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QStyle, QStyleOptionSlider

from core.domain import Domain
from core.equations.equation import Equation, Parameter
from core.project.model import new_project
from gui.document import Document
from gui.panels.equation import EquationPanel
from gui.panels.parameter_sliders import SLIDER_STEPS, slider_position
from gui.slider_scale import LOG_SPAN, slider_scale

TIDE, BUOYANCY = 1.0e-4, 1.0e-2        # rad/s: a semidiurnal tide and a strong buoyancy frequency (from memory)


def test_ranges_spanning_decades_are_logarithmic():
    assert slider_scale(TIDE, BUOYANCY, 1000).logarithmic           # a ratio of 100
    assert slider_scale(1.0, LOG_SPAN, 1000).logarithmic
    assert not slider_scale(1.0, 99.0, 1000).logarithmic
    assert not slider_scale(0.0, 1.0e6, 1000).logarithmic            # no logarithm of 0
    assert not slider_scale(-1.0e-3, 1.0e3, 1000).logarithmic


def test_logarithmic_mapping_both_ways():
    scale = slider_scale(TIDE, BUOYANCY, 1000)
    # Two decades over 1000 steps: each decade is 500 steps, so position 500 is the geometric mean.
    assert scale.value_at(0) == TIDE and scale.value_at(1000) == BUOYANCY
    assert scale.value_at(500) == pytest.approx(1.0e-3, rel=1e-12)
    assert scale.value_at(250) == pytest.approx(10 ** -3.5, rel=1e-12)
    assert scale.position_of(1.0e-3) == 500
    assert scale.position_of(10 ** -3.5) == 250
    for position in (1, 37, 499, 731, 999):
        assert scale.position_of(scale.value_at(position)) == position
    # Values between steps go to the nearest step; values outside the range to an end.
    assert scale.position_of(1.0e-3 * 10 ** (0.4 / 500)) == 500
    assert scale.position_of(1.0e-3 * 10 ** (0.6 / 500)) == 501
    assert scale.position_of(5.0e-5) == 0 and scale.position_of(1.0) == 1000
    assert scale.position_of(math.nan) == 0
    linear = slider_scale(0.3, 1.2, 1000)
    assert linear.value_at(556) == pytest.approx(0.3 + 0.9 * 0.556)
    assert linear.position_of(0.8) == 556


def _frequency_panel(qtbot, value: float = 1.4e-4) -> EquationPanel:
    equation = Equation(a="N**2 - omega**2", b="0", c="f**2 - omega**2", variables=("x", "z"),
                        parameters={"omega": Parameter(value, TIDE, BUOYANCY, unit="rad/s"),
                                    "N": Parameter(5.0e-3, 1.0e-3, 1.0e-2, unit="rad/s"),
                                    "f": Parameter(1.0e-4, 0.0, 1.4e-4, unit="rad/s")},
                        name="internal waves")
    panel = EquationPanel(Document(new_project(equation, Domain(0.0, 1.0, -1.0, 0.0, 11, 11))))
    qtbot.addWidget(panel)
    panel.resize(500, 700)
    panel.show()
    qtbot.waitExposed(panel)
    return panel


def test_keys_move_a_decade_slider_log_uniformly(qtbot):
    panel = _frequency_panel(qtbot)
    slider = panel.sliders["omega"]
    assert slider.property("logarithmic") is True
    assert panel.sliders["N"].property("logarithmic") is False          # a ratio of 10 stays even
    assert "logarithmic" in slider.toolTip()
    assert slider.value() == round(500 * math.log10(1.4e-4 / TIDE))     # 73: where 1.4e-4 sits
    slider.setFocus()
    qtbot.keyClick(slider, Qt.Key.Key_End)
    assert panel.document.equation.parameters["omega"].value == BUOYANCY
    qtbot.keyClick(slider, Qt.Key.Key_Home)
    assert panel.document.equation.parameters["omega"].value == TIDE
    qtbot.keyClick(slider, Qt.Key.Key_PageUp)                           # one page: pageStep steps
    assert slider.value() == slider.pageStep()
    expected = TIDE * 100 ** (slider.pageStep() / SLIDER_STEPS)
    assert panel.document.equation.parameters["omega"].value == pytest.approx(expected, rel=1e-12)
    linear_value = TIDE + (BUOYANCY - TIDE) * slider.pageStep() / SLIDER_STEPS
    assert abs(expected - linear_value) > 0.5 * expected                # an even slider would read far off


def test_a_drag_on_a_decade_slider_sets_the_log_uniform_value(qtbot):
    panel = _frequency_panel(qtbot)
    slider = panel.sliders["omega"]
    option = QStyleOptionSlider()
    slider.initStyleOption(option)
    handle = slider.style().subControlRect(QStyle.ComplexControl.CC_Slider, option,
                                           QStyle.SubControl.SC_SliderHandle, slider)
    start = handle.center()
    QTest.mousePress(slider, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier, start)
    for step in range(1, 11):
        QTest.mouseMove(slider, start + QPoint(round(slider.width() * 0.04 * step), 0))
    QTest.mouseRelease(slider, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier,
                       start + QPoint(round(slider.width() * 0.4), 0))
    position = slider.value()
    assert 250 < position < 600                                         # moved about 40 % of the groove
    value = panel.document.equation.parameters["omega"].value
    assert value == pytest.approx(TIDE * 100 ** (position / SLIDER_STEPS), rel=1e-12)
    assert panel.document.undo_stack.count() == 1                       # the drag is one undo step


def test_a_typed_value_stays_exact_and_only_places_the_slider(qtbot):
    panel = _frequency_panel(qtbot)
    typed = 2.345678e-4
    assert panel.parameters.item(0, 0).text() == "omega"
    panel.parameters.item(0, 1).setText("2.345678e-4")                 # the value cell of the parameters table
    assert panel.document.equation.parameters["omega"].value == typed    # not rounded to a slider step
    assert panel.sliders["omega"].value() == round(500 * math.log10(typed / TIDE))
    assert slider_position(panel.document.equation.parameters["omega"]) == panel.sliders["omega"].value()
    assert panel.document.undo_stack.count() == 1
