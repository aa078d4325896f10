"""The document: undoable edits, merged drags, and specific change signals only on real change."""

from __future__ import annotations

import pytest

from core.project.model import Seed
from gui.document import Document
from tests.gui.conftest import hump_project


@pytest.fixture
def document(qtbot):
    return Document(hump_project())


def _count(signal):
    calls = []
    signal.connect(lambda *args: calls.append(args))
    return calls


def test_parameter_change_emits_parameters_signal_only(document):
    equation_calls = _count(document.equation_changed)
    parameter_calls = _count(document.parameters_changed)
    pin_calls = _count(document.pins_changed)
    assert document.set_parameter_value("M_inf", 0.9)
    assert len(parameter_calls) == 1 and not equation_calls and not pin_calls
    assert document.equation.parameters["M_inf"].value == 0.9
    assert not document.set_parameter_value("M_inf", 0.9)  # same value: no edit, no signal
    assert len(parameter_calls) == 1
    assert document.undo_stack.count() == 1


def test_slider_drag_is_one_undo_step(document):
    key = document.new_merge_key("slider M_inf")
    for value in (0.81, 0.85, 0.9, 0.95, 1.05):
        document.set_parameter_value("M_inf", value, merge_key=key)
    assert document.undo_stack.count() == 1
    document.undo_stack.undo()
    assert document.equation.parameters["M_inf"].value == 0.8
    document.undo_stack.redo()
    assert document.equation.parameters["M_inf"].value == 1.05


def test_separate_drags_are_separate_steps(document):
    document.set_parameter_value("M_inf", 0.9, merge_key=document.new_merge_key("slider"))
    document.set_parameter_value("M_inf", 1.0, merge_key=document.new_merge_key("slider"))
    assert document.undo_stack.count() == 2


def test_coefficient_edit_undo_redo_and_dirty_flag(document):
    dirty = _count(document.dirty_changed)
    assert not document.is_dirty
    document.set_coefficient("b", "0.1*x")
    assert document.is_dirty and dirty[-1] == (True,)
    assert document.compiled is not None and document.compiled.equation.b == "0.1*x"
    document.undo_stack.undo()
    assert document.equation.b == "0" and not document.is_dirty


def test_pins_and_seeds_edits(document):
    document.add_pin(0.5, -0.25)
    document.add_pin(1.0, 1.0, "far")
    assert [p.label for p in document.project.pins] == ["P1", "far"]
    document.move_pin(0, 0.0, 0.0)
    assert (document.project.pins[0].x, document.project.pins[0].y) == (0.0, 0.0)
    document.relabel_pin(0, "centre")
    document.remove_pin(1)
    assert [p.label for p in document.project.pins] == ["centre"]
    document.add_seed(Seed(start=(0.0, -1.0), end=(1.0, -1.0), curves=5))
    assert document.project.seeds[0].points().shape == (5, 2)
    assert document.undo_stack.count() == 6
    for _ in range(6):
        document.undo_stack.undo()
    assert document.project.pins == () and document.project.seeds == ()


def test_layer_toggle_signal(document):
    calls = _count(document.layers_changed)
    document.set_layer("family_2", False)
    assert calls and not document.project.view.show_characteristics_family_2
    with pytest.raises(ValueError, match="unknown layer"):
        document.set_layer("clouds", True)


def test_invalid_equation_reports_compile_error(document):
    from dataclasses import replace
    document.set_equation(replace(document.equation, a="1 - Q**2"))
    assert document.compiled is None
    assert "Q" in document.compile_error
