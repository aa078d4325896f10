"""The zero level of a type map's field, contoured in strips of rows and stitched into whole lines.

The field is F = D/S with parabolic nodes exactly 0 and undefined nodes NaN (masked), built a strip at a
time from the map's float32 storage, so no float64 copy of the whole grid is ever made (contourpy also
makes 2-D coordinate arrays: three doubles a node for the whole grid otherwise). Strips overlap by one
row of nodes. Within a strip, the columns of cells holding a sign change form clusters separated by at
least one column without one, which no line can cross; only the clusters are contoured, packed side by
side with a masked column between neighbours, so the work follows the lines' length, not the domain's area,
and strips without a change are skipped. A line leaving a strip through its top or bottom row ends there
on a grid edge; the strip on the other side has a line ending on the same edge, computed from the same two
values: the two pieces are joined there, so each line comes out whole, closed ones closed.

On a grid of one strip the lines are contourpy's, in its order (packing keeps the order in which contourpy
meets them, row by row). Across strips, lines come in the order in which their first piece was found (strips
bottom to top, contourpy's order within a strip).
"""

from __future__ import annotations

import contourpy
import numpy as np

from core.analysis.classify import TypeCode

__all__ = ["zero_lines"]

_STRIP_NODES = 1 << 20          # nodes per strip (about 30 bytes each while contourpy works on it)
_ON_ROW_TOLERANCE = 1e-9        # an end this close to a strip's edge row (in row spacings) lies on it
_CLOSED = 79                    # contourpy's CLOSEPOLY code: the line is closed, last point = first


def zero_lines(codes: np.ndarray, normalized: np.ndarray, x: np.ndarray, y: np.ndarray
               ) -> tuple[list[np.ndarray], list[bool]]:
    """Level-0 lines of F over the grid x (nx,), y (ny,): polylines (n, 2) and whether each is closed.

    A closed line does not repeat its first point (contourpy calls a line closed when its ends coincide).
    Lines keep contourpy's orientation (F > 0 on the same side throughout), joined pieces included.
    """
    ny, nx = codes.shape
    rows = max(1, _STRIP_NODES // nx)
    pieces: list[np.ndarray] = []
    closed: list[bool] = []
    edge_rows: list[tuple[int, int]] = []         # per piece: the strip's (bottom, top) node rows
    for bottom in range(0, ny - 1, rows):
        top = min(ny - 1, bottom + rows)
        for line, is_closed in _strip_lines(codes, normalized, x, y, bottom, top):
            pieces.append(line)
            closed.append(is_closed)
            edge_rows.append((bottom, top))
    if len(set(edge_rows)) > 1:
        pieces, closed = _stitch(pieces, closed, edge_rows, x, y, ny)
    return [line[:-1] if is_closed else line for line, is_closed in zip(pieces, closed)], closed


def _strip_lines(codes: np.ndarray, normalized: np.ndarray, x: np.ndarray, y: np.ndarray, bottom: int,
                 top: int) -> list[tuple[np.ndarray, bool]]:
    """contourpy's lines of F on node rows bottom..top, in the columns of cells with a sign change only;
    a closed line repeats its first point at the end."""
    clusters = _changing_columns(codes[bottom:top + 1])
    if clusters.size == 0:
        return []
    columns, separators = _packed_columns(clusters)
    block = codes[bottom:top + 1].take(columns, axis=1)
    field = normalized[bottom:top + 1].take(columns, axis=1).astype(np.float64)
    field[block == TypeCode.PARABOLIC] = 0.0
    field[block == TypeCode.UNDEFINED] = np.nan
    field[:, separators] = np.nan
    x_packed = x[columns]
    # a separator sits between its neighbours: coordinates keep increasing (its quads are masked anyway)
    x_packed[separators] = 0.5 * (x_packed[separators - 1] + x_packed[separators + 1])
    lines, line_codes = _serial_lines(x_packed, y[bottom:top + 1], field)
    return [(line, bool(len(code) > 2 and code[-1] == _CLOSED)) for line, code in zip(lines, line_codes)]


def _serial_lines(x: np.ndarray, y: np.ndarray, field: np.ndarray) -> tuple[list, list]:
    """contourpy's serial zero lines of ``field`` (NaN masked) as (points, codes) per line: what
    contourpy.contour_generator(x, y, field, name="serial", line_type="SeparateCode", corner_mask=False,
    chunk_size=0).lines(0.0) gives, built with the generator class itself, because the factory masks through
    numpy.ma, whose import (14 ms) was a fifth of what an inline classify adds to numpy and sympy."""
    invalid = np.isnan(field)
    xx, yy = np.meshgrid(x, y)
    generator = contourpy.SerialContourGenerator(
        xx, yy, field, invalid if invalid.any() else None, corner_mask=False,
        line_type=contourpy.LineType.SeparateCode, fill_type=contourpy.FillType.OuterCode, quad_as_tri=False,
        z_interp=contourpy.ZInterp.Linear, x_chunk_size=0, y_chunk_size=0)
    return generator.lines(0.0)


def _changing_columns(block: np.ndarray) -> np.ndarray:
    """Runs of columns of cells (rows of ``block``'s codes) holding a sign change of F: int (k, 2) rows of
    (first cell column, last cell column + 1), separated by at least one column without a change.

    A column of cells between node columns i and i + 1 holds a change exactly when those two columns of
    nodes are not all hyperbolic and not all non-hyperbolic; HYPERBOLIC being the largest code, that is read
    from the columns' maxima and minima: two reductions of the int8 codes, no array of the strip's size.
    """
    some_hyperbolic = block.max(axis=0) == TypeCode.HYPERBOLIC
    some_other = block.min(axis=0) != TypeCode.HYPERBOLIC
    changing = (some_hyperbolic[:-1] | some_hyperbolic[1:]) & (some_other[:-1] | some_other[1:])
    bounds = np.flatnonzero(np.diff(changing, prepend=False, append=False))
    return bounds.reshape(-1, 2)


def _packed_columns(clusters: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Node columns of the clusters side by side with one separator column between neighbours, and the
    separators' positions in the packed array (their entries in ``columns`` are -1)."""
    widths = clusters[:, 1] - clusters[:, 0] + 1                 # node columns of each cluster
    starts = np.concatenate([[0], np.cumsum(widths + 1)[:-1]])  # packed position of each cluster's first
    total = int(starts[-1] + widths[-1])
    columns = np.arange(total) + np.repeat(clusters[:, 0] - starts, widths + 1)[:total]
    separators = starts[1:] - 1
    columns[separators] = -1
    return columns, separators


def _stitch(pieces: list[np.ndarray], closed: list[bool], edge_rows: list[tuple[int, int]], x: np.ndarray,
            y: np.ndarray, ny: int) -> tuple[list[np.ndarray], list[bool]]:
    """Join pieces whose ends meet on a row shared by two strips; lines in the order of their first piece,
    closed ones repeating their first point at the end."""
    follower = np.full(len(pieces), -1)
    has_leader = np.zeros(len(pieces), dtype=bool)
    # per shared row: (x, piece) of the ends there, by side and direction; a piece from below leaving
    # upward continues in a piece from above entering from below, and the other way round
    ends: dict[tuple[int, str], list[tuple[float, int]]] = {}
    for index, (line, (bottom, top)) in enumerate(zip(pieces, edge_rows)):
        # a "closed" piece whose ends meet on a shared row may enter and leave the strip at one node where
        # F is exactly 0: it is matched like an open piece, and stays closed if nothing continues it
        for row, side in ((top, "below"), (bottom, "above")):
            if 0 < row < ny - 1:
                tolerance = _ON_ROW_TOLERANCE * (y[row + 1] - y[row - 1])
                if abs(line[-1, 1] - y[row]) <= tolerance:
                    ends.setdefault((row, f"leaves {side}"), []).append((float(line[-1, 0]), index))
                if abs(line[0, 1] - y[row]) <= tolerance:
                    ends.setdefault((row, f"enters {side}"), []).append((float(line[0, 0]), index))
    for (row, kind), leaving in ends.items():
        if not kind.startswith("leaves"):
            continue
        other_side = "above" if kind.endswith("below") else "below"
        arriving = ends.get((row, f"enters {other_side}"), [])
        if not arriving:
            continue
        # Both pieces cross the same grid edge of the row, at the same point up to rounding; ends crossing
        # the row the same way lie at least a grid spacing apart, so the nearest one within a quarter
        # spacing is the continuation.
        starts = np.array([position for position, _ in arriving])
        for position, index in leaving:
            nearest = int(np.argmin(np.abs(starts - position)))
            column = min(max(int(np.searchsorted(x, position)), 1), x.size - 1)
            if abs(starts[nearest] - position) <= 0.25 * (x[column] - x[column - 1]):
                follower[index] = arriving[nearest][1]
                has_leader[arriving[nearest][1]] = True
    closed = [is_closed and follower[index] < 0 and not has_leader[index]
              for index, is_closed in enumerate(closed)]
    lines: list[tuple[int, np.ndarray, bool]] = []         # (first piece, line, closed)
    used = np.zeros(len(pieces), dtype=bool)
    for index in range(len(pieces)):                          # open chains, from their first piece
        if closed[index] or has_leader[index]:
            continue
        chain = _follow(index, follower, used)
        lines.append((min(chain), _join(pieces, chain), False))
    for index in range(len(pieces)):                          # what is left: single closed pieces and rings
        if used[index]:
            continue
        if closed[index]:
            used[index] = True
            lines.append((index, pieces[index], True))
            continue
        chain = _follow(index, follower, used)
        lines.append((min(chain), _join(pieces, chain), True))   # the last point is the first again
    lines.sort(key=lambda item: item[0])
    return [line for _, line, _ in lines], [is_closed for _, _, is_closed in lines]


def _follow(index: int, follower: np.ndarray, used: np.ndarray) -> list[int]:
    chain = []
    while index >= 0 and not used[index]:
        used[index] = True
        chain.append(index)
        index = int(follower[index])
    return chain


def _join(pieces: list[np.ndarray], chain: list[int]) -> np.ndarray:
    """The pieces of a chain end to end; each joint point is kept once (the earlier piece's)."""
    return np.concatenate([pieces[chain[0]]] + [pieces[k][1:] for k in chain[1:]])
