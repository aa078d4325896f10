"""The headless ``mixtype`` commands: parse the command line, run one command, report errors in one line.

Output formats are a contract: ``--json`` prints one JSON document on stdout; bad input exits with status 2
and a one-line message on stderr, never a traceback, and nothing the user typed is ever executed.
classify, probe and trace take the equation and domain inline, from a template (``--template NAME``) or from
a project FILE (inline options then override), plus background data files (``--data PATH[:NAMES]``, added to
FILE's); see core.cli.study. The installed ``mixtype`` script is gui.launcher.main, which adds the window and
``render`` to these commands; this module never imports Qt. It imports only the standard library and the
command registry (core.cli.registry): a command's implementation, with numpy and sympy, loads when it runs.
"""

from __future__ import annotations

import argparse
import re
import sys
from collections.abc import Sequence

import core
from core.cli.options import EXIT_BAD_INPUT, EXIT_OK, Command, UsageError
from core.cli.printable import PrintableStream
from core.cli.registry import HEADLESS_COMMANDS

__all__ = ["HEADLESS_COMMANDS", "UsageError", "main"]


# Every number Python's float() reads, negative: argparse's own pattern (-5, -.5) leaves out exponents and
# infinities, so `--at 0 -5e-1` or `--domain -1e308 ...` would be read as unknown options.
_NEGATIVE_NUMBER = re.compile(r"^-(\d[\d_]*\.?[\d_]*|\.\d[\d_]*)([eE][-+]?\d[\d_]*)?$|^-(inf|infinity|nan)$",
                              re.IGNORECASE)


class _Parser(argparse.ArgumentParser):
    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self._negative_number_matcher = _NEGATIVE_NUMBER   # argparse's hook for what counts as a number

    def error(self, message: str):  # one line, no usage dump
        raise UsageError(message)


def _build_parser(commands: Sequence[Command]) -> _Parser:
    parser = _Parser(prog="mixtype", description="Where is a second-order PDE elliptic, parabolic or "
                     "hyperbolic? Without a command (or with a project FILE), opens the window.")
    parser.add_argument("--version", action="store_true", help="print the version and exit")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for command in commands:
        command.add_arguments(subparsers.add_parser(command.name, help=command.help,
                                                    description=command.description))
    return parser


_EXPRESSION_OPTIONS = frozenset({"--a", "--b", "--c", "--d", "--e", "--f", "--let", "--param"})


def _glue_expression_values(argv: list[str]) -> list[str]:
    """Let an expression start with a minus sign: ``--b -2*x`` becomes ``--b=-2*x``.

    (argparse would otherwise read ``-2*x`` as an unknown option.)
    """
    glued: list[str] = []
    index = 0
    while index < len(argv):
        token = argv[index]
        if token in _EXPRESSION_OPTIONS and index + 1 < len(argv) and argv[index + 1].startswith("-") \
                and not argv[index + 1].startswith("--"):
            glued.append(f"{token}={argv[index + 1]}")
            index += 2
            continue
        glued.append(token)
        index += 1
    return glued


def main(argv: Sequence[str] | None = None, *, out=None, err=None,
         extra_commands: Sequence[Command] = ()) -> int:
    """Run one command; returns the exit status. ``extra_commands`` are added by the window's launcher."""
    argv = list(sys.argv[1:] if argv is None else argv)
    out = PrintableStream(out or sys.stdout)        # nothing typed or read reaches the terminal raw
    err = PrintableStream(err or sys.stderr)
    commands = {command.name: command for command in (*HEADLESS_COMMANDS, *extra_commands)}
    try:
        args = _build_parser(tuple(commands.values())).parse_args(_glue_expression_values(argv))
        if args.version:
            out.write(f"mixtype {core.__version__}\n")
            return 0
        if args.command is None:
            raise UsageError("missing COMMAND (see 'mixtype --help')")
        return commands[args.command].run(args, out, err)
    except UsageError as error:
        for line in str(error).splitlines() or [""]:  # 'check' lists every problem, one per line
            err.write(f"mixtype: {line}\n")
        return EXIT_BAD_INPUT
    except SystemExit as exit_request:  # --help
        return int(exit_request.code or 0)
    except BrokenPipeError:  # the reader went away (e.g. `| head`): nothing more to say to it
        return EXIT_OK
    except (OSError, ValueError) as error:  # ValueError includes a bad expression (ExpressionError)
        err.write(f"mixtype: {_one_line(error)}\n")
        return EXIT_BAD_INPUT
    except MemoryError:
        err.write("mixtype: not enough memory for this request; use a smaller grid, fewer seeds or smaller data "
                  "files\n")
        return EXIT_BAD_INPUT
    except RecursionError:
        err.write("mixtype: the input is nested too deeply to handle\n")
        return EXIT_BAD_INPUT
    except Exception as error:  # noqa: BLE001 - never a traceback in the user's face
        err.write(f"mixtype: internal error ({type(error).__name__}): {_one_line(error)}\n")
        return 1


def _one_line(error: BaseException) -> str:
    """An exception's message on one line (an OSError's or a library's may hold several)."""
    return " ".join(str(error).split("\n")) or type(error).__name__


if __name__ == "__main__":
    sys.exit(main())
