"""Type-change lines of a classified grid, refined onto the exact zero set of the discriminant.

The lines bound the hyperbolic set. They are the level 0 of the field F = D/S with parabolic nodes set to
exactly 0 and undefined nodes masked, contoured with contourpy (in strips of rows, core.analysis.
strip_contours), which counts a node as above the level only when F > 0: a field that is zero to rounding
gives no contour at all. Hyperbolic nodes are strictly above 0 and elliptic ones strictly below, even in
the map's float32 storage: a nonzero computed D/S is at least about 2^-53 in size (a difference of two
rounded terms over their sum), far above the float32 range's bottom. Every marching-squares vertex lies on a
grid edge; it is then moved along that edge onto the zero of D by a bracketed root search run on all vertices
at once, which turns the O(h^2) error of linear interpolation into one of a few units of rounding.
Zones where D vanishes on an area (grid cells whose four corners are parabolic) are regions, not lines.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from itertools import pairwise

import numpy as np

from core.analysis.classify import TypeCode, TypeMap
from core.analysis.parabolic_regions import ParabolicRegion, parabolic_cells, parabolic_regions
from core.analysis.strip_contours import zero_lines
from core.analysis.zero_refinement import PointFunction, discriminant_function, roots_on_segments
from core.equations.compiled import CompiledEquation
from core.equations.equation import QuantitySource
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = [
    "DEFAULT_RELATIVE_XTOL",
    "ParabolicRegion",
    "TypeBoundaries",
    "TypeChangeCurve",
    "find_type_boundaries",
]

DEFAULT_RELATIVE_XTOL = 1e-13       # root position tolerance, as a fraction of the domain (segment box) size
_ON_LINE_TOLERANCE = 1e-9           # a vertex this close to a grid line (in grid spacings) lies on it
_KIND_OFF, _KIND_NODE, _KIND_X_EDGE, _KIND_Y_EDGE = 0, 1, 2, 3   # X_EDGE: along x, at a node row
_NEIGHBOURS = ((0, 1), (0, -1), (1, 0), (-1, 0))                   # (dj, di)

def _read_only(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


@dataclass(frozen=True, eq=False)
class TypeChangeCurve:
    """A polyline across which the equation changes type, the hyperbolic set on its left.

    ``points`` (n, 2) are (x, y) vertices in domain units refined onto D = 0; ``raw_points`` (n, 2) the same
    vertices as contoured, on grid edges. A closed curve repeats its first point at the end. ``left_type`` and
    ``right_type`` are the types on either side looking along the polyline (right: elliptic, or parabolic
    where the curve borders a parabolic region). ``unrefined`` counts vertices left at their raw position
    (not on a grid edge, or D not of opposite signs at the ends of their edge).
    """

    points: np.ndarray
    raw_points: np.ndarray
    closed: bool
    left_type: TypeCode
    right_type: TypeCode
    unrefined: int

    @property
    def length(self) -> float:
        """Length of the refined polyline (domain units)."""
        return float(np.sum(np.hypot(*np.diff(self.points, axis=0).T)))


@dataclass(frozen=True, eq=False)
class TypeBoundaries:
    """Everything ``find_type_boundaries`` found: curves, parabolic regions, and how it refined them."""

    curves: tuple[TypeChangeCurve, ...]
    parabolic_regions: tuple[ParabolicRegion, ...]
    refined: bool
    xtol: float = 0.0

    @property
    def unrefined(self) -> int:
        """Vertices of all curves left at their raw position."""
        return sum(curve.unrefined for curve in self.curves)


def find_type_boundaries(compiled: CompiledEquation, type_map: TypeMap, *,
                         parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                         refine: bool = True, xtol: float | None = None, cancel: CancelCheck | None = None,
                         progress: ProgressReport | None = None) -> TypeBoundaries:
    """Curves bounding the hyperbolic set of ``type_map`` and the zones where D vanishes on an area.

    ``parameters`` default to those the map was computed with. With ``refine`` each curve vertex is moved
    along its grid edge onto D = 0 to within ``xtol`` (domain units; default DEFAULT_RELATIVE_XTOL times the
    domain diagonal). Curve pieces whose non-hyperbolic side is undefined (the edge of the valid zone) or
    hyperbolic again (D touching zero without changing sign) are not type changes and are left out.
    """
    codes, x, y = _checked_map(type_map)
    parameters = type_map.parameters if parameters is None else parameters
    if xtol is None:
        xtol = DEFAULT_RELATIVE_XTOL * type_map.domain.size
    if not (np.isfinite(xtol) and xtol > 0):
        raise ValueError(f"xtol must be a positive number, got {xtol}")
    _poll(cancel)
    region_cells = _region_cells(type_map, codes)
    lines, loops = zero_lines(codes, type_map.normalized, x, y)
    _report(progress, 0.4)
    _poll(cancel)

    raw = np.concatenate(lines) if lines else np.empty((0, 2))
    located = _locate(raw, x, y)
    side, toward_hyperbolic = _sides(codes, x, y, located, region_cells)
    pieces = _split(np.cumsum([0] + [len(line) for line in lines]), loops, side)
    _report(progress, 0.5)

    points, refined_ok = raw.copy(), np.zeros(len(raw), dtype=bool)
    if refine and pieces:
        in_pieces = np.zeros(len(raw), dtype=bool)   # (np.unique would import numpy.ma: 14 ms of a quick run)
        in_pieces[np.concatenate([indices for indices, _, _ in pieces])] = True
        used = np.flatnonzero(in_pieces)
        function = discriminant_function(compiled, parameters, data)
        points[used], refined_ok[used] = _refine_vertices(function, raw[used], x, y,
                                                          located[:, used], xtol, cancel)
    _report(progress, 0.9)

    curves = []
    for indices, closed, right in pieces:
        if _left_turn_sum(raw, toward_hyperbolic, indices, closed) < 0:
            indices = indices[::-1]
        unrefined = len(indices) - int(np.count_nonzero(refined_ok[indices]))
        if closed:
            indices = np.append(indices, indices[0])
        curves.append(TypeChangeCurve(
            points=_read_only(points[indices]), raw_points=_read_only(raw[indices]), closed=closed,
            left_type=TypeCode.HYPERBOLIC, right_type=TypeCode(right), unrefined=unrefined))
    regions = () if region_cells is None else parabolic_regions(region_cells, x, y, cancel)
    _report(progress, 1.0)
    return TypeBoundaries(curves=tuple(curves), parabolic_regions=regions, refined=bool(refine),
                          xtol=float(xtol))


# -- the field and the contour vertices ---------------------------------------------------------------------
def _checked_map(type_map: TypeMap) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    x = np.asarray(type_map.x, dtype=np.float64)
    y = np.asarray(type_map.y, dtype=np.float64)
    codes = np.asarray(type_map.codes)
    if codes.shape != (y.size, x.size) or np.shape(type_map.normalized) != codes.shape:
        raise ValueError(f"type map codes {codes.shape} and normalized {np.shape(type_map.normalized)} must "
                         f"both have shape (ny, nx) = {(y.size, x.size)}")
    if x.size < 2 or y.size < 2 or not (np.diff(x) > 0).all() or not (np.diff(y) > 0).all():
        raise ValueError(f"type map nodes must increase, with at least 2 in each direction; got {x.size} x "
                         f"{y.size}")
    return codes, x, y


def _region_cells(type_map: TypeMap, codes: np.ndarray) -> np.ndarray | None:
    """parabolic_cells(codes), or None when no cell has four parabolic corners.

    Most maps have no parabolic node at all (the map's own count says so) or only scattered ones; a pass
    over their corners then replaces building the (ny-1, nx-1) cell mask, which costs about as much as
    contouring the lines of a big grid.
    """
    if type_map.fractions.get(TypeCode.PARABOLIC.label, 1.0) == 0.0:
        return None
    j, i = np.nonzero(codes[:-1, :-1] == TypeCode.PARABOLIC)
    if not ((codes[j + 1, i] == TypeCode.PARABOLIC) & (codes[j, i + 1] == TypeCode.PARABOLIC)
            & (codes[j + 1, i + 1] == TypeCode.PARABOLIC)).any():
        return None
    return parabolic_cells(codes)


def _grid_line(values: np.ndarray, nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """For coordinates along one axis: (nearest node, first node of the enclosing interval, on a node?)."""
    upper = np.clip(np.searchsorted(nodes, values), 1, nodes.size - 1)
    lower = upper - 1
    nearest = np.where(values - nodes[lower] <= nodes[upper] - values, lower, upper)
    on_node = np.abs(values - nodes[nearest]) <= _ON_LINE_TOLERANCE * (nodes[upper] - nodes[lower])
    return nearest, lower, on_node


def _locate(points: np.ndarray, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Grid position of each vertex (n, 2) as int rows (kind, j0, i0, j1, i1): shape (5, n).

    kind is _KIND_NODE (both ends = the node), _KIND_X_EDGE or _KIND_Y_EDGE (ends of the edge, in increasing
    order) or _KIND_OFF (on no grid line: cannot be refined).
    """
    i_near, i_low, on_column = _grid_line(points[:, 0], x)
    j_near, j_low, on_row = _grid_line(points[:, 1], y)
    kind = np.full(len(points), _KIND_OFF)
    kind[on_row & ~on_column] = _KIND_X_EDGE
    kind[on_column & ~on_row] = _KIND_Y_EDGE
    kind[on_row & on_column] = _KIND_NODE
    j0 = np.where(on_row, j_near, j_low)
    i0 = np.where(on_column, i_near, i_low)
    j1 = j0 + (kind == _KIND_Y_EDGE)
    i1 = i0 + (kind == _KIND_X_EDGE)
    return np.stack([kind, j0, i0, j1, i1])


def _sides(codes: np.ndarray, x: np.ndarray, y: np.ndarray, located: np.ndarray,
           region_cells: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """The type on the non-hyperbolic side of each vertex, and vectors (n, 2) toward the hyperbolic side.

    An edge vertex's non-hyperbolic node decides; a parabolic node is PARABOLIC in a parabolic region, else
    takes the type beyond it: ELLIPTIC if a neighbour is elliptic, else UNDEFINED if one is undefined, else
    HYPERBOLIC (D touching zero). Off-grid vertices get -1 and are treated like their neighbours in the line.
    """
    kind, j0, i0, j1, i1 = located
    hyperbolic_first = codes[j0, i0] == TypeCode.HYPERBOLIC
    pj, pi = np.where(hyperbolic_first, j1, j0), np.where(hyperbolic_first, i1, i0)
    side = codes[pj, pi].astype(np.int64)
    neighbour = np.stack([_value_at(codes, pj + dj, pi + di, TypeCode.PARABOLIC) for dj, di in _NEIGHBOURS])
    parabolic = side == TypeCode.PARABOLIC
    beyond = np.where((neighbour == TypeCode.ELLIPTIC).any(axis=0), TypeCode.ELLIPTIC,
                      np.where((neighbour == TypeCode.UNDEFINED).any(axis=0), TypeCode.UNDEFINED,
                               TypeCode.HYPERBOLIC))
    in_region = np.zeros(len(kind), dtype=bool)
    if region_cells is not None:
        in_region = (_value_at(region_cells, pj - 1, pi - 1, False) | _value_at(region_cells, pj, pi - 1, False)
                     | _value_at(region_cells, pj - 1, pi, False) | _value_at(region_cells, pj, pi, False))
    side[parabolic] = np.where(in_region, TypeCode.PARABOLIC, beyond)[parabolic]
    side[kind == _KIND_OFF] = -1

    dx, dy = np.mean(np.diff(x)), np.mean(np.diff(y))
    toward = np.zeros((len(kind), 2))
    for k, (dj, di) in enumerate(_NEIGHBOURS):
        hit = neighbour[k] == TypeCode.HYPERBOLIC
        toward[:, 0] += hit * di * dx
        toward[:, 1] += hit * dj * dy
    edge = (kind == _KIND_X_EDGE) | (kind == _KIND_Y_EDGE)
    sign = np.where(hyperbolic_first, -1.0, 1.0)
    toward[edge, 0] = (sign * (x[i1] - x[i0]))[edge]
    toward[edge, 1] = (sign * (y[j1] - y[j0]))[edge]
    return side, toward


def _value_at(array: np.ndarray, j: np.ndarray, i: np.ndarray, outside) -> np.ndarray:
    """array[j, i], or ``outside`` where (j, i) is off the array (no padded copy of a whole grid)."""
    inside = (j >= 0) & (j < array.shape[0]) & (i >= 0) & (i < array.shape[1])
    values = array[np.clip(j, 0, array.shape[0] - 1), np.clip(i, 0, array.shape[1] - 1)]
    return np.where(inside, values, outside).astype(array.dtype)


def _split(offsets: np.ndarray, closed: list[bool], side: np.ndarray
           ) -> list[tuple[np.ndarray, bool, int]]:
    """Pieces (vertex indices, closed, non-hyperbolic side type) of constant side type, type changes only.

    Runs on ELLIPTIC or PARABOLIC sides are kept, neighbouring kept runs share their junction vertex; runs
    on UNDEFINED or HYPERBOLIC sides are dropped; off-grid vertices (-1) join the run before them.
    """
    keep = (TypeCode.ELLIPTIC, TypeCode.PARABOLIC)
    pieces = []
    for start, stop, is_closed in zip(offsets[:-1], offsets[1:], closed):
        labels = _fill_unknown(side[start:stop])
        indices = np.arange(start, stop)
        if (labels == labels[0]).all():
            if labels[0] in keep and len(indices) >= 2:
                pieces.append((indices, is_closed, int(labels[0])))
            continue
        change = np.flatnonzero(labels[1:] != labels[:-1]) + 1
        if is_closed:                               # start at a change, wrap the last run round
            labels, indices = np.roll(labels, -change[0]), np.roll(indices, -change[0])
            change = change - change[0]
        for first, last in pairwise(dict.fromkeys([0, *change.tolist(), len(labels)])):   # increasing, distinct
            if labels[first] not in keep:
                continue
            following = last if last < len(labels) else (0 if is_closed else None)
            run = indices[first:last]
            if following is not None and labels[following] in keep:
                run = np.append(run, indices[following])
            if len(run) >= 2:
                pieces.append((run, False, int(labels[first])))
    return pieces


def _fill_unknown(labels: np.ndarray) -> np.ndarray:
    """Replace -1 labels by the nearest known label before them (after them at the start of the line)."""
    known = labels >= 0
    if known.all():
        return labels
    if not known.any():
        return np.full_like(labels, TypeCode.ELLIPTIC)
    source = np.where(known, np.arange(len(labels)), -1)
    np.maximum.accumulate(source, out=source)
    source[source < 0] = np.argmax(known)
    return labels[source]


def _left_turn_sum(points: np.ndarray, toward: np.ndarray, indices: np.ndarray, closed: bool) -> float:
    """Positive when the hyperbolic side lies on the left of the polyline through points[indices]."""
    p = points[indices]
    if closed:
        tangent = np.roll(p, -1, axis=0) - np.roll(p, 1, axis=0)
    else:
        tangent = np.gradient(p, axis=0)
    h = toward[indices]
    return float(np.sum(np.sign(tangent[:, 0] * h[:, 1] - tangent[:, 1] * h[:, 0])))


# -- refinement: each vertex moved along its grid edge onto D = 0 ---------------------------------------------
def _refine_vertices(discriminant: PointFunction, raw: np.ndarray, x: np.ndarray, y: np.ndarray,
                     located: np.ndarray, xtol: float, cancel: CancelCheck | None
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Vertices (n, 2) moved onto D = 0 along their grid edge, and which of them were (bool (n,)).

    An edge vertex is searched between the edge's two nodes. A vertex on a node is exact if D is 0 there;
    otherwise the nearest root on the four half-edges leaving the node is taken. The values at all segment
    ends come from one evaluation (a node shared by two segments is evaluated twice: cheaper than sorting
    the nodes out for the cheap formulas of most equations, and at most twice the points for costly ones).
    """
    kind, j0, i0, j1, i1 = located
    points, ok = raw.copy(), np.zeros(len(raw), dtype=bool)
    edge = np.flatnonzero((kind == _KIND_X_EDGE) | (kind == _KIND_Y_EDGE))
    node = np.flatnonzero(kind == _KIND_NODE)
    starts_j, starts_i, ends_j, ends_i, owners = [j0[edge]], [i0[edge]], [j1[edge]], [i1[edge]], [edge]
    for dj, di in _NEIGHBOURS if node.size else ():
        nj, ni = j0[node] + dj, i0[node] + di
        inside = (nj >= 0) & (nj < y.size) & (ni >= 0) & (ni < x.size)
        starts_j.append(j0[node[inside]])
        starts_i.append(i0[node[inside]])
        ends_j.append(nj[inside])
        ends_i.append(ni[inside])
        owners.append(node[inside])
    start_j, start_i, end_j, end_i = (np.concatenate(v) for v in (starts_j, starts_i, ends_j, ends_i))
    owner = np.concatenate(owners)
    m = owner.size
    value = discriminant(np.concatenate([x[start_i], x[end_i], x[i0[node]]]),
                         np.concatenate([y[start_j], y[end_j], y[j0[node]]]))
    f_start, f_end, f_node = value[:m], value[m:2 * m], value[2 * m:]

    if node.size:
        exact = f_node == 0                           # a vertex on a node where D vanishes: nothing to do
        points[node[exact]] = np.column_stack([x[i0[node[exact]]], y[j0[node[exact]]]])
        ok[node[exact]] = True
        search = ~np.isin(owner, node[exact])
        start_j, start_i, end_j, end_i, owner, f_start, f_end = (
            v[search] for v in (start_j, start_i, end_j, end_i, owner, f_start, f_end))
    start = np.column_stack([x[start_i], y[start_j]])
    end = np.column_stack([x[end_i], y[end_j]])
    roots, found = roots_on_segments(discriminant, start, end, xtol=xtol, cancel=cancel, f_start=f_start,
                                     f_end=f_end)
    if not node.size:                                 # one segment per vertex
        points[owner[found]], ok[owner[found]] = roots[found], True
    elif found.any():                                 # a node's vertex: the root nearest the node
        distance = np.hypot(*(roots - start).T)
        candidates = np.flatnonzero(found)
        order = candidates[np.lexsort((distance[candidates], owner[candidates]))]
        owners_in_order = owner[order]
        first = np.flatnonzero(np.concatenate(([True], owners_in_order[1:] != owners_in_order[:-1])))
        owners_sorted = owners_in_order[first]
        points[owners_sorted], ok[owners_sorted] = roots[order[first]], True
    return points, ok


def _poll(cancel: CancelCheck | None) -> None:
    if cancel is not None and cancel():
        raise Cancelled("type-change lines cancelled")


def _report(progress: ProgressReport | None, fraction: float) -> None:
    if progress is not None:
        progress(fraction)
