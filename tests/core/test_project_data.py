"""Data sources in projects: records, loading checks, and opening the files relative to the project file."""

from __future__ import annotations

import hashlib
import json
import os
import shutil
from pathlib import Path

import numpy as np
import pytest

from core.analysis.classify import classify_grid
from core.data.sources import DataError
from core.domain import Domain
from core.equations.equation import Equation
from core.equations.language import ExpressionError
from core.project.checks import equation_data_names
from core.project.data_files import (
    accept_changed_data,
    compile_with_data,
    data_source_ref,
    open_project_data,
    relative_data_path,
    resolve_data_path,
)
from core.project.io import ProjectError, dumps_project, load_project, loads_project, save_project
from core.project.model import DataSourceRef, new_project

DEMO_DATA = Path(__file__).resolve().parents[2] / "resources" / "demo" / "data"
SQUARE = Domain(-1.0, 1.0, -1.0, 1.0, 21, 21, "square")
USES_DATA = Equation("k - x", "0", "1", parameters={}, name="uses data")


def _grid_file(path: Path, scale: float = 1.0) -> Path:
    x = np.linspace(-1, 1, 11)
    y = np.linspace(-1, 1, 11)
    np.savez(path, x=x, y=y, k=scale * np.ones((11, 11)), h=np.zeros((11, 11)))
    return path


def _study(tmp_path: Path) -> tuple[Path, Path]:
    """A project in tmp/projects/ reading tmp/shared/grid.npz (recorded as ../shared/grid.npz)."""
    (tmp_path / "projects").mkdir()
    (tmp_path / "shared").mkdir()
    data = _grid_file(tmp_path / "shared" / "grid.npz", scale=0.5)
    project_path = tmp_path / "projects" / "study.mixtype.json"
    project = new_project(USES_DATA, SQUARE).with_data_source(data_source_ref(data, project_path, names=["k"]))
    save_project(project, project_path)
    return project_path, data


# -- records -----------------------------------------------------------------------------------------------
def test_a_record_holds_a_relative_posix_path_and_the_sha256_of_the_file(tmp_path):
    (tmp_path / "a").mkdir()
    data = _grid_file(tmp_path / "a" / "grid.npz")
    ref = data_source_ref(data, tmp_path / "b" / "c" / "p.mixtype.json", names={"k": "kappa"}, note="n")
    assert ref.path == "../../a/grid.npz"
    # the checksum is SHA-256 of the bytes (FIPS 180-4), the same as hashlib's
    assert ref.checksum == hashlib.sha256(data.read_bytes()).hexdigest()
    assert ref.names == {"k": "kappa"} and ref.note == "n" and ref.format is None
    assert data_source_ref(data, tmp_path / "a" / "p.json").path == "grid.npz"
    assert relative_data_path(data, tmp_path / "p.json") == "a/grid.npz"
    assert resolve_data_path(ref, tmp_path / "b" / "c" / "p.mixtype.json") == data
    assert resolve_data_path("/elsewhere/x.csv", tmp_path / "p.json") == Path("/elsewhere/x.csv")
    with pytest.raises(DataError, match="cannot be read"):
        data_source_ref(tmp_path / "absent.npz", tmp_path / "p.json")


@pytest.mark.parametrize(("changes", "message"), [
    ({"path": "  "}, "needs a file path"),
    ({"path": "a\nb.csv"}, "control characters"),
    ({"checksum": "abc"}, "64 hex digits"),
    ({"checksum": "g" * 64}, "64 hex digits"),
    ({"format": "xlsx"}, "unknown data format 'xlsx'"),
    ({"names": {"bad name": "u"}}, "must start with a letter"),
    ({"names": {"u": "sin"}}, "built-in function"),
    ({"names": {"u": "b"}}, "reserved for a coefficient"),
    ({"names": {"u": "q", "v": "q"}}, "both become 'q'"),
])
def test_records_refuse_what_a_file_could_not_hold(changes, message):
    fields = {"path": "data/x.csv", "checksum": "a" * 64, **changes}
    with pytest.raises(ValueError, match=message):
        DataSourceRef(**fields)


def test_checksums_are_kept_in_lower_case_and_paths_are_unique():
    assert DataSourceRef("x.csv", "AB" * 32).checksum == "ab" * 32
    project = new_project(USES_DATA, SQUARE).with_data_source(DataSourceRef("x.csv", "a" * 64))
    replaced = project.with_data_source(DataSourceRef("x.csv", "b" * 64, note="new"))
    assert replaced.data_sources == (DataSourceRef("x.csv", "b" * 64, note="new"),)
    both = replaced.with_data_source(DataSourceRef("y.csv", "c" * 64))
    assert [s.path for s in both.data_sources] == ["x.csv", "y.csv"]
    assert [s.path for s in both.without_data_source("x.csv").data_sources] == ["y.csv"]
    with pytest.raises(KeyError, match="no data source with the path 'z.csv'"):
        both.without_data_source("z.csv")


# -- loading checks ------------------------------------------------------------------------------------------
def _file_data(tmp_path) -> dict:
    project_path, _ = _study(tmp_path)
    return json.loads(project_path.read_text(encoding="utf-8"))


def _problems(data: dict) -> list[str]:
    with pytest.raises(ProjectError) as caught:
        loads_project(json.dumps(data), source="s.mixtype.json")
    return [line.removeprefix("s.mixtype.json: ") for line in caught.value.problems]


def test_the_schema_checks_paths_checksums_and_names(tmp_path):
    data = _file_data(tmp_path)
    data["data_sources"][0]["path"] = ""
    data["data_sources"][0]["checksum"] = "12ab"
    data["data_sources"][0]["names"] = {"k": "not a name", "2x": "u"}
    assert sorted(_problems(data)) == sorted([
        "$.data_sources[0].path: must name a file: not blank, and without control characters",
        "$.data_sources[0].checksum: must be a SHA-256 checksum: 64 hexadecimal digits",
        "$.data_sources[0].names.k: must start with a letter and hold only ASCII letters, digits and '_'",
        ('$.data_sources[0].names["2x"]: the name must start with a letter and hold only ASCII letters, digits '
         "and '_'"),
    ])


def test_the_meaning_checks_repeated_files_and_quantity_names(tmp_path):
    data = _file_data(tmp_path)
    data["data_sources"].append(dict(data["data_sources"][0]))
    data["data_sources"][0]["names"] = {"k": "q", "h": "q", "x2": "pi"}
    assert _problems(data) == [
        "$.data_sources[0].names.h: 'h' and 'k' both become 'q'",
        "$.data_sources[0].names.x2: quantity name 'pi' is the name of a built-in function or constant",
        "$.data_sources[1].path: the file '../shared/grid.npz' is already data_sources[0]",
    ]


def test_names_no_equation_defines_need_a_data_source(tmp_path):
    data = _file_data(tmp_path)
    assert loads_project(json.dumps(data)).equations[0].a == "k - x"   # k is a data quantity
    data["data_sources"] = []
    assert _problems(data) == [("$.equations[0].coefficients.a: column 1: unknown name 'k' (and the project "
                               "lists no data source that could provide it)")]


def test_data_names_of_an_equation_include_derivatives_and_readouts():
    equation = Equation("c2 - u**2", "-2*u*v", "c2 - diff(w, y)", definitions={"c2": "c0**2 - p"},
                        trade={"mach": {"u": "u", "v": "v", "c2": "c2", "gamma": "gam"}}, peak_quantity="M")
    assert equation_data_names(equation) == ("c0", "p", "u", "v", "w", "gam", "M")
    assert equation_data_names(Equation("y", "0", "1 + sin(x)*pi")) == ()


# -- opening ---------------------------------------------------------------------------------------------------
def test_opening_from_another_working_directory_finds_the_files_beside_the_project(tmp_path, monkeypatch):
    project_path, data = _study(tmp_path)
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    project = load_project(project_path)
    assert project.data_sources[0].path == "../shared/grid.npz"
    opened = open_project_data(project, os.path.relpath(project_path), allow_outside=True)
    assert opened.ok and opened.changed == () and opened.names == ("k",)
    assert opened.statuses[0].location == data and opened.statuses[0].state == "opened"
    compiled = compile_with_data(project.shown()[0], opened)
    # a = k - x with k = 0.5: hyperbolic (a < 0 since c = 1 > 0) where x > 0.5 (closed form)
    type_map = classify_grid(compiled, SQUARE, data=opened.sources)
    hyperbolic = type_map.codes == 3
    assert np.array_equal(hyperbolic, np.broadcast_to(type_map.x > 0.5 + 1e-9, hyperbolic.shape))


def test_a_missing_file_is_a_problem_naming_where_it_was_looked_for(tmp_path):
    project_path, data = _study(tmp_path)
    data.unlink()
    opened = open_project_data(load_project(project_path), project_path, allow_outside=True)
    assert opened.problems == ((f"{project_path}: $.data_sources[0]: file '../shared/grid.npz' is missing "
                               f"(looked in {data})"),)
    assert not opened.ok and opened.names == () and opened.statuses[0].state == "missing"


def test_a_changed_file_is_loaded_with_a_warning_and_can_be_accepted(tmp_path):
    project_path, data = _study(tmp_path)
    recorded = load_project(project_path).data_sources[0].checksum
    _grid_file(data, scale=-0.5)
    project = load_project(project_path)
    opened = open_project_data(project, project_path, allow_outside=True)
    now = hashlib.sha256(data.read_bytes()).hexdigest()
    assert opened.ok and opened.problems == ()
    assert opened.changed == ((f"{project_path}: $.data_sources[0]: file '../shared/grid.npz' has changed since the "
                              f"project was saved (checksum recorded {recorded[:12]}..., now {now[:12]}...)"),)
    assert opened.sources.sample("k", 0.0, 0.0) == -0.5                  # the new values are used
    accepted = accept_changed_data(project, opened)
    assert accepted.data_sources[0].checksum == now
    save_project(accepted, project_path)
    assert open_project_data(load_project(project_path), project_path, allow_outside=True).changed == ()


def test_unreadable_files_and_quantities_nobody_provides(tmp_path):
    project_path, data = _study(tmp_path)
    data.write_bytes(b"not an archive")
    opened = open_project_data(load_project(project_path), project_path, allow_outside=True)
    (line,) = opened.problems
    assert line.startswith(f"{project_path}: $.data_sources[0]: ") and "grid.npz" in line
    _grid_file(data)
    project = load_project(project_path)
    project = project.with_data_source(DataSourceRef(project.data_sources[0].path,
                                                     project.data_sources[0].checksum, names={"h": "h"}))
    opened = open_project_data(project, project_path, allow_outside=True)
    assert opened.problems == ((f"{project_path}: $.equations[0]: equation 'uses data' uses 'k', which no data "
                               "source provides (the data provide h)"),)


def test_two_files_may_not_provide_the_same_quantity(tmp_path):
    project_path, data = _study(tmp_path)
    shutil.copy(data, tmp_path / "shared" / "copy.npz")
    project = load_project(project_path).with_data_source(
        data_source_ref(tmp_path / "shared" / "copy.npz", project_path, names=["k"]))
    opened = open_project_data(project, project_path, allow_outside=True)
    (line,) = opened.problems
    # the second file is the one that cannot be used; the first stays in use
    assert line.startswith(f"{project_path}: $.data_sources[1]: quantity 'k' is in both ")
    assert [s.state for s in opened.statuses] == ["opened", "unreadable"]
    assert opened.names == ("k",) and opened.statuses[1].quantities == ("k",)
    assert opened.sources.sample("k", 0.0, 0.0) == 0.5


def test_compiling_leaves_out_data_names_an_equation_defines_itself():
    formula = Equation("k - x", "0", "1", definitions={"k": "0.5"})
    compiled = compile_with_data(formula, ("k", "h"))
    assert compiled.data_keys == () and float(compiled.evaluate(1.0, 0.0)["a"]) == -0.5
    with pytest.raises(ExpressionError, match="unknown name 'k'"):
        compile_with_data(USES_DATA, None)


def test_a_project_without_data_opens_to_nothing():
    opened = open_project_data(new_project(Equation("y", "0", "1"), SQUARE), "p.mixtype.json")
    assert opened.sources is None and opened.ok and opened.names == () and opened.statuses == ()


def test_demo_data_sources_round_trip_through_text():
    for name in ("bump_flow_mesh_data", "thermocline_netcdf_profile"):
        path = DEMO_DATA.parent / f"{name}.mixtype.json"
        assert dumps_project(load_project(path)) == path.read_text(encoding="utf-8")
