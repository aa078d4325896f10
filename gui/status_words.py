"""The words around the map that must say what is on screen now: the hover readout and the map's header.

``hover_text`` writes the status bar's readout of the point under the mouse (coordinates without rounding
noise, core.results.readable). ``grid_words`` and ``parameter_words`` write the header's account of the map
actually drawn: its grid and parameter values, with a word when a newer request is still computing, was
cancelled or failed. ``ScreenWords`` keeps the hover readout and the header in step with the window: it
re-reads the point under the mouse after every new map, forgets it when another study is opened, and tracks
whether the newest map request was cancelled or failed.
"""

from __future__ import annotations

from PySide6.QtCore import QObject, Signal
from PySide6.QtWidgets import QLabel

from core.results.readable import point_without_noise
from gui.panels.pins import main_trade_text

__all__ = ["HOVER_PROMPT", "ScreenWords", "grid_words", "hover_text", "parameter_words"]

HOVER_PROMPT = "Move over the map to read the type and D at a point."


def hover_text(reading, variables: tuple[str, str], domain) -> str:
    """The status bar's line for a gui.analysis.HoverReading: the point, whether it is outside the domain,
    the type, D and the trade's main number."""
    x_name, y_name = variables
    x, y = point_without_noise((reading.x, reading.y), domain)
    where = f"{x_name} = {x:.5g}, {y_name} = {y:.5g}"
    outside = "" if reading.inside else " (outside the domain)"
    d = "undefined" if reading.discriminant != reading.discriminant else f"{reading.discriminant + 0.0:.5g}"
    trade = main_trade_text(reading.trade)
    trade = f"   |   {trade}" if trade else ""
    return f"{where}{outside}   |   {reading.type.label}   |   D = {d} (units of b²){trade}"


def _grid(domain) -> str:
    return f"{domain.nx} × {domain.ny}"


def _same_grid(first, second) -> bool:
    return (first.xmin, first.xmax, first.ymin, first.ymax, first.nx, first.ny) == \
        (second.xmin, second.xmax, second.ymin, second.ymax, second.nx, second.ny)


def grid_words(shown, requested, *, computing: bool, state: str = "") -> str:
    """The header's grid: that of the map on screen (``shown``, a Domain or None), with what became of the
    newer ``requested`` grid when it differs: ``state`` ("was cancelled", "failed") unless a newer request is
    ``computing``; otherwise it is on its way (a change is followed by its request)."""
    if shown is None:
        return f"{_grid(requested)} grid nodes" + (" (computing…)" if computing else "")
    text = f"{_grid(shown)} grid nodes"
    if _same_grid(shown, requested):
        return text
    if state and not computing:
        return f"{text} shown (the newer {_grid(requested)} map {state})"
    return f"{text} shown; computing the {_grid(requested)} map…"


def parameter_words(equation, shown_parameters) -> list[str]:
    """'name = value unit' for each parameter, valued as in the map on screen where it has the parameter."""
    words = []
    for name, parameter in equation.parameters.items():
        value = (shown_parameters or {}).get(name, parameter.value)
        unit = f" {parameter.unit}" if parameter.unit else ""
        words.append(f"{name} = {value:.4g}{unit}")
    return words


class ScreenWords(QObject):
    """Keeps the hover readout of ``label`` and the state of the newest map request true for ``window``
    (a gui.main_window.MainWindow); ``changed`` asks the window to rewrite its header."""

    changed = Signal()

    def __init__(self, window, label: QLabel) -> None:
        super().__init__(window)
        self.window = window
        self.label = label
        self.point: tuple[float, float] | None = None     # the last point under the mouse
        self.map_state = ""                                # "", "was cancelled" or "failed": the newest map request
        label.setText(HOVER_PROMPT)
        document, analysis, runner = window.document, window.analysis, window.runner
        window.map_view.hovered.connect(self._hovered)
        analysis.hover_ready.connect(self._show)
        analysis.map_ready.connect(self._map_shown)
        document.project_replaced.connect(self.forget)
        runner.cancelled.connect(self._cancelled)
        runner.failed.connect(self._failed)
        runner.busy_changed.connect(lambda busy: self.changed.emit())
        runner.progressed.connect(self._progressed)

    def _hovered(self, x: float, y: float) -> None:
        self.point = (x, y)

    def _show(self, reading) -> None:
        # (readings asked for before another study was opened were cancelled with it: see forget)
        self.point = (reading.x, reading.y)
        document = self.window.document
        self.label.setText(hover_text(reading, tuple(document.equation.variables), document.domain))

    def _map_shown(self, type_map) -> None:
        """A new map is on screen: the newest request succeeded; read the point under the mouse again."""
        self.map_state = ""
        self.changed.emit()
        self.refresh()

    def refresh(self) -> None:
        """Read the last point again with the study as it is now (the prompt when nothing can be read)."""
        if self.point is None:
            return
        if self.window.document.compiled is None:
            self.label.setText(HOVER_PROMPT)
            return
        self.window.analysis.request_hover(*self.point)

    def forget(self) -> None:
        """Another study: no point of the old one stays on screen."""
        self.point = None
        self.map_state = ""
        self.window.runner.cancel("hover")
        self.label.setText(HOVER_PROMPT)
        self.changed.emit()

    def _progressed(self, channel: str, fraction: float, label: str) -> None:
        if channel == "map" and self.map_state:       # a newer map is being computed after all
            self.map_state = ""
            self.changed.emit()

    def _cancelled(self, channel: str, number: int) -> None:
        if channel == "map" and self.window.runner.latest("map") == -1:     # cancelled, not replaced
            self.map_state = "was cancelled"
            self.changed.emit()

    def _failed(self, channel: str, number: int, text: str) -> None:
        if channel == "map":
            self.map_state = "failed"
            self.changed.emit()
