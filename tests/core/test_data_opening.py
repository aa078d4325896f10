"""Opening a study's data files through core alone: the cache, cancelling, progress, unusable files read as NaN
and accepting changed files (the window's background loader runs exactly this)."""

from __future__ import annotations

import os
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from core.domain import Domain
from core.equations.equation import Equation
from core.progress import Cancelled
from core.project import data_files
from core.project.data_files import (
    DataCache,
    accept_changed_data,
    data_source_ref,
    open_project_data,
    unprovided_names_problem,
)
from core.project.model import new_project

SQUARE = Domain(-1.0, 1.0, -1.0, 1.0, 11, 11, "square")
USES_K_AND_H = Equation("k - x", "h", "1", name="uses k and h")


def _grid_file(path: Path, name: str, value: float) -> Path:
    x = np.linspace(-1, 1, 5)
    np.savez(path, x=x, y=x, **{name: value * np.ones((5, 5))})
    return path


def _two_file_study(tmp_path: Path):
    """A study reading k from k.npz and h from h.npz, both beside the project file."""
    project_path = tmp_path / "study.mixtype.json"
    k = _grid_file(tmp_path / "k.npz", "k", 0.5)
    h = _grid_file(tmp_path / "h.npz", "h", 0.25)
    project = new_project(USES_K_AND_H, SQUARE)
    for path in (k, h):
        project = project.with_data_source(data_source_ref(path, project_path))
    return project, project_path, k, h


@pytest.fixture
def counted_reads(monkeypatch) -> list[str]:
    """Every file core's opening reads, in order (core.data.sources.load_data, counted)."""
    reads: list[str] = []
    real = data_files.load_data

    def counting(path, **options):
        reads.append(os.path.basename(path))
        return real(path, **options)

    monkeypatch.setattr(data_files, "load_data", counting)
    return reads


def test_a_second_open_reads_only_the_file_that_changed(tmp_path, counted_reads):
    project, project_path, k, _ = _two_file_study(tmp_path)
    cache = DataCache()
    first = open_project_data(project, project_path, cache=cache)
    assert first.ok and first.names == ("k", "h") and counted_reads == ["k.npz", "h.npz"]
    assert (cache.reads, cache.hits, len(cache)) == (2, 0, 2)

    again = open_project_data(project, project_path, cache=cache)
    assert counted_reads == ["k.npz", "h.npz"] and (cache.reads, cache.hits) == (2, 2)
    assert again.statuses[0].dataset is first.statuses[0].dataset
    assert again.sources.sample("h", 0.0, 0.0) == 0.25

    _grid_file(k, "k", -0.5)                       # new bytes and size: the cache no longer matches
    os.utime(k, ns=(1, 1))
    changed = open_project_data(project, project_path, cache=cache)
    assert counted_reads == ["k.npz", "h.npz", "k.npz"] and (cache.reads, cache.hits) == (3, 3)
    assert [s.state for s in changed.statuses] == ["changed", "opened"]
    assert changed.sources.sample("k", 0.0, 0.0) == -0.5

    # the entry of k's old bytes stays until retain keeps only what the last open used
    assert len(cache) == 3
    cache.retain(changed)
    assert len(cache) == 2 and open_project_data(project, project_path, cache=cache).ok
    assert counted_reads == ["k.npz", "h.npz", "k.npz"]


def test_cancel_stops_between_files_and_progress_rises_to_one(tmp_path, counted_reads):
    project, project_path, _, _ = _two_file_study(tmp_path)
    seen: list[float] = []
    open_project_data(project, project_path, progress=seen.append)
    assert seen == [0.5, 1.0]

    polls: list[int] = []

    def cancel_after_first_file() -> bool:
        polls.append(1)
        return len(polls) > 1

    counted_reads.clear()
    with pytest.raises(Cancelled):
        open_project_data(project, project_path, cancel=cancel_after_first_file, progress=seen.append)
    assert counted_reads == ["k.npz"] and seen == [0.5, 1.0, 0.5]


def test_after_a_cancel_only_cached_files_are_used_and_the_rest_read_as_undefined(tmp_path, counted_reads):
    project, project_path, _, _ = _two_file_study(tmp_path)
    cache = DataCache()
    only_k = project.without_data_source("h.npz")
    open_project_data(only_k, project_path, cache=cache)
    counted_reads.clear()
    opened = open_project_data(project, project_path, cache=cache, cached_only=True)
    assert counted_reads == []
    assert [s.state for s in opened.statuses] == ["opened", "unreadable"]
    assert "was not read: loading was cancelled" in opened.statuses[1].reason
    assert opened.statuses[1].message == f"{project_path}: $.data_sources[1]: {opened.statuses[1].reason}"
    assert opened.unavailable == ("h",) and not opened.ok
    source = opened.quantity_source
    assert source.names == ("k", "h")
    assert source.sample("k", 0.0, 0.0) == 0.5
    assert np.all(np.isnan(source.sample("diff(h,x)", np.zeros(3), np.zeros(3))))


def test_a_missing_file_leaves_the_names_its_equations_use_undefined(tmp_path):
    project, project_path, _, h = _two_file_study(tmp_path)
    h.unlink()
    opened = open_project_data(project, project_path)
    assert [s.state for s in opened.statuses] == ["opened", "missing"]
    # the record names no quantities, so h comes from the equation: it uses h and defines it nowhere
    assert opened.statuses[1].quantities == () and opened.unavailable == ("h",)
    assert opened.names == ("k",) and opened.quantity_source.names == ("k", "h")
    assert opened.problems == (f"{project_path}: $.data_sources[1]: file 'h.npz' is missing (looked in {h})",)


def test_accepting_one_changed_file_keeps_the_projects_other_fields(tmp_path):
    project, project_path, k, h = _two_file_study(tmp_path)
    _grid_file(k, "k", 2.0)
    _grid_file(h, "h", 3.0)
    opened = open_project_data(project, project_path)
    assert [s.state for s in opened.statuses] == ["changed", "changed"]
    renamed = project.with_data_source(replace(project.data_sources[1], note="kept"))
    accepted = accept_changed_data(renamed, opened, indices=(1,))
    assert accepted.data_sources[0].checksum == project.data_sources[0].checksum
    assert accepted.data_sources[1].checksum == opened.statuses[1].checksum != project.data_sources[1].checksum
    assert accepted.data_sources[1].note == "kept"
    every = accept_changed_data(project, opened)
    assert [s.checksum for s in every.data_sources] == [s.checksum for s in opened.statuses]
    assert open_project_data(every, project_path).changed == ()


def test_names_no_data_file_provides_are_said_once_for_the_cli_and_the_project():
    assert unprovided_names_problem(USES_K_AND_H, ("k", "h")) == ""
    assert unprovided_names_problem(USES_K_AND_H, ("k",)) == (
        "equation 'uses k and h' uses 'h', which no data source provides (the data provide k)")
    assert unprovided_names_problem(USES_K_AND_H, ()).endswith("uses 'k', 'h', which no data source provides "
                                                                "(the data provide none)")
