"""The map's certified layer: what core.certify proved, drawn over the sampled map.

Three things go on top of the map view (gui.map_view) without changing how it draws the rest:

* proven zones, lightly tinted in the type colours (gui.palette), and undecided cells hatched in dark grey,
  both painted into one raster image of the part of the domain in view (painted again after a zoom or pan).
  Cells smaller than a raster pixel still paint their pixel, so a proven pocket far below the grid spacing
  stays visible;
* a ring around every certified pocket that the sampled map missed (no grid node of its type inside its
  bounding box), in the pocket's type colour over a dark halo, a fixed size on screen so it is seen at any zoom.

The certified map itself (core.certify.refinement.CertifiedMap) is computed by gui.analysis on the
"certified" job channel; its settings live in the project (core.project.model.CertifiedLayerSettings).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QObject, QRectF

from core.analysis.classify import TypeCode
from gui.palette import TYPE_COLOURS, hex_to_rgba

__all__ = ["RASTER_PIXELS", "CertifiedLayer", "certified_raster", "missed_pockets"]

RASTER_PIXELS = 1024                 # along the domain's longer side
PROVEN_ALPHA = 70                    # light: the sampled map's zones show through
HATCH_COLOUR = (60, 60, 60, 190)
HATCH_PERIOD, HATCH_WIDTH = 6, 2     # pixels of the raster: a diagonal stripe every 6 pixels, 2 wide
RING_PIXELS = 26                     # the ring's diameter on screen
_IMAGE_Z, _RING_Z = 2.5, 35.0        # above the zones (0.5) and the field (2), under the lines (10) and pins (30)
_PROVEN = (TypeCode.ELLIPTIC, TypeCode.HYPERBOLIC, TypeCode.PARABOLIC, TypeCode.UNDEFINED)


@dataclass(frozen=True)
class _Cells:
    x0: np.ndarray
    x1: np.ndarray
    y0: np.ndarray
    y1: np.ndarray
    types: np.ndarray

    @property
    def decided(self) -> np.ndarray:
        return (self.types & (self.types - 1)) == 0


def _coverage(columns: tuple[np.ndarray, np.ndarray], rows: tuple[np.ndarray, np.ndarray],
              shape: tuple[int, int]) -> np.ndarray:
    """(ny, nx) bool: pixels covered by any of the rectangles [c0, c1) x [r0, r1) (a 2-D difference array,
    summed: O(rectangles + pixels))."""
    ny, nx = shape
    count = np.zeros((ny + 1, nx + 1), dtype=np.int64)
    (c0, c1), (r0, r1) = columns, rows
    np.add.at(count, (r0, c0), 1)
    np.add.at(count, (r0, c1), -1)
    np.add.at(count, (r1, c0), -1)
    np.add.at(count, (r1, c1), 1)
    return count.cumsum(axis=0).cumsum(axis=1)[:ny, :nx] > 0


def certified_raster(certified, box: tuple[float, float, float, float] | None = None,
                     pixels: int = RASTER_PIXELS) -> np.ndarray:
    """(ny, nx, 4) uint8 RGBA image of ``certified`` (a CertifiedMap) over ``box`` (x0, x1, y0, y1; default its
    domain), row j from the bottom: proven cells lightly in their type colour, undecided cells hatched on top."""
    domain = certified.domain
    x0, x1, y0, y1 = box or (domain.xmin, domain.xmax, domain.ymin, domain.ymax)
    width, height = x1 - x0, y1 - y0
    scale = pixels / max(width, height)
    nx, ny = max(1, round(width * scale)), max(1, round(height * scale))
    leaves = certified.leaves
    inside = (leaves.x1 >= x0) & (leaves.x0 <= x1) & (leaves.y1 >= y0) & (leaves.y0 <= y1)
    cells = _Cells(leaves.x0[inside], leaves.x1[inside], leaves.y0[inside], leaves.y1[inside], leaves.types[inside])

    def span(low, high, start, size, count):
        first = np.clip(np.floor((low - start) / size * count), 0, count - 1).astype(np.int64)
        last = np.clip(np.ceil((high - start) / size * count), 1, count).astype(np.int64)
        return first, np.maximum(last, first + 1)

    columns = span(cells.x0, cells.x1, x0, width, nx)
    rows = span(cells.y0, cells.y1, y0, height, ny)
    image = np.zeros((ny, nx, 4), dtype=np.uint8)
    for code in _PROVEN:
        chosen = cells.types == (1 << int(code))
        if chosen.any():
            covered = _coverage((columns[0][chosen], columns[1][chosen]), (rows[0][chosen], rows[1][chosen]),
                                (ny, nx))
            image[covered] = hex_to_rgba(TYPE_COLOURS[code], PROVEN_ALPHA)
    undecided = ~cells.decided
    if undecided.any():
        covered = _coverage((columns[0][undecided], columns[1][undecided]),
                            (rows[0][undecided], rows[1][undecided]), (ny, nx))
        j, i = np.indices((ny, nx))
        stripes = (i + j) % HATCH_PERIOD < HATCH_WIDTH
        image[covered & stripes] = HATCH_COLOUR
        image[covered & ~stripes] = (0, 0, 0, 0)
    return image


def missed_pockets(certified) -> tuple:
    """The certified pockets the sampled map missed (core.certify.regions.CertifiedPocket)."""
    return tuple(pocket for pocket in certified.pockets if pocket.missed_by_grid)


class CertifiedLayer(QObject):
    """Keeps the certified layer of ``map_view`` in step with the analysis' certified map (None: nothing).
    Without an ``analysis`` it draws only what ``show`` is given (the study report's figure)."""

    def __init__(self, map_view, analysis=None, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.map_view = map_view
        self.certified = None
        plot = map_view.plot
        self.image = pg.ImageItem(axisOrder="row-major")
        self.image.setZValue(_IMAGE_Z)
        self.image.setObjectName("certifiedImage")
        self.halo = pg.ScatterPlotItem(symbol="o", size=RING_PIXELS, brush=None, pxMode=True,
                                       pen=pg.mkPen("#1A1A1A", width=5))
        self.rings = pg.ScatterPlotItem(symbol="o", size=RING_PIXELS, brush=None, pxMode=True)
        for item, z in ((self.halo, _RING_Z), (self.rings, _RING_Z + 0.1)):
            item.setZValue(z)
        for item in (self.image, self.halo, self.rings):
            item.setVisible(False)
            plot.addItem(item)
        if analysis is not None:
            analysis.certified_ready.connect(self.show)
        plot.getViewBox().sigRangeChanged.connect(self._paint)

    def _view_box(self) -> tuple[float, float, float, float] | None:
        """The part of the domain in view (None when none of it is)."""
        domain = self.certified.domain
        (vx0, vx1), (vy0, vy1) = self.map_view.plot.getViewBox().viewRange()
        x0, x1 = max(vx0, domain.xmin), min(vx1, domain.xmax)
        y0, y1 = max(vy0, domain.ymin), min(vy1, domain.ymax)
        return (x0, x1, y0, y1) if x1 > x0 and y1 > y0 else None

    def _paint(self, *args) -> None:
        if self.certified is None:
            return
        box = self._view_box()
        self.image.setVisible(box is not None)
        if box is None:
            return
        self.image.setImage(certified_raster(self.certified, box), autoLevels=False)
        self.image.setRect(QRectF(box[0], box[2], box[1] - box[0], box[3] - box[2]))

    def ring_centres(self) -> np.ndarray:
        """(k, 2) centres of the rings drawn (the missed pockets' bounding-box centres)."""
        x, y = self.rings.getData()
        if x is None or not len(x):
            return np.zeros((0, 2))
        return np.column_stack([x, y])

    def show(self, certified) -> None:
        """Draw a CertifiedMap, or clear the layer (None)."""
        self.certified = certified
        if certified is None:
            for item in (self.image, self.halo, self.rings):
                item.setVisible(False)
            self.halo.setData([], [])
            self.rings.setData([], [])
            return
        missed = missed_pockets(certified)
        x = np.array([(p.bbox[0] + p.bbox[1]) / 2 for p in missed])
        y = np.array([(p.bbox[2] + p.bbox[3]) / 2 for p in missed])
        pens = [pg.mkPen(TYPE_COLOURS[TypeCode[p.type.upper()]], width=2.5) for p in missed]
        self.halo.setData(x, y)
        self.rings.setData(x, y, pen=pens)
        for item in (self.halo, self.rings):
            item.setVisible(True)
        self._paint()
