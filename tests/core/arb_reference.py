"""The typed tree of an expression evaluated in python-flint's arb ball arithmetic (a reference library:
rigorous balls, F. Johansson, "Arb: efficient arbitrary-precision midpoint-radius interval arithmetic", IEEE
Transactions on Computers 66, 2017), with Mixtype's meaning of "defined": every step is a finite real.

``arb_value`` returns an arb ball, ``UNDEFINED`` (a step is not a finite real) or ``UNDECIDED`` (a piecewise
condition, min, max, sign or heaviside the ball cannot decide: the caller skips that sample).
"""

from __future__ import annotations

import contextlib

import sympy
from flint import arb, ctx

__all__ = ["UNDECIDED", "UNDEFINED", "arb_value", "ball", "local_precision"]

ctx.prec = 200
UNDEFINED = "undefined"
UNDECIDED = "undecided"

_FUNCTIONS = {sympy.exp: arb.exp, sympy.log: arb.log, sympy.sin: arb.sin, sympy.cos: arb.cos, sympy.tan: arb.tan,
              sympy.asin: arb.asin, sympy.acos: arb.acos, sympy.atan: arb.atan, sympy.sinh: arb.sinh,
              sympy.cosh: arb.cosh, sympy.tanh: arb.tanh, sympy.Abs: abs}


@contextlib.contextmanager
def local_precision(bits: int):
    """arb's working precision set to ``bits`` inside the block."""
    saved = ctx.prec
    ctx.prec = bits
    try:
        yield
    finally:
        ctx.prec = saved


def ball(low: float, high: float) -> arb:
    """An arb ball holding [low, high] (both doubles)."""
    if low == high:
        return arb(low)
    middle = (arb(low) + arb(high)) / 2
    return arb(middle.mid(), ((arb(high) - arb(low)) / 2).upper() * arb("1.000001"))


def _sign_of(value: arb):
    if value > 0:
        return 1
    if value < 0:
        return -1
    if value == 0:
        return 0
    return UNDECIDED


def _less(left: arb, right: arb, strict: bool):
    if (left < right) if strict else (left <= right):
        return True
    if (left >= right) if strict else (left > right):
        return False
    return UNDECIDED


def arb_value(tree: sympy.Basic, env: dict):
    """The value of ``tree`` with symbols from ``env`` (Symbol -> arb), or UNDEFINED / UNDECIDED."""
    value = _value(tree, env)
    if isinstance(value, arb) and not value.is_finite():
        return UNDEFINED
    return value


def _value(e: sympy.Basic, env: dict):
    if e.is_Symbol:
        return env[e]
    if e.is_Number:
        return arb(float(e)) if e.is_Float else arb(int(e.p)) / arb(int(e.q))
    if e in (sympy.true, sympy.false):
        return e is sympy.true
    if isinstance(e, sympy.core.relational.Relational):
        left, right = _value(e.lhs, env), _value(e.rhs, env)
        if not isinstance(left, arb) or not isinstance(right, arb):
            return left if not isinstance(left, arb) else right
        if e.rel_op in (">", ">="):
            left, right = right, left
        return _less(left, right, e.rel_op in ("<", ">"))
    if isinstance(e, sympy.And | sympy.Or):
        parts = [_value(a, env) for a in e.args]
        if UNDEFINED in parts:
            return UNDEFINED
        if UNDECIDED in parts:
            return UNDECIDED
        return all(parts) if isinstance(e, sympy.And) else any(parts)
    if isinstance(e, sympy.Piecewise):
        for pair in e.args:        # every compared quantity must be defined (the compiled program's guard)
            for part in _compared(pair.cond):
                checked = _value(part, env)
                if not isinstance(checked, arb) or not checked.is_finite():
                    return UNDEFINED if checked != UNDECIDED else UNDECIDED
        for value, condition in e.args:
            chosen = _value(condition, env)
            if chosen == UNDECIDED:
                return UNDECIDED
            if chosen:
                return _value(value, env)
        return UNDEFINED
    args = [_value(a, env) for a in (e.args[:1] if isinstance(e, sympy.Heaviside) else e.args)]
    for arg in args:
        if not isinstance(arg, arb):
            return arg
        if not arg.is_finite():
            return UNDEFINED
    if e.is_Add:
        total = args[0]
        for arg in args[1:]:
            total = total + arg
        return total
    if e.is_Mul:
        total = args[0]
        for arg in args[1:]:
            total = total * arg
        return total
    if e.is_Pow:
        base, exponent = args
        if e.exp == sympy.S.Half:
            return base.sqrt()
        if e.exp.is_Number and float(e.exp).is_integer():
            power = int(float(e.exp))
            if power < 0:
                return arb(1) / _integer_power(base, -power)
            return _integer_power(base, power)
        return base ** exponent
    function = _FUNCTIONS.get(type(e))
    if function is not None:
        return function(args[0])
    if isinstance(e, sympy.atan2):
        return arb.atan2(args[0], args[1])
    if isinstance(e, sympy.sign):
        found = _sign_of(args[0])
        return found if found == UNDECIDED else arb(found)
    if isinstance(e, sympy.Heaviside):
        found = _sign_of(args[0])
        return found if found == UNDECIDED else arb({1: 1, -1: 0}.get(found, 0.5))
    if isinstance(e, sympy.Min | sympy.Max):
        best = args[0]
        for arg in args[1:]:
            order = _less(arg, best, True) if isinstance(e, sympy.Min) else _less(best, arg, True)
            if order == UNDECIDED:
                return UNDECIDED
            if order:
                best = arg
        return best
    raise TypeError(f"no arb evaluation for {type(e).__name__}")


def _integer_power(base: arb, power: int) -> arb:
    """base ** power by products (python-flint's arb ** int gives NaN for a ball around 0 such as [+/- 1e-917],
    which is finite); even powers of |base|, so the ball stays at or above 0."""
    factor = abs(base) if power % 2 == 0 else base
    result = arb(1)
    for _ in range(power):
        result = result * factor
    return result


def _compared(condition: sympy.Basic) -> list:
    if isinstance(condition, sympy.core.relational.Relational):
        return [condition.lhs, condition.rhs]
    if isinstance(condition, sympy.And | sympy.Or):
        return [q for arg in condition.args for q in _compared(arg)]
    return []
