"""The study report as a PDF: the report's own HTML laid out by Qt, figures painted as vector graphics.

The page content is the HTML of core.results.report_html (same sections, same texts) with a stylesheet in
points for Qt's rich text, laid out by a QTextDocument on A4 pages of a QPdfWriter. Qt's rich text would turn
an image into pixels, so each figure stands in the text as a custom text object (QTextObjectInterface) whose
drawing paints the figure's SVG through QSvgRenderer: zones, lines and text reach the PDF as paths and text,
and only what is an image by nature (a field's shading, the certified layer's hatching) as an image. The pages
are painted one by one (each a slice of the laid-out document, like QTextDocument.print, which would drop the
custom objects) with a footer naming the report, its page and the page count.

``report_pdf_bytes`` returns the file's bytes; the caller writes them (atomically, core.project.safe_write).
Runs on the GUI thread.
"""

from __future__ import annotations

from collections.abc import Mapping

from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QMarginsF, QPointF, QRectF, QSizeF, Qt
from PySide6.QtGui import (
    QFont,
    QPageLayout,
    QPageSize,
    QPainter,
    QPdfWriter,
    QPyTextObject,
    QTextBlockFormat,
    QTextCharFormat,
    QTextCursor,
    QTextDocument,
    QTextFormat,
)
from PySide6.QtSvg import QSvgRenderer

from core.results.report_html import report_html

__all__ = ["PDF_RESOLUTION", "REPORT_PDF_CSS", "report_pdf_bytes"]

PDF_RESOLUTION = 300                     # layout units per inch of the page (text and figures stay vector)
PAGE_MARGINS_MM = (16.0, 14.0, 16.0, 12.0)   # left, top, right, bottom
FOOTER_MM = 8.0                          # room kept at the foot of each page for its footer line
_FIGURE_OBJECT = QTextFormat.ObjectTypes.UserObject + 1
_NAME_PROPERTY = QTextFormat.Property.UserProperty + 1
_MARK = "\u2063mixtype-figure:{}\u2063"   # a figure's place in the text until its object is put there
MAX_HEADING_MOVES = 200

def _px(points: float) -> float:
    """Points as CSS pixels (1/96 inch): Qt's rich text reads margins and padding in pixels, scaled to the page
    (it takes a length in points there for device pixels)."""
    return round(points * 96.0 / 72.0, 2)


# Qt's rich text reads a subset of CSS 2.1: font sizes in points, margins and padding in CSS pixels.
REPORT_PDF_CSS = f"""
body {{ font-family: "DejaVu Sans"; font-size: 9.5pt; color: #1a1a1a; }}
h1 {{ font-size: 16pt; margin-top: 0px; margin-bottom: {_px(3)}px; }}
h2 {{ font-size: 12.5pt; margin-top: {_px(14)}px; margin-bottom: {_px(5)}px; color: #111111; }}
h3 {{ font-size: 10.5pt; margin-top: {_px(9)}px; margin-bottom: {_px(3)}px; }}
p {{ margin-top: {_px(2.5)}px; margin-bottom: {_px(2.5)}px; }}
p.meta {{ color: #444444; margin-bottom: {_px(6)}px; }}
p.caution {{ background-color: #fff4e6; color: #402000; }}
p.not-computed {{ color: #555555; font-style: italic; }}
div.math {{ font-family: "DejaVu Serif"; font-size: 11pt; margin-left: {_px(12)}px; }}
table {{ border-collapse: collapse; border-color: #a8a8a8; border-style: solid; margin-top: {_px(3)}px;
         margin-bottom: {_px(6)}px; font-size: 8.5pt; }}
th {{ background-color: #e8e8e8; font-weight: bold; text-align: left; }}
tbody th {{ background-color: #f4f4f4; font-weight: normal; }}
td.digest {{ font-family: "DejaVu Sans Mono"; font-size: 7pt; }}
figcaption {{ color: #444444; font-size: 8.5pt; }}
p.figure {{ margin-top: {_px(4)}px; margin-bottom: {_px(2)}px; }}
caption {{ color: #444444; font-size: 8.5pt; }}
footer {{ color: #444444; font-size: 8pt; margin-top: {_px(12)}px; }}
"""
_TABLE = f'<table border="{_px(0.5)}" cellspacing="0" cellpadding="{_px(2.5)}">'


class _FigureObject(QPyTextObject):
    """Paints a figure's SVG where its custom text object stands, at the size it takes in the text.
    (QPyTextObject: PySide's QObject that Qt's text layout recognises as a QTextObjectInterface.)"""

    def __init__(self, renderers: Mapping[str, QSvgRenderer], sizes: Mapping[str, QSizeF]) -> None:
        super().__init__()
        self.renderers, self.sizes = renderers, sizes

    def intrinsicSize(self, document, position, text_format) -> QSizeF:
        return self.sizes[str(text_format.property(_NAME_PROPERTY))]

    def drawObject(self, painter, rect, document, position, text_format) -> None:
        self.renderers[str(text_format.property(_NAME_PROPERTY))].render(painter, rect)


def _first_line_top(layout, block) -> float:
    """Where a block's first line starts in the document (a line pushed to the next page moves inside its
    block: the block's own rectangle still starts on the page before)."""
    top = layout.blockBoundingRect(block).top()
    lines = block.layout()
    return top + lines.lineAt(0).y() if lines is not None and lines.lineCount() else top


def _page_of(y: float, page_height: float) -> int:
    """The page (from 0) a layout position falls on; Qt's layout puts a line pushed to the next page at the page's
    top to within a fraction of a pixel (its fixed-point units), so a pixel of slack decides."""
    return int((y + 1.0) // page_height)


def _keep_headings_with_next(document: QTextDocument, page_height: float) -> None:
    """Start a heading on a new page when what follows it (a paragraph, a table's first row, a figure) begins on
    the next one (Qt's layout has no keep-with-next). One heading at a time, from the top, the layout redone
    after each: a break only ever moves what comes after it, and Qt breaks before a marked block even at the top
    of a page, so two headings marked in one pass could leave a blank page. At most MAX_HEADING_MOVES."""
    layout = document.documentLayout()
    start = document.begin()
    for _ in range(MAX_HEADING_MOVES):
        block = start
        while block.isValid():
            following = block.next()
            while following.isValid() and following.length() <= 1:     # empty blocks (an element's start) hold no ink
                following = following.next()
            if block.blockFormat().headingLevel() and following.isValid() and \
                    _page_of(_first_line_top(layout, following), page_height) > \
                    _page_of(_first_line_top(layout, block), page_height):
                break
            block = block.next()
        if not block.isValid():
            return
        cursor = QTextCursor(block)
        moved = QTextBlockFormat()
        moved.setPageBreakPolicy(QTextFormat.PageBreakFlag.PageBreak_AlwaysBefore)
        cursor.mergeBlockFormat(moved)
        document.markContentsDirty(block.position(), document.characterCount() - block.position())
        start = block.next()


def _font(points: float) -> QFont:
    """The report's font without ligatures: "fi" stays two letters, so the PDF's text can be searched and copied."""
    font = QFont("DejaVu Sans")
    font.setPointSizeF(points)
    font.setFeature(QFont.Tag("liga"), 0)
    return font


def _page_layout() -> QPageLayout:
    left, top, right, bottom = PAGE_MARGINS_MM
    return QPageLayout(QPageSize(QPageSize.PageSizeId.A4), QPageLayout.Orientation.Portrait,
                       QMarginsF(left, top, right, bottom), QPageLayout.Unit.Millimeter)


def _mm(millimetres: float) -> float:
    return millimetres / 25.4 * PDF_RESOLUTION


def report_pdf_bytes(report: Mapping, figures: Mapping[str, str]) -> bytes:
    """The PDF of ``report`` (core.results.report.report_document) with ``figures`` (name -> SVG text)."""
    data = QByteArray()
    buffer = QBuffer(data)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    writer = QPdfWriter(buffer)
    writer.setResolution(PDF_RESOLUTION)
    writer.setPageLayout(_page_layout())
    writer.setTitle(report["title"])
    writer.setCreator(f"Mixtype {report['mixtype_version']}")
    body = writer.pageLayout().paintRectPixels(PDF_RESOLUTION)
    page_width, page_height = float(body.width()), float(body.height()) - _mm(FOOTER_MM)

    placed = {block["figure"] for section in report["sections"] for block in section["blocks"]
              if block["kind"] == "figure"}
    figures = {name: svg for name, svg in figures.items() if name in placed}
    renderers, sizes = {}, {}
    for name, svg in figures.items():
        renderer = QSvgRenderer(QByteArray(svg.encode("utf-8")))
        if not renderer.isValid():
            raise OSError(f"the figure {name!r} could not be read back for the PDF")
        view = renderer.viewBoxF()
        width = page_width
        height = width * view.height() / view.width()
        if height > 0.8 * page_height:             # a tall figure keeps room for its caption on the page
            height = 0.8 * page_height
            width = height * view.width() / view.height()
        renderers[name], sizes[name] = renderer, QSizeF(width, height)

    document = QTextDocument()
    document.documentLayout().setPaintDevice(writer)
    document.setDefaultFont(_font(9.0))
    document.setDocumentMargin(0)
    document.setPageSize(QSizeF(page_width, page_height))
    handler = _FigureObject(renderers, sizes)
    document.documentLayout().registerHandler(_FIGURE_OBJECT, handler)
    marks = {name: f'<p class="figure">{_MARK.format(name)}</p>' for name in figures}
    page = report_html(report, marks, stylesheet=REPORT_PDF_CSS, footer=False).replace("<table>", _TABLE)
    document.setHtml(page)
    for name in figures:
        cursor = document.find(_MARK.format(name))
        if cursor.isNull():
            raise OSError(f"the figure {name!r} has no place in the report")
        figure_format = QTextCharFormat()
        figure_format.setObjectType(_FIGURE_OBJECT)
        figure_format.setProperty(_NAME_PROPERTY, name)
        cursor.insertText("\ufffc", figure_format)

    document.markContentsDirty(0, document.characterCount())     # lay out again with the figures in place
    _keep_headings_with_next(document, page_height)
    pages = max(1, document.pageCount())
    painter = QPainter()
    if not painter.begin(writer):
        raise OSError("could not start the PDF")
    try:
        footer_font = _font(7.5)
        for page in range(pages):
            if page:
                writer.newPage()
            painter.save()
            painter.translate(0, -page * page_height)
            document.drawContents(painter, QRectF(0, page * page_height, page_width, page_height))
            painter.restore()
            painter.setFont(footer_font)
            painter.setPen(Qt.GlobalColor.darkGray)
            footer = QRectF(QPointF(0, page_height + _mm(2.0)), QSizeF(page_width, _mm(FOOTER_MM - 2.0)))
            painter.drawText(footer, Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignTop, report["title"])
            painter.drawText(footer, Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignTop,
                             f"Mixtype {report['mixtype_version']} · page {page + 1} of {pages}")
    finally:
        painter.end()
    buffer.close()
    return bytes(data)
