"""The Cauchy panel's background work: the shown study's Cauchy problem solved and evaluated off the GUI thread.

``solve()`` snapshots the shown study (compiled equation, parameter values, the Cauchy texts, the domain) and
asks the job runner (gui.jobs) for core.analysis.cauchy_study.solve_study_cauchy on the "cauchy" channel; a
newer request replaces an older one (its child process, if sympy is integrating, is stopped). ``evaluate_on``
asks for the same solution on another domain ("cauchy-field" channel). Results carry the inputs they were
computed from (``CauchyInputs``), so a result the study no longer matches is dropped (``stale``).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from PySide6.QtCore import QObject, Signal

from core.analysis.cauchy_study import CauchyRefusal, StudyCauchy, solve_study_cauchy, study_cauchy_on
from core.domain import Domain
from core.equations.equation import Equation
from gui.document import Document
from gui.jobs import JobRunner

__all__ = ["CHANNEL", "CHANNELS", "FIELD_CHANNEL", "CauchyInputs", "CauchyRuns", "inputs_of"]

CHANNEL = "cauchy"
FIELD_CHANNEL = "cauchy-field"
CHANNELS = (CHANNEL, FIELD_CHANNEL)


@dataclass(frozen=True)
class CauchyInputs:
    """What one solution depends on: the shown equation without its lower-order terms (a, b, c, definitions,
    parameter values, variables, Cauchy texts) and the loaded data names."""

    equation: Equation
    data_names: tuple[str, ...]


def inputs_of(document: Document) -> CauchyInputs:
    """The inputs the shown study would solve from now."""
    return CauchyInputs(replace(document.equation, lower_order={}), tuple(document.data_names))


class CauchyRuns(QObject):
    """Requests solutions and keeps the newest one that matches the study (``current``)."""

    solved = Signal(object)           # StudyCauchy matching the study, or None when there is none (cleared)
    refused = Signal(object)          # CauchyRefusal: the field at fault and why
    failed = Signal(str)              # an unexpected failure, as one line
    busy_changed = Signal(bool)
    progressed = Signal(float)        # fraction of the running job done (the symbolic part reports none)

    def __init__(self, document: Document, runner: JobRunner, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.document = document
        self.runner = runner
        self.current: StudyCauchy | None = None
        self.inputs: CauchyInputs | None = None
        self.domain: Domain | None = None
        runner.progressed.connect(self._progressed)
        runner.finished.connect(self._finished)
        runner.failed.connect(self._failed)
        runner.cancelled.connect(self._cancelled)

    def working(self) -> bool:
        return any(self.runner.is_busy(channel) for channel in CHANNELS)

    def stale(self) -> bool:
        """Whether the solution shown was computed from other inputs than the study has now."""
        return self.current is not None and self.inputs != inputs_of(self.document)

    def clear(self) -> None:
        """Forget the solution (the study changed) and stop any work on it."""
        self.runner.cancel(CHANNEL)
        self.runner.cancel(FIELD_CHANNEL)
        if self.current is not None:
            self.current, self.inputs, self.domain = None, None, None
            self.solved.emit(None)

    def solve(self) -> int:
        """Solve the shown study's problem in the background; the job number."""
        document = self.document
        compiled, inputs, domain = document.compiled, inputs_of(document), document.domain
        parameters = document.equation.parameter_values()
        texts = dict(document.equation.cauchy_data)
        self.runner.cancel(FIELD_CHANNEL)
        if compiled is None:
            self.refused.emit(CauchyRefusal("coefficients", f"the equation does not compile: {document.compile_error}"))
            return 0

        def work(cancel, progress):
            return inputs, domain, solve_study_cauchy(compiled, texts, domain, parameters=parameters,
                                                      cancel=cancel, progress=progress)

        return self._request(CHANNEL, work, "Solving the Cauchy problem")

    def evaluate_on(self, domain: Domain) -> int:
        """The current solution evaluated on ``domain`` in the background (0: nothing to evaluate)."""
        study, inputs = self.current, self.inputs
        if study is None or self.runner.is_busy(CHANNEL):
            return 0

        def work(cancel, progress):
            return inputs, domain, study_cauchy_on(study, domain, cancel=cancel, progress=progress)

        return self._request(FIELD_CHANNEL, work, "Evaluating the Cauchy solution")

    def cancel(self) -> None:
        for channel in CHANNELS:
            self.runner.cancel(channel)

    def _request(self, channel: str, work, label: str) -> int:
        number = self.runner.request(channel, work, label=label)
        self.busy_changed.emit(self.working())
        return number

    def _progressed(self, channel: str, fraction: float, label: str) -> None:
        if channel in CHANNELS:
            self.progressed.emit(fraction)

    def _finished(self, channel: str, number: int, result) -> None:
        if channel not in CHANNELS:
            return
        inputs, domain, found = result
        self.busy_changed.emit(self.working())
        if inputs != inputs_of(self.document):
            return                                   # the study changed while it ran: a newer request follows
        if isinstance(found, CauchyRefusal):
            self.current, self.inputs, self.domain = None, None, None
            self.solved.emit(None)
            self.refused.emit(found)
            return
        self.current, self.inputs, self.domain = found, inputs, domain
        self.solved.emit(found)

    def _failed(self, channel: str, number: int, text: str) -> None:
        if channel in CHANNELS:
            self.busy_changed.emit(self.working())
            self.failed.emit(text)

    def _cancelled(self, channel: str, number: int) -> None:
        if channel in CHANNELS and not self.runner.is_busy(channel):
            self.busy_changed.emit(self.working())
