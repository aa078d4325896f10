"""Where the jobs of a batch run: a local pool of processes, or a Dask cluster.

An engine maps a picklable function over items and yields ``(index, result)`` pairs as the results come,
in any order; a job whose worker went away (killed, out of memory, crashed) or whose task failed on the
cluster yields ``JobFailure`` instead of a result, so one bad job never ends the batch. Engines know nothing
of Mixtype's studies (core.batch.runner gives them core.batch.jobs.run_job and the jobs).

- ``LocalPool``: concurrent.futures.ProcessPoolExecutor, processes started by a fork server (spawn where
  there is none), so no worker inherits the threads of the caller; where Python allows, the server has the
  function's module imported already and each worker starts warm. Workers say which job they begin, so a
  job that kills its worker is found by running the jobs it took down with it again, each alone.
- ``DaskCluster``: dask.distributed, on a running scheduler (``tcp://host:port``) or on a LocalCluster
  started here on the loopback address only, without dashboard. dask and distributed are the optional
  extra ``cluster`` and are imported only here, only when this engine runs.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import sys
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass

from core.progress import CancelCheck, Cancelled

__all__ = [
    "CLUSTER_INSTALL_HINT",
    "CONNECT_TIMEOUT_S",
    "DaskCluster",
    "EngineUnavailable",
    "JobFailure",
    "LocalPool",
    "available_cores",
]

CLUSTER_INSTALL_HINT = "pip install 'mixtype[cluster]'"
CONNECT_TIMEOUT_S = 15          # to reach a running scheduler
LOOPBACK = "127.0.0.1"


class EngineUnavailable(Exception):
    """The engine cannot start (dask not installed, the scheduler out of reach): one line for the user."""


@dataclass(frozen=True)
class JobFailure:
    """What an engine knows of a job that gave no result: one line."""

    message: str


def available_cores() -> int:
    """The processor cores this process may run on (its affinity where the system tells it)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:     # not on every system (macOS, Windows)
        return max(1, os.cpu_count() or 1)


# The fork server imports preloaded modules with the caller's sys.path only from Python 3.12.8 and 3.13.1 on
# (CPython issue gh-117378); before, it could preload another installed copy of Mixtype than the caller's.
PRELOAD_SEES_SYS_PATH = sys.version_info >= (3, 13, 1) or (3, 12, 8) <= sys.version_info < (3, 13)


def _process_context(function: Callable) -> multiprocessing.context.BaseContext:
    """A fork server (where the system has one; spawn elsewhere) which, where Python lets it see the caller's
    sys.path, has ``function``'s module imported, so that every worker forks from it warm; otherwise each
    worker imports the module itself, once."""
    if "forkserver" not in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("spawn")
    context = multiprocessing.get_context("forkserver")
    if PRELOAD_SEES_SYS_PATH and function.__module__ != "__main__":
        context.set_forkserver_preload([function.__module__])   # no effect once the server runs: harmless
    return context


@dataclass(frozen=True)
class LocalPool:
    """Up to ``workers`` processes on this machine."""

    workers: int

    def __post_init__(self) -> None:
        if self.workers < 1:
            raise ValueError(f"a local pool needs at least one worker, got {self.workers}")

    @property
    def description(self) -> dict:
        return {"engine": "local", "workers": self.workers, "scheduler": None}

    def map(self, function: Callable, items: Sequence, *, cancel: CancelCheck | None = None
            ) -> Iterator[tuple[int, object]]:
        """``(index, function(items[index]) or JobFailure)`` for every item, as they finish.

        When a worker process dies (killed, out of memory, crashed), the pool breaks and every item it had not
        finished fails with it: those that had not started run again in a new pool, those that had (the one
        that killed its worker is among them) run again each alone, where a death is that item's own.
        """
        context = _process_context(function)
        left = list(range(len(items)))
        while left:
            again: list[int] = []
            suspects: list[int] = []
            workers = min(self.workers, len(left))
            for index, result in _pool_round(function, items, left, workers, context, cancel):
                if result is _NOT_STARTED:
                    again.append(index)
                elif result is _STARTED:
                    suspects.append(index)
                else:
                    yield index, result
            for index in suspects:
                for _, result in _pool_round(function, items, [index], 1, context, cancel):
                    yield index, (JobFailure("its worker process stopped before answering (killed, out of "
                                             "memory or crashed)") if result is _STARTED else
                                  JobFailure(_NO_START) if result is _NOT_STARTED else result)
            if again and not suspects and len(again) == len(left):     # no worker ever started an item
                for index in again:
                    yield index, JobFailure(_NO_START)
                return
            left = again


_NO_START = "no worker process could start it"
_STARTED, _NOT_STARTED = object(), object()     # items a broken pool left unfinished: begun, or not yet
_ANNOUNCE = None                                # in a worker: the queue it tells which item it begins


def _listen(queue, grid_threads: int) -> None:
    """Worker initializer: keep the queue to announce items on; share the cores with the other workers."""
    global _ANNOUNCE
    _ANNOUNCE = queue
    from core.analysis.classify import set_grid_threads

    set_grid_threads(grid_threads)


def _announced(function: Callable, index: int, item: object) -> object:
    """Tell the pool's owner that item ``index`` begins, then run it."""
    _ANNOUNCE.put(index)
    return function(item)


def _pool_round(function: Callable, items: Sequence, indices: Sequence[int], workers: int,
                context: multiprocessing.context.BaseContext, cancel: CancelCheck | None
                ) -> Iterator[tuple[int, object]]:
    """One pool over ``indices``: each index once, with its result, a JobFailure, or _STARTED / _NOT_STARTED
    when the pool broke before it finished."""
    begun = context.SimpleQueue()
    with ProcessPoolExecutor(max_workers=workers, mp_context=context, initializer=_listen,
                             initargs=(begun, max(1, available_cores() // workers))) as pool:
        futures = {pool.submit(_announced, function, i, items[i]): i for i in indices}
        pending = set(futures)
        started: set[int] = set()

        def stop_if_cancelled() -> None:
            if cancel is not None and cancel():
                pool.shutdown(wait=False, cancel_futures=True)
                raise Cancelled("the batch was cancelled")

        while pending:
            done, pending = wait(pending, timeout=0.5 if cancel is not None else None,
                                 return_when=FIRST_COMPLETED)
            stop_if_cancelled()
            for future in sorted(done, key=futures.__getitem__):
                index = futures[future]
                try:
                    result = future.result()
                except BrokenProcessPool:
                    while not begun.empty():
                        started.add(begun.get())
                    result = _STARTED if index in started else _NOT_STARTED
                except Exception as error:  # noqa: BLE001 - the function raised, or its result did not pickle
                    result = JobFailure(f"its worker failed ({type(error).__name__}: "
                                        f"{' '.join(str(error).split())})")
                yield index, result
                stop_if_cancelled()
    begun.close()


def _distributed():
    """The dask.distributed module, or EngineUnavailable naming the extra to install."""
    try:
        # Here, not at the top: dask is an optional extra, and importing distributed takes about a second
        import distributed
    except ImportError:
        raise EngineUnavailable(f"--dask needs dask and distributed: {CLUSTER_INSTALL_HINT}") from None
    return distributed


@dataclass(frozen=True)
class DaskCluster:
    """A Dask cluster: ``address`` "local" (a LocalCluster of ``workers`` processes on the loopback address,
    started and stopped here) or a running scheduler's address (its workers are its own)."""

    address: str
    workers: int | None = None

    @property
    def description(self) -> dict:
        return {"engine": "dask", "workers": self.workers, "scheduler": None if self.address == "local"
                else self.address}

    @contextlib.contextmanager
    def client(self):
        """A connected distributed.Client (and the LocalCluster behind it for "local"), closed afterwards."""
        distributed = _distributed()
        with contextlib.ExitStack() as stack:
            try:
                if self.address == "local":
                    cluster = stack.enter_context(distributed.LocalCluster(
                        host=LOOPBACK, n_workers=self.workers or available_cores(), threads_per_worker=1,
                        processes=True, dashboard_address=None))
                    client = stack.enter_context(distributed.Client(cluster))
                else:
                    client = stack.enter_context(distributed.Client(self.address, timeout=CONNECT_TIMEOUT_S))
            except (OSError, ValueError, TypeError, RuntimeError) as error:   # Runtime: a cluster not started
                where = "start a local Dask cluster" if self.address == "local" else \
                    f"reach the Dask scheduler at {self.address}"
                reason = " ".join(str(error).split()) or type(error).__name__
                raise EngineUnavailable(f"--dask: cannot {where} ({reason})") from None
            yield client

    def map(self, function: Callable, items: Sequence, *, cancel: CancelCheck | None = None,
            on_client: Callable[[object], None] | None = None) -> Iterator[tuple[int, object]]:
        """``(index, function(items[index]) or JobFailure)`` for every item, as the cluster finishes them;
        ``on_client`` sees the connected client first (to read the scheduler's address)."""
        distributed = _distributed()
        with self.client() as client:
            if on_client is not None:
                on_client(client)
            futures = client.map(function, list(items), pure=False)
            position = {future.key: index for index, future in enumerate(futures)}
            for future in distributed.as_completed(futures):
                index = position[future.key]
                if future.status == "finished":
                    result = future.result()
                else:
                    error = future.exception()
                    result = JobFailure(f"its Dask task failed ({type(error).__name__}: "
                                        f"{' '.join(str(error).split())})")
                future.release()
                yield index, result
                if cancel is not None and cancel():
                    client.cancel(futures)
                    raise Cancelled("the batch was cancelled")
