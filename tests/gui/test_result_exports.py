"""The window's exports on a template study: the JSON document and the pins and pockets tables say what core
computes (probe, trade readout, pockets), with the CLI's field names, the version and the file's checksum."""

from __future__ import annotations

import csv
import hashlib
import json
import math

import pytest

import core
from core.analysis.pockets import pocket_statistics
from core.analysis.probe import probe_point
from core.equations.compiled import compile_equation
from core.project.model import Seed
from core.results.document import pocket_document, probe_to_dict
from core.results.readouts import read_trade
from tests.gui.conftest import hump_project

PINS = ((0.0, 1.05, "crest"), (-2.5, 2.5, "upstream"), (0.0, 0.5, "inside the bump"))


def _rows(path) -> list[dict]:
    with open(path, newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


@pytest.fixture
def study(make_window, tmp_path):
    """A window on the full-potential template with three pins and a seed, saved to a file."""
    window = make_window(hump_project(nx=61, ny=41))
    window.add_template("full_potential")
    for x, y, label in PINS:
        window.document.add_pin(x, y, label)
    window.document.add_seed(Seed(start=(0.0, 1.2)))
    assert window.save_to(tmp_path / "flow.mixtype.json")
    window.analysis.flush()
    return window


def test_json_export_agrees_with_core(study, tmp_path):
    window = study
    window.export_json(tmp_path / "all.json")
    document = json.loads((tmp_path / "all.json").read_text(encoding="utf-8"))
    equation, domain = window.document.equation, window.document.domain
    compiled = compile_equation(equation)
    parameters = equation.parameter_values()

    assert document["mixtype_version"] == core.__version__
    assert document["parameters"] == parameters and document["tolerance"] == window.document.tolerance
    assert document["equation"]["a"] == "c2 - u**2" and document["equation"]["parameters"]["c0"]["unit"] == "m/s"
    saved = tmp_path / "flow.mixtype.json"
    assert document["source"] == {"file": str(saved), "equation": equation.name, "domain": domain.name}
    assert document["project_checksum"] == hashlib.sha256(saved.read_bytes()).hexdigest()
    assert document["unsaved_changes"] is False

    for pin, (x, y, label) in zip(document["pins"], PINS, strict=True):
        expected = probe_to_dict(probe_point(compiled, x, y, parameters=parameters,
                                             tolerance=window.document.tolerance, domain=domain))
        assert pin["label"] == label
        assert {key: pin[key] for key in expected} == expected
    crest, upstream, inside = document["pins"]
    reference = read_trade(equation.trade, compiled, 0.0, 1.05, parameters=parameters).values
    assert crest["trade"] == reference and crest["trade"]["mach"] > 1.0
    # Mach angle mu = asin(1/M) (NACA Report 1135, 1953).
    assert crest["trade"]["mach_angle_deg"] == pytest.approx(math.degrees(math.asin(1 / reference["mach"])))
    assert crest["trade_units"]["mach"] == "dimensionless" and "trade_note" not in crest
    assert upstream["trade"]["mach_angle_deg"] is None      # subsonic: no Mach angle
    assert inside["trade_note"] == "undefined here (u, v, c2 are not a finite number at this point)"

    expected_pockets = pocket_statistics(compiled, window.analysis.type_map, quantity="M", parameters=parameters)
    assert document["pockets"] == [json.loads(json.dumps(pocket_document(p))) for p in expected_pockets]
    assert document["pockets"][0]["peak"]["quantity"] == "M"
    assert document["fractions"] == pytest.approx(dict(window.analysis.type_map.fractions))
    assert document["boundaries"] and all({"left", "right", "points", "closed"} <= set(b)
                                          for b in document["boundaries"])
    (seed,) = document["seeds"]
    assert seed["points"] == [[0.0, 1.2]] and all(len(curve["ends"]) == 2 for curve in seed["curves"])

    window.document.set_parameter_value("Minf", 0.6)
    window.analysis.flush()
    assert window.results_document()["unsaved_changes"] is True


def test_pins_and_pockets_tables_agree_with_core(study, tmp_path):
    window = study
    equation = window.document.equation
    compiled = compile_equation(equation)
    parameters = equation.parameter_values()
    assert window.export_table("pins", tmp_path / "pins.csv") == 3
    crest, upstream, inside = _rows(tmp_path / "pins.csv")
    reference = read_trade(equation.trade, compiled, 0.0, 1.05, parameters=parameters).values
    probe = probe_point(compiled, 0.0, 1.05, parameters=parameters)
    assert crest["label"] == "crest" and (float(crest["x"]), float(crest["y"])) == (0.0, 1.05)
    assert float(crest["mach [dimensionless]"]) == reference["mach"]
    assert float(crest["flow_angle_deg"]) == reference["flow_angle_deg"]
    assert float(crest["characteristic_plus_deg"]) == reference["characteristic_plus_deg"]
    assert float(crest["density_ratio [dimensionless (rho/rho0)]"]) == reference["density_ratio"]
    assert float(crest["speed [velocity unit of the data]"]) == reference["speed"]
    assert float(crest["direction_1_deg"]) == probe.directions_deg[0]
    assert float(crest["slope_2"]) == probe.slopes[1]
    assert float(crest["definitions.M"]) == probe.definitions["M"]
    assert upstream["mach_angle_deg"] == "" and upstream["principal_axis_1_deg"] != ""
    assert inside["trade_note"].startswith("undefined here") and inside["mach [dimensionless]"] == ""
    header = list(crest)
    assert "principal_axes_deg" not in header and not any(name.endswith(("_1", "_2")) for name in header
                                                          if not name.startswith("slope"))

    expected = pocket_statistics(compiled, window.analysis.type_map, quantity="M", parameters=parameters)
    assert window.export_table("pockets", tmp_path / "pockets.csv") == len(expected) == 1
    (row,) = _rows(tmp_path / "pockets.csv")
    pocket = expected[0]
    assert float(row["area [x*y]"]) == pocket.area and int(row["nodes"]) == pocket.node_count
    assert (float(row["centroid_x"]), float(row["centroid_y"])) == pocket.centroid
    assert (float(row["x_min"]), float(row["x_max"]), float(row["y_min"]), float(row["y_max"])) == \
        pocket.bounding_box
    assert row["peak_quantity"] == "M" and float(row["peak"]) == pocket.peak
    assert (float(row["peak_x"]), float(row["peak_y"])) == pocket.peak_at
