"""The ``mixtype`` script: core's headless commands, plus ``render``, ``report`` and the window from this side.

Dependencies run one way: this module uses core.cli; core never imports gui. Qt is imported only when a
command needs it (the window, ``render``, ``report``), so ``mixtype --help``, ``--version`` and the headless commands
start without loading Qt and work where its system libraries are missing; ``--help`` and ``--version`` load
no numpy or sympy either (core.cli.registry). Before Qt is imported, gui.platform_check asks whether it can
start at all: when not, one line says what is missing and the exit status is 2, instead of Qt aborting the
process.
"""

from __future__ import annotations

import argparse
import os
import sys
import warnings
from collections.abc import Sequence
from typing import TextIO

from core.cli.main import main as run_command
from core.cli.options import EXIT_BAD_INPUT, EXIT_OK, Command, UsageError, add_data_access_options, assignment
from core.cli.registry import HEADLESS_COMMANDS

__all__ = ["RENDER", "REPORT", "main"]

# Equal to gui.render.DEFAULT_RENDER_SIZE and gui.export.PICTURE_SUFFIXES (tests/gui/test_picture_exports.py
# checks), written here so that `mixtype render --help` loads no Qt.
RENDER_SIZE = (1200, 900)
RENDER_SUFFIXES = (".png", ".svg", ".pdf")
# Equal to gui.report.REPORT_SUFFIXES (tests/gui/test_report.py checks), for the same reason.
REPORT_SUFFIXES = (".html", ".pdf")


def _add_render_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    parser.add_argument("--out", required=True, metavar="PICTURE",
                        help="the picture to write: its suffix picks the format (.png, .svg or .pdf)")
    parser.add_argument("--window", action="store_true", help="draw the whole main window, not only the map")
    parser.add_argument("--size", nargs=2, type=int, default=None, metavar=("W", "H"),
                        help=f"window size in pixels (default {RENDER_SIZE[0]} {RENDER_SIZE[1]})")
    add_data_access_options(parser)


def _run_render(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    if os.path.splitext(args.out)[1].lower() not in RENDER_SUFFIXES:
        raise UsageError(f"--out {args.out}: the picture's name must end in {', '.join(RENDER_SUFFIXES)}")
    if args.size is not None and not all(100 <= v <= 8000 for v in args.size):
        raise UsageError(f"--size must be between 100 and 8000 pixels, got {args.size[0]} {args.size[1]}")
    os.environ["QT_QPA_PLATFORM"] = "offscreen"  # headless: no display needed, whatever the desktop uses
    from gui.platform_check import offscreen_problem  # lazy: see _open_window

    problem = offscreen_problem()
    if problem is not None:
        raise UsageError(f"render cannot start Qt: {problem}")
    try:
        from core.data.limits import data_cap_raised
        from gui.project_bridge import ProjectFileError
        from gui.render import render_project  # Qt is loaded only for this command (see the module docstring)
    except ImportError as error:
        raise UsageError(f"rendering needs the window's libraries ({error})") from None
    try:
        with data_cap_raised(args.data_cap):
            render_project(args.file, args.out, whole_window=args.window,
                           size=tuple(args.size) if args.size else None, allow_outside_data=args.allow_outside_data)
    except ProjectFileError as error:
        raise UsageError(str(error)) from None
    out.write(f"wrote {args.out}\n")
    return EXIT_OK


RENDER = Command("render", "draw the map (or the whole window) of a project to a PNG, SVG or PDF file",
                 _add_render_arguments, _run_render)


def _add_report_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="a project file (.mixtype.json)")
    parser.add_argument("--out", required=True, metavar="REPORT",
                        help="the report to write: .html (one self-contained page) or .pdf")
    parser.add_argument("--equation", metavar="NAME", help="which equation of FILE (default: the one it shows)")
    parser.add_argument("--domain", nargs=1, metavar="NAME", help="which domain of FILE (default: the one it shows)")
    parser.add_argument("--param", action="append", type=assignment, default=[], metavar="NAME=VALUE",
                        help="a parameter's value for the report (repeatable; FILE's value otherwise)")
    parser.add_argument("--grid", nargs="+", type=int, metavar="N", help="N (square) or NX NY grid nodes "
                        "(default: the domain's)")
    parser.add_argument("--certify", action="store_true",
                        help="include the certified map's bounds even when the study's certified layer is off "
                             "(it can take a while: interval arithmetic cell by cell)")
    add_data_access_options(parser)
    # what the study reader (core.cli.study) also reads for the other commands: not options of this one
    parser.set_defaults(template=None, vars=None, a=None, b=None, c=None, let=[], tolerance=None, data=[])


def _run_report(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    if os.path.splitext(args.out)[1].lower() not in REPORT_SUFFIXES:
        raise UsageError(f"--out {args.out}: the report's name must end in {' or '.join(REPORT_SUFFIXES)}")
    if not os.path.isfile(args.file):
        raise UsageError(f"{args.file}: no such project file")
    os.environ["QT_QPA_PLATFORM"] = "offscreen"  # headless, as render
    from gui.platform_check import offscreen_problem  # lazy: see _open_window

    problem = offscreen_problem()
    if problem is not None:
        raise UsageError(f"report cannot start Qt: {problem}")
    try:
        from gui.report_command import run  # Qt is loaded only for this command (see the module docstring)
    except ImportError as error:
        raise UsageError(f"the report needs the window's libraries ({error})") from None
    return run(args, out, err)


REPORT = Command("report", "write a project's study report (equation, maps, lines, pockets, pins, notes) as one "
                 "HTML page or a PDF", _add_report_arguments, _run_report,
                 description="Write the study report of a project FILE: the equation in mathematical form, the "
                 "caution, parameters, data files with checksums, the type map and field layer as vector "
                 "figures, type-change lines, pockets, certified bounds (when the study's certified layer is on, "
                 "or with --certify), every pin's readouts, characteristics, notes, the version and the date. "
                 "The suffix of --out picks the format: .html (self-contained, no network) or .pdf.")


def _opens_window(argv: Sequence[str]) -> bool:
    """No command, or a FILE where a command would stand: the window."""
    names = {command.name for command in (*HEADLESS_COMMANDS, RENDER, REPORT)}
    return not argv or (argv[0] not in names and not argv[0].startswith("-"))


def _open_window(argv: Sequence[str]) -> int:
    # Lazy, as Qt below: platform_check imports subprocess, 5 to 7 ms by python -X importtime, a seventh of
    # what `mixtype --help` may take (bench/bench_startup.py); only the window and render need it.
    from gui.platform_check import window_problem

    problem = window_problem()
    if problem is not None:
        print(f"mixtype: the window cannot start: {problem}; headless commands work: mixtype --help",
              file=sys.stderr)
        return EXIT_BAD_INPUT
    try:
        from gui.app import main as window_main  # Qt is loaded only here (see the module docstring)
    except ImportError as error:  # the window is optional for headless installs
        print(f"mixtype: the window is unavailable ({error}); see 'mixtype --help'", file=sys.stderr)
        return EXIT_BAD_INPUT
    return window_main(list(argv))


def main(argv: Sequence[str] | None = None, *, out: TextIO | None = None, err: TextIO | None = None) -> int:
    """Entry point of the ``mixtype`` script; returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    if not sys.warnoptions:  # a user's terminal gets one-line messages, never a library's warning text
        warnings.simplefilter("ignore")  # (python -W ... still shows them; tests/fuzz sees them in core.cli)
    if _opens_window(argv):
        return _open_window(argv)
    return run_command(argv, out=out, err=err, extra_commands=(RENDER, REPORT))


if __name__ == "__main__":
    sys.exit(main())
