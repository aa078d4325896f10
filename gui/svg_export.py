"""Plain SVG of a widget holding pyqtgraph plots, written by walking the plots' items.

Why not QSvgGenerator (or pyqtgraph's exporter) on the whole widget: the plot's items are painted in data
coordinates under the view's scale (x605 for a unit domain in 600 px) with cosmetic pens, which SVG can only
say as ``vector-effect: non-scaling-stroke`` under a huge transform. librsvg then draws blobs or a page of one
colour, nothing is clipped to the plot when zoomed in, and the zone image spills over the title. pyqtgraph's
own SVG exporter writes the same transforms (and fails on this Qt).

So the picture is written in two parts, both in output units (one unit = one pixel of the widget):
- the frame: everything but the plots' contents (backgrounds, title, legend, axes, ticks) painted through
  QSvgGenerator with each ViewBox's contents hidden. It holds translations only; its font sizes (written in
  points) are turned into output units and given a generic fallback family.
- each ViewBox's contents, written item by item inside a clip path of the ViewBox's rectangle: a discrete
  image (integer codes with a colour table, the type zones) as one vector path per colour, other images at
  twice the output resolution as an embedded PNG (data URI), curves, filled paths, scatter symbols and text
  labels, with stroke widths in output units. An item of another kind is painted onto a transparent image of
  the plot's size and embedded.
gui.svg_items writes the items. The result draws the same in librsvg, Qt's QSvgRenderer and a browser engine
(tests/gui/test_picture_exports.py).
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from xml.sax.saxutils import escape

import pyqtgraph as pg
from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QPoint, QRect
from PySide6.QtGui import QPainter, QTransform
from PySide6.QtSvg import QSvgGenerator
from PySide6.QtWidgets import QGraphicsItem, QGraphicsView, QWidget

from gui.svg_items import FALLBACK_FAMILIES, WHOLE_ITEMS, item_svg

__all__ = ["plain_svg"]


def plain_svg(widget: QWidget, *, title: str = "", description: str = "") -> str:
    """The SVG text of ``widget`` as it looks now, in its own pixel units (see the module docstring)."""
    width, height = max(1, widget.width()), max(1, widget.height())
    boxes = _view_boxes(widget)
    frame = _frame_svg(widget, [box for _view, box in boxes])
    parts = ['<?xml version="1.0" encoding="UTF-8"?>',
             (f'<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" version="1.1" '
             f'width="{width}" height="{height}" viewBox="0 0 {width} {height}">')]
    if title:
        parts.append(f"<title>{escape(title)}</title>")
    if description:
        parts.append(f"<desc>{escape(description)}</desc>")
    parts.append(f'<g id="frame">{frame}</g>')
    for number, (view, box) in enumerate(boxes):
        parts.append(_plot_group(widget, view, box, f"plot{number}"))
    parts.append("</svg>")
    return "\n".join(parts) + "\n"


# -- which plots, and where ------------------------------------------------------------------------------------
def _view_boxes(widget: QWidget) -> list[tuple[pg.GraphicsView, pg.ViewBox]]:
    """Every visible ViewBox in the visible pyqtgraph views inside ``widget``."""
    found = []
    for view in widget.findChildren(pg.GraphicsView):
        if not view.isVisibleTo(widget):
            continue
        for item in view.scene().items():
            if isinstance(item, pg.ViewBox) and item.isVisible():
                found.append((view, item))
    return found


def _to_output(widget: QWidget, view: pg.GraphicsView) -> QTransform:
    """Scene coordinates of ``view`` -> pixels of ``widget``."""
    offset = view.viewport().mapTo(widget, QPoint(0, 0))
    return view.viewportTransform() * QTransform.fromTranslate(offset.x(), offset.y())


# -- the frame: title, axes, legend ------------------------------------------------------------------------------
def _frame_svg(widget: QWidget, boxes: list[pg.ViewBox]) -> str:
    """Everything but the ViewBoxes' contents, through QSvgGenerator, made plain (see the module docstring)."""
    data = QByteArray()
    buffer = QBuffer(data)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    generator = QSvgGenerator()
    generator.setOutputDevice(buffer)
    generator.setSize(widget.size())
    generator.setViewBox(QRect(0, 0, widget.width(), widget.height()))
    hidden = [box.childGroup for box in boxes if box.childGroup.isVisible()]
    for group in hidden:
        group.setVisible(False)
    # pyqtgraph caches each view's background as a pixmap, which QSvgGenerator would embed as a picture of
    # the plot's size: painted uncached, the background is a plain rectangle.
    cached = [view for view in widget.findChildren(pg.GraphicsView)
              if view.cacheMode() != QGraphicsView.CacheModeFlag.CacheNone]
    for view in cached:
        view.setCacheMode(QGraphicsView.CacheModeFlag.CacheNone)
    try:
        painter = QPainter()
        if not painter.begin(generator):
            raise OSError("could not paint the picture")
        widget.render(painter, QPoint(0, 0))
        painter.end()
    finally:
        for group in hidden:
            group.setVisible(True)
        for view in cached:
            view.setCacheMode(QGraphicsView.CacheModeFlag.CacheBackground)
    buffer.close()
    text = bytes(data).decode("utf-8")
    inner = text[text.index(">", text.index("<svg")) + 1:text.rindex("</svg>")]
    inner = re.sub(r"<title>.*?</title>|<desc>.*?</desc>", "", inner, flags=re.DOTALL)
    inner = re.sub(r'\s*vector-effect="[^"]*"', "", inner)
    points_to_units = widget.logicalDpiY() / 72.0
    inner = re.sub(r'font-size="([0-9.eE+-]+)"',
                   lambda match: f'font-size="{float(match.group(1)) * points_to_units:.4g}"', inner)
    return re.sub(r'font-family="([^"]*)"', lambda match: f"font-family=\"'{match.group(1)}', "
                  f'{FALLBACK_FAMILIES}"', inner)


# -- the plots' contents -----------------------------------------------------------------------------------------
def _plot_group(widget: QWidget, view: pg.GraphicsView, box: pg.ViewBox, name: str) -> str:
    scene_to_output = _to_output(widget, view)
    clip = scene_to_output.mapRect(box.sceneBoundingRect())
    parts = [(f'<defs><clipPath id="{name}-clip"><rect x="{clip.x():.2f}" y="{clip.y():.2f}" '
             f'width="{clip.width():.2f}" height="{clip.height():.2f}"/></clipPath></defs>'),
             f'<g id="{name}" clip-path="url(#{name}-clip)">']
    for item in _drawn_items(box.childGroup):
        parts.append(item_svg(item, scene_to_output, clip))
    parts.append("</g>")
    return "\n".join(part for part in parts if part)


def _drawn_items(parent: QGraphicsItem) -> Iterator[QGraphicsItem]:
    """Visible items under ``parent`` in painting order (stacking value, then insertion order), parents
    before their children; the children of items written whole here are not visited."""
    for child in sorted(parent.childItems(), key=lambda item: item.zValue()):
        if not child.isVisible() or child.opacity() <= 0.0:
            continue
        yield child
        if not isinstance(child, WHOLE_ITEMS):
            yield from _drawn_items(child)
