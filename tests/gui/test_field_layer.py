"""The field layer and the filled type zones on the map, and pins kept to the study they were set in."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from PySide6.QtCore import QPoint, Qt
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QApplication

from core.analysis.classify import TypeCode
from core.project.codec import project_to_dict
from core.project.io import load_project
from core.project.model import FieldLayerSettings, demo_project_path
from tests.ceilings import HANG_CEILING_MS
from tests.gui.conftest import tricomi_project


def _view_point(window, x: float, y: float) -> QPoint:
    return window.map_view.plot_widget.mapFromScene(window.map_view.scene_position(x, y))


def _tick(qtbot, box) -> None:
    box.window().activateWindow()
    qtbot.mouseClick(box, Qt.MouseButton.LeftButton, pos=QPoint(8, box.height() // 2))


def test_type_zones_are_polygons_that_end_on_the_refined_line(make_window):
    window = make_window()                       # the hump flow: a supersonic pocket inside a subsonic field
    layer = window.field_layer
    boundaries = window.analysis.boundaries
    assert layer.polygons is not None and layer.polygons.snapped > 0
    hyperbolic = layer.zone_items[TypeCode.HYPERBOLIC]
    assert hyperbolic.isVisible() and layer.zone_items[TypeCode.ELLIPTIC].isVisible()
    # the pocket's fill spans exactly the type-change line's extent (the image of codes poked h/2 past it)
    line = np.concatenate([curve.points for curve in boundaries.curves])
    box = hyperbolic.path().boundingRect()
    assert (box.left(), box.right()) == pytest.approx((line[:, 0].min(), line[:, 0].max()), abs=1e-12)
    assert (box.top(), box.bottom()) == pytest.approx((line[:, 1].min(), line[:, 1].max()), abs=1e-12)
    # the image of codes keeps only undefined nodes: its other colours are transparent
    table = window.map_view.image.lut
    assert table[int(TypeCode.HYPERBOLIC), 3] == 0 and table[int(TypeCode.UNDEFINED), 3] == 255
    # hiding the type zones hides the polygons too
    window.layers_panel.boxes["type_map"].click()
    assert not hyperbolic.isVisible()
    window.document.undo_stack.undo()
    assert hyperbolic.isVisible()


def test_one_click_shades_the_normalised_discriminant_with_a_colour_bar_and_undo_hides_it(make_window, qtbot):
    window = make_window(tricomi_project())
    layer, panel = window.field_layer, window.layers_panel
    assert not layer.image.isVisible() and not layer._bar_in_layout      # the type zones are the default view
    _tick(qtbot, panel.field_shown)
    assert window.document.project.view.field.shown
    assert layer.image.isVisible() and layer.colour_bar.isVisible() and layer._bar_in_layout
    assert layer.colour_bar.axis.labelText == "D / (b² + 4|ac|) (dimensionless)"
    # Tricomi y u_xx + u_yy: D/S = -sign(y), on the diverging map centred on 0
    grid = layer.grid
    assert np.array_equal(grid.values, np.broadcast_to(-np.sign(grid.y)[:, None], grid.values.shape))
    assert tuple(layer.colour_bar.levels()) == (-1.0, 1.0)
    assert project_to_dict(window.document.project)["view"]["field"]["shown"] is True   # saved with the study
    window.document.undo_stack.undo()
    assert not layer.image.isVisible() and not layer._bar_in_layout and not panel.field_shown.isChecked()


def test_quantity_colour_map_and_iso_lines_are_chosen_with_the_keyboard(make_window, qtbot):
    window = make_window()
    layer, panel = window.field_layer, window.layers_panel
    _tick(qtbot, panel.field_shown)
    combo = panel.field_quantity
    combo.setFocus()
    target = next(i for i in range(combo.count()) if combo.itemData(i) == ("value", "M"))
    for _ in range(target - combo.currentIndex()):
        qtbot.keyClick(combo, Qt.Key.Key_Down)
    field = window.document.project.view.field
    assert (field.kind, field.quantity) == ("value", "M")
    # M = M_inf (1 + 0.35 exp(-(x^2 + 4y^2))): its largest value is at the origin
    assert layer.grid.high == pytest.approx(0.8 * 1.35, rel=1e-12)
    assert layer.colour_bar.axis.labelText == "M (definition)"
    colours = panel.field_colours
    colours.setFocus()
    qtbot.keyClick(colours, Qt.Key.Key_Down)
    assert window.document.project.view.field.colour_map == "cividis"
    panel.field_iso.setFocus()
    qtbot.keyClicks(panel.field_iso, "1, 0.9")
    qtbot.keyClick(panel.field_iso, Qt.Key.Key_Return)
    assert window.document.project.view.field.iso_values == (0.9, 1.0)
    x, y = layer.iso_curves.getData()
    finite = np.isfinite(x)
    assert finite.sum() > 20
    # every iso-line vertex reads 0.9 or 1.0 to the grid's linear interpolation (h = 0.05)
    m = 0.8 * (1 + 0.35 * np.exp(-(x[finite] ** 2 + 4 * y[finite] ** 2)))
    assert np.all(np.minimum(abs(m - 0.9), abs(m - 1.0)) < 2e-3)
    qtbot.keyClicks(panel.field_iso, ", oops")
    qtbot.keyClick(panel.field_iso, Qt.Key.Key_Return)
    assert panel.field_iso_problem.isVisible() and "'oops' is not a number" in panel.field_iso_problem.text()
    assert window.document.project.view.field.iso_values == (0.9, 1.0)         # not applied


def test_the_value_under_the_mouse_is_read_out(make_window, qtbot):
    window = make_window(tricomi_project())
    _tick(qtbot, window.layers_panel.field_shown)
    combo = window.layers_panel.field_quantity
    combo.setFocus()
    target = next(i for i in range(combo.count()) if combo.itemData(i) == ("coefficient", "a"))
    for _ in range(target - combo.currentIndex()):
        qtbot.keyClick(combo, Qt.Key.Key_Down)
    QApplication.processEvents()                 # the colour bar took its place: the plot is laid out anew
    qtbot.mouseMove(window.map_view.plot_widget.viewport(), _view_point(window, 0.3, -0.75))
    qtbot.waitUntil(lambda: "coefficient a = " in window.field_layer.readout.text(), timeout=HANG_CEILING_MS)
    value = float(window.field_layer.readout.text().split(" = ")[1])
    assert value == pytest.approx(-0.75, abs=0.02)            # a = y under the mouse, to a pixel or so


def test_a_field_the_equation_does_not_offer_says_so(make_window):
    project = tricomi_project()
    project = replace(project, view=replace(project.view, field=FieldLayerSettings(True, "trade", "mach")))
    window = make_window(project)
    assert window.field_layer.grid is None and not window.field_layer.image.isVisible()
    assert "offers no trade field 'mach'" in window.field_layer.readout.text()
    assert window.layers_panel.field_quantity.currentText() == "mach (not in this equation)"


def test_pins_of_another_study_are_not_shown_and_new_pins_belong_to_the_shown_one(make_window, qtbot):
    project = load_project(demo_project_path("transonic_bump"))
    window = make_window(project)
    crest = next(k for k, pin in enumerate(project.pins) if "crest" in pin.label)
    assert project.pins[crest].study == project.shown_study
    table = window.pins_panel.table
    assert not table.isRowHidden(crest) and len(window.map_view.pin_markers.data) == len(project.pins)
    assert window.add_template("internal_waves")             # the ocean: another equation and region
    assert window.document.project.shown_study != project.shown_study
    assert len(window.map_view.pin_markers.data) == 0             # no bump crest at the sea surface
    assert all(table.isRowHidden(row) for row in range(table.rowCount()))
    assert all(label not in [t.toPlainText() for t in window.map_view._pin_labels] for label in
               [pin.label for pin in project.pins])
    # a click on the ocean map pins a point of the ocean study
    domain = window.document.domain
    where = _view_point(window, 0.5 * (domain.xmin + domain.xmax), 0.5 * (domain.ymin + domain.ymax))
    QTest.mouseClick(window.map_view.plot_widget.viewport(), Qt.MouseButton.LeftButton, pos=where)
    pins = window.document.project.pins
    assert len(pins) == len(project.pins) + 1 and pins[-1].study == window.document.project.shown_study
    assert len(window.map_view.pin_markers.data) == 1 and not table.isRowHidden(len(pins) - 1)
    # undoing the template shows the bump's pins again
    window.document.undo_stack.undo()
    window.document.undo_stack.undo()
    assert len(window.map_view.pin_markers.data) == len(project.pins) and not table.isRowHidden(crest)
