"""One results document: the JSON the command line prints and the window exports, built from core results.

Pure functions from core's frozen results (TypeMap, TypeBoundaries, Pocket, ProbeResult, characteristic
curves) and the study around them (equation, domain, parameters, tolerance, data files, project file) to
plain JSON-ready dicts. ``mixtype classify|probe|trace --json`` and the window's "Everything as JSON" both
build their output here, so a field has one name and one meaning everywhere. The CLI's field names are a
public interface: fields are only ever added (tests/core/test_cli_json_fields.py pins them).

Conventions: points are [x, y] pairs in the study's variables; types by name (TypeCode labels); numbers
that are missing or not finite are null; angles in degrees end in ``_deg``. Builders given the study's
``domain`` write coordinates (points, centroids, boxes, curve points) with rounding noise read as exactly 0
(core.results.readable), as the window and the command line's text show them.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterable, Mapping, Sequence

import numpy as np

import core
from core.analysis.classify import FRACTION_ORDER, TypeCode
from core.analysis.probe import ProbeResult
from core.data.raw import DataError
from core.results.readable import point_without_noise, points_without_noise
from core.results.readouts import TradeReading

__all__ = [
    "FRACTION_ORDER",
    "boundary_document",
    "curve_document",
    "data_files_document",
    "equation_document",
    "fractions_document",
    "json_number",
    "map_fields",
    "parabolic_region_document",
    "pin_document",
    "pocket_document",
    "point_list",
    "probe_document",
    "probe_to_dict",
    "project_file_checksum",
    "results_document",
    "seed_document",
    "source_document",
    "study_fields",
    "sweep_document",
    "type_labels",
    "type_map_document",
]


def json_number(value: float | None) -> float | None:
    """A float for JSON, or None (null) where it is missing or not finite."""
    return None if value is None or not math.isfinite(value) else float(value)


def point_list(array, domain=None) -> list[list[float]]:
    """An (n, 2) array of points as JSON pairs (rounding noise read as 0 against ``domain``'s extents)."""
    return [[float(x), float(y)] for x, y in points_without_noise(array, domain)]


def _pair(point, domain) -> list[float]:
    """One [x, y] pair with rounding noise read as 0 against ``domain``'s extents."""
    return list(point_without_noise(point, domain))


def type_labels() -> dict[str, str]:
    """What each integer type code of a type map means: {"0": "undefined", "1": "elliptic", ...}."""
    return {str(int(code)): code.label for code in TypeCode}


# -- the study --------------------------------------------------------------------------------------------
def equation_document(equation) -> dict:
    """The equation as text: name, variables, coefficients, definitions, parameters (value and unit)."""
    return {"name": equation.name, "variables": list(equation.variables), "a": equation.a, "b": equation.b,
            "c": equation.c, "definitions": dict(equation.definitions),
            "parameters": {name: {"value": json_number(p.value), "unit": p.unit}
                           for name, p in equation.parameters.items()}}


def study_fields(equation, parameters: Mapping[str, float], *, tolerance: float | None = None) -> dict:
    """What every results document records about its making: the Mixtype version, the equation, the
    parameter values used and (where it decides types) the parabolic tolerance."""
    fields = {"mixtype_version": core.__version__, "equation": equation_document(equation),
              "parameters": {name: json_number(value) for name, value in parameters.items()}}
    if tolerance is not None:
        fields["tolerance"] = float(tolerance)
    return fields


def project_file_checksum(path: str | os.PathLike | None) -> str | None:
    """SHA-256 (64 hex digits) of a project file's bytes as they are on disk; None without a readable file."""
    if path is None:
        return None
    # Here, not at the top: core.data.sources (the data readers) loads only when there is a file to read;
    # an inline classify never needs it (measured, see core/cli/study.py)
    from core.data.sources import file_checksum

    try:
        return file_checksum(path)
    except DataError:
        return None


def source_document(source: Mapping[str, str] | None) -> dict:
    """Where a study comes from: ``source`` ({"file", "equation", "domain"}) and ``project_checksum`` (the
    SHA-256 of the file's bytes now); no fields for a study that comes from no file."""
    if not source:
        return {}
    return {"source": dict(source), "project_checksum": project_file_checksum(source["file"])}


def data_files_document(data) -> list[dict]:
    """Which data files a result was computed from (core.data.sources.DataSources or None)."""
    if data is None:
        return []
    return [{"path": dataset.path, "checksum": dataset.checksum, "quantities": list(dataset.quantities)}
            for dataset in data.datasets]


# -- the map --------------------------------------------------------------------------------------------
def fractions_document(type_map) -> dict[str, float]:
    """Each type's share of the grid nodes, by name, in FRACTION_ORDER (core.analysis.classify)."""
    return type_map.ordered_fractions()


def type_map_document(type_map) -> dict:
    """The type code of every grid node, rows along the second variable ((ny, nx) nested lists), and what
    each code means."""
    return {"codes": np.asarray(type_map.codes).tolist(), "labels": type_labels()}


def boundary_document(curve, domain=None) -> dict:
    """One type-change line: its points, whether it closes, the type on its left and on its right."""
    return {"points": point_list(curve.points, domain), "closed": bool(curve.closed),
            "left": TypeCode(curve.left_type).label, "right": TypeCode(curve.right_type).label}


def parabolic_region_document(region, domain=None) -> dict:
    """A zone where D vanishes on an area: outer outline, holes, area (variables' units squared), cells."""
    return {"outline": point_list(region.outline, domain), "area": float(region.area),
            "holes": [point_list(hole, domain) for hole in region.holes], "cells": int(region.cells)}


def pocket_document(pocket, domain=None) -> dict:
    """A connected zone of one type with its area, centre, box, node count and the peak of a quantity."""
    peak = None
    if pocket.peak is not None:
        peak = {"quantity": pocket.quantity, "value": json_number(pocket.peak), "at": _pair(pocket.peak_at, domain)}
    x0, x1, y0, y1 = pocket.bounding_box
    box = [*_pair((x0, y0), domain), *_pair((x1, y1), domain)]
    return {"area": float(pocket.area), "centroid": _pair(pocket.centroid, domain),
            "bounding_box": [box[0], box[2], box[1], box[3]],
            "nodes": int(pocket.node_count), "touches_boundary": bool(pocket.touches_boundary), "peak": peak}


def map_fields(variables: Sequence[str], domain, tolerance: float, *, type_map=None, boundaries=None,
               pockets: Iterable | None = None) -> dict:
    """The classify fields: grid, tolerance, type fractions, type-change lines, parabolic regions, pockets.

    A result not computed (None) gives null fields, so a document never pretends a line set is empty.
    """
    fields = {"variables": list(variables), "domain": [domain.xmin, domain.xmax, domain.ymin, domain.ymax],
              "grid": [domain.nx, domain.ny], "tolerance": float(tolerance),
              "fractions": None if type_map is None else fractions_document(type_map)}
    if boundaries is None:
        fields.update(boundaries=None, parabolic_regions=None, refined=None)
    else:
        fields.update(boundaries=[boundary_document(curve, domain) for curve in boundaries.curves],
                      parabolic_regions=[parabolic_region_document(r, domain)
                                         for r in boundaries.parabolic_regions],
                      refined=bool(boundaries.refined))
    fields["pockets"] = None if pockets is None else [pocket_document(pocket, domain) for pocket in pockets]
    return fields


def sweep_document(sweep, variables: Sequence[str], domain=None, *, parameter_unit: str = "") -> dict:
    """A parameter sweep (core.analysis.sweep.Sweep): the parameter, its values, whether they were spread on a
    logarithmic scale, and one row per value with the type fractions (as classify's "fractions"), each type's
    area (units: ``area_units``), the number of hyperbolic pockets and the largest pocket peak (or null)."""
    rows = []
    for row in sweep.rows:
        peak = None
        if row.peak is not None:
            peak = {"quantity": row.peak["quantity"], "value": json_number(row.peak["value"]),
                    "at": _pair(row.peak["at"], domain)}
        rows.append({"value": float(row.value), "fractions": {k: float(v) for k, v in row.fractions.items()},
                     "areas": {k: float(v) for k, v in row.areas.items()}, "pockets": int(row.pockets),
                     "peak": peak})
    first, second = variables
    return {"parameter": sweep.parameter, "values": [float(v) for v in sweep.values], "rows": rows,
            "log": bool(sweep.log), "parameter_unit": parameter_unit, "variables": list(variables),
            "area_units": f"{first}*{second}"}


# -- points and curves ----------------------------------------------------------------------------------
def probe_to_dict(result: ProbeResult, domain=None) -> dict:
    """A JSON-ready dict of ``result``: plain floats, lists, type by name; None for absent or non-finite."""
    return {
        "point": _pair(result.point, domain),
        "type": result.type.label,
        "coefficients": {"a": json_number(result.a), "b": json_number(result.b),
                         "c": json_number(result.c)},
        "discriminant": json_number(result.discriminant),
        "normalized_discriminant": json_number(result.normalized),
        "directions_deg": list(result.directions_deg),
        "slopes": [json_number(s) for s in result.slopes],
        "angle_between_deg": json_number(result.angle_between_deg),
        "principal_axes_deg": None if result.principal_axes_deg is None else list(result.principal_axes_deg),
        "anisotropy": json_number(result.anisotropy),
        "definitions": {name: json_number(value) for name, value in result.definitions.items()},
        "inside": result.inside,
        "message": result.message,
    }


def probe_document(result, trade: TradeReading | None = None, domain=None) -> dict:
    """Everything known at one point (``probe_to_dict``), with the trade readout, its
    units and, where values are missing, a note saying why."""
    document = probe_to_dict(result, domain)
    if trade is not None and (trade.values or trade.error):
        document["trade"] = {name: json_number(value) for name, value in trade.values.items()}
        document["trade_units"] = trade.units
        if trade.problem:
            document["trade_note"] = trade.problem
    return document


def pin_document(pin, result=None, trade: TradeReading | None = None, domain=None) -> dict:
    """A pin: its label and its probe document (only its point while it has not been probed)."""
    if result is None:
        return {"label": pin.label, "point": _pair((pin.x, pin.y), domain)}
    return {"label": pin.label, **probe_document(result, trade, domain)}


def curve_document(curve, domain=None) -> dict:
    """A characteristic curve: its family (1 or 2) at the seed, points, why each end stopped (backward,
    forward), and the events where it went on as the other family, in path order: kind ("edge" or
    "type_change"), the point, and its index in ``points`` (empty when traced without bounces)."""
    return {"family": int(curve.family), "points": point_list(curve.points, domain),
            "ends": list(curve.end_reasons),
            "events": [{"kind": event.kind, "at": _pair(event.at, domain),
                        "index": int(event.index)} for event in curve.events]}


def seed_document(seed, seed_points, curves: Iterable, domain=None) -> dict:
    """A seed of a study: label, the points traced from, the families asked for and the curves found."""
    return {"label": seed.label, "points": point_list(seed_points, domain), "families": list(seed.families),
            "curves": [curve_document(curve, domain) for curve in curves]}


# -- everything -----------------------------------------------------------------------------------------
def results_document(*, equation, domain, parameters: Mapping[str, float], tolerance: float, type_map=None,
                     boundaries=None, pockets: Iterable | None = None, pins: Sequence = (),
                     probes: Sequence = (), trades: Sequence[TradeReading | None] = (),
                     traced: Iterable = (), data=None, project_file: str | os.PathLike | None = None,
                     unsaved_changes: bool = False, include_codes: bool = True) -> dict:
    """Everything computed for one equation on one domain: the classify fields, the pins as probe prints
    them, the seeds as trace prints them, the study (version, equation, parameters, tolerance, data files)
    and the project file (``source``, as the CLI prints it for a FILE) with its checksum.

    ``probes`` and ``trades`` run parallel to ``pins`` (shorter or None where not computed); ``traced`` holds
    (seed, curves) pairs. ``unsaved_changes`` says the study differs from the file the checksum is of.
    """
    document = study_fields(equation, parameters)
    document.update(map_fields(equation.variables, domain, tolerance, type_map=type_map, boundaries=boundaries,
                               pockets=pockets))
    if type_map is not None and include_codes:
        document["type_map"] = type_map_document(type_map)
    probes, trades = list(probes), list(trades)
    document["pins"] = [pin_document(pin, probes[i] if i < len(probes) else None,
                                     trades[i] if i < len(trades) else None, domain) for i, pin in enumerate(pins)]
    document["seeds"] = [seed_document(seed, seed.points(), curves, domain) for seed, curves in traced]
    document["data"] = data_files_document(data)
    document["source"] = {"file": None if project_file is None else os.fspath(project_file),
                          "equation": equation.name, "domain": domain.name}
    document["project_checksum"] = project_file_checksum(project_file)
    document["unsaved_changes"] = bool(unsaved_changes)
    return document
