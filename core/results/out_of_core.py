"""The classify document of an out-of-core run (core.analysis.out_of_core.OutOfCoreMap): the fields every
``mixtype classify --json`` prints, with null where the run cannot compute them, and an ``out_of_core`` object
saying what it did compute and where its codes are."""

from __future__ import annotations

from collections.abc import Sequence

from core.results.document import FRACTION_ORDER, type_labels

__all__ = ["NOT_COMPUTED", "NOT_COMPUTED_NOTE", "out_of_core_fields"]

NOT_COMPUTED = ("boundaries", "parabolic_regions", "refined", "pockets")
NOT_COMPUTED_NOTE = ("an out-of-core run classifies the data's grid one band of rows at a time and keeps no map in "
                     "memory: type-change lines, parabolic regions and pockets need the whole map, so those fields "
                     "are null; fractions, node counts and areas by type are exact for the nodes classified")


def out_of_core_fields(variables: Sequence[str], result, data_files: list[dict]) -> dict:
    """The classify fields of ``result`` (an OutOfCoreMap): variables, domain (the span of the nodes
    classified), grid [nx, ny], tolerance, fractions as classify_grid counts them, null for what needs the
    whole map, the data files, and ``out_of_core``: the file streamed, which of its nodes (first, last, step
    of the indices along each variable), node counts and areas by type (units of the variables squared, each
    node standing for the cell between the midpoints to its neighbours), bands, the band budget in bytes,
    the codes file and what its codes mean, and which fields are null and why."""
    x0, x1, y0, y1 = result.extent
    document = {"variables": list(variables), "domain": [x0, x1, y0, y1], "grid": list(result.grid),
                "tolerance": result.tolerance,
                "fractions": {code.label: float(result.fractions[code.label]) for code in FRACTION_ORDER}}
    document.update(dict.fromkeys(NOT_COMPUTED))
    document["data"] = data_files
    order = [code.label for code in FRACTION_ORDER]
    document["out_of_core"] = {
        "file": result.path,
        "columns": dict(zip(("first", "last", "step"), result.columns, strict=True)),
        "rows": dict(zip(("first", "last", "step"), result.rows, strict=True)),
        "node_counts": {label: result.counts[label] for label in order},
        "areas": {label: result.areas[label] for label in order},
        "bands": result.bands,
        "band_rows": result.band_rows,
        "block_budget_bytes": result.block_budget,
        "codes": result.codes_path,
        "codes_layout": {"dtype": "int8", "shape": [result.grid[1], result.grid[0]],
                         "labels": type_labels()} if result.codes_path else None,
        "not_computed": list(NOT_COMPUTED),
        "note": NOT_COMPUTED_NOTE,
    }
    return document
