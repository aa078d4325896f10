"""Format version 4: pins belong to the study they were set in; the field layer's settings."""

import json
from dataclasses import replace
from pathlib import Path

import pytest

from core.domain import Domain
from core.equations.equation import Equation
from core.project.codec import ProjectError, project_from_dict, project_to_dict
from core.project.io import dumps_project, load_project, loads_project
from core.project.model import FieldLayerSettings, Pin, Project, ViewSettings

DATA = Path(__file__).resolve().parents[1] / "data"
V4 = DATA / "project-v4-all-fields.mixtype.json"


def test_the_version_4_sample_reads_as_written():
    project = load_project(V4)
    assert [pin.study for pin in project.pins] == [("sample: all fields", "main"), ("second (s, t)", "odd sizes"),
                                                   None]
    assert project.view.field == FieldLayerSettings(True, "trade", "mach", "cividis", (0.5, 1.0))
    # shown: "second (s, t)" on "main": the first two pins belong to other studies, the third to every study
    assert project.pins_shown() == (False, False, True)
    assert project.pins_of("sample: all fields", "main") == (project.pins[0], project.pins[2])
    # saved again it is the same file in the current format, the certified layer hidden (tests/core/
    # test_project_v5.py) and no sweeps (tests/core/test_project_v6.py)
    written = json.loads(dumps_project(project))
    original = json.loads(V4.read_text(encoding="utf-8"))
    assert written.pop("format_version") == 6 and original.pop("format_version") == 4
    assert written["view"].pop("certified") == {"shown": False, "min_cell": 1e-4, "max_cells": 4_000_000}
    assert written.pop("sweeps") == []
    assert written == original


def test_version_3_pins_belong_to_the_study_shown_when_saved_and_the_field_starts_hidden():
    old = load_project(DATA / "project-v3-all-fields.mixtype.json")
    assert all(pin.study == ("second (s, t)", "main") for pin in old.pins) and len(old.pins) == 3
    assert old.view.field == FieldLayerSettings() and not old.view.field.shown
    assert all(old.pins_shown())


def test_renaming_an_equation_or_domain_takes_its_pins_along():
    project = load_project(V4)
    equation = replace(project.equation("sample: all fields"), name="renamed")
    renamed = project.with_equation(equation, replacing="sample: all fields")
    assert renamed.pins[0].study == ("renamed", "main") and renamed.pins[1:] == project.pins[1:]
    domain = replace(project.domain("odd sizes"), name="tiny")
    moved = renamed.with_domain(domain, replacing="odd sizes")
    assert moved.pins[1].study == ("second (s, t)", "tiny")
    assert loads_project(dumps_project(moved)) == moved


def test_a_pin_of_a_study_the_project_lacks_is_refused_with_its_place():
    project = load_project(V4)
    with pytest.raises(ValueError, match="pin 'x' was set in equation 'nowhere'"):
        replace(project, pins=(Pin(0.0, 0.0, "x", ("nowhere", "main")),))
    with pytest.raises(ValueError, match="study is an \\(equation name, domain name\\) pair"):
        Pin(0.0, 0.0, "x", ("only one",))
    data = json.loads(V4.read_text(encoding="utf-8"))
    data["pins"][1]["study"]["domain"] = "elsewhere"
    with pytest.raises(ProjectError) as caught:
        project_from_dict(data, source="v4")
    assert caught.value.problems == ["v4: $.pins[1].study.domain: there is no domain named 'elsewhere'"]


@pytest.mark.parametrize(("field", "expected"), [
    ({"kind": "coefficient", "quantity": "d"}, "$.view.field.quantity: a coefficient field is one of a, b, c"),
    ({"kind": "trade", "quantity": "speed"}, "$.view.field.quantity: a trade field is one of mach, froude"),
    ({"kind": "value", "quantity": "sin"}, "$.view.field.quantity: "),
    ({"colour_map": "rainbow"}, "$.view.field.colour_map: "),
    ({"iso_values": [0.0] * 25}, "$.view.field.iso_values: "),
    ({"shown": "yes"}, "$.view.field.shown: "),
])
def test_bad_field_settings_are_one_line_each_with_their_place(field, expected):
    data = json.loads(V4.read_text(encoding="utf-8"))
    data["view"]["field"].update(field)
    with pytest.raises(ProjectError) as caught:
        project_from_dict(data, source="v4")
    assert len(caught.value.problems) == 1 and caught.value.problems[0].startswith("v4: " + expected)


def test_the_field_and_pin_studies_are_optional_in_a_version_4_file():
    data = json.loads(V4.read_text(encoding="utf-8"))
    del data["view"]["field"]
    for pin in data["pins"]:
        pin.pop("study", None)
    project = project_from_dict(data)
    assert project.view.field == FieldLayerSettings() and all(pin.study is None for pin in project.pins)
    assert "study" not in project_to_dict(project)["pins"][0]


def test_field_settings_check_their_values():
    assert FieldLayerSettings(iso_values=(1.0, -1.0, 1.0)).iso_values == (-1.0, 1.0)   # sorted, once each
    for bad in ({"kind": "colour"}, {"kind": "discriminant", "quantity": "a"}, {"colour_map": "jet"},
                {"iso_values": (float("nan"),)}):
        with pytest.raises(ValueError):
            FieldLayerSettings(**bad)
    with pytest.raises(TypeError):
        ViewSettings(field={"shown": True})
    project = Project((Equation("1", "0", "1", name="e"),), (Domain(0, 1, 0, 1, 5, 5, "d"),), "e", "d")
    assert project.shown_study == ("e", "d") and project.pins_shown() == ()
