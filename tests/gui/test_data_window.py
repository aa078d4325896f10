"""Background data in the window: adding files, classifying with them, saving, and files missing or changed."""

from __future__ import annotations

import json
import shutil
import threading
from pathlib import Path

import numpy as np
import pytest

from core.analysis.classify import TypeCode, classify_grid
from core.data.sources import DataSources, file_checksum, load_data
from core.equations.compiled import compile_equation
from core.equations.templates import load_template
from tests.ceilings import HANG_CEILING_MS, HANG_CEILING_S
from tests.gui.conftest import hump_project

DEMO_DATA = Path(__file__).resolve().parents[2] / "resources" / "demo" / "data"


@pytest.fixture
def bump_npz(tmp_path) -> Path:
    """A copy of the demo velocity grid (invented flow over a bump, see resources/demo/make_data.py)."""
    folder = tmp_path / "data"
    folder.mkdir()
    return Path(shutil.copy(DEMO_DATA / "bump_flow.npz", folder / "bump_flow.npz"))


def _data_study_window(make_window, path: Path, **options):
    """A window on the full-potential template with u and v taken from the data file at ``path``."""
    window = make_window(hump_project(nx=41, ny=31), **options)
    window.add_data_file(path)
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.add_template("full_potential")
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    return window


def _core_map(project, path: Path, names=None):
    """The type map core computes for the project's shown equation with the file's quantities."""
    equation, domain = project.shown()
    dataset = load_data(path, variables=equation.variables, names=names)
    data = DataSources([dataset])
    compiled = compile_equation(equation, data_names=data.names)
    return classify_grid(compiled, domain, parameters=equation.parameter_values(), data=data,
                         tolerance=project.view.parabolic_tolerance)


def test_added_data_file_is_listed_and_classifies_like_core(make_window, bump_npz):
    window = _data_study_window(make_window, bump_npz)
    project = window.document.project
    assert len(project.data_sources) == 1
    ref = project.data_sources[0]
    assert ref.path == str(bump_npz) and ref.checksum == file_checksum(bump_npz)
    assert window.document.data_names == ("u", "v")
    # The template's formulas for u and v give way to the data (core.equations.templates.equation_with_data).
    assert "u" not in window.document.equation.definitions and "v" not in window.document.equation.definitions
    table = window.data_panel.table
    assert [table.item(0, c).text() for c in range(5)] == [
        "bump_flow.npz", "NumPy .npz", "u, v", "x −3 to 3, y 0 to 3", "ok"]

    expected = _core_map(project, bump_npz)
    type_map = window.analysis.type_map
    assert np.array_equal(type_map.codes, expected.codes)
    assert type_map.fractions == expected.fractions
    # NaN inside the bump (r < 1) in the file: undefined, drawn grey; supersonic on the crest.
    assert type_map.fractions["undefined"] > 0 and type_map.fractions["hyperbolic"] > 0
    assert window.analysis.pockets.pockets and window.analysis.pockets.pockets[0].touches_boundary is False
    assert "undefined" in window.map_view.legend.text()
    assert not window.data_notice.isVisible()

    window.document.add_pin(0.0, 1.05, "crest")
    window.analysis.flush()
    assert window.analysis.trade_readouts[0]["mach"] > 1.0

    # Undo the template, then the data file: no data left.
    window.document.undo_stack.undo()
    window.document.undo_stack.undo()
    window.document.undo_stack.undo()
    assert window.document.project.data_sources == () and window.document.data is None
    assert table.rowCount() == 0


def test_loading_reports_progress_on_its_own_channel(make_window, bump_npz):
    window = make_window(hump_project(nx=41, ny=31))
    seen = []
    window.runner.progressed.connect(lambda channel, fraction, label: seen.append((channel, fraction, label)))
    window.add_data_file(bump_npz)
    assert ("data", 1.0, "Loading data") in seen


def test_data_study_saves_relative_paths_and_reopens(make_window, bump_npz, tmp_path):
    window = _data_study_window(make_window, bump_npz)
    path = tmp_path / "bump study.mixtype.json"
    assert window.save_to(path)
    stored = json.loads(path.read_text(encoding="utf-8"))["data_sources"]
    assert stored == [{"path": "data/bump_flow.npz", "checksum": file_checksum(bump_npz)}]
    fractions = window.analysis.type_map.fractions

    other = make_window(hump_project(nx=41, ny=31))
    assert other.open_path(path)
    other.analysis.flush()
    assert other.document.project.data_sources[0].path == str(bump_npz)
    assert other.analysis.type_map.fractions == fractions
    assert other.data_panel.table.item(0, 4).text() == "ok"


def test_missing_data_file_gives_a_message_and_an_undefined_map(make_window, bump_npz, tmp_path):
    window = _data_study_window(make_window, bump_npz)
    path = tmp_path / "study.mixtype.json"
    assert window.save_to(path)
    bump_npz.rename(tmp_path / "elsewhere.npz")

    other = make_window(hump_project(nx=41, ny=31))
    assert other.open_path(path)
    other.analysis.flush()
    assert other.data_notice.isVisible()
    assert "bump_flow.npz is missing" in other.data_notice.text() and "u, v" in other.data_notice.text()
    assert other.data_panel.table.item(0, 4).text() == "missing"
    # The equation still compiles (u, v known by name) and every node is undefined: a, b, c need u and v.
    assert other.document.compiled is not None and not other.notice.isVisible()
    assert other.analysis.type_map.fractions["undefined"] == 1.0
    assert np.all(other.analysis.type_map.codes == TypeCode.UNDEFINED)

    # Adding the file again from its new place makes the map whole again.
    other.data_panel.remove_selected()
    other.add_data_file(tmp_path / "elsewhere.npz")
    other.analysis.flush()
    assert not other.data_notice.isVisible()
    assert other.analysis.type_map.fractions == window.analysis.type_map.fractions


def test_changed_data_file_is_flagged_and_can_be_accepted(make_window, bump_npz, tmp_path):
    window = _data_study_window(make_window, bump_npz)
    path = tmp_path / "study.mixtype.json"
    assert window.save_to(path)
    with np.load(bump_npz) as archive:
        arrays = {name: archive[name] for name in archive.files}
    arrays["u"] = arrays["u"] * 1.05           # a faster flow: a larger supersonic pocket
    np.savez(bump_npz, **arrays)

    other = make_window(hump_project(nx=41, ny=31))
    assert other.open_path(path)
    other.analysis.flush()
    assert other.data_panel.table.item(0, 4).text() == "changed since saved"
    assert "changed since the study was saved" in other.data_notice.text()
    expected = _core_map(other.document.project, bump_npz)
    assert other.analysis.type_map.fractions == expected.fractions
    assert expected.fractions["hyperbolic"] > window.analysis.type_map.fractions["hyperbolic"]

    other.data_panel.table.selectRow(0)
    assert other.data_panel.accept_selected()
    assert other.document.project.data_sources[0].checksum == file_checksum(bump_npz)
    assert other.data_panel.table.item(0, 4).text() == "ok" and not other.data_notice.isVisible()
    other.document.undo_stack.undo()
    assert other.data_panel.table.item(0, 4).text() == "changed since saved"


def test_unusable_file_shows_the_one_line_data_error(make_window, tmp_path):
    window = make_window(hump_project(nx=41, ny=31))
    bad = tmp_path / "broken.csv"
    bad.write_text("x,y,speed\n0,0,1\n1,oops,2\n", encoding="utf-8")
    before = window.document.project
    window.add_data_file(bad)
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.document.project is before
    text = window.notice.text()
    assert text.startswith(str(bad)) and "\n" not in text
    assert window.notice.isVisible()


def test_renamed_mesh_quantities_feed_the_template(make_window, tmp_path):
    mesh = Path(shutil.copy(DEMO_DATA / "bump_flow.vtu", tmp_path / "bump_flow.vtu"))
    window = make_window(hump_project(nx=41, ny=31))
    window.add_data_file(mesh)
    panel = window.data_panel
    assert "velocity_x" in panel.table.item(0, 2).text()
    panel.table.selectRow(0)
    panel.ask_quantity_rename = lambda quantities: ("velocity_x", "u")
    assert panel.rename_dialog()
    assert panel.rename_quantity(0, "velocity_y", "v")
    assert "u ← velocity_x" in panel.table.item(0, 2).text()
    assert not panel.rename_quantity(0, "v", "x")                 # a variable's name is refused
    assert "variable" in panel.details.text()
    assert window.add_template("full_potential")
    window.analysis.flush()
    project = window.document.project
    names = dict(project.data_sources[0].names)
    assert names["velocity_x"] == "u" and names["velocity_y"] == "v"
    expected = _core_map(project, mesh, names=names)
    assert window.analysis.type_map.fractions == expected.fractions
    assert expected.fractions["hyperbolic"] > 0
    # Undo the renames: the template's equation no longer finds u and v and says so.
    template = load_template("full_potential")
    assert project.shown()[0].name == template.title


def test_background_loading_can_be_cancelled(make_window, bump_npz, monkeypatch, qtbot):
    import gui.data_loading as loading

    release = threading.Event()
    real_load = loading.load_data

    def slow_load(*args, **kwargs):
        assert release.wait(HANG_CEILING_S)
        return real_load(*args, **kwargs)

    window = make_window(hump_project(nx=41, ny=31), synchronous=False)
    window.add_data_file(bump_npz)                  # reads once (not slowed), then adds and loads from cache
    assert window.runner.wait_idle(HANG_CEILING_S)
    window.analysis.flush()
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert window.document.data_names == ("u", "v")

    monkeypatch.setattr(loading, "load_data", slow_load)
    copy = Path(shutil.copy(bump_npz, bump_npz.with_name("second.npz")))
    window.add_data_file(copy)
    qtbot.waitUntil(lambda: "Reading second.npz" in window.progress_text.text(), timeout=HANG_CEILING_MS)
    assert window.cancel_button.isVisible() and window.progress.isVisible() and window.progress_text.isVisible()
    window.cancel_work()
    release.set()
    assert window.runner.wait_idle(HANG_CEILING_S)
    assert len(window.document.project.data_sources) == 1          # the cancelled file was not added
    assert window.document.data_names == ("u", "v") and not window.document.data_pending


def test_cancelled_loading_of_an_opened_study_leaves_its_data_undefined(make_window, bump_npz, tmp_path,
                                                                        monkeypatch, qtbot):
    import core.project.data_files as loading  # the study's files are opened by core

    window = _data_study_window(make_window, bump_npz)
    path = tmp_path / "study.mixtype.json"
    assert window.save_to(path)
    release = threading.Event()
    real_load = loading.load_data

    def slow_load(*args, **kwargs):
        assert release.wait(HANG_CEILING_S)
        return real_load(*args, **kwargs)

    monkeypatch.setattr(loading, "load_data", slow_load)
    other = make_window(hump_project(nx=41, ny=31), synchronous=False)
    assert other.open_path(path)
    qtbot.waitUntil(lambda: other.runner.is_busy("data"), timeout=HANG_CEILING_MS)
    assert other.document.data_pending
    other.cancel_work()
    release.set()
    assert other.runner.wait_idle(HANG_CEILING_S)
    other.analysis.flush()
    assert other.runner.wait_idle(HANG_CEILING_S)
    assert not other.document.data_pending
    assert "cancelled" in other.notice.text()
    assert other.data_panel.table.item(0, 4).text() == "cannot be used"
    assert "loading was cancelled" in other.data_notice.text()
    assert other.analysis.type_map.fractions["undefined"] == 1.0

    monkeypatch.setattr(loading, "load_data", real_load)
    other.data_panel.reload_button.click()
    assert other.runner.wait_idle(HANG_CEILING_S)
    other.analysis.flush()
    assert other.runner.wait_idle(HANG_CEILING_S)
    assert other.data_panel.table.item(0, 4).text() == "ok" and not other.data_notice.isVisible()
    assert other.analysis.type_map.fractions == window.analysis.type_map.fractions


def test_equation_defining_a_data_name_itself_keeps_its_formula(make_window, bump_npz):
    from gui.panels.template_dialog import TemplateChoice

    window = make_window(hump_project(nx=41, ny=31))
    window.add_data_file(bump_npz)
    assert window.add_template(TemplateChoice("full_potential", use_data=False))
    window.analysis.flush()
    equation = window.document.equation
    assert "u" in equation.definitions and window.document.compiled is not None
    # The template's own formula flow, as core computes it without any data (core.project.data_files rule).
    expected = classify_grid(compile_equation(equation), window.document.domain,
                             parameters=equation.parameter_values())
    assert np.array_equal(window.analysis.type_map.codes, expected.codes)


@pytest.mark.parametrize("name", ["bump_flow_grid_data", "bump_flow_mesh_data", "thermocline_csv_profile",
                                  "thermocline_netcdf_profile"])
def test_shipped_data_demos_open_and_classify_like_core(make_window, name):
    from core.project.data_files import compile_with_data, open_project_data
    from core.project.io import load_project
    from core.project.model import demo_project_path

    path = demo_project_path(name)
    window = make_window(hump_project(nx=41, ny=31))
    assert window.open_path(path)
    window.analysis.flush()
    project = load_project(path)
    opened = open_project_data(project, path)
    assert opened.ok
    equation, domain = project.shown()
    expected = classify_grid(compile_with_data(equation, opened), domain, parameters=equation.parameter_values(),
                             data=opened.sources, tolerance=project.view.parabolic_tolerance)
    assert window.analysis.type_map.fractions == expected.fractions
    assert np.array_equal(window.analysis.type_map.codes, expected.codes)
    assert [window.data_panel.table.item(row, 4).text() for row in range(len(project.data_sources))] == \
        ["ok"] * len(project.data_sources)
    assert not window.data_notice.isVisible()
