"""The ``mixtype`` script: core's headless commands, plus ``render`` and the window from this side.

Dependencies run one way: this module uses core.cli; core never imports gui. Qt is imported only when a
command needs it (the window, ``render``), so ``mixtype --help``, ``--version`` and the headless commands
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
from core.cli.options import EXIT_BAD_INPUT, EXIT_OK, Command, UsageError, add_data_access_options
from core.cli.registry import HEADLESS_COMMANDS

__all__ = ["RENDER", "main"]

# Equal to gui.render.DEFAULT_RENDER_SIZE and gui.export.PICTURE_SUFFIXES (tests/gui/test_picture_exports.py
# checks), written here so that `mixtype render --help` loads no Qt.
RENDER_SIZE = (1200, 900)
RENDER_SUFFIXES = (".png", ".svg", ".pdf")


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


def _opens_window(argv: Sequence[str]) -> bool:
    """No command, or a FILE where a command would stand: the window."""
    names = {command.name for command in (*HEADLESS_COMMANDS, RENDER)}
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
    return run_command(argv, out=out, err=err, extra_commands=(RENDER,))


if __name__ == "__main__":
    sys.exit(main())
