"""Results as CSV tables: type-change lines, characteristics, pins and pockets, one column per value.

Rows are plain dicts built from the results document (core.results.document), so a table says what the JSON
says. Coordinate columns are named after the study's variables (``x``, ``z``, ``seed_x``, ``centroid_z``...).
Units are in the header: ``_deg`` ends the name of every angle in degrees, a trade quantity carries its unit
in brackets (``mach [dimensionless]``), a pocket's area ``[x*y]``; coefficients, D and definitions are in the
study's own units. Missing or non-finite numbers become empty cells, so every file stays standard CSV.
"""

from __future__ import annotations

import csv
import json
import math
import os
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path

import numpy as np

from core.results.document import boundary_document
from core.results.readable import point_without_noise, points_without_noise

__all__ = [
    "BOUNDARY_COLUMNS",
    "CHARACTERISTIC_COLUMNS",
    "boundary_columns",
    "boundary_rows",
    "characteristic_columns",
    "characteristic_rows",
    "pin_columns",
    "pin_rows",
    "pocket_columns",
    "pocket_rows",
    "trade_column",
    "write_csv",
    "write_json",
]

Variables = Sequence[str]


def boundary_columns(variables: Variables = ("x", "y")) -> tuple[str, ...]:
    """Columns of the type-change lines table."""
    x, y = variables
    return ("curve", "point", x, y, "closed", "left_type", "right_type")


def characteristic_columns(variables: Variables = ("x", "y")) -> tuple[str, ...]:
    """Columns of the characteristics table."""
    x, y = variables
    return ("curve", "family", f"seed_{x}", f"seed_{y}", "point", x, y, "end_backward", "end_forward")


BOUNDARY_COLUMNS = boundary_columns()
CHARACTERISTIC_COLUMNS = characteristic_columns()


def boundary_rows(boundaries, variables: Variables = ("x", "y"), domain=None) -> list[dict]:
    """One row per point of every type-change curve (``boundaries.curves[k].points`` (n, 2)); with
    ``domain``, coordinates within rounding noise of 0 read 0 (core.results.readable)."""
    x, y = variables
    rows = []
    for number, curve in enumerate(getattr(boundaries, "curves", ()) or ()):
        line = boundary_document(curve, domain)
        for index, (px, py) in enumerate(line["points"]):
            rows.append({"curve": number, "point": index, x: px, y: py, "closed": line["closed"],
                         "left_type": line["left"], "right_type": line["right"]})
    return rows


def characteristic_rows(curves: Iterable, variables: Variables = ("x", "y"), domain=None) -> list[dict]:
    """One row per point of every characteristic curve (``.family``, ``.seed`` (2,), ``.points`` (n, 2),
    ``.end_reasons`` when known); the end reasons repeat on every row of a curve. With ``domain``,
    coordinates within rounding noise of 0 read 0 (core.results.readable)."""
    x, y = variables
    rows = []
    for number, curve in enumerate(curves):
        seed = point_without_noise(np.asarray(curve.seed, dtype=np.float64).reshape(2), domain)
        ends = list(getattr(curve, "end_reasons", (None, None)))
        for index, (px, py) in enumerate(points_without_noise(curve.points, domain)):
            rows.append({"curve": number, "family": int(curve.family), f"seed_{x}": float(seed[0]),
                         f"seed_{y}": float(seed[1]), "point": index, x: float(px), y: float(py),
                         "end_backward": ends[0], "end_forward": ends[1]})
    return rows


# -- pins -----------------------------------------------------------------------------------------------
def trade_column(name: str, unit: str) -> str:
    """The header of a trade quantity: its key, and its unit in brackets unless the key already ends in _deg
    and the unit is plain degrees."""
    if not unit or (name.endswith("_deg") and unit == "deg"):
        return name
    return f"{name} [{unit}]"


def _pin_leading_columns(variables: Variables) -> list[str]:
    x, y = variables
    return ["label", x, y, "inside", "type", "a", "b", "c", "discriminant", "normalized_discriminant",
            "direction_1_deg", "direction_2_deg", "slope_1", "slope_2", "angle_between_deg",
            "principal_axis_1_deg", "principal_axis_2_deg", "anisotropy"]


def _nth(values, index: int):
    return values[index] if values is not None and index < len(values) else None


def pin_rows(pins: Sequence[Mapping], variables: Variables = ("x", "y")) -> list[dict]:
    """One row per pin from its document (core.results.document.pin_document): every value its own column,
    None where a value is missing or not finite."""
    x, y = variables
    rows = []
    for pin in pins:
        point = pin.get("point") or [None, None]
        coefficients = pin.get("coefficients") or {}
        directions, slopes, axes = pin.get("directions_deg"), pin.get("slopes"), pin.get("principal_axes_deg")
        row = {"label": pin.get("label"), x: point[0], y: point[1], "inside": pin.get("inside"),
               "type": pin.get("type"), "a": coefficients.get("a"), "b": coefficients.get("b"),
               "c": coefficients.get("c"), "discriminant": pin.get("discriminant"),
               "normalized_discriminant": pin.get("normalized_discriminant"),
               "direction_1_deg": _nth(directions, 0), "direction_2_deg": _nth(directions, 1),
               "slope_1": _nth(slopes, 0), "slope_2": _nth(slopes, 1),
               "angle_between_deg": pin.get("angle_between_deg"),
               "principal_axis_1_deg": _nth(axes, 0), "principal_axis_2_deg": _nth(axes, 1),
               "anisotropy": pin.get("anisotropy")}
        for name, value in (pin.get("definitions") or {}).items():
            row[f"definitions.{name}"] = value
        units = pin.get("trade_units") or {}
        for name, value in (pin.get("trade") or {}).items():
            row[trade_column(name, units.get(name, ""))] = value
        if "trade_note" in pin:
            row["trade_note"] = pin["trade_note"]
        row["message"] = pin.get("message")
        rows.append(_plain(row))
    return rows


def pin_columns(rows: Sequence[Mapping], variables: Variables = ("x", "y")) -> list[str]:
    """The fixed pin columns, then every definition and trade column the rows hold, then notes."""
    columns = _pin_leading_columns(variables)
    for row in rows:
        columns.extend(key for key in row if key not in columns and key not in ("trade_note", "message"))
    return columns + ["trade_note", "message"]


# -- pockets --------------------------------------------------------------------------------------------
def pocket_columns(variables: Variables = ("x", "y")) -> tuple[str, ...]:
    """Columns of the pockets table (the area in the product of the variables' units)."""
    x, y = variables
    return ("pocket", f"area [{x}*{y}]", "nodes", f"centroid_{x}", f"centroid_{y}", f"{x}_min", f"{x}_max",
            f"{y}_min", f"{y}_max", "touches_boundary", "peak_quantity", "peak", f"peak_{x}", f"peak_{y}")


def pocket_rows(pockets: Sequence[Mapping], variables: Variables = ("x", "y")) -> list[dict]:
    """One row per pocket from its document (core.results.document.pocket_document), numbered from 1 in the
    document's order (largest area first)."""
    columns = pocket_columns(variables)
    rows = []
    for number, pocket in enumerate(pockets, 1):
        peak = pocket.get("peak") or {}
        at = peak.get("at") or [None, None]
        values = (number, pocket["area"], pocket["nodes"], *pocket["centroid"], *pocket["bounding_box"],
                  pocket["touches_boundary"], peak.get("quantity"), peak.get("value"), *at)
        rows.append(dict(zip(columns, values, strict=True)))
    return rows


# -- writers --------------------------------------------------------------------------------------------
def _plain(value):
    """JSON-safe copy: arrays to lists, NaN/inf to None, numpy scalars to Python numbers."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, np.ndarray):
        return _plain(value.tolist())
    if isinstance(value, list | tuple):
        return [_plain(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


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
                value = _plain(row.get(key))
                if value is None:
                    value = ""
                elif isinstance(value, float):
                    value = repr(value)
                clean[key] = value
            writer.writerow(clean)
    return len(rows)


def write_json(data: Mapping, path: str | os.PathLike) -> None:
    """Write standard JSON (NaN and infinities as null) with a trailing newline."""
    text = json.dumps(_plain(data), indent=1, allow_nan=False)
    Path(path).write_text(text + "\n", encoding="utf-8")
