"""How a compiled equation's program runs: which steps some values need (EvaluationPlan), the arrays one
thread reuses from block to block (EvaluationBuffers), and steps of IEEE-exact operations run as numpy ufuncs
taken operation for operation from numexpr's compiled program (UfuncProgram: the same bits, several times
faster, each intermediate in the smallest shape its operands broadcast to)."""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numexpr
import numpy as np

from core.equations.codegen import Statement

__all__ = ["EvaluationBuffers", "EvaluationPlan", "Step", "UfuncProgram", "broadcast_shape"]


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


# numexpr's operations whose numpy ufunc gives the same bits (IEEE-exact arithmetic, comparisons, selection).
# Transcendental functions and pow are left to numexpr: numpy's vectorised versions may differ in the last bit.
_EXACT_UFUNCS = {
    b"add_ddd": np.add, b"sub_ddd": np.subtract, b"mul_ddd": np.multiply, b"div_ddd": np.divide,
    b"neg_dd": np.negative, b"sqrt_dd": np.sqrt, b"copy_dd": np.positive,
    b"gt_bdd": np.greater, b"ge_bdd": np.greater_equal, b"eq_bdd": np.equal, b"ne_bdd": np.not_equal,
    b"and_bbb": np.logical_and, b"or_bbb": np.logical_or, b"invert_bb": np.logical_not, b"copy_bb": np.logical_and,
}
_EXACT_FUNCTIONS = {numexpr.interpreter.funccodes[b"absolute_dd"]: np.absolute}
_WHERE = b"where_dbdd"


def broadcast_shape(values) -> tuple[int, ...]:
    """The shape arrays and scalars broadcast to (np.broadcast_shapes, without its cost when shapes agree)."""
    shapes = {getattr(value, "shape", ()) for value in values}
    shapes.discard(())
    if len(shapes) <= 1:
        return shapes.pop() if shapes else ()
    return np.broadcast_shapes(*shapes)


@dataclass(frozen=True)
class _Operation:
    ufunc: np.ufunc | None   # None: where(condition, then, otherwise)
    target: int              # register written
    sources: tuple[int, ...]  # registers read
    boolean: bool            # the result is a comparison


class UfuncProgram:
    """A compiled numexpr expression run as numpy ufunc calls, operation for operation (the same bits).

    numexpr interprets every operation at about one element per cycle; numpy's ufuncs are vectorised and
    keep each intermediate in the smallest shape its operands broadcast to, so a product of a row and a
    column is formed once where they meet and a parameter-only factor stays a scalar. Built only from
    numexpr's own compiled program (``from_numexpr``), so every rewrite numexpr makes (x/3 as x*(1/3), x**2
    as x*x, operands swapped) is kept, and only when every operation is IEEE-exact in both.
    """

    def __init__(self, constants: tuple, registers: int, operations: tuple[_Operation, ...], boolean: bool
                 ) -> None:
        self._constants = constants
        self._registers = registers
        self._operations = operations
        self._boolean = boolean

    @classmethod
    def from_numexpr(cls, kernel: numexpr.NumExpr) -> UfuncProgram | None:
        """The same program as numpy operations, or None if one of its operations is not IEEE-exact in both
        (or if this numexpr's program layout is not the one read here: see ``_layout_understood``)."""
        if not _layout_understood():
            return None
        return cls._read(kernel)

    @classmethod
    def _read(cls, kernel: numexpr.NumExpr) -> UfuncProgram | None:
        names = {code: name for name, code in numexpr.interpreter.opcodes.items()}
        program = kernel.program
        inputs = len(kernel.signature)
        constants = tuple(np.float64(c) if isinstance(c, float | np.floating) else c for c in kernel.constants)
        if any(not isinstance(c, np.float64 | np.bool_ | bool) for c in constants):
            return None
        operations = []
        index = 0
        while index < len(program):
            name = names.get(program[index])
            target, first, second = program[index + 1:index + 4]
            if name == _WHERE:
                sources = (first, second, program[index + 5])
                operations.append(_Operation(None, target, sources, False))
                index += 8   # the third operand rides in the following no-op instruction
                continue
            if name == b"func_ddn" and second in _EXACT_FUNCTIONS:
                operations.append(_Operation(_EXACT_FUNCTIONS[second], target, (first,), False))
            elif name in _EXACT_UFUNCS:
                arity = len(name.rsplit(b"_", 1)[1]) - 1
                ufunc = _EXACT_UFUNCS[name]
                sources = (first,) if arity == 1 else (first, second)
                if name == b"copy_bb":
                    sources = (first, first)
                operations.append(_Operation(ufunc, target, sources, name.endswith((b"_bdd", b"_bbb", b"_bb"))))
            else:
                return None
            index += 4
        registers = 1 + inputs + len(constants) + len(kernel.tempsig)
        return cls(constants, registers, tuple(operations), kernel.fullsig[:1] == b"b")

    def __call__(self, *arguments, out: np.ndarray | None = None, buffers: EvaluationBuffers | None = None
                 ) -> np.ndarray:
        """The value for ``arguments`` (in the kernel's signature order), written into ``out`` if given.

        Intermediates of ``out``'s shape are borrowed from ``buffers`` and given back before returning;
        smaller ones (rows, columns, scalars) are made as they come.
        """
        registers: list = [None, *arguments, *self._constants]
        registers.extend([None] * (self._registers - len(registers)))
        owned: set[int] = set()
        borrowed: list[np.ndarray] = []
        with np.errstate(all="ignore"):
            for operation in self._operations:
                values = [registers[source] for source in operation.sources]
                shape = broadcast_shape(values)
                dtype = np.bool_ if operation.boolean else np.float64
                destination = registers[operation.target] if operation.target in owned else None
                if destination is not None and (destination.shape != shape or destination.dtype != dtype):
                    destination = None
                if destination is None and shape:
                    if operation.target == 0 and out is not None and out.shape == shape and out.dtype == dtype \
                            and not any(v is out for v in registers):
                        destination = out
                    elif buffers is not None and out is not None and shape == out.shape:
                        destination = buffers.take(shape, dtype)
                        borrowed.append(destination)
                if operation.ufunc is None:
                    condition, then, otherwise = values
                    if destination is None:
                        result = np.where(condition, then, otherwise)
                    else:
                        if destination is then:
                            np.copyto(destination, otherwise, where=np.logical_not(condition))
                        else:
                            np.copyto(destination, otherwise)
                            np.copyto(destination, then, where=condition)
                        result = destination
                else:
                    result = operation.ufunc(*values, out=destination) if destination is not None \
                        else operation.ufunc(*values)
                registers[operation.target] = result
                if isinstance(result, np.ndarray) and result.ndim:
                    owned.add(operation.target)
                else:
                    owned.discard(operation.target)
        result = registers[0]
        if out is None:
            result = np.asarray(result, dtype=np.bool_ if self._boolean else np.float64)
        elif result is not out:
            np.copyto(out, result)
            result = out
        for array in borrowed:
            if array is not result:
                buffers.give_back(array)  # type: ignore[union-attr]
        return result


@functools.cache
def _layout_understood() -> bool:
    """Whether numexpr's compiled programs read as UfuncProgram expects: a probe using every operation read
    here, on IEEE special values, gives the same bits both ways. The program layout is numexpr's own, not a
    published interface; a numexpr that changes it falls back to running every step in numexpr."""
    probe = "where((x > y) & ~(x == y) | (x != 0), sqrt(abs(x)) * y - x / 3, -(x + y) * 2) >= y"
    names = (("x", np.float64), ("y", np.float64))
    x = np.array([-2.0, -0.0, 0.0, 1.5, np.inf, -np.inf, np.nan, 1e300, 5e-324, 3.0])
    y = x[::-1].copy()
    with np.errstate(all="ignore"):
        for text in (probe, probe.removesuffix(" >= y")):
            kernel = numexpr.NumExpr(text, signature=names)
            program = UfuncProgram._read(kernel)
            if program is None:
                return False
            expected, got = kernel(x, y), program(x, y)
            if expected.dtype != got.dtype:
                return False
            if expected.dtype == np.float64:          # any NaN equals any NaN (its sign bit means nothing)
                same_nan = np.array_equal(np.isnan(expected), np.isnan(got))
                expected, got = np.nan_to_num(expected, nan=0.0), np.nan_to_num(got, nan=0.0)
                if not same_nan:
                    return False
            if expected.tobytes() != got.tobytes():
                return False
    return True
