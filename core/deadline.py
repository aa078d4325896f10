"""Symbolic work with a deadline: a sympy call that may run for ever runs in a child process that is stopped
when its time is up.

sympy's integrate and dsolve have no time limit and cannot be interrupted from another thread, so the only
sound way to bound them is a separate process. The child is forked where that is safe (a process running
one thread: the command line) and spawned otherwise (the window's worker threads make fork unsafe); the result
comes back pickled. ``TimedOut`` says the deadline passed; an exception in the child is raised again here.
"""

from __future__ import annotations

import multiprocessing
import threading
import time
from collections.abc import Callable
from typing import Any

from core.progress import CancelCheck, Cancelled

__all__ = ["TimedOut", "run_with_deadline"]

_CANCEL_POLL_S = 0.05       # how often a waiting caller asks whether it was cancelled


class TimedOut(Exception):
    """The work did not finish within its deadline."""


def _child(connection, function: Callable, args: tuple) -> None:
    try:
        connection.send((True, function(*args)))
    except BaseException as error:  # noqa: BLE001 - sent back to the parent, which raises it again
        connection.send((False, error))
    finally:
        connection.close()


def run_with_deadline(function: Callable, *args: Any, seconds: float, cancel: CancelCheck | None = None) -> Any:
    """``function(*args)`` in a child process, its result returned; TimedOut after ``seconds``. The function
    and its arguments and result must be picklable (sympy expressions are). ``cancel`` is asked every 50 ms
    while waiting: when it returns True the child is stopped and Cancelled raised."""
    if not seconds > 0:
        raise ValueError(f"deadline must be a positive number of seconds, got {seconds!r}")
    method = "fork" if threading.active_count() == 1 and "fork" in multiprocessing.get_all_start_methods() \
        else "spawn"
    context = multiprocessing.get_context(method)
    receiver, sender = context.Pipe(duplex=False)
    process = context.Process(target=_child, args=(sender, function, args), daemon=True)
    process.start()
    sender.close()
    try:
        _wait(receiver, seconds, cancel)
        succeeded, value = receiver.recv()
    except EOFError:
        raise RuntimeError(f"the symbolic work stopped without a result (exit code {process.exitcode})") from None
    finally:
        receiver.close()
        if process.is_alive():
            process.kill()
        process.join()
    if not succeeded:
        raise value
    return value


def _wait(receiver, seconds: float, cancel: CancelCheck | None) -> None:
    """Until the child's result can be read; TimedOut or Cancelled first."""
    if cancel is None:
        if not receiver.poll(seconds):
            raise TimedOut(f"no result within {seconds:g} s")
        return
    deadline = time.monotonic() + seconds
    while not receiver.poll(max(0.0, min(_CANCEL_POLL_S, deadline - time.monotonic()))):
        if cancel():
            raise Cancelled("symbolic work cancelled")
        if time.monotonic() >= deadline:
            raise TimedOut(f"no result within {seconds:g} s")
