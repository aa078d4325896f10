"""Running the `mixtype` command in-process for tests: exit status, stdout and stderr as text."""

import io
import json

from core.cli.main import main


def run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    status = main(list(argv), out=out, err=err)
    return status, out.getvalue(), err.getvalue()


def run_json(*argv: str) -> dict:
    status, out, err = run(*argv, "--json")
    assert status == 0, err
    return json.loads(out)
