"""Pictures of the map: PNG, SVG and PDF painted from the live widget.

PNG is a grab of the widget at a chosen scale. SVG and PDF are painted through QSvgGenerator and QPdfWriter
(pyqtgraph's own SVG exporter does not work with this Qt), so lines, text and axes stay vector graphics and
the type map is embedded as an image.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QMarginsF, QPoint, QRect, QSize, QSizeF
from PySide6.QtGui import QPageLayout, QPageSize, QPainter, QPdfWriter
from PySide6.QtSvg import QSvgGenerator
from PySide6.QtWidgets import QWidget

__all__ = ["PICTURE_FILTER", "PICTURE_SUFFIXES", "export_picture"]

PICTURE_SUFFIXES = (".png", ".svg", ".pdf")
PICTURE_FILTER = "PNG image (*.png);;SVG drawing (*.svg);;PDF document (*.pdf)"


def export_picture(widget: QWidget, path: str | Path, *, title: str = "Mixtype map", scale: float = 2.0) -> Path:
    """Write ``widget`` as it looks now to ``path``; the suffix (.png, .svg, .pdf) picks the format."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in PICTURE_SUFFIXES:
        raise ValueError(f"picture files end in {', '.join(PICTURE_SUFFIXES)}, got {path.name!r}")
    size = widget.size()
    if suffix == ".png":
        pixmap = widget.grab()
        if scale != 1.0:
            from PySide6.QtGui import QPixmap
            big = QPixmap(QSize(round(size.width() * scale), round(size.height() * scale)))
            big.setDevicePixelRatio(scale)
            big.fill()
            painter = QPainter(big)
            widget.render(painter, QPoint(0, 0))
            painter.end()
            pixmap = big
        if not pixmap.save(str(path), "PNG"):
            raise OSError(f"could not write {path}")
        return path
    if suffix == ".svg":
        generator = QSvgGenerator()
        generator.setFileName(str(path))
        generator.setSize(size)
        generator.setViewBox(QRect(0, 0, size.width(), size.height()))
        generator.setTitle(title)
        generator.setDescription("Type map exported by Mixtype")
        painter = QPainter()
        if not painter.begin(generator):
            raise OSError(f"could not write {path}")
        widget.render(painter, QPoint(0, 0))
        painter.end()
        return path
    writer = QPdfWriter(str(path))
    writer.setTitle(title)
    writer.setCreator("Mixtype")
    writer.setResolution(96)
    page = QPageSize(QSizeF(size.width(), size.height()), QPageSize.Unit.Point, "map")
    writer.setPageLayout(QPageLayout(page, QPageLayout.Orientation.Portrait, QMarginsF(0, 0, 0, 0)))
    painter = QPainter()
    if not painter.begin(writer):
        raise OSError(f"could not write {path}")
    target = writer.pageLayout().paintRectPixels(writer.resolution())
    factor = min(target.width() / max(1, size.width()), target.height() / max(1, size.height()))
    painter.scale(factor, factor)
    widget.render(painter, QPoint(0, 0))
    painter.end()
    return path
