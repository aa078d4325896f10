"""Files through the window: save/open round trip, recent files, unsaved prompt, autosave, exports, render."""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

from core.analysis.classify import TypeCode
from core.analysis.probe import probe_point
from core.equations.compiled import compile_equation
from core.project.model import Seed
from tests.gui.conftest import hump_project, tricomi_project


def test_save_open_round_trip_and_recent_files(make_window, tmp_path):
    window = make_window(hump_project())
    window.document.set_parameter_value("M_inf", 0.9)
    window.document.add_pin(0.1, 0.2, "crest")
    window.document.add_seed(Seed(start=(-0.2, 0.0), end=(0.2, 0.0), curves=3, families=(2,)))
    window.document.set_layer("type_lines", False)
    assert window.isWindowModified()
    path = tmp_path / "bump.mixtype.json"
    assert window.save_to(path)
    assert not window.document.is_dirty and not window.isWindowModified()
    assert "bump.mixtype.json" in window.windowTitle()
    saved = window.document.project

    other = make_window(tricomi_project())
    assert other.open_path(path)
    project = other.document.project
    assert project.shown()[0] == saved.shown()[0]
    assert project.shown()[1] == saved.shown()[1]
    assert project.pins == saved.pins and project.seeds == saved.seeds
    assert project.view.show_type_change_lines is False
    assert project.view.parabolic_tolerance == saved.view.parabolic_tolerance
    assert other.preferences.recent_files()[0] == str(path.resolve())
    assert other.recent_menu.actions()[0].text() == "bump.mixtype.json"
    other.analysis.flush()
    assert other.analysis.type_map.parameters["M_inf"] == 0.9


def test_open_broken_file_keeps_study_and_says_why(make_window, tmp_path):
    window = make_window(hump_project())
    before = window.document.project
    path = tmp_path / "broken.mixtype.json"
    path.write_text("{ not json", encoding="utf-8")
    assert not window.open_path(path)
    assert window.document.project is before
    assert "Could not open the study" in window.notice.text()


def test_unsaved_changes_prompt(make_window):
    window = make_window(hump_project())
    window.document.set_coefficient("c", "2")
    window.ask_unsaved = lambda: "cancel"
    assert not window.new_study()
    assert window.document.equation.c == "2"
    window.ask_unsaved = lambda: "discard"
    assert window.new_study()
    assert window.document.equation.c == "1" and not window.document.is_dirty


def test_autosave_and_recovery_after_a_crash(make_window, settings_folder):
    window = make_window(hump_project())
    assert not window.autosave()                       # nothing unsaved: nothing written
    window.document.set_coefficient("b", "0.2")
    assert window.autosave()
    recovery = window.preferences.recovery_path
    assert recovery.exists() and recovery.parent == settings_folder
    # A new session finds the file, asks, and restores the edited study as unsaved.
    restored = make_window(tricomi_project())
    restored.ask_restore = lambda path: True
    assert restored.offer_recovery()
    assert restored.document.equation.b == "0.2"
    assert restored.document.is_dirty and restored.document.path is None
    # Declining removes the file.
    declined = make_window(tricomi_project())
    declined.ask_restore = lambda path: False
    assert not declined.offer_recovery()
    assert not recovery.exists()


def test_exports_hold_the_expected_data(make_window, tmp_path):
    window = make_window(tricomi_project())
    window.document.add_pin(0.5, -1.0, "low")
    window.document.add_pin(0.5, 1.0, "high")
    window.document.add_seed(Seed(start=(0.0, -1.0)))
    window.analysis.flush()

    for suffix, magic in ((".png", b"\x89PNG"), (".svg", b"<?xml"), (".pdf", b"%PDF")):
        written = window.export_picture(tmp_path / f"map{suffix}")
        assert written.read_bytes()[:4] == magic[:4]
    svg = (tmp_path / "map.svg").read_text(encoding="utf-8")
    assert "<svg" in svg and "elliptic" in svg and "Tricomi" in svg

    # Type-change line of y u_xx + u_yy: the x axis, y = 0 (closed form).
    assert window.export_table("lines", tmp_path / "lines.csv") > 0
    with open(tmp_path / "lines.csv", newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert rows and all(abs(float(r["y"])) < 1e-6 for r in rows)
    assert {r["left_type"] for r in rows} | {r["right_type"] for r in rows} == {"elliptic", "hyperbolic"}

    count = window.export_table("characteristics", tmp_path / "characteristics.csv")
    curves = [c for t in window.analysis.traced for c in t.curves]
    assert count == sum(len(c.points) for c in curves)

    window.export_table("pins", tmp_path / "pins.csv")
    with open(tmp_path / "pins.csv", newline="", encoding="utf-8") as handle:
        pins = list(csv.DictReader(handle))
    compiled = compile_equation(window.document.equation)
    assert [p["label"] for p in pins] == ["low", "high"]
    for row in pins:
        reference = probe_point(compiled, float(row["x"]), float(row["y"]))
        assert float(row["discriminant"]) == pytest.approx(reference.discriminant)
        assert row["type"] == reference.type.label

    window.export_json(tmp_path / "all.json")
    data = json.loads((tmp_path / "all.json").read_text(encoding="utf-8"))
    assert data["equation"]["a"] == "y"
    assert data["fractions"] == pytest.approx(dict(window.analysis.type_map.fractions))
    codes = np.array(data["type_map"]["codes"])
    assert codes.shape == (81, 81) and codes[0, 0] == TypeCode.HYPERBOLIC
    assert sum(len(seed["curves"]) for seed in data["seeds"]) == 2 and len(data["pins"]) == 2


def test_headless_render_of_a_project_file(make_window, tmp_path):
    from PySide6.QtGui import QImage

    from gui.render import render_project

    window = make_window(tricomi_project())
    path = tmp_path / "tricomi.mixtype.json"
    assert window.save_to(path)
    render_project(path, tmp_path / "map.png", size=(800, 600))
    render_project(path, tmp_path / "window.png", whole_window=True, size=(1200, 800))
    picture = QImage(str(tmp_path / "map.png"))
    assert picture.width() >= 700 and picture.height() >= 500
    assert QImage(str(tmp_path / "window.png")).width() == 1200


def test_hidden_seed_segments_are_saved_and_reopened_hidden(make_window, tmp_path):
    window = make_window(tricomi_project(21))
    window.document.add_seed(Seed(start=(-1.0, -1.0), end=(1.0, -1.0), curves=3))
    assert window.map_view.seed_lines.isVisible()
    window.layers_panel.boxes["seeds"].setChecked(False)
    assert not window.map_view.seed_lines.isVisible() and window.map_view.family_curves[1].isVisible()
    path = tmp_path / "segments.mixtype.json"
    assert window.save_to(path)
    assert json.loads(path.read_text(encoding="utf-8"))["view"]["layers"]["seed_segments"] is False

    other = make_window(hump_project(nx=41, ny=31))
    assert other.open_path(path)
    assert other.document.layer_visible("seeds") is False and not other.layers_panel.boxes["seeds"].isChecked()
    assert not other.map_view.seed_lines.isVisible()
    other.document.set_layer("seeds", True)
    assert other.map_view.seed_lines.isVisible()
    assert other.save_to(path)
    assert "seed_segments" not in json.loads(path.read_text(encoding="utf-8"))["view"]["layers"]


def test_characteristic_family_switches_round_trip_separately(make_window, tmp_path):
    window = make_window(tricomi_project(21))
    window.document.add_seed(Seed(start=(0.0, -1.0)))
    window.layers_panel.boxes["family_1"].setChecked(False)
    assert not window.map_view.family_curves[1].isVisible() and window.map_view.family_curves[2].isVisible()
    path = tmp_path / "families.mixtype.json"
    assert window.save_to(path)
    layers = json.loads(path.read_text(encoding="utf-8"))["view"]["layers"]
    assert layers["characteristics_family_1"] is False and layers["characteristics_family_2"] is True

    other = make_window(hump_project(nx=41, ny=31))
    assert other.open_path(path)
    assert other.document.layer_visible("family_1") is False and other.document.layer_visible("family_2") is True
    assert not other.layers_panel.boxes["family_1"].isChecked() and other.layers_panel.boxes["family_2"].isChecked()
    assert not other.map_view.family_curves[1].isVisible() and other.map_view.family_curves[2].isVisible()
    other.document.set_layer("family_1", True)
    other.document.set_layer("family_2", False)
    assert other.save_to(path)
    third = make_window(hump_project(nx=41, ny=31))
    assert third.open_path(path)
    assert third.document.layer_visible("family_1") is True and third.document.layer_visible("family_2") is False
