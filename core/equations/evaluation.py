"""How a compiled equation's program runs: which steps some values need (EvaluationPlan) and the arrays
one thread reuses from block to block (EvaluationBuffers)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from core.equations.codegen import Statement

__all__ = ["EvaluationBuffers", "EvaluationPlan", "Step"]


@dataclass(frozen=True)
class Step:
    statement: Statement
    alias: str | None        # the code is just another internal name: copy, do not evaluate
    varies: frozenset[str]   # internal names of the variables and data keys it depends on (empty: parameters)

    @property
    def target(self) -> str:
        return self.statement.target


@dataclass(frozen=True)
class EvaluationPlan:
    """The steps that evaluating some named values takes, grouped by where they vary (internal targets).

    ``prepared`` steps depend on parameters only and are computed once by ``prepare`` (for every name);
    ``along_first`` and ``along_second`` depend on one variable only (once per grid axis in a grid run);
    ``pointwise`` run at every point; ``data_keys`` are the data quantities sampled.
    """

    names: tuple[str, ...]
    prepared: tuple[str, ...]
    along_first: tuple[str, ...]
    along_second: tuple[str, ...]
    pointwise: tuple[str, ...]
    data_keys: tuple[str, ...]
    work: tuple[tuple[Step, tuple[str, ...], bool], ...] = field(repr=False, compare=False, default=())
    # (step, temporaries no later step of the plan reads, pointwise?): what evaluate_raw runs, in order


class EvaluationBuffers:
    """Arrays that one thread's evaluations of same-shaped blocks of points reuse from call to call.

    Fresh arrays for every step of every block cost page faults that take longer than the arithmetic; with
    buffers a step writes into an array a released temporary (or the previous call) left. Values that
    ``evaluate_raw`` returns then live in these arrays: valid until the next call with the same buffers.
    """

    def __init__(self) -> None:
        self._free: dict[tuple[tuple[int, ...], type], list[np.ndarray]] = {}
        self._lent: list[np.ndarray] = []

    def take(self, shape: tuple[int, ...], dtype: type) -> np.ndarray:
        free = self._free.get((shape, dtype))
        array = free.pop() if free else np.empty(shape, dtype=dtype)
        self._lent.append(array)
        return array

    def give_back(self, array: np.ndarray) -> None:
        for index, lent in enumerate(self._lent):
            if lent is array:
                del self._lent[index]
                self._free.setdefault((array.shape, array.dtype.type), []).append(array)
                return

    def reclaim(self) -> None:
        """Everything lent out is free again (the previous call's values are no longer read)."""
        for array in self._lent:
            self._free.setdefault((array.shape, array.dtype.type), []).append(array)
        self._lent.clear()
