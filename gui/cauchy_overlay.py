"""What the Cauchy panel draws on the map: its solution u as the field layer, the data line, and the selected pin's
domain of dependence (the characteristic of each family from the pin to the data line, and the stretch of
data between their feet).

Everything drawn comes from core (core.analysis.cauchy_field: the FieldGrid of u, the DependenceSketch); this
module only keeps the plot items in step with the panel (gui.panels.cauchy, signal ``map_changed``). The field is
lent to gui.field_layer, which draws it with its colour bar and hover readout in place of the study's own field
while "Show u on the map" is ticked.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QObject, Qt

from core.analysis.cauchy_field import line_in_box
from core.analysis.field_values import FieldQuantity
from gui.palette import FAMILY_COLOURS, PIN_COLOUR

__all__ = ["DATA_LINE_COLOUR", "SOLUTION_QUANTITY", "CauchyOverlay"]

DATA_LINE_COLOUR = "#3A3A3A"            # dark grey, dash-dotted: the whole data line
SOLUTION_QUANTITY = FieldQuantity("cauchy", "u", "u (Cauchy solution)", "")
_STYLES = {1: Qt.PenStyle.SolidLine, 2: Qt.PenStyle.DashLine}
_Z = 26                                  # above the characteristics (21, 22) and seeds (25), under the pins (30)


class CauchyOverlay(QObject):
    """Plot items of the Cauchy panel on ``map_view``; the solution lent to ``field_layer``."""

    def __init__(self, map_view, field_layer, panel, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.map_view, self.field_layer, self.panel = map_view, field_layer, panel
        plot = map_view.plot
        self.data_line = pg.PlotCurveItem(pen=pg.mkPen(DATA_LINE_COLOUR, width=1.6, style=Qt.PenStyle.DashDotLine))
        self.data_segment = pg.PlotCurveItem(pen=pg.mkPen(PIN_COLOUR, width=5.0))
        self.characteristics = {family: pg.PlotCurveItem(pen=pg.mkPen(FAMILY_COLOURS[family], width=2.2,
                                                                      style=_STYLES[family]))
                                for family in (1, 2)}
        self.feet = pg.ScatterPlotItem(size=9, symbol="s", pen=pg.mkPen("w", width=1.0), brush=pg.mkBrush(PIN_COLOUR))
        for offset, item in enumerate((self.data_line, *self.characteristics.values(), self.data_segment,
                                       self.feet)):
            item.setZValue(_Z + offset * 0.1)
            plot.addItem(item)
        self.lent_grid = None
        panel.map_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        """Draw what the panel holds now."""
        study = self.panel.runs.current
        self._show_field(study)
        sketch = self.panel.sketch if self.panel.show_dependence.isChecked() else None
        line = None if study is None or not self.panel.show_dependence.isChecked() else self._line(study)
        self._set(self.data_line, [line] if line is not None else [])
        if sketch is None:
            for item in (self.data_segment, *self.characteristics.values()):
                self._set(item, [])
            self.feet.setData([], [])
            return
        for family, item in self.characteristics.items():
            feet = sketch.feet
            self._set(item, [(sketch.point, feet[family - 1])] if family <= len(feet) else [])
        self._set(self.data_segment, [sketch.segment] if sketch.segment is not None else [])
        self.feet.setData([p[0] for p in sketch.feet], [p[1] for p in sketch.feet])

    def _line(self, study):
        """The data line across the shown domain, or None when it misses it."""
        domain = self.panel.document.domain
        return line_in_box(study.solution.line, (domain.xmin, domain.xmax, domain.ymin, domain.ymax))

    def _show_field(self, study) -> None:
        grid = None if study is None or not self.panel.show_field.isChecked() else study.grid
        if grid is self.lent_grid:
            return
        self.lent_grid = grid
        if grid is None:
            self.field_layer.end_lent()
            return
        straddles = math.isfinite(grid.low) and grid.low < 0 < grid.high
        self.field_layer.show_lent(grid, SOLUTION_QUANTITY, self.panel.reader(),
                                   iso_values=(0.0,) if straddles else (),
                                   colour_map="blue_yellow" if straddles else "cividis")

    @staticmethod
    def _set(item: pg.PlotCurveItem, segments) -> None:
        """Draw ``segments`` (pairs of points) as one curve with breaks between them."""
        if not segments:
            item.setData([], [])
            return
        xs, ys = [], []
        for start, end in segments:
            xs += [start[0], end[0], np.nan]
            ys += [start[1], end[1], np.nan]
        item.setData(np.array(xs[:-1]), np.array(ys[:-1]), connect="finite")

