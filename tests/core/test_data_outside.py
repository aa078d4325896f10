"""A project file is untrusted: data files outside its folder are refused unless allowed, and no message ever
holds what a file contains (a canary file outside the project must never appear)."""

from __future__ import annotations

import json
import os

import numpy as np
import pytest

from core.data.limits import DATA_CAP_VARIABLE
from core.domain import Domain
from core.equations.equation import Equation
from core.project import data_files
from core.project.data_files import REFUSED, UNREADABLE, open_project_data, outside_data_paths
from core.project.io import save_project
from core.project.model import DataSourceRef, new_project
from tests.core.cli_runner import run

CANARY = "canary 7f3a9e: this line must never be printed"
UNKNOWN_SUM = "0" * 64


def _study(tmp_path, paths: list[str]):
    """tmp/study/p.mixtype.json listing ``paths`` (CSV) plus grid.npz beside it; tmp/outside/secret.txt, the canary."""
    (tmp_path / "study").mkdir()
    (tmp_path / "outside").mkdir()
    secret = tmp_path / "outside" / "secret.txt"
    secret.write_text(CANARY + "\nsecond line, also secret\n")
    x, y = np.linspace(-1, 1, 5), np.linspace(-1, 1, 4)
    np.savez(tmp_path / "study" / "grid.npz", x=x, y=y, k=np.ones((4, 5)))
    os.symlink(secret, tmp_path / "study" / "link.csv")
    sources = [DataSourceRef(path=p, checksum=UNKNOWN_SUM, format="csv") for p in paths]
    sources.append(DataSourceRef(path="grid.npz", checksum=UNKNOWN_SUM))
    project = new_project(Equation("k", "0", "1"), Domain(-1, 1, -1, 1, 9, 9))
    for source in sources:
        project = project.with_data_source(source)
    path = tmp_path / "study" / "p.mixtype.json"
    save_project(project, path)
    return path, secret, project


def test_paths_that_leave_the_folder_are_refused_and_not_read(tmp_path, monkeypatch):
    secret_absolute = str(tmp_path / "outside" / "secret.txt")
    path, _secret, project = _study(tmp_path, ["../outside/secret.txt", secret_absolute, "link.csv"])
    assert outside_data_paths(project, path) == ("../outside/secret.txt", secret_absolute, "link.csv")
    read = []
    real_load = data_files.load_data
    monkeypatch.setattr(data_files, "load_data", lambda location, **kw: read.append(location) or real_load(location, **kw))
    opened = open_project_data(project, path)
    assert [s.state for s in opened.statuses] == [REFUSED, REFUSED, REFUSED, "changed"]
    assert read == [tmp_path / "study" / "grid.npz"]             # nothing outside was even opened
    for status, name in zip(opened.statuses, ("../outside/secret.txt", secret_absolute, "link.csv"), strict=False):
        assert repr(name) in status.message and "outside the project's folder" in status.message
    assert not opened.ok and len(opened.problems) == 3
    allowed = open_project_data(project, path, allow_outside=True)
    assert [s.state for s in allowed.statuses] == [UNREADABLE, UNREADABLE, UNREADABLE, "changed"]
    for status in allowed.statuses[:3]:
        assert "missing variables" in status.message and "1 column(s)" in status.message
    everything = repr(opened) + repr(allowed) + "".join(s.message for s in (*opened.statuses, *allowed.statuses))
    assert "7f3a9e" not in everything and "secret" not in everything.replace("secret.txt", "")


def test_the_command_line_refuses_them_unless_allowed_and_never_prints_the_canary(tmp_path):
    path, _, _ = _study(tmp_path, [str(tmp_path / "outside" / "secret.txt")])
    outputs = []
    for command in ("check", "classify", "probe", "trace"):
        status, out, err = run(command, str(path))
        assert status == 2 and "outside the project's folder" in err and "--allow-outside-data" in err
        outputs.append(out + err)
        status, out, err = run(command, str(path), "--allow-outside-data")
        assert status == 2 and "missing variables" in err, err
        outputs.append(out + err)
    status, out, err = run("check", str(path), "--json", "--allow-outside-data")
    problems = json.loads(out)["data"]["problems"]
    assert status == 2 and len(problems) == 1 and "missing variables" in problems[0]
    outputs.append(out + err)
    assert all(CANARY[:12] not in text and "second line" not in text for text in outputs)


def test_data_inside_the_folder_needs_no_switch(tmp_path):
    path, _, _ = _study(tmp_path, [])
    status, out, err = run("check", str(path))
    assert status == 0 and "1 data file" in out and "changed since the project was saved" in err


def test_the_data_cap_applies_to_a_project_s_files_and_the_option_raises_it(tmp_path, monkeypatch):
    path, _, _ = _study(tmp_path, [])
    monkeypatch.setenv(DATA_CAP_VARIABLE, "1e-7")                 # 107 bytes: less than grid.npz
    status, _out, err = run("check", str(path))
    assert status == 2 and "data cap" in err and "grid.npz" in err and err.count("\n") == 1
    status, _out, err = run("classify", str(path), "--data-cap", "0.001")
    assert status == 0, err
    status, _out, err = run("check", str(path), "--data-cap", "0")
    assert status == 2 and "--data-cap" in err and "GiB" in err
    monkeypatch.setenv(DATA_CAP_VARIABLE, "plenty")
    status, _out, err = run("check", str(path))
    assert status == 2 and DATA_CAP_VARIABLE in err


@pytest.mark.parametrize("length", [300, 3990])
def test_a_path_too_long_for_the_system_is_a_status_not_an_exception(tmp_path, length):
    path, _, project = _study(tmp_path, ["d" * length + ".csv"])
    opened = open_project_data(project, path)
    assert opened.statuses[0].state == UNREADABLE and "File name too long" in opened.statuses[0].message
    assert opened.statuses[1].dataset is not None                # the file beside it still loads
    status, _out, err = run("check", str(path))
    (problem,) = [line for line in err.splitlines() if "warning" not in line]
    assert status == 2 and "cannot be read (File name too long)" in problem and "internal error" not in err
