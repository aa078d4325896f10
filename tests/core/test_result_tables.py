"""Result tables: rows from curves, pins and pockets, one column per value, NaN as empty CSV cells and JSON nulls."""

from __future__ import annotations

import csv
import json
import math
from types import SimpleNamespace

import numpy as np

from core.analysis.probe import probe_point
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation
from core.results.document import results_document
from core.results.tables import (
    CHARACTERISTIC_COLUMNS,
    characteristic_rows,
    pin_columns,
    pin_rows,
    write_csv,
    write_json,
)


def test_characteristic_rows_and_csv(tmp_path):
    curve = SimpleNamespace(family=2, seed=np.array([0.0, -1.0]), points=np.array([[0.0, -1.0], [0.1, -0.9]]))
    rows = characteristic_rows([curve])
    assert [(r["point"], r["x"], r["y"], r["family"]) for r in rows] == [(0, 0.0, -1.0, 2), (1, 0.1, -0.9, 2)]
    assert write_csv(rows, tmp_path / "c.csv", CHARACTERISTIC_COLUMNS) == 2
    with open(tmp_path / "c.csv", newline="", encoding="utf-8") as handle:
        read = list(csv.DictReader(handle))
    assert float(read[1]["x"]) == 0.1 and read[0]["seed_y"] == "-1.0"


def test_pin_rows_flatten_lists_and_blank_nan(tmp_path):
    pin = {"label": "P1", "point": [0.5, 1.0], "type": "elliptic", "discriminant": -4.0, "directions_deg": [],
           "anisotropy": math.nan, "definitions": {"M": 0.8}}
    rows = pin_rows([pin])
    assert rows[0]["definitions.M"] == 0.8 and rows[0]["anisotropy"] is None
    assert rows[0]["direction_1_deg"] is None and (rows[0]["x"], rows[0]["y"]) == (0.5, 1.0)
    write_csv(rows, tmp_path / "p.csv", pin_columns(rows))
    with open(tmp_path / "p.csv", newline="", encoding="utf-8") as handle:
        read = list(csv.DictReader(handle))
    assert read[0]["anisotropy"] == "" and float(read[0]["discriminant"]) == -4.0


def test_results_json_is_standard_json(tmp_path):
    # a = 1/x is infinite at x = 0: the normalized discriminant is undefined there (NaN), written as null.
    equation, domain = Equation("1/x", "0", "1"), Domain(-1, 1, -1, 1, 3, 3)
    probe = probe_point(compile_equation(equation), 0.0, 0.0)
    assert math.isnan(probe.normalized)
    data = results_document(equation=equation, domain=domain, parameters={}, tolerance=1e-9,
                            pins=[SimpleNamespace(label="A", x=0.0, y=0.0)], probes=[probe])
    write_json(data, tmp_path / "r.json")
    loaded = json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))
    assert loaded["pins"][0]["normalized_discriminant"] is None and loaded["pins"][0]["label"] == "A"
    assert loaded["grid"] == [3, 3] and loaded["equation"]["a"] == "1/x"
