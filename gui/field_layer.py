"""The map's field layer and its filled type zones: drawn here, computed by core off the GUI thread.

Two things go on top of the map view (gui.map_view) without changing how it draws the rest:

* the type zones as filled polygons bounded by the refined type-change lines
  (core.analysis.zone_polygons), one path item per type, so the fill meets the black line exactly. Until
  the lines of the newest map are known (and on maps too big for polygons) the blocky image of node codes
  shows the zones as before; with the polygons shown the image keeps only its undefined (grey) nodes;
* the field layer: one quantity of the study (core.analysis.field_values) shaded with a perceptually
  uniform, colour-blind-safe colour map, a colour bar naming the quantity and its unit, iso-lines at the
  chosen values and the value under the mouse (``readout``). Its settings live in the project
  (core.project.model.FieldLayerSettings); it is off by default.

Another panel may lend the field layer a grid computed elsewhere in core (``show_lent``: the Cauchy panel's
solution u); while lent, it is drawn in place of the study's own field, whose settings stay as they are and
come back with ``end_lent``.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QObject, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QPainterPath, QPen
from PySide6.QtWidgets import QGraphicsPathItem, QLabel

from core.analysis.classify import TypeCode
from core.analysis.field_values import colour_range, describe_quantity, field_at, field_on_grid, iso_lines
from core.analysis.zone_polygons import zone_polygons
from core.project.model import FieldLayerSettings
from gui.palette import TYPE_COLOURS, type_lookup_table

__all__ = ["COLOUR_MAP_LABELS", "FieldDrawing", "FieldLayer", "colour_map", "zone_path"]

# project name -> (pyqtgraph's bundled map, what the layers panel calls it). CET-CBD1 is Kovesi's
# colour-blind-safe diverging blue-grey-yellow map (Kovesi 2015, "Good colour maps: how to design them");
# cividis (Nuñez et al. 2018) and viridis (van der Walt and Smith 2015) are perceptually uniform sequential maps.
_COLOUR_MAPS = {"blue_yellow": "CET-CBD1", "cividis": "cividis", "viridis": "viridis"}
COLOUR_MAP_LABELS = {"blue_yellow": "blue – grey – yellow (diverging about 0)",
                     "cividis": "cividis (sequential)", "viridis": "viridis (sequential)"}
DIVERGING = frozenset({"blue_yellow"})
ISO_LINE_COLOUR = "#3A3A3A"
_ZONE_Z, _FIELD_Z, _ISO_Z = 0.5, 2.0, 11.0     # image of codes 0, type-change lines 10, characteristics 21+


def colour_map(name: str) -> pg.ColorMap:
    """The pyqtgraph colour map of a project colour-map name (core.project.model.FIELD_COLOUR_MAPS)."""
    return pg.colormap.get(_COLOUR_MAPS[name])


def zone_path(polygons) -> QPainterPath:
    """One painter path holding every ring of ``polygons`` (core ZonePolygon), filled odd-even so holes stay
    open (a same-type island inside a hole is filled again)."""
    path = QPainterPath()
    path.setFillRule(Qt.FillRule.OddEvenFill)
    for polygon in polygons:
        for ring in polygon.rings:
            if len(ring) < 3:
                continue
            connect = np.ones(len(ring), dtype=np.int32)
            connect[-1] = 0
            path.addPath(pg.arrayToQPath(ring[:, 0], ring[:, 1], connect=connect))
            path.closeSubpath()
    return path


def _undefined_only_table() -> np.ndarray:
    table = type_lookup_table()
    table[[int(c) for c in TypeCode if c != TypeCode.UNDEFINED], 3] = 0
    return table


class FieldDrawing(QObject):
    """The zone polygons and the field layer's items on ``map_view``, drawn from core results handed in (no
    document): the window's FieldLayer keeps them in step with the study, the study report draws its figures
    with them (gui.report_figures)."""

    def __init__(self, map_view, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.map_view = map_view
        plot = map_view.plot
        self.zone_items: dict[TypeCode, QGraphicsPathItem] = {}
        for code in (TypeCode.ELLIPTIC, TypeCode.HYPERBOLIC, TypeCode.PARABOLIC):
            item = QGraphicsPathItem()
            colour = QColor(TYPE_COLOURS[code])
            item.setBrush(QBrush(colour))
            pen = QPen(colour, 0)          # a hairline of the fill colour: no seam between neighbouring zones
            pen.setCosmetic(True)
            item.setPen(pen)
            item.setZValue(_ZONE_Z)
            item.setVisible(False)
            plot.addItem(item)
            self.zone_items[code] = item
        self.polygons = None            # core ZonePolygons drawn now, or None (the image shows the zones)

        self.image = pg.ImageItem()
        self.image.setZValue(_FIELD_Z)
        self.image.setVisible(False)
        plot.addItem(self.image)
        self.iso_curves = pg.PlotCurveItem(pen=pg.mkPen(ISO_LINE_COLOUR, width=1.3, style=Qt.PenStyle.DashLine),
                                           connect="finite")
        self.iso_curves.setZValue(_ISO_Z)
        plot.addItem(self.iso_curves)
        self.colour_bar = pg.ColorBarItem(values=(-1.0, 1.0), colorMap=colour_map("blue_yellow"), label="",
                                          interactive=False, colorMapMenu=False, width=18)
        self.colour_bar.setImageItem(self.image)
        self._bar_in_layout = False
        self.grid = None                # core FieldGrid shown now
        self.lines = ()                 # core IsoLine tuple shown now
        self.quantity = None            # core FieldQuantity shown now

    def show_polygons(self, polygons, *, visible: bool = True) -> None:
        """Fill the zones of ``polygons`` (core ZonePolygons; ``visible`` False keeps them hidden), the map's image
        keeping only its undefined (grey) nodes; None shows the zones as the image of node codes again."""
        self.polygons = polygons
        image = self.map_view.image
        if polygons is None:
            image.setLookupTable(type_lookup_table())
            for item in self.zone_items.values():
                item.setVisible(False)
            return
        for code, item in self.zone_items.items():
            item.setPath(zone_path(polygons.of_type(code)))
            item.setVisible(visible)
        image.setLookupTable(_undefined_only_table())      # only the undefined (grey) nodes stay drawn

    def show_field(self, grid, lines, quantity, colour_map_name: str = "blue_yellow") -> None:
        """Shade ``grid`` (core FieldGrid of ``quantity``, a core FieldQuantity) with the colour map of that project
        name, its colour bar titled by the quantity, and the iso-lines ``lines``; None clears the layer."""
        self.grid, self.lines, self.quantity = grid, tuple(lines), quantity
        plot = self.map_view.plot
        if grid is None:
            self.image.clear()
            self.image.setVisible(False)
            self.iso_curves.setData([], [])
            if self._bar_in_layout:
                plot.layout.removeItem(self.colour_bar)
                self.colour_bar.setVisible(False)
                self._bar_in_layout = False
            return
        low, high = colour_range(grid, diverging=colour_map_name in DIVERGING)
        cmap = colour_map(colour_map_name)
        self.image.setImage(grid.values, autoLevels=False, levels=(low, high))
        self.image.setLookupTable(cmap.getLookupTable(nPts=256, alpha=True))
        dx = (grid.x[-1] - grid.x[0]) / max(grid.x.size - 1, 1)
        dy = (grid.y[-1] - grid.y[0]) / max(grid.y.size - 1, 1)
        self.image.setRect(QRectF(grid.x[0] - dx / 2, grid.y[0] - dy / 2, grid.x.size * dx, grid.y.size * dy))
        self.image.setVisible(True)
        self.colour_bar.setColorMap(cmap)
        self.colour_bar.setLevels((low, high))
        self.colour_bar.axis.setLabel(quantity.title)
        if not self._bar_in_layout:
            plot.layout.addItem(self.colour_bar, 2, 5)
            self._bar_in_layout = True
        self.colour_bar.setVisible(True)
        xs, ys = [], []
        for line in lines:
            for points in line.polylines:
                xs.extend((points[:, 0], [np.nan]))
                ys.extend((points[:, 1], [np.nan]))
        if xs:
            self.iso_curves.setData(np.concatenate(xs), np.concatenate(ys), connect="finite")
        else:
            self.iso_curves.setData([], [])


class FieldLayer(FieldDrawing):
    """Keeps the zone polygons and the field layer of ``map_view`` in step with the document."""

    def __init__(self, map_view, document, analysis, runner, parent: QObject | None = None) -> None:
        super().__init__(map_view, parent)
        self.document, self.analysis, self.runner = document, analysis, runner
        self.readout = QLabel("")
        self.readout.setObjectName("fieldReadout")
        self.readout.setToolTip("The field layer's quantity at the point under the mouse")
        self.problem = ""               # why the field could not be drawn, or ''
        self._requested: FieldLayerSettings | None = None
        self.lent = None                # (grid, lines, quantity, reader) lent by another panel, or None

        for signal in (document.equation_changed, document.parameters_changed, document.domain_changed,
                       document.data_changed):
            signal.connect(self.refresh)
        document.layers_changed.connect(self._layers_changed)
        analysis.map_ready.connect(self._map_ready)
        analysis.lines_ready.connect(self._lines_ready)
        map_view.hovered.connect(self._hovered)
        map_view.left_plot.connect(lambda: self.readout.setText(""))
        runner.finished.connect(self._finished)
        runner.failed.connect(self._failed)
        self._layers_changed()

    # -- settings --------------------------------------------------------------------------------------------
    @property
    def settings(self) -> FieldLayerSettings:
        return self.document.project.view.field

    def _layers_changed(self) -> None:
        view = self.document.project.view
        showing = view.show_type_map and self.polygons is not None
        for item in self.zone_items.values():
            item.setVisible(showing)
        if self.settings != self._requested:
            self.refresh()

    # -- the zones ---------------------------------------------------------------------------------------
    def _map_ready(self, type_map) -> None:
        """A new map: its zones show as the image of codes until its lines (and so its polygons) are known."""
        self._show_polygons(None)

    def _lines_ready(self, boundaries) -> None:
        type_map = self.analysis.type_map
        if boundaries is None or type_map is None:
            self._show_polygons(None)
            return

        def work(cancel, progress):
            return type_map, zone_polygons(type_map, boundaries, cancel=cancel)

        self.runner.request("zones", work, label="Filling the type zones")

    def _show_polygons(self, polygons) -> None:
        self.show_polygons(polygons, visible=self.document.project.view.show_type_map)

    # -- a field lent by another panel -----------------------------------------------------------------
    def show_lent(self, grid, quantity, reader, *, iso_values=(), colour_map: str = "blue_yellow") -> None:
        """Draw ``grid`` (a core FieldGrid) as the field, titled by ``quantity`` (a core FieldQuantity), with
        iso-lines at ``iso_values`` and ``reader(x, y)`` giving the value under the mouse, until ``end_lent``."""
        self.runner.cancel("field")
        lines = iso_lines(grid, iso_values) if iso_values else ()
        self.lent = (grid, lines, quantity, reader)
        self._show_field(grid, lines, quantity, FieldLayerSettings(shown=True, colour_map=colour_map))

    def end_lent(self) -> None:
        """Back to the study's own field (or none)."""
        if self.lent is None:
            return
        self.lent = None
        self._show_field(None, (), None)
        self._requested = None
        self.refresh()

    # -- the field ---------------------------------------------------------------------------------------
    def refresh(self) -> None:
        """Recompute the field when it is shown (else hide it): after any change of the study or its settings."""
        settings = self.settings
        self._requested = settings
        if self.lent is not None:
            return
        if not settings.shown:
            self.runner.cancel("field")
            self._show_field(None, (), None)
            return
        compiled = self.document.compiled
        if compiled is None:
            return
        document = self.document
        equation, domain = document.equation, document.domain
        parameters, data = equation.parameter_values(), document.data
        try:
            quantity = describe_quantity(equation, settings.kind, settings.quantity, document.data_names)
        except ValueError as error:
            self._show_problem(str(error))
            return

        def work(cancel, progress):
            grid = field_on_grid(compiled, domain, settings.kind, settings.quantity, parameters=parameters,
                                 data=data, cancel=cancel, progress=progress)
            return grid, iso_lines(grid, settings.iso_values), quantity, settings

        self.runner.request("field", work, policy="queue" if self.analysis.dragging else "replace",
                            label="Shading the field")

    def _show_problem(self, text: str) -> None:
        self._show_field(None, (), None)
        self.problem = text
        self.readout.setText(f"Field layer: {text}")

    def _show_field(self, grid, lines, quantity, settings: FieldLayerSettings | None = None) -> None:
        self.problem = ""
        self.show_field(grid, lines, quantity, (settings or self.settings).colour_map)

    # -- the value under the mouse ---------------------------------------------------------------------------
    def _hovered(self, x: float, y: float) -> None:
        if self.lent is not None:
            quantity, value = self.lent[2], float(self.lent[3](x, y))
            text = "undefined" if math.isnan(value) else f"{value + 0.0:.5g}"
            self.readout.setText(f"{quantity.label} = {text}")
            return
        settings, compiled = self.settings, self.document.compiled
        if not settings.shown or compiled is None or self.quantity is None:
            return
        parameters, data = self.document.equation.parameter_values(), self.document.data
        quantity = self.quantity

        def work(cancel, progress):
            return quantity, field_at(compiled, settings.kind, settings.quantity, x, y, parameters=parameters,
                                      data=data)

        self.runner.request("field-hover", work, label="Reading the field")

    def _finished(self, channel: str, number: int, result: object) -> None:
        if channel == "zones":
            type_map, polygons = result
            if type_map is self.analysis.type_map:
                self._show_polygons(polygons)
        elif channel == "field":
            grid, lines, quantity, settings = result
            if settings == self.settings and settings.shown and self.lent is None:
                self._show_field(grid, lines, quantity, settings)
        elif channel == "field-hover":
            quantity, value = result
            if self.settings.shown and self.lent is None:
                text = "undefined" if math.isnan(value) else f"{value + 0.0:.5g}"
                unit = f" ({quantity.unit})" if quantity.unit else ""
                self.readout.setText(f"{quantity.label} = {text}{unit}")

    def _failed(self, channel: str, number: int, text: str) -> None:
        if channel == "field" and self.lent is None:
            self._show_problem(text)
        elif channel == "zones":
            self._show_polygons(None)
