"""The sweep panel's background work: a parameter sweep and a search for critical values, kept with the study.

``run(sweep)`` asks the job runner (gui.jobs) for core.analysis.sweep.run_sweep on the "sweep" channel,
``find_critical(sweep)`` for core.analysis.critical.find_critical_values over the sweep's range on the
"critical" channel; both snapshot the shown study (compiled equation, domain, data, tolerance, the other
parameters) when asked. A result is written into the study's SavedSweep through the document as one undo step:
the rows of a sweep, or the critical values of the type searched (those of other types are kept). ``proofs``
remembers, per sweep, whether the last search proved its values with certified maps (not saved).
"""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtCore import QObject, Signal

from core.analysis.critical import find_critical_values
from core.analysis.sweep import run_sweep
from core.project.sweeps import CriticalValue, SavedSweep
from core.results.readouts import peak_quantity
from gui.document import Document
from gui.jobs import JobRunner

__all__ = ["CHANNEL", "CHANNELS", "CRITICAL_CHANNEL", "CRITICAL_TYPE", "SweepRuns"]

CHANNEL = "sweep"
CRITICAL_CHANNEL = "critical"
CHANNELS = (CHANNEL, CRITICAL_CHANNEL)
CRITICAL_TYPE = "hyperbolic"     # the zones whose appearance and vanishing the panel searches for


class SweepRuns(QObject):
    """Requests sweeps and critical-value searches and keeps their results in the document."""

    busy_changed = Signal(bool)       # a sweep or search is running (or waiting), or none is
    progressed = Signal(float)        # fraction of the running job done
    problem = Signal(str)             # why something did not run, failed or was not kept ('' clears it)
    stopped = Signal(str)             # a job was cancelled: what was stopped

    def __init__(self, document: Document, runner: JobRunner, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.runner = runner
        self.proofs: dict[tuple[str, str, str], str] = {}
        runner.progressed.connect(self._progressed)
        runner.finished.connect(self._finished)
        runner.failed.connect(self._failed)
        runner.cancelled.connect(self._cancelled)

    def working(self) -> bool:
        return any(self.runner.is_busy(channel) for channel in CHANNELS)

    def _ready(self):
        """The shown study's compiled equation, or None (and the reason said) when nothing can run now."""
        compiled = self.document.compiled
        if compiled is None or self.document.data_pending:
            reason = "the data files are still loading" if compiled is not None else self.document.compile_error
            self.problem.emit(f"Cannot run: {reason}")
            return None
        return compiled

    def _study(self):
        """(compiled, domain, data, tolerance, parameter values) of the shown study, snapshotted on the GUI
        thread for a job; None (the reason said) when nothing can run now."""
        compiled = self._ready()
        if compiled is None:
            return None
        document = self.document
        return (compiled, document.domain, document.data, document.tolerance,
                document.equation.parameter_values())

    def run(self, sweep: SavedSweep) -> int:
        """Start ``sweep`` in the background; returns the job number (0: not started)."""
        study = self._study()
        if study is None:
            return 0
        compiled, domain, data, tolerance, parameters = study
        quantity = peak_quantity(self.document.equation, compiled, self.document.data_names)
        values = sweep.values()

        def work(cancel, progress):
            return sweep, run_sweep(compiled, domain, sweep.parameter, values, parameters=parameters, data=data,
                                    tolerance=tolerance, quantity=quantity, cancel=cancel, progress=progress,
                                    log=sweep.log)

        return self._request(CHANNEL, work, f"Sweeping {sweep.parameter}")

    def find_critical(self, sweep: SavedSweep) -> int:
        """Search ``sweep``'s range for critical values in the background; returns the job number (0: none)."""
        study = self._study()
        if study is None:
            return 0
        compiled, domain, data, tolerance, parameters = study

        def work(cancel, progress):
            return sweep, find_critical_values(compiled, domain, sweep.parameter, (sweep.low, sweep.high),
                                               type=CRITICAL_TYPE, parameters=parameters, data=data,
                                               tolerance=tolerance, cancel=cancel, progress=progress)

        return self._request(CRITICAL_CHANNEL, work, f"Finding critical values of {sweep.parameter}")

    def _request(self, channel: str, work, label: str) -> int:
        self.problem.emit("")
        number = self.runner.request(channel, work, label=label)
        self.busy_changed.emit(self.working())
        return number

    def cancel(self) -> None:
        for channel in CHANNELS:
            self.runner.cancel(channel)

    def _progressed(self, channel: str, fraction: float, label: str) -> None:
        if channel in CHANNELS:
            self.progressed.emit(fraction)

    def _finished(self, channel: str, number: int, result) -> None:
        if channel not in CHANNELS:
            return
        started, found = result
        saved = next((s for s in self.document.project.sweeps if s.key == started.key), started)
        if channel == CHANNEL:
            after = replace(saved, low=started.low, high=started.high, count=started.count, log=started.log,
                            rows=found.rows)
            text = f"Run the sweep of {started.parameter} ({len(found.rows)} values)"
        else:
            kept = [mark for mark in saved.critical or () if mark.type != found.type]
            marks = [CriticalValue(e.value, e.event, e.at, e.type, e.bracket) for e in found.events]
            after = replace(saved, critical=tuple(sorted(kept + marks, key=lambda mark: mark.value)))
            text = f"Find critical values of {started.parameter} ({len(marks)} found)"
            proven = found.proven if found.events else None
            self.proofs[started.key] = {True: "proven by certified maps", False: "not all proven", None: ""}[proven]
        self.busy_changed.emit(self.working())
        try:
            self.document.set_sweep(after, text)
        except ValueError as error:       # the study was renamed or replaced while the job ran
            self.problem.emit(f"The results were not kept: {error}")

    def _failed(self, channel: str, number: int, text: str) -> None:
        if channel in CHANNELS:
            self.busy_changed.emit(self.working())
            what = "sweep" if channel == CHANNEL else "search for critical values"
            self.problem.emit(f"The {what} failed: {text}")

    def _cancelled(self, channel: str, number: int) -> None:
        if channel in CHANNELS and not self.runner.is_busy(channel):
            self.busy_changed.emit(self.working())
            self.stopped.emit("Sweep" if channel == CHANNEL else "Search for critical values")
