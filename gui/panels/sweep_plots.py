"""The two plots of a parameter sweep: each type's area, and the largest pocket peak, against the parameter.

Area curves in the type colours of gui.palette (elliptic and hyperbolic always, parabolic and undefined only
where they have area), in units of the variables' product; the peak curve with gaps where no pocket has a
peak. Dashed black lines at the critical values saved with the sweep, a dotted line at the parameter's current
value. A logarithmic sweep gets a logarithmic parameter axis (pyqtgraph then places items at log10 of the
value). A left click inside either plot emits ``clicked_at`` with the value under the pointer. Draws only.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, Signal

from core.analysis.classify import FRACTION_ORDER
from core.project.sweeps import SavedSweep
from gui.palette import PIN_COLOUR, TYPE_COLOURS

__all__ = ["CRITICAL_COLOUR", "PEAK_COLOUR", "SweepPlots"]

CRITICAL_COLOUR = "#000000"
PEAK_COLOUR = "#CC79A7"         # reddish purple (Okabe-Ito): apart from every type colour


class SweepPlots(pg.GraphicsLayoutWidget):
    """The area plot (left) and the peak plot (right) of one sweep; ``clicked_at(value)`` on a left click."""

    clicked_at = Signal(float)

    def __init__(self) -> None:
        super().__init__()
        self.setObjectName("sweepPlots")
        self.setBackground("w")
        self.log = False
        self.area_plot = self.addPlot(row=0, col=0)
        self.peak_plot = self.addPlot(row=0, col=1)
        self.legend = self.area_plot.addLegend(offset=(6, 4), colCount=2, labelTextSize="8pt")
        for plot in self.plot_items:
            plot.showGrid(x=True, y=True, alpha=0.25)
            plot.setMenuEnabled(False)
            for side in ("bottom", "left"):
                plot.getAxis(side).enableAutoSIPrefix(False)     # no "(x0.001)" beside a dimensionless name
        self.area_curves: dict[str, pg.PlotDataItem] = {}
        for code in FRACTION_ORDER:
            self.area_curves[code.label] = self.area_plot.plot(
                [], [], pen=pg.mkPen(TYPE_COLOURS[code], width=2.2), name=code.label, symbol="o", symbolSize=4,
                symbolBrush=TYPE_COLOURS[code], symbolPen=None)
        self.peak_curve = self.peak_plot.plot([], [], pen=pg.mkPen(PEAK_COLOUR, width=2.2), symbol="o",
                                              symbolSize=4, symbolBrush=PEAK_COLOUR, symbolPen=None,
                                              connect="finite")
        self.critical_lines: list[tuple[pg.PlotItem, pg.InfiniteLine]] = []
        self.now_lines = [pg.InfiniteLine(angle=90, pen=pg.mkPen(PIN_COLOUR, width=1.5, style=Qt.PenStyle.DotLine))
                          for _ in self.plot_items]
        for plot, line in zip(self.plot_items, self.now_lines, strict=True):
            plot.addItem(line, ignoreBounds=True)
        self.scene().sigMouseClicked.connect(self._clicked)

    @property
    def plot_items(self) -> tuple[pg.PlotItem, pg.PlotItem]:
        return self.area_plot, self.peak_plot

    def _position(self, value: float) -> float:
        """Where ``value`` of the parameter sits on the plots' x axis."""
        return math.log10(value) if self.log else value

    def show_sweep(self, sweep: SavedSweep | None, *, variables: tuple[str, str], unit: str,
                   quantity: str | None) -> None:
        """Draw ``sweep``'s rows and critical values (nothing for None or a sweep not run); ``unit`` is the
        parameter's, ``quantity`` the name peaked when the rows do not say it."""
        rows = () if sweep is None or sweep.rows is None else sweep.rows
        self.log = bool(sweep is not None and sweep.log)
        values = np.array([row.value for row in rows], dtype=np.float64)
        self.legend.clear()
        for label, curve in self.area_curves.items():
            areas = np.array([row.areas[label] for row in rows], dtype=np.float64)
            shown = label in ("elliptic", "hyperbolic") or bool(np.any(areas > 0))
            curve.setData(values if shown else [], areas if shown else [])
            curve.setVisible(shown)
            if shown:
                self.legend.addItem(curve, label)
        peaks = np.array([np.nan if row.peak is None else row.peak["value"] for row in rows], dtype=np.float64)
        if np.isfinite(peaks).any():
            self.peak_curve.setData(values, peaks, connect="finite")
            quantity = next(row.peak["quantity"] for row in rows if row.peak is not None)
        else:
            self.peak_curve.setData([], [])
        name = "" if sweep is None else sweep.parameter
        for plot in self.plot_items:
            plot.setLabel("bottom", f"{name} ({unit or 'dimensionless'})" if name else "")
            plot.setLogMode(x=self.log, y=False)
        # titles rather than left labels: the plots are short, and a rotated label would be cut
        first, second = variables
        self.area_plot.setTitle(f"area of each type ({first} unit × {second} unit)", size="9pt")
        self.peak_plot.setTitle(f"largest pocket peak of {quantity}" if quantity else
                                "largest pocket peak (the equation names no peak quantity)", size="9pt")
        self._show_critical(() if sweep is None or sweep.critical is None else sweep.critical)
        for plot in self.plot_items:
            plot.enableAutoRange()

    def _show_critical(self, critical) -> None:
        for plot, line in self.critical_lines:
            plot.removeItem(line)
        self.critical_lines = []
        for mark in critical:
            for plot in self.plot_items:
                line = pg.InfiniteLine(pos=self._position(mark.value), angle=90, movable=False,
                                       pen=pg.mkPen(CRITICAL_COLOUR, width=1.2, style=Qt.PenStyle.DashLine),
                                       label=f"{mark.event} {mark.value:.5g}",
                                       labelOpts={"position": 0.5, "color": CRITICAL_COLOUR, "fill": "#FFFFFFB0",
                                                  "anchors": [(0, 0.5), (0, 0.5)]})
                line.setToolTip(f"a {mark.type} zone {mark.event} here ({mark.value:.9g})")
                plot.addItem(line, ignoreBounds=True)
                self.critical_lines.append((plot, line))

    def show_now(self, value: float | None) -> None:
        """The dotted line at the parameter's current ``value`` (None, or not above 0 on a log axis: hidden)."""
        visible = value is not None and math.isfinite(value) and (not self.log or value > 0)
        for line in self.now_lines:
            line.setVisible(visible)
            if visible:
                line.setPos(self._position(value))

    def _clicked(self, event) -> None:
        if event.button() != Qt.MouseButton.LeftButton:
            return
        for plot in self.plot_items:
            box = plot.getViewBox()
            if box.sceneBoundingRect().contains(event.scenePos()):
                x = box.mapSceneToView(event.scenePos()).x()
                event.accept()
                if math.isfinite(x):
                    self.clicked_at.emit(10.0 ** x if self.log else x)
                return
