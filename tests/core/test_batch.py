"""`mixtype batch`: many studies in one run, on a local pool of processes or a Dask cluster.

Every result must be what `mixtype classify --json` prints for the same study (the same bytes), a Dask run
must give what a local run gives, a failing job is a row of the summary and never the end of the batch.
Studies are tiny (41 x 21 nodes) so that each batch takes about a second.
"""

from __future__ import annotations

import csv
import hashlib
import json
import math
import os
import sys
import types
from pathlib import Path

import numpy as np
import pytest

from core.batch.engines import JobFailure, LocalPool
from core.batch.jobs import BatchJob, job_name, run_job, unique_names
from core.batch.runner import run_batch
from core.batch.summary import SUMMARY_COLUMNS
from core.progress import Cancelled
from core.project.io import load_project, save_project
from core.project.model import DataSourceRef
from tests.core.cli_runner import run, run_json

MACH_NUMBERS = (0.7, 0.8, 0.9)
FLOW_GRID = ("--domain", "-1", "1", "0", "1", "--grid", "41", "21")
ROW_KEYS = set(SUMMARY_COLUMNS)


def _mach_field(m: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """An invented flow for the sweep: free-stream Mach number m, 40 % faster over a bump at the origin
    (21 x 11 nodes on [-1, 1] x [0, 1])."""
    x, y = np.linspace(-1, 1, 21), np.linspace(0, 1, 11)
    xx, yy = np.meshgrid(x, y)
    return x, y, m * (1 + 0.4 * np.exp(-(xx**2 + yy**2) / 0.2))


@pytest.fixture
def studies(tmp_path) -> dict[str, str]:
    """A Tricomi-type project, a project whose coefficient a = 1 - M^2 reads M from base.npz, and a sweep's
    data files runs/mach_*.npz; every path absolute."""
    runs = tmp_path / "runs"
    runs.mkdir()
    for m in MACH_NUMBERS:
        x, y, mach = _mach_field(m)
        np.savez(runs / f"mach_{m}.npz", x=x, y=y, M=mach)
    x, y, _ = _mach_field(0.5)
    np.savez(tmp_path / "base.npz", x=x, y=y, M=np.full((11, 21), 0.5))
    tricomi, flow = str(tmp_path / "tricomi.mixtype.json"), str(tmp_path / "flow.mixtype.json")
    assert run("classify", "--a", "y", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1",
               "--grid", "41", "--save-project", tricomi)[0] == 0
    assert run("classify", "--a", "1 - M**2", "--b", "0", "--c", "1", "--data", str(tmp_path / "base.npz"),
               *FLOW_GRID, "--save-project", flow)[0] == 0
    return {"tricomi": tricomi, "flow": flow, "runs": str(runs), "folder": str(tmp_path)}


def _batch(*argv: str) -> tuple[int, dict, str]:
    status, out, err = run("batch", *argv, "--json")
    return status, json.loads(out) if out else {}, err


def _classify_text(*argv: str) -> str:
    status, out, err = run("classify", *argv, "--json")
    assert status == 0, err
    return out


def _without_timing(rows: list[dict]) -> list[dict]:
    return [{key: value for key, value in row.items() if key != "elapsed_s"} for row in rows]


# -- results equal single classify runs -------------------------------------------------------------------
def test_project_jobs_write_what_classify_prints(studies, tmp_path):
    out = tmp_path / "out"
    status, report, err = _batch(studies["tricomi"], studies["flow"], "--out", str(out), "--workers", "2")
    assert (status, err) == (0, "")
    assert report["out"] == str(out) and report["failed"] == 0
    assert (report["engine"], report["workers"], report["scheduler"]) == ("local", 2, None)
    assert [row["job"] for row in report["jobs"]] == ["tricomi", "flow"]
    for row, project in zip(report["jobs"], (studies["tricomi"], studies["flow"]), strict=True):
        assert set(row) == ROW_KEYS
        expected = _classify_text(project)
        written = (out / row["result"]).read_text()
        assert written == expected                                  # the same bytes as a single run
        document = json.loads(written)
        assert document == json.loads(expected)
        assert (row["status"], row["error"], row["project"], row["data"]) == ("ok", None, project, None)
        fractions = document["fractions"]
        assert [row[f"{label}_fraction"] for label in fractions] == list(fractions.values())
        assert row["hyperbolic_pockets"] == len(document["pockets"])
        assert row["hyperbolic_area"] == math.fsum(p["area"] for p in document["pockets"])
        assert row["elapsed_s"] > 0
    # y u_xx + u_yy = 0 is hyperbolic below y = 0 and elliptic above (the Tricomi equation; common practice,
    # no source): of 41 rows of nodes over [-1, 1], 20 lie below y = 0 and one on it
    tricomi = report["jobs"][0]
    assert tricomi["hyperbolic_fraction"] == pytest.approx(20 / 41, abs=1e-15)
    assert tricomi["parabolic_fraction"] == pytest.approx(1 / 41, abs=1e-15)
    assert tricomi["hyperbolic_pockets"] == 1 and tricomi["hyperbolic_area"] == pytest.approx(2.0 * 0.975)
    flow = report["jobs"][1]                      # M = 0.5 everywhere: elliptic throughout
    assert flow["elliptic_fraction"] == 1.0
    assert (flow["hyperbolic_pockets"], flow["largest_pocket_area"]) == (0, None)
    summary = json.loads((out / "summary.json").read_text())
    assert summary == report
    with open(out / "summary.csv", newline="", encoding="utf-8") as handle:
        reader = csv.DictReader(handle)
        assert tuple(reader.fieldnames) == SUMMARY_COLUMNS
        rows = list(reader)
    assert [row["job"] for row in rows] == ["tricomi", "flow"]
    assert float(rows[0]["hyperbolic_fraction"]) == tricomi["hyperbolic_fraction"]
    assert rows[1]["largest_pocket_area"] == "" and rows[1]["data"] == ""


def test_a_sweep_replaces_the_data_file_and_a_missing_one_is_an_error_row(studies, tmp_path):
    out = tmp_path / "sweep"
    runs = studies["runs"]
    absent = os.path.join(runs, "mach_2.0.npz")
    status, report, err = _batch("--project", studies["flow"], "--data-each",
                                 os.path.join(runs, "mach_*.npz"), absent, "--out", str(out))
    assert status == 1 and err == ""
    rows = report["jobs"]
    assert [row["job"] for row in rows] == [f"flow__mach_{m}" for m in (*MACH_NUMBERS, 2.0)]
    assert [row["status"] for row in rows] == ["ok", "ok", "ok", "failed"] and report["failed"] == 1
    failed = rows[-1]
    assert failed["error"] == f"{absent}: no such file"             # what and where
    assert failed["result"] is None and failed["hyperbolic_fraction"] is None
    assert not (out / "flow__mach_2.0.json").exists()
    # the reference: the same project saved with the sweep file as its data file, classified on its own
    checksum = hashlib.sha256(Path(studies["flow"]).read_bytes()).hexdigest()  # the SHA-256 the field states
    for m, row in zip(MACH_NUMBERS, rows, strict=False):
        data = os.path.join(runs, f"mach_{m}.npz")
        reference = os.path.join(studies["folder"], f"reference_{m}.mixtype.json")
        assert run("classify", "--a", "1 - M**2", "--b", "0", "--c", "1", "--data", data, *FLOW_GRID,
                   "--save-project", reference)[0] == 0
        assert row["data"] == data and row["project"] == studies["flow"]
        document = json.loads((out / row["result"]).read_text())
        expected = run_json("classify", reference)
        assert document["source"] == {**expected["source"], "file": studies["flow"]}
        assert document["project_checksum"] == checksum
        for field in ("source", "project_checksum"):
            del document[field], expected[field]
        assert document == expected
        assert document["data"][0]["path"] == data
    # the largest Mach number of the flow is 1.4 m at the origin, a node of the data: at m = 0.7 the flow is
    # subsonic everywhere (a = 1 - M^2 > 0), faster free streams give larger supersonic pockets
    hyperbolic = [row["hyperbolic_fraction"] for row in rows[:3]]
    assert hyperbolic[0] == 0.0 and 0.0 < hyperbolic[1] < hyperbolic[2]
    assert [row["hyperbolic_pockets"] for row in rows[:3]] == [0, 1, 1]


def test_a_failed_job_removes_the_result_an_earlier_batch_left(studies, tmp_path):
    out = tmp_path / "out"
    data = os.path.join(studies["runs"], "mach_0.9.npz")
    arguments = ("--project", studies["flow"], "--data-each", data, "--out", str(out))
    assert _batch(*arguments)[0] == 0 and (out / "flow__mach_0.9.json").is_file()
    os.remove(data)
    status, report, _ = _batch(*arguments)
    assert status == 1 and report["jobs"][0]["error"] == f"{data}: no such file"
    assert not (out / "flow__mach_0.9.json").exists()
    assert sorted(os.listdir(out)) == ["summary.csv", "summary.json"]       # no backups, no leftovers


def test_a_changed_data_file_warns_in_its_row(studies, tmp_path):
    x, y, _ = _mach_field(0.5)
    np.savez(os.path.join(studies["folder"], "base.npz"), x=x, y=y, M=np.full((11, 21), 0.6))
    status, report, _ = _batch(studies["flow"], "--out", str(tmp_path / "out"))
    assert status == 0
    (warning,) = report["jobs"][0]["warnings"]
    assert "data_sources[0]" in warning and "has changed since the project was saved" in warning


def test_names_are_unique_and_safe_as_file_names(studies, tmp_path):
    assert unique_names(["a", "A", "summary", "a", "b"]) == ["a", "A-2", "summary-2", "a-3", "b"]
    assert job_name("studies/my study.mixtype.json") == "my_study"
    assert job_name("../.hidden.mixtype.json") == "hidden"
    assert job_name("p.mixtype.json", "runs/mach 0.8.nc") == "p__mach_0.8"
    other = tmp_path / "other"
    other.mkdir()
    copy = str(other / "tricomi.mixtype.json")
    assert run("classify", "--a", "x", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1",
               "--grid", "21", "--save-project", copy)[0] == 0
    out = tmp_path / "out"
    status, report, _ = _batch(studies["tricomi"], copy, "--out", str(out), "--workers", "1")
    assert status == 0 and [row["result"] for row in report["jobs"]] == ["tricomi.json", "tricomi-2.json"]
    assert (out / "tricomi-2.json").read_text() == _classify_text(copy)


# -- Dask -------------------------------------------------------------------------------------------------
def test_a_dask_cluster_gives_what_the_local_pool_gives(studies, tmp_path):
    # Here, not at the top: distributed takes 0.3 s to import (python -X importtime) and sets up its loggers,
    # which no other test of the process needs. The test extra holds the cluster extra: without dask this
    # test fails, it never skips.
    import distributed

    jobs = (studies["tricomi"], "--project", studies["flow"], "--data-each",
            os.path.join(studies["runs"], "*.npz"))
    local_status, local, _ = _batch(*jobs, "--out", str(tmp_path / "local"), "--workers", "2")
    assert local_status == 0 and len(local["jobs"]) == 4
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False, protocol="tcp",
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        address = cluster.scheduler_address
        assert address.startswith("tcp://127.0.0.1:")
        status, on_dask, err = _batch(*jobs, "--out", str(tmp_path / "dask"), "--dask", address)
    assert (status, err) == (0, "")
    assert (on_dask["engine"], on_dask["scheduler"]) == ("dask", address)
    assert _without_timing(on_dask["jobs"]) == _without_timing(local["jobs"])
    for row in local["jobs"]:
        written = (tmp_path / "dask" / row["result"]).read_bytes()
        assert written == (tmp_path / "local" / row["result"]).read_bytes()


def test_dask_local_starts_a_loopback_cluster(studies, tmp_path):
    status, report, err = _batch(studies["tricomi"], studies["flow"], "--out", str(tmp_path / "out"),
                                 "--dask", "local", "--workers", "1")
    assert (status, err) == (0, "")
    assert report["engine"] == "dask" and report["workers"] == 1
    assert report["scheduler"].startswith("tcp://127.0.0.1:")
    for row, project in zip(report["jobs"], (studies["tricomi"], studies["flow"]), strict=True):
        assert (tmp_path / "out" / row["result"]).read_text() == _classify_text(project)


# -- a crashing worker ------------------------------------------------------------------------------------
def crash_on_purpose(job: BatchJob):
    """run_job, except that the job named "crash" kills its worker process (as the system's out-of-memory
    killer would)."""
    if job.name == "crash":
        os._exit(3)
    return run_job(job)


def test_a_job_that_kills_its_worker_is_an_error_row(studies, tmp_path):
    jobs = [BatchJob("tricomi", studies["tricomi"]), BatchJob("crash", studies["flow"]),
            BatchJob("tricomi-2", studies["tricomi"])]
    report = run_batch(jobs, tmp_path / "out", LocalPool(2), function=crash_on_purpose)
    assert [row["status"] for row in report.rows] == ["ok", "failed", "ok"] and report.failed == 1
    assert "worker process stopped before answering" in report.rows[1]["error"]
    expected = _classify_text(studies["tricomi"])
    assert (tmp_path / "out" / "tricomi.json").read_text() == expected
    assert (tmp_path / "out" / "tricomi-2.json").read_text() == expected


def _double(x: int) -> int:
    return 2 * x


def test_items_no_worker_can_start_fail_instead_of_running_again_forever(monkeypatch):
    # a function pickled as part of a module only this process has: a worker cannot unpickle it and dies
    # before it starts the item
    only_here = types.ModuleType("mixtype_module_only_in_this_process")
    only_here._double = _double
    monkeypatch.setitem(sys.modules, only_here.__name__, only_here)
    monkeypatch.setattr(_double, "__module__", only_here.__name__)
    results = dict(LocalPool(2).map(_double, [1, 2, 3]))
    assert sorted(results) == [0, 1, 2]
    assert {result.message for result in results.values()} == {"no worker process could start it"}


def test_the_local_pool_yields_every_item_once():
    results = dict(LocalPool(2).map(math.factorial, [5, 0, 10, 3]))
    assert results == {0: 120, 1: 1, 2: 3628800, 3: 6}
    (failure,) = dict(LocalPool(1).map(math.sqrt, [-1.0])).values()
    assert isinstance(failure, JobFailure) and "ValueError" in failure.message


# -- usage errors -----------------------------------------------------------------------------------------
@pytest.mark.parametrize("argv, message", [
    ((), "no jobs: give project files, or --project FILE --data-each DATA..."),
    (("--data-each", "a.npz"), "--data-each needs --project FILE"),
    (("--project", "{flow}"), "--project FILE needs --data-each DATA..."),
    (("{tricomi}", "--in-place-of", "base.npz"), "--in-place-of PATH needs --project FILE"),
    (("--project", "{flow}", "--data-each", "a.npz", "--in-place-of", "other.npz"),
     "--in-place-of 'other.npz': {flow} lists no such data file (it lists 'base.npz')"),
    (("--project", "{flow}", "--data-each", "{folder}/nothing_*.npz"),
     "--data-each '{folder}/nothing_*.npz': no file matches"),
    (("--project", "{folder}/absent.mixtype.json", "--data-each", "a.npz"), "{folder}/absent.mixtype.json: "),
    (("{tricomi}", "--workers", "0"), "argument --workers: expected a whole number from 1 to 1024, got 0"),
    (("{tricomi}", "--dask", "tcp://127.0.0.1:1", "--workers", "2"),
     "--workers sets the local pool or --dask local; a running scheduler's workers are its own"),
])
def test_usage_errors_exit_2_with_one_line_and_run_nothing(studies, tmp_path, argv, message):
    out = tmp_path / "never"
    argv = [part.format(**studies) for part in argv]
    status, stdout, err = run("batch", *argv, "--out", str(out), "--json")
    assert (status, stdout) == (2, "")
    assert err.startswith("mixtype: " + message.format(**studies)) and err.count("\n") == 1
    assert not out.exists()


def test_out_must_be_given_and_be_a_folder(studies):
    status, _, err = run("batch", studies["tricomi"])
    assert status == 2 and err == "mixtype: the following arguments are required: --out\n"
    status, _, err = run("batch", studies["tricomi"], "--out", studies["tricomi"])
    assert status == 2 and err == f"mixtype: --out {studies['tricomi']}: is a file, not a folder\n"


def test_a_project_with_several_data_files_sweeps_the_one_named(studies, tmp_path):
    folder = studies["folder"]
    x, y, _ = _mach_field(0.5)
    np.savez(os.path.join(folder, "extra.npz"), x=x, y=y, K=np.ones((11, 21)))
    project = load_project(studies["flow"])
    extra = DataSourceRef(path="extra.npz",
                          checksum=hashlib.sha256(Path(folder, "extra.npz").read_bytes()).hexdigest())
    two = os.path.join(folder, "two.mixtype.json")
    save_project(project.with_data_source(extra), two)
    data = os.path.join(studies["runs"], "mach_0.9.npz")
    status, _, err = run("batch", "--project", two, "--data-each", data, "--out", str(tmp_path / "o"))
    assert status == 2
    assert err == (f"mixtype: {two} lists 2 data files ('base.npz', 'extra.npz'): say which one each "
                   "sweep file stands in for with --in-place-of PATH\n")
    status, report, _ = _batch("--project", two, "--data-each", data, "--in-place-of", "base.npz",
                               "--out", str(tmp_path / "o"))
    assert status == 0
    document = json.loads((tmp_path / "o" / "two__mach_0.9.json").read_text())
    assert [entry["path"] for entry in document["data"]] == [os.path.join(folder, "extra.npz"), data]
    _, alone, _ = _batch("--project", studies["flow"], "--data-each", data, "--out", str(tmp_path / "alone"))
    for key in ("hyperbolic_fraction", "hyperbolic_pockets", "hyperbolic_area"):
        assert report["jobs"][0][key] == alone["jobs"][0][key] and alone["jobs"][0]["hyperbolic_pockets"] == 1


def test_the_json_fields_stay(studies, tmp_path):
    # a public interface: fields may be added, never renamed or dropped
    status, report, _ = _batch(studies["tricomi"], "--out", str(tmp_path / "o"))
    assert status == 0
    assert {"out", "engine", "workers", "scheduler", "jobs", "failed", "elapsed_s"} <= set(report)
    assert {"job", "project", "data", "status", "error", "elliptic_fraction", "parabolic_fraction",
            "hyperbolic_fraction", "undefined_fraction", "hyperbolic_pockets", "hyperbolic_area",
            "largest_pocket_area", "parabolic_area", "peak_quantity", "peak_value", "warnings", "elapsed_s",
            "result"} <= set(report["jobs"][0])


def test_progress_and_cancel(studies, tmp_path):
    jobs = [BatchJob(f"job{k}", studies["tricomi"]) for k in range(3)]
    fractions: list[float] = []
    run_batch(jobs, tmp_path / "all", LocalPool(1), progress=fractions.append)
    assert fractions == pytest.approx([1 / 3, 2 / 3, 1.0])
    finished: list[str] = []
    with pytest.raises(Cancelled):
        run_batch(jobs, tmp_path / "cancelled", LocalPool(1), cancel=lambda: bool(finished),
                  on_outcome=lambda job, row: finished.append(job.name))
    assert len(finished) == 1                    # polled after each job
    assert sorted(os.listdir(tmp_path / "cancelled")) == sorted(f"{name}.json" for name in finished)


def test_dask_without_the_cluster_extra_names_the_install(studies, tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)          # import distributed raises ImportError
    status, out, err = run("batch", studies["tricomi"], "--out", str(tmp_path / "o"), "--dask", "local")
    assert (status, out) == (2, "")
    assert err == ("mixtype: --dask needs dask and distributed, which are not installed: "
                   "pip install 'mixtype[cluster]'\n")
    assert not (tmp_path / "o").exists()


def test_grid_threads_change_speed_only_not_the_map():
    # a batch's workers share the cores (core.batch.engines gives each cores // workers grid threads)
    from core.analysis import classify as classify_module
    from core.analysis.classify import classify_grid, set_grid_threads
    from core.domain import Domain
    from core.equations.compiled import compile_equation
    from core.equations.equation import Equation

    compiled = compile_equation(Equation("1", "0", "x**2 + y**2 - 0.5"))
    domain = Domain(-1.0, 1.0, -1.0, 1.0, 801, 801)
    before = classify_module._WORKERS
    try:
        set_grid_threads(1)
        one = classify_grid(compiled, domain)
        assert classify_module._grid_pool()._max_workers == 1
        set_grid_threads(2)
        two = classify_grid(compiled, domain)
        assert classify_module._grid_pool()._max_workers == 2
    finally:
        set_grid_threads(before)
    assert (one.codes == two.codes).all() and one.fractions == two.fractions
    with pytest.raises(ValueError, match="positive integer"):
        set_grid_threads(0)
