"""Broken, hostile and oversized project files: always a clean ProjectError naming the place, never code run."""

from __future__ import annotations

import builtins
import copy
import json
import random
from pathlib import Path

import pytest

from core.project.io import MAX_FILE_BYTES, ProjectError, load_project, loads_project
from core.project.model import Project

DATA = Path(__file__).resolve().parent.parent / "data"
SAMPLE = DATA / "project-v1-all-fields.mixtype.json"
TEXT = SAMPLE.read_text(encoding="utf-8")
BASE = json.loads(TEXT)


def _outcome(text) -> Project | ProjectError:
    """Load, and return the project or the ProjectError; any other exception fails the test."""
    try:
        return loads_project(text, source="broken.mixtype.json")
    except ProjectError as error:
        assert error.problems and all(line.startswith("broken.mixtype.json: ") for line in error.problems)
        assert str(error) == "\n".join(error.problems)
        return error


def _problems(mutate) -> list[str]:
    data = copy.deepcopy(BASE)
    mutate(data)
    outcome = _outcome(json.dumps(data))
    assert isinstance(outcome, ProjectError), "the broken file was accepted"
    return [line.removeprefix("broken.mixtype.json: ") for line in outcome.problems]


def test_every_truncation_of_a_sample_is_refused_cleanly():
    for end in range(len(TEXT)):
        outcome = _outcome(TEXT[:end])
        # a JSON document cut short is never complete, except when only trailing white space is lost
        assert isinstance(outcome, ProjectError) or not TEXT[end:].strip(), end
    assert isinstance(_outcome(TEXT), Project)


def test_random_byte_flips_give_a_project_or_a_clean_error():
    rng = random.Random(20250115)
    raw = TEXT.encode("utf-8")
    refused = 0
    for _ in range(400):
        data = bytearray(raw)
        for _ in range(rng.randint(1, 3)):
            data[rng.randrange(len(data))] = rng.randrange(256)
        refused += isinstance(_outcome(bytes(data)), ProjectError)
    assert refused > 300  # most flips break JSON, the schema or an expression


def test_not_utf8_and_empty_files():
    assert _outcome(b"\xff\xfe{}").problems == ["broken.mixtype.json: byte 0: the file is not UTF-8 text"]
    assert _outcome("").problems == ["broken.mixtype.json: the file is empty"]
    assert _outcome("  \n").problems == ["broken.mixtype.json: the file is empty"]
    assert isinstance(_outcome(b"\xef\xbb\xbf" + TEXT.encode()), Project)  # a UTF-8 byte-order mark is fine


def test_json_syntax_errors_give_line_and_column():
    (line,) = _outcome('{\n  "format": "mixtype-project",\n  "format_version" 1\n}').problems
    assert line == "broken.mixtype.json: line 3, column 20: not valid JSON (Expecting ':' delimiter)"


@pytest.mark.parametrize("literal", ["NaN", "Infinity", "-Infinity", "1e400", "-2.5e999"])
def test_non_finite_numbers_are_refused_where_they_stand(literal):
    text = TEXT.replace('"parabolic_tolerance": 2.5e-06', f'"parabolic_tolerance": {literal}')
    (line,) = _outcome(text).problems
    assert line == (f"broken.mixtype.json: $.view.parabolic_tolerance: {literal} is not a finite "
                    "double-precision number")


def test_huge_integers_are_refused():
    for digits in (400, 5000):
        text = TEXT.replace('"curves": 11', '"curves": ' + "9" * digits)
        (line,) = _outcome(text).problems
        assert line.startswith("broken.mixtype.json: $.seeds[2].curves: ")


def test_repeated_keys_are_refused():
    text = TEXT.replace('"label": "pin with label"', '"label": "pin with label", "label": "again"')
    assert _outcome(text).problems == ["broken.mixtype.json: $.pins[0]: the key 'label' appears more than once"]


def test_deep_json_nesting_is_refused():
    for depth in (30, 5000, 200_000):
        text = TEXT.replace('"notes": "', '"deep": ' + "[" * depth + "]" * depth + ', "notes": "')
        (line,) = _outcome(text).problems
        assert "nested" in line


def test_huge_files_are_refused_before_parsing(tmp_path):
    big = TEXT.replace('"notes": "', '"notes": "' + "x" * MAX_FILE_BYTES)
    assert "longer than" in str(_outcome(big))
    path = tmp_path / "big.mixtype.json"
    path.write_text(big, encoding="utf-8")
    with pytest.raises(ProjectError, match=r"big\.mixtype\.json: the file is \d+ bytes, more than the 16 MiB"):
        load_project(path)


def test_unreadable_paths_give_a_project_error(tmp_path):
    with pytest.raises(ProjectError, match=r"missing\.mixtype\.json: cannot read the file \(No such file"):
        load_project(tmp_path / "missing.mixtype.json")
    with pytest.raises(ProjectError, match="cannot read the file"):
        load_project(tmp_path)


@pytest.mark.parametrize("payload", [
    "[1, 2, 3]", '"a project"', "null", "42", "{}", '{"format": "mixtype-project"}',
])
def test_json_that_is_not_a_project(payload):
    outcome = _outcome(payload)
    assert isinstance(outcome, ProjectError)
    assert len(outcome.problems) == 1 and ": $" in outcome.problems[0]


def test_wrong_types_are_each_reported_with_their_path():
    def mutate(d):
        d["notes"] = 3
        d["pins"][1]["at"] = [True, None]
        d["domains"][0]["nodes"] = [201.5, "9"]
        d["view"]["layers"]["legend"] = "yes"
        d["equations"][1]["coefficients"]["a"] = 1.0
        d["seeds"] = {}
    assert sorted(_problems(mutate)) == sorted([
        "$.notes: must be text, not a number",
        "$.pins[1].at[0]: must be a number, not true/false",
        "$.pins[1].at[1]: must be a number, not null",
        "$.domains[0].nodes[0]: must be a whole number, not 201.5",
        "$.domains[0].nodes[1]: must be a whole number, not text",
        "$.view.layers.legend: must be true or false, not text",
        "$.equations[1].coefficients.a: must be text, not a number",
        "$.seeds: must be a list, not an object",
    ])


def test_missing_and_extra_fields():
    def mutate(d):
        del d["view"]
        del d["equations"][0]["coefficients"]["b"]
        d["domains"][1]["colour"] = "red"
        d["pins"][0]["note"] = ""
    assert sorted(_problems(mutate)) == sorted([
        "$: the field 'view' is missing",
        "$.equations[0].coefficients: the field 'b' is missing",
        "$.domains[1]: unknown field 'colour' (fields allowed: name, nodes, x_range, y_range)",
        "$.pins[0]: unknown field 'note' (fields allowed: at, label, study)",
    ])


def test_seed_shapes():
    def mutate(d):
        d["seeds"][0]["curves"] = 3
        d["seeds"][1]["families"] = [3, 3]
        del d["seeds"][2]["end"]
        d["seeds"][3]["kind"] = "ray"
    assert sorted(_problems(mutate)) == sorted([
        "$.seeds[0]: a single-point seed has no 'end' or 'curves' (use \"kind\": \"segment\")",
        "$.seeds[1].families[0]: must be one of 1, 2",
        "$.seeds[1].families[1]: must be one of 1, 2",
        "$.seeds[1].families: must not list the same item twice",
        "$.seeds[2]: the field 'end' is missing",
        "$.seeds[3].kind: must be one of \"point\", \"segment\"",
        "$.seeds[3]: a single-point seed has no 'end' or 'curves' (use \"kind\": \"segment\")",
    ])


def test_meaning_problems_are_reported_together():
    def mutate(d):
        d["equations"][1]["name"] = d["equations"][0]["name"]
        d["domains"][1]["x_range"] = [2.0, -2.0]
        d["equations"][0]["parameters"]["k"]["minimum"] = 5.0
        d["equations"][0]["parameters"]["free"]["maximum"] = -1.0
        d["equations"][0]["coefficients"]["c"] = "1 + q"
        d["equations"][0]["definitions"]["v"] = "u/"
        d["shown"]["domain"] = "elsewhere"
    assert _problems(mutate) == [
        "$.equations[1].name: equation 'sample: all fields' is already the name of equations[0]",
        "$.equations[0].parameters.k: the slider minimum 5.0 must be less than its maximum 2.0",
        "$.equations[0].parameters.free: the value 0.30000000000000004 lies outside the slider range [, -1.0]",
        "$.equations[0].definitions.v: syntax error: invalid syntax",
        ("$.equations[0].coefficients.c: column 5: unknown name 'q' (and the project lists no data source that "
         "could provide it)"),
        "$.domains[1].x_range: the minimum 2.0 must be less than the maximum -2.0",
        ("$.shown.equation: there is no equation named 'second (s, t)' (the project has 'sample: all fields', "
        "'sample: all fields')"),
        "$.shown.domain: there is no domain named 'elsewhere' (the project has 'main', 'odd sizes')",
    ]


def test_definition_cycles_and_name_clashes():
    def cycle(d):
        d["equations"][0]["definitions"].update(u="v + 1", v="alpha*2", alpha="u")
    (line,) = _problems(cycle)
    assert line.startswith("$.equations[0].definitions.") and "cycle" in line and "u -> " in line

    def clash(d):
        d["equations"][0]["parameters"]["sin"] = {"value": 1.0, "unit": "", "description": ""}
    assert _problems(clash) == [
        "$.equations[0].parameters.sin: parameter 'sin' is the name of a built-in function or constant"]

    def names(d):
        d["equations"][0]["definitions"]["1st"] = "x"
        d["equations"][0]["variables"] = ["x", "x"]
    assert sorted(_problems(names)) == [
        ('$.equations[0].definitions["1st"]: the name must start with a letter and hold only ASCII letters, '
        "digits and '_'")]


def test_bad_names_timestamps_and_ranges():
    def mutate(d):
        d["equations"][0]["name"] = " padded"
        d["domains"][0]["name"] = ""
        d["metadata"]["modified"] = "yesterday"
        d["view"]["parabolic_tolerance"] = 1.0
        d["domains"][0]["nodes"] = [1, 9000]
    assert sorted(_problems(mutate)) == sorted([
        "$.equations[0].name: must not be empty, start or end with white space, or hold control characters",
        "$.domains[0].name: must not be empty",
        "$.domains[0].name: must not be empty, start or end with white space, or hold control characters",
        "$.metadata.modified: must be a UTC time written like 2024-03-05T14:07:09Z",
        "$.view.parabolic_tolerance: must be less than 1, not 1.0",
        "$.domains[0].nodes[0]: must be at least 2, not 1",
        "$.domains[0].nodes[1]: must be at most 8192, not 9000",
    ])
    assert _problems(lambda d: d["metadata"].update(created="2023-02-29T10:00:00Z")) == [
        "$.metadata.created: is not a real date and time"]


def test_lone_surrogates_are_refused():
    text = TEXT.replace('"label": "pin with label"', '"label": "pin \\ud800"')
    assert _outcome(text).problems == [
        "broken.mixtype.json: $.pins[0].label: text holds a lone UTF-16 surrogate (not valid Unicode)"]


HOSTILE = [
    ("__import__('os').system('touch {marker}')", "only plain function names can be called"),
    ("exec('open(\"{marker}\", \"w\")')", "unknown function 'exec'"),
    ("eval('1')", "unknown function 'eval'"),
    ("x.__class__.__mro__", "attribute access ('.') is not allowed"),
    ("(lambda: 1)()", "only plain function names can be called"),
    ("[c for c in ().__class__.__base__.__subclasses__()]", "comprehensions are not allowed"),
    ("x**99999999", "exponent 1e+08 is larger than 64"),
    ("10**10**10", "overflows double precision"),
    ("9" * 400, "integer is too large"),
    ("(" * 250 + "x" + ")" * 250, "too many nested parentheses"),
    ("sin(" * 300 + "x" + ")" * 300, "too many nested parentheses"),
    ("-" * 1500 + "x", "nested too deeply"),
    ("x" + "+x" * 2000, "longer than 2000 characters"),
    ("open('{marker}', 'w')", "unknown function 'open'"),
    ("'text'", "only numbers are allowed here"),
    ("x if y else 1", "'if ... else' is not allowed"),
    ("y; import os", "invalid syntax"),
]


@pytest.mark.parametrize("expression, expected", HOSTILE, ids=[h[1][:24] for h in HOSTILE])
def test_hostile_expressions_are_refused_and_never_run(expression, expected, tmp_path, monkeypatch):
    marker = tmp_path / "executed"
    calls = []

    def forbidden(name):
        def record(*args, **kwargs):
            calls.append(name)
            raise AssertionError(f"{name} called while loading a project")
        return record

    monkeypatch.setattr(builtins, "eval", forbidden("eval"))
    monkeypatch.setattr(builtins, "exec", forbidden("exec"))
    text = expression.replace("{marker}", str(marker))
    problems = _problems(lambda d: d["equations"][0]["coefficients"].update(b=text))
    monkeypatch.undo()
    assert len(problems) == 1 and problems[0].startswith("$.equations[0].coefficients.b: ")
    assert expected in problems[0], problems[0]
    assert not marker.exists() and calls == []

