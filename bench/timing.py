"""Timing helper shared by the benchmarks."""

from __future__ import annotations

import time
from collections.abc import Callable


def best_time(function: Callable[[], object], repeats: int = 3) -> float:
    """The shortest wall-clock time of ``repeats`` calls, in seconds (the least disturbed run)."""
    best = float("inf")
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        best = min(best, time.perf_counter() - start)
    return best
