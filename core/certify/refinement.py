"""Adaptive refinement of a certified type map: a quadtree over the domain, refined only where undecided.

The domain is cut into 16 to 32 square-ish cells along its shorter side (so that the deepest cells land just
below ``min_cell``, by default 1e-4 of the shorter side); at each level the whole frontier is handled at
once. Cells whose corners, evaluated in double precision, are of both types cannot be decided and are split
without an enclosure (splitting is always sound); the others are enclosed (core.certify.discriminant_bounds,
in batches that bound the memory; the mean-value form at the deepest level only), cells holding one type for
certain are kept as proven and the undecided ones split in four until they reach the deepest level or the
cell budget (``max_cells`` cells examined in all) is spent. Undecided leaves whose corners change type may
hold every type, and are undefined only where the enclosure of their ancestor three levels up says they may
be. Cell edges are computed from integer positions (x_min + width * i / N), so neighbouring cells share their
edges to the bit and the cells tile the domain.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from core.analysis.classify import DEFAULT_TOLERANCE, TypeCode, TypeMap, classify_points
from core.certify.discriminant_bounds import (
    ELLIPTIC_BIT,
    HYPERBOLIC_BIT,
    PARABOLIC_BIT,
    UNDEFINED_BIT,
    DiscriminantEncloser,
    possible_types,
)
from core.certify.enclosure import Boxes
from core.certify.intervals import Interval
from core.certify.regions import CertifiedPocket, Tangency, find_pockets, find_tangencies, region_labels
from core.certify.settings import DEFAULT_MAX_CELLS, DEFAULT_MIN_CELL_FRACTION
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["DEFAULT_MAX_CELLS", "DEFAULT_MIN_CELL_FRACTION", "CertifiedCells", "CertifiedMap", "LevelReport",
           "certify_map"]

# DEFAULT_MIN_CELL_FRACTION and DEFAULT_MAX_CELLS live in core.certify.settings (read by the project layer too)
_BASE_CELLS = 16                     # along the shorter side at level 0
_MAX_BASE_CELLS = 1024               # along the longer side at level 0
_MAX_POSITION_BITS = 30              # integer positions stay below 2**30 (pairs of them fit in int64)
_BATCH = 1 << 15                     # cells enclosed at once (memory: about 2 kB a cell for the formula flow; two
#                                      threads over batches of 2**13 measured no faster on a loaded two-core machine)
_NOT_ENCLOSED = 0xFF                 # the mask of a cell split without an enclosure (every type possible)
_ANCESTOR_LEVELS = 3                 # undecided straddling cells learn whether they may be undefined from here up


@dataclass(frozen=True)
class LevelReport:
    """One level of the quadtree: its cell size (in the variables' units), how many cells it enclosed and the
    undecided area left after it (cells not yet split, plus those left undecided for good)."""

    level: int
    cell_width: float
    cell_height: float
    cells: int
    undecided_area: float


@dataclass(frozen=True, eq=False)
class CertifiedCells:
    """The leaves of the quadtree: edges (n,) each, the types each may hold (uint8 bit mask, bit 1 << TypeCode)
    and integer positions [i0, i1) x [j0, j1) on the finest level's lattice (for adjacency)."""

    x0: np.ndarray
    x1: np.ndarray
    y0: np.ndarray
    y1: np.ndarray
    types: np.ndarray
    i0: np.ndarray
    i1: np.ndarray
    j0: np.ndarray
    j1: np.ndarray

    @property
    def areas(self) -> np.ndarray:
        return (self.x1 - self.x0) * (self.y1 - self.y0)

    @property
    def decided(self) -> np.ndarray:
        """Cells holding exactly one type for certain."""
        return (self.types & (self.types - 1)) == 0


@dataclass(frozen=True, eq=False)
class CertifiedMap:
    """The certified type map of one study.

    ``area`` maps each type name to [proven area, proven plus undecided area] (units of the variables'
    product); ``undecided_area`` is the area of cells holding more than one possible type; ``cells`` the
    number of cells examined in all (what ``max_cells`` limits); ``budget_reached`` whether it stopped the
    refinement; ``dependency_form`` which enclosure of D was used.
    """

    domain: Domain
    tolerance: float
    min_cell: float
    max_cells: int
    leaves: CertifiedCells
    area: Mapping[str, tuple[float, float]]
    undecided_area: float
    cells: int
    budget_reached: bool
    levels: tuple[LevelReport, ...]
    pockets: tuple[CertifiedPocket, ...]
    tangencies: tuple[Tangency, ...]
    dependency_form: str


def certify_map(compiled: CompiledEquation, domain: Domain, *, parameters: Mapping[str, float] | None = None,
                data=None, tolerance: float = DEFAULT_TOLERANCE,
                min_cell: float | None = None, max_cells: int = DEFAULT_MAX_CELLS,
                sampled: TypeMap | None = None, cancel: CancelCheck | None = None,
                progress: ProgressReport | None = None) -> CertifiedMap:
    """Certify where each type can and cannot be over ``domain`` (its rectangle; its grid is not used).

    ``min_cell`` is the smallest cell side refined (default DEFAULT_MIN_CELL_FRACTION of the shorter side);
    ``max_cells`` bounds the cells examined in all (the first level, 16 to 32 cells along the shorter side, is
    always examined); ``sampled`` (the sampled map of the same study) marks the
    pockets it misses. ``data`` (core.data.sources DataSources) samples data quantities and gives their
    ranges over cells (``value_range``). ``cancel`` is polled between batches; ``progress`` gets the fraction of levels done.
    """
    if not 0.0 <= float(tolerance) < 1.0:
        raise ValueError(f"parabolic tolerance must be in [0, 1), got {tolerance}")
    width, height = domain.xmax - domain.xmin, domain.ymax - domain.ymin
    shorter = min(width, height)
    if min_cell is None:
        min_cell = DEFAULT_MIN_CELL_FRACTION * shorter
    if not (math.isfinite(min_cell) and min_cell > 0):
        raise ValueError(f"minimum cell size must be a positive number, got {min_cell}")
    if isinstance(max_cells, bool) or not isinstance(max_cells, int) or max_cells < 1:
        raise ValueError(f"cell budget must be a positive integer, got {max_cells!r}")
    encloser = DiscriminantEncloser(compiled, parameters=parameters,
                                    data_range=None if data is None else data.value_range)
    nx, ny, deepest = _base_grid(width, height, min_cell)
    ix, iy = np.meshgrid(np.arange(nx, dtype=np.int64), np.arange(ny, dtype=np.int64))
    ix, iy = ix.ravel(), iy.ravel()
    corners = _base_corners(encloser, domain, nx, ny, tolerance, data)
    leaves: list[tuple[int, np.ndarray, np.ndarray, np.ndarray]] = []
    levels: list[LevelReport] = []
    enclosed = 0
    budget_reached = False
    total_area = width * height
    decided_area = 0.0
    for level in range(deepest + 1):
        if cancel is not None and cancel():
            raise Cancelled("certification cancelled")
        scale_x, scale_y = nx << level, ny << level
        boxes = _boxes(domain, ix, iy, scale_x, scale_y)
        # Cells whose corners are of both types cannot be decided: above the deepest level they are split
        # without an enclosure (splitting is always sound); the others are enclosed.
        with np.errstate(invalid="ignore"):
            lowest = np.minimum(np.minimum(corners[0], corners[1]), np.minimum(corners[2], corners[3]))
            highest = np.maximum(np.maximum(corners[0], corners[1]), np.maximum(corners[2], corners[3]))
            straddling = (lowest < -tolerance) & (highest > tolerance)
        types = np.full(ix.size, _NOT_ENCLOSED, dtype=np.uint8)
        # the mean-value form only where cells will not be split again (at the deepest level): above it an
        # undecided cell is split anyway, and the form's fixed cost (hundreds of gradient steps) outweighs it
        if level == 0:    # every root enclosed, straddling ones too: where a root is defined throughout, so is
            #                 every cell in it (enclosures only shrink on sub-boxes), and _straddling_types knows it
            enclosed_roots = _enclose_cells(encloser, boxes, tolerance, cancel, sharpen=deepest == 0)
            root_defined = ((enclosed_roots & UNDEFINED_BIT) == 0).reshape(ny, nx)
            types[~straddling] = enclosed_roots[~straddling]
        else:
            types[~straddling] = _enclose_cells(encloser, _subset(boxes, ~straddling), tolerance, cancel,
                                                sharpen=level == deepest)
        if level == deepest and straddling.any():
            types[straddling] = _straddling_types(encloser, domain, ix[straddling], iy[straddling], level, (nx, ny),
                                                  root_defined, tolerance, data, cancel)
        enclosed += ix.size
        decided = (types & (types - 1)) == 0
        cell_area = total_area / (scale_x * scale_y)
        decided_area += float(np.count_nonzero(decided)) * cell_area
        leaves.append((level, ix[decided], iy[decided], types[decided]))
        ix, iy, types, straddling, corners = (ix[~decided], iy[~decided], types[~decided], straddling[~decided],
                                              corners[:, ~decided])
        levels.append(LevelReport(level=level, cell_width=width / scale_x, cell_height=height / scale_y,
                                  cells=int(decided.size), undecided_area=max(0.0, total_area - decided_area)))
        if progress is not None:
            progress((level + 1) / (deepest + 1))
        if not ix.size:
            break
        affordable = ix.size if level < deepest else 0
        if level < deepest and max_cells - enclosed < 4 * ix.size:
            budget_reached = True
            affordable = max(0, (max_cells - enclosed) // 4)
        order = np.argsort(~straddling, kind="stable")     # straddling cells first: they surely need it
        kept = order[affordable:]
        if kept.size:   # left undecided for good: straddling ones are enclosed now, for their flags
            late = kept[straddling[kept] & (types[kept] == _NOT_ENCLOSED)]
            if late.size:
                types[late] = _straddling_types(encloser, domain, ix[late], iy[late], level, (nx, ny),
                                                root_defined, tolerance, data, cancel)
            leaves.append((level, ix[kept], iy[kept], types[kept]))
        split = order[:affordable]
        if not split.size:
            break
        corners = _child_corners(encloser, domain, ix[split], iy[split], corners[:, split], (scale_x, scale_y),
                                 tolerance, data)
        ix = (2 * ix[split, None] + np.array([0, 1, 0, 1])).ravel()
        iy = (2 * iy[split, None] + np.array([0, 0, 1, 1])).ravel()
    cells = _leaves(domain, nx, ny, leaves)
    labelled = region_labels(cells)      # the touching groups the pockets and the tangencies share
    area = _areas(cells)
    undecided = float(cells.areas[~cells.decided].sum())
    return CertifiedMap(domain=domain, tolerance=float(tolerance), min_cell=float(min_cell), max_cells=max_cells,
                        leaves=cells, area=area, undecided_area=undecided, cells=enclosed,
                        budget_reached=budget_reached, levels=tuple(levels),
                        pockets=find_pockets(cells, sampled, labelled),
                        tangencies=find_tangencies(cells, labelled),
                        dependency_form=encloser.dependency_form)


def _base_grid(width: float, height: float, min_cell: float) -> tuple[int, int, int]:
    """Cells along x and y at level 0 (about _BASE_CELLS to twice that along the shorter side) and the deepest
    level, chosen so that the deepest level's cells are just below ``min_cell`` (not up to half of it)."""
    shorter = min(width, height)
    levels = max(0, math.floor(math.log2(shorter / (_BASE_CELLS * min_cell)))) if shorter > min_cell else 0
    along_shorter = max(1, math.ceil(shorter / (min_cell * 2 ** levels)))
    if along_shorter > 2 * _BASE_CELLS:
        along_shorter = _BASE_CELLS
    nx = int(min(_MAX_BASE_CELLS, max(1, round(along_shorter * width / shorter))))
    ny = int(min(_MAX_BASE_CELLS, max(1, round(along_shorter * height / shorter))))
    while levels > 0 and max(width / nx, height / ny) / 2 ** (levels - 1) <= min_cell:
        levels -= 1
    while max(width / nx, height / ny) / 2 ** levels > min_cell and levels < 40:
        levels += 1
    levels = min(levels, _MAX_POSITION_BITS - max(nx, ny).bit_length())
    return nx, ny, levels


def _edges(low: float, high: float, index: np.ndarray, count: int) -> np.ndarray:
    """low + (high - low) * index / count, exactly ``high`` at index == count (shared by neighbours)."""
    return np.where(index == count, high, low + (high - low) * (index / count))


def _boxes(domain: Domain, ix: np.ndarray, iy: np.ndarray, scale_x: int, scale_y: int) -> Boxes:
    return Boxes(_edges(domain.xmin, domain.xmax, ix, scale_x), _edges(domain.xmin, domain.xmax, ix + 1, scale_x),
                 _edges(domain.ymin, domain.ymax, iy, scale_y), _edges(domain.ymin, domain.ymax, iy + 1, scale_y))


def _subset(boxes: Boxes, chosen: np.ndarray) -> Boxes:
    return Boxes(boxes.x0[chosen], boxes.x1[chosen], boxes.y0[chosen], boxes.y1[chosen])


def _enclose_cells(encloser: DiscriminantEncloser, boxes: Boxes, tolerance: float, cancel: CancelCheck | None, *,
                   sharpen: bool) -> np.ndarray:
    """The possible-type masks of the cells, in batches; with ``sharpen`` (cells whose corners are not of
    both types) the mean-value form for those the natural enclosure leaves undecided."""
    types = np.empty(boxes.size, dtype=np.uint8)

    def batch(start: int) -> None:
        if cancel is not None and cancel():
            raise Cancelled("certification cancelled")
        part = _subset(boxes, slice(start, min(boxes.size, start + _BATCH)))
        d, s = encloser.natural(part)
        mask = np.array(np.broadcast_to(possible_types(d, s, tolerance), (part.size,)))
        if sharpen and encloser.sharpened:
            open_cells = np.flatnonzero(((mask & (mask - 1)) != 0) & ~np.broadcast_to(d.maybe_undefined, mask.shape))
            if open_cells.size:
                d_sub, s_sub = (_taken(v, open_cells, mask.size) for v in (d, s))
                mask[open_cells] = possible_types(encloser.sharpen(_subset(part, open_cells), d_sub), s_sub,
                                                  tolerance)
        types[start:start + part.size] = mask

    for start in range(0, boxes.size, _BATCH):
        batch(start)
    return types


def _straddling_types(encloser: DiscriminantEncloser, domain: Domain, ix: np.ndarray, iy: np.ndarray, level: int,
                      base: tuple[int, int], root_defined: np.ndarray, tolerance: float, data,
                      cancel: CancelCheck | None) -> np.ndarray:
    """Masks of cells left undecided whose corners are of both types: elliptic, parabolic and hyperbolic (a
    superset, always sound), and undefined where they may be. Cells in a level-0 cell defined throughout
    (``root_defined``, (ny, nx)) are defined; for the others, whether they may be undefined is read from
    the enclosure of their ancestors _ANCESTOR_LEVELS up (a cell inside a box defined throughout is defined
    throughout), one for each eighth as many cells; cells under a maybe-undefined ancestor are enclosed."""
    types = np.full(ix.size, ELLIPTIC_BIT | PARABOLIC_BIT | HYPERBOLIC_BIT, dtype=np.uint8)
    unknown = np.flatnonzero(~root_defined[iy >> level, ix >> level])
    if not unknown.size:
        return types
    ix, iy = ix[unknown], iy[unknown]
    up = min(level, _ANCESTOR_LEVELS)
    key = (ix >> up) * ((base[1] << level) + 1) + (iy >> up)
    unique, first, inverse = np.unique(key, return_index=True, return_inverse=True)
    ancestors = _boxes(domain, ix[first] >> up, iy[first] >> up, base[0] << (level - up), base[1] << (level - up))
    maybe = np.zeros(unique.size, dtype=bool)
    for start in range(0, unique.size, _BATCH):
        if cancel is not None and cancel():
            raise Cancelled("certification cancelled")
        part = slice(start, min(unique.size, start + _BATCH))
        d, _ = encloser.natural(_subset(ancestors, part))
        maybe[part] = np.broadcast_to(d.maybe_undefined, (part.stop - part.start,))
    doubtful = np.flatnonzero(maybe[inverse.ravel()])
    if doubtful.size:
        # their corners are of both types: the mean-value form cannot decide them
        types[unknown[doubtful]] = _enclose_cells(encloser, _boxes(domain, ix[doubtful], iy[doubtful],
                                                                   base[0] << level, base[1] << level),
                                                  tolerance, cancel, sharpen=False)
    return types


def _normalized_at(encloser: DiscriminantEncloser, x: np.ndarray, y: np.ndarray, tolerance: float,
                   data) -> np.ndarray:
    _, normalized = classify_points(encloser.compiled, x, y, parameters=encloser.parameters, data=data,
                                    tolerance=tolerance)
    return normalized


def _base_corners(encloser: DiscriminantEncloser, domain: Domain, nx: int, ny: int, tolerance: float,
                  data) -> np.ndarray:
    """D/S in double precision at the four corners of every level-0 cell, (4, nx * ny) in the order
    (x0, y0), (x1, y0), (x0, y1), (x1, y1): each lattice node evaluated once. Cells whose corners are of both
    types (elliptic and hyperbolic) cannot be decided by any enclosure; the corners only save work (such cells
    are split, or skip the costly mean-value form): a cell wrongly taken for one is split or keeps its natural
    enclosure, both sound."""
    xs = _edges(domain.xmin, domain.xmax, np.arange(nx + 1, dtype=np.int64), nx)
    ys = _edges(domain.ymin, domain.ymax, np.arange(ny + 1, dtype=np.int64), ny)
    nodes = _normalized_at(encloser, xs[None, :], ys[:, None], tolerance, data)     # (ny + 1, nx + 1)
    return np.stack([nodes[:-1, :-1].ravel(), nodes[:-1, 1:].ravel(), nodes[1:, :-1].ravel(),
                     nodes[1:, 1:].ravel()])


def _child_corners(encloser: DiscriminantEncloser, domain: Domain, ix: np.ndarray, iy: np.ndarray,
                   corners: np.ndarray, scale: tuple[int, int], tolerance: float, data) -> np.ndarray:
    """The corners of the four children of each cell (ix, iy) at ``scale`` (children in the order of the
    split: (0, 0), (1, 0), (0, 1), (1, 1)), (4, 4 n) like ``corners`` (4, n): the parents' corners reused, five new nodes per parent
    (the midpoints of its sides and its centre, at the same coordinates as the children's edges)."""
    sx, sy = 2 * scale[0], 2 * scale[1]
    x0, xm, x1 = (_edges(domain.xmin, domain.xmax, 2 * ix + k, sx) for k in (0, 1, 2))
    y0, ym, y1 = (_edges(domain.ymin, domain.ymax, 2 * iy + k, sy) for k in (0, 1, 2))
    bottom, left, centre, right, top = _normalized_at(
        encloser, np.stack([xm, x0, xm, x1, xm]), np.stack([y0, ym, ym, ym, y1]), tolerance, data)
    c00, c10, c01, c11 = corners
    children = np.empty((4, ix.size, 4), dtype=np.float64)      # corner, parent, child
    for child, values in enumerate(((c00, bottom, left, centre), (bottom, c10, centre, right),
                                    (left, centre, c01, top), (centre, right, top, c11))):
        for corner, value in enumerate(values):
            children[corner, :, child] = value
    return children.reshape(4, -1)


def _taken(value: Interval, index: np.ndarray, size: int) -> Interval:
    """The cells ``index`` of an Interval over ``size`` cells (constants broadcast first)."""
    return Interval(*(np.broadcast_to(part, (size,))[index] for part in (value.lo, value.hi, value.maybe_undefined,
                                                                        value.surely_undefined)))


def _leaves(domain: Domain, nx: int, ny: int, leaves) -> CertifiedCells:
    finest = max(level for level, *_ in leaves)
    parts = {key: [] for key in ("x0", "x1", "y0", "y1", "types", "i0", "i1", "j0", "j1")}
    for level, ix, iy, types in leaves:
        shift = finest - level
        scale_x, scale_y = nx << level, ny << level
        boxes = _boxes(domain, ix, iy, scale_x, scale_y)
        for key, value in (("x0", boxes.x0), ("x1", boxes.x1), ("y0", boxes.y0), ("y1", boxes.y1),
                           ("types", types), ("i0", ix << shift), ("i1", (ix + 1) << shift),
                           ("j0", iy << shift), ("j1", (iy + 1) << shift)):
            parts[key].append(np.asarray(value))
    return CertifiedCells(**{key: np.concatenate(value) for key, value in parts.items()})


def _areas(cells: CertifiedCells) -> dict[str, tuple[float, float]]:
    areas = cells.areas
    result = {}
    for code in (TypeCode.ELLIPTIC, TypeCode.PARABOLIC, TypeCode.HYPERBOLIC, TypeCode.UNDEFINED):
        bit = 1 << int(code)
        proven = float(areas[cells.types == bit].sum())
        possible = float(areas[(cells.types & bit) != 0].sum())
        result[code.label] = (proven, possible)
    return result
