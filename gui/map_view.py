"""The map: type zones as an image of codes, type-change lines, characteristics, pins and seed segments.

A pyqtgraph plot whose axes carry the equation's variable names. The type map is an ImageItem of integer
codes with fixed levels and the discrete colour table of ``gui.palette``, placed on the domain with setRect
so that each pixel is centred on its grid node. Hover goes through a rate-limited SignalProxy; a click pins
a point; in segment mode a left drag draws a seed segment; dragging a pin moves it. The view shows what it
is given and computes nothing.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QPointF, QRectF, Qt, Signal
from PySide6.QtWidgets import QHBoxLayout, QLabel, QVBoxLayout, QWidget

from core.analysis.classify import TypeCode
from core.analysis.pockets import pocket_outline
from core.project.model import Pin, Seed, ViewSettings
from gui.label_placement import Box, place_labels
from gui.palette import (
    FAMILY_COLOURS,
    HIGHLIGHT_COLOUR,
    PIN_COLOUR,
    SEGMENT_COLOUR,
    TYPE_COLOURS,
    TYPE_LINE_COLOUR,
    type_lookup_table,
)
from gui.qt_setup import configure_plotting

__all__ = ["FIT_MARGIN", "MapView", "MapViewBox", "fitted_ranges", "polyline_with_breaks"]

PIN_GRAB_PIXELS = 9.0
MAX_STRETCH = 4.0
FIT_MARGIN = 0.03              # fitting leaves this share of the domain's width and height free on each side
PIN_MARKER_PIXELS = 11
TICK_OVERHANG_PIXELS = 40      # how far the end tick labels may reach past the axis (the plot keeps room for it)


def fitted_ranges(box: tuple[float, float, float, float], pixels: tuple[float, float], *, to_scale: bool,
                  margin: float = FIT_MARGIN) -> tuple[tuple[float, float], tuple[float, float]]:
    """The (x, y) view ranges that show ``box`` (xmin, xmax, ymin, ymax) with ``margin`` on each side.

    Stretched axes: exactly the box plus its margins. To scale (one length unit the same number of pixels both
    ways, on a plot of ``pixels`` (width, height)): the direction that limits is the box plus its margins, and
    the other is widened about the box's centre to keep the scale.
    """
    xmin, xmax, ymin, ymax = box
    x_span, y_span = (xmax - xmin) * (1 + 2 * margin), (ymax - ymin) * (1 + 2 * margin)
    if to_scale and pixels[0] > 0 and pixels[1] > 0:
        per_pixel = max(x_span / pixels[0], y_span / pixels[1])
        x_span, y_span = per_pixel * pixels[0], per_pixel * pixels[1]
    cx, cy = (xmin + xmax) / 2, (ymin + ymax) / 2
    return (cx - x_span / 2, cx + x_span / 2), (cy - y_span / 2, cy + y_span / 2)


def polyline_with_breaks(polylines) -> tuple[np.ndarray, np.ndarray]:
    """Many (n_k, 2) polylines -> one (x, y) pair separated by NaN, for a single curve item."""
    xs, ys = [], []
    for points in polylines:
        points = np.asarray(points, dtype=np.float64).reshape(-1, 2)
        if len(points) == 0:
            continue
        xs.extend((points[:, 0], [np.nan]))
        ys.extend((points[:, 1], [np.nan]))
    if not xs:
        return np.empty(0), np.empty(0)
    return np.concatenate(xs), np.concatenate(ys)


class MapViewBox(pg.ViewBox):
    """A ViewBox that lets the left button draw a seed segment (segment mode) or drag a pin."""

    def __init__(self, owner: MapView) -> None:
        super().__init__()
        self.owner = owner
        self.setAspectLocked(True, ratio=1.0)

    def mouseDragEvent(self, event, axis=None):
        if event.button() != Qt.MouseButton.LeftButton:
            return super().mouseDragEvent(event, axis)
        start = self.mapSceneToView(event.buttonDownScenePos())
        here = self.mapSceneToView(event.scenePos())
        owner = self.owner
        if event.isStart():
            owner._drag_pin = owner.pin_near(event.buttonDownScenePos())
        if owner._drag_pin is not None:
            event.accept()
            owner.pin_moved.emit(owner._drag_pin, here.x(), here.y(), bool(event.isFinish()))
            if event.isFinish():
                owner._drag_pin = None
            return
        if owner.mode == "segment":
            event.accept()
            owner._draw_preview(start, here, finished=event.isFinish())
            if event.isFinish():
                owner.segment_drawn.emit(start.x(), start.y(), here.x(), here.y())
            return
        return super().mouseDragEvent(event, axis)


class MapView(QWidget):
    """The plot with its title and legend; what is drawn is set through the show_* methods."""

    hovered = Signal(float, float)                    # view coordinates under the mouse
    left_plot = Signal()                              # the mouse left the plot area
    clicked = Signal(float, float)                    # a left click (not a drag) in pin mode
    pin_clicked = Signal(int)                         # a left click on an existing pin
    segment_drawn = Signal(float, float, float, float)
    pin_moved = Signal(int, float, float, bool)       # pin index, new x, new y, drag finished

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        configure_plotting()
        self.mode = "pin"
        self._drag_pin: int | None = None
        self._pins: tuple[Pin | None, ...] = ()     # as in the project; None where of another study
        self._given_pins: tuple[tuple[Pin, ...], tuple[bool, ...] | None] = ((), None)
        self._layers = ViewSettings()
        self._domain = None
        self.to_scale = True
        self.fitted = False            # the view shows the fitted domain: it is fitted again when the plot resizes

        self.title = QLabel("Type of the equation over the domain")
        self.title.setObjectName("mapTitle")
        self.title.setWordWrap(True)
        font = self.title.font()
        font.setPointSizeF(font.pointSizeF() + 1.5)
        font.setBold(True)
        self.title.setFont(font)
        self.subtitle = QLabel("")
        self.subtitle.setWordWrap(True)

        self.view_box = MapViewBox(self)
        self.plot_widget = pg.PlotWidget(viewBox=self.view_box, background="w")
        self.plot = self.plot_widget.getPlotItem()
        self.plot.showGrid(x=False, y=False)
        self.plot.setMenuEnabled(False)
        for name in ("left", "bottom"):
            axis = self.plot.getAxis(name)
            axis.setPen(pg.mkPen("#333333"))
            axis.setTextPen(pg.mkPen("#222222"))
        self.plot.getAxis("left").setWidth(56)
        # The end tick labels may reach past the axis; the plot keeps room on the right and top for them.
        self.plot.getAxis("bottom").setStyle(hideOverlappingLabels=TICK_OVERHANG_PIXELS)
        self.plot.layout.setContentsMargins(2, 8, TICK_OVERHANG_PIXELS // 2 + 4, 2)
        self.set_variables("x", "y")

        self.image = pg.ImageItem()
        self.image.setLookupTable(type_lookup_table())
        self.image.setLevels((0, len(TypeCode)))
        self.image.setZValue(0)
        self.plot.addItem(self.image)

        self.lines = pg.PlotCurveItem(pen=pg.mkPen(TYPE_LINE_COLOUR, width=2.4), connect="finite")
        self.lines.setZValue(10)
        self.family_curves = {}
        for family, style in ((1, Qt.PenStyle.SolidLine), (2, Qt.PenStyle.DashLine)):
            pen = pg.mkPen(FAMILY_COLOURS[family], width=1.8, style=style)
            curve = pg.PlotCurveItem(pen=pen, connect="finite")
            curve.setZValue(20 + family)
            self.family_curves[family] = curve
        self.seed_lines = pg.PlotCurveItem(pen=pg.mkPen(SEGMENT_COLOUR, width=1.5, style=Qt.PenStyle.DotLine),
                                           connect="finite")
        self.seed_lines.setZValue(25)
        self.preview = pg.PlotCurveItem(pen=pg.mkPen(SEGMENT_COLOUR, width=2, style=Qt.PenStyle.DashDotLine))
        self.preview.setZValue(40)
        self.pin_markers = pg.ScatterPlotItem(size=PIN_MARKER_PIXELS, symbol="o", pen=pg.mkPen("w", width=1.5),
                                              brush=pg.mkBrush(PIN_COLOUR))
        self.pin_markers.setZValue(30)
        # Pins outside the current domain: a hollow ring (the readouts there extrapolate the equation).
        self.outside_pin_markers = pg.ScatterPlotItem(size=PIN_MARKER_PIXELS, symbol="o",
                                                      pen=pg.mkPen(PIN_COLOUR, width=2.0), brush=pg.mkBrush("w"))
        self.outside_pin_markers.setZValue(30)
        # The chosen pocket: a broad halo under its edge (the type-change line stays drawn on top).
        self.pocket_outline = pg.PlotCurveItem(pen=pg.mkPen(HIGHLIGHT_COLOUR, width=7.0), connect="finite")
        self.pocket_outline.setZValue(9)
        self.pocket_peak = pg.ScatterPlotItem(size=15, symbol="star", pen=pg.mkPen("w", width=1.0),
                                              brush=pg.mkBrush(HIGHLIGHT_COLOUR))
        self.pocket_peak.setZValue(36)
        for item in (self.lines, *self.family_curves.values(), self.seed_lines, self.preview, self.pin_markers,
                     self.outside_pin_markers, self.pocket_outline, self.pocket_peak):
            self.plot.addItem(item)
        self._pin_labels: list[pg.TextItem] = []

        self.legend = QLabel()
        self.legend.setObjectName("mapLegend")
        self.legend.setTextFormat(Qt.TextFormat.RichText)
        self.legend.setWordWrap(True)
        self.show_fractions(None)

        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        layout.setSpacing(3)
        layout.addWidget(self.title)
        layout.addWidget(self.subtitle)
        layout.addWidget(self.plot_widget, 1)
        row = QHBoxLayout()
        row.addWidget(self.legend, 1)
        layout.addLayout(row)

        scene = self.plot_widget.scene()
        self._hover_proxy = pg.SignalProxy(scene.sigMouseMoved, rateLimit=30, slot=self._on_mouse_moved)
        scene.sigMouseClicked.connect(self._on_mouse_clicked)
        self.view_box.sigResized.connect(self._plot_resized)
        self.view_box.sigRangeChangedManually.connect(lambda *args: setattr(self, "fitted", False))
        self.view_box.sigRangeChanged.connect(lambda *args: self.place_pin_labels())

    # -- what to draw ---------------------------------------------------------------------------------------
    def set_variables(self, first: str, second: str) -> None:
        """Axis titles: the variable names (coordinates are in the equation's own units)."""
        self.plot.setLabel("bottom", first)
        self.plot.setLabel("left", second)
        self._variables = (first, second)

    def set_titles(self, title: str, subtitle: str) -> None:
        self.title.setText(title)
        self.subtitle.setText(subtitle)

    def show_domain(self, domain, *, fit: bool = True) -> None:
        """Zoom to ``domain`` (with ``fit``). Axes are kept to scale, so that angles on screen are true
        angles, unless the domain is more than MAX_STRETCH times longer one way than the other."""
        self._domain = domain
        ratio = (domain.ymax - domain.ymin) / (domain.xmax - domain.xmin)
        self.to_scale = 1.0 / MAX_STRETCH <= ratio <= MAX_STRETCH
        self.view_box.setAspectLocked(self.to_scale, ratio=1.0)
        if fit:
            self.fit_domain()
        self.show_pins(*self._given_pins)     # which pins are outside may have changed

    def fit_domain(self) -> None:
        """Fill the plot with the domain and a margin of FIT_MARGIN (see fitted_ranges); the view is fitted
        again whenever the plot changes size, until the user pans or zooms."""
        if self._domain is None:
            return
        d = self._domain
        rect = self.view_box.rect()          # the size pyqtgraph's aspect lock uses
        x_range, y_range = fitted_ranges((d.xmin, d.xmax, d.ymin, d.ymax), (rect.width(), rect.height()),
                                         to_scale=self.to_scale)
        self.view_box.setRange(xRange=x_range, yRange=y_range, padding=0)
        self.fitted = True

    def _plot_resized(self, *args) -> None:
        if self.fitted:
            self.fit_domain()
        self.place_pin_labels()

    def show_type_map(self, type_map) -> None:
        """Draw the (ny, nx) int8 codes of a core TypeMap, each pixel centred on its node."""
        domain = type_map.domain
        dx, dy = domain.spacing
        codes = np.ascontiguousarray(type_map.codes).view(np.uint8)
        self.image.setImage(codes, autoLevels=False, levels=(0, len(TypeCode)))
        self.image.setRect(QRectF(domain.xmin - dx / 2, domain.ymin - dy / 2, domain.nx * dx, domain.ny * dy))
        self.show_fractions(type_map.fractions)
        self.highlight_pocket(None)

    def highlight_pocket(self, pocket, labels: np.ndarray | None = None, type_map=None, *,
                         centre: bool = True) -> None:
        """Outline ``pocket`` (a core.analysis.pockets.Pocket; ``labels`` the (ny, nx) label array of ``type_map``)
        with a halo, star its peak and, with ``centre``, bring it into the middle of the view."""
        if pocket is None or labels is None or type_map is None:
            self.pocket_outline.setData([], [])
            self.pocket_peak.setData([], [])
            return
        self.pocket_outline.setData(*polyline_with_breaks(pocket_outline(labels == pocket.label, type_map.x,
                                                                        type_map.y)), connect="finite")
        if pocket.peak_at is not None:
            self.pocket_peak.setData([pocket.peak_at[0]], [pocket.peak_at[1]])
        else:
            self.pocket_peak.setData([], [])
        if centre:
            dx, dy = type_map.domain.spacing
            x0, x1, y0, y1 = pocket.bounding_box
            self.centre_on((x0 - dx / 2, x1 + dx / 2, y0 - dy / 2, y1 + dy / 2), pocket.centroid)

    def centre_on(self, box: tuple[float, float, float, float], point: tuple[float, float]) -> None:
        """Put ``point`` in the middle of the view, zoomed so that ``box`` fills about a third of it (never
        zooming in further than it already is when the box is large)."""
        (vx0, vx1), (vy0, vy1) = self.view_box.viewRange()
        reach_x = 2.0 * max(point[0] - box[0], box[1] - point[0])
        reach_y = 2.0 * max(point[1] - box[2], box[3] - point[1])
        scale = max(min(1.0, 3.0 * max(reach_x / (vx1 - vx0), reach_y / (vy1 - vy0))),
                    1.1 * reach_x / (vx1 - vx0), 1.1 * reach_y / (vy1 - vy0))
        width, height = scale * (vx1 - vx0), scale * (vy1 - vy0)
        self.fitted = False
        self.view_box.setRange(xRange=(point[0] - width / 2, point[0] + width / 2),
                               yRange=(point[1] - height / 2, point[1] + height / 2), padding=0)

    def clear_type_map(self) -> None:
        self.image.clear()
        self.show_fractions(None)

    def show_lines(self, boundaries) -> None:
        """Type-change curves from core.analysis.type_change_lines (``curves[k].points`` (n, 2)); None clears them."""
        curves = [] if boundaries is None else [curve.points for curve in boundaries.curves]
        x, y = polyline_with_breaks(curves)
        self.lines.setData(x, y, connect="finite")

    def show_characteristics(self, traced) -> None:
        """Characteristic curves (``.legs()``: (family, points (n, 2)) per leg) grouped by family into two items."""
        by_family = {1: [], 2: []}
        for seed in traced or ():
            for curve in seed.curves:
                for family, points in curve.legs():     # a curve that went on changes family at each event
                    by_family.setdefault(int(family), []).append(points)
        for family, item in self.family_curves.items():
            x, y = polyline_with_breaks(by_family.get(family, []))
            item.setData(x, y, connect="finite")

    def show_seeds(self, seeds: tuple[Seed, ...]) -> None:
        segments = [np.array([s.start, s.end]) for s in seeds if s.is_segment]
        x, y = polyline_with_breaks(segments)
        self.seed_lines.setData(x, y, connect="finite")

    def pin_is_outside(self, pin: Pin) -> bool:
        """Whether ``pin`` lies outside the shown domain (its readout extrapolates the equation)."""
        d = self._domain
        return d is not None and not (d.xmin <= pin.x <= d.xmax and d.ymin <= pin.y <= d.ymax)

    def show_pins(self, pins: tuple[Pin, ...], shown: tuple[bool, ...] | None = None) -> None:
        """Draw ``pins`` (indices as in the project); ``shown`` False for pins of another study (not drawn).
        Pins inside the domain are filled dots, outside it rings marked "(outside)", labels placed clear of
        each other and of the plot's edges (gui.label_placement)."""
        self._given_pins = (tuple(pins), shown)
        self._pins = tuple(pin if shown is None or shown[k] else None for k, pin in enumerate(pins))
        pins = [pin for pin in self._pins if pin is not None]
        outside = [self.pin_is_outside(pin) for pin in pins]
        self.pin_markers.setData([p.x for p, out in zip(pins, outside) if not out],
                                 [p.y for p, out in zip(pins, outside) if not out])
        self.outside_pin_markers.setData([p.x for p, out in zip(pins, outside) if out],
                                         [p.y for p, out in zip(pins, outside) if out])
        for label in self._pin_labels:
            self.plot.removeItem(label)
        self._pin_labels = []
        for pin, out in zip(pins, outside):
            text = pg.TextItem(f"{pin.label} (outside)" if out else pin.label, color="#222222", anchor=(0, 1),
                               fill=pg.mkBrush(255, 255, 255, 200))
            text.setPos(pin.x, pin.y)
            text.setZValue(31)
            text.setVisible(self._layers.show_pins)
            self.plot.addItem(text)
            self._pin_labels.append(text)
        self.place_pin_labels()

    def place_pin_labels(self) -> None:
        """Anchor each pin's label where it stays inside the plot and clear of the other labels and pins."""
        if not self._pin_labels:
            return
        plot_rect = self.view_box.sceneBoundingRect()
        if plot_rect.width() <= 0 or plot_rect.height() <= 0:
            return
        centres, sizes = [], []
        for pin, label in zip((pin for pin in self._pins if pin is not None), self._pin_labels):
            where = self.view_box.mapViewToScene(QPointF(pin.x, pin.y))
            centres.append((where.x(), where.y()))
            bounds = label.boundingRect()
            sizes.append((bounds.width(), bounds.height()))
        boxes = place_labels(centres, sizes, Box(plot_rect.left(), plot_rect.top(), plot_rect.width(),
                                                 plot_rect.height()), marker_radius=PIN_MARKER_PIXELS / 2)
        for label, centre, size, box in zip(self._pin_labels, centres, sizes, boxes):
            if box is None:
                label.setAnchor((0, 1))
                continue
            label.setAnchor(((centre[0] - box.left) / size[0], (centre[1] - box.top) / size[1]))

    def pin_label_boxes(self) -> list[QRectF | None]:
        """Each shown pin label's rectangle in scene pixels (None where hidden), as drawn."""
        boxes = []
        for label in self._pin_labels:
            boxes.append(label.sceneBoundingRect() if label.isVisible() else None)
        return boxes

    def set_layers(self, view: ViewSettings) -> None:
        self._layers = view
        self.image.setVisible(view.show_type_map)
        self.lines.setVisible(view.show_type_change_lines)
        self.family_curves[1].setVisible(view.show_characteristics_family_1)
        self.family_curves[2].setVisible(view.show_characteristics_family_2)
        self.pin_markers.setVisible(view.show_pins)
        self.outside_pin_markers.setVisible(view.show_pins)
        for label in self._pin_labels:
            label.setVisible(view.show_pins)
        self.seed_lines.setVisible(view.show_seed_segments)

    def set_mode(self, mode: str) -> None:
        """'pin': a click pins a point; 'segment': a left drag draws a seed segment."""
        if mode not in ("pin", "segment"):
            raise ValueError(f"mode must be 'pin' or 'segment', got {mode!r}")
        self.mode = mode
        self.plot_widget.setCursor(Qt.CursorShape.CrossCursor if mode == "segment" else Qt.CursorShape.ArrowCursor)

    def show_fractions(self, fractions) -> None:
        """The legend: one swatch per type with its share of the grid nodes, then the line styles."""
        def swatch(colour: str) -> str:
            return f"<span style='color:{colour}; font-size:15pt'>&#9632;</span>"

        entries = []
        for code in (TypeCode.ELLIPTIC, TypeCode.HYPERBOLIC, TypeCode.PARABOLIC, TypeCode.UNDEFINED):
            share = "" if fractions is None else f"&nbsp;{100.0 * float(fractions[code.label]):.1f}&nbsp;%"
            entries.append(f"{swatch(TYPE_COLOURS[code])}&nbsp;{code.label}{share}")
        entries.append(f"<span style='color:{TYPE_LINE_COLOUR}'><b>&#9473;&#9473;</b></span>&nbsp;type&nbsp;change")
        entries.append(f"<span style='color:{FAMILY_COLOURS[1]}'><b>&#9473;&#9473;</b></span>"
                       "&nbsp;characteristics&nbsp;1")
        entries.append(f"<span style='color:{FAMILY_COLOURS[2]}'><b>&#9476;&#9476;</b></span>"
                       "&nbsp;characteristics&nbsp;2")
        entries.append(f"<span style='color:{PIN_COLOUR}; font-size:13pt'>&#9679;</span>&nbsp;pin"
                       f"&nbsp;<span style='color:{PIN_COLOUR}; font-size:13pt'>&#9675;</span>&nbsp;outside&nbsp;"
                       "the&nbsp;domain")
        note = " &nbsp;<span style='color:#555'>(% = share of grid nodes)</span>" if fractions is not None else ""
        self.legend.setText("&nbsp;&nbsp; ".join(entries) + note)

    # -- geometry helpers -----------------------------------------------------------------------------------
    def pin_near(self, scene_pos: QPointF) -> int | None:
        """Index of the visible pin within a few pixels of a scene position, or None."""
        if not self._layers.show_pins:
            return None
        best, best_distance = None, PIN_GRAB_PIXELS
        for index, pin in enumerate(self._pins):
            if pin is None:
                continue
            where = self.view_box.mapViewToScene(QPointF(pin.x, pin.y))
            distance = np.hypot(where.x() - scene_pos.x(), where.y() - scene_pos.y())
            if distance <= best_distance:
                best, best_distance = index, distance
        return best

    def scene_position(self, x: float, y: float) -> QPointF:
        return self.view_box.mapViewToScene(QPointF(x, y))

    def _draw_preview(self, start: QPointF, end: QPointF, *, finished: bool) -> None:
        if finished:
            self.preview.setData([], [])
        else:
            self.preview.setData([start.x(), end.x()], [start.y(), end.y()])

    # -- mouse ----------------------------------------------------------------------------------------------
    def _on_mouse_moved(self, event) -> None:
        position = event[0]
        if self.view_box.sceneBoundingRect().contains(position):
            point = self.view_box.mapSceneToView(position)
            self.hovered.emit(point.x(), point.y())
        else:
            self.left_plot.emit()

    def _on_mouse_clicked(self, event) -> None:
        if event.button() != Qt.MouseButton.LeftButton or event.double() or self.mode != "pin":
            return
        position = event.scenePos()
        if not self.view_box.sceneBoundingRect().contains(position):
            return
        near = self.pin_near(position)
        if near is not None:
            self.pin_clicked.emit(near)
            return
        point = self.view_box.mapSceneToView(position)
        self.clicked.emit(point.x(), point.y())
