"""``mixtype check FILE``: validate a project file, list every problem in it and open its data files.

A missing or unreadable data file exits with status 2; a data file changed since the project was saved is
only a warning on stderr.
"""

from __future__ import annotations

import argparse
import json
from typing import TextIO

from core.cli.options import EXIT_BAD_INPUT, EXIT_OK, UsageError
from core.data.limits import data_cap_raised
from core.project.data_files import open_project_data
from core.project.io import CURRENT_FORMAT_VERSION, ProjectError, load_project

__all__ = ["run"]


def _count(n: int, what: str) -> str:
    return f"{n} {what}{'s' * (n != 1)}"


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Validate a project file and open its data: a summary, or every problem (exit status 2)."""
    try:
        project = load_project(args.file)
    except ProjectError as error:
        if args.json:
            json.dump({"file": args.file, "valid": False, "problems": error.problems}, out)
            out.write("\n")
            return EXIT_BAD_INPUT
        raise UsageError(str(error)) from None
    with open(args.file, "rb") as stream:  # valid, hence small and a JSON object with a version number
        version = json.loads(stream.read())["format_version"]
    with data_cap_raised(args.data_cap):
        opened = open_project_data(project, args.file, allow_outside=args.allow_outside_data)
    summary = {"file": args.file, "valid": True, "format_version": version,
               "equations": list(project.equation_names), "domains": list(project.domain_names),
               "pins": len(project.pins), "seeds": len(project.seeds), "sweeps": len(project.sweeps),
               "shown": {"equation": project.shown_equation, "domain": project.shown_domain},
               "data": {"files": len(project.data_sources), "quantities": list(opened.names),
                        "problems": list(opened.problems), "changed": list(opened.changed)}}
    status = EXIT_BAD_INPUT if opened.problems else EXIT_OK
    if args.json:
        json.dump(summary, out)
        out.write("\n")
        return status
    upgrade = f" (saving writes format version {CURRENT_FORMAT_VERSION})" if version != CURRENT_FORMAT_VERSION else ""
    files = f", {_count(len(project.data_sources), 'data file')}" if project.data_sources else ""
    files += f", {_count(len(project.sweeps), 'sweep')}" if project.sweeps else ""
    out.write(f"{args.file}: valid, format version {version}{upgrade}; {_count(len(project.equations), 'equation')}, "
              f"{_count(len(project.domains), 'domain')}, {_count(len(project.pins), 'pin')}, "
              f"{_count(len(project.seeds), 'seed')}{files}; shows {project.shown_equation!r} on "
              f"{project.shown_domain!r}\n")
    err.writelines(f"mixtype: warning: {line}\n" for line in opened.changed)
    err.writelines(f"mixtype: {line}\n" for line in opened.problems)
    return status
