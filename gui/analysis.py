"""Keeps the numbers on screen in step with the document: requests core computations as background jobs.

Listens to the document's specific signals and asks the job runner for exactly the work they invalidate:
a new type map (then its type-change lines and its hyperbolic pockets), characteristics for the seeds, probes
(with the trade quantities of the equation) for the pins, and the hover readout. Every computation uses the
document's background data. Requests made in one pass of the event loop are coalesced. Every number comes
from core (classify_grid, find_type_boundaries, pockets_and_labels, trace_characteristics, probe_point,
read_trade, peak_quantity, certify_map); this module only schedules.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from PySide6.QtCore import QObject, QTimer, Signal

from core.analysis.classify import TypeCode, classify_grid, classify_points
from core.analysis.discriminant import discriminant
from core.analysis.pockets import pockets_and_labels
from core.analysis.probe import probe_point
from core.analysis.tracing import trace_characteristics
from core.analysis.type_change_lines import find_type_boundaries
from core.certify.refinement import certify_map
from core.progress import Cancelled
from core.project.model import Seed
from core.results.readouts import TradeReading, peak_quantity, read_trade
from gui.document import Document
from gui.jobs import JobRunner

__all__ = ["HoverReading", "PocketReport", "StudyAnalysis", "TracedSeed", "shown_trade", "trade_at"]


@dataclass(frozen=True)
class HoverReading:
    """What the status bar shows for the point under the mouse."""

    x: float
    y: float
    type: TypeCode
    discriminant: float
    inside: bool
    trade: dict = field(default_factory=dict)   # core.equations.trade readout at the point ({} without a trade spec)


@dataclass(frozen=True)
class TracedSeed:
    """The characteristics traced from one seed line of the study (curves as core returns them)."""

    seed: Seed
    curves: tuple


@dataclass(frozen=True)
class PocketReport:
    """The hyperbolic pockets of one type map: core's statistics and the (ny, nx) int32 label array
    (0 off the pockets, ``pocket.label`` on each pocket's nodes)."""

    type_map: object
    pockets: tuple
    labels: np.ndarray
    quantity: str | None


def shown_trade(reading: TradeReading) -> dict | str:
    """How the panels show a core.results.readouts.TradeReading: the readout dict ({} without a trade spec), or
    the one-line reason (str) when it cannot be read there."""
    return reading.problem or dict(reading.values)


def trade_at(equation, compiled, x: float, y: float, *, parameters, data) -> dict | str:
    """The equation's trade readout at one point as the panels show it (core.results.readouts.read_trade)."""
    return shown_trade(read_trade(equation.trade, compiled, x, y, parameters=parameters, data=data))


_LABELS = {"map": "Classifying the grid", "lines": "Finding type-change lines",
           "characteristics": "Tracing characteristics", "probes": "Probing pins", "hover": "Reading point",
           "pockets": "Measuring hyperbolic pockets", "certified": "Certifying the map"}


class StudyAnalysis(QObject):
    """Results for the shown equation and domain; each arrives by its own signal."""

    map_ready = Signal(object)              # core.analysis.classify.TypeMap
    lines_ready = Signal(object)            # core.analysis.type_change_lines.TypeBoundaries, or None when unavailable
    characteristics_ready = Signal(object)  # tuple[TracedSeed, ...]
    probes_ready = Signal(object)           # tuple[ProbeResult, ...], one per pin
    trade_ready = Signal(object)            # tuple[dict | str, ...], one trade readout per pin (see shown_trade)
    pockets_ready = Signal(object)          # PocketReport, or None while none is known
    hover_ready = Signal(object)            # HoverReading
    certified_ready = Signal(object)        # core.certify.refinement.CertifiedMap, or None (layer off or stale)
    message = Signal(str)                   # something the user should read (errors, missing parts)

    def __init__(self, document: Document, runner: JobRunner, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.runner = runner
        self.dragging = False
        self.type_map = None
        self.boundaries = None
        self.traced: tuple[TracedSeed, ...] = ()
        self.probes: tuple = ()
        self.trade_readouts: tuple = ()
        self.trade_readings: tuple[TradeReading, ...] = ()
        self.pockets: PocketReport | None = None
        self.certified = None                 # CertifiedMap of the newest map, when the certified layer is on
        self._certified_for: tuple | None = None
        self._wanted: set[str] = set()
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.flush)
        document.equation_changed.connect(lambda: self.schedule("map", "characteristics", "probes"))
        document.parameters_changed.connect(lambda: self.schedule("map", "characteristics", "probes"))
        document.domain_changed.connect(lambda: self.schedule("map", "characteristics", "probes"))
        document.pins_changed.connect(lambda: self.schedule("probes"))
        document.seeds_changed.connect(lambda: self.schedule("characteristics"))
        document.data_changed.connect(self.refresh_all)
        document.layers_changed.connect(self._certified_settings_changed)
        runner.finished.connect(self._on_finished)
        runner.failed.connect(self._on_failed)

    # -- scheduling -----------------------------------------------------------------------------------------
    def schedule(self, *what: str) -> None:
        self._wanted.update(what)
        self._timer.start()

    def refresh_all(self) -> None:
        self.schedule("map", "characteristics", "probes")

    def flush(self) -> None:
        """Request everything scheduled so far now (the timer does this on the next event-loop pass)."""
        self._timer.stop()
        if self.document.data_pending:
            return          # the data are loading: data_changed schedules everything once they are in
        wanted, self._wanted = self._wanted, set()
        compiled = self.document.compiled
        if compiled is None:
            if wanted:
                self.message.emit(f"The equation does not compile: {self.document.compile_error}")
            return
        for what in ("map", "characteristics", "probes"):
            if what in wanted:
                getattr(self, f"_request_{what}")(compiled)

    def end_drag(self) -> None:
        """After a slider drag: the lines of the final map (they were hidden during the drag)."""
        self.dragging = False
        if self.type_map is not None and not self.runner.is_busy("map"):
            self._request_lines(self.type_map)
            self._request_pockets(self.type_map)
            self._request_certified(self.type_map)

    def _inputs(self):
        document = self.document
        return document.domain, document.equation.parameter_values(), document.tolerance

    def _request_map(self, compiled) -> None:
        domain, parameters, tolerance = self._inputs()
        data = self.document.data

        def work(cancel, progress):
            return classify_grid(compiled, domain, parameters=parameters, data=data, tolerance=tolerance,
                                 cancel=cancel, progress=progress)

        self.runner.request("map", work, policy="queue" if self.dragging else "replace", label=_LABELS["map"])

    def _request_lines(self, type_map) -> None:
        compiled = self.document.compiled
        if compiled is None:
            return
        if self.dragging:
            # Lines cost about as much as the map itself: while a slider moves, the zones' own edges show
            # the change and the stale lines are hidden; end_drag recomputes them once, refined.
            self.runner.cancel("lines")
            if self.boundaries is not None:
                self.boundaries = None
                self.lines_ready.emit(None)
            return
        refine = True
        parameters = dict(type_map.parameters)
        data = self.document.data

        def work(cancel, progress):
            return find_type_boundaries(compiled, type_map, parameters=parameters, data=data,
                                                 refine=refine, cancel=cancel, progress=progress)

        self.runner.request("lines", work, label=_LABELS["lines"])

    def _request_pockets(self, type_map) -> None:
        """The hyperbolic pockets of ``type_map`` with the peak of the equation's peak quantity."""
        compiled = self.document.compiled
        if compiled is None:
            return
        if self.dragging:
            # Like the lines: during a slider drag the table would flicker; end_drag measures the final map.
            self.runner.cancel("pockets")
            return
        quantity = peak_quantity(self.document.equation, compiled, self.document.data_names)
        parameters = dict(type_map.parameters)
        data = self.document.data

        def work(cancel, progress):
            with np.errstate(all="ignore"):
                pockets, labels = pockets_and_labels(compiled, type_map, quantity=quantity, parameters=parameters,
                                                     data=data, cancel=cancel, progress=progress)
            return PocketReport(type_map=type_map, pockets=pockets, labels=labels, quantity=quantity)

        self.runner.request("pockets", work, label=_LABELS["pockets"])

    def _certified_settings_changed(self) -> None:
        """The layers changed: (re)certify when the certified layer's settings did."""
        settings = self.document.project.view.certified
        if self.type_map is not None and self._certified_for != (settings, id(self.type_map)):
            self._request_certified(self.type_map)

    def _request_certified(self, type_map) -> None:
        """The certified map of ``type_map``'s study (core.certify), when the certified layer is on; pockets
        are checked against ``type_map``. Off (or during a slider drag) the layer is cleared."""
        settings = self.document.project.view.certified
        compiled = self.document.compiled
        if not settings.shown or compiled is None or self.dragging:
            self.runner.cancel("certified")
            self._certified_for = None
            if self.certified is not None:
                self.certified = None
                self.certified_ready.emit(None)
            return
        self._certified_for = (settings, id(type_map))
        domain = type_map.domain
        min_cell = settings.min_cell * min(domain.xmax - domain.xmin, domain.ymax - domain.ymin)
        parameters = dict(type_map.parameters)
        data, tolerance, max_cells = self.document.data, type_map.tolerance, settings.max_cells

        def work(cancel, progress):
            with np.errstate(all="ignore"):
                return certify_map(compiled, domain, parameters=parameters, data=data, tolerance=tolerance,
                                   min_cell=min_cell, max_cells=max_cells, sampled=type_map, cancel=cancel,
                                   progress=progress)

        self.runner.request("certified", work, label=_LABELS["certified"])

    def _request_characteristics(self, compiled) -> None:
        seeds = self.document.project.seeds
        if not seeds:
            self.traced = ()
            self.runner.cancel("characteristics")
            self.characteristics_ready.emit(())
            return
        domain, parameters, _ = self._inputs()
        data = self.document.data
        bounces = self.document.bounces

        def work(cancel, progress):
            traced = []
            for number, seed in enumerate(seeds):
                points = seed.points()

                def part(fraction, number=number):
                    progress((number + fraction) / len(seeds))

                curves = trace_characteristics(compiled, domain, points, families=seed.families,
                                               parameters=parameters, data=data, bounces=bounces,
                                               cancel=cancel, progress=part)
                traced.append(TracedSeed(seed=seed, curves=tuple(curves)))
            return tuple(traced)

        self.runner.request("characteristics", work, label=_LABELS["characteristics"])

    def _request_probes(self, compiled) -> None:
        pins = self.document.project.pins
        if not pins:
            self.probes = ()
            self.trade_readouts = ()
            self.trade_readings = ()
            self.runner.cancel("probes")
            self.probes_ready.emit(())
            self.trade_ready.emit(())
            return
        domain, parameters, tolerance = self._inputs()
        data = self.document.data
        equation = self.document.equation

        def work(cancel, progress):
            results, trades = [], []
            for pin in pins:
                if cancel():
                    raise Cancelled("probes cancelled")
                results.append(probe_point(compiled, pin.x, pin.y, parameters=parameters, data=data,
                                                  tolerance=tolerance, domain=domain))
                trades.append(read_trade(equation.trade, compiled, pin.x, pin.y, parameters=parameters, data=data))
            return tuple(results), tuple(trades)

        self.runner.request("probes", work, label=_LABELS["probes"])

    def request_hover(self, x: float, y: float) -> None:
        """Type and D at one point under the mouse, computed off the GUI thread."""
        compiled = self.document.compiled
        if compiled is None:
            return
        domain, parameters, tolerance = self._inputs()
        data = self.document.data
        equation = self.document.equation

        def work(cancel, progress):
            px, py = np.array([x]), np.array([y])
            with np.errstate(all="ignore"):
                codes, _ = classify_points(compiled, px, py, parameters=parameters, data=data,
                                           tolerance=tolerance)
                d = discriminant(*compiled.coefficients(px, py, parameters=parameters, data=data))
            trade = trade_at(equation, compiled, x, y, parameters=parameters, data=data)
            return HoverReading(x=x, y=y, type=TypeCode(int(codes[0])), discriminant=float(d[0]),
                                inside=bool(domain.contains(x, y)), trade=trade if isinstance(trade, dict) else {})

        self.runner.request("hover", work, label=_LABELS["hover"])

    # -- results --------------------------------------------------------------------------------------------
    def _on_finished(self, channel: str, number: int, result: object) -> None:
        if channel == "map":
            self.type_map = result
            self.map_ready.emit(result)
            self._request_lines(result)
            self._request_pockets(result)
            self._request_certified(result)
        elif channel == "certified":
            self.certified = result
            self.certified_ready.emit(result)
        elif channel == "lines":
            self.boundaries = result
            self.lines_ready.emit(result)
        elif channel == "characteristics":
            self.traced = result
            self.characteristics_ready.emit(result)
        elif channel == "probes":
            self.probes, self.trade_readings = result
            self.trade_readouts = tuple(shown_trade(reading) for reading in self.trade_readings)
            self.trade_ready.emit(self.trade_readouts)
            self.probes_ready.emit(self.probes)
        elif channel == "pockets":
            self.pockets = result
            self.pockets_ready.emit(result)
        elif channel == "hover":
            self.hover_ready.emit(result)

    def _on_failed(self, channel: str, number: int, text: str) -> None:
        self.message.emit(f"{_LABELS.get(channel, channel)} failed: {text}")
