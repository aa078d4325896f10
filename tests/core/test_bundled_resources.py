"""Bundled files: found through core.bundled, every one shipped in the wheel, missing ones reported."""

from __future__ import annotations

import fnmatch
import json
import tomllib
from pathlib import Path

import pytest

import core
from core.bundled import (
    BUNDLED_PACKAGE,
    bundled_path,
    bundled_root,
    find_bundled_root,
    source_resources_folder,
)
from core.equations import templates
from core.equations.templates import TemplateError, list_templates, load_template
from core.project.io import load_project
from core.project.model import demo_project_names, demo_project_path
from core.project.schema import CURRENT_FORMAT_VERSION, schema_path, schema_text
from tests.core.cli_runner import run

ROOT = Path(__file__).resolve().parents[2]
RESOURCES = ROOT / "resources"


def test_a_checkout_reads_its_own_resources_folder():
    assert source_resources_folder() == RESOURCES
    assert bundled_root() == RESOURCES
    assert bundled_path("demo", "data") == RESOURCES / "demo" / "data"
    assert templates.TEMPLATE_DIRECTORY == RESOURCES / "templates"


def test_templates_demos_and_schemas_are_the_folder_contents():
    assert list_templates() == tuple(sorted(p.stem for p in (RESOURCES / "templates").glob("*.json")))
    assert {"full_potential", "small_disturbance", "shallow_water", "internal_waves", "tricomi",
            "keldysh"} <= set(list_templates())
    assert load_template("full_potential").name == "full_potential"
    assert demo_project_names() == tuple(sorted(p.name.removesuffix(".mixtype.json")
                                                for p in (RESOURCES / "demo").glob("*.mixtype.json")))
    assert demo_project_path("tricomi") == RESOURCES / "demo" / "tricomi.mixtype.json"
    for version in range(1, CURRENT_FORMAT_VERSION + 1):
        assert schema_path(version) == RESOURCES / "schema" / f"mixtype-project-v{version}.schema.json"
        schema = json.loads(schema_path(version).read_text(encoding="utf-8"))
        assert schema["$schema"].endswith("2020-12/schema")
    assert schema_path().read_text(encoding="utf-8") == schema_text()


def test_every_demo_data_file_a_demo_uses_is_bundled():
    used = {source.path for name in demo_project_names()
            for source in load_project(demo_project_path(name)).data_sources}
    assert used == {"data/bump_flow.npz", "data/bump_flow.vtu", "data/stratification_profile.csv",
                    "data/stratification_profile.nc"}
    assert all((bundled_path("demo") / path).is_file() for path in used)


def _pyproject() -> dict:
    return tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))


def test_the_wheel_configuration_ships_every_resource_file():
    """Each file under resources/ falls in a listed package and matches one of its package-data globs."""
    setuptools = _pyproject()["tool"]["setuptools"]
    assert setuptools["package-dir"] == {BUNDLED_PACKAGE: "resources"}
    packages = set(setuptools["packages"])
    package_data = setuptools["package-data"]
    files = [p for p in RESOURCES.rglob("*") if p.is_file() and "__pycache__" not in p.parts]
    assert len(files) >= 21  # 6 templates, 2 schemas, 7 demos, make_data.py, 4 data files, __init__.py
    for path in files:
        relative = path.relative_to(RESOURCES)
        package = ".".join((BUNDLED_PACKAGE, *relative.parent.parts))
        assert package in packages, f"{relative}: package {package} is not in pyproject's packages"
        if path.name == "__init__.py":
            continue
        globs = package_data.get(package, [])
        assert any(fnmatch.fnmatch(path.name, glob) for glob in globs), f"{relative} is not in the wheel"


def test_the_version_has_one_source():
    project = _pyproject()
    assert "version" not in project["project"] and project["project"]["dynamic"] == ["version"]
    assert project["tool"]["setuptools"]["dynamic"]["version"] == {"attr": "core.__version__"}
    assert core.__version__.count(".") == 2


def test_an_installed_core_finds_the_installed_package(tmp_path, monkeypatch):
    """Laid out as a wheel installs it: core and the resources package side by side, no pyproject.toml."""
    site = tmp_path / "site"
    (site / "core").mkdir(parents=True)
    package = site / "mixtype_resources_as_installed"
    (package / "templates").mkdir(parents=True)
    (package / "__init__.py").write_text('"""bundled files"""\n', encoding="utf-8")
    monkeypatch.syspath_prepend(str(site))
    assert source_resources_folder(site / "core") is None
    assert find_bundled_root(site / "core", package="mixtype_resources_as_installed") == package


def test_a_missing_package_points_where_it_should_be(tmp_path):
    assert find_bundled_root(tmp_path / "core", package="mixtype_no_such_package") \
        == tmp_path / "mixtype_no_such_package"


def test_missing_templates_are_an_error_not_an_empty_list(tmp_path, monkeypatch):
    monkeypatch.setattr(templates, "TEMPLATE_DIRECTORY", tmp_path / "gone")
    with pytest.raises(TemplateError, match=r"bundled templates are missing .*gone\); reinstall Mixtype"):
        list_templates()
    status, out, err = run("templates")
    assert (status, out) == (2, "")
    assert err.count("\n") == 1 and err.startswith("mixtype: Mixtype's bundled templates are missing")
    assert list_templates(tmp_path) == ()  # an explicit empty folder simply holds none


def test_the_wheel_configuration_ships_every_code_package():
    """Every folder of core/ and gui/ holding Python modules is a package the wheel lists."""
    packages = set(_pyproject()["tool"]["setuptools"]["packages"])
    code = {".".join(p.parent.relative_to(ROOT).parts) for folder in ("core", "gui")
            for p in (ROOT / folder).rglob("*.py") if "__pycache__" not in p.parts}
    assert {"core.analysis", "gui.panels"} <= code
    assert code - packages == set()
