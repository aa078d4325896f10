"""The map comes first: its share of the window, fitting, ticks, pin labels and marks, tables that show all."""

from __future__ import annotations

import itertools
from dataclasses import replace

import pytest
from PySide6.QtCore import QPoint, QRect, Qt
from PySide6.QtGui import QImage, QPainter
from PySide6.QtWidgets import QApplication, QDockWidget, QScrollArea

from core.domain import Domain
from core.equations.equation import Equation
from core.project.model import Pin, new_project
from gui.main_window import MainWindow
from gui.map_view import FIT_MARGIN
from gui.preferences import Preferences
from tests.ceilings import HANG_CEILING_MS, HANG_CEILING_S
from tests.gui.conftest import hump_project, tricomi_project


@pytest.fixture
def window_at(qtbot, settings_folder):
    """A synchronous MainWindow of ``project`` opened at ``size`` (the default layout is laid out for it)."""

    def build(project, size=(1200, 900)):
        window = MainWindow(project, preferences=Preferences(settings_folder), synchronous=True)
        window.ask_unsaved = lambda: "discard"
        qtbot.addWidget(window)
        window.resize(*size)
        with qtbot.waitExposed(window, timeout=HANG_CEILING_MS):
            window.show()
        window.analysis.flush()
        assert window.runner.wait_idle(HANG_CEILING_S)
        QApplication.processEvents()
        return window

    return build


def _ocean_project():
    """A deep, wide section (50 km by 5.5 km): too stretched to draw to scale."""
    equation = Equation(a="N**2 - 2e-8", b="0", c="1e-8 - 2e-8", variables=("x", "z"),
                        definitions={"N": "5e-3*exp(z/1200)"}, name="internal tide")
    return new_project(equation, Domain(0.0, 50_000.0, -5500.0, 0.0, 61, 41, name="full depth"))


def _with_margin(low: float, high: float) -> tuple[float, float]:
    return low - FIT_MARGIN * (high - low), high + FIT_MARGIN * (high - low)


def _scroll_bars_shown(window) -> list[str]:
    """Names of the side panels whose contents do not fit across (a horizontal scroll bar is shown), each tab
    brought to the front in turn."""
    cut = []
    for area in window.findChildren(QScrollArea):
        dock = area.parent()
        while not isinstance(dock, QDockWidget):
            dock = dock.parent()
        dock.raise_()
        QApplication.processEvents()
        if area.horizontalScrollBar().isVisible():
            cut.append(area.widget().__class__.__name__)
    return cut


@pytest.mark.parametrize("size", [(1200, 900), (1600, 1000)])
def test_the_map_takes_most_of_the_window_and_no_panel_is_cut(window_at, size):
    window = window_at(hump_project(), size)
    assert window.size().width() == size[0]
    plot = window.map_view.plot_widget
    assert plot.width() >= 0.55 * window.width()
    assert plot.height() >= 0.45 * window.height()
    assert _scroll_bars_shown(window) == []
    for dock in (window.equation_dock, window.pins_dock):
        assert dock.isVisible() and not dock.isFloating()
    assert window.pins_dock.features() & window.pins_dock.DockWidgetFeature.DockWidgetClosable
    window.pins_dock.close()                   # a panel folds away and the map grows into its place
    QApplication.processEvents()
    assert plot.height() > 0.45 * window.height() + 50
    window.pins_dock.toggleViewAction().trigger()
    assert window.pins_dock.isVisible()


def test_tables_size_their_columns_to_what_they_hold(window_at):
    window = window_at(hump_project(), (1200, 900))
    window.document.add_pin(0.5, 0.25, "a pin with a longer label than most")
    window.analysis.flush()
    window.pockets_dock.raise_()
    QApplication.processEvents()
    for table in (window.pins_panel.table, window.pockets_panel.table):
        table.window().activateWindow()
        assert table.isVisible() or table is window.pins_panel.table
        header = table.horizontalHeader()
        for column in range(table.columnCount() - 1):
            # sized to its widest cell and header (the pins' label column stops at a cap and elides)
            wanted = max(table.sizeHintForColumn(column), header.sectionSizeHint(column))
            assert header.sectionSize(column) == min(wanted, header.maximumSectionSize())
    pockets = window.pockets_panel.table
    assert pockets.rowCount() == 1
    used = sum(pockets.horizontalHeader().sectionSize(c) for c in range(pockets.columnCount()))
    assert used <= pockets.viewport().width()            # every column shown whole, no scrolling
    assert not pockets.horizontalScrollBar().isVisible()
    window.pins_dock.raise_()
    QApplication.processEvents()
    pins = window.pins_panel.table
    used = sum(pins.horizontalHeader().sectionSize(c) for c in range(pins.columnCount()))
    assert used <= pins.viewport().width() and not pins.horizontalScrollBar().isVisible()
    assert pins.item(0, 0).toolTip() == "a pin with a longer label than most"


def test_fitting_fills_the_plot_with_a_stretched_domain(window_at, qtbot):
    window = window_at(_ocean_project())
    view = window.map_view.view_box
    assert not window.map_view.to_scale
    (x0, x1), (y0, y1) = view.viewRange()
    assert (x0, x1) == pytest.approx(_with_margin(0.0, 50_000.0), rel=1e-9, abs=1e-6)
    assert (y0, y1) == pytest.approx(_with_margin(-5500.0, 0.0), rel=1e-9, abs=1e-6)
    view.scaleBy((0.5, 0.5))                                  # the user zooms in
    assert view.viewRange()[0][1] - view.viewRange()[0][0] < 40_000
    window.activateWindow()
    qtbot.keyClick(window.map_view.plot_widget, Qt.Key.Key_0, Qt.KeyboardModifier.ControlModifier)  # Fit domain
    (x0, x1), (y0, y1) = view.viewRange()
    assert (x0, x1) == pytest.approx(_with_margin(0.0, 50_000.0), rel=1e-9, abs=1e-6)
    assert (y0, y1) == pytest.approx(_with_margin(-5500.0, 0.0), rel=1e-9, abs=1e-6)


def test_fitting_a_domain_to_scale_fills_the_limiting_direction(window_at):
    window = window_at(hump_project())                         # 6 by 4: drawn to scale
    view = window.map_view.view_box
    assert window.map_view.to_scale

    def check():
        (x0, x1), (y0, y1) = view.viewRange()
        rect = view.rect()
        assert (x1 - x0) / rect.width() == pytest.approx((y1 - y0) / rect.height(), rel=1e-6)  # same scale
        assert (x0 + x1) / 2 == pytest.approx(0.0, abs=1e-9) and (y0 + y1) / 2 == pytest.approx(0.0, abs=1e-9)
        wanted_x, wanted_y = _with_margin(-3.0, 3.0), _with_margin(-2.0, 2.0)
        fills_x = (x0, x1) == pytest.approx(wanted_x, rel=1e-6)
        fills_y = (y0, y1) == pytest.approx(wanted_y, rel=1e-6)
        assert fills_x or fills_y                             # one direction is exactly the domain + margin
        assert x0 <= wanted_x[0] + 1e-9 and x1 >= wanted_x[1] - 1e-9    # the other holds it whole
        assert y0 <= wanted_y[0] + 1e-9 and y1 >= wanted_y[1] - 1e-9

    check()
    window.resize(1600, 1000)                                 # fitted views stay fitted when the plot resizes
    QApplication.processEvents()
    check()


def test_the_end_ticks_are_drawn_whole(window_at):
    window = window_at(_ocean_project())
    plot = window.map_view.plot_widget
    image = QImage(10, 10, QImage.Format.Format_ARGB32)
    painter = QPainter(image)
    for name, last in (("bottom", "50000"), ("left", "0")):
        axis = window.map_view.plot.getAxis(name)
        specs = axis.generateDrawSpecs(painter)
        texts = {text: rect for rect, flags, text in specs[2]}
        assert last in texts, (name, sorted(texts))
        corners = [plot.mapFromScene(axis.mapToScene(point)) for point in
                   (texts[last].topLeft(), texts[last].bottomRight())]
        assert QRect(QPoint(0, 0), plot.size()).contains(QRect(corners[0], corners[1]))
    painter.end()


def test_a_clicked_pin_is_selected_scrolled_to_and_read_out(window_at, qtbot):
    project = tricomi_project()
    project = replace(project, pins=tuple(Pin(-1.8 + 0.2 * k, 1.5, f"row {k}") for k in range(16)))
    window = window_at(project)
    table = window.pins_panel.table
    table.selectRow(0)
    table.scrollToTop()
    window.pockets_dock.raise_()                             # the pins tab is behind: the click brings it up
    QApplication.processEvents()
    where = window.map_view.plot_widget.mapFromScene(window.map_view.scene_position(0.5, -1.0))
    qtbot.mouseClick(window.map_view.plot_widget.viewport(), Qt.MouseButton.LeftButton, pos=where)
    window.analysis.flush()
    QApplication.processEvents()
    pins = window.document.project.pins
    assert len(pins) == 17 and pins[-1].x == pytest.approx(0.5, abs=0.03)
    assert [index.row() for index in table.selectionModel().selectedRows()] == [16]
    assert window.pins_panel.selected_index() == 16
    assert table.isVisible()
    row = table.visualItemRect(table.item(16, 0))
    assert table.viewport().rect().contains(row)               # scrolled into view
    readout = window.pins_panel.details.toPlainText()
    assert readout.startswith("P17") and "hyperbolic" in readout
    # A click on an existing pin selects that pin.
    where = window.map_view.plot_widget.mapFromScene(window.map_view.scene_position(-1.8, 1.5))
    qtbot.mouseClick(window.map_view.plot_widget.viewport(), Qt.MouseButton.LeftButton, pos=where)
    assert window.pins_panel.selected_index() == 0 and len(window.document.project.pins) == 17


def test_pins_outside_the_domain_are_marked_in_the_table_and_on_the_map(window_at):
    project = replace(tricomi_project(), pins=(Pin(0.0, -1.0, "inside"), Pin(3.0, 0.5, "beyond")))
    window = window_at(project)
    table, view = window.pins_panel.table, window.map_view
    assert table.item(0, 3).text() == "hyperbolic"
    assert table.item(1, 3).text() == "elliptic (outside)"
    assert "outside the domain" in table.item(1, 0).toolTip()
    assert list(view.pin_markers.getData()[0]) == [0.0]
    assert list(view.outside_pin_markers.getData()[0]) == [3.0]
    assert [label.toPlainText() for label in view._pin_labels] == ["inside", "beyond (outside)"]
    window.document.set_domain(Domain(-2.0, 4.0, -2.0, 2.0, 41, 41, name="wider"))
    window.analysis.flush()
    assert table.item(1, 3).text() == "elliptic"
    assert sorted(view.pin_markers.getData()[0]) == [0.0, 3.0] and len(view.outside_pin_markers.getData()[0]) == 0
    assert view._pin_labels[1].toPlainText() == "beyond"


def test_pin_labels_stay_inside_the_plot_and_clear_of_each_other(window_at):
    # Like the transonic demo's pins: two a few pixels apart at the bottom edge, others at the top corners.
    pins = (Pin(0.0, -2.0, "bump crest (supersonic)"), Pin(0.0, -1.75, "above the pocket (subsonic)"),
            Pin(-1.95, 1.9, "upstream wall"), Pin(1.95, 1.95, "far corner downstream"),
            Pin(0.95, 0.9, "near the middle"))
    window = window_at(replace(tricomi_project(), pins=pins))
    view = window.map_view
    plot_rect = view.view_box.sceneBoundingRect()
    boxes = view.pin_label_boxes()
    assert all(box is not None for box in boxes)
    inside = plot_rect.adjusted(-0.01, -0.01, 0.01, 0.01)
    for box in boxes:
        assert inside.contains(box)
    for first, second in itertools.combinations(boxes, 2):
        assert not first.intersects(second)
    radius = 5.0
    for box, pin in itertools.product(boxes, pins):
        centre = view.scene_position(pin.x, pin.y)
        marker = box.adjusted(-radius, -radius, radius, radius)
        assert not marker.contains(centre)                    # no label covers a pin
    view.view_box.scaleBy((0.5, 0.5))                         # zoomed: labels are placed again for the new view
    QApplication.processEvents()
    plot_rect = view.view_box.sceneBoundingRect()
    inside = plot_rect.adjusted(-0.01, -0.01, 0.01, 0.01)
    shown = 0
    for label, box in zip(view._pin_labels, view.pin_label_boxes()):
        if plot_rect.contains(view.scene_position(label.pos().x(), label.pos().y())):
            shown += 1
            assert inside.contains(box)
    assert shown >= 1


def test_progress_text_is_one_line_shown_whole(window_at):
    window = window_at(tricomi_project())
    text = "Classifying 8001 × 8192 nodes of the map in blocks of rows"
    window.runner.progressed.emit("map", 0.42, text)
    window.progress_text.show()
    window.progress.show()
    QApplication.processEvents()
    assert window.progress_text.text() == text and not window.progress_text.wordWrap()
    assert window.progress_text.width() >= window.progress_text.sizeHint().width()
    assert window.progress.value() == 420 and window.progress.text() == "42%"


def test_only_layouts_saved_for_this_arrangement_are_restored(window_at):
    from gui.main_window import LAYOUT_VERSION

    window = window_at(tricomi_project())
    older = window.saveState(LAYOUT_VERSION - 1)                # a layout saved by an earlier arrangement
    window.pins_dock.close()
    saved = window.saveState(LAYOUT_VERSION)
    window.pins_dock.show()
    assert not window.restoreState(older)
    assert window.pins_dock.isVisible()
    assert window.restoreState(saved)
    assert not window.pins_dock.isVisible()
