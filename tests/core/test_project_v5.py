"""Format version 5: the certified layer's settings (shown, minimum cell, cell budget) in ``view.certified``."""

import json
from dataclasses import replace
from pathlib import Path

import pytest

from core.certify.refinement import DEFAULT_MAX_CELLS, DEFAULT_MIN_CELL_FRACTION
from core.project.codec import ProjectError, project_from_dict, project_to_dict
from core.project.io import dumps_project, load_project, loads_project
from core.project.model import CertifiedLayerSettings, ViewSettings, demo_project_names, demo_project_path
from core.project.schema import CURRENT_FORMAT_VERSION

DATA = Path(__file__).resolve().parents[1] / "data"
V5 = DATA / "project-v5-all-fields.mixtype.json"


def test_the_version_5_sample_reads_as_written():
    project = load_project(V5)
    assert project.view.certified == CertifiedLayerSettings(shown=True, min_cell=2.5e-4, max_cells=250_000)
    # saved again it is the same file in format 6, without sweeps (tests/core/test_project_v6.py)
    written = json.loads(dumps_project(project))
    original = json.loads(V5.read_text(encoding="utf-8"))
    assert written.pop("format_version") == 6 and original.pop("format_version") == 5
    assert written.pop("sweeps") == [] and written == original


def test_older_files_start_with_the_certified_layer_hidden_at_the_default_cell_and_budget():
    for sample in sorted(DATA.glob("project-v[1-4]-*.mixtype.json")):
        certified = load_project(sample).view.certified
        assert certified == CertifiedLayerSettings(False, 1e-4, 4_000_000), sample.name
    # the migration writes its values out; they are those of core.certify when format 5 came
    assert (DEFAULT_MIN_CELL_FRACTION, DEFAULT_MAX_CELLS) == (1e-4, 4_000_000)


def test_the_settings_round_trip_and_are_optional_in_a_version_5_file():
    project = load_project(V5)
    changed = replace(project, view=replace(project.view, certified=CertifiedLayerSettings(False, 1e-3, 5_000)))
    assert loads_project(dumps_project(changed)).view.certified == CertifiedLayerSettings(False, 1e-3, 5_000)
    data = json.loads(V5.read_text(encoding="utf-8"))
    del data["view"]["certified"]
    assert project_from_dict(data).view.certified == CertifiedLayerSettings()
    assert project_to_dict(project_from_dict(data))["view"]["certified"]["shown"] is False


@pytest.mark.parametrize(("certified", "expected"), [
    ({"min_cell": 0.0}, "$.view.certified.min_cell: "),
    ({"min_cell": 0.75}, "$.view.certified.min_cell: "),
    ({"min_cell": "small"}, "$.view.certified.min_cell: "),
    ({"max_cells": 10}, "$.view.certified.max_cells: "),
    ({"max_cells": 10**9}, "$.view.certified.max_cells: "),
    ({"shown": 1}, "$.view.certified.shown: "),
])
def test_bad_certified_settings_are_one_line_each_with_their_place(certified, expected):
    data = json.loads(V5.read_text(encoding="utf-8"))
    data["view"]["certified"].update(certified)
    with pytest.raises(ProjectError) as caught:
        project_from_dict(data, source="v5")
    assert len(caught.value.problems) == 1 and caught.value.problems[0].startswith("v5: " + expected)


def test_the_dataclass_checks_its_values():
    for bad in ({"min_cell": float("nan")}, {"min_cell": 1.0}, {"max_cells": True}, {"max_cells": 999},
                {"max_cells": 2.0}):
        with pytest.raises(ValueError):
            CertifiedLayerSettings(**bad)
    with pytest.raises(TypeError):
        ViewSettings(certified={"shown": True})


def test_the_bundled_demos_are_in_the_current_format():
    for name in demo_project_names():
        data = json.loads(demo_project_path(name).read_text(encoding="utf-8"))
        assert data["format_version"] == CURRENT_FORMAT_VERSION, name
        assert dumps_project(load_project(demo_project_path(name))) == demo_project_path(name).read_text("utf-8")
