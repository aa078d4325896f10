"""The study report's pictures: the type map, the field layer and the certified layer, as SVG.

A hidden map view (gui.map_view.MapView, never shown on screen) draws a study's results handed in
(core.results.report_results.ReportResults) with the window's own items: the zones filled by
gui.field_layer.FieldDrawing, lines, characteristics, seeds, pins and legend, the field with its colour bar
and iso-lines, the certified layer (gui.certified_layer). Each picture is written by gui.svg_export.plain_svg,
the map export of the window: zones, lines, pins and text are vector paths and text; the field's shading and
the certified layer's tint and hatching are images by nature and are embedded as PNG.

The view is sized so the plot keeps the domain's proportions (axes to scale, as in the window) at
FIGURE_WIDTH pixels wide. Runs on the GUI thread (it paints widgets); a study's figures take a fraction of a
second.
"""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QPalette
from PySide6.QtWidgets import QApplication

from core.project.model import ViewSettings
from core.results.report_results import ReportResults
from gui.analysis import TracedSeed
from gui.certified_layer import CertifiedLayer
from gui.field_layer import FieldDrawing
from gui.map_view import MAX_STRETCH, MapView
from gui.status_words import parameter_words
from gui.svg_export import plain_svg

__all__ = ["FIGURE_WIDTH", "ReportFigures"]

FIGURE_WIDTH = 900                    # pixels (SVG output units) of every figure's width
PLOT_HEIGHTS = (240, 640)             # the plot's height is kept within these pixels whatever the domain's shape
_FITTING_PASSES = 3                   # resize, measure the plot, resize again (the legend may wrap differently)


class ReportFigures:
    """Draws a study's report figures; one instance can draw several studies, one after the other."""

    def __init__(self) -> None:
        self.map_view = MapView()
        self.map_view.setAttribute(Qt.WidgetAttribute.WA_DontShowOnScreen, True)
        palette = self.map_view.palette()              # white around the plot, as on paper
        palette.setColor(QPalette.ColorRole.Window, QColor("white"))
        self.map_view.setPalette(palette)
        self.map_view.setAutoFillBackground(True)
        self.field = FieldDrawing(self.map_view, self.map_view)
        self.certified = CertifiedLayer(self.map_view, None, self.map_view)

    def close(self) -> None:
        """Let the hidden view go (Qt deletes it)."""
        self.map_view.close()
        self.map_view.deleteLater()

    def draw(self, results: ReportResults, view: ViewSettings) -> dict[str, str]:
        """The SVG text of each figure of ``results``: "type_map" always, "field" when the field could be shaded,
        "certified" when a certified map was made. ``view`` gives the layers the study shows."""
        self._draw_study(results, view)
        figures = {"type_map": self._svg("Type map")}
        if results.field is not None:
            self.field.show_field(results.field, results.iso_lines, results.field_quantity,
                                  results.field_settings.colour_map)
            title, subtitle = self.map_view.title.text(), self.map_view.subtitle.text()
            self.map_view.set_titles(f"{results.field_quantity.title} on “{results.domain.name}”", subtitle)
            self._fit()                                  # the colour bar takes a column of the plot's layout
            figures["field"] = self._svg(f"Field layer: {results.field_quantity.title}")
            self.field.show_field(None, (), None)
            self.map_view.set_titles(title, subtitle)
        if results.certified is not None:
            title, subtitle = self.map_view.title.text(), self.map_view.subtitle.text()
            self.map_view.set_titles(f"Certified layer over the type of “{results.equation.name}” on "
                                     f"“{results.domain.name}”", subtitle)
            self.certified.show(results.certified)
            self._fit()
            figures["certified"] = self._svg("Certified layer")
            self.certified.show(None)
            self.map_view.set_titles(title, subtitle)
        return figures

    # -- drawing ----------------------------------------------------------------------------------------------
    def _draw_study(self, results: ReportResults, view: ViewSettings) -> None:
        view_ = self.map_view
        equation, domain = results.equation, results.domain
        view_.set_variables(*equation.variables)
        values = parameter_words(equation, results.parameters)
        ratio = (domain.ymax - domain.ymin) / (domain.xmax - domain.xmin)
        scale = "" if 1 / MAX_STRETCH <= ratio <= MAX_STRETCH else "; axes not to scale"
        view_.set_titles(f"Type of “{equation.name}” on “{domain.name}”",
                         f"{domain.nx} × {domain.ny} grid nodes; parabolic when |D|/(b² + 4|ac|) ≤ "
                         f"{results.tolerance:g}" + (f"; {', '.join(values)}" if values else "") + scale)
        # The report shows every part of the study: the layers' switches decide nothing but the legend.
        view_.set_layers(replace(view, show_type_map=True, show_type_change_lines=True, show_pins=True,
                                 show_characteristics_family_1=True, show_characteristics_family_2=True))
        view_.show_type_map(results.type_map)
        view_.show_lines(results.boundaries)
        view_.show_characteristics([TracedSeed(seed=seed, curves=curves) for seed, curves in results.traced])
        view_.show_seeds(tuple(seed for seed, _curves in results.traced))
        shown = tuple(pin.belongs_to(equation.name, domain.name) for pin in results.pins)
        view_.show_pins(results.pins, shown)
        self.field.show_polygons(results.zones)
        view_.show_domain(domain, fit=False)
        self._fit()

    def _fit(self) -> None:
        """Size the view so the plot holds the domain to scale FIGURE_WIDTH wide, then fit the domain in it."""
        view_ = self.map_view
        domain = view_._domain
        ratio = (domain.ymax - domain.ymin) / (domain.xmax - domain.xmin)
        ratio = min(max(ratio, 1 / MAX_STRETCH), MAX_STRETCH)
        height = 480
        if not view_.isVisible():
            view_.resize(FIGURE_WIDTH, height)
            view_.show()
        for _ in range(_FITTING_PASSES):
            view_.resize(FIGURE_WIDTH, height)
            QApplication.processEvents()
            plot = view_.view_box.rect()
            wanted = min(max(plot.width() * ratio, PLOT_HEIGHTS[0]), PLOT_HEIGHTS[1])
            height = max(200, round(height + wanted - plot.height()))
        view_.resize(FIGURE_WIDTH, height)
        QApplication.processEvents()
        view_.fit_domain()
        view_.place_pin_labels()
        QApplication.processEvents()

    def _svg(self, title: str) -> str:
        return plain_svg(self.map_view, title=title, description="Figure of a Mixtype study report")
