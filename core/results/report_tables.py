"""The study report's blocks and tables: rows of plain text from the results document's fields.

``section``, ``paragraph``, ``table`` and ``not_computed`` make the blocks core.results.report describes. The
row functions take fields of core.results.document (points already cleaned of rounding noise) or core results
and give rows of strings. Numbers are written with six significant digits (``number``), ranges as "LOW to
HIGH", missing or non-finite values as "undefined".
"""

from __future__ import annotations

import math
import os
from collections import Counter
from collections.abc import Sequence

import numpy as np

from core.analysis.classify import TypeCode
from core.results.certified import CERTIFIED_AREA_ORDER
from core.results.readable import point_without_noise

__all__ = ["boundary_rows", "certified_blocks", "data_rows", "fraction_rows", "not_computed", "number", "paragraph",
           "pocket_rows", "section", "seed_rows", "table"]

MAX_ROWS = 50          # rows of one table of lines, pockets or certified pockets (the JSON keeps them all)
MAX_LISTED = 10        # tangencies named in the certified section's sentence


def section(section_id: str, title: str, blocks: list[dict], *, computed: bool = True) -> dict:
    """One section of the report: its id (the HTML anchor), title, whether its part was computed, its blocks."""
    return {"id": section_id, "title": title, "computed": computed, "blocks": blocks}


def not_computed(section_id: str, title: str, text: str) -> dict:
    """A section whose part was not computed: one line saying so and why (``text``)."""
    return section(section_id, title, [{"kind": "not_computed", "text": f"Not computed: {text}"}], computed=False)


def paragraph(text: str) -> dict:
    return {"kind": "paragraph", "text": text}


def table(columns, rows, *, keyed: bool = False, caption: str = "") -> dict:
    """A table block: ``columns`` and ``rows`` as texts (lists); ``keyed`` when the first column names the row."""
    block = {"kind": "table", "columns": list(columns), "rows": [list(map(str, row)) for row in rows],
             "keyed": keyed}
    if caption:
        block["caption"] = caption
    return block


def number(value, digits: int = 6) -> str:
    """A number with ``digits`` significant digits; "undefined" for None or a value that is not finite."""
    if value is None or not math.isfinite(float(value)):
        return "undefined"
    return f"{float(value) + 0.0:.{digits}g}"


def _point(point) -> str:
    return f"({number(point[0])}, {number(point[1])})"


def _span(low, high) -> str:
    return f"{number(low)} to {number(high)}"


def _limited(rows: list, what: str) -> list:
    if len(rows) <= MAX_ROWS:
        return rows
    return [*rows[:MAX_ROWS], [f"… and {len(rows) - MAX_ROWS} more {what} (see the JSON results)"]]


def fraction_rows(fractions: dict[str, float], zones) -> list[tuple[str, str, str]]:
    """Each type's share of the grid nodes (%) and the area of its filled zones (``zones``: ZonePolygons, or
    None when the map was too large for polygons; undefined nodes belong to no zone)."""
    rows = []
    for label, share in fractions.items():             # in the results document's order
        code = TypeCode[label.upper()]
        area = "—" if zones is None or code == TypeCode.UNDEFINED else number(zones.area(code))
        rows.append((label, f"{100.0 * share:.3f} %", area))
    return rows


def boundary_rows(boundaries: Sequence[dict]) -> list:
    """One row per type-change line: vertices, open or closed, the types on each side, length and extent."""
    rows = []
    for index, line in enumerate(boundaries, 1):
        points = np.asarray(line["points"], dtype=float).reshape(-1, 2)
        length = float(np.hypot(*np.diff(points, axis=0).T).sum()) if len(points) > 1 else 0.0
        rows.append([str(index), str(len(points)), "closed" if line["closed"] else "open", line["left"],
                     line["right"], number(length), _span(points[:, 0].min(), points[:, 0].max()),
                     _span(points[:, 1].min(), points[:, 1].max())])
    return _limited(rows, "lines")


def pocket_rows(pockets: Sequence[dict], *, with_peak: bool) -> list:
    """One row per pocket (its document, core.results.document.pocket_document): area, centroid, box, nodes,
    whether it reaches the domain's edge and, ``with_peak``, the peak and where it is."""
    rows = []
    for index, pocket in enumerate(pockets, 1):
        x0, x1, y0, y1 = pocket["bounding_box"]
        row = [str(index), number(pocket["area"]), _point(pocket["centroid"]), _span(x0, x1), _span(y0, y1),
               str(pocket["nodes"]), "yes" if pocket["touches_boundary"] else "no"]
        if with_peak:
            peak = pocket["peak"]
            row.append("—" if peak is None else f"{number(peak['value'])} at {_point(peak['at'])}")
        rows.append(row)
    return _limited(rows, "pockets")


def seed_rows(traced, domain) -> list:
    """One row per seed: where it starts, the families traced, the curves, why their ends stopped (counted)
    and how many times they went on as the other family."""
    rows = []
    for index, (seed, curves) in enumerate(traced, 1):
        start = point_without_noise(seed.start, domain)
        where = _point(start)
        if seed.is_segment:
            where = f"{seed.curves} points from {where} to {_point(point_without_noise(seed.end, domain))}"
        ends = Counter(reason for curve in curves for reason in curve.end_reasons)
        events = sum(len(curve.events) for curve in curves)
        label = f"{index}" + (f": {seed.label}" if seed.label else "")
        rows.append([label, where, ", ".join(map(str, seed.families)), str(len(curves)),
                     ", ".join(f"{reason} × {count}" for reason, count in sorted(ends.items())) or "—", str(events)])
    return rows


def data_rows(datasets: Sequence[dict], project, project_file) -> list:
    """One row per data file read (core.results.document.data_files_document): its name (relative to the
    project file's folder where it lies inside it), quantities, SHA-256 and whether it is the file the project
    recorded (same checksum), a changed one, or one given beside the project."""
    folder = None if project_file is None else os.path.dirname(os.path.abspath(os.fspath(project_file)))
    recorded = {}
    for source in getattr(project, "data_sources", ()) or ():
        path = source.path
        if folder is not None and not os.path.isabs(path):
            path = os.path.join(folder, *path.split("/"))
        recorded[os.path.realpath(path)] = source.checksum
    rows = []
    for dataset in datasets:
        real = os.path.realpath(dataset["path"])
        shown = dataset["path"]
        if folder is not None and os.path.commonpath([real, os.path.realpath(folder)]) == os.path.realpath(folder):
            shown = os.path.relpath(real, os.path.realpath(folder)).replace(os.sep, "/")
        if real not in recorded:
            status = "not in the project (given beside it)"
        elif recorded[real] == dataset["checksum"]:
            status = "the file the project recorded (same checksum)"
        else:
            status = f"changed since the project was saved (recorded {recorded[real]})"
        rows.append([shown, ", ".join(dataset["quantities"]), dataset["checksum"], status])
    return rows


def certified_blocks(certified, variables: Sequence[str], min_cell: float) -> list[dict]:
    """The certified map (core.certify.refinement.CertifiedMap) as report blocks: what was examined, each
    type's proven area and the most it may cover, the undecided area, the certified pockets and tangencies."""
    x, y = variables
    domain = certified.domain
    total = (domain.xmax - domain.xmin) * (domain.ymax - domain.ymin)
    share = 100.0 * certified.undecided_area / total if total > 0 else 0.0
    budget = "; the cell budget ran out (raise the certified layer's in the Layers panel)" \
        if certified.budget_reached else ""
    blocks = [paragraph(
        f"Proven cell by cell with interval bounds on D (the {certified.dependency_form}): {certified.cells} cells "
        f"examined, refined down to {number(certified.min_cell)} (asked: {number(min_cell)}); undecided area "
        f"{number(certified.undecided_area)} ({share:.4g} % of the domain){budget}.")]
    rows = [[label, number(certified.area[label][0]), number(certified.area[label][1])]
            for label in CERTIFIED_AREA_ORDER]
    blocks.append(table(["type", f"proven area ({x}·{y})", "at most"], rows, keyed=True))
    pockets = []
    for index, pocket in enumerate(certified.pockets, 1):
        x0, x1, y0, y1 = pocket.bbox
        missed = {None: "—", True: "yes: no node of its type inside", False: "no"}[pocket.missed_by_grid]
        pockets.append([str(index), pocket.type, _span(x0, x1), _span(y0, y1),
                        f"{number(pocket.area[0])} to {number(pocket.area[1])}",
                        "proven" if pocket.proven else "possible", missed])
    if pockets:
        blocks.append(table(["pocket", "type", f"{x} range", f"{y} range", "area", "exists", "missed by the grid"],
                            _limited(pockets, "pockets"),
                            caption="Certified pockets: the connected zones that may hold each type (proven: surely "
                                    "hold it)"))
    else:
        blocks.append(paragraph("No certified pocket."))
    places = [f"{x} in {_span(t.bbox[0], t.bbox[1])}, {y} in {_span(t.bbox[2], t.bbox[3])}"
              for t in certified.tangencies[:MAX_LISTED]]
    if len(certified.tangencies) > MAX_LISTED:
        places.append(f"and {len(certified.tangencies) - MAX_LISTED} more")
    where = f", at {'; '.join(places)}" if places else ""
    blocks.append(paragraph(f"Parabolic tangencies (D touches 0 without changing sign): "
                            f"{len(certified.tangencies)}{where}."))
    return blocks
