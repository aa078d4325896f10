"""What the ``mixtype`` commands share when they run: the study they work on, compiled, and JSON helpers.

The Command record, the exit statuses and UsageError live in core.cli.options (no numpy, for --help); this
module is imported by the commands' implementation modules, which load only when their command runs.
"""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from typing import TextIO

from core.cli.options import UsageError
from core.cli.study import Study, build_study
from core.equations.compiled import CompiledEquation, compile_equation
from core.equations.equation import Equation
from core.equations.language import ExpressionError
from core.results.document import source_document

__all__ = ["compiled_study", "compiled_with_names", "read_study", "source_fields"]


def read_study(args: argparse.Namespace, err: TextIO, *, domain_required: bool = True) -> Study:
    """The study the options (and FILE) describe; its warnings go to ``err`` (``domain_required``: see
    core.cli.study.build_study)."""
    study = build_study(args, domain_required=domain_required)
    err.writelines(f"mixtype: warning: {line}\n" for line in study.warnings)
    return study


def compiled_study(study: Study) -> CompiledEquation:
    """The study's equation compiled with its data; an error names the option the user typed."""
    return compiled_with_names(study.equation, None if study.data is None else study.data.names)


def compiled_with_names(equation: Equation, data_names: Sequence[str] | None) -> CompiledEquation:
    """``equation`` compiled with the data quantities ``data_names`` (None: no data); an error names the
    option the user typed."""
    try:
        if data_names is None:
            return compile_equation(equation)
        # Here, not at the top: the data machinery loads only for studies with data (see core/cli/study.py)
        from core.project.data_files import compile_with_data

        return compile_with_data(equation, data_names)
    except ExpressionError as error:
        option = error.field.replace("definitions.", "--let ").replace("parameters.", "--param ")
        option = {"a": "--a", "b": "--b", "c": "--c", "variables": "--vars"}.get(option, option)
        hint = ""
        if error.message.startswith("unknown name") and data_names is None:
            hint = " (if it is a data quantity, give its file with --data)"
        raise UsageError(f"{option}: {error.message}" + (f" (column {error.column})" if error.column else "")
                         + hint) from None


def source_fields(study: Study) -> dict:
    """Where a study comes from: ``source`` (FILE, its equation and domain) and ``project_checksum`` (the
    SHA-256 of FILE's bytes); no fields without FILE."""
    return source_document(study.source)
