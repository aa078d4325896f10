"""Soundness of the interval enclosures (core.certify) against a reference library.

On thousands of random cells of random expressions of the language, the enclosure of every coefficient and
of D = b^2 - 4ac must hold the exact value at many sample points, as python-flint's arb ball arithmetic
(a reference library: F. Johansson, IEEE Transactions on Computers 66, 2017) encloses it at 200 bits: our
bounds contain arb's ball. Where arb finds a point undefined (a step not a finite real) the cell must be
flagged maybe undefined; where arb finds the whole cell (a ball holding it) finite, the cell is never
surely undefined and its bounds are never NaN. The types a cell may hold must include the type arb proves at
each sample point. (Our enclosure need not contain arb's enclosure of the whole cell: both are sound
over-estimates of the same range and either may be the tighter, so the containment is checked point by point.)
"""

from __future__ import annotations

import math

import numpy as np
from flint import arb
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from core.analysis.classify import TypeCode
from core.certify.discriminant_bounds import DiscriminantEncloser, possible_types
from core.certify.enclosure import Boxes, enclose_names
from core.equations.compiled import compile_equation
from core.equations.equation import Equation
from core.equations.language import ExpressionError
from tests.core.arb_reference import UNDECIDED, UNDEFINED, arb_value, ball, local_precision

_LEAVES = st.sampled_from(("x", "y", "x", "y", "1", "2", "0.5", "3", "0.1", "1e-3", "7"))
_UNARY = ("sin", "cos", "tan", "asin", "acos", "atan", "sinh", "cosh", "tanh", "exp", "log", "sqrt", "abs",
          "sign", "heaviside", "-")


def _extend(children: st.SearchStrategy[str]) -> st.SearchStrategy[str]:
    unary = st.builds(lambda f, a: f"-({a})" if f == "-" else f"{f}({a})", st.sampled_from(_UNARY), children)
    binary = st.builds(lambda a, op, b: f"({a}) {op} ({b})", children, st.sampled_from(("+", "-", "*", "/")),
                       children)
    powers = st.builds(lambda a, n: f"({a})**{n}", children, st.sampled_from(("2", "3", "-1", "-2", "0.5", "1.5")))
    general_power = st.builds(lambda a, b: f"({a})**({b})", children, children)
    two = st.builds(lambda f, a, b: f"{f}({a}, {b})", st.sampled_from(("atan2", "min", "max")), children, children)
    piecewise = st.builds(lambda a, op, b, v, w: f"piecewise(({a}) {op} ({b}), {v}, {w})", children,
                          st.sampled_from(("<", "<=", ">", ">=")), children, children, children)
    joined = st.builds(lambda a, b, c, v, w: f"piecewise(({a}) < ({b}) and ({c}) > 0, {v}, {w})", children,
                       children, children, children, children)
    return st.one_of(unary, binary, powers, general_power, two, piecewise, joined)


EXPRESSIONS = st.recursive(_LEAVES, _extend, max_leaves=7)


@st.composite
def cells(draw) -> tuple[float, float, float, float]:
    x0 = draw(st.floats(-3, 3))
    y0 = draw(st.floats(-3, 3))
    width = 10.0 ** draw(st.floats(-6, 0.3))
    height = width * draw(st.floats(0.5, 2))
    return x0, x0 + width, y0, y0 + height


def _points(cell, count: int, seed: int) -> np.ndarray:
    """Sample points in the cell: corners, centre and random points (doubles inside [x0, x1] x [y0, y1])."""
    x0, x1, y0, y1 = cell
    rng = np.random.default_rng(seed)
    fixed = [(x0, y0), (x1, y0), (x0, y1), (x1, y1), ((x0 + x1) / 2, (y0 + y1) / 2)]
    random = np.column_stack([rng.uniform(x0, x1, count), rng.uniform(y0, y1, count)])
    return np.clip(np.vstack([fixed, random]), [x0, y0], [x1, y1])


def _contains(low: float, high: float, value: arb) -> bool:
    return (math.isinf(low) and low < 0 or arb(low) <= value.lower()) and \
        (math.isinf(high) and high > 0 or value.upper() <= arb(high))


def _outside(low: float, high: float, value: arb) -> bool:
    """arb proves the value below ``low`` or above ``high`` (a ball straddling a bound proves nothing)."""
    return (not math.isinf(low) and value.upper() < arb(low)) or (not math.isinf(high) and value.lower() > arb(high))


def _discriminant_tree(compiled) -> dict:
    """Reference trees for a, b, c and D (definitions are not used by these equations)."""
    a, b, c = (compiled.symbolic[k] for k in "abc")
    return {"a": a, "b": b, "c": c}


def _values_at(trees: dict, point: dict, enclosures: dict, d) -> dict:
    """arb's values of the trees and of D at ``point`` at 200 bits, or at up to 20000 bits where a 200-bit
    ball is too wide to sit inside our bounds (1 + 1e-186 needs some 620 bits, -4 + x**24 at x = 1e-90
    about 7200)."""
    for precision in (200, 2400, 20000):
        with local_precision(precision):
            values = {name: arb_value(tree, {s: arb(v) for s, v in point.items()}) for name, tree in trees.items()}
            if any(not isinstance(v, arb) for v in values.values()):
                return values
            values["D"] = values["b"] * values["b"] - 4 * values["a"] * values["c"]
            values["S"] = values["b"] * values["b"] + 4 * abs(values["a"] * values["c"])
            if all(_contains(*_bounds(enclosures[n] if n != "D" else d), values[n]) for n in ("a", "b", "c", "D")):
                return values
    return values


def _bounds(found) -> tuple[float, float]:
    return float(np.broadcast_to(found.lo, (1,))[0]), float(np.broadcast_to(found.hi, (1,))[0])


def _check_cell(compiled, cell, seed: int) -> tuple[int, int, int]:
    """Check one cell: no value arb finds at a sample point is proven outside our bounds. Returns how many
    sample points arb decided, how many of them are defined, and how many values (a, b, c, D at a defined
    point) arb proved inside our bounds (for the count of checks made)."""
    x_symbol, y_symbol = (compiled.symbols[v] for v in compiled.variables)
    boxes = Boxes([cell[0]], [cell[1]], [cell[2]], [cell[3]])
    enclosures = enclose_names(compiled, boxes)
    encloser = DiscriminantEncloser(compiled)
    d, s = encloser.natural(boxes)
    d = encloser.sharpen(boxes, d)
    mask = int(possible_types(d, s, 1e-10)[0])
    trees = _discriminant_tree(compiled)
    # the whole cell as a ball: where arb finds every coefficient finite, no flag may say "surely undefined"
    whole = {x_symbol: ball(cell[0], cell[1]), y_symbol: ball(cell[2], cell[3])}
    for name, tree in trees.items():
        over_cell = arb_value(tree, whole)
        found = enclosures[name]
        assert not (np.isnan(found.lo).any() or np.isnan(found.hi).any())
        if isinstance(over_cell, arb):
            assert not bool(found.surely_undefined[0] if np.ndim(found.surely_undefined) else found.surely_undefined)
    checked = defined = contained = 0
    for x, y in _points(cell, 12, seed):
        values = _values_at(trees, {x_symbol: float(x), y_symbol: float(y)}, enclosures, d)
        if UNDECIDED in values.values():
            continue
        if UNDEFINED in values.values():
            assert mask & (1 << int(TypeCode.UNDEFINED)), (x, y)
            checked += 1
            continue
        for name in ("a", "b", "c", "D"):
            low, high = _bounds(enclosures[name] if name != "D" else d)
            assert not _outside(low, high, values[name]), (name, x, y, low, high, values[name])
            contained += _contains(low, high, values[name])
        if values["S"] > 0:
            ratio = values["D"] / values["S"]
            if ratio < -1e-10:
                assert mask & (1 << int(TypeCode.ELLIPTIC)), (x, y, mask)
            elif ratio > 1e-10:
                assert mask & (1 << int(TypeCode.HYPERBOLIC)), (x, y, mask)
            elif -1e-10 < ratio < 1e-10:
                assert mask & (1 << int(TypeCode.PARABOLIC)), (x, y, mask)
        checked += 1
        defined += 1
    return checked, defined, contained


@settings(max_examples=300, deadline=None, suppress_health_check=list(HealthCheck))
@given(a=EXPRESSIONS, b=EXPRESSIONS, c=EXPRESSIONS, cell_list=st.lists(cells(), min_size=4, max_size=8),
       seed=st.integers(0, 2**31))
def test_enclosures_hold_arbs_values_at_sample_points(a, b, c, cell_list, seed):
    try:
        compiled = compile_equation(Equation(a=a, b=b, c=c))
    except ExpressionError:
        assume(False)
    for index, cell in enumerate(cell_list):
        _check_cell(compiled, cell, seed + index)


def test_the_random_cells_are_thousands_and_the_checks_bite():
    """A fixed draw of the same strategies: thousands of cells, most of their sample points decided by arb."""
    rng = np.random.default_rng(7)
    texts = ["x**2 - y", "sin(x)*exp(y) - 1", "piecewise(x < y, log(x), sqrt(y))", "1/(x - 0.25)", "abs(x) - y**3",
             "atan2(y, x) - 1", "max(x, y, 0.5) * min(x, -y)", "sign(x - y) + heaviside(y)", "acos(x/3)",
             "x**y", "tanh(x) / cosh(y) - sinh(x*y)", "tan(x + y)"]
    cells_checked = decided = defined = inside = 0
    for a in texts:
        compiled = compile_equation(Equation(a=a, b=rng.choice(texts), c=rng.choice(texts)))
        for _ in range(200):
            x0, y0 = rng.uniform(-3, 3, 2)
            width = 10.0 ** rng.uniform(-6, 0)
            found = _check_cell(compiled, (x0, x0 + width, y0, y0 + width), int(rng.integers(2**31)))
            decided, defined, inside = decided + found[0], defined + found[1], inside + found[2]
            cells_checked += 1
    assert cells_checked >= 2000
    assert decided >= 0.5 * 17 * cells_checked      # most sample points are decided by arb (defined or not)
    assert defined >= 0.2 * decided
    assert inside >= 0.99 * 4 * defined            # and arb proves nearly every value inside our bounds


def test_the_containment_check_catches_a_wrong_enclosure():
    """The check itself can fail: a bound one step inside arb's value is refused."""
    value = arb(2).sqrt()
    assert _contains(1.0, 1.5, value)
    assert not _contains(1.0, math.nextafter(math.sqrt(2), 0), value)
    assert not _contains(math.nextafter(math.sqrt(2), 2), 2.0, value)
