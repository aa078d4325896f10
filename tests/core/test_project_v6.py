"""Format version 6: the parameter sweeps of the studies (``sweeps``), with their last results and critical values."""

import json
from dataclasses import replace
from pathlib import Path

import pytest

from core.analysis.sweep import SweepRow, run_sweep, sweep_values
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.project.codec import ProjectError, project_from_dict, project_to_dict
from core.project.io import dumps_project, load_project, loads_project
from core.project.model import new_project
from core.project.sweeps import CriticalValue, SavedSweep

DATA = Path(__file__).resolve().parents[1] / "data"
V6 = DATA / "project-v6-all-fields.mixtype.json"


def test_the_version_6_sample_reads_as_written():
    project = load_project(V6)
    first, log, bare = project.sweeps
    assert first.key == ("sample: all fields", "main", "k") and (first.low, first.high, first.count) == (0.5, 2.0, 3)
    assert [row.value for row in first.rows] == [0.5, 1.25, 2.0] and first.rows[0].peak is None
    assert first.rows[1] == SweepRow(1.25, {"elliptic": 0.75, "parabolic": 0.0004878048780487805, "hyperbolic": 0.2,
                                            "undefined": 0.04951219512195122},
                                     {"elliptic": 1.3125, "parabolic": 1e-4, "hyperbolic": 0.35, "undefined": 0.0875},
                                     2, {"quantity": "alpha", "value": 2.5e-7, "at": [-0.0, 1.25]})
    assert first.critical == (CriticalValue(0.8125, "appears", (0.25, 1.25), "hyperbolic", (0.8, 0.825)),
                              CriticalValue(1.9, "vanishes", (1e-17, -0.5), "elliptic"))
    assert log.log and log.rows is None and log.critical is None
    values = log.values()
    assert len(values) == 41 and (values[0], values[20], values[-1]) == (1e-3, pytest.approx(1.0, rel=1e-14), 1e3)
    assert bare.rows == () and bare.critical == ()
    assert project.sweeps_of("sample: all fields", "main") == (first, log)
    assert project.equations[0].lower_order == {"d": "k*u", "e": "0", "f": "-1/(1 + x**2)"}
    assert project.equations[1].lower_order == {}
    assert project.equations[0].cauchy_data == {"line": "x + 2*y = 1/2", "u": "sin(s)", "du": "x**2 - 1"}
    assert project.equations[1].cauchy_data == {}
    assert dumps_project(project) == V6.read_text(encoding="utf-8")


@pytest.mark.parametrize(("lower_order", "expected"), [
    ({"d": "t*"}, "$.equations[1].lower_order.d: syntax error"),
    ({"f": "nowhere + 1"}, "$.equations[1].lower_order.f: column 1: unknown name 'nowhere'"),
    ({"g": "1"}, "$.equations[1].lower_order: unknown field 'g'"),
])
def test_bad_lower_order_terms_are_refused_with_their_place(lower_order, expected):
    data = json.loads(V6.read_text(encoding="utf-8"))
    data["equations"][1]["lower_order"] = lower_order
    data["data_sources"] = []      # names nowhere defined are then errors, not data quantities
    with pytest.raises(ProjectError) as raised:
        project_from_dict(data)
    assert any(expected in str(problem) for problem in raised.value.problems), raised.value.problems


@pytest.mark.parametrize(("index", "cauchy_data", "expected"), [
    (0, {"line": "x**2 + y = 1"}, "$.equations[0].cauchy_data.line: 'x**2 + y = 1' is not a straight line"),
    (0, {"line": "x + y"}, "$.equations[0].cauchy_data.line: expected one '='"),
    (0, {"u": "sin(s) + k"}, "$.equations[0].cauchy_data.u: unknown name 'k' (column 10)"),
    (0, {"du": "s*x"}, "$.equations[0].cauchy_data.du: use either s (along the line) or x and y, not both"),
    (0, {"w": "1"}, "$.equations[0].cauchy_data: unknown field 'w'"),
    (1, {"u": "t"}, "$.equations[1].cauchy_data: a variable is called s"),
])
def test_bad_cauchy_data_are_refused_with_their_place(index, cauchy_data, expected):
    data = json.loads(V6.read_text(encoding="utf-8"))
    data["equations"][index]["cauchy_data"] = cauchy_data
    with pytest.raises(ProjectError) as raised:
        project_from_dict(data)
    assert any(expected in str(problem) for problem in raised.value.problems), raised.value.problems


def test_older_files_have_no_sweeps_and_the_migration_places_the_list_after_the_seeds():
    for sample in sorted(DATA.glob("project-v[1-5]-*.mixtype.json")):
        assert load_project(sample).sweeps == (), sample.name
    written = project_to_dict(load_project(DATA / "project-v5-all-fields.mixtype.json"))
    keys = list(written)
    assert keys[keys.index("seeds") + 1] == "sweeps" and written["sweeps"] == []


def test_sweeps_are_optional_in_a_version_6_file_and_results_are_optional_in_a_sweep():
    data = json.loads(V6.read_text(encoding="utf-8"))
    del data["sweeps"]
    assert project_from_dict(data).sweeps == ()
    data = json.loads(V6.read_text(encoding="utf-8"))
    del data["sweeps"][0]["rows"], data["sweeps"][0]["critical_values"]
    sweep = project_from_dict(data).sweeps[0]
    assert sweep.rows is None and sweep.critical is None


def test_a_computed_sweep_is_saved_and_read_back_to_the_bit():
    equation = Equation("1", "0", "x**2 + y**2 - p", definitions={"q": "p - x**2"},
                        parameters={"p": Parameter(0.25)}, name="disc")
    domain = Domain(-1.0, 1.0, -1.0, 1.0, 41, 41, name="square")
    computed = run_sweep(compile_equation(equation), domain, "p", sweep_values(0.01, 0.6, 4), quantity="q")
    saved = SavedSweep(("disc", "square"), "p", 0.01, 0.6, 4, rows=computed.rows)
    project = replace(new_project(equation, domain), sweeps=(saved,))
    again = loads_project(dumps_project(project))
    assert again.sweeps == (saved,) and again.sweeps[0].rows == computed.rows
    for row, read in zip(computed.rows, again.sweeps[0].rows, strict=True):
        assert read.areas == row.areas and read.fractions == row.fractions and read.peak == row.peak


def test_renaming_an_equation_or_domain_takes_its_sweeps_along():
    project = load_project(V6)
    renamed = project.with_equation(replace(project.equation("sample: all fields"), name="renamed"),
                                    replacing="sample: all fields")
    assert [s.study for s in renamed.sweeps] == [("renamed", "main"), ("renamed", "main"), ("second (s, t)", "odd sizes")]
    moved = renamed.with_domain(replace(project.domain("main"), name="moved"), replacing="main")
    assert [s.study[1] for s in moved.sweeps] == ["moved", "moved", "odd sizes"]
    assert loads_project(dumps_project(moved)) == moved


def test_with_sweep_replaces_the_sweep_of_the_same_study_and_parameter():
    project = load_project(V6)
    changed = project.with_sweep(SavedSweep(("sample: all fields", "main"), "k", 0.6, 1.8, 5))
    assert len(changed.sweeps) == 3 and changed.sweeps[0].count == 5 and changed.sweeps[0].rows is None
    added = project.with_sweep(SavedSweep(("second (s, t)", "main"), "free", 0.0, 1.0, 2))
    assert len(added.sweeps) == 4 and added.sweeps[-1].study == ("second (s, t)", "main")
    with pytest.raises(ValueError, match="two sweeps of 'k'"):
        replace(project, sweeps=(project.sweeps[0], project.sweeps[0]))
    with pytest.raises(ValueError, match="which the project does not hold"):
        project.with_sweep(SavedSweep(("nowhere", "main"), "k", 0.0, 1.0, 2))


@pytest.mark.parametrize(("change", "expected"), [
    (lambda s: s["study"].update(equation="nowhere"), "$.sweeps[0].study.equation: there is no equation named"),
    (lambda s: s["study"].update(domain="nowhere"), "$.sweeps[0].study.domain: there is no domain named"),
    (lambda s: s.update(low=2.0), "$.sweeps[0].high: must be above low (2.0), got 2.0"),
    (lambda s: s.update(log=True, low=0.0), "$.sweeps[0].low: a logarithmic sweep starts above 0"),
    (lambda s: s.update(count=1), "$.sweeps[0].count: "),
    (lambda s: s.update(count=1001), "$.sweeps[0].count: "),
    (lambda s: s.update(parameter="2k"), "$.sweeps[0].parameter: "),
    (lambda s: s["rows"][1]["fractions"].update(hyperbolic=1.5), "$.sweeps[0].rows[1].fractions.hyperbolic: "),
    (lambda s: s["rows"][1]["areas"].pop("undefined"), "$.sweeps[0].rows[1].areas: "),
    (lambda s: s["rows"][1].update(pockets=-1), "$.sweeps[0].rows[1].pockets: "),
    (lambda s: s["critical_values"][0].update(event="grows"), "$.sweeps[0].critical_values[0].event: "),
    (lambda s: s["critical_values"][0].update(type="mixed"), "$.sweeps[0].critical_values[0].type: "),
    (lambda s: s["critical_values"][0].update(value=0.9), "$.sweeps[0].critical_values[0].bracket: must hold"),
])
def test_bad_sweeps_are_one_line_each_with_their_place(change, expected):
    data = json.loads(V6.read_text(encoding="utf-8"))
    change(data["sweeps"][0])
    with pytest.raises(ProjectError) as caught:
        project_from_dict(data, source="v6")
    assert len(caught.value.problems) == 1 and caught.value.problems[0].startswith("v6: " + expected), \
        caught.value.problems


def test_a_second_sweep_of_the_same_parameter_is_refused_with_its_place():
    data = json.loads(V6.read_text(encoding="utf-8"))
    data["sweeps"].append(dict(data["sweeps"][1]))
    with pytest.raises(ProjectError) as caught:
        project_from_dict(data, source="v6")
    assert caught.value.problems == [("v6: $.sweeps[3].parameter: the study already has a sweep of 'upper_only' "
                                     "(one per parameter)")]


def test_the_dataclasses_check_their_values():
    study = ("e", "d")
    for bad in ({"low": 1.0, "high": 1.0}, {"count": 1}, {"count": True}, {"log": True, "low": -1.0},
                {"low": float("nan")}, {"parameter": "not a name"}, {"study": ("e",)}):
        options = {"study": study, "parameter": "p", "low": 0.0, "high": 1.0, "count": 3, **bad}
        with pytest.raises((ValueError, TypeError)):
            SavedSweep(**options)
    row = SweepRow(0.5, {"elliptic": 1.0, "parabolic": 0.0, "hyperbolic": 0.0, "undefined": 0.0},
                   {"elliptic": 1.0, "parabolic": 0.0, "hyperbolic": 0.0, "undefined": 0.0}, 0, None)
    for bad in ({"fractions": {"elliptic": 1.0}}, {"areas": {**row.areas, "elliptic": -1.0}}, {"pockets": 1.5},
                {"peak": {"quantity": "q", "value": 1.0}}, {"value": float("inf")}):
        with pytest.raises(ValueError):
            SavedSweep(study, "p", 0.0, 1.0, 3, rows=(replace(row, **bad),))
    for bad in ({"event": "grows"}, {"type": "mixed"}, {"at": (0.0,)}, {"bracket": (0.6, 0.7)}):
        with pytest.raises(ValueError):
            CriticalValue(**{"value": 0.5, "event": "appears", "at": (0.0, 0.0), **bad})
