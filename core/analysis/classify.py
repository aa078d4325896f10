"""Local type of the equation from the sign of the discriminant D = b^2 - 4ac.

The test is scale-free: with S = b^2 + 4|ac|, the size of the rounding error of D = b^2 - 4ac is about
machine epsilon times S, so the normalised discriminant D/S in [-1, 1] is what can be trusted, and a point is
parabolic when |D/S| <= tolerance, whatever the size of the coefficients. Where S = 0 (b = 0 and ac = 0, as in
the heat equation) D is exactly 0 and the point is parabolic.
Points where a coefficient is NaN, infinite or not real get the explicit ``UNDEFINED`` code. Grids are
evaluated in row blocks so that the extra memory stays bounded however fine the grid.
"""

from __future__ import annotations

import enum
import os
import threading
from collections.abc import Mapping
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numexpr
import numpy as np

from core.analysis.discriminant import DiscriminantScratch, normalized_discriminant_into
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES, QuantitySource
from core.equations.evaluation import EvaluationBuffers
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = [
    "DEFAULT_TOLERANCE",
    "TypeCode",
    "TypeMap",
    "classify_grid",
    "classify_points",
]

DEFAULT_TOLERANCE = 1e-10
_BLOCK_ELEMENTS = 1 << 18   # nodes per block: the fastest of 2**16..2**19 in bench_classify (fewer, longer blocks
# hold the GIL between numpy calls less often; cancel still answers within one block)
# D/S of full-size coefficients is formed in parts of this many nodes: its temporaries (128 KiB) then come from
# memory the allocator keeps, while fresh 512 KiB ones cost page faults that take longer than the arithmetic.
_DISCRIMINANT_ELEMENTS = 1 << 14
_WORKERS = min(8, os.cpu_count() or 1)
_POOL: ThreadPoolExecutor | None = None


def _grid_pool() -> ThreadPoolExecutor:
    """Threads for grid blocks: numpy and numexpr release the GIL, so blocks run on every core.

    numexpr is made single-threaded (a process-wide setting): the blocks already use every core, and
    numexpr's own threads take a global lock, which would serialise the blocks' evaluations.
    """
    global _POOL
    if _POOL is None:
        numexpr.set_num_threads(1)
        _POOL = ThreadPoolExecutor(max_workers=_WORKERS, thread_name_prefix="mixtype-grid")
    return _POOL


class TypeCode(enum.IntEnum):
    """The local type of the equation; stored as int8 in type maps."""

    UNDEFINED = 0
    ELLIPTIC = 1
    PARABOLIC = 2
    HYPERBOLIC = 3

    @classmethod
    def coerce(cls, value: TypeCode | int | str) -> TypeCode:
        """Accept a TypeCode, its integer value or its name in any case ('elliptic')."""
        if isinstance(value, str):
            try:
                return cls[value.strip().upper()]
            except KeyError:
                names = ", ".join(m.name.lower() for m in cls)
                raise ValueError(f"unknown type {value!r}; expected one of {names}") from None
        return cls(value)

    @property
    def label(self) -> str:
        return self.name.lower()


def _codes_from_normalized(normalized: np.ndarray, tolerance: float, out: np.ndarray) -> np.ndarray:
    """Type codes (int8, into ``out``) from D/S; returns the count of each TypeCode, indexed by code.

    NaN -> undefined, D/S > tolerance -> hyperbolic, D/S < -tolerance -> elliptic, otherwise parabolic.
    Written as a few vectorised passes over boolean buffers (no fancy indexing) because it runs on every
    grid node.
    """
    hyperbolic = normalized > tolerance
    elliptic = normalized < -tolerance
    np.subtract(hyperbolic.view(np.int8), elliptic.view(np.int8), out=out)
    out += TypeCode.PARABOLIC
    n_hyperbolic = int(np.count_nonzero(hyperbolic))
    n_elliptic = int(np.count_nonzero(elliptic))
    n_undefined = 0
    if n_hyperbolic + n_elliptic < normalized.size:   # only the remaining nodes can be NaN
        undefined = np.isnan(normalized)
        n_undefined = int(np.count_nonzero(undefined))
        if n_undefined:
            out[undefined] = TypeCode.UNDEFINED
    counts = np.zeros(len(TypeCode), dtype=np.int64)
    counts[TypeCode.HYPERBOLIC] = n_hyperbolic
    counts[TypeCode.ELLIPTIC] = n_elliptic
    counts[TypeCode.UNDEFINED] = n_undefined
    counts[TypeCode.PARABOLIC] = normalized.size - n_hyperbolic - n_elliptic - n_undefined
    return counts


def classify_points(compiled: CompiledEquation, x, y, *, parameters: Mapping[str, float] | None = None,
                    data: QuantitySource | None = None, tolerance: float = DEFAULT_TOLERANCE
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Type codes (int8) and D/S (float64) at any broadcastable set of points."""
    _check_tolerance(tolerance)
    shape = np.broadcast_shapes(np.shape(x), np.shape(y))
    a, b, c = compiled.coefficients_raw(x, y, parameters=parameters, data=data)
    normalized = np.empty(shape, dtype=np.float64)
    normalized_discriminant_into(a, b, c, normalized, DiscriminantScratch(normalized.size))
    codes = np.empty(shape, dtype=np.int8)
    _codes_from_normalized(normalized, tolerance, codes)
    return codes, normalized


@dataclass(frozen=True, eq=False)
class TypeMap:
    """The type of the equation at every node of a domain's grid.

    ``codes`` (ny, nx) int8 TypeCode values; ``normalized`` (ny, nx) float32 D/S (see module docstring), NaN where undefined;
    ``fractions`` maps each type name to its share of the grid nodes (an area fraction to O(h)).
    """

    domain: Domain
    x: np.ndarray
    y: np.ndarray
    codes: np.ndarray
    normalized: np.ndarray
    fractions: Mapping[str, float]
    tolerance: float
    parameters: Mapping[str, float]

    @property
    def undefined_mask(self) -> np.ndarray:
        return self.codes == TypeCode.UNDEFINED

    def count(self, code: TypeCode | int | str) -> int:
        return int(np.count_nonzero(self.codes == TypeCode.coerce(code)))


def classify_grid(compiled: CompiledEquation, domain: Domain, *,
                  parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                  tolerance: float = DEFAULT_TOLERANCE, cancel: CancelCheck | None = None,
                  progress: ProgressReport | None = None,
                  out: tuple[np.ndarray, np.ndarray] | None = None) -> TypeMap:
    """Classify every node of ``domain``'s grid, a block of rows at a time, on all cores.

    ``cancel`` is polled between blocks (raise Cancelled when it returns True); ``progress`` gets a fraction
    in [0, 1]. Only a, b, c are evaluated (readout-only definitions and their data are not). Extra memory per
    thread is two work buffers of 2**18 doubles plus one such buffer per value the equation's program holds at
    once (core.equations.equation.EvaluationBuffers), independent of the grid size.
    ``out`` = (codes int8, normalized float32), both (ny, nx), receives the result instead of new arrays:
    batch runs and parameter sweeps reuse their buffers (the TypeMap returned then shares them).
    """
    _check_tolerance(tolerance)
    values = compiled.parameter_vector(parameters)
    prepared = compiled.prepare(values)
    x, y = domain.x_nodes, domain.y_nodes
    ny, nx = y.size, x.size
    if out is None:
        codes = np.empty((ny, nx), dtype=np.int8)
        normalized = np.empty((ny, nx), dtype=np.float32)
    else:
        codes, normalized = out
        if codes.shape != (ny, nx) or codes.dtype != np.int8 or normalized.shape != (ny, nx) \
                or normalized.dtype != np.float32:
            raise ValueError(f"out must be (int8, float32) arrays of shape {(ny, nx)}, got "
                             f"{codes.dtype}{codes.shape} and {normalized.dtype}{normalized.shape}")
    pool = _grid_pool()
    # Long blocks, but at least two per thread so that mid-size grids use every core too.
    rows = max(1, min(_BLOCK_ELEMENTS // nx, -(-ny // (2 * _WORKERS))))
    starts = list(range(0, ny, rows))
    x_row = x[np.newaxis, :]
    rows_along_x, columns_along_y = compiled.along_axes(prepared, x, y, names=COEFFICIENT_NAMES)
    prepared = {**prepared, **rows_along_x}
    local = threading.local()
    done = [0]
    lock = threading.Lock()

    def work(start: int) -> np.ndarray:
        if cancel is not None and cancel():
            raise Cancelled("classification cancelled")
        stop = min(ny, start + rows)
        if not hasattr(local, "scratch"):
            local.scratch = DiscriminantScratch(rows * nx)
            local.buffers = EvaluationBuffers()
        block = normalized[start:stop]
        block_prepared = {**prepared, **{k: v[start:stop] for k, v in columns_along_y.items()}}
        raw = compiled.evaluate_raw(x_row, y[start:stop, np.newaxis], data=data, prepared=block_prepared,
                                   names=COEFFICIENT_NAMES, buffers=local.buffers)
        _normalized_in_parts(raw["a"], raw["b"], raw["c"], block, local.scratch)
        counts = _codes_from_normalized(block, tolerance, codes[start:stop])
        if progress is not None:
            with lock:
                done[0] += stop - start
                progress(done[0] / ny)
        return counts

    counts = np.zeros(len(TypeCode), dtype=np.int64)
    for block_counts in pool.map(work, starts):
        counts += block_counts
    total = float(nx * ny)
    fractions = {code.label: counts[code] / total for code in TypeCode}
    return TypeMap(domain=domain, x=x, y=y, codes=codes, normalized=normalized, fractions=fractions,
                   tolerance=tolerance, parameters=values)


def _normalized_in_parts(a, b, c, out: np.ndarray, scratch: DiscriminantScratch) -> None:
    """D/S of a block of rows into ``out``, a few rows at a time when a coefficient spans the whole block."""
    rows, nx = out.shape
    if max(np.size(a), np.size(b), np.size(c)) <= _DISCRIMINANT_ELEMENTS or rows == 1:
        normalized_discriminant_into(a, b, c, out, scratch)
        return
    step = max(1, _DISCRIMINANT_ELEMENTS // nx)
    for start in range(0, rows, step):
        part = slice(start, start + step)
        a_part, b_part, c_part = (v[part] if np.ndim(v) == 2 and np.shape(v)[0] == rows else v for v in (a, b, c))
        normalized_discriminant_into(a_part, b_part, c_part, out[part], scratch)


def _check_tolerance(tolerance: float) -> None:
    if not 0.0 <= float(tolerance) < 1.0:
        raise ValueError(f"parabolic tolerance must be in [0, 1), got {tolerance}")

