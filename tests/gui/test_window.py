"""The main window driven as a user would: typing, sliders, clicks, tracing, undo, files, exports."""

from __future__ import annotations

import math

import numpy as np
import pytest
from PySide6.QtCore import QPoint, Qt

from core.analysis.classify import TypeCode, classify_grid
from core.analysis.probe import probe_point
from core.equations.compiled import compile_equation
from gui.palette import TYPE_COLOURS
from tests.ceilings import HANG_CEILING_MS
from tests.gui.conftest import hump_project, tricomi_project


def _hyperbolic_fraction_closed_form(m_inf: float, width: float = 6.0, height: float = 4.0) -> float:
    """Share of the domain where M > 1 for M = M_inf (1 + 0.35 exp(-(x^2 + 4y^2))), derived by hand:

    M > 1  <=>  x^2 + 4y^2 < r^2 with r^2 = -ln((1/M_inf - 1)/0.35), an ellipse of semi-axes r and r/2,
    area pi r^2 / 2 (common practice, no source).
    """
    r2 = -math.log((1.0 / m_inf - 1.0) / 0.35)
    return math.pi * r2 / 2.0 / (width * height)


def _view_point(window, x: float, y: float) -> QPoint:
    scene = window.map_view.scene_position(x, y)
    return window.map_view.plot_widget.mapFromScene(scene)


def test_map_shows_core_classification_with_palette_colours(make_window):
    window = make_window(hump_project(nx=241, ny=161))
    type_map = window.analysis.type_map
    assert type_map is not None and type_map.codes.shape == (161, 241)
    # Closed-form hyperbolic pocket area vs the grid's node share (O(h) agreement).
    assert type_map.fractions["hyperbolic"] == pytest.approx(_hyperbolic_fraction_closed_form(0.8), abs=0.004)
    image = window.map_view.image
    assert np.array_equal(image.image, type_map.codes.view(np.uint8))
    rect = image.mapRectToParent(image.boundingRect())
    dx, dy = type_map.domain.spacing
    assert rect.left() == pytest.approx(-3.0 - dx / 2) and rect.right() == pytest.approx(3.0 + dx / 2)
    assert rect.top() == pytest.approx(-2.0 - dy / 2) and rect.bottom() == pytest.approx(2.0 + dy / 2)
    # Okabe & Ito (2008) "Color Universal Design": sky blue #56B4E9, orange #E69F00.
    assert TYPE_COLOURS[TypeCode.ELLIPTIC] == "#56B4E9" and TYPE_COLOURS[TypeCode.HYPERBOLIC] == "#E69F00"
    image.render()
    qimage = image.qimage
    centre = qimage.pixelColor(120, 80).name().upper()      # node (0, 0): inside the pocket
    corner = qimage.pixelColor(5, 5).name().upper()         # node near (-2.9, -1.9): elliptic
    assert centre == "#E69F00" and corner == "#56B4E9"
    assert "hyperbolic" in window.map_view.legend.text() and "%" in window.map_view.legend.text()
    assert window.map_view.plot.getAxis("bottom").labelText == "x"


def test_valid_expression_updates_document_and_map(make_window, qtbot):
    window = make_window(tricomi_project())
    before = window.analysis.type_map
    edit = window.equation_panel.coefficient_edits["a"]
    edit.clear()
    qtbot.keyClicks(edit, "-y")
    assert window.document.equation.a == "y"             # typed, not yet settled
    qtbot.keyClick(edit, Qt.Key.Key_Return)              # Enter applies it
    window.analysis.flush()
    after = window.analysis.type_map
    assert window.document.equation.a == "-y"
    assert after is not before
    # y u_xx + u_yy is hyperbolic below y = 0 (Tricomi, closed form); with a = -y the halves swap.
    assert before.codes[0, 40] == TypeCode.HYPERBOLIC and before.codes[-1, 40] == TypeCode.ELLIPTIC
    assert after.codes[0, 40] == TypeCode.ELLIPTIC and after.codes[-1, 40] == TypeCode.HYPERBOLIC
    expected = classify_grid(compile_equation(window.document.equation), window.document.domain)
    assert np.array_equal(after.codes, expected.codes)
    assert not window.equation_panel.coefficient_errors["a"].isVisibleTo(window)
    assert "&minus;<i>y</i>" in window.equation_panel.rendered.text()


def test_invalid_expression_shows_error_with_column_and_keeps_map(make_window, qtbot):
    window = make_window(tricomi_project())
    before = window.analysis.type_map
    edit = window.equation_panel.coefficient_edits["a"]
    edit.clear()
    qtbot.keyClicks(edit, "y*zeta")
    window.analysis.flush()
    error = window.equation_panel.coefficient_errors["a"]
    assert error.isVisibleTo(window)
    assert error.text() == "column 3: unknown name 'zeta'"
    assert window.document.equation.a == "y"      # the last text that compiled
    assert window.analysis.type_map is before            # the last good map stays on screen
    qtbot.keyClick(edit, Qt.Key.Key_Backspace)            # "y*zet" is still wrong
    assert "zet" in error.text()
    edit.clear()
    qtbot.keyClicks(edit, "y")
    assert not error.isVisibleTo(window)


def test_slider_drag_moves_zones_and_is_one_undo_step(make_window):
    window = make_window(hump_project(nx=241, ny=161))
    slider = window.equation_panel.sliders["M_inf"]
    small = window.analysis.type_map.fractions["hyperbolic"]
    slider.setSliderDown(True)                  # press: a drag starts
    assert window.analysis.dragging
    for position in range(556, 640, 12):        # M_inf = 0.3 + 0.9 * position / 1000
        slider.setValue(position)
        window.analysis.flush()
    slider.setSliderDown(False)                 # release
    assert not window.analysis.dragging
    m_inf = window.document.equation.parameters["M_inf"].value
    assert m_inf == pytest.approx(0.3 + 0.9 * 628 / 1000)
    grown = window.analysis.type_map.fractions["hyperbolic"]
    assert grown > small
    assert grown == pytest.approx(_hyperbolic_fraction_closed_form(m_inf), abs=0.005)
    assert window.document.undo_stack.count() == 1
    window.undo_action.trigger()
    window.analysis.flush()
    assert window.document.equation.parameters["M_inf"].value == 0.8
    assert window.analysis.type_map.fractions["hyperbolic"] == pytest.approx(small)
    window.redo_action.trigger()
    window.analysis.flush()
    assert window.analysis.type_map.fractions["hyperbolic"] == pytest.approx(grown)


def test_click_pins_a_point_whose_readout_is_cores_probe(make_window, qtbot):
    window = make_window(tricomi_project())
    where = _view_point(window, 0.5, -1.0)
    qtbot.mouseClick(window.map_view.plot_widget.viewport(), Qt.MouseButton.LeftButton, pos=where)
    window.analysis.flush()
    pins = window.document.project.pins
    assert len(pins) == 1
    pin = pins[0]
    assert pin.x == pytest.approx(0.5, abs=0.03) and pin.y == pytest.approx(-1.0, abs=0.03)
    reference = probe_point(compile_equation(window.document.equation), pin.x, pin.y)
    shown = window.pins_panel.results[0]
    assert shown.type == reference.type == TypeCode.HYPERBOLIC
    assert shown.discriminant == reference.discriminant == pytest.approx(-4 * pin.y)
    assert window.pins_panel.table.item(0, 3).text() == "hyperbolic"
    assert float(window.pins_panel.table.item(0, 4).text()) == pytest.approx(-4 * pin.y, rel=1e-5)
    readout = window.pins_panel.details.toPlainText()
    assert "characteristic directions" in readout and "°" in readout
    text = window.pins_panel.copy_text()
    assert text.startswith("Pin P1") and "type: hyperbolic" in text
    # Tricomi: dy/dx = -+ 1/sqrt(-y), so the two directions are atan(+-1/sqrt(-y)) (closed form).
    slope = 1.0 / math.sqrt(-pin.y)
    expected = sorted(abs(math.degrees(math.atan(s))) for s in (slope, -slope))
    assert sorted(abs(((d + 90) % 180) - 90) for d in reference.directions_deg) == pytest.approx(expected)


def test_trace_through_pin_follows_tricomi_characteristics(make_window):
    window = make_window(tricomi_project())
    window.document.add_pin(0.0, -1.0)
    window.pins_panel.select(0)
    assert window.pins_panel.trace_selected()
    window.analysis.flush()
    curves = [c for traced in window.analysis.traced for c in traced.curves]
    assert sorted(int(c.family) for c in curves) == [1, 2]
    for curve in curves:
        x, y = curve.points[:, 0], curve.points[:, 1]
        assert len(x) > 10
        # Closed-form Tricomi characteristics through (0, -1): |x| = (2/3) |1 - (-y)^(3/2)| (y <= 0).
        inside = y < -1e-3
        assert np.allclose(np.abs(x[inside]), (2 / 3) * np.abs(1 - (-y[inside]) ** 1.5), atol=2e-3)
    drawn_x, drawn_y = window.map_view.family_curves[1].getData()
    first = next(c for c in curves if int(c.family) == 1)
    assert np.allclose(drawn_x[: len(first.points)], first.points[:, 0])
    assert np.allclose(drawn_y[: len(first.points)], first.points[:, 1])
    window.document.set_layer("family_1", False)
    assert not window.map_view.family_curves[1].isVisible() and window.map_view.family_curves[2].isVisible()


def test_dragged_segment_seeds_a_family_net(make_window, qtbot):
    from PySide6.QtCore import QPointF
    from PySide6.QtGui import QMouseEvent
    from PySide6.QtWidgets import QApplication

    window = make_window(tricomi_project())
    window.layers_panel.segment_tool.setChecked(True)
    window.layers_panel.seed_count.setValue(5)
    assert window.map_view.mode == "segment"
    viewport = window.map_view.plot_widget.viewport()
    start, end = _view_point(window, -1.0, -1.5), _view_point(window, 1.0, -1.5)
    left = Qt.MouseButton.LeftButton

    def send(kind, point, buttons):
        event = QMouseEvent(kind, QPointF(point), QPointF(viewport.mapToGlobal(point)), left, buttons,
                            Qt.KeyboardModifier.NoModifier)
        QApplication.sendEvent(viewport, event)

    send(QMouseEvent.Type.MouseButtonPress, start, left)
    for step in range(1, 11):
        send(QMouseEvent.Type.MouseMove, start + (end - start) * step / 10, left)
    send(QMouseEvent.Type.MouseButtonRelease, end, Qt.MouseButton.NoButton)
    window.analysis.flush()
    seeds = window.document.project.seeds
    assert len(seeds) == 1 and seeds[0].curves == 5
    assert seeds[0].start == pytest.approx((-1.0, -1.5), abs=0.05)
    assert seeds[0].end == pytest.approx((1.0, -1.5), abs=0.05)
    curves = window.analysis.traced[0].curves
    assert len(curves) == 10
    assert window.document.project.pins == ()  # a drag in segment mode pins nothing


def test_hover_reports_type_and_discriminant(make_window, qtbot):
    window = make_window(tricomi_project())
    where = _view_point(window, 0.25, 0.5)
    qtbot.mouseMove(window.map_view.plot_widget.viewport(), where)
    qtbot.waitUntil(lambda: "elliptic" in window.hover_label.text(), timeout=HANG_CEILING_MS)
    text = window.hover_label.text()
    y = float(text.split("y = ")[1].split()[0])
    d = float(text.split("D = ")[1].split()[0])
    assert d == pytest.approx(-4 * y, rel=1e-4)   # D = b^2 - 4ac = -4y for the Tricomi equation
    assert "units of b²" in text
