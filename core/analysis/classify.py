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
    "FRACTION_ORDER",
    "TypeCode",
    "TypeMap",
    "classify_grid",
    "classify_nodes",
    "classify_points",
    "set_grid_threads",
]

DEFAULT_TOLERANCE = 1e-10
_BLOCK_ELEMENTS = 1 << 18   # nodes per block: the fastest of 2**16..2**19 in bench_classify (fewer, longer blocks
# hold the GIL between numpy calls less often; cancel still answers within one block)
_WORKERS = min(8, os.cpu_count() or 1)
_POOL: ThreadPoolExecutor | None = None


def set_grid_threads(count: int) -> None:
    """How many threads grid classification uses in this process (default: the cores, at most 8). A batch's
    worker processes share the cores among them: two workers each running two threads on two cores would
    only take turns."""
    global _WORKERS, _POOL
    if isinstance(count, bool) or not isinstance(count, int) or count < 1:
        raise ValueError(f"thread count must be a positive integer, got {count!r}")
    if count != _WORKERS:
        if _POOL is not None:
            _POOL.shutdown(wait=True)
            _POOL = None
        _WORKERS = count


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


# Plain ints: numpy treats an IntEnum operand as a Python object, some thirty times slower on a block.
_UNDEFINED, _ELLIPTIC, _PARABOLIC, _HYPERBOLIC = (int(code) for code in (
    TypeCode.UNDEFINED, TypeCode.ELLIPTIC, TypeCode.PARABOLIC, TypeCode.HYPERBOLIC))


def _codes_from_normalized(normalized: np.ndarray, tolerance: float, out: np.ndarray, *,
                           may_be_nan: bool = True, scratch: tuple[np.ndarray, np.ndarray] | None = None
                           ) -> np.ndarray:
    """Type codes (int8, into ``out``) from D/S; returns the count of each TypeCode, indexed by code.

    NaN -> undefined, D/S > tolerance -> hyperbolic, D/S < -tolerance -> elliptic, otherwise parabolic.
    Written as a few vectorised passes over boolean buffers (no fancy indexing) because it runs on every
    grid node; ``scratch`` (two boolean arrays of ``normalized``'s size) spares fresh ones, and
    ``may_be_nan=False`` (D/S known finite) skips the search for NaN.
    """
    if scratch is None:
        hyperbolic, elliptic = np.empty(normalized.shape, bool), np.empty(normalized.shape, bool)
    else:
        hyperbolic, elliptic = (buffer[:normalized.size].reshape(normalized.shape) for buffer in scratch)
    np.greater(normalized, tolerance, out=hyperbolic)
    np.less(normalized, -tolerance, out=elliptic)
    np.subtract(hyperbolic.view(np.int8), elliptic.view(np.int8), out=out)
    np.add(out, _PARABOLIC, out=out)
    n_hyperbolic = int(np.count_nonzero(hyperbolic))
    n_elliptic = int(np.count_nonzero(elliptic))
    n_undefined = 0
    if may_be_nan and n_hyperbolic + n_elliptic < normalized.size:   # only the remaining nodes can be NaN
        undefined = np.isnan(normalized, out=hyperbolic)
        n_undefined = int(np.count_nonzero(undefined))
        if n_undefined:
            out[undefined] = _UNDEFINED
    counts = np.zeros(len(TypeCode), dtype=np.int64)
    counts[_HYPERBOLIC] = n_hyperbolic
    counts[_ELLIPTIC] = n_elliptic
    counts[_UNDEFINED] = n_undefined
    counts[_PARABOLIC] = normalized.size - n_hyperbolic - n_elliptic - n_undefined
    return counts


def classify_points(compiled: CompiledEquation, x, y, *, parameters: Mapping[str, float] | None = None,
                    data: QuantitySource | None = None, tolerance: float = DEFAULT_TOLERANCE
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Type codes (int8) and D/S (float64) at any broadcastable set of points."""
    _check_tolerance(tolerance)
    shape = np.broadcast_shapes(np.shape(x), np.shape(y))
    a, b, c = compiled.coefficients_raw(x, y, parameters=parameters, data=data)
    normalized = np.empty(shape, dtype=np.float64)
    may_be_nan = normalized_discriminant_into(a, b, c, normalized, DiscriminantScratch(normalized.size))
    codes = np.empty(shape, dtype=np.int8)
    _codes_from_normalized(normalized, tolerance, codes, may_be_nan=may_be_nan)
    return codes, normalized


# The order in which types are listed (fractions, areas): the three types, then undefined, as the CLI always has.
FRACTION_ORDER = (TypeCode.ELLIPTIC, TypeCode.PARABOLIC, TypeCode.HYPERBOLIC, TypeCode.UNDEFINED)


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

    def ordered_fractions(self) -> dict[str, float]:
        """Each type's share of the grid nodes as plain floats, by name, in FRACTION_ORDER: what ``mixtype
        classify`` reports as "fractions" (core.results.document) and a parameter sweep records per value."""
        return {code.label: float(self.fractions[code.label]) for code in FRACTION_ORDER}


def classify_grid(compiled: CompiledEquation, domain: Domain, *,
                  parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                  tolerance: float = DEFAULT_TOLERANCE, cancel: CancelCheck | None = None,
                  progress: ProgressReport | None = None,
                  out: tuple[np.ndarray, np.ndarray] | None = None) -> TypeMap:
    """Classify every node of ``domain``'s grid, a block of rows at a time, on all cores.

    ``cancel`` is polled between blocks (raise Cancelled when it returns True); ``progress`` gets a fraction
    in [0, 1]. Only a, b, c are evaluated (readout-only definitions and their data are not). Extra memory per
    thread is one buffer of 2**18 doubles per value the equation's program holds at once, and at least the
    three D/S works in (core.equations.evaluation.EvaluationBuffers), independent of the grid size; each pool
    thread keeps them for the next call with the same block shape (``_Workspace``).
    ``out`` = (codes int8, normalized float32), both (ny, nx), receives the result instead of new arrays:
    batch runs and parameter sweeps reuse their buffers (the TypeMap returned then shares them).
    """
    values = compiled.parameter_vector(parameters)
    x, y = domain.x_nodes, domain.y_nodes
    ny, nx = y.size, x.size
    if out is None:
        out = (np.empty((ny, nx), dtype=np.int8), np.empty((ny, nx), dtype=np.float32))
    counts = classify_nodes(compiled, x, y, parameters=values, data=data, tolerance=tolerance, cancel=cancel,
                            progress=progress, out=out)
    total = float(nx * ny)
    fractions = {code.label: counts[code] / total for code in TypeCode}
    return TypeMap(domain=domain, x=x, y=y, codes=out[0], normalized=out[1], fractions=fractions,
                   tolerance=tolerance, parameters=values)


def classify_nodes(compiled: CompiledEquation, x: np.ndarray, y: np.ndarray, *,
                   parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                   tolerance: float = DEFAULT_TOLERANCE, cancel: CancelCheck | None = None,
                   progress: ProgressReport | None = None, out: tuple[np.ndarray, np.ndarray]) -> np.ndarray:
    """Classify the nodes (x_i, y_j) of the axes x (nx,), y (ny,) into ``out`` = (codes int8, D/S float32),
    both (ny, nx); returns the count of each TypeCode (int64, indexed by code).

    What classify_grid does on a domain's nodes, for any increasing axes: a window of a data file's own grid
    (core.analysis.out_of_core) runs the same blocks and so gets the same bits.
    """
    _check_tolerance(tolerance)
    values = compiled.parameter_vector(parameters)
    prepared = compiled.prepare(values)
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    ny, nx = y.size, x.size
    codes, normalized = out
    if codes.shape != (ny, nx) or codes.dtype != np.int8 or normalized.shape != (ny, nx) \
            or normalized.dtype != np.float32:
        raise ValueError(f"out must be (int8, float32) arrays of shape {(ny, nx)}, got "
                         f"{codes.dtype}{codes.shape} and {normalized.dtype}{normalized.shape}")
    pool = _grid_pool()
    # Long blocks, but at least two per thread so that mid-size grids use every core too.
    rows = max(1, min(_BLOCK_ELEMENTS // nx, -(-ny // (2 * _WORKERS))))
    starts = iter(range(0, ny, rows))   # shared by the workers: next() on it is atomic under the GIL
    x_row = x[np.newaxis, :]
    rows_along_x, columns_along_y = compiled.along_axes(prepared, x, y, names=COEFFICIENT_NAMES)
    prepared = {**prepared, **rows_along_x}
    done = [0]
    lock = threading.Lock()
    stopped = threading.Event()

    def block(start: int, workspace: _Workspace) -> np.ndarray:
        stop = min(ny, start + rows)
        block_prepared = {**prepared, **{k: v[start:stop] for k, v in columns_along_y.items()}}
        raw = compiled.evaluate_raw(x_row, y[start:stop, np.newaxis], data=data, prepared=block_prepared,
                                   names=COEFFICIENT_NAMES, buffers=workspace.buffers)
        # D/S works in arrays the evaluation has just released (still in cache), lent until its next call.
        arrays = tuple(workspace.buffers.take((stop - start, nx), np.float64) for _ in range(3))
        may_be_nan = normalized_discriminant_into(raw["a"], raw["b"], raw["c"], normalized[start:stop],
                                                  DiscriminantScratch(arrays=arrays))  # type: ignore[arg-type]
        counts = _codes_from_normalized(normalized[start:stop], tolerance, codes[start:stop],
                                        may_be_nan=may_be_nan, scratch=workspace.flags)
        if progress is not None:
            with lock:
                done[0] += stop - start
                progress(done[0] / ny)
        return counts

    def work() -> np.ndarray:
        """Blocks taken in turn until none are left: one hand-off per thread, not per block."""
        workspace = _workspace((rows, nx))
        counts = np.zeros(len(TypeCode), dtype=np.int64)
        try:
            for start in starts:
                if stopped.is_set():
                    break
                if cancel is not None and cancel():
                    raise Cancelled("classification cancelled")
                counts += block(start, workspace)
        except BaseException:
            stopped.set()   # the other threads stop at their next block
            raise
        return counts

    counts = np.zeros(len(TypeCode), dtype=np.int64)
    for future in [pool.submit(work) for _ in range(min(_WORKERS, -(-ny // rows)))]:
        counts += future.result()
    return counts


class _Workspace:
    """One thread's arrays for blocks of ``shape`` (rows, columns), kept from call to call: fresh block-sized
    arrays at every call cost page faults that take as long as a small grid's arithmetic."""

    def __init__(self, shape: tuple[int, int]) -> None:
        self.shape = shape
        size = shape[0] * shape[1]
        self.buffers = EvaluationBuffers()
        self.flags = (np.empty(size, bool), np.empty(size, bool))


_WORKSPACES = threading.local()


def _workspace(shape: tuple[int, int]) -> _Workspace:
    """The calling thread's workspace for blocks of ``shape`` (replaced when the block shape changes)."""
    workspace = getattr(_WORKSPACES, "workspace", None)
    if workspace is None or workspace.shape != shape:
        workspace = _WORKSPACES.workspace = _Workspace(shape)
    return workspace


def _check_tolerance(tolerance: float) -> None:
    if not 0.0 <= float(tolerance) < 1.0:
        raise ValueError(f"parabolic tolerance must be in [0, 1), got {tolerance}")

