"""``mixtype batch``: many studies in one start-up, a result document per job and a summary table.

Jobs are project files (one each) and, with ``--project FILE --data-each DATA...``, one per data file read in
place of the project's data file (core.batch.jobs). They run on a pool of local processes (``--workers N``)
or on a Dask cluster (``--dask ADDRESS|local``, core.batch.engines); results and summary land in ``--out DIR``
(core.batch.runner). Exit status 0 when every job worked, 1 when any failed (its row says what and where), 2
for bad options (nothing runs).
"""

from __future__ import annotations

import argparse
import glob
import json
import os
from typing import TextIO

from core.batch.engines import (
    CLUSTER_INSTALL_HINT,
    DaskCluster,
    EngineUnavailable,
    LocalPool,
    available_cores,
)
from core.batch.figures import FRACTION_COLUMNS
from core.batch.jobs import BatchJob, project_jobs, sweep_jobs, with_unique_names
from core.batch.runner import BatchReport, run_batch
from core.batch.summary import FAILED
from core.cli.options import EXIT_OK, EXIT_SOME_FAILED, UsageError

__all__ = ["run"]

_GLOB_CHARACTERS = frozenset("*?[")


def _data_files(patterns: list[str]) -> list[str]:
    """--data-each: patterns expanded (sorted by name), other paths kept as given (a missing one fails as a
    job, naming it)."""
    files: list[str] = []
    for pattern in patterns:
        if os.path.exists(pattern) or not _GLOB_CHARACTERS & set(pattern):
            files.append(pattern)
            continue
        matches = sorted(path for path in glob.glob(pattern) if os.path.isfile(path))
        if not matches:
            raise UsageError(f"--data-each {pattern!r}: no file matches")
        files.extend(matches)
    return files


def _jobs(args: argparse.Namespace) -> list[BatchJob]:
    if args.data_each and not args.project:
        raise UsageError("--data-each needs --project FILE: the project each data file is classified with")
    if args.project and not args.data_each:
        raise UsageError("--project FILE needs --data-each DATA...: the data files to sweep over (give "
                         "project files to classify as they are without --project)")
    if args.in_place_of is not None and not args.project:
        raise UsageError("--in-place-of PATH needs --project FILE and --data-each DATA...")
    options = {"allow_outside_data": args.allow_outside_data, "data_cap": args.data_cap}
    jobs = project_jobs(args.jobs, **options)
    if args.project:
        jobs += sweep_jobs(args.project, _data_files(args.data_each), in_place_of=args.in_place_of, **options)
    if not jobs:
        raise UsageError("no jobs: give project files, or --project FILE --data-each DATA...")
    return with_unique_names(jobs)


def _engine(args: argparse.Namespace, jobs: int) -> LocalPool | DaskCluster:
    workers = args.workers if args.workers is not None else min(available_cores(), jobs)
    if args.dask is None:
        return LocalPool(workers)
    if args.dask != "local" and args.workers is not None:
        raise UsageError("--workers sets the local pool or --dask local; a running scheduler's workers are "
                         "its own")
    try:
        # Here, not at the top: dask is an optional extra, and distributed takes about a second to import
        import distributed  # noqa: F401
    except ImportError:
        raise UsageError(f"--dask needs dask and distributed, which are not installed: {CLUSTER_INSTALL_HINT}"
                         ) from None
    return DaskCluster(args.dask, workers if args.dask == "local" else None)


def _folder(path: str) -> None:
    if os.path.exists(path) and not os.path.isdir(path):
        raise UsageError(f"--out {path}: is a file, not a folder")
    try:
        os.makedirs(path, exist_ok=True)
    except OSError as error:
        raise UsageError(f"--out {path}: cannot make the folder ({error.strerror or error})") from None


def _percent(value) -> str:
    return "" if value is None else f"{100 * value:.3f} %"


def _write_table(report: BatchReport, out: TextIO) -> None:
    width = max([len("job"), *(len(row["job"]) for row in report.rows)])
    labels = [column.removesuffix("_fraction") for column in FRACTION_COLUMNS]
    out.write(f"{'job':<{width}}  status  " + "".join(f"{label:>12}" for label in labels)
              + f"{'pockets':>9}{'seconds':>9}\n")
    for row in report.rows:
        head = f"{row['job']:<{width}}  {row['status']:<6}  "
        if row["status"] == FAILED:
            out.write(f"{head}{row['error']}\n")
            continue
        out.write(head + "".join(f"{_percent(row[column]):>12}" for column in FRACTION_COLUMNS)
                  + f"{row['hyperbolic_pockets']:>9}{row['elapsed_s']:>9.2f}\n")
    where = (f"{report.engine['workers']} local worker process{'es' * (report.engine['workers'] != 1)}"
             if report.engine["engine"] == "local" else f"the Dask cluster at {report.engine['scheduler']}")
    count = len(report.rows)
    out.write(f"{count} job{'s' * (count != 1)} on {where} in {report.elapsed_s:.2f} s: "
              f"{count - report.failed} ok, {report.failed} failed; results, summary.csv and summary.json in "
              f"{report.out}\n")


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Run the batch (options: core.cli.registry); returns the exit status."""
    jobs = _jobs(args)
    engine = _engine(args, len(jobs))
    _folder(args.out)
    total = len(jobs)
    done = 0

    def said(job: BatchJob, row: dict) -> None:
        nonlocal done
        done += 1
        if not args.json:
            err.write(f"mixtype: batch: [{done}/{total}] {job.name}: {row['status']}\n")

    try:
        report = run_batch(jobs, args.out, engine, on_outcome=said)
    except EngineUnavailable as error:
        raise UsageError(str(error)) from None
    if args.json:
        json.dump(report.document(), out)
        out.write("\n")
    else:
        _write_table(report, out)
    return EXIT_SOME_FAILED if report.failed else EXIT_OK
