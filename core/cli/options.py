"""What the command line is made of before anything is computed: the Command record, exit statuses,
UsageError and the option types and groups the commands share.

This module imports only the standard library (argparse, math, os, re, typing), so that ``mixtype --help``,
``--version`` and any command's ``--help`` build their parser without loading numpy, sympy or scipy
(core.cli.registry lists the commands with these options; their implementations load when they run).
"""

from __future__ import annotations

import argparse
import math
import os
import re
from collections.abc import Callable
from typing import NamedTuple, TextIO

__all__ = [
    "DEFAULT_TOLERANCE",
    "EXIT_BAD_INPUT",
    "EXIT_OK",
    "EXIT_SOME_FAILED",
    "MAX_BOUNCES",
    "Command",
    "UsageError",
    "add_data_access_options",
    "add_equation_options",
    "assignment",
    "bounces",
    "data_cap_gib",
    "finite",
    "parse_data_option",
    "whole_number",
]

EXIT_OK = 0
EXIT_SOME_FAILED = 1      # mixtype batch: some jobs failed (their rows say why), the others ran
EXIT_BAD_INPUT = 2

# core.analysis.classify.DEFAULT_TOLERANCE, written here again for the --tolerance help line so that --help
# needs no numpy; tests/core/test_cli_startup.py keeps the two equal.
DEFAULT_TOLERANCE = 1e-10
# core.analysis.tracing.MAX_BOUNCES, written here again for --bounces for the same reason (a test keeps them equal).
MAX_BOUNCES = 1000


class UsageError(Exception):
    """Bad command-line input: reported as one line on stderr with exit status 2."""


class Command(NamedTuple):
    """One ``mixtype`` command: its name, help, options and what it does.

    (A NamedTuple rather than a dataclass: Python has loaded typing already, while dataclasses would add
    8 ms, a fifth of ``mixtype --help``, by python -X importtime.)
    """

    name: str
    help: str
    add_arguments: Callable[[argparse.ArgumentParser], None]
    run: Callable[[argparse.Namespace, TextIO, TextIO], int]
    description: str | None = None


def finite(text: str) -> float:
    """An argparse type: a finite number."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not math.isfinite(value):
        raise argparse.ArgumentTypeError(f"{text!r} is not a finite number")
    return value


def assignment(text: str) -> tuple[str, str]:
    """An argparse type: ``NAME=VALUE`` -> (name, value), both stripped."""
    name, sep, value = text.partition("=")
    if not sep or not name.strip():
        raise argparse.ArgumentTypeError(f"expected NAME=VALUE, got {text!r}")
    return name.strip(), value.strip()


_NAME = r"[A-Za-z][A-Za-z0-9_]*"
_NAMES_SPEC = re.compile(rf"^\s*{_NAME}\s*(=\s*{_NAME}\s*)?(,\s*{_NAME}\s*(=\s*{_NAME}\s*)?)*$")


def parse_data_option(text: str) -> tuple[str, dict[str, str] | None]:
    """``PATH`` or ``PATH:NAMES`` -> (path, {name in the file: quantity name} or None for every quantity).

    NAMES is a comma-separated list of ``NAME`` (take it as it is) or ``OLD=NEW`` (take OLD, call it NEW),
    after the last ':' of the text. A text naming an existing file is always a plain path.
    """
    head, sep, tail = text.rpartition(":")
    if not sep or not head or os.path.isfile(text) or not _NAMES_SPEC.match(tail):
        if not text.strip():
            raise argparse.ArgumentTypeError("expected a data file PATH[:NAMES], got an empty text")
        return text, None
    names: dict[str, str] = {}
    for item in tail.split(","):
        old, _, new = (part.strip() for part in item.partition("="))
        if old in names:
            raise argparse.ArgumentTypeError(f"{text!r}: {old!r} is named twice")
        names[old] = new or old
    return head, names


def add_equation_options(parser: argparse.ArgumentParser) -> None:
    """FILE, the equation and domain options, the background data and --json (classify, probe, trace)."""
    parser.add_argument("file", nargs="?", metavar="FILE",
                        help="a project file (.mixtype.json) giving the equation, domain and data; options "
                             "override it")
    group = parser.add_argument_group("equation and domain (a u_xx + b u_xy + c u_yy + ... = 0)")
    group.add_argument("--template", metavar="NAME",
                       help="start the equation and domain from a template (list them with 'mixtype templates');"
                            " the options below override it")
    group.add_argument("--equation", metavar="NAME", help="which equation of FILE (default: the one it shows)")
    group.add_argument("--vars", nargs=2, metavar=("X", "Y"), help="names of the two variables (default x y)")
    group.add_argument("--a", metavar="EXPR", help="coefficient of u_xx")
    group.add_argument("--b", metavar="EXPR", help="coefficient of u_xy")
    group.add_argument("--c", metavar="EXPR", help="coefficient of u_yy")
    group.add_argument("--let", action="append", type=assignment, default=[], metavar="NAME=EXPR",
                       help="a named definition usable in a, b, c and other definitions (repeatable)")
    group.add_argument("--param", action="append", type=assignment, default=[], metavar="NAME=VALUE",
                       help="a named number (repeatable)")
    group.add_argument("--domain", nargs="+", metavar="NAME | XMIN XMAX YMIN YMAX",
                       help="a domain of FILE by name, or the rectangle (which overrides FILE's or the template's)")
    group.add_argument("--grid", nargs="+", type=int, metavar="N", help="N (square) or NX NY grid nodes")
    group.add_argument("--tolerance", type=finite, default=None,
                       help=f"parabolic tolerance on |D|/(b^2+4|ac|) (default: FILE's, else {DEFAULT_TOLERANCE:g})")
    data = parser.add_argument_group("background data")
    data.add_argument("--data", action="append", type=parse_data_option, default=[], metavar="PATH[:NAMES]",
                      help="a data file (CSV, NumPy .npz, NetCDF, VTK .vtu/.vtk) whose quantities the equation "
                           "uses by name, read for the equation's two variables (repeatable; added to FILE's). "
                           "Without NAMES every usable quantity is taken under its own name; NAMES is a comma-"
                           "separated list of NAME (take it) and OLD=NEW (take OLD and call it NEW), e.g. "
                           "--data flow.vtu:velocity_x=u,velocity_y=v. With --template, quantities the template "
                           "knows replace its formulas (e.g. u and v for full_potential).")
    add_data_access_options(parser)
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of a table")


def whole_number(low: int, high: int) -> Callable[[str], int]:
    """An argparse type: a whole number from ``low`` to ``high``."""
    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a whole number from {low} to {high}, got {text!r}") from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(f"expected a whole number from {low} to {high}, got {value}")
        return value
    return parse


bounces = whole_number(0, MAX_BOUNCES)    # --bounces N


def data_cap_gib(text: str) -> int:
    """--data-cap GIB: a positive size in GiB, as bytes (core.data.limits reads the same from the environment)."""
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not (math.isfinite(value) and 0 < value < 2**32):
        raise argparse.ArgumentTypeError(f"expected a size in GiB above 0 (such as 2 or 0.5), got {text!r}")
    return max(1, int(value * 2**30))


def add_data_access_options(parser: argparse.ArgumentParser) -> None:
    """What a project's data files may make Mixtype read (every command that reads a project FILE)."""
    group = parser.add_argument_group("reading data files")
    group.add_argument("--allow-outside-data", action="store_true",
                       help="read data files that FILE lists outside its own folder (an absolute path, '../' or a "
                            "symbolic link leading out); without it they are refused, since a project file may come "
                            "from anyone")
    group.add_argument("--data-cap", type=data_cap_gib, default=None, metavar="GIB",
                       help="the most one data file may take, on disk and decoded, in GiB (default 1, or the "
                            "environment variable MIXTYPE_DATA_CAP_GIB)")
