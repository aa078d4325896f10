"""The background job runner: results by signal, newer requests replace older ones, cancel, errors."""

from __future__ import annotations

import threading
import time

import pytest

from core.progress import Cancelled
from gui.jobs import JobRunner
from tests.ceilings import HANG_CEILING_MS, HANG_CEILING_S


def _collect(runner):
    events = []
    runner.finished.connect(lambda channel, number, result: events.append(("done", channel, number, result)))
    runner.failed.connect(lambda channel, number, text: events.append(("failed", channel, number, text)))
    runner.cancelled.connect(lambda channel, number: events.append(("cancelled", channel, number)))
    return events


def test_synchronous_runner_delivers_result_and_progress_at_once(qtbot):
    runner = JobRunner(synchronous=True)
    events = _collect(runner)
    fractions = []
    runner.progressed.connect(lambda channel, fraction, label: fractions.append(fraction))

    def work(cancel, progress):
        progress(0.5)
        return 6 * 7

    number = runner.request("map", work)
    assert events == [("done", "map", number, 42)]
    assert fractions == [0.5]
    assert not runner.is_busy()


def test_worker_error_becomes_a_message_not_a_traceback(qtbot):
    runner = JobRunner(synchronous=True)
    events = _collect(runner)

    def work(cancel, progress):
        raise ValueError("coefficient a is NaN everywhere")

    runner.request("map", work)
    assert events[0][0] == "failed"
    assert events[0][3] == "coefficient a is NaN everywhere"


def test_newer_request_cancels_running_job_and_its_result_is_dropped(qtbot):
    runner = JobRunner()
    events = _collect(runner)
    started = threading.Event()
    saw_cancel = threading.Event()

    def slow(cancel, progress):
        started.set()
        while not cancel():
            time.sleep(0.002)
        saw_cancel.set()
        raise Cancelled("stop")

    first = runner.request("map", slow)
    assert started.wait(HANG_CEILING_S)
    with qtbot.waitSignal(runner.finished, timeout=HANG_CEILING_MS) as blocker:
        second = runner.request("map", lambda cancel, progress: "fresh")
    assert blocker.args == ["map", second, "fresh"]
    assert runner.wait_idle(HANG_CEILING_S)
    assert saw_cancel.is_set()
    assert ("cancelled", "map", first) in events
    assert [e for e in events if e[0] == "done"] == [("done", "map", second, "fresh")]


def test_queue_policy_finishes_running_job_and_runs_only_the_newest_waiting(qtbot):
    runner = JobRunner()
    events = _collect(runner)
    release = threading.Event()

    def blocking(cancel, progress):
        assert release.wait(HANG_CEILING_S)
        return "first"

    first = runner.request("map", blocking, policy="queue")
    second = runner.request("map", lambda cancel, progress: "second", policy="queue")
    third = runner.request("map", lambda cancel, progress: "third", policy="queue")
    release.set()
    assert runner.wait_idle(HANG_CEILING_S)
    done = [(e[2], e[3]) for e in events if e[0] == "done"]
    assert done == [(first, "first"), (third, "third")]
    assert ("cancelled", "map", second) in events


def test_cancel_stops_a_long_job(qtbot):
    runner = JobRunner()
    events = _collect(runner)
    started = threading.Event()

    def endless(cancel, progress):
        started.set()
        while True:
            if cancel():
                raise Cancelled("stopped by the user")
            time.sleep(0.002)

    number = runner.request("map", endless)
    assert started.wait(HANG_CEILING_S)
    with qtbot.waitSignal(runner.cancelled, timeout=HANG_CEILING_MS) as blocker:
        runner.cancel()
    assert blocker.args == ["map", number]
    assert runner.wait_idle(HANG_CEILING_S)
    assert not [e for e in events if e[0] == "done"]


def test_wait_for_returns_once_that_job_is_reported_and_others_still_run(qtbot):
    runner = JobRunner()
    events = _collect(runner)
    release = threading.Event()

    def held(cancel, progress):
        assert release.wait(HANG_CEILING_S)
        return "held"

    slow = runner.request("lines", held)
    quick = runner.request("map", lambda cancel, progress: "quick")
    assert not runner.is_reported(quick)                  # results reach this thread only while it waits
    assert runner.wait_for(quick, HANG_CEILING_S)
    assert runner.is_reported(quick) and not runner.is_reported(slow)
    assert [e for e in events if e[0] == "done"] == [("done", "map", quick, "quick")]
    # A ceiling only ends the wait: the held job cannot end before it is released.
    assert not runner.wait_for(slow, 0.05)
    release.set()
    assert runner.wait_for(slow, HANG_CEILING_S)
    assert ("done", "lines", slow, "held") in events and not runner.is_busy()
    with pytest.raises(ValueError, match="no job numbered 99"):
        runner.wait_for(99)


def test_wait_idle_also_waits_for_jobs_that_results_request(qtbot):
    """A finished map requests its lines (as the window does): idle means the lines are delivered too."""
    runner = JobRunner()
    events = _collect(runner)

    def chain(channel, number, result):
        if channel == "map":
            runner.request("lines", lambda cancel, progress: f"lines of {result}")

    runner.finished.connect(chain)
    runner.request("map", lambda cancel, progress: "map 1")
    assert runner.wait_idle(HANG_CEILING_S)
    assert [(e[1], e[3]) for e in events if e[0] == "done"] == [("map", "map 1"), ("lines", "lines of map 1")]


def test_dropped_and_cancelled_jobs_count_as_reported(qtbot):
    runner = JobRunner()
    release = threading.Event()

    def held(cancel, progress):
        assert release.wait(HANG_CEILING_S)
        if cancel():
            raise Cancelled("replaced")
        return "stale"

    first = runner.request("map", held, policy="queue")
    dropped = runner.request("map", lambda cancel, progress: "dropped", policy="queue")
    newest = runner.request("map", lambda cancel, progress: "newest", policy="queue")
    assert runner.is_reported(dropped) and not runner.is_reported(first) and not runner.is_reported(newest)
    runner.cancel("map")
    assert runner.is_reported(newest)              # waiting, so dropped at once
    release.set()
    assert runner.wait_for(first, HANG_CEILING_S)
    assert not runner.is_busy()
