"""The study report as one self-contained HTML5 page: inline style, inline SVG figures, no script, no link out.

``report_html`` writes the document of core.results.report: a heading, then every section in order with its
blocks (paragraphs, the equation's math lines, tables, figures, headings and "not computed" lines). Plain
texts are escaped here; the math lines are markup made by core.equations.math_html from the parsed equation
(never text the user typed). Figures come in as markup by name: ``inline_svg`` makes an SVG document (such
as gui.svg_export writes) fit to stand inside the page, with its ids prefixed so two figures never share one
and without the namespace declarations an HTML parser supplies itself. The page opens in any browser without
a network, prints on A4 or Letter, and parses as HTML5 without errors (tests/core/test_report.py).

The same function writes the page the PDF is painted from (gui.report_pdf), with that writer's own figure
markup and ``stylesheet``: one source of content for both formats.
"""

from __future__ import annotations

import html
import re
from collections.abc import Mapping

__all__ = ["REPORT_CSS", "inline_svg", "report_html"]

REPORT_CSS = """
body { font-family: "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; font-size: 10.5pt; line-height: 1.4;
       color: #1a1a1a; background: #ffffff; max-width: 60rem; margin: 1.5rem auto; padding: 0 1rem; }
h1 { font-size: 17pt; margin: 0 0 0.3rem 0; }
h2 { font-size: 13pt; margin: 1.6rem 0 0.5rem 0; padding-bottom: 0.15rem; border-bottom: 1px solid #999999; }
h3 { font-size: 11pt; margin: 1rem 0 0.3rem 0; }
p.meta { color: #444444; margin: 0 0 1rem 0; }
p.caution { border-left: 4px solid #b35900; background: #fff4e6; padding: 0.5rem 0.8rem; }
p.not-computed { color: #555555; font-style: italic; }
div.math { font-family: "DejaVu Serif", "Times New Roman", serif; font-size: 12pt; margin: 0.4rem 0 0.8rem 1rem; }
div.math p { margin: 0.2rem 0; }
table { border-collapse: collapse; margin: 0.4rem 0 0.8rem 0; font-size: 9.5pt; }
caption { caption-side: bottom; text-align: left; color: #444444; font-size: 9pt; padding-top: 0.2rem; }
th, td { border: 1px solid #b0b0b0; padding: 0.15rem 0.45rem; text-align: left; vertical-align: top; }
thead th { background: #e8e8e8; }
tbody th { background: #f4f4f4; font-weight: normal; white-space: nowrap; }
td.code, th.code { font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: 9pt; }
td.digest { font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: 8pt; word-break: break-all; }
figure { margin: 0.5rem 0 1rem 0; }
figure svg { max-width: 100%; height: auto; display: block; border: 1px solid #d0d0d0; }
figcaption { color: #444444; font-size: 9pt; margin-top: 0.2rem; }
footer { margin-top: 2rem; padding-top: 0.4rem; border-top: 1px solid #999999; color: #444444; font-size: 9pt; }
@media print { body { max-width: none; margin: 0; } section { break-inside: auto; } figure, tr { break-inside: avoid; } }
"""

_SVG_START = re.compile(r"<svg\b[^>]*>", re.DOTALL)
_NAMESPACE_DECLARATION = re.compile(r'\s+xmlns(?::\w+)?="[^"]*"')
_DIGEST = re.compile(r"^[0-9a-f]{64}$")


def inline_svg(svg: str, prefix: str) -> str:
    """An SVG document as markup to stand inside an HTML page: the XML declaration and namespace declarations
    dropped (HTML parsers put <svg> in the SVG namespace themselves), ``xlink:href`` written ``href`` (SVG 2),
    and every id (and each reference to it) prefixed with ``prefix``."""
    start = svg.find("<svg")
    if start < 0:
        raise ValueError("not an SVG document: no <svg> element")
    svg = svg[start:].strip()
    svg = _SVG_START.sub(lambda match: _NAMESPACE_DECLARATION.sub("", match.group(0)), svg, count=1)
    svg = svg.replace("xlink:href=", "href=")
    svg = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{prefix}{m.group(1)}"', svg)
    svg = re.sub(r"url\(#([^)]+)\)", lambda m: f"url(#{prefix}{m.group(1)})", svg)
    return re.sub(r'href="#([^"]+)"', lambda m: f'href="#{prefix}{m.group(1)}"', svg)


def _text(text: str) -> str:
    return html.escape(str(text), quote=False)


def _table(block: dict) -> str:
    columns, keyed = block["columns"], block.get("keyed", False)
    parts = ["<table>"]
    if block.get("caption"):
        parts.append(f"<caption>{_text(block['caption'])}</caption>")
    if any(columns):
        parts.append("<thead><tr>" + "".join(f'<th scope="col">{_text(c)}</th>' for c in columns) + "</tr></thead>")
    parts.append("<tbody>")
    for row in block["rows"]:
        cells = []
        for index, cell in enumerate(row):
            kind = ' class="digest"' if _DIGEST.match(cell) else ""
            if index == 0 and keyed:
                cells.append(f'<th scope="row">{_text(cell)}</th>')
            else:
                span = f' colspan="{len(columns) - len(row) + 1}"' if index == len(row) - 1 and len(row) < len(columns) \
                    else ""
                cells.append(f"<td{kind}{span}>{_text(cell)}</td>")
        parts.append("<tr>" + "".join(cells) + "</tr>")
    parts.append("</tbody></table>")
    return "".join(parts)


def _block(block: dict, figures: Mapping[str, str]) -> str:
    kind = block["kind"]
    if kind == "paragraph":
        return f"<p>{_text(block['text'])}</p>"
    if kind == "not_computed":
        return f'<p class="not-computed">{_text(block["text"])}</p>'
    if kind == "heading":
        return f"<h3>{_text(block['text'])}</h3>"
    if kind == "math":
        return '<div class="math">' + "".join(f"<p>{line}</p>" for line in block["lines"]) + "</div>"
    if kind == "table":
        return _table(block)
    if kind == "figure":
        markup = figures.get(block["figure"])
        if markup is None:
            return f'<p class="not-computed">{_text("Figure not drawn: " + block["caption"])}</p>'
        return f"<figure>{markup}<figcaption>{_text(block['caption'])}</figcaption></figure>"
    raise ValueError(f"unknown report block kind {kind!r}")


def report_html(report: Mapping, figures: Mapping[str, str], *, stylesheet: str = REPORT_CSS,
                footer: bool = True) -> str:
    """The HTML5 page of ``report`` (core.results.report.report_document); ``figures`` maps a figure name to its
    markup (``inline_svg`` of the picture for the page). ``footer`` ends the page with the version, date and
    caution (a PDF prints its own footer on every page)."""
    created = report["created"].replace("T", " ").replace("Z", " UTC")
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             '<meta name="generator" content="Mixtype ' + html.escape(report["mixtype_version"]) + '">',
             f"<title>{_text(report['title'])}</title>", f"<style>{stylesheet}</style>", "</head>", "<body>",
             f"<header><h1>{_text(report['title'])}</h1>",
             f'<p class="meta">Made by Mixtype {_text(report["mixtype_version"])} on {_text(created)}</p></header>']
    for section in report["sections"]:
        parts.append(f'<section id="{html.escape(section["id"])}">')
        parts.append(f"<h2>{_text(section['title'])}</h2>")
        for block in section["blocks"]:
            if section["id"] == "caution" and block["kind"] == "paragraph":
                parts.append(f'<p class="caution"><strong>Caution.</strong> {_text(block["text"])}</p>')
            else:
                parts.append(_block(block, figures))
        parts.append("</section>")
    if footer:
        parts.append(f"<footer><p>Mixtype {_text(report['mixtype_version'])}, report made {_text(created)}. "
                     f"{_text(report['caution'])}</p></footer>")
    parts += ["</body>", "</html>"]
    return "\n".join(parts) + "\n"
