"""The type zones as filled polygons bounded by the refined type-change lines.

A map drawn as an image of node codes is blocky: each node's colour fills a whole cell, so the fill pokes
half a cell across the type-change line. Here each zone is a set of polygons with holes instead. The field
F = D/S of the map (parabolic nodes set to exactly 0, undefined nodes masked: the same field the lines are
contoured from, core.analysis.type_change_lines) is filled with contourpy: the hyperbolic zone where F > 0,
the elliptic zone where F < 0. Every boundary vertex of those polygons that lies inside a grid edge is the
sign change of F on that edge, the same edge a vertex of a type-change line lies on; it is replaced by that
line's refined vertex (on D = 0 to a few units of rounding). Both zones and the line then share their
vertices exactly: the fill meets the line and never crosses it. Zones where D vanishes on an area are the
parabolic regions' cell outlines (core.analysis.parabolic_regions). Polygon areas (shoelace) converge as
O(h^2) on smooth lines, where node counts converge as O(h).
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import pairwise

import contourpy
import numpy as np

from core.analysis.classify import TypeCode, TypeMap
from core.analysis.parabolic_regions import parabolic_cells, parabolic_regions
from core.analysis.type_change_lines import TypeBoundaries
from core.progress import CancelCheck, Cancelled

__all__ = ["MAX_POLYGON_NODES", "ZonePolygon", "ZonePolygons", "ring_area", "zone_polygons"]

# Above this many nodes the polygons are not built (a float64 copy of the field: 8 bytes a node); the
# window then draws the zones as an image, as before.
MAX_POLYGON_NODES = 4_000_000
_UPPER = 2.0          # |D/S| <= 1: any level above 1 bounds the field


def ring_area(ring: np.ndarray) -> float:
    """Signed area of a closed ring (n, 2) (shoelace; positive counter-clockwise)."""
    x, y = ring[:, 0], ring[:, 1]
    return 0.5 * float(np.dot(x[:-1], y[1:]) - np.dot(x[1:], y[:-1]) + x[-1] * y[0] - x[0] * y[-1])


@dataclass(frozen=True, eq=False)
class ZonePolygon:
    """One connected piece of a type zone: ``rings[0]`` its outer boundary, the others its holes; each ring
    (n, 2) of (x, y) in domain units, closed (first point repeated at the end)."""

    type: TypeCode
    rings: tuple[np.ndarray, ...]

    @property
    def area(self) -> float:
        """The outer ring's area less the holes' (domain units squared)."""
        outer, *holes = self.rings
        return abs(ring_area(outer)) - sum(abs(ring_area(hole)) for hole in holes)


@dataclass(frozen=True, eq=False)
class ZonePolygons:
    """Every zone's polygons; ``snapped`` counts the boundary vertices moved onto the refined lines."""

    polygons: tuple[ZonePolygon, ...]
    snapped: int

    def of_type(self, code: TypeCode | int | str) -> tuple[ZonePolygon, ...]:
        code = TypeCode.coerce(code)
        return tuple(p for p in self.polygons if p.type == code)

    def area(self, code: TypeCode | int | str) -> float:
        """Total area of one type's zone (domain units squared)."""
        return sum(p.area for p in self.of_type(code))


def _edge_keys(points: np.ndarray, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """One integer per point naming the grid edge it lies strictly inside (-1 for a node or off the edges).

    A vertex on an edge along x has y exactly equal to a node row (interpolation along that edge keeps y);
    likewise x for an edge along y. Keys: 2 * (j * nx + i) for the edge (i, j)-(i+1, j), plus 1 for
    (i, j)-(i, j+1)."""
    px, py = points[:, 0], points[:, 1]
    i = np.clip(np.searchsorted(x, px), 0, x.size - 1)
    j = np.clip(np.searchsorted(y, py), 0, y.size - 1)
    on_column, on_row = x[i] == px, y[j] == py
    keys = np.full(len(points), -1, dtype=np.int64)
    along_x = on_row & ~on_column & (i > 0)
    along_y = on_column & ~on_row & (j > 0)
    keys[along_x] = 2 * (j[along_x] * x.size + i[along_x] - 1)
    keys[along_y] = 2 * ((j[along_y] - 1) * x.size + i[along_y]) + 1
    return keys


class _Snapper:
    """Raw line vertices (on grid edges) -> their refined positions, looked up by edge."""

    def __init__(self, boundaries: TypeBoundaries | None, x: np.ndarray, y: np.ndarray) -> None:
        self.x, self.y = x, y
        curves = () if boundaries is None else boundaries.curves
        raw = np.concatenate([c.raw_points for c in curves]) if curves else np.empty((0, 2))
        refined = np.concatenate([c.points for c in curves]) if curves else np.empty((0, 2))
        keys = _edge_keys(raw, x, y)
        keep = keys >= 0
        order = np.argsort(keys[keep], kind="stable")
        self.keys = keys[keep][order]
        self.refined = refined[keep][order]
        self.count = 0

    def __call__(self, ring: np.ndarray) -> np.ndarray:
        if self.keys.size == 0:
            return ring
        keys = _edge_keys(ring, self.x, self.y)
        where = np.clip(np.searchsorted(self.keys, keys), 0, self.keys.size - 1)
        found = (keys >= 0) & (self.keys[where] == keys)
        if not found.any():
            return ring
        ring = ring.copy()
        ring[found] = self.refined[where[found]]
        self.count += int(np.count_nonzero(found))
        return ring


def _closed(ring: np.ndarray) -> np.ndarray:
    ring = np.asarray(ring, dtype=np.float64)
    if len(ring) and not np.array_equal(ring[0], ring[-1]):
        ring = np.vstack([ring, ring[:1]])
    ring.flags.writeable = False
    return ring


def zone_polygons(type_map: TypeMap, boundaries: TypeBoundaries | None = None, *,
                  cancel: CancelCheck | None = None) -> ZonePolygons | None:
    """The hyperbolic, elliptic and parabolic zones of ``type_map`` as polygons with holes, their boundary
    vertices moved onto the refined lines of ``boundaries`` (core.analysis.type_change_lines.find_type_boundaries
    of the same map; None leaves them where the grid interpolation put them). None for maps of more than
    MAX_POLYGON_NODES nodes. Undefined nodes belong to no polygon (the cells around them stay unfilled)."""
    codes = np.asarray(type_map.codes)
    if codes.size > MAX_POLYGON_NODES:
        return None
    x = np.asarray(type_map.x, dtype=np.float64)
    y = np.asarray(type_map.y, dtype=np.float64)
    field = np.asarray(type_map.normalized, dtype=np.float64).copy()
    field[codes == TypeCode.PARABOLIC] = 0.0
    undefined = codes == TypeCode.UNDEFINED
    mask = undefined if undefined.any() else None
    snap = _Snapper(boundaries, x, y)
    polygons: list[ZonePolygon] = []
    for code, sign in ((TypeCode.HYPERBOLIC, 1.0), (TypeCode.ELLIPTIC, -1.0)):
        if cancel is not None and cancel():
            raise Cancelled("zone polygons cancelled")
        z = field if sign > 0 else -field
        generator = contourpy.contour_generator(x, y, z if mask is None else np.ma.array(z, mask=mask),
                                                name="serial", corner_mask=False,
                                                fill_type=contourpy.FillType.OuterOffset)
        points_list, offsets_list = generator.filled(0.0, _UPPER)
        for points, offsets in zip(points_list, offsets_list, strict=True):
            rings = tuple(_closed(snap(points[start:stop])) for start, stop in pairwise(offsets))
            polygons.append(ZonePolygon(type=code, rings=rings))
    cells = parabolic_cells(codes)
    for region in parabolic_regions(cells, x, y, cancel):
        polygons.append(ZonePolygon(type=TypeCode.PARABOLIC, rings=(region.outline, *region.holes)))
    return ZonePolygons(polygons=tuple(polygons), snapped=snap.count)
