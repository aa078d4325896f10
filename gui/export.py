"""Pictures of the map: PNG, SVG and PDF of the live widget.

PNG is a grab of the widget at a chosen scale. SVG is written by gui.svg_export in output units (zones and
lines as vector paths, the plot clipped), so that librsvg, Qt and browsers draw the same picture. PDF is that
same SVG painted through QSvgRenderer onto a QPdfWriter page of the widget's size: zones, lines and text
stay vector graphics, so zone edges stay sharp at any zoom.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QByteArray, QMarginsF, QPoint, QRectF, QSize, QSizeF
from PySide6.QtGui import QPageLayout, QPageSize, QPainter, QPdfWriter, QPixmap
from PySide6.QtSvg import QSvgRenderer
from PySide6.QtWidgets import QWidget

from gui.svg_export import plain_svg

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
    svg = plain_svg(widget, title=title, description="Type map exported by Mixtype")
    if suffix == ".svg":
        try:
            path.write_text(svg, encoding="utf-8")
        except OSError as error:
            raise OSError(f"could not write {path}: {error.strerror or error}") from None
        return path
    renderer = QSvgRenderer(QByteArray(svg.encode("utf-8")))
    if not renderer.isValid():
        raise OSError(f"could not write {path}: the drawing could not be read back")
    writer = QPdfWriter(str(path))
    writer.setTitle(title)
    writer.setCreator("Mixtype")
    writer.setResolution(72)                        # one output unit = one point: the page is the widget's size
    page = QPageSize(QSizeF(size.width(), size.height()), QPageSize.Unit.Point, "map")
    writer.setPageLayout(QPageLayout(page, QPageLayout.Orientation.Portrait, QMarginsF(0, 0, 0, 0)))
    painter = QPainter()
    if not painter.begin(writer):
        raise OSError(f"could not write {path}")
    renderer.render(painter, QRectF(0, 0, size.width(), size.height()))
    painter.end()
    return path
