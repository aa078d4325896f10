"""The summary of a batch: one row per job, and the files a batch writes (results, summary.csv, summary.json).

A row says which job, from which files, whether it worked (and if not, what and where), and the figures of
its classify document: each type's share of the grid nodes, the hyperbolic pockets (count, total and largest
area in the study's variables' units squared), the parabolic regions' area, the peak of the pocket quantity
(e.g. the largest local Mach number in a supersonic pocket), warnings and the seconds the job took on its
worker. The JSON rows and the CSV columns are the same (``SUMMARY_COLUMNS``; warnings as a list in JSON,
joined by " | " in CSV). Every file is written atomically (core.project.safe_write), without backups: a
batch's folder holds only what the batch wrote.
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
from collections.abc import Mapping, Sequence
from pathlib import Path

from core.batch.jobs import BatchJob, JobOutcome
from core.project.safe_write import write_file_atomically
from core.results.document import FRACTION_ORDER

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
FRACTION_COLUMNS = tuple(f"{code.label}_fraction" for code in FRACTION_ORDER)
SUMMARY_COLUMNS = ("job", "project", "data", "status", "error", *FRACTION_COLUMNS, "hyperbolic_pockets",
                   "hyperbolic_area", "largest_pocket_area", "parabolic_area", "peak_quantity", "peak_value",
                   "warnings", "elapsed_s", "result")


def result_file_name(job: BatchJob) -> str:
    """The file a job's document is written to, inside the batch's folder."""
    return f"{job.name}.json"


def _figures(document: Mapping) -> dict:
    """The summary figures of one classify document."""
    fractions = document.get("fractions") or {}
    pockets = document.get("pockets") or []
    areas = [pocket["area"] for pocket in pockets]
    peaks = [pocket["peak"] for pocket in pockets if pocket.get("peak") is not None]
    values = [peak["value"] for peak in peaks if peak["value"] is not None]
    regions = document.get("parabolic_regions")
    return {
        **{column: fractions.get(code.label)
           for column, code in zip(FRACTION_COLUMNS, FRACTION_ORDER, strict=True)},
        "hyperbolic_pockets": len(pockets),
        "hyperbolic_area": math.fsum(areas),
        "largest_pocket_area": max(areas) if areas else None,
        "parabolic_area": None if regions is None else math.fsum(region["area"] for region in regions),
        "peak_quantity": peaks[0]["quantity"] if peaks else None,
        "peak_value": max(values) if values else None,
    }


def summary_row(job: BatchJob, outcome: JobOutcome, result: str | None) -> dict:
    """One row of the summary (every column of SUMMARY_COLUMNS; None where a value is missing)."""
    row = dict.fromkeys(SUMMARY_COLUMNS)
    row.update(job=job.name, project=job.project, data=job.data, status=OK if outcome.ok else FAILED,
               error=outcome.error, warnings=list(outcome.warnings), elapsed_s=round(outcome.elapsed_s, 4),
               result=result)
    if outcome.document is not None:
        row.update(_figures(outcome.document))
    return row


def write_result(folder: str | os.PathLike, job: BatchJob, document: Mapping) -> str:
    """Write ``document`` as ``mixtype classify --json`` prints it (one line and a newline) to the job's
    result file in ``folder``; returns the file's name. Raises OSError."""
    name = result_file_name(job)
    write_file_atomically(Path(folder) / name, (json.dumps(document) + "\n").encode("utf-8"), backup=False)
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
