"""``mixtype report FILE --out study.html|study.pdf``: the study report of a project file, without a display.

The study is read as every command reads a FILE (core.cli.study: its shown equation and domain, or
``--equation``/``--domain``, parameters overridden by ``--param``, its data files), computed by
core.results.report_results (the certified map too when the study's certified layer is on, or with
``--certify``) and written by gui.report, the window's own report writer: figures need Qt, so the launcher
starts it offscreen before this module loads (gui.launcher).
"""

from __future__ import annotations

import argparse
from typing import TextIO

import numpy as np

from core.cli.command import compiled_study, read_study
from core.cli.options import EXIT_OK, UsageError
from core.results.report_results import project_report_results
from gui.qt_setup import ensure_application
from gui.report import check_report_path, write_report

__all__ = ["run"]


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Write the report of FILE's study to --out; returns the exit status (bad input: UsageError)."""
    try:
        check_report_path(args.out)
    except ValueError as error:
        raise UsageError(f"--out {args.out}: {error}") from None
    study = read_study(args, err)
    compiled = compiled_study(study)
    with np.errstate(all="ignore"):
        results = project_report_results(compiled, study, certify=True if args.certify else None)
    ensure_application()
    try:
        written = write_report(results, args.out, view=study.project.view, project=study.project,
                               project_file=args.file)
    except OSError as error:
        raise UsageError(str(error)) from None
    out.write(f"wrote {written}\n")
    return EXIT_OK
