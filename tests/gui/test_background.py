"""The window computing in the background: results by signal, a long classification cancelled.

Waits are for the jobs themselves (JobRunner.wait_idle sleeps until workers post results), with a ceiling only
a hang reaches. Signals are recorded from before the edit: a result that arrives early is not missed.
"""

from __future__ import annotations

import pytest
from PySide6.QtWidgets import QApplication

from core.domain import Domain
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import hump_project


def test_parameter_change_updates_map_in_the_background(make_window):
    window = make_window(hump_project(), synchronous=False)
    assert window.analysis.type_map is not None
    small = window.analysis.type_map.fractions["hyperbolic"]
    maps, lines = [], []
    window.analysis.map_ready.connect(maps.append)
    window.analysis.lines_ready.connect(lines.append)
    window.document.set_parameter_value("M_inf", 0.95)
    window.analysis.flush()
    assert window.runner.is_busy("map") and not maps    # off the GUI thread: the result comes by signal
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert [type_map.parameters["M_inf"] for type_map in maps] == [0.95]
    assert maps[0].fractions["hyperbolic"] > small
    assert len(lines) == 1                               # the lines of that map, once
    assert len(lines[0].curves) >= 1


def test_cancel_a_long_classification_keeps_the_last_map(make_window):
    window = make_window(hump_project(), synchronous=False)
    old = window.analysis.type_map
    cancelled = []
    window.runner.cancelled.connect(lambda channel, number: cancelled.append(channel))
    window.document.set_domain(Domain(-3.0, 3.0, -2.0, 2.0, 4096, 4096, name="near field"))
    window.analysis.flush()
    assert window.runner.is_busy("map")
    assert window.progress.isVisible()          # shown as the job starts, before any result can arrive
    window.cancel_action.trigger()
    assert window.runner.wait_idle(HANG_CEILING_S)
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
def test_slider_drag_at_fine_grid_keeps_up(make_window, nodes):
    """During a drag the newest value is shown once the worker is free (queued, not restarted)."""
    window = make_window(hump_project(nx=nodes, ny=nodes), synchronous=False)
    slider = window.equation_panel.sliders["M_inf"]
    shown = []
    window.analysis.map_ready.connect(lambda type_map: shown.append(type_map.parameters["M_inf"]))
    slider.setSliderDown(True)
    for position in range(560, 700, 4):
        slider.setValue(position)
        window.analysis.flush()          # one request per step (not left to a timer): the first one runs,
        QApplication.processEvents()     # the newest waits behind it; maps that are done are shown
    slider.setSliderDown(False)
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    final = window.document.equation.parameters["M_inf"].value
    assert shown and shown[-1] == pytest.approx(final)
    assert len(shown) >= 2   # intermediate maps appeared while dragging
