"""Batch runs (`mixtype batch`), as ratios measured in one run.

Throughput: the same batch of ``jobs`` projects (invented Tricomi-type studies, each on a ``grid`` x ``grid``
map) on a local pool of 1 and of 2 worker processes (core.batch.runner.run_batch, as the command runs it),
timed in pairs with the order alternating; the figure is the median of the pairs' ratios of 1-worker to
2-worker seconds, i.e. the 2-worker throughput over the 1-worker throughput. Both write the same results.
What two processes can give at all on this machine at this moment is the floor it is read against: the same
pools running ``jobs`` equal pieces of plain numpy work (no Mixtype) in 1 and in 2 processes, timed in pairs
with the batches; ``two_worker_efficiency`` is the batch's ratio over the floor's (1 when the batch scales as
well as plain work does: a machine shared with other work can leave two processes no faster than one).

Start-up: ``separate`` small studies as that many `mixtype classify FILE --json` processes one after the
other against one `mixtype batch FILE... --workers 1` process (one start-up for all, jobs one after the
other too), each a fresh interpreter from this checkout (``python -m gui.launcher``, the script's module).
The batch's result files must be byte for byte what the separate processes printed.
"""

from __future__ import annotations

import io
import json
import os
import pathlib
import subprocess
import sys
import tempfile

import numpy as np
from records import figure
from timing import paired_times  # bench/ is on sys.path (script dir or bench/run.py)

from core.batch.engines import LocalPool, available_cores
from core.batch.jobs import project_jobs
from core.batch.runner import run_batch
from core.cli.main import main as mixtype

ROOT = pathlib.Path(__file__).resolve().parents[1]

# Targets. Throughput: on two idle cores a 1-worker batch already classifies each grid on two threads, so a
# second worker gains on the rest of a job (lines, pockets, the document: about half of it here), which bounds
# the ratio near 1.5; 1.3 is asked. On the shared development machine (load 5 to 6 on 2 cores) plain numpy
# work on the same pools gave 0.72 and the batch 0.72 (efficiency 1.0), so the efficiency against plain work
# is the figure a busy machine can still judge: at least 0.8. Start-up: 8 small studies measured 3.9 (busy
# machine) to 5.6; at least 3 is asked.
TARGETS = {"two_over_one_worker_throughput": 1.3, "two_worker_efficiency": 0.8,
           "separate_processes_over_one_batch": 3.0}

SMOKE = {"jobs": 2, "grid": 21, "repeats": 1, "separate": 2}     # every line runs, figures meaningless


def _projects(folder: str, count: int, grid: int) -> list[str]:
    """``count`` project files of y u_xx + b u_xy + (1 + x^2) u_yy = 0 with the sonic line bent a little
    differently in each (invented studies, for timing only)."""
    os.makedirs(folder, exist_ok=True)
    paths = []
    for k in range(count):
        path = os.path.join(folder, f"study_{k}.mixtype.json")
        a = f"y - {0.05 * (k + 1)}*sin(3*x) + 0.1*cos(7*x*y)"
        argv = ["classify", "--a", a, "--b", "0.1*x", "--c", "1 + x**2", "--domain", "-1", "1", "-1", "1",
                "--grid", str(grid), "--save-project", path]
        status = mixtype(argv, out=io.StringIO(), err=io.StringIO())
        if status != 0:
            raise RuntimeError(f"could not write the study {path}")
        paths.append(path)
    return paths


def _results(folder: str) -> dict[str, bytes]:
    return {name: pathlib.Path(folder, name).read_bytes() for name in sorted(os.listdir(folder))
            if not name.startswith("summary.")}


def plain_work(size: int) -> float:
    """A piece of plain numpy work for the floor (module level: the pool's workers import it)."""
    values = np.linspace(0.0, 1.0, size)
    total = 0.0
    for _ in range(8):
        total += float(np.sin(values * 3.0 + total * 1e-9).sum())
    return total


def _floor_pool(workers: int, pieces: int, size: int) -> None:
    failed = [result for _, result in LocalPool(workers).map(plain_work, [size] * pieces)
              if not isinstance(result, float)]
    if failed:
        raise RuntimeError(f"the floor's work failed: {failed[0]}")


def _throughput(folder: str, jobs: int, grid: int, repeats: int) -> dict:
    batch = project_jobs(_projects(folder, jobs, grid))
    one_folder, two_folder = os.path.join(folder, "one"), os.path.join(folder, "two")
    first = run_batch(batch, two_folder, LocalPool(2))
    size = grid * grid                         # a piece of plain work about as long as a job's grid
    one, two, floor_one, floor_two = [], [], [], []
    for _ in range(repeats):
        batch_one, batch_two, one_report, two_report = paired_times(
            lambda: run_batch(batch, one_folder, LocalPool(1)),
            lambda: run_batch(batch, two_folder, LocalPool(2)), repeats=1)
        plain_one, plain_two, _, _ = paired_times(lambda: _floor_pool(1, jobs, size),
                                                  lambda: _floor_pool(2, jobs, size), repeats=1)
        if first.failed or one_report.failed or two_report.failed:
            raise RuntimeError("a job of the throughput batch failed")
        one.append(batch_one[0]), two.append(batch_two[0])
        floor_one.append(plain_one[0]), floor_two.append(plain_two[0])
    one, two, floor_one, floor_two = map(np.asarray, (one, two, floor_one, floor_two))
    ratio = float(np.median(one / two))
    floor = float(np.median(floor_one / floor_two))
    return {
        "jobs": jobs, "grid": f"{grid}x{grid}", "cores_available": available_cores(),
        "one_worker_seconds_median": float(np.median(one)),
        "two_workers_seconds_median": float(np.median(two)),
        "one_worker_jobs_per_second": jobs / float(np.median(one)),
        "two_workers_jobs_per_second": jobs / float(np.median(two)),
        "two_over_one_worker_throughput": ratio,
        "plain_work_two_over_one_process": floor,
        "two_worker_efficiency": ratio / floor,
        "results_agree": float(_results(one_folder) == _results(two_folder)),
    }


def _mixtype_process(*arguments: str) -> bytes:
    """stdout of one fresh ``mixtype ARGUMENTS`` from this checkout (fails loudly, status 0 expected)."""
    completed = subprocess.run([sys.executable, "-m", "gui.launcher", *arguments], cwd=ROOT, check=True,
                               capture_output=True)
    return completed.stdout


def _start_up(folder: str, studies: int, repeats: int) -> dict:
    paths = _projects(folder, studies, 101)
    out = os.path.join(folder, "batch")
    printed: list[bytes] = []

    def separate() -> None:
        printed[:] = [_mixtype_process("classify", path, "--json") for path in paths]

    def one_batch() -> None:
        _mixtype_process("batch", *paths, "--out", out, "--workers", "1", "--json")

    separate_times, batch_times, _, _ = paired_times(separate, one_batch, repeats=repeats)
    written = [pathlib.Path(out, f"study_{k}.json").read_bytes() for k in range(studies)]
    return {
        "studies": studies, "grid": "101x101",
        "separate_processes_seconds_median": float(np.median(separate_times)),
        "one_batch_seconds_median": float(np.median(batch_times)),
        "separate_processes_over_one_batch": float(np.median(separate_times / batch_times)),
        "batch_equals_classify": float(written == printed),
    }


def run(jobs: int = 16, grid: int = 1601, repeats: int = 5, separate: int = 8) -> dict:
    with tempfile.TemporaryDirectory(prefix="mixtype-bench-batch-") as folder:
        throughput = _throughput(os.path.join(folder, "throughput"), jobs, grid, repeats)
        start_up = _start_up(os.path.join(folder, "start_up"), separate, max(1, min(repeats, 3)))
    return {
        "throughput": throughput,
        "start_up": start_up,
        "targets": TARGETS,
        "records": [
            figure("batch throughput, 2 local workers over 1 (ratio of jobs per second)",
                   throughput["two_over_one_worker_throughput"], TARGETS["two_over_one_worker_throughput"],
                   at_most=False),
            figure("batch throughput ratio over plain work's on the same pools (2-worker efficiency)",
                   throughput["two_worker_efficiency"], TARGETS["two_worker_efficiency"], at_most=False),
            figure(f"{separate} separate classify processes over one batch of them (ratio of seconds)",
                   start_up["separate_processes_over_one_batch"],
                   TARGETS["separate_processes_over_one_batch"], at_most=False),
            figure("batch results equal separate classify runs", start_up["batch_equals_classify"], 1.0,
                   at_most=False),
        ],
    }


if __name__ == "__main__":
    print(json.dumps(run(), indent=1))
