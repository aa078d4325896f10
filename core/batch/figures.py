"""The figures of one classify document that a batch's summary lists, computed where the job ran.

Each type's share of the grid nodes (``*_fraction``, 0 to 1), the hyperbolic pockets (count, total and
largest area, in the study's variables' units squared), the parabolic regions' total area, and the peak of
the pocket quantity over every pocket (e.g. the largest local Mach number of a supersonic pocket). Workers
compute them from the document they built, so the batch's own process only writes what workers send.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

from core.results.document import FRACTION_ORDER

__all__ = ["FIGURE_COLUMNS", "FRACTION_COLUMNS", "document_figures"]

FRACTION_COLUMNS = tuple(f"{code.label}_fraction" for code in FRACTION_ORDER)
FIGURE_COLUMNS = (*FRACTION_COLUMNS, "hyperbolic_pockets", "hyperbolic_area", "largest_pocket_area",
                  "parabolic_area", "peak_quantity", "peak_value")


def document_figures(document: Mapping) -> dict:
    """The FIGURE_COLUMNS of one ``mixtype classify --json`` document (None where there is no value)."""
    fractions = document.get("fractions") or {}
    pockets = document.get("pockets") or []
    areas = [pocket["area"] for pocket in pockets]
    peaks = [pocket["peak"] for pocket in pockets if pocket.get("peak") is not None]
    values = [peak["value"] for peak in peaks if peak["value"] is not None]
    regions = document.get("parabolic_regions")
    return {
        **{column: fractions.get(code.label)
           for column, code in zip(FRACTION_COLUMNS, FRACTION_ORDER, strict=True)},
        "hyperbolic_pockets": len(pockets),
        "hyperbolic_area": math.fsum(areas),
        "largest_pocket_area": max(areas) if areas else None,
        "parabolic_area": None if regions is None else math.fsum(region["area"] for region in regions),
        "peak_quantity": peaks[0]["quantity"] if peaks else None,
        "peak_value": max(values) if values else None,
    }
