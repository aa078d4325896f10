"""What the command line imports before it computes anything (house rule for start-up time, common practice,
no source; the times themselves are measured as ratios in bench/bench_startup.py, never here).

Each check runs ``core.cli.main.main`` in a fresh interpreter and asserts which packages it loaded.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from core.analysis.classify import DEFAULT_TOLERANCE
from core.analysis.tracing import MAX_BOUNCES
from core.cli import options
from tests.ceilings import HANG_CEILING_S
from tests.core.cli_runner import run

ROOT = Path(__file__).resolve().parents[2]
HEAVY = ("numpy", "sympy", "scipy", "jsonschema", "numexpr", "contourpy")
INLINE_CLASSIFY = ["classify", "--a", "y", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1", "--grid", "11",
                   "--json"]


def loaded_after(*argvs: list[str]) -> dict:
    """Run every argv in turn in one fresh interpreter: their exit statuses, outputs and the heavy packages
    (of HEAVY) and core modules loaded by then."""
    script = f"""
import io, json, sys
from core.cli.main import main
runs = []
for argv in {[list(argv) for argv in argvs]!r}:
    out, err = io.StringIO(), io.StringIO()
    sys.stdout = out  # argparse prints --help on sys.stdout
    status = main(argv, out=out, err=err)
    sys.stdout = sys.__stdout__
    runs.append([status, out.getvalue(), err.getvalue()])
heavy = sorted(name for name in {HEAVY!r} if name in sys.modules)
core = sorted(name for name in sys.modules if name.startswith("core."))
print(json.dumps({{"runs": runs, "heavy": heavy, "core": core}}))
"""
    completed = subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True, text=True,
                               timeout=HANG_CEILING_S, check=True)
    return json.loads(completed.stdout)


def test_help_version_and_every_command_help_load_no_numpy_sympy_or_scipy():
    commands = ["classify", "sweep", "probe", "trace", "critical", "check", "templates", "batch", "cauchy",
                "analyze"]
    report = loaded_after(["--help"], ["--version"], *([name, "--help"] for name in commands))
    assert [status for status, _, _ in report["runs"]] == [0] * (2 + len(commands))
    assert report["heavy"] == []
    assert report["core"] == ["core.cli", "core.cli.main", "core.cli.options", "core.cli.printable",
                              "core.cli.registry"]
    outputs = [out for _, out, _ in report["runs"]]
    assert all(name in outputs[0] for name in commands)
    assert outputs[1].startswith("mixtype ")
    assert "--save-project" in outputs[2] and "--sweep" in outputs[3] and "--at" in outputs[4]
    assert "--from" in outputs[5] and "--vary" in outputs[6] and "--between" in outputs[6]


def test_an_inline_classify_loads_what_it_computes_with_but_no_project_validation():
    report = loaded_after(INLINE_CLASSIFY)
    status, out, err = report["runs"][0]
    assert (status, err) == (0, "")
    assert json.loads(out)["grid"] == [11, 11]
    assert {"numpy", "sympy", "numexpr", "contourpy"} <= set(report["heavy"])
    assert "jsonschema" not in report["heavy"]
    assert "scipy" not in report["heavy"]                 # pockets and lines are labelled without scipy.ndimage
    assert not [name for name in report["core"]           # no data readers, templates, project files, certify
                if name.startswith(("core.project", "core.data.sources", "core.equations.templates",
                                    "core.certify"))]


def test_a_classify_of_a_project_file_still_validates_it_with_the_schema():
    report = loaded_after(["classify", "resources/demo/tricomi.mixtype.json", "--grid", "11", "--json"])
    assert report["runs"][0][0] == 0
    assert "jsonschema" in report["heavy"]


def test_the_tolerance_named_in_help_is_the_one_classification_uses(capsys):
    assert options.DEFAULT_TOLERANCE == DEFAULT_TOLERANCE
    assert options.MAX_BOUNCES == MAX_BOUNCES
    assert run("classify", "--help")[0] == 0
    assert f"else {DEFAULT_TOLERANCE:g})" in " ".join(capsys.readouterr().out.split())
