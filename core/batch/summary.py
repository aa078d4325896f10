"""The summary of a batch: one row per job, and the files a batch writes (results, summary.csv, summary.json).

A row says which job, from which files, whether it worked (and if not, what and where), and the figures of
its classify document (core.batch.figures: type shares, pockets, areas, peak), warnings and the seconds the
job took on its worker. The JSON rows and the CSV columns are the same (``SUMMARY_COLUMNS``; warnings as a
list in JSON, joined by " | " in CSV). Every file is written atomically (core.project.safe_write), without
backups: a batch's folder holds only what the batch wrote.
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
from collections.abc import Mapping, Sequence
from pathlib import Path

from core.batch.figures import FIGURE_COLUMNS, FRACTION_COLUMNS
from core.batch.jobs import BatchJob, JobOutcome
from core.project.safe_write import write_file_atomically

__all__ = [
    "FAILED",
    "FRACTION_COLUMNS",
    "OK",
    "SUMMARY_COLUMNS",
    "SUMMARY_CSV",
    "SUMMARY_JSON",
    "remove_stale_result",
    "result_file_name",
    "summary_row",
    "write_result",
    "write_summary",
]

OK, FAILED = "ok", "failed"
SUMMARY_CSV, SUMMARY_JSON = "summary.csv", "summary.json"
SUMMARY_COLUMNS = ("job", "project", "data", "status", "error", *FIGURE_COLUMNS, "warnings", "elapsed_s",
                   "result")


def result_file_name(job: BatchJob) -> str:
    """The file a job's document is written to, inside the batch's folder."""
    return f"{job.name}.json"


def summary_row(job: BatchJob, outcome: JobOutcome, result: str | None) -> dict:
    """One row of the summary (every column of SUMMARY_COLUMNS; None where a value is missing)."""
    row = dict.fromkeys(SUMMARY_COLUMNS)
    row.update(job=job.name, project=job.project, data=job.data, status=OK if outcome.ok else FAILED,
               error=outcome.error, warnings=list(outcome.warnings), elapsed_s=round(outcome.elapsed_s, 4),
               result=result)
    if outcome.figures is not None:
        row.update(outcome.figures)
    return row


def write_result(folder: str | os.PathLike, job: BatchJob, outcome: JobOutcome) -> str:
    """Write the job's document as ``mixtype classify --json`` prints it (``outcome.text``, encoded where the
    job ran) to its result file in ``folder``; returns the file's name. Raises OSError."""
    name = result_file_name(job)
    write_file_atomically(Path(folder) / name, outcome.text.encode("utf-8"), backup=False)
    return name


def remove_stale_result(folder: str | os.PathLike, job: BatchJob) -> None:
    """Remove the result file an earlier batch left for ``job`` (a failed job leaves no result behind)."""
    try:
        os.unlink(Path(folder) / result_file_name(job))
    except FileNotFoundError:
        pass


def _cell(value) -> str:
    if value is None:
        return ""
    if isinstance(value, list):
        return " | ".join(map(str, value))
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return str(value)


def write_summary(folder: str | os.PathLike, document: Mapping, rows: Sequence[Mapping]) -> None:
    """Write summary.json (``document``, holding the rows) and summary.csv (the rows under a header of
    SUMMARY_COLUMNS) into ``folder``. Raises OSError."""
    text = io.StringIO(newline="")
    writer = csv.writer(text, lineterminator="\n")
    writer.writerow(SUMMARY_COLUMNS)
    writer.writerows([_cell(row.get(column)) for column in SUMMARY_COLUMNS] for row in rows)
    write_file_atomically(Path(folder) / SUMMARY_CSV, text.getvalue().encode("utf-8"), backup=False)
    text = json.dumps(document, indent=1, allow_nan=False) + "\n"
    write_file_atomically(Path(folder) / SUMMARY_JSON, text.encode("utf-8"), backup=False)
