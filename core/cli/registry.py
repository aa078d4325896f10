"""The headless ``mixtype`` commands as the command line sees them: names, help lines and options.

Building the parser needs only this module and core.cli.options (the standard library), so ``mixtype
--help`` and a command's ``--help`` start in the time of Python itself. A command's implementation module
(core.cli.classify, probe, trace, check, templates, batch: each has ``run(args, out, err) -> exit status``) is
imported only when that command runs; that is the one lazy import of the command line, in ``_implemented_in``.
"""

from __future__ import annotations

import argparse
import importlib
from collections.abc import Callable
from typing import TextIO

from core.cli.options import (
    MAX_BOUNCES,
    Command,
    add_data_access_options,
    add_equation_options,
    bounces,
    finite,
    whole_number,
)

__all__ = ["HEADLESS_COMMANDS", "MAX_BATCH_WORKERS", "MAX_CELL_BUDGET"]

MAX_CELL_BUDGET = 50_000_000     # cells a certified map may enclose: about 100 bytes a cell kept


def _implemented_in(module: str) -> Callable[[argparse.Namespace, TextIO, TextIO], int]:
    """A command's run function that imports ``module`` when called and runs its ``run``."""

    def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
        # Lazy on purpose: a command module imports numpy, sympy, scipy and the project layer, 0.3 s (templates)
        # to 0.6 s (classify) by python -X importtime, which --help never needs (bench/bench_startup.py).
        return importlib.import_module(module).run(args, out, err)

    return run


def _add_classify_arguments(parser: argparse.ArgumentParser) -> None:
    add_equation_options(parser)
    parser.add_argument("--raw", action="store_true", help="skip refining lines onto D = 0")
    parser.add_argument("--save-project", metavar="FILE", help="also write a project file holding the "
                        "equation, domain and data files used (data paths recorded relative to FILE)")
    parser.add_argument("--certify", action="store_true", help="also prove, cell by cell with interval bounds, "
                        "where each type can and cannot be (refining only undecided cells)")
    parser.add_argument("--min-cell", type=positive_number, default=None, metavar="H",
                        help="with --certify: smallest cell side refined (default 1e-4 of the domain's shorter side)")
    parser.add_argument("--max-cells", type=cell_budget, default=None, metavar="N",
                        help=f"with --certify: at most N cells enclosed in all (1 to {MAX_CELL_BUDGET}; "
                             "default 4000000)")


def positive_number(text: str) -> float:
    """--min-cell H: a finite number above 0."""
    value = finite(text)
    if value <= 0:
        raise argparse.ArgumentTypeError(f"expected a number above 0, got {text!r}")
    return value


cell_budget = whole_number(1, MAX_CELL_BUDGET)     # --max-cells N


def _add_probe_arguments(parser: argparse.ArgumentParser) -> None:
    add_equation_options(parser)
    parser.add_argument("--at", nargs=2, type=finite, metavar=("X", "Y"), help="the point (default: FILE's pins)")


def _add_trace_arguments(parser: argparse.ArgumentParser) -> None:
    add_equation_options(parser)
    parser.add_argument("--from", dest="seed", nargs=2, type=finite, metavar=("X", "Y"),
                        help="the seed point (default: FILE's seeds)")
    parser.add_argument("--bounces", type=bounces, default=None, metavar="N",
                        help=f"go on as the other family through up to N (0 to {MAX_BOUNCES}) reflections at the "
                             "domain edge or turns at the type-change line, on each side of the seed "
                             "(default: FILE's setting, else 0)")


def _add_check_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    add_data_access_options(parser)
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of text")


MAX_BATCH_WORKERS = 1024
batch_workers = whole_number(1, MAX_BATCH_WORKERS)     # --workers N


def _add_batch_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("jobs", nargs="*", metavar="FILE", help="project files (.mixtype.json), one job each: "
                        "what 'mixtype classify FILE --json' prints")
    parser.add_argument("--out", required=True, metavar="DIR", help="the folder the results (JOB.json), "
                        "summary.csv and summary.json are written to (made if missing)")
    sweep = parser.add_argument_group("a sweep over data files")
    sweep.add_argument("--project", metavar="FILE", help="the project each --data-each file is classified with")
    sweep.add_argument("--data-each", action="extend", nargs="+", default=[], metavar="DATA",
                       help="data files, or quoted patterns such as 'runs/mach_*.nc' (sorted by name): one job "
                            "each, the file read in place of the project's data file")
    sweep.add_argument("--in-place-of", metavar="PATH", help="which of the project's data files (its path as "
                       "the project records it) the sweep files stand in for; needed when it lists several")
    engine = parser.add_argument_group("where the jobs run")
    engine.add_argument("--workers", type=batch_workers, default=None, metavar="N",
                        help="processes on this machine (default: the cores available, at most one per job); "
                             "with --dask local, the local cluster's workers")
    engine.add_argument("--dask", metavar="ADDRESS", help="run on a Dask cluster: a running scheduler "
                        "(tcp://host:port) or 'local' (a cluster on this machine, loopback address only); needs "
                        "pip install 'mixtype[cluster]'")
    add_data_access_options(parser)
    parser.add_argument("--json", action="store_true", help="print the summary as one JSON document")


def _add_templates_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of a table")


CLASSIFY = Command("classify", "type map: area fractions, type-change lines and hyperbolic pockets",
                   _add_classify_arguments, _implemented_in("core.cli.classify"))
PROBE = Command("probe", "everything known at one point (or at every pin of FILE)", _add_probe_arguments,
                _implemented_in("core.cli.probe"))
TRACE = Command("trace", "the two characteristics through a point (or FILE's seeds)", _add_trace_arguments,
                _implemented_in("core.cli.trace"))
CHECK = Command("check", "validate a project file and open its data files", _add_check_arguments,
                _implemented_in("core.cli.check"),
                description="Validate a project file and list every problem in it, then open the data files it "
                "lists. Exit status 2 when the file is invalid or a data file is missing or unreadable; a data "
                "file that changed since the project was saved is a warning on stderr (exit status 0).")
TEMPLATES = Command("templates", "list the equation templates --template accepts", _add_templates_arguments,
                    _implemented_in("core.cli.templates"))

BATCH = Command("batch", "many studies in one run: a result per project file or data file, and a summary",
                _add_batch_arguments, _implemented_in("core.cli.batch"),
                description="Classify many studies in one start-up, on a pool of local processes or a Dask "
                "cluster: one job per project FILE, and one per --data-each file with --project. Each result "
                "JOB.json in --out DIR is what 'mixtype classify --json' prints for it; summary.csv and "
                "summary.json hold a row per job. Exit status 1 when any job failed (its row says why), 2 for "
                "bad options.")

HEADLESS_COMMANDS: tuple[Command, ...] = (CLASSIFY, PROBE, TRACE, CHECK, TEMPLATES, BATCH)
