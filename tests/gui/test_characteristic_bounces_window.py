"""The window's setting for characteristics that go on past edges and the type-change line: undoable, traced."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from core.project.io import load_project, save_project
from core.project.model import Seed
from tests.gui.conftest import tricomi_project


def test_characteristics_go_on_past_the_sonic_line_and_the_edges_when_asked(make_window):
    window = make_window(tricomi_project())
    window.document.add_seed(Seed((0.0, -1.0)))
    window.analysis.flush()
    assert all(curve.events == () for curve in window.analysis.traced[0].curves)
    spin = window.layers_panel.bounces
    assert spin.value() == 0
    spin.setValue(2)                                     # as the user would: one undoable edit, traced again
    window.analysis.flush()
    assert window.document.project.view.characteristic_bounces == 2 and window.document.is_dirty
    curves = window.analysis.traced[0].curves
    for curve in curves:
        assert len(curve.events) == 4 and curve.backward_events == 2
        cusp = next(event for event in curve.events if event.kind == "type_change")
        assert abs(cusp.at[1]) <= 1e-10
        # Through (0, -1) the characteristics meet y = 0 at |x| = 2/3 (x -+ (2/3)(-y)^(3/2) = const, Bers 1958).
        assert abs(cusp.at[0]) == pytest.approx(2 / 3, abs=1e-7)
    # The map draws each leg in the colour of its own family: family 2's item holds family 1's legs after an
    # event.
    first = next(c for c in curves if int(c.family) == 1)
    leg = next(points for family, points in first.legs() if int(family) == 2)
    drawn_x, drawn_y = window.map_view.family_curves[2].getData()
    assert np.isin(leg[:, 0], drawn_x).all() and np.isin(leg[:, 1], drawn_y).all()
    assert window.document.undo_stack.undoText() == "Characteristics go on 2 times"
    window.document.undo_stack.undo()
    window.analysis.flush()
    assert spin.value() == 0 and window.document.project.view.characteristic_bounces == 0
    assert all(curve.events == () for curve in window.analysis.traced[0].curves)


def test_the_setting_is_saved_with_the_study_and_shown_when_reopened(make_window, tmp_path):
    project = tricomi_project()
    project = replace(project, seeds=(Seed((0.5, -0.5)),), view=replace(project.view, characteristic_bounces=3))
    path = tmp_path / "study.mixtype.json"
    save_project(project, path)
    window = make_window(load_project(path))
    assert window.layers_panel.bounces.value() == 3
    assert max(len(curve.events) for curve in window.analysis.traced[0].curves) == 6
