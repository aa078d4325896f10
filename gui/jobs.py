"""Background computation for the window: request -> result, never on the GUI thread.

A caller snapshots its inputs (frozen dataclasses, texts, numbers) into a ``work(cancel, progress)`` function
and requests it on a named channel ("map", "lines", ...). Each request gets a number. A newer request on the
same channel replaces the older one:

* ``replace`` (the default): the running job's cancel callable starts returning True and its result, if it
  still arrives, is dropped as stale; the new job starts at once.
* ``queue``: the running job is allowed to finish (its result is newer than what is on screen) and only the
  newest request waits behind it; requests it replaces are dropped unstarted. Slider drags use this so the
  map keeps moving however fast the slider does.

Results, failures and progress reach the GUI thread by signal only. An exception in a worker becomes a
``failed`` signal with a readable message. ``synchronous=True`` runs every job at once on the caller's thread
with the same signals: tests and headless rendering use it.

``wait_for(number)`` and ``wait_idle()`` wait for the jobs themselves, not for a clock: the GUI thread sleeps
until a worker has posted its result, delivers it (whose slots may request more jobs) and sleeps again. Their
``timeout`` is only a ceiling against a job that never ends; by default there is none.
"""

from __future__ import annotations

import itertools
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field

from PySide6.QtCore import QCoreApplication, QEventLoop, QObject, Signal, Slot

from core.progress import Cancelled

__all__ = ["JobRunner", "Work", "describe_error"]

Work = Callable[[Callable[[], bool], Callable[[float], None]], object]


def describe_error(error: BaseException) -> str:
    """A one-line message for the user: the error's own text, prefixed by its kind when that helps."""
    text = str(error).strip() or error.__class__.__name__
    if isinstance(error, ValueError):
        return text
    return f"{error.__class__.__name__}: {text}"


@dataclass
class _Job:
    channel: str
    number: int
    work: Work
    label: str
    cancelled: threading.Event = field(default_factory=threading.Event)
    last_progress: float = -1.0


class JobRunner(QObject):
    """Runs numbered jobs per channel in worker threads; see the module docstring for the policies."""

    started = Signal(str, int, str)         # channel, job number, label: the job begins to run
    finished = Signal(str, int, object)     # channel, job number, result
    failed = Signal(str, int, str)          # channel, job number, message
    cancelled = Signal(str, int)            # channel, job number
    progressed = Signal(str, float, str)    # channel, fraction in [0, 1], label
    busy_changed = Signal(bool)             # any job running

    _relay_done = Signal(str, int, str, object)      # from workers: channel, number, status, payload
    _relay_progress = Signal(str, int, float)

    def __init__(self, parent: QObject | None = None, *, synchronous: bool = False) -> None:
        super().__init__(parent)
        self.synchronous = synchronous
        self._numbers = itertools.count(1)
        self._running: dict[str, _Job] = {}      # newest started job per channel
        self._active: dict[int, _Job] = {}       # every started job not yet reported, by number
        self._pending: dict[str, _Job] = {}
        self._latest: dict[str, int] = {}
        self._labels: dict[str, str] = {}
        self._requested = 0                        # the newest job number handed out
        self._unreported: set[int] = set()         # requested jobs whose ending has not been signalled yet
        self._posted = threading.Event()           # set by a worker once its result is posted to this thread
        self._relay_done.connect(self._on_done)
        self._relay_progress.connect(self._on_progress)

    # -- requests -------------------------------------------------------------------------------------------
    def request(self, channel: str, work: Work, *, policy: str = "replace", label: str = "") -> int:
        """Start ``work`` on ``channel``; returns the job number. ``policy`` is 'replace' or 'queue'."""
        if policy not in ("replace", "queue"):
            raise ValueError(f"policy must be 'replace' or 'queue', got {policy!r}")
        job = _Job(channel=channel, number=next(self._numbers), work=work, label=label or channel)
        self._requested = job.number
        self._unreported.add(job.number)
        self._latest[channel] = job.number
        replaced = self._pending.pop(channel, None)
        if replaced is not None:
            self._unreported.discard(replaced.number)
            self.cancelled.emit(channel, replaced.number)
        if self.synchronous:
            self._run_now(job)
            return job.number
        running = self._running.get(channel)
        if running is not None:
            if policy == "queue":
                self._pending[channel] = job
                return job.number
            running.cancelled.set()
        self._start(job)
        return job.number

    def cancel(self, channel: str | None = None) -> None:
        """Cancel the running and waiting jobs of ``channel`` (of every channel when None)."""
        channels = [channel] if channel is not None else list(set(self._running) | set(self._pending))
        for name in channels:
            self._latest[name] = -1
            waiting = self._pending.pop(name, None)
            if waiting is not None:
                self._unreported.discard(waiting.number)
                self.cancelled.emit(name, waiting.number)
            running = self._running.get(name)
            if running is not None:
                running.cancelled.set()

    def is_busy(self, channel: str | None = None) -> bool:
        if channel is None:
            return bool(self._active or self._pending)
        return channel in self._running or channel in self._pending

    def latest(self, channel: str) -> int:
        return self._latest.get(channel, 0)

    def is_reported(self, number: int) -> bool:
        """Whether job ``number`` has ended: its finished, failed or cancelled signal was emitted (a stale
        failure is dropped without a signal but has ended all the same)."""
        return 0 < number <= self._requested and number not in self._unreported

    def wait_for(self, number: int, timeout: float | None = None) -> bool:
        """Deliver results on this (the GUI) thread until job ``number`` is reported; for headless use and tests.

        Sleeps until a worker posts its result rather than polling. Results of other jobs arriving meanwhile are
        delivered too, and jobs their slots request run as usual. False only when ``timeout`` seconds (a ceiling
        against a job that never ends; None: no ceiling) pass first.
        """
        if not 0 < number <= self._requested:
            raise ValueError(f"no job numbered {number} was requested from this runner "
                             f"(numbers so far: 1 to {self._requested})")
        return self._wait_until(lambda: self.is_reported(number), timeout)

    def wait_idle(self, timeout: float | None = None) -> bool:
        """Deliver results on this (the GUI) thread until no job is running or waiting; see ``wait_for``.

        Work scheduled on a timer (coalesced requests) counts only once it is requested: flush it first.
        """
        return self._wait_until(lambda: not self.is_busy(), timeout)

    def _wait_until(self, condition: Callable[[], bool], timeout: float | None) -> bool:
        deadline = None if timeout is None else time.monotonic() + timeout
        while True:
            # Clear before delivering: a result posted from now on sets the event again, so none is slept over.
            self._posted.clear()
            QCoreApplication.processEvents(QEventLoop.ProcessEventsFlag.AllEvents)
            if condition():
                return True
            if not self._active:
                return condition()      # nothing runs, so nothing can arrive (a waiting job needs a running one)
            remaining = None if deadline is None else deadline - time.monotonic()
            if remaining is not None and remaining <= 0:
                return False
            self._posted.wait(remaining)

    # -- execution ------------------------------------------------------------------------------------------
    def _start(self, job: _Job) -> None:
        was_busy = bool(self._active)
        self._running[job.channel] = job
        self._active[job.number] = job
        thread = threading.Thread(target=self._execute, args=(job,), name=f"mixtype-{job.channel}",
                                  daemon=True)
        self.started.emit(job.channel, job.number, job.label)
        thread.start()
        if not was_busy:
            self.busy_changed.emit(True)

    def _execute(self, job: _Job) -> None:
        status, payload = self._call(job, self._threaded_progress(job))
        try:
            self._relay_done.emit(job.channel, job.number, status, payload)
        except RuntimeError:  # the runner was deleted (window closed) while the job ran: nobody to tell
            pass
        self._posted.set()

    def _threaded_progress(self, job: _Job) -> Callable[[float], None]:
        def report(fraction: float) -> None:
            if fraction - job.last_progress >= 0.01 or fraction >= 1.0:
                job.last_progress = fraction
                try:
                    self._relay_progress.emit(job.channel, job.number, float(fraction))
                except RuntimeError:  # the runner is gone
                    pass
        return report

    @staticmethod
    def _call(job: _Job, progress: Callable[[float], None]) -> tuple[str, object]:
        try:
            return "done", job.work(job.cancelled.is_set, progress)
        except Cancelled:
            return "cancelled", None
        except Exception as error:  # noqa: BLE001 - every worker error must reach the user as a message
            return "failed", describe_error(error)

    def _run_now(self, job: _Job) -> None:
        self._labels[job.channel] = job.label
        self.started.emit(job.channel, job.number, job.label)

        def progress(fraction: float) -> None:
            self.progressed.emit(job.channel, float(fraction), job.label)

        status, payload = self._call(job, progress)
        self._deliver(job.channel, job.number, status, payload, stale=False)

    @Slot(str, int, float)
    def _on_progress(self, channel: str, number: int, fraction: float) -> None:
        running = self._running.get(channel)
        if running is not None and running.number == number and not running.cancelled.is_set():
            self.progressed.emit(channel, fraction, running.label)

    @Slot(str, int, str, object)
    def _on_done(self, channel: str, number: int, status: str, payload: object) -> None:
        job = self._active.pop(number, None)
        if job is None:
            return
        if self._running.get(channel) is job:
            del self._running[channel]
        # In queue mode the finished job was not cancelled: its result is shown even if a newer one waits.
        stale = job.cancelled.is_set()
        self._deliver(channel, number, status, payload, stale=stale)
        if channel not in self._running:
            waiting = self._pending.pop(channel, None)
            if waiting is not None:
                self._start(waiting)
        if not self._active and not self._pending:
            self.busy_changed.emit(False)

    def _deliver(self, channel: str, number: int, status: str, payload: object, *, stale: bool) -> None:
        self._unreported.discard(number)
        if status == "cancelled" or (stale and status == "done"):
            self.cancelled.emit(channel, number)
        elif status == "failed":
            if not stale:
                self.failed.emit(channel, number, str(payload))
        else:
            self.finished.emit(channel, number, payload)
