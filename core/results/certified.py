"""The ``certified`` object of the results document: a certified type map as plain JSON.

Field names are a public interface (tests/core/test_cli_json_fields.py): ``min_cell``, ``area`` (per type
[proven, proven plus undecided], units of the variables' product), ``undecided_area``, ``cells`` (cells
enclosed), ``pockets`` (type, bbox [x0, x1, y0, y1], area [lower, upper], proven, missed_by_grid) and
``tangencies`` (points [[x, y], ...] where D touches zero without changing sign).
"""

from __future__ import annotations

from core.certify.refinement import CertifiedMap
from core.results.document import json_number, point_list

__all__ = ["CERTIFIED_AREA_ORDER", "certified_document"]

CERTIFIED_AREA_ORDER = ("elliptic", "hyperbolic", "parabolic", "undefined")


def _pair(bounds) -> list[float | None]:
    return [json_number(bounds[0]), json_number(bounds[1])]


def certified_document(certified: CertifiedMap) -> dict:
    """The ``certified`` object of ``mixtype classify --certify --json``."""
    return {
        "min_cell": json_number(certified.min_cell),
        "area": {label: _pair(certified.area[label]) for label in CERTIFIED_AREA_ORDER},
        "undecided_area": json_number(certified.undecided_area),
        "cells": int(certified.cells),
        "pockets": [{"type": pocket.type, "bbox": [json_number(v) for v in pocket.bbox], "area": _pair(pocket.area),
                     "proven": bool(pocket.proven),
                     "missed_by_grid": None if pocket.missed_by_grid is None else bool(pocket.missed_by_grid)}
                    for pocket in certified.pockets],
        "tangencies": [{"points": point_list(tangency.points)} for tangency in certified.tangencies],
    }
