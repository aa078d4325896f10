"""Certified pockets and parabolic tangencies: connected groups of the certified map's cells.

Two cells are connected when their closed rectangles touch (a shared edge or corner). A pocket of a type is a
connected group of cells that may hold it: its area is at least that of the cells proven to hold it and at
most that of the whole group, and it is proven to exist when it holds a proven cell. Elliptic and hyperbolic
pockets are all reported; parabolic ones only when they hold a proven parabolic cell (the other cells that
may be parabolic lie along type-change lines or tangencies). A tangency is a group of cells that may be
parabolic where D keeps one sign (no cell of the group may be both elliptic and hyperbolic, and the group as a
whole may be only one of them): D touches zero without changing sign, e.g. D = -4 (x - 0.3)^2 along x = 0.3.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from core.analysis.classify import TypeCode, TypeMap

__all__ = ["MAX_TANGENCY_POINTS", "CertifiedPocket", "Selection", "Tangency", "find_pockets", "find_tangencies",
           "region_labels", "touching_pairs"]

MAX_TANGENCY_POINTS = 200
_ELLIPTIC, _PARABOLIC, _HYPERBOLIC, _UNDEFINED = (1 << int(code) for code in (
    TypeCode.ELLIPTIC, TypeCode.PARABOLIC, TypeCode.HYPERBOLIC, TypeCode.UNDEFINED))


@dataclass(frozen=True)
class CertifiedPocket:
    """A connected group of cells that may hold ``type``: bounding box (x0, x1, y0, y1), area bounds
    (lower, upper) in units of the variables' product, ``proven`` when a cell of it surely holds the type,
    ``missed_by_grid`` when the sampled map of the same study has no node of the type in the bounding box
    (None without a sampled map), and its number of cells."""

    type: str
    bbox: tuple[float, float, float, float]
    area: tuple[float, float]
    proven: bool
    missed_by_grid: bool | None
    cells: int


@dataclass(frozen=True)
class Tangency:
    """Where D touches zero without changing sign: ``points`` (k, 2), centres of the group's cells (at most
    MAX_TANGENCY_POINTS of them, evenly chosen), ``side`` the type around it (elliptic: D <= 0 near it;
    hyperbolic: D >= 0), and the group's bounding box."""

    points: np.ndarray
    side: str
    bbox: tuple[float, float, float, float]


def touching_pairs(cells) -> tuple[np.ndarray, np.ndarray]:
    """Every pair (p, q) of cells whose closed rectangles touch, each pair once (arrays of cell indices)."""
    i0, i1, j0, j1 = (np.asarray(v) for v in (cells.i0, cells.i1, cells.j0, cells.j1))
    if not i0.size:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    pairs = [_contacts(i0, i1, j0, j1), _contacts(j0, j1, i0, i1)]
    return np.concatenate([p[0] for p in pairs]), np.concatenate([p[1] for p in pairs])


# A selection of cells: those whose type mask holds the first bit and none of the second's.
Selection = tuple[int, int]
_MAY_BE = {code: (bit, 0) for code, bit in ((TypeCode.ELLIPTIC, _ELLIPTIC), (TypeCode.PARABOLIC, _PARABOLIC),
                                            (TypeCode.HYPERBOLIC, _HYPERBOLIC))}
_TANGENCY_CANDIDATES: Selection = (_PARABOLIC, _UNDEFINED)


def region_labels(cells, pairs: tuple[np.ndarray, np.ndarray] | None = None
                  ) -> dict[Selection, tuple[np.ndarray, int]]:
    """The touching groups of every selection find_pockets and find_tangencies use (the cells that may hold
    each type; the tangency candidates): labels (n,) 0..count-1 (-1 outside the selection) and the count.
    A pair joins two cells of a selection when both are in it, read from the AND and OR of the pair's masks
    (two gathers in all, not two per selection); one scipy connected_components call per selection."""
    # Here, not at the top: scipy.sparse takes about 0.2 s to import and only a certified map needs it.
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    types = np.asarray(cells.types)
    first, second = touching_pairs(cells) if pairs is None else pairs
    both, either = types[first] & types[second], types[first] | types[second]
    labelled: dict[Selection, tuple[np.ndarray, int]] = {}
    for required, forbidden in (*_MAY_BE.values(), _TANGENCY_CANDIDATES):
        selected = ((types & required) != 0) & ((types & forbidden) == 0)
        if not (types & forbidden).any() and (required, 0) in labelled:     # the same cells as a selection done
            labelled[(required, forbidden)] = labelled[(required, 0)]
            continue
        keep = ((both & required) != 0) & ((either & forbidden) == 0)
        graph = coo_matrix((np.ones(int(keep.sum()), dtype=np.int8), (first[keep], second[keep])),
                           shape=(types.size,) * 2)
        labelled[(required, forbidden)] = _ranked(connected_components(graph, directed=False)[1], selected)
    return labelled


def _ranked(group: np.ndarray, selected: np.ndarray) -> tuple[np.ndarray, int]:
    """Labels 0..count-1 of the groups holding selected cells, renumbered in increasing order of ``group`` (as
    np.unique would); -1 for the cells not selected."""
    labels = np.full(selected.size, -1, dtype=np.int64)
    if not selected.any():
        return labels, 0
    chosen = group[selected]
    present = np.zeros(int(group.max()) + 1, dtype=bool)
    present[chosen] = True
    rank = np.cumsum(present) - 1
    labels[selected] = rank[chosen]
    return labels, int(rank[-1]) + 1


def _contacts(a0, a1, b0, b1) -> tuple[np.ndarray, np.ndarray]:
    """Pairs (p, q) of cells where q starts on the line where p ends along the first axis (q.a0 == p.a1) and
    their closed extents along the second axis meet: every touching pair is found once along one axis."""
    span = int(max(a1.max(), b1.max())) + 2
    start_key = a0 * span + b0
    order = np.argsort(start_key)
    start_key = start_key[order]
    end_key = a0[order] * span + b1[order]      # cells on one line are disjoint: sorted by b1 as well
    first = np.searchsorted(end_key, a1 * span + b0, side="left")
    last = np.searchsorted(start_key, a1 * span + b1, side="right")
    counts = np.maximum(last - first, 0)
    p = np.repeat(np.arange(a0.size), counts)
    offsets = np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts)
    q = order[np.repeat(first, counts) + offsets]
    return p, q


def _members(labels: np.ndarray, count: int):
    """The cell indices of each group 0..count-1, in turn."""
    order = np.argsort(labels, kind="stable")
    order = order[labels[order] >= 0]
    bounds = np.searchsorted(labels[order], np.arange(count + 1))
    for group in range(count):
        yield order[bounds[group]:bounds[group + 1]]


def _bbox(cells, members: np.ndarray) -> tuple[float, float, float, float]:
    return (float(cells.x0[members].min()), float(cells.x1[members].max()),
            float(cells.y0[members].min()), float(cells.y1[members].max()))


def _missed(sampled: TypeMap | None, code: TypeCode, bbox) -> bool | None:
    """Whether the sampled map has no node of ``code`` inside ``bbox`` (None without a sampled map)."""
    if sampled is None:
        return None
    x0, x1, y0, y1 = bbox
    columns = np.flatnonzero((sampled.x >= x0) & (sampled.x <= x1))
    rows = np.flatnonzero((sampled.y >= y0) & (sampled.y <= y1))
    if not columns.size or not rows.size:
        return True
    window = sampled.codes[rows[0]:rows[-1] + 1, columns[0]:columns[-1] + 1]
    return not bool(np.any(window == int(code)))


def find_pockets(cells, sampled: TypeMap | None = None,
                 labelled: dict[Selection, tuple[np.ndarray, int]] | None = None) -> tuple[CertifiedPocket, ...]:
    """The certified pockets of every type, by type (elliptic, parabolic, hyperbolic), largest upper area first
    (``labelled``: region_labels of the same cells, computed here when not given)."""
    areas = cells.areas
    pockets: list[CertifiedPocket] = []
    labelled = region_labels(cells) if labelled is None else labelled
    for code, selection in _MAY_BE.items():
        labels, count = labelled[selection]
        if not count:
            continue
        bit = selection[0]
        proven_cells = cells.types == bit
        found = []
        for members in _members(labels, count):
            proven = bool(proven_cells[members].any())
            if code == TypeCode.PARABOLIC and not proven:
                continue
            bbox = _bbox(cells, members)
            found.append(CertifiedPocket(type=code.label, bbox=bbox,
                                         area=(float(areas[members][proven_cells[members]].sum()),
                                               float(areas[members].sum())),
                                         proven=proven, missed_by_grid=_missed(sampled, code, bbox),
                                         cells=int(members.size)))
        pockets.extend(sorted(found, key=lambda p: -p.area[1]))
    return tuple(pockets)


def find_tangencies(cells, labelled: dict[Selection, tuple[np.ndarray, int]] | None = None
                    ) -> tuple[Tangency, ...]:
    """Groups of cells that may be parabolic where D keeps one sign (see the module docstring; ``labelled``:
    see find_pockets)."""
    types = cells.types
    labels, count = (region_labels(cells) if labelled is None else labelled)[_TANGENCY_CANDIDATES]
    found = []
    for members in _members(labels, count):
        held = np.bitwise_or.reduce(types[members])
        if ((held & _ELLIPTIC) and (held & _HYPERBOLIC)) or not (held & (_ELLIPTIC | _HYPERBOLIC)) \
                or np.any(types[members] == _PARABOLIC):
            continue
        centres = np.column_stack([(cells.x0[members] + cells.x1[members]) / 2,
                                   (cells.y0[members] + cells.y1[members]) / 2])
        order = np.lexsort((centres[:, 1], centres[:, 0]))
        if order.size > MAX_TANGENCY_POINTS:
            order = order[np.linspace(0, order.size - 1, MAX_TANGENCY_POINTS).round().astype(np.int64)]
        side = TypeCode.ELLIPTIC.label if held & _ELLIPTIC else TypeCode.HYPERBOLIC.label
        found.append(Tangency(points=centres[order], side=side, bbox=_bbox(cells, members)))
    return tuple(found)
