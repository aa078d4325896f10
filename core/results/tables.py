"""Results of a study as tables and JSON: type-change lines, characteristics and pin readouts.

Plain rows (dicts) and writers shared by the window's export commands and any headless caller. Undefined
numbers (NaN) become empty CSV cells and JSON nulls, so every file stays standard.
"""

from __future__ import annotations

import csv
import json
import math
import os
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path

import numpy as np

__all__ = [
    "BOUNDARY_COLUMNS",
    "CHARACTERISTIC_COLUMNS",
    "boundary_rows",
    "characteristic_rows",
    "pin_rows",
    "results_dict",
    "write_csv",
    "write_json",
]

BOUNDARY_COLUMNS = ("curve", "point", "x", "y", "closed", "left_type", "right_type")
CHARACTERISTIC_COLUMNS = ("curve", "family", "seed_x", "seed_y", "point", "x", "y")


def _label(value) -> str:
    return getattr(value, "label", None) or str(value)


def _plain(value):
    """JSON-safe copy: arrays to lists, NaN/inf to None, enums to their labels."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, np.ndarray):
        return _plain(value.tolist())
    if isinstance(value, list | tuple):
        return [_plain(v) for v in value]
    if hasattr(value, "label") and hasattr(value, "value") and isinstance(value.value, int):
        return value.label
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def boundary_rows(boundaries) -> list[dict]:
    """One row per point of every type-change curve (``boundaries.curves[k].points`` (n, 2))."""
    rows = []
    for number, curve in enumerate(getattr(boundaries, "curves", ()) or ()):
        for index, (x, y) in enumerate(np.asarray(curve.points, dtype=np.float64).reshape(-1, 2)):
            rows.append({"curve": number, "point": index, "x": float(x), "y": float(y),
                         "closed": bool(curve.closed), "left_type": _label(curve.left_type),
                         "right_type": _label(curve.right_type)})
    return rows


def characteristic_rows(curves: Iterable) -> list[dict]:
    """One row per point of every characteristic curve (``.family``, ``.seed`` (2,), ``.points`` (n, 2))."""
    rows = []
    for number, curve in enumerate(curves):
        seed = np.asarray(curve.seed, dtype=np.float64).reshape(2)
        for index, (x, y) in enumerate(np.asarray(curve.points, dtype=np.float64).reshape(-1, 2)):
            rows.append({"curve": number, "family": int(curve.family), "seed_x": float(seed[0]),
                         "seed_y": float(seed[1]), "point": index, "x": float(x), "y": float(y)})
    return rows


def pin_rows(pins: Sequence, readouts: Sequence[Mapping]) -> list[dict]:
    """One row per pin: its label and the flattened readout (lists become numbered columns).

    ``readouts`` are plain dicts (e.g. core.analysis.probe.probe_to_dict), one per pin, or None for a pin not read.
    """
    rows = []
    for pin, readout in zip(pins, list(readouts) + [None] * (len(pins) - len(readouts)), strict=False):
        row: dict = {"label": pin.label, "x": float(pin.x), "y": float(pin.y)}
        for key, value in (readout or {}).items():
            if key in ("point", "x", "y"):
                continue
            if isinstance(value, Mapping):
                for name, inner in value.items():
                    row[f"{key}.{name}"] = inner
            elif isinstance(value, list | tuple | np.ndarray):
                for index, inner in enumerate(np.asarray(value, dtype=object).ravel(), start=1):
                    row[f"{key}_{index}"] = inner
            else:
                row[key] = value
        rows.append(_plain(row))
    return rows


def write_csv(rows: Sequence[Mapping], path: str | os.PathLike, columns: Sequence[str] | None = None) -> int:
    """Write rows with a header line; returns the number of data rows. NaN and None become empty cells."""
    if columns is None:
        columns = []
        for row in rows:
            columns.extend(k for k in row if k not in columns)
    with open(Path(path), "w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(columns), extrasaction="ignore")
        writer.writeheader()
        for row in rows:
            clean = {}
            for key in columns:
                value = row.get(key)
                if value is None or (isinstance(value, float) and not math.isfinite(value)):
                    value = ""
                elif isinstance(value, float):
                    value = repr(value)
                clean[key] = value
            writer.writerow(clean)
    return len(rows)


def results_dict(*, equation, domain, parameters: Mapping[str, float], type_map=None, boundaries=None,
                 characteristics: Iterable = (), pins: Sequence = (), readouts: Sequence[Mapping] = (),
                 include_codes: bool = True) -> dict:
    """Everything computed for one equation on one domain, as JSON-ready data."""
    result: dict = {
        "kind": "mixtype results",
        "equation": {"name": equation.name, "a": equation.a, "b": equation.b, "c": equation.c,
                     "variables": list(equation.variables), "definitions": dict(equation.definitions)},
        "parameters": dict(parameters),
        "domain": {"name": domain.name, "xmin": domain.xmin, "xmax": domain.xmax, "ymin": domain.ymin,
                   "ymax": domain.ymax, "nx": domain.nx, "ny": domain.ny},
    }
    if type_map is not None:
        result["type_map"] = {"tolerance": type_map.tolerance, "fractions": dict(type_map.fractions),
                              "codes_meaning": {"0": "undefined", "1": "elliptic", "2": "parabolic",
                                                "3": "hyperbolic"}}
        if include_codes:
            result["type_map"]["codes"] = np.asarray(type_map.codes).tolist()
    if boundaries is not None:
        result["type_change_lines"] = [
            {"points": curve.points, "closed": bool(curve.closed), "left_type": _label(curve.left_type),
             "right_type": _label(curve.right_type)} for curve in boundaries.curves]
    result["characteristics"] = [
        {"family": int(c.family), "seed": c.seed, "points": c.points,
         "end_reasons": list(getattr(c, "end_reasons", ()))} for c in characteristics]
    result["pins"] = [{"label": p.label, "x": p.x, "y": p.y, "readout": r}
                      for p, r in zip(pins, list(readouts) + [None] * (len(pins) - len(readouts)), strict=False)]
    return _plain(result)


def write_json(data: Mapping, path: str | os.PathLike) -> None:
    """Write JSON (NaN already turned into null by results_dict) with a trailing newline."""
    text = json.dumps(_plain(data), indent=1, allow_nan=False)
    Path(path).write_text(text + "\n", encoding="utf-8")
