"""What every ``mixtype`` command shares: the Command record, exit codes, the study it works on, JSON helpers.

A command is a name, a help line, a function that adds its options to an argparse parser and a function that
runs it (``run(args, out, err) -> exit status``). Headless commands live in core.cli; the window's side adds
its own (``render``) through core.cli.main.main(extra_commands=...), so core never imports gui.
"""

from __future__ import annotations

import argparse
from collections.abc import Callable
from dataclasses import dataclass
from typing import TextIO

from core.cli.study import Study, UsageError, build_study
from core.equations.equation import CompiledEquation
from core.equations.language import ExpressionError
from core.project.data_files import compile_with_data
from core.results.document import data_files_document, json_number, point_list, project_file_checksum

__all__ = ["EXIT_BAD_INPUT", "EXIT_OK", "Command", "compiled_study", "data_document", "json_number", "points",
           "read_study", "source_fields"]

EXIT_OK = 0
EXIT_BAD_INPUT = 2


@dataclass(frozen=True)
class Command:
    """One ``mixtype`` command: its name, help, options and what it does."""

    name: str
    help: str
    add_arguments: Callable[[argparse.ArgumentParser], None]
    run: Callable[[argparse.Namespace, TextIO, TextIO], int]
    description: str | None = None


def read_study(args: argparse.Namespace, err: TextIO) -> Study:
    """The study the options (and FILE) describe; its warnings go to ``err``."""
    study = build_study(args)
    err.writelines(f"mixtype: warning: {line}\n" for line in study.warnings)
    return study


def compiled_study(study: Study) -> CompiledEquation:
    """The study's equation compiled with its data; an error names the option the user typed."""
    try:
        return compile_with_data(study.equation, study.data)
    except ExpressionError as error:
        option = error.field.replace("definitions.", "--let ").replace("parameters.", "--param ")
        option = {"a": "--a", "b": "--b", "c": "--c", "variables": "--vars"}.get(option, option)
        hint = ""
        if error.message.startswith("unknown name") and study.data is None:
            hint = " (if it is a data quantity, give its file with --data)"
        raise UsageError(f"{option}: {error.message}" + (f" (column {error.column})" if error.column else "")
                         + hint) from None


points = point_list   # an (n, 2) array of points as JSON pairs (core.results.document)


def data_document(study: Study) -> list[dict]:
    """Which data files a result was computed from: path, checksum, quantities."""
    return data_files_document(study.data)


def source_fields(study: Study) -> dict:
    """Where a study comes from: ``source`` (FILE, its equation and domain) and ``project_checksum`` (the
    SHA-256 of FILE's bytes); no fields without FILE."""
    if not study.source:
        return {}
    return {"source": study.source, "project_checksum": project_file_checksum(study.source["file"])}
