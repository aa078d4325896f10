"""The ``mixtype`` script: --version, headless commands without Qt, one clear line when no window can open."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

import core
from gui.main_window import ABOUT_TEXT
from tests.ceilings import HANG_CEILING_S

ROOT = Path(__file__).resolve().parents[2]


def launch(*argv: str, environ: dict[str, str] | None = None) -> subprocess.CompletedProcess:
    """``python -m gui.launcher ARGV`` from the repository root (so this checkout's code runs)."""
    return subprocess.run([sys.executable, "-m", "gui.launcher", *argv], cwd=ROOT, capture_output=True,
                          text=True, env=environ, timeout=HANG_CEILING_S, check=False)


def without_display() -> dict[str, str]:
    """This process's environment without a display or a chosen Qt platform."""
    return {k: v for k, v in os.environ.items() if k not in {"DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM"}}


def test_version_is_printed():
    completed = launch("--version")
    assert completed.returncode == 0 and completed.stderr == ""
    assert completed.stdout == f"mixtype {core.__version__}\n"


def test_help_and_headless_commands_never_load_qt():
    script = """
import io, json, sys
from gui.launcher import main
runs = {}
for argv in (["--help"], ["--version"], ["templates"], ["classify", "--a", "y", "--b", "0", "--c", "1",
             "--domain", "-1", "1", "-1", "1", "--grid", "11", "--json"], ["probe", "--template", "tricomi",
             "--at", "0", "-0.5", "--json"]):
    out, err = io.StringIO(), io.StringIO()
    sys.stdout = out
    status = main(argv, out=out, err=err)
    sys.stdout = sys.__stdout__
    runs[argv[0]] = [status, out.getvalue()]
qt = sorted(name for name in sys.modules if name.split(".")[0] in {"PySide6", "shiboken6", "pyqtgraph"})
print(json.dumps({"runs": runs, "qt": qt}))
"""
    completed = subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True, text=True,
                               timeout=HANG_CEILING_S, check=True)
    report = json.loads(completed.stdout)
    assert report["qt"] == []
    assert {name: status for name, (status, _) in report["runs"].items()} == {
        "--help": 0, "--version": 0, "templates": 0, "classify": 0, "probe": 0}
    assert "render" in report["runs"]["--help"][1] and "classify" in report["runs"]["--help"][1]
    assert "full_potential" in report["runs"]["templates"][1]
    assert json.loads(report["runs"]["classify"][1])["grid"] == [11, 11]
    assert json.loads(report["runs"]["probe"][1])["type"] == "hyperbolic"  # y < 0 in y u_xx + u_yy


def test_help_and_version_load_no_numpy_sympy_or_platform_check():
    """The `mixtype` script's --help and --version build the parser only (bench/bench_startup.py times them)."""
    script = """
import io, json, sys
from gui.launcher import main
statuses = []
for argv in (["--help"], ["--version"], ["render", "--help"], ["trace", "--help"]):
    out = io.StringIO()
    sys.stdout = out
    statuses.append(main(argv, out=out, err=io.StringIO()))
    sys.stdout = sys.__stdout__
loaded = sorted(name for name in ("numpy", "sympy", "scipy", "jsonschema", "gui.platform_check", "PySide6")
                if name in sys.modules)
print(json.dumps({"statuses": statuses, "loaded": loaded}))
"""
    completed = subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True, text=True,
                               timeout=HANG_CEILING_S, check=True)
    assert json.loads(completed.stdout) == {"statuses": [0, 0, 0, 0], "loaded": []}


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="the display check runs on Linux")
@pytest.mark.parametrize("argv", [(), ("resources/demo/tricomi.mixtype.json",)])
def test_the_window_without_a_display_says_so_in_one_line(argv):
    completed = launch(*argv, environ=without_display())
    assert completed.returncode == 2 and completed.stdout == ""
    assert completed.stderr.count("\n") == 1
    assert completed.stderr.startswith("mixtype: the window cannot start: no display (DISPLAY is not set)")
    assert completed.stderr.endswith("; headless commands work: mixtype --help\n")


def test_render_reports_a_bad_file_in_one_line(tmp_path):
    completed = launch("render", str(tmp_path / "missing.mixtype.json"), "--out", str(tmp_path / "map.png"),
                       environ=without_display())
    assert completed.returncode == 2 and completed.stdout == ""
    lines = [line for line in completed.stderr.splitlines() if line.startswith("mixtype:")]
    assert len(lines) == 1 and "missing.mixtype.json" in lines[0]
    assert not (tmp_path / "map.png").exists()


def test_the_about_box_shows_the_version():
    assert f"<p>Version {core.__version__}</p>" in ABOUT_TEXT
