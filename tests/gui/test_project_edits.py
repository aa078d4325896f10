"""What one edit changed: the document signals a change between two projects calls for, and duplicates."""

from __future__ import annotations

from dataclasses import replace

import pytest

from core.project.model import Pin, Seed
from gui.document import Document
from gui.project_edits import changed_parts, equation_structure
from tests.gui.conftest import hump_project, tricomi_project


def _with_shown_equation(project, **changes):
    equation = replace(project.equation(project.shown_equation), **changes)
    return project.with_equation(equation, replacing=project.shown_equation)


def test_no_change_calls_for_no_signal():
    project = hump_project()
    assert changed_parts(project, project) == ()
    assert changed_parts(project, replace(project)) == ()


def test_a_parameter_value_alone_is_a_parameters_change():
    project = hump_project(m_inf=0.8)
    assert changed_parts(project, hump_project(m_inf=0.9)) == ("parameters_changed",)


def test_a_parameter_range_is_part_of_the_equation_structure():
    project = hump_project()
    parameters = {"M_inf": replace(project.equations[0].parameters["M_inf"], maximum=1.5)}
    after = _with_shown_equation(project, parameters=parameters)
    assert equation_structure(after.equations[0]) != equation_structure(project.equations[0])
    assert changed_parts(project, after) == ("equation_changed",)


def test_a_renamed_equation_changes_the_equation_and_the_list():
    project = hump_project()
    assert changed_parts(project, _with_shown_equation(project, name="other")) == ("equation_changed",
                                                                                   "equations_listed")


def test_view_tolerance_counts_as_domain_other_switches_as_layers():
    project = hump_project()
    tolerance = replace(project, view=replace(project.view, parabolic_tolerance=1e-3))
    assert changed_parts(project, tolerance) == ("domain_changed",)
    hidden = replace(project, view=replace(project.view, show_pins=False))
    assert changed_parts(project, hidden) == ("layers_changed",)


def test_several_parts_in_one_edit_each_once_in_a_fixed_order():
    project = hump_project()
    after = replace(project, pins=(Pin(0.0, 0.0, "P1"),), seeds=(Seed(start=(0.0, 0.0)),), notes="seen")
    after = after.with_domain(replace(project.domains[0], nx=31), replacing=project.shown_domain)
    assert changed_parts(project, after) == ("domain_changed", "pins_changed", "seeds_changed", "notes_changed")


@pytest.fixture
def document(qtbot):
    return Document(tricomi_project(21))


def test_duplicates_get_free_names_and_are_one_undo_step_each(document):
    listed = []
    document.equations_listed.connect(lambda: listed.append(True))
    assert document.duplicate_equation() and document.duplicate_equation()
    assert document.project.equation_names == ("Tricomi", "Tricomi (2)", "Tricomi (2) (2)")
    assert document.project.shown_equation == "Tricomi (2) (2)"    # the copy of the shown copy
    assert document.duplicate_domain()
    assert document.project.domain_names == ("square", "square (2)")
    assert document.project.shown_domain == "square (2)"
    assert document.domain == replace(document.project.domain("square"), name="square (2)")
    assert document.undo_stack.count() == 3 and len(listed) == 3
    document.undo_stack.undo()
    assert document.project.domain_names == ("square",)
