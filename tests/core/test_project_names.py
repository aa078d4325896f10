"""Free names for copies and new rows: the Project refuses repeated names, so every adder picks one here."""

from __future__ import annotations

import pytest

from core.domain import Domain
from core.equations.equation import Equation
from core.project.model import new_project
from core.project.names import free_name, numbered_name


@pytest.mark.parametrize(("name", "taken", "expected"), [
    ("square", (), "square"),
    ("square", ("square",), "square (2)"),
    ("square", ("square", "square (2)", "square (3)"), "square (4)"),
    ("square", ("square", "square (3)"), "square (2)"),          # the first gap is used
    ("square (2)", ("square", "square (2)"), "square (2) (2)"),  # a copy of a copy numbers its own name
    ("wide", ("square", "square (2)"), "wide"),
])
def test_free_name(name, taken, expected):
    assert free_name(name, taken) == expected


@pytest.mark.parametrize(("prefix", "taken", "expected"), [
    ("q", (), "q1"),
    ("q", {"q1", "q2", "k1"}, "q3"),
    ("k", {"k2", "q1"}, "k1"),
    ("k", {"k1", "k3"}, "k2"),
])
def test_numbered_name(prefix, taken, expected):
    assert numbered_name(prefix, taken) == expected


def test_a_free_name_is_accepted_by_the_project():
    equation = Equation("y", "0", "1", name="tricomi")
    project = new_project(equation, Domain(-1.0, 1.0, -1.0, 1.0, 11, 11, "square"))
    copy = Equation("y", "0", "1", name=free_name("tricomi", project.equation_names))
    project = project.with_equation(copy)
    assert project.equation_names == ("tricomi", "tricomi (2)")
    with pytest.raises(ValueError, match="two equations are named 'tricomi'"):
        project.with_equation(equation)
