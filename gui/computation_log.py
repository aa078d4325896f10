"""The window's log: what was computed, on which grid, how long it took, what was cancelled or failed and why.

ComputationLog listens to the job runner (gui.jobs: started, finished, failed, cancelled), to the data loader
(files missing or changed since the study was saved) and to the window's cancel command, and keeps a list of
LogEntry records for the log panel (gui.panels.log). Hover readouts and pin probes are not logged: they run on
every mouse move or edit and would bury the rest. A slider drag's maps, and repeated cancellations of the same
kind, merge into one entry that counts them.

The log belongs to the session, not to the study: it is written beside the autosave recovery file (and read
back when that file is restored) but never into the study file.
"""

from __future__ import annotations

import json
import os
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass, replace
from datetime import datetime
from pathlib import Path

from PySide6.QtCore import QObject, Signal

from core.project.data_files import CHANGED, OPENED

__all__ = [
    "CANCELLED",
    "DONE",
    "FAILED",
    "LOGGED_CHANNELS",
    "MAX_ENTRIES",
    "NOTE",
    "WARNING",
    "ComputationLog",
    "LogEntry",
    "duration_text",
    "recovery_log_path",
]

DONE, CANCELLED, FAILED, WARNING, NOTE = "done", "cancelled", "failed", "warning", "note"
OUTCOMES = (DONE, CANCELLED, FAILED, WARNING, NOTE)
MAX_ENTRIES = 1000

# job channel -> what the log calls it
LOGGED_CHANNELS = {"map": "Type map", "lines": "Type-change lines", "pockets": "Hyperbolic pockets",
                   "characteristics": "Characteristics", "data": "Data files", "data-add": "Data file",
                   "certified": "Certified map", "sweep": "Parameter sweep", "critical": "Critical values",
                   "cauchy": "Cauchy problem", "exact": "Exact analysis"}


@dataclass(frozen=True)
class LogEntry:
    """One line of the log. ``at`` is the local time it ended (ISO 8601, to the second); ``seconds`` how long
    the work ran (None for warnings and notes); ``repeats`` how many like it were merged into this line."""

    at: str
    what: str
    outcome: str
    grid: str = ""
    seconds: float | None = None
    detail: str = ""
    repeats: int = 1

    def to_json(self) -> dict:
        return asdict(self)

    @classmethod
    def from_json(cls, data: object) -> LogEntry | None:
        """The entry written by ``to_json``; None for anything else (a damaged recovery log loses lines only)."""
        if not isinstance(data, dict):
            return None
        texts = ("at", "what", "outcome", "grid", "detail")
        if not all(isinstance(data.get(key, ""), str) for key in texts) or data.get("outcome") not in OUTCOMES:
            return None
        seconds, repeats = data.get("seconds"), data.get("repeats", 1)
        if seconds is not None and (isinstance(seconds, bool) or not isinstance(seconds, int | float)):
            return None
        if isinstance(repeats, bool) or not isinstance(repeats, int) or repeats < 1:
            return None
        return cls(at=data.get("at", ""), what=data.get("what", ""), outcome=data["outcome"],
                   grid=data.get("grid", ""), seconds=None if seconds is None else float(seconds),
                   detail=data.get("detail", ""), repeats=repeats)


def duration_text(seconds: float | None) -> str:
    """'35 ms', '2.41 s', '3 min 05 s'; '' when there is no duration."""
    if seconds is None:
        return ""
    if seconds < 1:
        return f"{seconds * 1000:.0f} ms"
    if seconds < 60:
        return f"{seconds:.2f} s"
    minutes, rest = divmod(round(seconds), 60)
    return f"{minutes} min {rest:02d} s"


def recovery_log_path(recovery_path: Path) -> Path:
    """Where the log is written beside the autosave recovery file ``recovery_path``."""
    return recovery_path.with_name(recovery_path.name.split(".", 1)[0] + ".log.json")


def _grid_text(shape: tuple[int, ...]) -> str:
    ny, nx = shape
    return f"{nx} × {ny} nodes"


def _plural(count: int, word: str) -> str:
    return f"{count} {word}" if count == 1 else f"{count} {word}s"


@dataclass
class _Running:
    channel: str
    started: float
    grid: str


class ComputationLog(QObject):
    """The session's log entries, kept in step with the window's background work."""

    added = Signal(object)      # LogEntry appended at the end
    updated = Signal(object)    # LogEntry replacing the last one (a merged repeat)
    reset = Signal()            # entries replaced wholesale (cleared or restored)

    def __init__(self, document, runner, parent: QObject | None = None, *,
                 clock: Callable[[], float] = time.monotonic) -> None:
        """Listens to ``runner`` at once: build the log before anything else connects to the runner, so that
        in synchronous mode a job is logged before the jobs its result starts (and their time is not its)."""
        super().__init__(parent)
        self.document = document
        self.runner = runner
        self.analysis = None
        self.clock = clock
        self.entries: list[LogEntry] = []
        self._running: dict[int, _Running] = {}
        self._stopped_by_user: set[int] = set()
        self._data_warnings: set[str] = set()
        runner.started.connect(self._started)
        runner.finished.connect(self._finished)
        runner.failed.connect(self._failed)
        runner.cancelled.connect(self._cancelled)

    def follow(self, analysis, data_loader) -> None:
        """Read the analysis (its type map, whether a slider is being dragged) and the data loader's warnings."""
        self.analysis = analysis
        data_loader.loaded.connect(self._data_loaded)

    def _dragging(self) -> bool:
        return bool(self.analysis is not None and self.analysis.dragging)

    # -- entries --------------------------------------------------------------------------------------------
    def add(self, entry: LogEntry) -> None:
        """Append ``entry``, or merge it into the last entry when it repeats it (see ``_repeats``)."""
        if self.entries and self._repeats(self.entries[-1], entry):
            last = self.entries[-1]
            self.entries[-1] = replace(entry, repeats=last.repeats + 1)
            self.updated.emit(self.entries[-1])
            return
        self.entries.append(entry)
        if len(self.entries) > MAX_ENTRIES:
            del self.entries[: len(self.entries) - MAX_ENTRIES]
            self.reset.emit()
            return
        self.added.emit(entry)

    def _repeats(self, last: LogEntry, entry: LogEntry) -> bool:
        if (last.what, last.outcome, last.grid) != (entry.what, entry.outcome, entry.grid):
            return False
        if entry.outcome == CANCELLED:
            return last.detail == entry.detail
        return entry.outcome == DONE and entry.what == LOGGED_CHANNELS["map"] and self._dragging()

    def note(self, what: str, detail: str, outcome: str = NOTE) -> None:
        """Log something that is not a computation (a warning or a note), stamped now."""
        self.add(LogEntry(at=_now(), what=what, outcome=outcome, detail=detail))

    def clear(self) -> None:
        self.entries = []
        self.reset.emit()

    def note_user_cancel(self) -> None:
        """The user asked to stop everything: the jobs running now end as 'stopped by the user'."""
        self._stopped_by_user.update(self._running)

    # -- the recovery copy ----------------------------------------------------------------------------------
    def write(self, path: Path) -> None:
        """Write the entries as JSON to ``path`` (replaced in one step: a crash leaves the old or the new)."""
        text = json.dumps({"mixtype_log": 1, "entries": [entry.to_json() for entry in self.entries]},
                          ensure_ascii=False, indent=1)
        partial = path.with_name(path.name + ".partial")
        partial.write_text(text, encoding="utf-8")
        os.replace(partial, path)

    def restore(self, path: Path) -> int:
        """Put the entries written to ``path`` before the current ones; returns how many were read (0 when the
        file is missing or unreadable: the log is a convenience, never a reason to refuse a recovery)."""
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return 0
        listed = data.get("entries", []) if isinstance(data, dict) else []
        restored = [entry for entry in map(LogEntry.from_json, listed if isinstance(listed, list) else [])
                    if entry is not None]
        if restored:
            marker = LogEntry(at=_now(), what="Log", outcome=NOTE,
                              detail=f"the {len(restored)} entries above come from the session that did not "
                                     "close normally")
            self.entries = (restored + [marker] + self.entries)[-MAX_ENTRIES:]
            self.reset.emit()
        return len(restored)

    # -- job signals ----------------------------------------------------------------------------------------
    def _started(self, channel: str, number: int, label: str) -> None:
        if channel not in LOGGED_CHANNELS:
            return
        self._running[number] = _Running(channel=channel, started=self.clock(), grid=self._grid(channel))

    def _grid(self, channel: str) -> str:
        """What the job works on, taken as it starts (the inputs it was given were snapshotted just now)."""
        if channel == "map":
            domain = self.document.domain
            return _grid_text((domain.ny, domain.nx))
        if channel in ("lines", "pockets") and getattr(self.analysis, "type_map", None) is not None:
            return _grid_text(self.analysis.type_map.codes.shape)
        if channel == "characteristics":
            return _plural(len(self.document.project.seeds), "seed line")
        if channel in ("sweep", "critical", "cauchy"):
            domain = self.document.domain
            return _grid_text((domain.ny, domain.nx))
        if channel == "certified":
            return f"cells down to {self.document.project.view.certified.min_cell:g} of the shorter side"
        if channel == "data":
            return _plural(len(self.document.project.data_sources), "file")
        return ""

    def _end(self, number: int, outcome: str, detail: str) -> None:
        running = self._running.pop(number, None)
        if running is None:
            return      # a job that never started (replaced while waiting) or one this log does not follow
        seconds = max(0.0, self.clock() - running.started)
        self.add(LogEntry(at=_now(), what=LOGGED_CHANNELS[running.channel], outcome=outcome, grid=running.grid,
                          seconds=seconds, detail=detail))

    def _finished(self, channel: str, number: int, result: object) -> None:
        if channel == "data-add" and isinstance(result, tuple) and result[1]:
            self._end(number, FAILED, str(result[1]))
            return
        self._end(number, DONE, _result_text(channel, result, dragging=self._dragging()))

    def _failed(self, channel: str, number: int, text: str) -> None:
        self._end(number, FAILED, text)

    def _cancelled(self, channel: str, number: int) -> None:
        if number in self._stopped_by_user:
            self._stopped_by_user.discard(number)
            reason = "stopped by the user; the map keeps the last finished result"
        elif self.runner.latest(channel) > number:
            reason = "replaced by a newer request after an edit"
        elif channel in ("lines", "pockets") and self._dragging():
            reason = "not needed while a slider moves; computed once it stops"
        else:
            reason = "no longer needed"
        self._end(number, CANCELLED, reason)

    def _data_loaded(self, loaded) -> None:
        """Warn once about each data file that is missing, unreadable or changed since the study was saved."""
        lines = set(loaded.problems) | set(loaded.changed)
        for line in (*loaded.problems, *loaded.changed):
            if line not in self._data_warnings:
                self.note("Data files", line, WARNING)
        self._data_warnings = lines


def _now() -> str:
    return datetime.now().isoformat(timespec="seconds")


def _result_text(channel: str, result: object, *, dragging: bool) -> str:
    """A few words on what a finished job found."""
    if channel == "map":
        order = {name: place for place, name in enumerate(("elliptic", "hyperbolic", "parabolic", "undefined"))}
        named = sorted(result.fractions.items(), key=lambda item: order.get(item[0], len(order)))
        shares = ", ".join(f"{name} {100 * share:.1f} %" for name, share in named if share > 0)
        return shares + ("; during a slider drag" if dragging else "")
    if channel == "lines":
        if result is None:
            return "none drawn"
        text = _plural(len(result.curves), "line")
        if result.parabolic_regions:
            text += ", " + _plural(len(result.parabolic_regions), "parabolic region")
        return text + ("" if result.refined else ", not refined")
    if channel == "pockets":
        return _plural(len(result.pockets), "pocket")
    if channel == "certified":
        missed = sum(bool(pocket.missed_by_grid) for pocket in result.pockets)
        return (f"{_plural(result.cells, 'cell')} examined, {_plural(len(result.pockets), 'pocket')} "
                f"({missed} missed by the grid), undecided area {result.undecided_area:.3g}"
                + ("; the cell budget ran out" if result.budget_reached else ""))
    if channel == "sweep":
        _key, sweep = result
        return f"{_plural(len(sweep.rows), 'value')} of {sweep.parameter}"
    if channel == "critical":
        _key, search = result
        proof = {True: ", proven", False: ", not all proven"}.get(search.proven, "")
        return f"{_plural(len(search.events), 'event')} of {search.type} zones in {search.parameter}{proof}"
    if channel == "characteristics":
        return _plural(sum(len(traced.curves) for traced in result), "curve")
    if channel == "exact":
        _inputs, analysis, _texts = result
        found = sum(family.invariant is not None for family in analysis.characteristics)
        forms = sum(form.lower is not None for form in analysis.canonical)
        return (f"{_plural(len(analysis.zones), 'zone')}, {_plural(found, 'invariant')}, "
                f"{_plural(forms, 'canonical form')}")
    if channel == "cauchy":
        _inputs, _domain, found = result
        solution = getattr(found, "solution", None)
        if solution is None:
            return f"not solved: {found.message}"
        return f"{solution.type}, " + ("in closed form" if solution.solution is not None else "with an integral")
    if channel == "data":
        opened, _cache = result
        usable = sum(status.state in (OPENED, CHANGED) for status in opened.statuses)
        return f"{usable} of {len(opened.statuses)} opened"
    if channel == "data-add":
        dataset, _problem = result
        return f"read {os.path.basename(dataset.path)}"
    return ""
