"""Every word around the map says what is on screen now: hover readout, header, notices, names, directions."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from PySide6.QtCore import QPoint, Qt, QTimer
from PySide6.QtGui import QImage
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QApplication, QMessageBox

from core.domain import Domain
from core.equations.equation import Equation, Parameter
from core.project.io import save_project
from core.project.model import Pin, new_project
from gui.panels.pins import probe_rows
from gui.panels.template_dialog import TemplateDialog
from gui.status_words import HOVER_PROMPT
from tests.ceilings import HANG_CEILING_MS, HANG_CEILING_S
from tests.gui.conftest import hump_project, tricomi_project


def _view_point(window, x: float, y: float) -> QPoint:
    return window.map_view.plot_widget.mapFromScene(window.map_view.scene_position(x, y))


def _hover(window, qtbot, x: float, y: float) -> str:
    with qtbot.waitSignal(window.analysis.hover_ready, timeout=HANG_CEILING_MS):
        qtbot.mouseMove(window.map_view.plot_widget.viewport(), _view_point(window, x, y))
    return window.hover_label.text()


def _field(text: str, name: str) -> float:
    return float(text.split(f"{name} = ")[1].split()[0].rstrip(","))


# -- the hover readout --------------------------------------------------------------------------------------
def test_hover_readout_is_read_again_after_a_recompute_and_cleared_by_another_study(make_window, qtbot, tmp_path):
    window = make_window(hump_project(nx=61, ny=41, m_inf=0.5))
    text = _hover(window, qtbot, 0.0, 0.0)
    x, y = _field(text, "x"), _field(text, "y")
    # D = b^2 - 4ac = -4 (1 - M^2) with M = M_inf (1 + 0.35 exp(-(x^2 + 4 y^2))) (the project's own formula)
    def expected_d(m_inf):
        mach = m_inf * (1 + 0.35 * np.exp(-(x * x + 4 * y * y)))
        return -4 * (1 - mach * mach)

    assert _field(text, "D") == pytest.approx(expected_d(0.5), rel=1e-4)
    assert window.document.set_parameter_value("M_inf", 0.9)            # the map is recomputed at once
    assert window.runner.wait_idle(HANG_CEILING_S)
    text = window.hover_label.text()
    assert _field(text, "D") == pytest.approx(expected_d(0.9), rel=1e-4)  # the same point, read again
    assert "hyperbolic" in text

    other = tmp_path / "tricomi.mixtype.json"
    save_project(tricomi_project(21), other)
    assert window.open_path(other)
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.hover_label.text() == HOVER_PROMPT                    # no point of the old study stays


def test_hover_coordinates_without_rounding_noise(make_window, qtbot):
    window = make_window(tricomi_project(41))
    window.analysis.request_hover(1.1102e-16, 0.5)
    text = window.hover_label.text()
    assert text.startswith("x = 0, y = 0.5") and "1.1102e-16" not in text


# -- the header -------------------------------------------------------------------------------------------
def test_header_shows_the_grid_of_the_map_on_screen_after_a_cancel(make_window):
    window = make_window(hump_project(nx=61, ny=41), synchronous=False)
    assert "61 × 41 grid nodes" in window.map_view.subtitle.text()
    big = replace(window.document.domain, nx=6001, ny=6001)
    assert window.document.set_domain(big)
    assert "61 × 41 grid nodes shown; computing the 6001 × 6001 map" in window.map_view.subtitle.text()
    window.analysis.flush()
    assert window.runner.is_busy("map")
    window.cancel_work()
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.analysis.type_map.domain.nx == 61                     # the map on screen is the old one
    subtitle = window.map_view.subtitle.text()
    assert "61 × 41 grid nodes shown (the newer 6001 × 6001 map was cancelled)" in subtitle
    assert window.document.set_domain(replace(big, nx=81, ny=51))       # a newer request that finishes
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.map_view.subtitle.text().startswith("81 × 51 grid nodes; ")


# -- the notice of a failed open ---------------------------------------------------------------------------
NOTICE_RED = (0xB0, 0x00, 0x20)


def _red_pixels(path) -> int:
    image = QImage(str(path)).convertToFormat(QImage.Format.Format_RGB32)
    bits = np.frombuffer(image.constBits(), dtype=np.uint8).reshape(image.height(), image.bytesPerLine())
    pixels = bits[:, : 4 * image.width()].reshape(image.height(), image.width(), 4)
    blue, green, red = pixels[..., 0], pixels[..., 1], pixels[..., 2]
    return int(np.sum((np.abs(red.astype(int) - NOTICE_RED[0]) < 12) & (green < 20) & (np.abs(
        blue.astype(int) - NOTICE_RED[2]) < 12)))


def test_failed_open_notice_stays_out_of_the_map_and_its_exports(make_window, tmp_path):
    window = make_window(tricomi_project(41))
    broken = tmp_path / "broken.mixtype.json"
    broken.write_text("{ not json", encoding="utf-8")
    assert not window.open_path(broken)
    assert window.notice.isVisible() and "Could not open the study" in window.notice.text()
    assert _red_pixels_of_widget(window.notice) > 0          # the notice is drawn in its colour...
    assert not window.map_view.isAncestorOf(window.notice)
    plot = window.map_view.plot_widget
    plot_box = plot.rect().translated(plot.mapTo(window, QPoint(0, 0)))
    notice_box = window.notice.rect().translated(window.notice.mapTo(window, QPoint(0, 0)))
    assert not plot_box.intersects(notice_box)                     # ...beside the map, never over it
    png, svg = window.export_picture(tmp_path / "map.png"), window.export_picture(tmp_path / "map.svg")
    assert png is not None and svg is not None
    assert _red_pixels(png) == 0                                    # ...and in neither export
    text = svg.read_text(encoding="utf-8")
    assert "Could not open" not in text and "broken.mixtype.json" not in text
    assert "Type of" in text                                        # the export does hold the map's title
    # the next successful action retires the notice
    assert window.document.add_pin(0.5, -0.5)
    assert not window.notice.isVisible() and window.notice.text() == ""


def _red_pixels_of_widget(widget) -> int:
    image = widget.grab().toImage().convertToFormat(QImage.Format.Format_RGB32)
    found = 0
    for x in range(image.width()):
        for y in range(image.height()):
            colour = image.pixelColor(x, y)
            found += colour.red() > 120 and colour.green() < 60 and colour.blue() < 90
    return found


# -- names and words ----------------------------------------------------------------------------------------
def _ocean_like_project():
    """(1 + z^2) u_zz = 0 in the variables x, z: parabolic everywhere, its one direction along z."""
    equation = Equation(a="0", b="0", c="1 + z**2", variables=("x", "z"), name="vertical only")
    return new_project(equation, Domain(-1.0, 1.0, -2.0, 0.0, 21, 21, name="column"))


def test_x_z_study_names_its_axes_columns_and_readouts(make_window, qtbot):
    window = make_window(replace(_ocean_like_project(), pins=(Pin(1.1102e-16, -0.5, "p"),)))
    assert window.map_view.plot.getAxis("left").labelText == "z"
    table = window.pins_panel.table
    assert [table.horizontalHeaderItem(i).text() for i in range(3)] == ["label", "x", "z"]
    assert table.item(0, 1).text() == "0" and table.item(0, 2).text() == "-0.5"
    rows = dict(probe_rows(window.analysis.probes[0], ("x", "z"), window.document.domain))
    assert rows["point"].startswith("x = 0, z = -0.5")
    # a = b = 0: parabolic with the single direction along z, the same words as `mixtype probe`
    assert rows["characteristic directions"] == "90° from the x axis"
    assert rows["slopes dz/dx"].startswith("vertical (")
    readout = window.pins_panel.details.toPlainText()
    assert "slopes dz/dx" in readout and "vertical" in readout and "dy/dx" not in readout
    assert _field(_hover(window, qtbot, 0.25, -1.0), "z") == pytest.approx(-1.0, abs=0.05)


# -- data quantities and template formulas of one name -------------------------------------------------------
@pytest.fixture
def mach_data(tmp_path):
    x, y = np.linspace(-3, 3, 31), np.linspace(0, 3, 16)
    path = tmp_path / "mach.npz"
    np.savez(path, x=x, y=y, M=np.full((16, 31), 0.5))
    return path


def _answer_clash(qtbot, button_text: str, seen: list) -> None:
    def answer():
        box = QApplication.activeModalWidget()
        assert isinstance(box, QMessageBox), box
        seen.append(box.text())
        button = next(b for b in box.buttons() if b.text().replace("&", "") == button_text)
        QTest.mouseClick(button, Qt.MouseButton.LeftButton)

    QTimer.singleShot(0, answer)


@pytest.mark.parametrize(("button", "reads_data"), [("Use the loaded data", True),
                                                    ("Use the template's formulas", False)])
def test_template_formula_never_hides_a_loaded_quantity_silently(make_window, qtbot, mach_data, button,
                                                                 reads_data):
    window = make_window(hump_project(nx=41, ny=31))
    window.add_data_file(mach_data)
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert "M" in window.document.data_names
    # without an answer, the window refuses a template defining M
    count = len(window.document.project.equations)
    assert not window.add_template("full_potential")
    assert len(window.document.project.equations) == count and "would hide the loaded data" in window.notice.text()

    dialog = TemplateDialog(window.document.data_names, window)
    qtbot.addWidget(dialog)
    names = [t.name for t in dialog.templates]
    dialog.listing.setCurrentRow(names.index("full_potential"))
    seen: list[str] = []
    _answer_clash(qtbot, button, seen)
    dialog.accept()
    assert seen and "provide M" in seen[0]
    assert dialog.result() == TemplateDialog.DialogCode.Accepted
    assert window.add_template(dialog.choice())
    equation = window.document.equation
    assert ("M" not in equation.definitions) is reads_data
    assert window.document.compiled is not None


def test_cancelled_clash_question_leaves_the_dialog_open(make_window, qtbot, mach_data):
    window = make_window(hump_project(nx=41, ny=31))
    window.add_data_file(mach_data)
    assert window.runner.wait_idle(HANG_CEILING_S)
    dialog = TemplateDialog(window.document.data_names, window)
    qtbot.addWidget(dialog)
    dialog.listing.setCurrentRow([t.name for t in dialog.templates].index("full_potential"))
    seen: list[str] = []
    _answer_clash(qtbot, "Cancel", seen)
    dialog.accept()
    assert seen and dialog.result() != TemplateDialog.DialogCode.Accepted


# -- parameters outside their slider's range -----------------------------------------------------------------
def test_parameter_outside_its_slider_range_is_kept_with_a_note(make_window):
    window = make_window(hump_project(nx=41, ny=31))
    label = window.findChild(type(window.notice), "sliderValue_M_inf")
    assert label is not None and "range" not in label.text()
    assert window.document.set_parameter_value("M_inf", 0.1)
    assert window.document.equation.parameters["M_inf"].value == 0.1       # accepted as given
    assert label.isVisible() and "below the slider's range 0.3 to 1.2" in label.text()
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert "M_inf = 0.1" in window.map_view.subtitle.text()            # the map on screen is of 0.1
    assert window.document.set_parameter_value("M_inf", 0.8)
    assert "range" not in label.text()


def test_equation_with_parameter_below_range_from_a_file(make_window):
    equation = Equation(a="c0 - 40", b="0", c="1", parameters={"c0": Parameter(1.0, 50.0, 2000.0, "m/s")})
    window = make_window(new_project(equation, Domain(0, 1, 0, 1, 11, 11)))
    label = window.findChild(type(window.notice), "sliderValue_c0")
    assert "1 (m/s)" in label.text() and "below the slider's range 50 to 2000" in label.text()
    assert window.equation_panel.findChild(type(window.notice), "sliderValue_c0") is label
