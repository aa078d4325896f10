"""Exported pictures open anywhere: the SVG drawn by librsvg and by Qt matches the PNG of the same view, the
plot is clipped, the PDF's zone edges stay sharp at any resolution, and `mixtype render` picks the format from
the file's suffix without printing anything on stderr."""

from __future__ import annotations

import re
import shutil
import subprocess
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QByteArray, QPoint, QRect
from PySide6.QtGui import QColor, QImage, QPainter
from PySide6.QtSvg import QSvgRenderer

from core.analysis.classify import TypeCode
from core.project.model import Seed
from gui import launcher
from gui.export import PICTURE_SUFFIXES
from gui.palette import TYPE_COLOURS
from gui.render import DEFAULT_RENDER_SIZE, render_project
from tests.ceilings import HANG_CEILING_S
from tests.gui.conftest import tricomi_project
from tests.gui.test_launcher import launch

RSVG = shutil.which("rsvg-convert")
PDFTOPPM = shutil.which("pdftoppm")
ZONES = {code: np.array(QColor(TYPE_COLOURS[code]).getRgb()[:3]) for code in
         (TypeCode.ELLIPTIC, TypeCode.HYPERBOLIC, TypeCode.PARABOLIC)}


def pixels(image: QImage) -> np.ndarray:
    """(height, width, 3) RGB values of ``image``."""
    image = image.convertToFormat(QImage.Format.Format_RGB888)
    width, height, stride = image.width(), image.height(), image.bytesPerLine()
    data = np.frombuffer(bytes(image.constBits()), dtype=np.uint8).reshape(height, stride)
    return data[:, :width * 3].reshape(height, width, 3).astype(int)


def near(rgb: np.ndarray, colour: np.ndarray, tolerance: int = 6) -> np.ndarray:
    return np.abs(rgb - colour).max(axis=-1) <= tolerance


def plot_rectangle(map_view) -> QRect:
    """The plot area (the ViewBox) in the map widget's pixels."""
    view = map_view.plot_widget
    offset = view.viewport().mapTo(map_view, QPoint(0, 0))
    box = view.mapFromScene(map_view.view_box.sceneBoundingRect()).boundingRect()
    return box.translated(offset)


def qt_drawing(svg_path: Path) -> np.ndarray:
    renderer = QSvgRenderer(str(svg_path))
    assert renderer.isValid()
    image = QImage(renderer.defaultSize(), QImage.Format.Format_RGB32)
    image.fill(QColor("white"))
    painter = QPainter(image)
    renderer.render(painter)
    painter.end()
    return pixels(image)


def librsvg_drawing(svg_path: Path, tmp_path: Path) -> np.ndarray:
    out = tmp_path / f"{svg_path.stem}_rsvg.png"
    subprocess.run([RSVG, "--background-color", "white", str(svg_path), "-o", str(out)], check=True,
                   timeout=HANG_CEILING_S)
    return pixels(QImage(str(out)))


def zoomed_tricomi_window(make_window):
    """Tricomi with pins, a traced seed and the view zoomed in about (0.6, 0.1), so that zones, lines and a pin
    lie beyond the plot's edges, where a picture that is not clipped would draw them."""
    window = make_window(tricomi_project())
    window.document.add_pin(0.5, -1.0, "low")
    window.document.add_pin(0.6, 0.5, "high")
    window.document.add_pin(1.9, 1.9, "far corner")
    window.document.add_seed(Seed(start=(0.0, -1.0)))
    window.analysis.flush()
    window.map_view.view_box.setRange(xRange=(0.1, 1.1), yRange=(-0.4, 0.6), padding=0)
    return window


@pytest.mark.parametrize("renderer", ["librsvg", "qt"])
def test_svg_draws_like_the_png_of_the_same_view(make_window, tmp_path, renderer):
    if renderer == "librsvg" and RSVG is None:
        pytest.skip("rsvg-convert is not installed (Debian package librsvg2-bin)")
    window = zoomed_tricomi_window(make_window)
    png = window.export_picture(tmp_path / "map.png")
    svg = window.export_picture(tmp_path / "map.svg")
    text = svg.read_text(encoding="utf-8")
    # Plain SVG: no stroke that ignores the transform, no huge scale, stroke widths of a few output units.
    assert "vector-effect" not in text and "clipPath" in text
    for matrix in re.findall(r"matrix\(([^)]*)\)", text):
        a, b, c, d = (float(v) for v in matrix.split(",")[:4])
        assert max(abs(a), abs(b), abs(c), abs(d)) <= 4.0, matrix
    assert max(float(w) for w in re.findall(r'stroke-width="([0-9.]+)"', text)) <= 10.0

    expected = pixels(QImage(str(png)))          # the PNG export is the widget at twice its size
    expected = expected[::2, ::2]
    drawn = librsvg_drawing(svg, tmp_path) if renderer == "librsvg" else qt_drawing(svg)
    assert drawn.shape == expected.shape
    plot = plot_rectangle(window.map_view)
    inside = (slice(plot.top() + 2, plot.bottom() - 1), slice(plot.left() + 2, plot.right() - 1))
    # Zone colours' shares of the plot area within a few percent of the PNG's (both zones are on screen).
    for code, colour in ZONES.items():
        share_png = near(expected[inside], colour).mean()
        share_svg = near(drawn[inside], colour).mean()
        assert share_svg == pytest.approx(share_png, abs=0.03), (code.label, share_svg, share_png)
    assert near(expected[inside], ZONES[TypeCode.ELLIPTIC]).mean() > 0.2
    assert near(expected[inside], ZONES[TypeCode.HYPERBOLIC]).mean() > 0.2
    # No colour the map lacks: every pixel of the plot is near a colour the PNG's plot holds, except for
    # anti-aliasing blends along edges (a small share).
    palette, counts = np.unique(expected[inside].reshape(-1, 3) // 8, axis=0, return_counts=True)
    common = palette[counts >= 20] * 8 + 4
    sample = drawn[inside].reshape(-1, 3)[::3]
    distance = np.min([np.abs(sample - colour).max(axis=-1) for colour in common], axis=0)
    assert (distance > 24).mean() < 0.03
    # Clipped: outside the plot (a margin of 4 px for axes and the edges of strokes) and apart from the legend,
    # no zone colour is drawn, though zones go on beyond the plot's edges.
    legend = window.map_view.legend.geometry()
    outside = np.ones(drawn.shape[:2], dtype=bool)
    outside[plot.top() - 4:plot.bottom() + 5, plot.left() - 4:plot.right() + 5] = False
    outside[legend.top() - 4:, :] = False
    for colour in (ZONES[TypeCode.ELLIPTIC], ZONES[TypeCode.HYPERBOLIC]):
        assert near(drawn[outside], colour, 12).sum() == 0
        assert near(expected[outside], colour, 12).sum() == 0
    # The title is drawn above the plot (dark text pixels in its rectangle), not covered by the zones.
    title = window.map_view.title.geometry()
    assert (drawn[title.top():title.bottom(), title.left():title.right()].max(axis=-1) < 100).sum() > 50


@pytest.mark.skipif(PDFTOPPM is None, reason="pdftoppm is not installed (Debian package poppler-utils)")
def test_pdf_zone_edges_stay_sharp_at_two_resolutions(make_window, tmp_path):
    window = make_window(tricomi_project())
    view = window.document.project.view
    window.map_view.set_layers(replace(view, show_type_change_lines=False, show_characteristics_family_1=False,
                                       show_characteristics_family_2=False, show_pins=False))
    pdf = window.export_picture(tmp_path / "map.pdf")
    assert b"/Interpolate true" not in pdf.read_bytes()
    plot = plot_rectangle(window.map_view)
    for dpi in (72, 288):
        subprocess.run([PDFTOPPM, "-r", str(dpi), "-png", "-singlefile", str(pdf), str(tmp_path / f"p{dpi}")],
                       check=True, timeout=HANG_CEILING_S)
        page = pixels(QImage(str(tmp_path / f"p{dpi}.png")))
        scale = dpi / 72.0                       # one point of the page per pixel of the widget
        assert page.shape[1] == pytest.approx(window.map_view.width() * scale, abs=2)
        top, bottom = round((plot.top() + 3) * scale), round((plot.bottom() - 3) * scale)
        for x in (0.3, 0.5, 0.7):                # columns across the y = 0 edge, in thirds of the plot
            column = page[top:bottom, round((plot.left() + x * plot.width()) * scale)]
            zoned = np.flatnonzero(near(column, ZONES[TypeCode.ELLIPTIC], 3) | near(column, ZONES[TypeCode.HYPERBOLIC], 3))
            column = column[zoned[0]:zoned[-1] + 1]        # the domain's extent along this column
            assert len(column) > 100 * scale
            known = np.zeros(len(column), dtype=bool)
            for colour in ZONES.values():
                known |= near(column, colour, 3)
            # Both zones and the parabolic row at y = 0 are crossed; between them at most one blended pixel
            # per edge at either resolution (a smoothed image blurs over several pixels at 288 dpi).
            assert near(column, ZONES[TypeCode.ELLIPTIC], 3).any() and near(column, ZONES[TypeCode.HYPERBOLIC],
                                                                            3).any()
            assert (~known).sum() <= 4, (dpi, x, int((~known).sum()))


def test_render_command_picks_the_format_from_the_suffix_and_prints_nothing_on_stderr(make_window, tmp_path):
    path = tmp_path / "tricomi.mixtype.json"
    assert make_window(tricomi_project(41)).save_to(path)
    completed = launch("render", str(path), "--out", str(tmp_path / "map.svg"), "--size", "500", "400")
    assert completed.returncode == 0 and completed.stderr == ""
    assert completed.stdout == f"wrote {tmp_path / 'map.svg'}\n"
    text = (tmp_path / "map.svg").read_text(encoding="utf-8")
    assert text.startswith("<?xml") and "clipPath" in text
    render_project(path, tmp_path / "map.pdf", size=(500, 400))
    render_project(path, tmp_path / "map.PNG", size=(500, 400))
    assert (tmp_path / "map.pdf").read_bytes()[:4] == b"%PDF"
    assert (tmp_path / "map.PNG").read_bytes()[:4] == b"\x89PNG"
    assert QSvgRenderer(QByteArray(text.encode())).defaultSize().width() == QImage(
        str(tmp_path / "map.PNG")).width()

    refused = launch("render", str(path), "--out", str(tmp_path / "map.jpg"))
    assert refused.returncode == 2 and not (tmp_path / "map.jpg").exists()
    assert refused.stderr.count("\n") == 1 and "map.jpg" in refused.stderr and ".svg" in refused.stderr
    with pytest.raises(ValueError, match="map.gif"):
        render_project(path, tmp_path / "map.gif")


def test_render_help_states_the_default_size_and_formats():
    completed = launch("render", "--help")
    assert completed.returncode == 0
    assert f"default {DEFAULT_RENDER_SIZE[0]} {DEFAULT_RENDER_SIZE[1]}" in completed.stdout
    assert all(suffix in completed.stdout for suffix in PICTURE_SUFFIXES)
    assert launcher.RENDER_SIZE == DEFAULT_RENDER_SIZE and launcher.RENDER_SUFFIXES == PICTURE_SUFFIXES
