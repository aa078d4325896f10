"""Smaller parts of the window: palette table, rendered equation, pin dragging, shortcuts, About text."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QPointF, Qt
from PySide6.QtGui import QKeySequence, QMouseEvent
from PySide6.QtWidgets import QApplication

from core.analysis.classify import TypeCode
from core.equations.compiled import compile_equation
from core.equations.equation import Equation
from gui.main_window import ABOUT_TEXT, CAUTION
from gui.math_render import equation_html, expression_html
from gui.palette import type_lookup_table
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import tricomi_project


def test_lookup_table_rows_follow_type_codes():
    table = type_lookup_table()
    assert table.shape == (4, 4) and table.dtype == np.uint8
    # Okabe & Ito (2008), "Color Universal Design": sky blue (86, 180, 233), orange (230, 159, 0).
    assert tuple(table[TypeCode.ELLIPTIC]) == (86, 180, 233, 255)
    assert tuple(table[TypeCode.HYPERBOLIC]) == (230, 159, 0, 255)
    grey = table[TypeCode.UNDEFINED][:3]
    assert grey[0] == grey[1] == grey[2]          # undefined is a neutral grey


def test_rendered_equation_reads_like_paper():
    compiled = compile_equation(Equation(a="1 - M**2", b="0", c="1", definitions={"M": "sqrt(x**2 + 1)/2"}))
    text = equation_html(compiled)
    assert text.startswith("(1 &minus; <i>M</i><sup>2</sup>)&#8201;<i>u</i><sub>xx</sub> + <i>u</i><sub>yy</sub>")
    assert "<i>M</i> = &radic;(<i>x</i><sup>2</sup> + 1)/2" in text
    assert "<i>D</i> = <i>b</i><sup>2</sup> &minus; 4<i>ac</i>" in text
    import sympy
    alpha, y = sympy.symbols("alpha y")
    assert expression_html(alpha / (1 + y)) == "<i>α</i>/(<i>y</i> + 1)"
    assert expression_html(sympy.Abs(y) ** 3) == "|<i>y</i>|<sup>3</sup>"


def test_dragging_a_pin_moves_it_in_one_undo_step(make_window):
    window = make_window(tricomi_project())
    window.document.add_pin(0.5, -1.0, "drag me")
    assert window.runner.wait_idle(HANG_CEILING_S)
    QApplication.processEvents()
    viewport = window.map_view.plot_widget.viewport()

    def at(x, y):
        return window.map_view.plot_widget.mapFromScene(window.map_view.scene_position(x, y))

    def send(kind, point, buttons):
        event = QMouseEvent(kind, QPointF(point), QPointF(viewport.mapToGlobal(point)),
                            Qt.MouseButton.LeftButton, buttons, Qt.KeyboardModifier.NoModifier)
        QApplication.sendEvent(viewport, event)

    start, end = at(0.5, -1.0), at(-0.5, 0.5)
    steps_before = window.document.undo_stack.count()
    send(QMouseEvent.Type.MouseButtonPress, start, Qt.MouseButton.LeftButton)
    for step in range(1, 9):
        send(QMouseEvent.Type.MouseMove, start + (end - start) * step / 8, Qt.MouseButton.LeftButton)
    send(QMouseEvent.Type.MouseButtonRelease, end, Qt.MouseButton.NoButton)
    window.analysis.flush()
    pin = window.document.project.pins[0]
    assert (pin.x, pin.y) == pytest.approx((-0.5, 0.5), abs=0.05)
    assert window.document.undo_stack.count() == steps_before + 1
    assert window.pins_panel.results[0].type == TypeCode.ELLIPTIC  # y > 0: elliptic for Tricomi


def test_standard_shortcuts_and_about_caution(make_window):
    window = make_window(tricomi_project())
    assert window.save_action.shortcut() == QKeySequence(QKeySequence.StandardKey.Save)
    assert window.open_action.shortcut() == QKeySequence(QKeySequence.StandardKey.Open)
    assert window.undo_action.shortcut() == QKeySequence(QKeySequence.StandardKey.Undo)
    assert window.redo_action.shortcut() == QKeySequence(QKeySequence.StandardKey.Redo)
    assert "validates no design" in CAUTION and CAUTION in ABOUT_TEXT
    assert window.equation_panel.coefficient_edits["a"].toolTip()


def test_layer_switches_follow_the_document(make_window):
    window = make_window(tricomi_project())
    window.layers_panel.boxes["type_map"].setChecked(False)
    assert not window.document.layer_visible("type_map")
    assert not window.map_view.image.isVisible()
    window.undo_action.trigger()
    assert window.layers_panel.boxes["type_map"].isChecked() and window.map_view.image.isVisible()


def test_a_domain_name_another_domain_has_is_refused_with_a_message(make_window):
    window = make_window(tricomi_project(21))
    panel = window.domain_panel
    panel.duplicate_button.click()
    assert window.document.project.domain_names == ("square", "square (2)")
    panel.name.setText("square")
    panel.apply()
    assert window.document.project.domain_names == ("square", "square (2)")   # unchanged
    assert panel.error.isVisibleTo(panel) and "two domains are named 'square'" in panel.error.text()
    panel.name.setText("wider")
    panel.apply()
    assert window.document.project.domain_names == ("square", "wider") and not panel.error.isVisibleTo(panel)


def test_emitting_signals_does_not_leak_references_to_true():
    """PySide6 6.12.0 dropped a reference to True on every Python-side emit, aborting the interpreter after a
    few thousand mouse moves ("bool_dealloc"); pyproject pins a release without the defect. This guards the pin.
    """
    import sys

    from PySide6.QtCore import QObject, Signal

    class Pinger(QObject):
        ping = Signal(float, float)

    pinger = Pinger()
    received = []
    pinger.ping.connect(lambda x, y: received.append(x))
    start = sys.getrefcount(True)
    for index in range(2_000):
        pinger.ping.emit(float(index), 0.0)
    assert len(received) == 2_000
    assert abs(sys.getrefcount(True) - start) < 100
