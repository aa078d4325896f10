"""``mixtype templates``: the equation templates that ``--template NAME`` accepts."""

from __future__ import annotations

import argparse
import json
from typing import TextIO

from core.cli.options import EXIT_OK, UsageError
from core.equations.templates import TemplateError, list_templates, load_template

__all__ = ["run"]


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """List the templates (options: core.cli.registry); returns the exit status."""
    try:
        templates = [load_template(name) for name in list_templates()]
    except TemplateError as error:
        raise UsageError(str(error)) from None
    if args.json:
        json.dump({"templates": [{"name": t.name, "title": t.title, "variables": list(t.equation.variables),
                                  "data_quantities": list(t.quantities), "trade": list(t.trade),
                                  "peak_quantity": t.peak_quantity} for t in templates]}, out)
        out.write("\n")
        return EXIT_OK
    width = max((len(t.name) for t in templates), default=0)
    for t in templates:
        data = f" (data: {', '.join(t.quantities)})" if t.quantities else ""
        out.write(f"{t.name:<{width}}  {t.title}{data}\n")
    return EXIT_OK
