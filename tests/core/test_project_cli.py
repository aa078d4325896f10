"""The command line with project files: check FILE, and classify / probe / trace taking FILE plus overrides."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from core.analysis.classify import classify_grid
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.project.io import ProjectError, load_project
from core.project.model import demo_project_path
from tests.ceilings import HANG_CEILING_S
from tests.core.cli_runner import run, run_json

ROOT = Path(__file__).resolve().parents[2]
TRICOMI = str(demo_project_path("tricomi"))
BUMP = str(demo_project_path("transonic_bump"))




# -- check ---------------------------------------------------------------------------------------------
def test_check_summarises_a_valid_file_in_one_line():
    status, out, err = run("check", TRICOMI)
    assert status == 0 and err == ""
    assert out == (f"{TRICOMI}: valid, format version 6; 2 equations, 2 domains, 3 pins, 3 seeds; "
                   "shows 'Tricomi' on 'around the origin'\n")
    document = run_json("check", TRICOMI)
    assert document == {"file": TRICOMI, "valid": True, "format_version": 6,
                        "equations": ["Tricomi", "Tricomi, tilted"],
                        "domains": ["around the origin", "hyperbolic half"], "pins": 3, "seeds": 3, "sweeps": 0,
                        "shown": {"equation": "Tricomi", "domain": "around the origin"},
                        "data": {"files": 0, "quantities": [], "problems": [], "changed": []}}


def _broken_copy(tmp_path) -> Path:
    data = json.loads(Path(TRICOMI).read_text(encoding="utf-8"))
    data["equations"][0]["coefficients"]["a"] = "y +"
    data["equations"][1]["definitions"]["q"] = "q + 1"
    data["domains"][1]["y_range"] = [1.0, 0.0]
    path = tmp_path / "broken.mixtype.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    return path


def test_check_lists_every_problem_and_exits_2(tmp_path):
    path = _broken_copy(tmp_path)
    with pytest.raises(ProjectError) as caught:
        load_project(path)
    assert len(caught.value.problems) == 3
    status, out, err = run("check", str(path))
    assert status == 2 and out == ""
    assert err.splitlines() == [f"mixtype: {problem}" for problem in caught.value.problems]
    status, out, _ = run("check", str(path), "--json")
    assert status == 2 and json.loads(out) == {"file": str(path), "valid": False,
                                               "problems": caught.value.problems}


def test_a_broken_file_gives_one_line_elsewhere(tmp_path):
    path = _broken_copy(tmp_path)
    status, out, err = run("classify", str(path))
    assert status == 2 and out == ""
    assert err.count("\n") == 1
    assert err.startswith(f"mixtype: {path}: $.equations[0].coefficients.a: ")
    assert err.endswith(f"(and 2 more problems: run 'mixtype check {path}')\n")
    status, _, err = run("check", str(tmp_path / "absent.mixtype.json"))
    assert status == 2 and "cannot read the file" in err


# -- classify with a file ------------------------------------------------------------------------------
def test_classify_uses_the_shown_equation_domain_and_tolerance():
    document = run_json("classify", TRICOMI, "--raw")
    project = load_project(TRICOMI)
    equation, domain = project.shown()
    type_map = classify_grid(compile_equation(equation), domain, tolerance=project.view.parabolic_tolerance)
    assert document["grid"] == [241, 161] and document["domain"] == [-1.5, 1.5, -1.0, 1.0]
    assert document["tolerance"] == 1e-8
    assert document["fractions"] == {k: float(v) for k, v in type_map.fractions.items()}
    assert document["source"] == {"file": TRICOMI, "equation": "Tricomi", "domain": "around the origin"}


def test_inline_options_override_the_file():
    # Tricomi y u_xx + u_yy: the type is the sign of -y; flipping a makes it the sign of y (closed form)
    flipped = run_json("classify", TRICOMI, "--a=-y", "--grid", "21", "--raw")
    assert flipped["grid"] == [21, 21]
    assert flipped["fractions"]["elliptic"] == pytest.approx(10 / 21)
    assert flipped["fractions"]["parabolic"] == pytest.approx(1 / 21)
    shifted = run_json("classify", TRICOMI, "--domain", "-1", "1", "0.5", "2", "--raw")
    assert shifted["grid"] == [241, 161] and shifted["fractions"]["elliptic"] == 1.0
    named = run_json("classify", TRICOMI, "--domain", "hyperbolic half", "--grid", "11", "--raw")
    assert named["domain"] == [-1.5, 1.5, -1.0, 0.0] and named["source"]["domain"] == "hyperbolic half"
    assert named["fractions"]["elliptic"] == 0.0
    tilted = run_json("classify", TRICOMI, "--equation", "Tricomi, tilted", "--param", "slope=0",
                      "--grid", "21", "--raw")
    assert tilted["fractions"]["parabolic"] == pytest.approx(1 / 21)
    assert run_json("classify", TRICOMI, "--tolerance", "0.5", "--grid", "11", "--raw")["tolerance"] == 0.5


def test_the_free_stream_mach_number_can_be_overridden():
    assert run_json("classify", BUMP, "--grid", "61", "--raw")["fractions"]["hyperbolic"] > 0
    subsonic = run_json("classify", BUMP, "--grid", "61", "--raw", "--param", "mach=0.5")
    assert subsonic["fractions"]["hyperbolic"] == 0.0
    beyond_slider = run_json("classify", BUMP, "--grid", "61", "--raw", "--param", "mach=0.99")
    assert beyond_slider["fractions"]["hyperbolic"] > 0


def test_save_project_writes_the_inline_equation_and_domain(tmp_path):
    path = tmp_path / "inline.mixtype.json"
    status, out, err = run("classify", "--a", "y*k", "--b", "0", "--c", "1", "--param", "k=2", "--let",
                           "s=x+y", "--domain", "-1", "1", "-2", "2", "--grid", "11", "21", "--tolerance",
                           "1e-6", "--raw", "--save-project", str(path))
    assert status == 0 and err == "" and out.endswith(f"saved the equation and domain as a project in {path}\n")
    project = load_project(path)
    equation, domain = project.shown()
    assert (equation.a, equation.b, equation.c) == ("y*k", "0", "1")
    assert dict(equation.definitions) == {"s": "x+y"} and equation.parameters["k"].value == 2.0
    assert domain == Domain(-1.0, 1.0, -2.0, 2.0, 11, 21, "domain")
    assert project.view.parabolic_tolerance == 1e-6
    assert run("check", str(path))[0] == 0
    status, _, err = run("classify", "--a", "y", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1",
                         "--grid", "11", "--raw", "--save-project", str(tmp_path / "no" / "such" / "p.json"))
    assert status == 2 and err.startswith("mixtype: --save-project ") and err.count("\n") == 1


# -- probe and trace with a file ---------------------------------------------------------------------------
def test_probe_without_a_point_probes_every_pin():
    document = run_json("probe", TRICOMI)
    assert [(p["label"], p["type"]) for p in document["pins"]] == [
        ("elliptic side", "elliptic"), ("hyperbolic side", "hyperbolic"), ("on the parabolic line", "parabolic")]
    # Tricomi at (0.5, -0.5): a = -0.5, b = 0, c = 1, D = 2 (closed form)
    assert document["pins"][1]["discriminant"] == 2.0
    single = run_json("probe", TRICOMI, "--at", "0.25", "-1")
    assert single["type"] == "hyperbolic" and single["discriminant"] == 4.0


def test_trace_without_a_point_follows_the_project_seeds():
    # Tricomi characteristics in y < 0: x -/+ (2/3)(-y)^(3/2) is constant along each family (closed form)
    document = run_json("trace", TRICOMI)
    project = load_project(TRICOMI)
    assert [s["label"] for s in document["seeds"]] == [s.label for s in project.seeds]
    for seed, entry in zip(project.seeds, document["seeds"], strict=True):
        assert entry["families"] == list(seed.families)
        assert len(entry["curves"]) == len(seed.points()) * len(seed.families)
        for curve in entry["curves"]:
            points = np.array(curve["points"])
            assert len(points) > 5
            below = points[points[:, 1] < 0]
            invariants = [below[:, 0] + sign * (2.0 / 3.0) * (-below[:, 1]) ** 1.5 for sign in (1.0, -1.0)]
            spreads = sorted(float(np.ptp(v)) for v in invariants)
            assert spreads[0] < 1e-5 < spreads[1]


def test_probe_and_trace_need_a_point_without_a_file_or_pins(tmp_path):
    inline = ("--a", "y", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1")
    assert run("probe", *inline)[2] == "mixtype: missing --at X Y (or give a project FILE to probe its pins)\n"
    assert run("trace", *inline)[2] == "mixtype: missing --from X Y (or give a project FILE to trace from its seeds)\n"
    empty = tmp_path / "empty.mixtype.json"
    assert run("classify", *inline, "--grid", "5", "--raw", "--save-project", str(empty))[0] == 0
    assert run("probe", str(empty))[2] == f"mixtype: {empty}: the project has no pins; give --at X Y\n"
    assert run("trace", str(empty))[2] == f"mixtype: {empty}: the project has no seeds; give --from X Y\n"


def test_names_that_do_not_exist_and_names_without_a_file():
    status, _, err = run("classify", TRICOMI, "--equation", "nothing")
    assert status == 2 and err == (f"mixtype: {TRICOMI}: no equation named 'nothing'; the project has "
                                   "'Tricomi', 'Tricomi, tilted'\n")
    status, _, err = run("probe", TRICOMI, "--domain", "nowhere")
    assert status == 2 and "no domain named 'nowhere'" in err
    status, _, err = run("classify", "--a", "y", "--b", "0", "--c", "1", "--domain", "square")
    assert status == 2 and "a domain NAME picks a domain of a project FILE, and no FILE was given" in err
    status, _, err = run("classify", "--a", "y", "--b", "0", "--c", "1", "--domain", "0", "1", "0", "1",
                         "--equation", "tricomi")
    assert status == 2 and "--equation NAME picks an equation of a project FILE" in err
    status, _, err = run("classify", TRICOMI, "--domain", "1", "2", "3")
    assert status == 2 and "got 3 values" in err


def test_the_installed_entry_point_checks_a_file():
    completed = subprocess.run([sys.executable, "-m", "core.cli.main", "check", TRICOMI], cwd=ROOT,
                               capture_output=True, text=True, timeout=HANG_CEILING_S, check=False)
    assert completed.returncode == 0 and completed.stderr == ""
    assert completed.stdout.startswith(f"{TRICOMI}: valid, format version 6; 2 equations")
