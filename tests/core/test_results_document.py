"""The results document (core.results.document), the point readouts behind it (core.results.readouts) and the
pins and pockets tables (core.results.tables): fields, values, version and the project file's checksum."""

from __future__ import annotations

import csv
import hashlib
import math

import numpy as np
import pytest

import core
from core.analysis.classify import classify_grid
from core.analysis.pockets import pocket_statistics
from core.analysis.probe import probe_point
from core.analysis.tracing import trace_characteristics
from core.analysis.type_change_lines import find_type_boundaries
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.project.io import save_project
from core.project.model import Pin, Seed, new_project
from core.results.document import map_fields, results_document, type_labels
from core.results.readouts import peak_quantity, read_trade
from core.results.tables import pin_columns, pin_rows, pocket_columns, pocket_rows, write_csv
from tests.core.cli_runner import run, run_json

TRICOMI = Equation(a="y", b="0", c="1", name="Tricomi", peak_quantity="a")
SQUARE = Domain(-1.0, 1.0, -1.0, 1.0, 21, 21, name="square")
MACH_SPEC = {"mach": {"u": "u", "v": "v", "c2": "c2", "gamma": "gamma"}}


def _tricomi_document(project_file=None, **options) -> dict:
    compiled = compile_equation(TRICOMI)
    type_map = classify_grid(compiled, SQUARE)
    boundaries = find_type_boundaries(compiled, type_map)
    pockets = pocket_statistics(compiled, type_map, quantity=peak_quantity(TRICOMI, compiled))
    pins = [Pin(0.5, -1.0, "low"), Pin(0.5, 0.25, "high")]
    probes = [probe_point(compiled, pin.x, pin.y, domain=SQUARE) for pin in pins]
    seed = Seed(start=(0.0, -0.5))
    curves = trace_characteristics(compiled, SQUARE, seed.points())
    return results_document(equation=TRICOMI, domain=SQUARE, parameters={}, tolerance=1e-9, type_map=type_map,
                            boundaries=boundaries, pockets=pockets, pins=pins, probes=probes,
                            traced=[(seed, curves)], project_file=project_file, **options)


def _csv(path) -> list[dict]:
    with open(path, newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def test_the_document_holds_the_cli_fields_with_tricomi_values():
    document = _tricomi_document()
    assert document["mixtype_version"] == core.__version__
    assert document["variables"] == ["x", "y"] and document["grid"] == [21, 21]
    assert document["domain"] == [-1.0, 1.0, -1.0, 1.0] and document["tolerance"] == 1e-9
    # y u_xx + u_yy: hyperbolic below y = 0, parabolic on it, elliptic above (closed form; Bers 1958).
    assert document["fractions"] == pytest.approx({"elliptic": 10 / 21, "parabolic": 1 / 21,
                                                   "hyperbolic": 10 / 21, "undefined": 0.0})
    assert list(document["fractions"]) == ["elliptic", "parabolic", "hyperbolic", "undefined"]
    (line,) = document["boundaries"]
    assert (line["left"], line["right"], line["closed"]) == ("hyperbolic", "elliptic", False)
    assert max(abs(y) for _, y in line["points"]) < 1e-12
    assert document["refined"] is True
    # The code table is TypeCode's own, not a copy.
    assert document["type_map"]["labels"] == type_labels() == {"0": "undefined", "1": "elliptic",
                                                               "2": "parabolic", "3": "hyperbolic"}
    assert np.array(document["type_map"]["codes"]).shape == (21, 21)
    assert document["source"] == {"file": None, "equation": "Tricomi", "domain": "square"}
    assert document["project_checksum"] is None and document["unsaved_changes"] is False


def test_pins_and_seeds_read_as_probe_and_trace_print_them():
    document = _tricomi_document()
    low, high = document["pins"]
    assert low["label"] == "low" and low["point"] == [0.5, -1.0] and low["type"] == "hyperbolic"
    # Tricomi characteristics dy/dx = +-1/sqrt(-y): slopes +-1 at y = -1, i.e. 45 and 135 degrees (closed form).
    assert sorted(low["directions_deg"]) == [pytest.approx(45.0), pytest.approx(135.0)]
    assert low["discriminant"] == pytest.approx(4.0) and "trade" not in low
    assert high["type"] == "elliptic" and high["anisotropy"] == pytest.approx(2.0)   # sqrt(1 / 0.25)
    (seed,) = document["seeds"]
    assert seed["points"] == [[0.0, -0.5]] and seed["families"] == [1, 2]
    assert [curve["family"] for curve in seed["curves"]] == [1, 2]
    assert all(len(curve["ends"]) == 2 for curve in seed["curves"])


def test_pocket_fields_and_table_agree_with_the_trapezoid_area():
    document = _tricomi_document()
    (pocket,) = document["pockets"]
    # Hyperbolic nodes: y = -1 .. -0.1 (10 rows) over the full width; trapezoid weights by hand (common
    # practice, no source): rows 0.05 + 9 * 0.1 = 0.95 times width 2.
    assert pocket["area"] == pytest.approx(1.9) and pocket["nodes"] == 210
    assert pocket["centroid"][0] == pytest.approx(0.0, abs=1e-15)
    assert pocket["touches_boundary"] is True
    # a = y peaks on the row y = -0.1 (every node of it ties; core picks one).
    assert pocket["peak"]["quantity"] == "a" and pocket["peak"]["value"] == pytest.approx(-0.1)
    assert pocket["peak"]["at"][1] == pytest.approx(-0.1)
    rows = pocket_rows(document["pockets"], ("x", "y"))
    assert list(rows[0]) == list(pocket_columns(("x", "y")))
    assert rows[0]["area [x*y]"] == pytest.approx(1.9) and rows[0]["y_max"] == pytest.approx(-0.1)
    assert rows[0]["pocket"] == 1 and rows[0]["peak_quantity"] == "a"


def test_results_not_computed_are_null_not_empty():
    fields = map_fields(("x", "y"), SQUARE, 1e-9)
    assert fields["fractions"] is None and fields["boundaries"] is None and fields["pockets"] is None


def test_project_file_checksum_is_the_sha256_of_its_bytes(tmp_path):
    path = tmp_path / "study.mixtype.json"
    save_project(new_project(TRICOMI, SQUARE), path)
    document = _tricomi_document(project_file=path, unsaved_changes=True)
    assert document["project_checksum"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert document["source"]["file"] == str(path) and document["unsaved_changes"] is True


# -- trade readouts -------------------------------------------------------------------------------------
def _uniform_stream(c2: str = "1") -> Equation:
    return Equation(a="c2 - u**2", b="-2*u*v", c="c2 - v**2", definitions={"u": "2", "v": "0", "c2": c2},
                    parameters={"gamma": Parameter(1.4)}, trade=MACH_SPEC, peak_quantity="u")


def test_trade_readout_at_a_pin_goes_into_the_document_and_the_pins_table(tmp_path):
    equation = _uniform_stream()
    compiled = compile_equation(equation)
    reading = read_trade(equation.trade, compiled, 0.1, 0.2, parameters={"gamma": 1.4})
    # M = 2: Mach angle arcsin(1/2) = 30 deg, p/p0 = (1 + 0.2 M^2)^-3.5 = 0.1278 (NACA Report 1135, 1953).
    assert reading.values["mach"] == pytest.approx(2.0) and reading.values["mach_angle_deg"] == pytest.approx(30.0)
    assert reading.values["pressure_ratio"] == pytest.approx(1.8 ** -3.5) and reading.problem == ""
    probe = probe_point(compiled, 0.1, 0.2, parameters={"gamma": 1.4})
    document = results_document(equation=equation, domain=SQUARE, parameters={"gamma": 1.4}, tolerance=1e-9,
                                pins=[Pin(0.1, 0.2, "P")], probes=[probe], trades=[reading])
    (pin,) = document["pins"]
    assert pin["trade"]["characteristic_plus_deg"] == pytest.approx(30.0)
    assert pin["trade_units"]["mach"] == "dimensionless" and "trade_note" not in pin
    assert document["parameters"] == {"gamma": 1.4}
    assert document["equation"]["parameters"] == {"gamma": {"value": 1.4, "unit": ""}}
    rows = pin_rows(document["pins"], ("x", "y"))
    write_csv(rows, tmp_path / "pins.csv", pin_columns(rows))
    (row,) = _csv(tmp_path / "pins.csv")
    assert float(row["mach [dimensionless]"]) == pytest.approx(2.0)
    assert float(row["characteristic_minus_deg"]) == pytest.approx(-30.0)
    assert float(row["pressure_ratio [dimensionless (p/p0)]"]) == pytest.approx(0.12780452546295096)
    assert sorted([float(row["direction_1_deg"]), float(row["direction_2_deg"])]) == [pytest.approx(30.0),
                                                                                        pytest.approx(150.0)]
    assert row["principal_axis_1_deg"] == "" and float(row["definitions.u"]) == 2.0
    assert not any(name.endswith(("_1", "_2")) and "slope" not in name for name in row)


def test_undefined_and_unknown_trade_inputs_are_said_not_raised():
    equation = _uniform_stream(c2="log(x)")
    compiled = compile_equation(equation)
    reading = read_trade(equation.trade, compiled, -1.0, 0.0, parameters={"gamma": 1.4})
    assert reading.undefined == ("c2",) and math.isnan(reading.values["mach"])
    assert reading.problem == "undefined here (c2 is not a finite number at this point)"
    probe = probe_point(compiled, -1.0, 0.0, parameters={"gamma": 1.4})
    document = results_document(equation=equation, domain=SQUARE, parameters={"gamma": 1.4}, tolerance=1e-9,
                                pins=[Pin(-1.0, 0.0)], probes=[probe], trades=[reading])
    assert document["pins"][0]["trade"]["mach"] is None
    assert document["pins"][0]["trade_note"] == reading.problem
    missing = read_trade({"mach": {"u": "u", "v": "v", "c2": "sound"}}, compiled, 0.5, 0.0)
    assert missing.values == {} and "sound" in missing.error and missing.problem.startswith("unavailable: ")
    assert read_trade({}, compiled, 0.0, 0.0).values == {}


def test_peak_quantity_must_be_something_pockets_can_read():
    compiled = compile_equation(_uniform_stream())
    assert peak_quantity(_uniform_stream(), compiled) == "u"
    assert peak_quantity(Equation("1", "0", "1", peak_quantity="b"), compile_equation(Equation("1", "0", "1"))) == "b"
    stranger = Equation("1", "0", "1", peak_quantity="depth")
    assert peak_quantity(stranger, compiled) is None
    assert peak_quantity(stranger, compiled, ("depth",)) == "depth"


def test_cli_probe_says_why_trade_values_are_missing():
    # Inside the bump of the full-potential template the velocity is undefined (see its description).
    document = run_json("probe", "--template", "full_potential", "--at", "0", "0.5")
    assert document["trade"]["mach"] is None and document["type"] == "undefined"
    assert document["trade_note"] == "undefined here (u, v, c2 are not a finite number at this point)"
    status, out, _ = run("probe", "--template", "full_potential", "--at", "0", "0.5")
    assert status == 0 and "trade note            undefined here (u, v, c2" in out
    crest = run_json("probe", "--template", "full_potential", "--at", "0", "1.0")
    assert crest["trade"]["mach"] > 1.0 and "trade_note" not in crest
