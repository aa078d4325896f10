"""Running a batch: jobs to an engine, each result written as it comes, then the summary.

``run_batch(jobs, folder, engine)`` is the Python form of ``mixtype batch``: it makes ``folder``, runs every
job on the engine (core.batch.engines), writes each document to NAME.json the moment it arrives (so a batch
stopped half-way keeps what it finished), removes an older NAME.json of a job that failed, and writes
summary.csv and summary.json with one row per job in the order of ``jobs``. A failing job is a row, never the
end of the batch; ``BatchReport.failed`` counts them.
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

from core.batch.engines import DaskCluster, JobFailure, LocalPool
from core.batch.jobs import BatchJob, JobOutcome, run_job
from core.batch.summary import (
    FAILED,
    remove_stale_result,
    result_file_name,
    summary_row,
    write_result,
    write_summary,
)
from core.progress import CancelCheck, ProgressReport

__all__ = ["BatchReport", "run_batch"]


@dataclass(frozen=True, eq=False)
class BatchReport:
    """What a batch did: its folder, the engine (``engine``: "local" or "dask", ``workers``, ``scheduler``:
    the Dask scheduler's address or None), one summary row per job (core.batch.summary), how many failed,
    and the wall-clock seconds of the whole batch."""

    out: str
    engine: dict
    rows: tuple[dict, ...]
    failed: int
    elapsed_s: float

    def document(self) -> dict:
        """The JSON of ``mixtype batch --json`` and of summary.json."""
        return {"out": self.out, **self.engine, "jobs": list(self.rows), "failed": self.failed,
                "elapsed_s": round(self.elapsed_s, 4)}


def _outcome(job: BatchJob, result: object) -> JobOutcome:
    if isinstance(result, JobOutcome):
        return result
    if isinstance(result, JobFailure):
        return JobOutcome(job.name, None, error=result.message)
    return JobOutcome(job.name, None, error=f"unexpected result {type(result).__name__}")


def run_batch(jobs: Sequence[BatchJob], folder: str | os.PathLike, engine: LocalPool | DaskCluster, *,
              cancel: CancelCheck | None = None, progress: ProgressReport | None = None,
              on_outcome: Callable[[BatchJob, dict], None] | None = None,
              function: Callable[[BatchJob], JobOutcome] = run_job) -> BatchReport:
    """Run ``jobs`` on ``engine``, writing results and the summary into ``folder`` (made if missing).

    ``progress`` gets the fraction of jobs done, ``on_outcome`` each job with its summary row as it finishes;
    ``cancel`` is polled as jobs finish (raises core.progress.Cancelled; the results written stay). Raises
    OSError when ``folder`` cannot be made, core.batch.engines.EngineUnavailable when the engine cannot start.
    ``function`` runs one job (tests give one that crashes its worker).
    """
    start = time.perf_counter()
    os.makedirs(folder, exist_ok=True)
    description = dict(engine.description)
    rows: list[dict | None] = [None] * len(jobs)
    options = {}
    if isinstance(engine, DaskCluster):
        options["on_client"] = lambda client: description.update(scheduler=client.scheduler.address)
    for index, result in engine.map(function, jobs, cancel=cancel, **options):
        job = jobs[index]
        outcome = _outcome(job, result)
        written = None
        if outcome.text is not None:
            try:
                written = write_result(folder, job, outcome)
            except OSError as error:
                where = Path(folder) / result_file_name(job)
                outcome = JobOutcome(job.name, None, None,
                                     f"cannot write {where} ({error.strerror or error})", outcome.warnings,
                                     outcome.elapsed_s)
        if written is None:
            try:
                remove_stale_result(folder, job)
            except OSError:
                pass          # the row says the job failed; an older file that cannot be removed stays
        rows[index] = summary_row(job, outcome, written)
        if on_outcome is not None:
            on_outcome(job, rows[index])
        if progress is not None:
            progress(sum(row is not None for row in rows) / len(jobs))
    finished = tuple(row for row in rows if row is not None)
    report = BatchReport(os.fspath(folder), description, finished,
                         sum(row["status"] == FAILED for row in finished), time.perf_counter() - start)
    write_summary(folder, report.document(), report.rows)
    return report
