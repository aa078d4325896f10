"""Result tables: rows from curves and readouts, NaN as empty CSV cells and JSON nulls."""

from __future__ import annotations

import csv
import json
import math
from types import SimpleNamespace

import numpy as np

from core.analysis.domain import Domain
from core.equations.equation import Equation
from core.results.tables import (
    CHARACTERISTIC_COLUMNS,
    characteristic_rows,
    pin_rows,
    results_dict,
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
    pin = SimpleNamespace(label="P1", x=0.5, y=1.0)
    rows = pin_rows([pin], [{"type": "elliptic", "discriminant": -4.0, "directions_deg": [],
                             "anisotropy": math.nan, "definitions": {"M": 0.8}}])
    assert rows[0]["definitions.M"] == 0.8 and rows[0]["anisotropy"] is None
    write_csv(rows, tmp_path / "p.csv")
    with open(tmp_path / "p.csv", newline="", encoding="utf-8") as handle:
        read = list(csv.DictReader(handle))
    assert read[0]["anisotropy"] == "" and float(read[0]["discriminant"]) == -4.0


def test_results_json_is_standard_json(tmp_path):
    data = results_dict(equation=Equation("y", "0", "1"), domain=Domain(-1, 1, -1, 1, 3, 3),
                        parameters={}, pins=[SimpleNamespace(label="A", x=0.0, y=0.0)],
                        readouts=[{"normalized": math.nan}])
    write_json(data, tmp_path / "r.json")
    loaded = json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))
    assert loaded["pins"][0]["readout"]["normalized"] is None
    assert loaded["domain"]["nx"] == 3 and loaded["equation"]["a"] == "y"
