"""Interval enclosures of a compiled equation's definitions and coefficients over many cells at once.

The typed tree (``CompiledEquation.symbolic``: unevaluated, so x/x stays undefined at 0) is walked once per
batch of cells, every distinct sub-tree enclosed once (a definition used five times costs one enclosure).
Variables are the cells' sides, parameters degenerate intervals, data quantities the range of the nodal
values each cell touches (core.data: ``value_range``). Piecewise conditions are three-valued over a cell
(surely true, surely false, either): the value is the hull of every branch that may be taken, and, as in the
compiled program, a compared quantity that may be undefined makes the value maybe undefined. This is the
natural interval extension (Moore 1966); core.certify.discriminant_bounds sharpens D where it is too loose.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping

import numpy as np
import sympy

from core.certify import elementary as fn
from core.certify.intervals import (
    Interval,
    add,
    constant,
    divide,
    finished,
    hull,
    multiply,
    negate,
)
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES

__all__ = ["Boxes", "UnsupportedExpression", "enclose_expressions", "enclose_names"]

# A data range: key, x0, x1, y0, y1 -> (low, high, maybe undefined, surely undefined), arrays (n,).
DataRange = Callable[[str, np.ndarray, np.ndarray, np.ndarray, np.ndarray], tuple]


class UnsupportedExpression(ValueError):
    """A sympy node this module has no enclosure for (only trees from outside the parser can hold one)."""


class Boxes:
    """n cells [x0, x1] x [y0, y1] (float64 arrays (n,)) in the equation's two variables."""

    def __init__(self, x0, x1, y0, y1) -> None:
        self.x0, self.x1, self.y0, self.y1 = (np.asarray(v, dtype=np.float64) for v in (x0, x1, y0, y1))
        self.size = self.x0.size

    def side(self, axis: int) -> Interval:
        lo, hi = (self.x0, self.x1) if axis == 0 else (self.y0, self.y1)
        flags = np.zeros(self.size, dtype=bool)
        return Interval(lo, hi, flags, flags)

    def centres(self) -> Boxes:
        cx, cy = 0.5 * (self.x0 + self.x1), 0.5 * (self.y0 + self.y1)
        return Boxes(cx, cx, cy, cy)


_MONOTONE = {sympy.exp: fn.exponential, sympy.log: fn.logarithm, sympy.sin: fn.sine, sympy.cos: fn.cosine,
             sympy.tan: fn.tangent, sympy.asin: fn.arc_sine, sympy.acos: fn.arc_cosine, sympy.atan: fn.arc_tangent,
             sympy.sinh: fn.hyperbolic_sine, sympy.cosh: fn.hyperbolic_cosine, sympy.tanh: fn.hyperbolic_tangent,
             sympy.Abs: fn.absolute, sympy.sign: fn.sign}


class _Walker:
    """Encloses sympy trees over ``boxes`` given the enclosures of their symbols; each sub-tree once."""

    def __init__(self, symbols: Mapping[sympy.Symbol, Interval]) -> None:
        self.done: dict[sympy.Basic, object] = dict(symbols)

    def enclose(self, root: sympy.Basic):
        """The Interval of a number-valued tree, or (may be true, may be false) of a condition."""
        stack: list[tuple[sympy.Basic, bool]] = [(root, False)]
        while stack:
            node, expanded = stack.pop()
            if node in self.done:
                continue
            children = _children(node)
            if not expanded and children:
                stack.append((node, True))
                stack.extend((child, False) for child in children if child not in self.done)
                continue
            self.done[node] = self._node(node)
        return self.done[root]

    def _node(self, e: sympy.Basic):
        done = self.done
        if e is sympy.true or e is sympy.false:
            flag = np.bool_(e is sympy.true)
            return (flag, ~flag)
        if e.is_Symbol:
            raise UnsupportedExpression(f"no enclosure for the name {e}")
        if e.is_Number or e.is_NumberSymbol:
            return _number(e)
        if e.is_Add:
            total = done[e.args[0]]
            for arg in e.args[1:]:
                total = add(total, done[arg])
            return total
        if e.is_Mul:
            return self._product(e)
        if e.is_Pow:
            base, exponent = e.args
            if exponent == sympy.S.Half:
                return fn.square_root(done[base])
            if exponent == -sympy.S.Half:
                return divide(constant(1.0), fn.square_root(done[base]))
            fixed = float(exponent) if exponent.is_Number else None
            return fn.power(done[base], done[exponent], fixed)
        function = _MONOTONE.get(type(e))
        if function is not None:
            return function(done[e.args[0]])
        if isinstance(e, sympy.atan2):
            return fn.arc_tangent2(done[e.args[0]], done[e.args[1]])
        if isinstance(e, sympy.Heaviside):
            at_zero = float(e.args[1]) if len(e.args) > 1 else 0.5
            return fn.heaviside(done[e.args[0]], at_zero)
        if isinstance(e, sympy.Min | sympy.Max):
            return fn.extremum([done[a] for a in e.args], largest=isinstance(e, sympy.Max))
        if isinstance(e, sympy.Piecewise):
            return self._piecewise(e)
        if isinstance(e, sympy.core.relational.Relational):
            return _comparison(e.rel_op, done[e.lhs], done[e.rhs])
        if isinstance(e, sympy.And | sympy.Or):
            parts = [done[a] for a in e.args]
            true, false = parts[0]
            for p_true, p_false in parts[1:]:
                if isinstance(e, sympy.And):
                    true, false = true & p_true, false | p_false
                else:
                    true, false = true | p_true, false & p_false
            return (true, false)
        raise UnsupportedExpression(f"no enclosure for {type(e).__name__}")

    def _product(self, e: sympy.Mul) -> Interval:
        total = None
        for arg in e.args:
            if total is not None and arg.is_Pow and arg.exp is sympy.S.NegativeOne:
                total = divide(total, self.done[arg.base])      # a / b as typed: one division
            elif total is not None and arg is sympy.S.NegativeOne:
                total = negate(total)
            else:
                value = self.done[arg]
                total = value if total is None else multiply(total, value)
        return total

    def _piecewise(self, e: sympy.Piecewise) -> Interval:
        """The hull of every branch that may be taken; undefined where a compared quantity may be."""
        taken: list[Interval] = []
        reach = None          # cells where this branch may still be reached (all earlier conditions may be false)
        sure_branch_undefined = None
        maybe = np.bool_(False)
        surely = np.bool_(False)
        for value, condition in e.args:
            for quantity in _compared(condition):
                q = self.done[quantity]
                maybe, surely = maybe | q.maybe_undefined, surely | q.surely_undefined
            may_true, may_false = self.done[condition]
            here = may_true if reach is None else reach & may_true
            branch = self.done[value]
            taken.append(Interval(np.where(here & ~branch.surely_undefined, branch.lo, np.inf),
                                  np.where(here & ~branch.surely_undefined, branch.hi, -np.inf),
                                  branch.maybe_undefined, branch.surely_undefined))
            maybe = maybe | (here & branch.maybe_undefined)
            # surely undefined when every branch that may be taken is surely undefined
            never_defined = ~here | branch.surely_undefined
            sure_branch_undefined = never_defined if sure_branch_undefined is None \
                else sure_branch_undefined & never_defined
            reach = may_false if reach is None else reach & may_false
        return hull(taken, maybe, surely | sure_branch_undefined)


def _children(e: sympy.Basic) -> tuple:
    if isinstance(e, sympy.Piecewise):
        return tuple(part for pair in e.args for part in pair.args) + tuple(
            q for pair in e.args for q in _compared(pair.cond))
    if isinstance(e, sympy.Heaviside):
        return e.args[:1]
    if e.is_Mul:
        return e.args[:1] + tuple(a.base if a.is_Pow and a.exp is sympy.S.NegativeOne else a for a in e.args[1:])
    return e.args


def _compared(condition: sympy.Basic) -> list:
    if isinstance(condition, sympy.core.relational.Relational):
        return [condition.lhs, condition.rhs]
    if isinstance(condition, sympy.And | sympy.Or):
        return [q for arg in condition.args for q in _compared(arg)]
    return []


def _number(e: sympy.Basic) -> Interval:
    value = float(e)
    if e.is_Rational and not e.is_Integer and (int(e.q) & (int(e.q) - 1)):   # 1/3 is not a double
        return finished(np.nextafter(value, -np.inf), np.nextafter(value, np.inf), np.bool_(False),
                        np.bool_(False))
    if e.is_NumberSymbol:
        return finished(np.nextafter(value, -np.inf), np.nextafter(value, np.inf), np.bool_(False),
                        np.bool_(False))
    return constant(value)


def _comparison(operator: str, left: Interval, right: Interval) -> tuple[np.ndarray, np.ndarray]:
    """(may be true, may be false) of ``left operator right`` over each cell."""
    if operator in (">", ">="):
        left, right = right, left
        operator = "<" if operator == ">" else "<="
    if operator == "<":
        surely_true, surely_false = left.hi < right.lo, left.lo >= right.hi
    else:
        surely_true, surely_false = left.hi <= right.lo, left.lo > right.hi
    return ~surely_false, ~surely_true


def _symbol_enclosures(compiled: CompiledEquation, boxes: Boxes, parameters: Mapping[str, float] | None,
                       data_range: DataRange | None, keys) -> dict[sympy.Symbol, Interval]:
    symbols = compiled.symbols
    enclosures: dict[sympy.Symbol, Interval] = {symbols[v]: boxes.side(i) for i, v in enumerate(compiled.variables)}
    for name, value in compiled.parameter_vector(parameters).items():
        enclosures[symbols[name]] = constant(value)
    for key in keys:
        if data_range is None:
            raise ValueError(f"background data are needed for {key}")
        low, high, maybe, surely = data_range(key, boxes.x0, boxes.x1, boxes.y0, boxes.y1)
        enclosures[symbols[key]] = finished(np.asarray(low, dtype=np.float64), np.asarray(high, dtype=np.float64),
                                            np.asarray(maybe, dtype=bool), np.asarray(surely, dtype=bool))
    return enclosures


def enclose_names(compiled: CompiledEquation, boxes: Boxes, *, parameters: Mapping[str, float] | None = None,
                  data_range: DataRange | None = None, names=COEFFICIENT_NAMES) -> dict[str, Interval]:
    """Enclosures of ``names`` (definitions, a, b, c) over every cell of ``boxes``, from the typed trees."""
    walker = _Walker(_symbol_enclosures(compiled, boxes, parameters, data_range, compiled.data_keys))
    for name in compiled.definition_order:
        walker.done[compiled.symbols[name]] = walker.enclose(compiled.symbolic[name])
    result = {}
    for name in names:
        tree = compiled.symbolic[name]
        result[name] = walker.done[compiled.symbols[name]] if name in compiled.definition_order \
            else walker.enclose(tree)
    return result


def enclose_expressions(compiled: CompiledEquation, boxes: Boxes, expressions: Mapping[str, sympy.Basic], *,
                        parameters: Mapping[str, float] | None = None) -> dict[str, Interval]:
    """Enclosures of sympy ``expressions`` over the variables and parameters only (no definitions, no data):
    e.g. the derivatives of D for the mean-value form. UnsupportedExpression for a node without one."""
    walker = _Walker(_symbol_enclosures(compiled, boxes, parameters, None, ()))
    try:
        return {name: walker.enclose(tree) for name, tree in expressions.items()}
    except KeyError as error:
        raise UnsupportedExpression(f"no enclosure for the name {error}") from None
