"""The sweep panel: settings typed and saved, Run in the background with progress and Cancel, the plotted areas
against their closed form, a click on the plot setting the parameter (one undo step), save and open.

The study is c = y - p with a = 1, b = 0 on [0, 3] x [-1, 2]: D = -4c, hyperbolic below the line y = p, an area
of (p - ymin) * width = 3 (p + 1) (elementary geometry, common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QPointF, Qt
from PySide6.QtWidgets import QApplication

from core.analysis.sweep import SweepRow, run_sweep, sweep_values
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.project.io import load_project
from core.project.model import new_project
from core.project.sweeps import CriticalValue, SavedSweep
from gui.computation_log import CANCELLED, DONE
from gui.panels.sweep import CHANNEL, CRITICAL_CHANNEL, rounded_value
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import tricomi_project

STUDY = ("level line", "box")


def level_project(nx: int = 31, ny: int = 23):
    equation = Equation(a="1", b="0", c="y - p", parameters={"p": Parameter(0.25, -1.0, 2.0, unit="m")},
                        name=STUDY[0])
    return new_project(equation, Domain(0.0, 3.0, -1.0, 2.0, nx, ny, name=STUDY[1]))


def _type(qtbot, edit, text: str) -> None:
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, text)
    qtbot.keyClick(edit, Qt.Key.Key_Return)


def _set_range(qtbot, panel, low: str, high: str, count: int) -> None:
    _type(qtbot, panel.low, low)
    _type(qtbot, panel.high, high)
    panel.count.setValue(count)


def test_run_in_the_background_plots_the_closed_form_areas_and_saves_them_as_one_undo_step(make_window, qtbot):
    window = make_window(level_project(), synchronous=False)
    panel = window.sweep_panel
    assert panel.parameter.currentText() == "p"
    # the parameter's slider range is the default, then typed settings are saved in the study
    assert (panel.low.text(), panel.high.text(), panel.count.value()) == ("-1", "2", 41)
    _set_range(qtbot, panel, "-0.5", "1.5", 9)
    saved = window.document.project.sweeps_of(*STUDY)
    assert saved == (SavedSweep(STUDY, "p", -0.5, 1.5, 9),)
    steps = window.document.undo_stack.count()
    started = []
    window.runner.started.connect(lambda channel, number, label: started.append(channel))
    qtbot.mouseClick(panel.run_button, Qt.MouseButton.LeftButton)
    assert started == [CHANNEL] and window.runner.is_busy(CHANNEL)          # off the GUI thread
    assert panel.cancel_button.isEnabled() and not panel.run_button.isEnabled() and panel.progress.isVisibleTo(panel)
    assert window.runner.wait_idle(HANG_CEILING_S)
    (sweep,) = window.document.project.sweeps_of(*STUDY)
    assert [row.value for row in sweep.rows] == list(sweep_values(-0.5, 1.5, 9))
    for row in sweep.rows:
        assert row.areas["hyperbolic"] == pytest.approx(3.0 * (row.value + 1.0), rel=1e-12)
    # the plot shows exactly those rows, in the type colours
    x, y = panel.area_curves["hyperbolic"].getOriginalDataset()
    assert list(x) == [row.value for row in sweep.rows] and list(y) == [row.areas["hyperbolic"] for row in sweep.rows]
    assert panel.area_curves["hyperbolic"].opts["pen"].color().name().upper() == "#E69F00"
    assert not panel.area_curves["parabolic"].isVisible() and panel.area_curves["elliptic"].isVisible()
    assert panel.area_plot.getAxis("bottom").labelText == "p (m)"
    assert not panel.progress.isVisibleTo(panel) and panel.run_button.isEnabled()
    assert "Last run: 9 values from -0.5 to 1.5" in panel.summary.text()
    assert window.document.undo_stack.count() == steps + 1
    assert window.document.undo_stack.undoText() == "Run the sweep of p (9 values)"
    entry = [e for e in window.computation_log.entries if e.what == "Parameter sweep"][-1]
    assert entry.outcome == DONE and entry.detail == "9 values of p" and entry.grid == "31 × 23 nodes"
    window.document.undo_stack.undo()
    assert window.document.project.sweeps_of(*STUDY)[0].rows is None
    x, _ = panel.area_curves["hyperbolic"].getOriginalDataset()
    assert x is None or len(x) == 0


def test_a_click_on_the_plot_sets_the_parameter_there_as_one_undoable_edit(make_window, qtbot):
    window = make_window(level_project())
    panel = window.sweep_panel
    _set_range(qtbot, panel, "-0.5", "1.5", 5)
    panel.run()
    (sweep,) = window.document.project.sweeps_of(*STUDY)
    assert len(sweep.rows) == 5
    window.sweep_dock.raise_()
    QApplication.processEvents()                    # laid out and ranged as on screen
    box = panel.area_plot.getViewBox()
    target = QPointF(0.9, float(np.mean(box.viewRange()[1])))       # x = 0.9 on the plot's own axis
    where = panel.plots.mapFromScene(box.mapViewToScene(target))
    steps = window.document.undo_stack.count()
    chosen = []
    panel.value_chosen.connect(lambda name, value: chosen.append((name, value)))
    qtbot.mouseClick(panel.plots.viewport(), Qt.MouseButton.LeftButton, pos=where)
    value = window.document.equation.parameters["p"].value
    assert chosen == [("p", value)]
    assert value == pytest.approx(0.9, abs=0.01)     # the pixel holds x to within a few thousandths of the range
    assert window.document.undo_stack.count() == steps + 1
    assert window.document.undo_stack.undoText() == f"Set p = {value:.6g}"
    window.analysis.flush()
    assert window.analysis.type_map.parameters["p"] == value       # the map follows the new value
    assert panel.now_lines[0].value() == value
    window.document.undo_stack.undo()
    assert window.document.equation.parameters["p"].value == 0.25


def test_clicked_values_are_rounded_and_kept_in_the_range():
    assert rounded_value(0.123456, 0.0, 1.0) == 0.123
    assert rounded_value(5.0, 0.0, 1.0) == 1.0 and rounded_value(-2.0, -1.5, 1.0) == -1.5
    assert rounded_value(0.0123456, 1e-3, 10.0, log=True) == 0.01235     # four significant digits


def test_cancel_stops_the_sweep_and_keeps_the_last_results(make_window, qtbot):
    window = make_window(level_project(401, 401), synchronous=False)
    panel = window.sweep_panel
    _set_range(qtbot, panel, "-0.5", "1.5", 1000)          # a thousand maps of 160,000 nodes: far longer than a click
    panel.run()
    assert window.runner.is_busy(CHANNEL)
    qtbot.mouseClick(panel.cancel_button, Qt.MouseButton.LeftButton)
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.document.project.sweeps_of(*STUDY)[0].rows is None
    assert "cancelled" in panel.summary.text() and panel.run_button.isEnabled()
    assert not panel.cancel_button.isEnabled()
    entry = [e for e in window.computation_log.entries if e.what == "Parameter sweep"][-1]
    assert entry.outcome == CANCELLED


def test_bad_settings_are_said_and_not_saved(make_window, qtbot):
    window = make_window(level_project())
    panel = window.sweep_panel
    _type(qtbot, panel.low, "abc")
    assert panel.error.isVisibleTo(panel) and "from: 'abc' is not a number" in panel.error.text()
    assert window.document.project.sweeps == ()
    _type(qtbot, panel.low, "0")
    assert window.document.project.sweeps == (SavedSweep(STUDY, "p", 0.0, 2.0, 41),)
    qtbot.mouseClick(panel.log, Qt.MouseButton.LeftButton, pos=panel.log.rect().center())
    assert "logarithmic sweep needs a low end above 0" in panel.error.text()
    assert window.document.project.sweeps == (SavedSweep(STUDY, "p", 0.0, 2.0, 41),)
    _type(qtbot, panel.low, "0.01")
    assert not panel.error.isVisibleTo(panel)
    assert window.document.project.sweeps == (SavedSweep(STUDY, "p", 0.01, 2.0, 41, log=True),)
    assert panel.area_plot.getAxis("bottom").logMode


def test_saved_sweeps_and_critical_values_come_back_when_the_study_is_opened(make_window, tmp_path):
    project = level_project()
    equation = project.equation(STUDY[0])
    computed = run_sweep(compile_equation(equation), project.domain(STUDY[1]), "p", sweep_values(0.1, 1.0, 4, log=True),
                         log=True)
    critical = (CriticalValue(0.3, "appears", (1.5, 0.3), "hyperbolic", (0.29, 0.31)),)
    saved = SavedSweep(STUDY, "p", 0.1, 1.0, 4, True, computed.rows, critical)
    path = tmp_path / "swept.mixtype.json"
    first = make_window(project.with_sweep(saved))
    assert first.save_to(path)
    assert load_project(path).sweeps == (saved,)
    window = make_window(tricomi_project(21))
    assert window.sweep_panel.current() is None           # y u_xx + u_yy has no parameter
    assert "no parameter to sweep" in window.sweep_panel.summary.text()
    assert not window.sweep_panel.run_button.isEnabled()
    assert window.open_path(path, ask=False)
    panel = window.sweep_panel
    assert panel.current() == saved and panel.log.isChecked()
    x, y = panel.area_curves["hyperbolic"].getOriginalDataset()
    assert np.allclose(x, [row.value for row in computed.rows]) and list(y) == [r.areas["hyperbolic"] for r in
                                                                                 computed.rows]
    # one dashed marker per plot at the critical value (log10 of it on the logarithmic axis)
    positions = [line.value() for _, line in panel.critical_lines]
    assert positions == pytest.approx([np.log10(0.3)] * 2, rel=1e-14)
    assert "hyperbolic appears at 0.3" in panel.summary.text()


def test_rows_of_another_parameter_are_kept_apart(make_window, qtbot):
    project = level_project()
    equation = project.equation(STUDY[0])
    two = Equation(a=equation.a, b=equation.b, c="y - p - q", name=STUDY[0],
                   parameters={"p": equation.parameters["p"], "q": Parameter(0.0)})
    window = make_window(new_project(two, project.domain(STUDY[1])))
    panel = window.sweep_panel
    _set_range(qtbot, panel, "0", "1", 3)
    panel.run()
    panel.parameter.setCurrentIndex(1)
    panel.parameter.activated.emit(1)
    assert panel.current() == SavedSweep(STUDY, "q", -1.0, 1.0, 41)      # q's default, not yet in the study
    assert len(window.document.project.sweeps) == 1
    panel.parameter.setCurrentIndex(0)
    panel.parameter.activated.emit(0)
    assert len(panel.current().rows) == 3
    row = panel.current().rows[1]
    assert isinstance(row, SweepRow) and row.areas["hyperbolic"] == pytest.approx(3.0 * 1.5, rel=1e-12)


def test_find_critical_values_marks_where_the_pocket_appears_and_keeps_it_with_the_sweep(make_window, qtbot):
    # c = (x - 0.5)^2 + (y - 0.25)^2 - p: hyperbolic inside the disc of radius sqrt(p) about (0.5, 0.25), so a
    # pocket appears at p = 0, at that point (elementary geometry, common practice, no source); no other event
    # in [-0.5, 0.5] (the disc reaches no corner of [-1, 1]^2 before p = 3.8125).
    equation = Equation(a="1", b="0", c="(x - 0.5)**2 + (y - 0.25)**2 - p", name="disc",
                        parameters={"p": Parameter(0.1, -0.5, 0.5)})
    window = make_window(new_project(equation, Domain(-1.0, 1.0, -1.0, 1.0, 41, 41, name="square")),
                         synchronous=False)
    panel = window.sweep_panel
    started = []
    window.runner.started.connect(lambda channel, number, label: started.append(channel))
    qtbot.mouseClick(panel.critical_button, Qt.MouseButton.LeftButton)
    assert started == [CRITICAL_CHANNEL] and panel.cancel_button.isEnabled()     # off the GUI thread
    assert window.runner.wait_idle(HANG_CEILING_S)
    (sweep,) = window.document.project.sweeps_of("disc", "square")
    (mark,) = sweep.critical
    assert mark.event == "appears" and mark.type == "hyperbolic" and abs(mark.value) < 1e-9
    assert mark.at == pytest.approx((0.5, 0.25), abs=1e-3)
    assert mark.bracket[0] <= mark.value <= mark.bracket[1]
    assert [line.value() for _, line in panel.critical_lines] == [mark.value, mark.value]   # both plots
    assert "hyperbolic appears at" in panel.summary.text() and "proven by certified maps" in panel.summary.text()
    assert window.document.undo_stack.undoText() == "Find critical values of p (1 found)"
    entry = [e for e in window.computation_log.entries if e.what == "Critical values"][-1]
    assert entry.outcome == DONE and entry.detail == "1 event of hyperbolic zones in p, proven"
    window.document.undo_stack.undo()
    assert window.document.project.sweeps_of("disc", "square") == () and not panel.critical_lines
