"""The items of a pyqtgraph plot as SVG elements in output units, each cut to the plot's rectangle.

Used by gui.svg_export (whose docstring says why the picture is written item by item). Every element is cut to
the plot's rectangle here as well as clipped by the document's clip path, since Qt's QSvgRenderer (and so the
PDF export, painted through it) ignores clip paths: polylines by Liang-Barsky, fills by path intersection,
zone rectangles by their bounds; symbols and labels wholly outside are left out.
"""

from __future__ import annotations

import base64
import math
from collections.abc import Iterator
from xml.sax.saxutils import escape, quoteattr

import numpy as np
import pyqtgraph as pg
from pyqtgraph.graphicsItems.ScatterPlotItem import Symbols
from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFontMetricsF, QImage, QPainter, QPainterPath, QPen, QTransform
from PySide6.QtWidgets import QGraphicsItem, QGraphicsPathItem, QStyleOptionGraphicsItem

__all__ = ["FALLBACK_FAMILIES", "MAX_DISCRETE_LEVELS", "RASTER_SCALE", "WHOLE_ITEMS", "item_svg"]

MAX_DISCRETE_LEVELS = 16    # an integer image with at most this many values is written as vector zones
RASTER_SCALE = 2.0          # pixels per output unit of what is embedded as an image (as the PNG export)
FALLBACK_FAMILIES = "'DejaVu Sans', Arial, Helvetica, sans-serif"


def item_svg(item: QGraphicsItem, scene_to_output: QTransform, clip: QRectF) -> str:
    """One item in output units (``clip``: the plot's rectangle in output units)."""
    transform = item.sceneTransform() * scene_to_output
    if isinstance(item, pg.ImageItem):
        return _image_svg(item, transform, scene_to_output, clip)
    if isinstance(item, pg.PlotCurveItem):
        return _curve_svg(item, transform, clip)
    if isinstance(item, pg.ScatterPlotItem):
        return _scatter_svg(item, transform, clip)
    if isinstance(item, pg.TextItem):
        return _text_svg(item, scene_to_output, clip)
    if isinstance(item, QGraphicsPathItem):
        return _path_item_svg(item, transform, clip)
    if isinstance(item, pg.PlotDataItem | pg.ItemGroup) or type(item) is QGraphicsItem:
        return ""                                   # containers: their children are visited
    return _rasterised_svg(item, scene_to_output, clip)


WHOLE_ITEMS = (pg.ImageItem, pg.PlotCurveItem, pg.ScatterPlotItem, pg.TextItem, QGraphicsPathItem)


def _colour(colour: QColor) -> str:
    return colour.name(QColor.NameFormat.HexRgb)


def _paint_attributes(pen: QPen | None, brush, *, stroke_scale: float = 1.0) -> str:
    """fill and stroke attributes of a Qt pen and brush; a cosmetic pen's width is in output units already."""
    words = []
    if brush is None or brush.style() == Qt.BrushStyle.NoBrush:
        words.append('fill="none"')
    else:
        colour = brush.color()
        words.append(f'fill="{_colour(colour)}"')
        if colour.alpha() < 255:
            words.append(f'fill-opacity="{colour.alphaF():.3f}"')
    if pen is None or pen.style() == Qt.PenStyle.NoPen:
        words.append('stroke="none"')
        return " ".join(words)
    colour = pen.color()
    width = pen.widthF() if pen.isCosmetic() else pen.widthF() * stroke_scale
    width = width or 1.0
    words.append(f'stroke="{_colour(colour)}" stroke-width="{width:.3g}"')
    if colour.alpha() < 255:
        words.append(f'stroke-opacity="{colour.alphaF():.3f}"')
    if pen.style() != Qt.PenStyle.SolidLine:
        dashes = " ".join(f"{value * width:.3g}" for value in pen.dashPattern())
        if dashes:
            words.append(f'stroke-dasharray="{dashes}"')
    cap = {Qt.PenCapStyle.FlatCap: "butt", Qt.PenCapStyle.RoundCap: "round"}.get(pen.capStyle(), "square")
    join = {Qt.PenJoinStyle.MiterJoin: "miter", Qt.PenJoinStyle.RoundJoin: "round"}.get(pen.joinStyle(), "bevel")
    words.append(f'stroke-linecap="{cap}" stroke-linejoin="{join}"')
    return " ".join(words)


def _map_points(transform: QTransform, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    t = transform
    return (t.m11() * x + t.m21() * y + t.dx(), t.m12() * x + t.m22() * y + t.dy())


def _polyline_data(x: np.ndarray, y: np.ndarray, clip: QRectF) -> str:
    """SVG path data of polylines in output units, broken where a coordinate is not finite, each segment cut
    to ``clip`` (Liang-Barsky), so that renderers without clip paths (Qt's) draw nothing outside the plot."""
    x0, x1, y0, y1 = x[:-1], x[1:], y[:-1], y[1:]
    with np.errstate(invalid="ignore", divide="ignore"):
        valid = np.isfinite(x0) & np.isfinite(x1) & np.isfinite(y0) & np.isfinite(y1)
        dx, dy = x1 - x0, y1 - y0
        enter, leave = np.zeros(len(x0)), np.ones(len(x0))
        for step, room in ((-dx, x0 - clip.left()), (dx, clip.right() - x0),
                           (-dy, y0 - clip.top()), (dy, clip.bottom() - y0)):
            parallel = step == 0
            valid &= ~(parallel & (room < 0))
            ratio = np.where(parallel, 0.0, room / np.where(parallel, 1.0, step))
            enter = np.where(~parallel & (step < 0), np.maximum(enter, ratio), enter)
            leave = np.where(~parallel & (step > 0), np.minimum(leave, ratio), leave)
        valid &= enter <= leave
    index = np.flatnonzero(valid)
    if len(index) == 0:
        return ""
    enter, leave = enter[index], leave[index]
    start_x, start_y = x0[index] + enter * dx[index], y0[index] + enter * dy[index]
    end_x, end_y = x0[index] + leave * dx[index], y0[index] + leave * dy[index]
    joined = np.zeros(len(index), dtype=bool)     # this piece goes on from where the previous one ended
    joined[1:] = (index[1:] == index[:-1] + 1) & (leave[:-1] == 1.0) & (enter[1:] == 0.0)
    words = []
    start_text = np.char.mod("M%.2f,", start_x)
    start_text = np.char.add(start_text, np.char.mod("%.2f", start_y))
    end_text = np.char.add(np.char.mod("L%.2f,", end_x), np.char.mod("%.2f", end_y))
    for piece in range(len(index)):
        if not joined[piece]:
            words.append(start_text[piece])
        words.append(end_text[piece])
    return "".join(words)


def _clip_path(clip: QRectF) -> QPainterPath:
    path = QPainterPath()
    path.addRect(clip)
    return path


def _path_data(path: QPainterPath, transform: QTransform) -> str:
    """SVG path data of a QPainterPath mapped by ``transform``."""
    mapped = transform.map(path)
    words, index, count = [], 0, mapped.elementCount()
    while index < count:
        element = mapped.elementAt(index)
        if element.isMoveTo():
            words.append(f"M{element.x:.2f},{element.y:.2f}")
        elif element.isLineTo():
            words.append(f"L{element.x:.2f},{element.y:.2f}")
        else:                                       # a cubic: this element and two CurveToData after it
            first, second = mapped.elementAt(index + 1), mapped.elementAt(index + 2)
            words.append(f"C{element.x:.2f},{element.y:.2f} {first.x:.2f},{first.y:.2f} "
                         f"{second.x:.2f},{second.y:.2f}")
            index += 2
        index += 1
    return "".join(words)


def _stroke_scale(transform: QTransform) -> float:
    """How much ``transform`` enlarges a non-cosmetic pen's width."""
    return math.sqrt(abs(transform.determinant())) or 1.0


def _curve_svg(item: pg.PlotCurveItem, transform: QTransform, clip: QRectF) -> str:
    x, y = item.getData()
    if x is None or len(x) == 0:
        return ""
    options = item.opts
    parts = []
    brush = options.get("brush")
    if options.get("fillLevel") is not None and brush is not None and brush.style() != Qt.BrushStyle.NoBrush:
        fill = item._getFillPath() if hasattr(item, "_getFillPath") else None
        if fill is not None:
            inside = transform.map(fill).intersected(_clip_path(clip))
            parts.append(f'<path d="{_path_data(inside, QTransform())}" fill-rule="nonzero" '
                         f'{_paint_attributes(None, pg.mkBrush(brush))}/>')
    pen = options.get("pen")
    if pen is not None and pen.style() != Qt.PenStyle.NoPen:
        if options.get("connect") in ("all", "finite") and not options.get("stepMode"):
            data = _polyline_data(*_map_points(transform, np.asarray(x, float), np.asarray(y, float)), clip)
        else:
            data = _stroked_path_data(item.getPath(), transform, clip)
        if data:
            parts.append(f'<path d="{data}" {_paint_attributes(pen, None, stroke_scale=_stroke_scale(transform))}/>')
    return "\n".join(parts)


def _stroked_path_data(path: QPainterPath, transform: QTransform, clip: QRectF) -> str:
    """A path's outline flattened to polylines and cut to ``clip``."""
    pieces = []
    for polygon in transform.map(path).toSubpathPolygons():
        points = np.array([(point.x(), point.y()) for point in polygon], dtype=float).reshape(-1, 2)
        pieces.append(_polyline_data(points[:, 0], points[:, 1], clip))
    return "".join(pieces)


def _path_item_svg(item: QGraphicsPathItem, transform: QTransform, clip: QRectF) -> str:
    """A filled path cut to ``clip`` and its outline cut to ``clip`` (two elements when both are drawn)."""
    path, parts = item.path(), []
    rule = "evenodd" if path.fillRule() == Qt.FillRule.OddEvenFill else "nonzero"
    if item.brush().style() != Qt.BrushStyle.NoBrush:
        inside = transform.map(path).intersected(_clip_path(clip))
        data = _path_data(inside, QTransform())
        if data:
            parts.append(f'<path d="{data}" fill-rule="{rule}" {_paint_attributes(None, item.brush())}/>')
    if item.pen().style() != Qt.PenStyle.NoPen:
        data = _stroked_path_data(path, transform, clip)
        if data:
            attributes = _paint_attributes(item.pen(), None, stroke_scale=_stroke_scale(transform))
            parts.append(f'<path d="{data}" {attributes}/>')
    return "\n".join(parts)


def _scatter_svg(item: pg.ScatterPlotItem, transform: QTransform, clip: QRectF) -> str:
    """Symbols of pixel size; a symbol wholly outside ``clip`` is left out."""
    parts = []
    for spot in item.points():
        if not spot.isVisible():
            continue
        where = transform.map(QPointF(spot.pos()))
        size = float(spot.size())
        if not clip.intersects(QRectF(where.x() - size / 2, where.y() - size / 2, size, size)):
            continue
        attributes = _paint_attributes(spot.pen(), spot.brush())
        symbol = spot.symbol()
        if symbol == "o":
            parts.append(f'<circle cx="{where.x():.2f}" cy="{where.y():.2f}" r="{size / 2:.2f}" {attributes}/>')
            continue
        shape = Symbols.get(symbol) if isinstance(symbol, str) else symbol
        if isinstance(shape, QPainterPath):
            placed = QTransform.fromScale(size, size) * QTransform.fromTranslate(where.x(), where.y())
            parts.append(f'<path d="{_path_data(shape, placed)}" {attributes}/>')
    return "\n".join(parts)


def _text_svg(item: pg.TextItem, scene_to_output: QTransform, clip: QRectF) -> str:
    """A text label: its filled box and its lines, where the view draws them (labels keep their pixel size);
    a label wholly outside ``clip`` is left out."""
    text_item = item.textItem
    to_output = text_item.sceneTransform() * scene_to_output
    box = to_output.mapRect(text_item.boundingRect())
    if not clip.intersects(box):
        return ""
    parts = []
    if item.fill.style() != Qt.BrushStyle.NoBrush or item.border.style() != Qt.PenStyle.NoPen:
        parts.append(f'<rect x="{box.x():.2f}" y="{box.y():.2f}" width="{box.width():.2f}" '
                     f'height="{box.height():.2f}" {_paint_attributes(item.border, item.fill)}/>')
    font = text_item.font()
    metrics = QFontMetricsF(font)
    margin = text_item.document().documentMargin()
    size = metrics.height() - metrics.leading() if font.pixelSize() <= 0 else font.pixelSize()
    size = font.pointSizeF() * text_item.scene().views()[0].logicalDpiY() / 72.0 if font.pointSizeF() > 0 else size
    weight = "bold" if font.bold() else "normal"
    colour = text_item.defaultTextColor()
    for number, line in enumerate(text_item.toPlainText().splitlines() or [""]):
        baseline = box.y() + margin + metrics.ascent() + number * metrics.lineSpacing()
        parts.append(f'<text x="{box.x() + margin:.2f}" y="{baseline:.2f}" font-family="{escape(font.family())}, '
                     f'{FALLBACK_FAMILIES}" font-size="{size:.4g}" font-weight="{weight}" '
                     f'fill="{_colour(colour)}" xml:space="preserve">{escape(line)}</text>')
    return "\n".join(parts)


def _image_svg(item: pg.ImageItem, transform: QTransform, scene_to_output: QTransform, clip: QRectF) -> str:
    """A discrete image as vector zones; any other image painted at twice the output resolution."""
    image = item.image
    if image is None or image.size == 0:
        return ""
    if item.qimage is None:
        item.render()
    if item.qimage is None:
        return ""
    if image.ndim == 2 and np.issubdtype(image.dtype, np.integer) and transform.isAffine() \
            and abs(transform.m12()) < 1e-12 and abs(transform.m21()) < 1e-12:
        zones = _discrete_zones_svg(item, transform, clip)
        if zones is not None:
            return zones
    return _rasterised_svg(item, scene_to_output, clip)


def _discrete_zones_svg(item: pg.ImageItem, transform: QTransform, clip: QRectF) -> str | None:
    """An image of few integer values as one path per value: the commonest as the whole rectangle, the
    others as the rectangles of their runs along the rows (runs alike in consecutive rows merged), all cut to
    ``clip``. None when the image has more than MAX_DISCRETE_LEVELS values."""
    codes = np.asarray(item.image)
    flat = codes.ravel()
    low, high = int(flat.min()), int(flat.max())
    if high - low >= 4 * MAX_DISCRETE_LEVELS:
        return None
    counts = np.bincount((flat - low).astype(np.intp), minlength=high - low + 1)
    values = [low + int(index) for index in np.flatnonzero(counts)]
    if len(values) > MAX_DISCRETE_LEVELS:
        return None
    colours = {value: _pixel_colour(item.qimage, codes, value) for value in values}
    commonest = low + int(np.argmax(counts))
    ny, nx = codes.shape
    xs, _ = _map_points(transform, np.arange(nx + 1, dtype=float), np.zeros(nx + 1))
    _, ys = _map_points(transform, np.zeros(ny + 1), np.arange(ny + 1, dtype=float))
    paths: dict[int, list[str]] = {value: [] for value in values if value != commonest}
    for value, (column0, column1, row0, row1) in _merged_runs(codes):
        if value != commonest:
            paths[value].append(_cut_rectangle(xs[column0], xs[column1], ys[row0], ys[row1], clip))
    parts = [_zone_path(colours[commonest], _cut_rectangle(xs[0], xs[nx], ys[0], ys[ny], clip))]
    parts.extend(_zone_path(colours[value], "".join(pieces)) for value, pieces in paths.items())
    return '<g class="zones">' + "\n".join(part for part in parts if part) + "</g>"


def _cut_rectangle(xa: float, xb: float, ya: float, yb: float, clip: QRectF) -> str:
    """Path data of the rectangle between two x and two y values (output units) cut to ``clip``; '' if none."""
    left, right = max(min(xa, xb), clip.left()), min(max(xa, xb), clip.right())
    top, bottom = max(min(ya, yb), clip.top()), min(max(ya, yb), clip.bottom())
    if left >= right or top >= bottom:
        return ""
    return f"M{left:.2f},{top:.2f}H{right:.2f}V{bottom:.2f}H{left:.2f}Z"


def _zone_path(colour: QColor, data: str) -> str:
    if colour.alpha() == 0 or not data:
        return ""
    opacity = f' fill-opacity="{colour.alphaF():.3f}"' if colour.alpha() < 255 else ""
    return f'<path d="{data}" fill="{_colour(colour)}"{opacity} stroke="none"/>'


def _pixel_colour(qimage: QImage, codes: np.ndarray, value: int) -> QColor:
    """The colour the item's lookup table gives ``value`` (read from its own rendered image)."""
    row, column = np.argwhere(codes == value)[0]
    return qimage.pixelColor(int(column), int(row))


def _merged_runs(codes: np.ndarray) -> Iterator[tuple[int, tuple[int, int, int, int]]]:
    """(value, (column0, column1, row0, row1)) rectangles covering ``codes``: runs along each row, a run that
    repeats the row above's (same columns, same value) extending it."""
    ny, nx = codes.shape
    open_runs: dict[tuple[int, int, int], int] = {}
    for row in range(ny):
        line = codes[row]
        cuts = np.flatnonzero(line[1:] != line[:-1]) + 1
        starts = np.concatenate(([0], cuts))
        ends = np.concatenate((cuts, [nx]))
        runs = {(int(start), int(end), int(line[start])) for start, end in zip(starts, ends, strict=True)}
        for run in list(open_runs):
            if run not in runs:
                yield run[2], (run[0], run[1], open_runs.pop(run), row)
        for run in runs:
            open_runs.setdefault(run, row)
    for run, row0 in open_runs.items():
        yield run[2], (run[0], run[1], row0, ny)


def _embedded_image_svg(qimage: QImage, rect: QRectF) -> str:
    """A QImage as a PNG data URI stretched over ``rect`` (output units)."""
    data = QByteArray()
    buffer = QBuffer(data)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    qimage.save(buffer, "PNG")
    buffer.close()
    encoded = base64.b64encode(bytes(data)).decode("ascii")
    return (f'<image x="{rect.x():.2f}" y="{rect.y():.2f}" width="{rect.width():.2f}" height="{rect.height():.2f}" '
            f'preserveAspectRatio="none" xlink:href={quoteattr("data:image/png;base64," + encoded)}/>')


def _rasterised_svg(item: QGraphicsItem, scene_to_output: QTransform, clip: QRectF) -> str:
    """An item (with its children) painted onto a transparent image of the plot's rectangle at RASTER_SCALE
    and embedded: images that are not discrete, and items of kinds not written as vectors here."""
    bounds = clip.toAlignedRect()
    if bounds.isEmpty():
        return ""
    image = QImage(round(bounds.width() * RASTER_SCALE), round(bounds.height() * RASTER_SCALE),
                   QImage.Format.Format_ARGB32_Premultiplied)
    image.fill(Qt.GlobalColor.transparent)
    painter = QPainter(image)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    origin = QTransform.fromTranslate(-bounds.x(), -bounds.y()) * QTransform.fromScale(RASTER_SCALE, RASTER_SCALE)
    for piece in (item, *_descendants(item)):
        if piece.isVisible():
            painter.setTransform(piece.sceneTransform() * scene_to_output * origin)
            piece.paint(painter, QStyleOptionGraphicsItem(), None)
    painter.end()
    return _embedded_image_svg(image, QRectF(bounds))


def _descendants(item: QGraphicsItem) -> Iterator[QGraphicsItem]:
    for child in sorted(item.childItems(), key=lambda piece: piece.zValue()):
        yield child
        yield from _descendants(child)
