"""The headless ``mixtype`` commands as the command line sees them: names, help lines and options.

Building the parser needs only this module and core.cli.options (the standard library), so ``mixtype
--help`` and a command's ``--help`` start in the time of Python itself. A command's implementation module
(core.cli.classify, sweep, probe, trace, critical, check, templates, batch, cauchy, analyze: each has ``run(args,
out, err) -> exit status``) is imported only when that command runs; that is the one lazy import of the command
line, in ``_implemented_in``.
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

__all__ = ["CRITICAL_TYPES", "HEADLESS_COMMANDS", "MAX_BATCH_WORKERS", "MAX_CELL_BUDGET", "MAX_SWEEP_VALUES"]

MAX_CELL_BUDGET = 50_000_000     # cells a certified map may enclose: about 100 bytes a cell kept
MAX_STRIDE = 1_000_000           # --stride K
MAX_BLOCK_MIB = 1 << 20          # --block-mib: 1 TiB
# core.analysis.sweep.MAX_SWEEP_VALUES written again for --sweep's help line, so that --help needs no numpy
# (tests/core/test_sweep_cli.py keeps the two equal).
MAX_SWEEP_VALUES = 1000


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
    large = parser.add_argument_group("data larger than memory")
    large.add_argument("--out-of-core", action="store_true",
                       help="classify the nodes of the NetCDF or zarr --data file's own grid, reading it a band of "
                            "rows at a time (automatic for a zarr store or a file larger than the data cap); "
                            "--domain then picks the nodes inside the rectangle")
    large.add_argument("--stride", nargs="+", type=whole_number(1, MAX_STRIDE), metavar="K",
                       help="with --out-of-core: every K-th node (or KX KY) of the data's grid (default 1)")
    large.add_argument("--block-mib", type=whole_number(8, MAX_BLOCK_MIB), default=None, metavar="MIB",
                       help="with --out-of-core: the most one band of rows may hold, in MiB (default 256)")
    large.add_argument("--codes-out", metavar="PATH.npy",
                       help="with --out-of-core: write the type code of every node (int8, rows along the second "
                            "variable) to a NumPy .npy file")


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


CRITICAL_TYPES = ("hyperbolic", "elliptic", "parabolic")   # core.analysis.critical.CRITICAL_TYPES (a test keeps
#                                                           them equal; written here so that --help needs no numpy)


def _add_critical_arguments(parser: argparse.ArgumentParser) -> None:
    add_equation_options(parser)
    group = parser.add_argument_group("critical values")
    group.add_argument("--vary", required=True, metavar="NAME",
                       help="the parameter that varies (a parameter of the equation; a new name is added as one)")
    group.add_argument("--between", required=True, nargs=2, type=finite, metavar=("LO", "HI"),
                       help="the interval of NAME searched, LO below HI")
    group.add_argument("--type", choices=CRITICAL_TYPES, default="hyperbolic",
                       help="the type whose zone appears or vanishes (default hyperbolic)")
    group.add_argument("--no-certify", action="store_true",
                       help="skip the certified maps that prove no other place reaches the threshold first")


def _add_check_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    add_data_access_options(parser)
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of text")


def _add_cauchy_arguments(parser: argparse.ArgumentParser) -> None:
    for key in "abc":
        parser.add_argument(f"--{key}", required=True, metavar=key.upper(),
                            help=f"the constant coefficient {key} (a number or constant formula such as 1/3)")
    parser.add_argument("--line", required=True, metavar="LINE",
                        help='the data line, e.g. "2*x + y = 1"')
    parser.add_argument("--u", required=True, metavar="TEXT",
                        help="u on the line: a formula in s (arc length along the line) or in the variables")
    parser.add_argument("--du", required=True, metavar="TEXT",
                        help="the derivative of u along the line's unit normal (ALPHA, BETA)/|(ALPHA, BETA)|, "
                             "in s or in the variables")
    parser.add_argument("--at", nargs=2, type=finite, metavar=("X", "Y"),
                        help="also the value there and the two points of the line it depends on")
    parser.add_argument("--vars", nargs=2, metavar=("X", "Y"), help="names of the two variables (default x y)")
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of text")


def sweep_option(text: str) -> tuple[str, float, float, int]:
    """--sweep NAME=LO:HI:N -> (name, low, high, count): a parameter name, two finite numbers and a whole
    number (their order, the count's range and --log are checked when the sweep runs)."""
    name, sep, spec = text.partition("=")
    parts = spec.split(":")
    if not sep or not name.strip() or len(parts) != 3:
        raise argparse.ArgumentTypeError(f"expected NAME=LO:HI:N (such as mach=0.5:0.9:41), got {text!r}")
    try:
        low, high = finite(parts[0]), finite(parts[1])
    except argparse.ArgumentTypeError as error:
        raise argparse.ArgumentTypeError(f"{text!r}: LO and HI must be finite numbers ({error})") from None
    try:
        count = int(parts[2])
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r}: N must be a whole number of values, got {parts[2]!r}") from None
    return name.strip(), low, high, count


def _add_sweep_arguments(parser: argparse.ArgumentParser) -> None:
    add_equation_options(parser)
    group = parser.add_argument_group("sweep")
    group.add_argument("--sweep", type=sweep_option, required=True, metavar="NAME=LO:HI:N",
                       help="the parameter NAME and N values from LO to HI, both ends included (N from 2 to "
                            f"{MAX_SWEEP_VALUES})")
    group.add_argument("--log", action="store_true", help="spread the values evenly on a logarithmic scale "
                       "(LO above 0)")
    group.add_argument("--raw", action="store_true", help="measure the zones on lines not refined onto D = 0")


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


MAX_DEADLINE_SECONDS = 3600.0     # --deadline: an hour
# core.analysis.exact.DEFAULT_DEADLINE_SECONDS, written here again so that --help loads no sympy (a test keeps
# the two equal).
DEFAULT_DEADLINE_SECONDS = 30.0


def deadline_seconds(text: str) -> float:
    """--deadline SECONDS: a number above 0, at most MAX_DEADLINE_SECONDS."""
    value = finite(text)
    if not 0 < value <= MAX_DEADLINE_SECONDS:
        raise argparse.ArgumentTypeError(f"expected seconds above 0 and at most {MAX_DEADLINE_SECONDS:g}, "
                                         f"got {text!r}")
    return value


def _add_analyze_arguments(parser: argparse.ArgumentParser) -> None:
    add_equation_options(parser)
    group = parser.add_argument_group("exact analysis")
    group.add_argument("--d", metavar="EXPR", help="coefficient of u_x (default 0)")
    group.add_argument("--e", metavar="EXPR", help="coefficient of u_y (default 0)")
    group.add_argument("--f", metavar="EXPR", help="coefficient of u (default 0)")
    group.add_argument("--substitute-parameters", action="store_true",
                       help="put the parameters' values into the formulas (default: keep them as symbols, their "
                            "values only deciding signs where a factor holds them)")
    group.add_argument("--deadline", type=deadline_seconds, default=DEFAULT_DEADLINE_SECONDS, metavar="SECONDS",
                       help=f"the most the symbolic work may take in all (default {DEFAULT_DEADLINE_SECONDS:g}); "
                            "what does not finish in time is reported as not found, with a note")


def _add_templates_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of a table")


CLASSIFY = Command("classify", "type map: area fractions, type-change lines and hyperbolic pockets",
                   _add_classify_arguments, _implemented_in("core.cli.classify"))
PROBE = Command("probe", "everything known at one point (or at every pin of FILE)", _add_probe_arguments,
                _implemented_in("core.cli.probe"))
TRACE = Command("trace", "the two characteristics through a point (or FILE's seeds)", _add_trace_arguments,
                _implemented_in("core.cli.trace"))
CRITICAL = Command("critical", "parameter values where a zone of a type appears or vanishes, to 1e-9",
                   _add_critical_arguments, _implemented_in("core.cli.critical"),
                   description="Vary one parameter over an interval and find every value where a zone of the "
                   "type (hyperbolic unless --type says otherwise) appears or vanishes, to a relative tolerance "
                   "of 1e-9, and where in the domain it does; certified maps then prove (or fail to prove) that "
                   "no other place reaches the threshold first.")
CHECK = Command("check", "validate a project file and open its data files", _add_check_arguments,
                _implemented_in("core.cli.check"),
                description="Validate a project file and list every problem in it, then open the data files it "
                "lists. Exit status 2 when the file is invalid or a data file is missing or unreadable; a data "
                "file that changed since the project was saved is a warning on stderr (exit status 0).")
SWEEP = Command("sweep", "how each type's area, the pockets and their peak change as one parameter moves",
                _add_sweep_arguments, _implemented_in("core.cli.sweep"),
                description="Classify the grid at N values of one parameter (the equation compiled once) and "
                "report, per value, each type's share of the grid nodes (as classify does), its area measured on "
                "the refined type-change lines, the number of hyperbolic pockets and the largest pocket peak of "
                "the study's peak quantity.")
TEMPLATES = Command("templates", "list the equation templates --template accepts", _add_templates_arguments,
                    _implemented_in("core.cli.templates"))

CAUCHY = Command("cauchy", "the Cauchy problem of a constant-coefficient equation, solved in closed form",
                 _add_cauchy_arguments, _implemented_in("core.cli.cauchy"),
                 description="Solve a u_xx + b u_xy + c u_yy = 0 (constant a, b, c) with u and its normal "
                 "derivative given on a straight line: the solution in closed form (d'Alembert's formula in the "
                 "characteristic coordinates where hyperbolic), its value at a point and the two points of the "
                 "line it depends on. Elliptic equations and characteristic data lines are refused (exit 2).")

BATCH = Command("batch", "many studies in one run: a result per project file or data file, and a summary",
                _add_batch_arguments, _implemented_in("core.cli.batch"),
                description="Classify many studies in one start-up, on a pool of local processes or a Dask "
                "cluster: one job per project FILE, and one per --data-each file with --project. Each result "
                "JOB.json in --out DIR is what 'mixtype classify --json' prints for it; summary.csv and "
                "summary.json hold a row per job. Exit status 1 when any job failed (its row says why), 2 for "
                "bad options.")


ANALYZE = Command("analyze", "exact analysis: D factored, type-change curves, zones, invariants, canonical forms",
                  _add_analyze_arguments, _implemented_in("core.cli.analyze"),
                  description="Analyse a u_xx + b u_xy + c u_yy + d u_x + e u_y + f u = 0 symbolically over the "
                  "whole plane: D = b^2 - 4ac factored, the curves where the type changes, the zones and their "
                  "conditions, each characteristic family's slope and an invariant constant along it, and the "
                  "canonical form of each type. Every formula is written in Mixtype's formula language. No grid is "
                  "needed: --domain and --grid are accepted (as by every command) and not used.")

HEADLESS_COMMANDS: tuple[Command, ...] = (CLASSIFY, SWEEP, PROBE, TRACE, CRITICAL, CHECK, TEMPLATES, BATCH, CAUCHY,
                                          ANALYZE)
