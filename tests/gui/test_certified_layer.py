"""The certified layer in the window: ticked with the mouse it proves the types cell by cell off the GUI thread,
rings the pocket the sampled map missed and lists it in the pockets panel; undo, save/open and Esc.

The pocket study is that of tests/core/test_certify_map.py: D = 1e-4 - r^2 about a point midway between the
nodes of a 64 x 64 grid over [-1, 1]^2, a hyperbolic disc of radius 0.01 that no node sees.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
from PySide6.QtCore import QPoint, Qt

from core.analysis.classify import TypeCode
from core.domain import Domain
from core.equations.equation import Equation
from core.project.io import load_project
from core.project.model import CertifiedLayerSettings, new_project
from gui.certified_layer import certified_raster
from gui.computation_log import CANCELLED, DONE
from gui.palette import TYPE_COLOURS, hex_to_rgba
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import tricomi_project

SPACING = 2.0 / 63
POCKET_X = -1.0 + 20 * SPACING + SPACING / 2
POCKET_Y = -1.0 + 41 * SPACING + SPACING / 2
DISC = math.pi * 1e-4       # the area of a disc of radius 0.01 (elementary geometry)


def pocket_project():
    equation = Equation(a="1", b="0", c=f"((x - {POCKET_X!r})**2 + (y - {POCKET_Y!r})**2 - 1e-4) / 4",
                        name="small pocket")
    return new_project(equation, Domain(-1.0, 1.0, -1.0, 1.0, 64, 64, name="square"))


def _tick(qtbot, box) -> None:
    box.window().activateWindow()
    qtbot.mouseClick(box, Qt.MouseButton.LeftButton, pos=QPoint(8, box.height() // 2))


def _table(panel) -> list[list[str]]:
    table = panel.certified_table
    return [[table.item(row, column).text() for column in range(table.columnCount())]
            for row in range(table.rowCount())]


def test_ticking_the_box_certifies_in_the_background_and_rings_the_pocket_the_grid_missed(make_window, qtbot):
    window = make_window(pocket_project(), synchronous=False)
    assert window.analysis.type_map.count(TypeCode.HYPERBOLIC) == 0          # the sampled map sees nothing
    layer, panel = window.certified_layer, window.pockets_panel
    assert not layer.image.isVisible() and not panel.certified_table.isVisible()
    started = []
    window.runner.started.connect(lambda channel, number, label: started.append(channel))
    _tick(qtbot, window.layers_panel.certified_shown)
    assert window.document.project.view.certified == CertifiedLayerSettings(shown=True)
    assert started == ["certified"] and window.runner.is_busy("certified")  # off the GUI thread
    assert window.runner.wait_idle(HANG_CEILING_S)
    certified = window.analysis.certified
    assert certified is not None and certified.min_cell == 2.0 * 1e-4
    # the ring sits on the pocket, in the hyperbolic colour
    (centre,) = layer.ring_centres()
    assert np.hypot(centre[0] - POCKET_X, centre[1] - POCKET_Y) < 0.002
    assert layer.rings.isVisible() and layer.image.isVisible()
    assert layer.rings.points()[0].pen().color().name().upper() == TYPE_COLOURS[TypeCode.HYPERBOLIC]
    # the pockets panel lists it as proven and missed by the grid, its area bounds holding pi * 1e-4
    rows = [row for row in _table(panel) if row[0] == "hyperbolic"]
    assert len(rows) == 1 and rows[0][4:] == ["proven", "yes"]
    low, high = (float(text) for text in rows[0][1].split(" .. "))
    assert low <= DISC * (1 + 1e-3) and DISC * (1 - 1e-3) <= high     # shown to 4 significant digits
    pocket = next(p for p in certified.pockets if p.type == "hyperbolic")
    assert pocket.area[0] <= DISC <= pocket.area[1] and pocket.missed_by_grid
    assert "1 missed by the grid" in panel.certified_summary.text() and panel.certified_table.isVisible()
    # the raster paints the proven pocket's pixels in the light hyperbolic colour though it spans a few pixels
    image = certified_raster(certified)
    column = int((POCKET_X + 1.0) / 2.0 * image.shape[1])
    row = int((POCKET_Y + 1.0) / 2.0 * image.shape[0])
    assert tuple(image[row, column, :3]) == hex_to_rgba(TYPE_COLOURS[TypeCode.HYPERBOLIC])[:3]
    # logged like the other jobs
    entry = [e for e in window.computation_log.entries if e.what == "Certified map"][-1]
    assert entry.outcome == DONE and "1 missed by the grid" in entry.detail
    # "Everything as JSON" carries the certified object
    document = window.results_document(include_codes=False)
    exported = next(p for p in document["certified"]["pockets"] if p["type"] == "hyperbolic")
    assert exported["missed_by_grid"] is True and exported["area"][0] <= DISC <= exported["area"][1]
    # undo unticks and clears the layer
    window.document.undo_stack.undo()
    assert not window.layers_panel.certified_shown.isChecked() and window.analysis.certified is None
    assert not layer.rings.isVisible() and not panel.certified_table.isVisible()
    assert "certified" not in window.results_document(include_codes=False)


def test_the_settings_round_trip_through_save_and_open(make_window, qtbot, tmp_path):
    window = make_window(tricomi_project(41))
    panel = window.layers_panel
    _tick(qtbot, panel.certified_shown)
    panel.certified_min_cell.setCurrentIndex(panel.certified_min_cell.findData(1e-3))
    panel.certified_min_cell.activated.emit(panel.certified_min_cell.currentIndex())
    panel.certified_budget.setCurrentIndex(panel.certified_budget.findData(100_000))
    panel.certified_budget.activated.emit(panel.certified_budget.currentIndex())
    expected = CertifiedLayerSettings(shown=True, min_cell=1e-3, max_cells=100_000)
    assert window.document.project.view.certified == expected
    assert window.analysis.certified.min_cell == 4.0 * 1e-3 and window.analysis.certified.max_cells == 100_000
    path = tmp_path / "certified.mixtype.json"
    assert window.save_to(path)
    assert load_project(path).view.certified == expected
    other = make_window(tricomi_project(41))
    assert other.analysis.certified is None
    assert other.open_path(path, ask=False)
    assert other.runner.wait_idle(HANG_CEILING_S)
    assert other.document.project.view.certified == expected and other.layers_panel.certified_shown.isChecked()
    assert other.layers_panel.certified_min_cell.currentData() == 1e-3
    assert other.analysis.certified is not None and other.analysis.certified.max_cells == 100_000
    # Tricomi y u_xx + u_yy: hyperbolic below y = 0, elliptic above; each half proven up to the undecided strip
    area = other.analysis.certified.area
    assert 7.5 < area["elliptic"][0] <= 8.0 <= area["elliptic"][1] and area["hyperbolic"][0] <= 8.0


def test_esc_stops_the_certified_job(make_window, qtbot):
    window = make_window(tricomi_project(41), synchronous=False)
    panel = window.layers_panel
    # the finest cells and the largest budget: far more work than the moment until Esc
    project = window.document.project
    finest = CertifiedLayerSettings(False, 1e-6, 64_000_000)
    window.document.edit(replace(project, view=replace(project.view, certified=finest)), "finest cells")
    _tick(qtbot, panel.certified_shown)
    assert window.runner.is_busy("certified")
    qtbot.keyClick(window, Qt.Key.Key_Escape)
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.analysis.certified is None and not window.certified_layer.rings.isVisible()
    last = [e for e in window.computation_log.entries if e.what == "Certified map"][-1]
    assert last.outcome == CANCELLED and last.detail.startswith("stopped by the user")
