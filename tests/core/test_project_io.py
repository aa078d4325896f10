"""Project files: round trips, stable bytes, sample files of every version, migrations, schema agreement."""

from __future__ import annotations

import json
import math
import struct
from dataclasses import replace
from datetime import UTC, datetime
from pathlib import Path

import jsonschema
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import core
from core.domain import Domain
from core.equations.equation import Equation, Parameter
from core.equations.language import ExpressionError, check_name
from core.equations.trade import TRADE_INPUTS
from core.project.io import (
    CURRENT_FORMAT_VERSION,
    ProjectError,
    dumps_project,
    load_project,
    loads_project,
    migrate,
    project_from_dict,
    project_to_dict,
    save_project,
)
from core.project.migrate import MIGRATIONS, MigrationError
from core.project.migrate import migrate as migrate_data
from core.project.model import DataSourceRef, Metadata, Pin, Project, Seed, ViewSettings, new_project
from core.project.schema import project_schema, schema_path, schema_text

DATA = Path(__file__).resolve().parent.parent / "data"
SAMPLES = sorted(DATA.glob("project-v*.mixtype.json"))
T0 = datetime(2025, 3, 1, 12, 0, 0, tzinfo=UTC)
T1 = datetime(2025, 3, 2, 8, 30, 15, tzinfo=UTC)


def _bits(value: float) -> bytes:
    return struct.pack("<d", value)


def _project_key(project: Project):
    """Everything in a project, with the order of definitions and parameters and the bits of every float."""
    def floats(obj):
        return [_bits(float(v)) for v in obj]
    return (
        project,
        [(tuple(e.definitions.items()), tuple(e.parameters.items()),
          [floats([p.value] + [v for v in (p.minimum, p.maximum) if v is not None]) for p in e.parameters.values()])
         for e in project.equations],
        [floats([d.xmin, d.xmax, d.ymin, d.ymax]) for d in project.domains],
        [floats([p.x, p.y]) for p in project.pins],
        [floats([*s.start, *(s.end or ())]) for s in project.seeds],
        _bits(project.view.parabolic_tolerance),
    )


# -- generated projects ----------------------------------------------------------------------------------
def _valid_identifier(name: str) -> bool:
    try:
        check_name(name)
    except ExpressionError:
        return False
    return name not in ("a", "b", "c")


identifiers = st.from_regex(r"[A-Za-z][A-Za-z0-9_]{0,8}", fullmatch=True).filter(_valid_identifier)
titles = st.text(st.characters(codec="utf-8", exclude_categories=("Cc", "Cs")), min_size=1, max_size=30).map(
    str.strip).filter(bool)
free_text = st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=40)
finite = st.floats(allow_nan=False, allow_infinity=False)
coordinates = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False)


@st.composite
def parameters(draw):
    value = draw(st.floats(min_value=-1e3, max_value=1e3, allow_nan=False))
    low = draw(st.none() | st.floats(min_value=-1e4, max_value=value, allow_nan=False))
    high = draw(st.none() | st.floats(min_value=value, max_value=1e4, allow_nan=False))
    if low is not None and high is not None and not low < high:
        low = None
    return Parameter(value, low, high, draw(free_text), draw(free_text))


@st.composite
def equations(draw, name, data_names=()):
    variables = draw(st.lists(identifiers.filter(lambda n: n not in data_names), min_size=2, max_size=2,
                              unique=True))
    names = draw(st.lists(identifiers.filter(lambda n: n not in variables and n not in data_names), max_size=5,
                          unique=True))
    split = draw(st.integers(0, len(names)))
    parameter_names, definition_names = names[:split], names[split:]
    params = {n: draw(parameters()) for n in parameter_names}
    x, y = variables
    usable = [x, y, *parameter_names, *data_names]
    if data_names:  # a data derivative, as diff(NAME, VAR)
        usable.append(f"diff({draw(st.sampled_from(data_names))}, {draw(st.sampled_from(variables))})")
    definitions = {}
    for n in definition_names:  # each may use the earlier ones: no cycles
        term = draw(st.sampled_from(usable))
        definitions[n] = draw(st.sampled_from([f"{term}**2", f"sin({term}) + 1", f"exp(-abs({term}))",
                                               f"piecewise({term} < 0, 1, 2*{term})"]))
        usable.append(n)
    pick = st.sampled_from(usable)
    a, b, c = (draw(st.sampled_from([f"{draw(pick)}", f"1 + {draw(pick)}**2", f"-{draw(pick)}*{draw(pick)}",
                                     "0", "2.5e-3"])) for _ in range(3))
    values = [n for n in usable if not n.startswith("diff(")] + list(definitions)
    trade = {}
    for kind in draw(st.lists(st.sampled_from(sorted(TRADE_INPUTS)), max_size=2, unique=True)):
        required, optional = TRADE_INPUTS[kind]
        inputs = [*required, *draw(st.lists(st.sampled_from(optional), unique=True))] if optional else required
        trade[kind] = {i: draw(st.sampled_from(values)) for i in inputs}
    peak = draw(st.just("") | st.sampled_from(values))
    return Equation(a, b, c, variables=tuple(variables), definitions=definitions, parameters=params, name=name,
                    description=draw(free_text), trade=trade, peak_quantity=peak)


paths = st.lists(st.text(st.characters(codec="utf-8", exclude_categories=("Cc", "Cs"), exclude_characters="/"),
                         min_size=1, max_size=12).filter(str.strip), min_size=1, max_size=3).map("/".join)


@st.composite
def data_sources(draw):
    names = draw(st.dictionaries(identifiers, identifiers, max_size=3))
    if len(set(names.values())) != len(names):
        names = {}
    return DataSourceRef(path=draw(st.sampled_from(["", "../", "/abs/"])) + draw(paths),
                         checksum=draw(st.from_regex(r"[0-9a-f]{64}", fullmatch=True)),
                         format=draw(st.none() | st.sampled_from(["csv", "npz", "netcdf", "vtu", "vtk"])),
                         names=names, note=draw(free_text))


@st.composite
def domains(draw, name):
    x0, y0 = draw(coordinates), draw(coordinates)
    width = draw(st.floats(min_value=1e-6, max_value=1e6))
    height = draw(st.floats(min_value=1e-6, max_value=1e6))
    return Domain(x0, x0 + width, y0, y0 + height, draw(st.integers(2, 8192)), draw(st.integers(2, 8192)), name)


@st.composite
def seeds(draw):
    start = (draw(finite), draw(finite))
    families = tuple(draw(st.sampled_from([(1,), (2,), (1, 2)])))
    if draw(st.booleans()):
        return Seed(start, families=families, label=draw(free_text))
    return Seed(start, (draw(finite), draw(finite)), curves=draw(st.integers(1, 1000)), families=families,
                label=draw(free_text))


@st.composite
def projects(draw):
    equation_names = draw(st.lists(titles, min_size=1, max_size=3, unique=True))
    domain_names = draw(st.lists(titles, min_size=1, max_size=3, unique=True))
    stamp = st.datetimes(min_value=datetime(2000, 1, 1), max_value=datetime(2100, 1, 1),
                         timezones=st.just(UTC)).map(lambda t: t.strftime("%Y-%m-%dT%H:%M:%SZ"))
    sources = draw(st.lists(data_sources(), max_size=3, unique_by=lambda s: s.path))
    data_names = tuple(draw(st.lists(identifiers, min_size=1, max_size=2, unique=True))) if sources else ()
    return Project(
        equations=tuple(draw(equations(n, data_names)) for n in equation_names),
        domains=tuple(draw(domains(n)) for n in domain_names),
        shown_equation=draw(st.sampled_from(equation_names)),
        shown_domain=draw(st.sampled_from(domain_names)),
        pins=tuple(Pin(draw(finite), draw(finite), draw(free_text)) for _ in range(draw(st.integers(0, 4)))),
        seeds=tuple(draw(seeds()) for _ in range(draw(st.integers(0, 3)))),
        view=ViewSettings(*(draw(st.booleans()) for _ in range(6)),
                          parabolic_tolerance=draw(st.floats(min_value=0.0, max_value=0.999)),
                          show_seed_segments=draw(st.booleans()),
                          characteristic_bounces=draw(st.integers(0, 1000))),
        notes=draw(st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=200)),
        metadata=Metadata(draw(stamp), draw(stamp), draw(st.sampled_from(["0.1.0", "0.0.9", core.__version__]))),
        data_sources=tuple(sources),
    )


@settings(max_examples=50, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(projects())
def test_round_trip_through_text_keeps_every_bit(project):
    text = dumps_project(project)
    back = loads_project(text)
    assert _project_key(back) == _project_key(project)
    assert dumps_project(back) == text  # a second trip writes identical text
    assert project_from_dict(json.loads(text)) == project
    # every file written validates against the published schema
    jsonschema.Draft202012Validator(json.loads(schema_path().read_text(encoding="utf-8"))).validate(
        json.loads(text))


def test_round_trip_through_a_file(tmp_path):
    project = load_project(SAMPLES[0])
    path = tmp_path / "study.mixtype.json"
    written = save_project(project, path, now=T0)
    assert written.metadata.modified == "2025-03-01T12:00:00Z"
    assert _project_key(load_project(path)) == _project_key(written)
    assert written.content_equals(project)


def test_floats_are_written_as_their_shortest_exact_repr():
    # float repr round-trips exactly (Python's float.__repr__, David Gay's shortest representation)
    awkward = [0.1 + 0.2, 5e-324, -0.0, 1.7976931348623157e308, 2.0 ** -1074 * 3, 1 / 3]
    equation = Equation("x", "0", "1", parameters={f"p{i}": Parameter(v) for i, v in enumerate(awkward)})
    text = dumps_project(new_project(equation, Domain(0.0, 1.0, 0.0, 1.0), now=T0))
    for value in awkward:
        assert f'"value": {value!r}' in text
    back = loads_project(text).equation("equation").parameters
    assert [_bits(p.value) for p in back.values()] == [_bits(v) for v in awkward]


def test_integers_where_numbers_are_expected_come_back_as_floats():
    project = new_project(Equation("y", "0", "1", parameters={"k": Parameter(2)}), Domain(-1, 1, 0, 3), now=T0)
    text = dumps_project(project)
    assert '"value": 2.0' in text and '"x_range": [-1.0, 1.0]' in text
    back = loads_project(text)
    assert isinstance(back.equations[0].parameters["k"].value, float)
    assert isinstance(back.domains[0].xmin, float)


@pytest.mark.parametrize("sample", SAMPLES, ids=lambda p: p.name)
def test_every_sample_file_loads(sample):
    project = load_project(sample)
    assert project.equations and project.domains
    assert project.shown()[0].name == project.shown_equation


def test_samples_cover_every_format_version():
    versions = {json.loads(p.read_text(encoding="utf-8"))["format_version"] for p in SAMPLES}
    assert versions == set(range(1, CURRENT_FORMAT_VERSION + 1))


def test_the_all_fields_sample_reads_as_written():
    project = load_project(DATA / "project-v1-all-fields.mixtype.json")
    equation = project.equation("sample: all fields")
    assert list(equation.definitions) == ["v", "u", "alpha"]
    assert equation.parameters["lower_only"] == Parameter(-0.0, -1.0, None, "", "a slider with a minimum only")
    assert math.copysign(1.0, equation.parameters["lower_only"].value) == -1.0
    assert equation.parameters["upper_only"].value == 5e-324
    assert project.shown_equation == "second (s, t)" and project.shown()[0].variables == ("s", "t")
    assert project.domain("odd sizes") == Domain(-0.001, 0.0025, 100000.0, 100000.01, 2, 8192, "odd sizes")
    assert project.seeds[2] == Seed((-0.5, -0.3), (0.5, -0.3), 11, (1, 2), "segment, both families")
    assert project.seeds[1].families == (2,) and not project.seeds[1].is_segment
    # version 1 had one switch for both characteristic families: the migration copies it to each
    assert project.view == ViewSettings(True, False, True, True, False, False, 2.5e-6)
    assert "emoji 🌊" in project.notes
    assert project.metadata == Metadata("2024-02-29T23:59:59Z", "2025-01-15T09:30:00Z", "0.1.0")
    assert project.data_sources == ()
    assert all(e.trade == {} and e.peak_quantity == "" for e in project.equations)


def test_the_version_2_sample_reads_as_written():
    project = load_project(DATA / "project-v2-all-fields.mixtype.json")
    first, data_file = project.equations[0], project.data_sources[0]
    assert first.b == "-2*u*v + depth_h*diff(speed, y)"    # data quantities used by name
    assert first.trade["internal_wave"] == {"N": "speed", "f": "lower_only", "w": "upper_only"}
    assert list(first.trade) == ["mach", "small_disturbance", "froude", "internal_wave"]
    assert first.peak_quantity == "alpha" and project.equations[1].peak_quantity == "t"
    assert data_file == DataSourceRef("data/flow field.npz", "0123456789abcdef" * 4, "npz",
                                      {"velocity_magnitude": "speed", "h": "depth_h"}, "a grid of speeds; ü ✓")
    assert project.data_sources[1] == DataSourceRef("../shared/profile.csv", "f" * 64)
    assert project.view.show_characteristics_family_1 and not project.view.show_characteristics_family_2


def test_a_version_1_file_means_the_same_after_migration():
    # every version-1 field keeps its value; the new ones take their neutral values
    old = json.loads((DATA / "project-v1-all-fields.mixtype.json").read_text(encoding="utf-8"))
    new = project_to_dict(load_project(DATA / "project-v1-all-fields.mixtype.json"))
    layers = old["view"].pop("layers")
    assert new["view"].pop("layers") == {
        "type_map": layers["type_map"], "type_change_lines": layers["type_change_lines"],
        "characteristics_family_1": layers["characteristics"], "characteristics_family_2": layers["characteristics"],
        "pins": layers["pins"], "legend": layers["legend"]}
    assert new.pop("data_sources") == [] and new.pop("format_version") == 6 and old.pop("format_version") == 1
    assert new.pop("sweeps") == []                                                      # version 6: none
    assert new["view"].pop("characteristic_bounces") == 0      # version 3: curves stop where they always did
    assert new["view"].pop("field") == {"shown": False, "kind": "discriminant", "quantity": "normalized",
                                        "colour_map": "blue_yellow", "iso_values": []}     # version 4: hidden
    assert new["view"].pop("certified") == {"shown": False, "min_cell": 1e-4, "max_cells": 4_000_000}  # version 5
    shown = {"equation": old["shown"]["equation"], "domain": old["shown"]["domain"]}
    assert [pin.pop("study") for pin in new["pins"]] == [shown] * len(old["pins"])   # version 4: the shown study
    assert new == old   # equations, domains, pins, seeds, tolerance, notes, metadata: untouched


def test_the_migration_splits_the_switch_whatever_its_value_and_keeps_the_input():
    data = _sample_data()
    for value in (True, False):
        data["view"]["layers"]["characteristics"] = value
        view = project_from_dict(data).view
        assert view.show_characteristics_family_1 is value and view.show_characteristics_family_2 is value
        assert "characteristics" in data["view"]["layers"] and data["format_version"] == 1


def test_the_version_3_sample_reads_as_written_and_version_2_files_gain_no_bounces():
    project = load_project(DATA / "project-v3-all-fields.mixtype.json")
    assert project.view.characteristic_bounces == 7 and project.view.show_seed_segments is False
    older = load_project(DATA / "project-v2-all-fields.mixtype.json")
    assert older.view.characteristic_bounces == 0
    assert replace(project, view=replace(project.view, characteristic_bounces=0, show_seed_segments=True)) == older
    data = json.loads((DATA / "project-v3-all-fields.mixtype.json").read_text(encoding="utf-8"))
    for bad in (-1, 1001, 2.5, True, "3"):
        data["view"]["characteristic_bounces"] = bad
        with pytest.raises(ProjectError, match="characteristic_bounces"):
            project_from_dict(data)
    del data["view"]["characteristic_bounces"]
    with pytest.raises(ProjectError, match="characteristic_bounces"):
        project_from_dict(data)
    with pytest.raises(ValueError, match=r"characteristic bounces must be a whole number in \[0, 1000\]"):
        ViewSettings(characteristic_bounces=-2)


def test_the_seed_segment_switch_is_optional_and_round_trips():
    # version-2 files written before the switch existed lack it: the segments are shown
    sample = DATA / "project-v2-all-fields.mixtype.json"
    data = json.loads(sample.read_text(encoding="utf-8"))
    assert "seed_segments" not in data["view"]["layers"]
    project = load_project(sample)
    assert project.view.show_seed_segments is True
    hidden = replace(project, view=replace(project.view, show_seed_segments=False))
    text = dumps_project(hidden)
    assert json.loads(text)["view"]["layers"]["seed_segments"] is False
    back = loads_project(text)
    assert back.view.show_seed_segments is False and back == hidden
    assert "seed_segments" not in json.loads(dumps_project(project))["view"]["layers"]
    data["view"]["layers"]["seed_segments"] = "no"
    with pytest.raises(ProjectError, match="seed_segments"):
        project_from_dict(data)


def test_dumping_the_sample_reproduces_its_bytes():
    for sample in SAMPLES:
        if json.loads(sample.read_text(encoding="utf-8"))["format_version"] == CURRENT_FORMAT_VERSION:
            assert dumps_project(load_project(sample)) == sample.read_text(encoding="utf-8")


# -- saving: stamps and byte identity ----------------------------------------------------------------------
def test_saving_an_unchanged_project_twice_gives_identical_bytes(tmp_path):
    path = tmp_path / "p.mixtype.json"
    project = load_project(SAMPLES[0])
    first = save_project(project, path, now=T0)
    before = path.read_bytes()
    second = save_project(load_project(path), path, now=T1)  # later time, same content: no new stamp
    assert path.read_bytes() == before
    assert second == first and second.metadata.modified == "2025-03-01T12:00:00Z"


def test_saving_a_changed_project_stamps_the_modification_time(tmp_path):
    path = tmp_path / "p.mixtype.json"
    project = save_project(load_project(SAMPLES[0]), path, now=T0)
    changed = save_project(replace(project, notes="new notes"), path, now=T1)
    assert changed.metadata.modified == "2025-03-02T08:30:15Z"
    assert changed.metadata.created == project.metadata.created == "2024-02-29T23:59:59Z"
    assert changed.metadata.written_by == core.__version__
    assert load_project(path) == changed


def test_save_keeps_the_previous_version_as_a_backup(tmp_path):
    path = tmp_path / "p.mixtype.json"
    first = save_project(load_project(SAMPLES[0]), path, now=T0)
    save_project(replace(first, notes="second"), path, now=T1)
    assert load_project(tmp_path / "p.mixtype.json.backup") == first
    assert load_project(path).notes == "second"


def test_an_invalid_project_is_refused_before_anything_is_written(tmp_path):
    path = tmp_path / "p.mixtype.json"
    good = save_project(load_project(SAMPLES[0]), path, now=T0)
    before = path.read_bytes()
    bad = good.with_equation(replace(good.equations[0], b="x +"), replacing=good.equations[0].name)
    with pytest.raises(ProjectError) as caught:
        save_project(bad, path, now=T1)
    assert "$.equations[0].coefficients.b" in str(caught.value)
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["p.mixtype.json"]


def test_metadata_timestamps_are_utc_seconds():
    assert Metadata("x", "y").touched(datetime(2024, 3, 5, 15, 7, 9, 999, tzinfo=UTC)).modified == \
        "2024-03-05T15:07:09Z"
    with pytest.raises(ValueError, match="time zone"):
        Metadata("x", "y").touched(datetime(2024, 3, 5))


# -- versions and migration ------------------------------------------------------------------------------
def _sample_data() -> dict:
    return json.loads((DATA / "project-v1-all-fields.mixtype.json").read_text(encoding="utf-8"))


def test_a_file_from_a_newer_mixtype_gets_a_clear_message():
    data = _sample_data()
    data["format_version"] = CURRENT_FORMAT_VERSION + 1
    data["new_thing"] = {"from": "the future"}
    with pytest.raises(ProjectError) as caught:
        loads_project(json.dumps(data), source="future.mixtype.json")
    (line,) = caught.value.problems
    assert line.startswith("future.mixtype.json: $.format_version: ")
    assert f"format version {CURRENT_FORMAT_VERSION + 1}" in line and "update Mixtype" in line


@pytest.mark.parametrize("version", [0, -3, True, "1", 1.5, None])
def test_impossible_format_versions_are_refused(version):
    data = _sample_data()
    data["format_version"] = version
    with pytest.raises(ProjectError, match=r"\$\.format_version: "):
        loads_project(json.dumps(data))


def test_migrations_run_one_step_at_a_time_without_touching_the_input():
    # a made-up chain 1 -> 2 -> 3 exercises the mechanism a real version 2 will use
    def one_to_two(data):
        data["format_version"] = 2
        data["renamed"] = data.pop("notes")
        return data

    def two_to_three(data):
        data["format_version"] = 3
        data["renamed"] = data["renamed"].upper()
        return data

    original = _sample_data()
    result = migrate_data(original, target=3, migrations={1: one_to_two, 2: two_to_three})
    assert result["format_version"] == 3 and result["renamed"] == original["notes"].upper()
    assert original == _sample_data()  # input untouched
    with pytest.raises(MigrationError, match="no upgrade from format version 2 to 3"):
        migrate_data(original, target=3, migrations={1: one_to_two})


def test_current_data_migrate_to_themselves_and_the_registry_is_complete():
    data = json.loads((DATA / f"project-v{CURRENT_FORMAT_VERSION}-all-fields.mixtype.json").read_text("utf-8"))
    assert migrate(data) == data and migrate(data) is not data
    assert sorted(MIGRATIONS) == list(range(1, CURRENT_FORMAT_VERSION))
    with pytest.raises(ProjectError, match="not a Mixtype project file"):
        migrate({"format": "something else"})


# -- schema and serializer agree -----------------------------------------------------------------------
def test_the_schema_file_on_disk_is_what_the_code_generates():
    assert schema_path().read_text(encoding="utf-8") == schema_text()
    jsonschema.Draft202012Validator.check_schema(json.loads(schema_text()))


def _leaves(schema: dict, value, path: str, found: dict) -> None:
    """Walk a value written by the serializer beside its schema, recording each schema location visited."""
    found.setdefault(path, set()).add(type(value).__name__)
    if isinstance(value, dict):
        for key, item in value.items():
            if key in schema.get("properties", {}):
                _leaves(schema["properties"][key], item, f"{path}.{key}", found)
            else:
                _leaves(schema["additionalProperties"], item, f"{path}.*", found)
    elif isinstance(value, list):
        for index, item in enumerate(value):
            prefix = schema.get("prefixItems", [])
            sub = prefix[index] if index < len(prefix) else schema["items"]
            _leaves(sub, item, f"{path}[{index if index < len(prefix) else '*'}]", found)


def _schema_locations(schema: dict, path: str, out: dict) -> None:
    kinds = schema.get("type")
    out[path] = kinds if kinds is not None else ("const" if "const" in schema else "enum")
    for key, sub in schema.get("properties", {}).items():
        _schema_locations(sub, f"{path}.{key}", out)
    if isinstance(schema.get("additionalProperties"), dict):
        _schema_locations(schema["additionalProperties"], f"{path}.*", out)
    for index, sub in enumerate(schema.get("prefixItems", [])):
        _schema_locations(sub, f"{path}[{index}]", out)
    if isinstance(schema.get("items"), dict):
        _schema_locations(schema["items"], f"{path}[*]", out)


def test_every_schema_field_is_written_with_its_type_and_nothing_else_is():
    schema = project_schema()
    expected: dict[str, object] = {}
    _schema_locations(schema, "$", expected)
    found: dict[str, set] = {}
    for sample in SAMPLES:  # the all-fields sample uses every optional field at least once
        _leaves(schema, project_to_dict(load_project(sample)), "$", found)
    assert set(found) == set(expected)
    python_types = {"string": {"str"}, "number": {"float"}, "integer": {"int"}, "boolean": {"bool"},
                    "array": {"list"}, "object": {"dict"}}
    for path, kind in expected.items():
        if kind in python_types:
            assert found[path] <= python_types[kind], (path, kind, found[path])
        else:
            assert found[path] <= {"str", "int"}, (path, found[path])
