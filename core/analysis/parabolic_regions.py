"""Zones where the discriminant vanishes on an area: connected groups of grid cells with four parabolic corners.

Such zones are reported as regions (outline, holes, area), not as lines: a type-change line would have to
run around them and would hide that the equation is parabolic on a whole area.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from core.analysis.classify import TypeCode
from core.analysis.run_labels import bounding_slices, label_runs, paint_labels
from core.progress import CancelCheck, Cancelled

__all__ = ["ParabolicRegion", "parabolic_cells", "parabolic_regions"]


def _read_only(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


@dataclass(frozen=True, eq=False)
class ParabolicRegion:
    """A connected set of grid cells on which D vanishes (all four corners of each cell parabolic).

    ``outline`` (n, 2) is its outer boundary, a closed counter-clockwise loop along cell edges (first point
    repeated at the end); ``holes`` are the other boundary loops, clockwise. ``area`` is the total area of the
    cells (domain units squared), an O(h) estimate of the true zone; ``cells`` their number.
    """

    outline: np.ndarray
    area: float
    holes: tuple[np.ndarray, ...] = ()
    cells: int = 0



def parabolic_cells(codes: np.ndarray) -> np.ndarray:
    """Cells (ny-1, nx-1) whose four corners are parabolic."""
    p = codes == TypeCode.PARABOLIC
    return p[:-1, :-1] & p[1:, :-1] & p[:-1, 1:] & p[1:, 1:]


def parabolic_regions(cells: np.ndarray, x: np.ndarray, y: np.ndarray, cancel: CancelCheck | None
                       ) -> tuple[ParabolicRegion, ...]:
    """Edge-connected groups of parabolic cells, with their boundary loops and areas."""
    if not cells.any():
        return ()
    runs = label_runs(cells, True, connectivity=4)
    labels, count = paint_labels(runs), runs.count
    areas, sizes = np.zeros(count + 1), np.zeros(count + 1, dtype=np.int64)
    widths, heights = np.diff(x), np.diff(y)
    step = max(1, (1 << 17) // max(widths.size, 1))
    for start in range(0, labels.shape[0], step):            # a block of rows at a time: bounded memory
        block = labels[start:start + step]
        areas += np.bincount(block.ravel(), weights=np.outer(heights[start:start + step], widths).ravel(),
                             minlength=count + 1)
        sizes += np.bincount(block.ravel(), minlength=count + 1)
    regions = []
    for label, box in enumerate(bounding_slices(runs), start=1):
        if cancel is not None and cancel():
            raise Cancelled("parabolic regions cancelled")
        loops = _cell_boundary_loops(labels[box] == label)
        coordinates = [np.column_stack([x[loop[:, 0] + box[1].start], y[loop[:, 1] + box[0].start]])
                       for loop in loops]
        signed = [_signed_area(loop) for loop in coordinates]
        outer = int(np.argmax(signed))
        holes = tuple(_read_only(c) for k, c in enumerate(coordinates) if k != outer)
        regions.append(ParabolicRegion(outline=_read_only(coordinates[outer]), area=float(areas[label]),
                                       holes=holes, cells=int(sizes[label])))
    return tuple(regions)


def _cell_boundary_loops(mask: np.ndarray) -> list[np.ndarray]:
    """Closed loops of node indices (k, 2) as (i, j) around the True cells of mask (h, w), cells on the left.

    Each boundary cell edge is directed so that its cell lies on its left; at a node where two loops touch
    the walk turns left, so loops never cross. Collinear vertices are dropped; the first one is repeated last.
    """
    padded = np.pad(mask, 1)
    inside = padded[1:-1, 1:-1]
    starts, ends = [], []
    for out, start, end in (
            (~padded[:-2, 1:-1], (0, 0), (1, 0)),        # below is outside: bottom edge, going +x
            (~padded[1:-1, 2:], (1, 0), (1, 1)),         # right edge, going +y
            (~padded[2:, 1:-1], (1, 1), (0, 1)),         # top edge, going -x
            (~padded[1:-1, :-2], (0, 1), (0, 0))):       # left edge, going -y
        j, i = np.nonzero(inside & out)
        starts.append(np.column_stack([i + start[0], j + start[1]]))
        ends.append(np.column_stack([i + end[0], j + end[1]]))
    start, end = np.concatenate(starts), np.concatenate(ends)
    width = mask.shape[1] + 1
    start_id, end_id = start[:, 1] * width + start[:, 0], end[:, 1] * width + end[:, 0]
    order = np.argsort(start_id, kind="stable")
    sorted_ids = start_id[order]
    position = np.searchsorted(sorted_ids, end_id)
    first = order[position]
    second = order[np.minimum(position + 1, len(order) - 1)]
    two_ways = (position + 1 < len(order)) & (sorted_ids[np.minimum(position + 1, len(order) - 1)] == end_id)
    direction = end - start
    turn = direction[:, 0] * direction[first, 1] - direction[:, 1] * direction[first, 0]
    following = np.where(two_ways & (turn <= 0), second, first).tolist()

    loops, used = [], np.zeros(len(start), dtype=bool)
    for begin in range(len(start)):
        if used[begin]:
            continue
        chain, edge = [], begin
        while not used[edge]:
            used[edge] = True
            chain.append(edge)
            edge = following[edge]
        nodes = start[chain]
        heading = direction[chain]
        corner = np.any(heading != np.roll(heading, 1, axis=0), axis=1)
        nodes = nodes[corner]
        loops.append(np.concatenate([nodes, nodes[:1]]))
    return loops


def _signed_area(loop: np.ndarray) -> float:
    """Shoelace area of a closed loop (first point repeated): positive when counter-clockwise."""
    return 0.5 * float(np.sum(loop[:-1, 0] * loop[1:, 1] - loop[1:, 0] * loop[:-1, 1]))
