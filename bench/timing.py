"""Timing helper shared by the benchmarks."""

from __future__ import annotations

import gc
import time
from collections.abc import Callable

import numpy as np


def best_time(function: Callable[[], object], repeats: int = 3) -> float:
    """The shortest wall-clock time of ``repeats`` calls, in seconds (the least disturbed run)."""
    best = float("inf")
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        best = min(best, time.perf_counter() - start)
    return best


def paired_times(first, second, repeats: int = 41) -> tuple[np.ndarray, np.ndarray, object, object]:
    """Times (repeats,) of two calls run back to back in pairs, which one goes first alternating, so that
    load on the machine hits both alike; and their last results.

    The garbage collector is off while timing, as timeit does: a collection of the whole heap (sympy's
    objects included) lands on whichever call happens to allocate past the threshold and costs more than
    the refinement being measured.
    """
    times = np.zeros((2, repeats))
    results: list[object] = [None, None]
    calls = (first, second)
    gc.collect()
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        for repeat in range(repeats):
            for k in (0, 1) if repeat % 2 == 0 else (1, 0):
                start = time.perf_counter()
                results[k] = calls[k]()
                times[k, repeat] = time.perf_counter() - start
    finally:
        if was_enabled:
            gc.enable()
    return times[0], times[1], results[0], results[1]
