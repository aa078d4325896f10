"""The window computing in the background: results by signal, a long classification cancelled."""

from __future__ import annotations

import pytest

from core.analysis.domain import Domain
from tests.gui.conftest import hump_project


def test_parameter_change_updates_map_in_the_background(make_window, qtbot):
    window = make_window(hump_project(), synchronous=False)
    assert window.analysis.type_map is not None
    small = window.analysis.type_map.fractions["hyperbolic"]
    with qtbot.waitSignal(window.analysis.map_ready, timeout=10000) as blocker:
        window.document.set_parameter_value("M_inf", 0.95)
    assert blocker.args[0].parameters["M_inf"] == 0.95
    assert blocker.args[0].fractions["hyperbolic"] > small
    with qtbot.waitSignal(window.analysis.lines_ready, timeout=10000) as lines:
        pass
    assert len(lines.args[0].curves) >= 1


def test_cancel_a_long_classification_keeps_the_last_map(make_window, qtbot):
    window = make_window(hump_project(), synchronous=False)
    old = window.analysis.type_map
    cancelled = []
    window.runner.cancelled.connect(lambda channel, number: cancelled.append(channel))
    window.document.set_domain(Domain(-3.0, 3.0, -2.0, 2.0, 4096, 4096, name="near field"))
    window.analysis.flush()
    assert window.runner.is_busy("map")
    qtbot.waitUntil(lambda: window.progress.isVisible(), timeout=5000)
    window.cancel_action.trigger()
    assert window.runner.wait_idle(20)
    assert "map" in cancelled
    assert window.analysis.type_map is old
    assert not window.progress.isVisible()
    assert window.map_view.image.image.shape == old.codes.shape


def test_worker_failure_reaches_the_window(make_window):
    window = make_window(hump_project())

    def broken(cancel, progress):
        raise RuntimeError("grid memory exhausted")

    window.runner.request("map", broken, label="Classifying the grid")
    assert "Classifying the grid failed: RuntimeError: grid memory exhausted" in window.notice.text()


@pytest.mark.parametrize("nodes", [1024])
def test_slider_drag_at_fine_grid_keeps_up(make_window, qtbot, nodes):
    """During a drag the newest value is shown once the worker is free (queued, not restarted)."""
    window = make_window(hump_project(nx=nodes, ny=nodes), synchronous=False)
    slider = window.equation_panel.sliders["M_inf"]
    shown = []
    window.analysis.map_ready.connect(lambda type_map: shown.append(type_map.parameters["M_inf"]))
    slider.setSliderDown(True)
    for position in range(560, 700, 4):
        slider.setValue(position)
        qtbot.wait(5)
    slider.setSliderDown(False)
    window.analysis.flush()
    assert window.runner.wait_idle(20)
    final = window.document.equation.parameters["M_inf"].value
    assert shown and shown[-1] == pytest.approx(final)
    assert len(shown) >= 2   # intermediate maps appeared while dragging
