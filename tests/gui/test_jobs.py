"""The background job runner: results by signal, newer requests replace older ones, cancel, errors."""

from __future__ import annotations

import threading
import time

from core.progress import Cancelled
from gui.jobs import JobRunner


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
    assert started.wait(5)
    with qtbot.waitSignal(runner.finished, timeout=5000) as blocker:
        second = runner.request("map", lambda cancel, progress: "fresh")
    assert blocker.args == ["map", second, "fresh"]
    assert runner.wait_idle(5)
    assert saw_cancel.is_set()
    assert ("cancelled", "map", first) in events
    assert [e for e in events if e[0] == "done"] == [("done", "map", second, "fresh")]


def test_queue_policy_finishes_running_job_and_runs_only_the_newest_waiting(qtbot):
    runner = JobRunner()
    events = _collect(runner)
    release = threading.Event()

    def blocking(cancel, progress):
        release.wait(5)
        return "first"

    first = runner.request("map", blocking, policy="queue")
    second = runner.request("map", lambda cancel, progress: "second", policy="queue")
    third = runner.request("map", lambda cancel, progress: "third", policy="queue")
    release.set()
    assert runner.wait_idle(5)
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
    assert started.wait(5)
    with qtbot.waitSignal(runner.cancelled, timeout=5000) as blocker:
        runner.cancel()
    assert blocker.args == ["map", number]
    assert runner.wait_idle(5)
    assert not [e for e in events if e[0] == "done"]
