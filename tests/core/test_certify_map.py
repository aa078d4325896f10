"""Certified type maps (core.certify): interval rules, the cell states, adaptive refinement, pockets the sampled
map misses, tangencies, data quantities, cancel and progress, and the command line's ``--certify``.

Interval rules are those of interval analysis (Moore, Kearfott and Cloud, "Introduction to Interval Analysis",
SIAM 2009, chapters 2 to 5); areas of discs and strips are elementary geometry.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from core.analysis.classify import TypeCode, classify_grid
from core.certify import elementary as fn
from core.certify.discriminant_bounds import DiscriminantEncloser, possible_types
from core.certify.enclosure import Boxes, enclose_names
from core.certify.intervals import Interval, add, constant, divide, multiply, power_integer
from core.certify.refinement import certify_map
from core.data.sources import DataSources, load_data
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation
from core.progress import Cancelled
from tests.core.cli_runner import run, run_json


def interval(lo, hi) -> Interval:
    flags = np.zeros(np.shape(lo), dtype=bool)
    return Interval(np.asarray(lo, dtype=float), np.asarray(hi, dtype=float), flags, flags)


def bounds(found: Interval) -> list[tuple[float, float]]:
    return [(float(lo), float(hi)) for lo, hi in zip(np.atleast_1d(found.lo), np.atleast_1d(found.hi), strict=True)]


# -- interval rules ---------------------------------------------------------------------------------------
def test_even_powers_and_abs_are_non_negative():
    x = interval([-1.0, 2.0, -3.0], [2.0, 3.0, -2.0])
    assert bounds(power_integer(x, 2)) == [(0.0, 4.0), (4.0, 9.0), (4.0, 9.0)]
    assert bounds(fn.absolute(x)) == [(0.0, 2.0), (2.0, 3.0), (2.0, 3.0)]
    fourth = bounds(power_integer(x, 4))
    assert fourth[0][0] == 0.0 and 16.0 <= fourth[0][1] <= math.nextafter(16.0, 17) * (1 + 1e-15)
    cube = bounds(power_integer(x, 3))[0]
    assert cube[0] <= -1.0 and cube[0] > -1.0 - 1e-15 and 8.0 <= cube[1] < 8.0 + 1e-14


def test_products_round_one_step_outward_and_sums_stay_exact_where_they_are_exact():
    product = bounds(multiply(interval([2.0], [3.0]), interval([-1.0], [4.0])))[0]
    assert product == (math.nextafter(-3.0, -4.0), math.nextafter(12.0, 13.0))
    assert bounds(multiply(interval([0.0], [0.0]), interval([-np.inf], [5.0]))) == [(0.0, 0.0)]
    assert bounds(multiply(constant(0.25), interval([-1.0], [3.0]))) == [(-0.25, 0.75)]   # a power of two
    assert bounds(add(interval([0.0, 1.0], [0.0, 2.0]), interval([0.0, -1.0], [0.0, 1e-30]))) == \
        [(0.0, 0.0), (0.0, math.nextafter(2.0, 3.0))]


def test_division_by_an_interval_holding_zero_is_maybe_undefined_and_by_zero_surely():
    one = interval([1.0, 1.0, 1.0, -2.0], [2.0, 2.0, 2.0, -1.0])
    found = divide(one, interval([0.0, -1.0, 0.0, 0.5], [1.0, 1.0, 0.0, 1.0]))
    assert list(found.maybe_undefined) == [True, True, True, False]
    assert list(found.surely_undefined) == [False, False, True, False]
    assert math.nextafter(1.0, 0.0) <= found.lo[0] <= 1.0 and found.hi[0] == np.inf          # 1/(0, 1]: [1, inf)
    assert found.lo[1] == -np.inf and found.hi[1] == np.inf
    assert -4.0 - 1e-14 < found.lo[3] <= -4.0 and -1.0 <= found.hi[3] < -1.0 + 1e-15


@pytest.mark.parametrize(("function", "low", "high", "maybe", "surely"), [
    (fn.logarithm, [-1.0, -2.0, 1.0], [2.0, -1.0, 2.0], [True, True, False], [False, True, False]),
    (fn.square_root, [-1.0, -2.0, 0.0], [4.0, -1.0, 4.0], [True, True, False], [False, True, False]),
    (fn.arc_cosine, [0.5, 2.0, -1.0], [2.0, 3.0, 1.0], [True, True, False], [False, True, False]),
    (fn.arc_sine, [-3.0, -3.0, -0.5], [0.0, -2.0, 0.5], [True, True, False], [False, True, False]),
    (fn.tangent, [1.0, 2.0, -1.0], [2.0, 3.0, 1.0], [True, False, False], [False, False, False]),
])
def test_functions_flag_where_they_may_or_must_be_undefined(function, low, high, maybe, surely):
    found = function(interval(low, high))
    assert list(found.maybe_undefined) == maybe
    assert list(found.surely_undefined) == surely


def test_square_root_and_logarithm_bound_their_defined_part():
    root = fn.square_root(interval([-1.0], [4.0]))
    assert root.lo[0] == 0.0 and 2.0 <= root.hi[0] < 2.0 + 1e-15
    log = fn.logarithm(interval([-1.0], [math.e]))
    assert log.lo[0] == -np.inf and 1.0 <= log.hi[0] < 1.0 + 1e-14


def test_sine_and_cosine_reach_their_extremes_inside_a_cell():
    x = interval([0.0, 1.0, 3.0], [2.0, 1.5, 3.5])
    sine = bounds(fn.sine(x))
    assert sine[0][1] == 1.0 and sine[0][0] <= 0.0 and sine[0][0] > -1e-15
    assert math.sin(1.0) - 1e-15 < sine[1][0] <= math.sin(1.0) and math.sin(1.5) <= sine[1][1] < 1.0
    assert math.sin(3.5) - 1e-15 < sine[2][0] <= math.sin(3.5)
    cosine = bounds(fn.cosine(x))
    assert cosine[2][0] == -1.0                 # pi lies in [3, 3.5]


def test_branches_of_sign_heaviside_min_max():
    x = interval([-1.0, 0.0, 1.0, 0.0], [1.0, 0.0, 2.0, 3.0])
    assert bounds(fn.sign(x)) == [(-1.0, 1.0), (0.0, 0.0), (1.0, 1.0), (0.0, 1.0)]
    assert bounds(fn.heaviside(x, 0.5)) == [(0.0, 1.0), (0.5, 0.5), (1.0, 1.0), (0.5, 1.0)]
    y = interval([0.5, -2.0, 0.0, 1.0], [0.7, -1.0, 5.0, 2.0])
    assert bounds(fn.extremum([x, y], largest=True)) == [(0.5, 1.0), (0.0, 0.0), (1.0, 5.0), (1.0, 3.0)]
    assert bounds(fn.extremum([x, y], largest=False)) == [(-1.0, 0.7), (-2.0, -1.0), (0.0, 2.0), (0.0, 2.0)]


def test_piecewise_takes_the_hull_of_the_branches_it_may_take():
    compiled = compile_equation(Equation(a="piecewise(x < 0, -1, x < 1, x, 5)", b="piecewise(x < 0, log(x), 1)",
                                         c="1"))
    boxes = Boxes([-2.0, 0.2, -0.5, 2.0], [-1.0, 0.5, 0.5, 3.0], [0, 0, 0, 0], [1, 1, 1, 1])
    found = enclose_names(compiled, boxes)
    assert bounds(found["a"]) == [(-1.0, -1.0), (0.2, 0.5), (-1.0, 0.5), (5.0, 5.0)]
    # log(x) is only taken where x < 0, where it is undefined: surely undefined there, maybe where it may be
    assert list(found["b"].surely_undefined) == [True, False, False, False]
    assert list(found["b"].maybe_undefined) == [True, False, True, False]


def test_the_typed_tree_is_enclosed_so_x_over_x_is_undefined_at_zero():
    compiled = compile_equation(Equation(a="x/x", b="0", c="1"))
    found = enclose_names(compiled, Boxes([-1.0, 1.0], [1.0, 2.0], [0, 0], [1, 1]))["a"]
    assert list(found.maybe_undefined) == [True, False]


def test_cell_states_follow_the_normalised_discriminant():
    compiled = compile_equation(Equation(a="1", b="0", c="y"))
    encloser = DiscriminantEncloser(compiled)
    boxes = Boxes([0, 0, 0, 0], [1, 1, 1, 1], [0.5, -2.0, -0.5, 0.0], [1.0, -1.0, 0.5, 0.0])
    d, s = encloser.natural(boxes)
    bits = {code: 1 << int(code) for code in TypeCode}
    assert list(possible_types(d, s, 1e-10)) == [
        bits[TypeCode.ELLIPTIC], bits[TypeCode.HYPERBOLIC],
        bits[TypeCode.ELLIPTIC] | bits[TypeCode.PARABOLIC] | bits[TypeCode.HYPERBOLIC], bits[TypeCode.PARABOLIC]]


# -- certified maps ---------------------------------------------------------------------------------------
SQUARE = Domain(-1.0, 1.0, -1.0, 1.0, 64, 64)
SPACING = 2.0 / 63
# Centred midway between grid nodes: the nearest node is 0.5 * sqrt(2) * 0.0317 = 0.0224 away, beyond r = 0.01.
POCKET_X = -1.0 + 20 * SPACING + SPACING / 2
POCKET_Y = -1.0 + 41 * SPACING + SPACING / 2


def test_a_pocket_between_grid_nodes_is_missed_by_the_sampled_map_and_certified():
    equation = Equation(a="1", b="0", c=f"((x - {POCKET_X!r})**2 + (y - {POCKET_Y!r})**2 - 1e-4) / 4")
    compiled = compile_equation(equation)
    sampled = classify_grid(compiled, SQUARE)
    assert sampled.count(TypeCode.HYPERBOLIC) == 0
    certified = certify_map(compiled, SQUARE, sampled=sampled)
    hyperbolic = [p for p in certified.pockets if p.type == "hyperbolic"]
    assert len(hyperbolic) == 1
    pocket = hyperbolic[0]
    disc = math.pi * 1e-4          # the area of a disc of radius 0.01 (elementary geometry)
    assert pocket.proven and pocket.missed_by_grid
    assert pocket.area[0] <= disc <= pocket.area[1]
    assert pocket.area[1] - pocket.area[0] < 0.1 * disc
    assert certified.area["hyperbolic"][0] <= disc <= certified.area["hyperbolic"][1]
    x0, x1, y0, y1 = pocket.bbox
    assert x0 <= POCKET_X - 0.01 and POCKET_X + 0.01 <= x1 and x1 - x0 < 0.0205
    assert y0 <= POCKET_Y - 0.01 and POCKET_Y + 0.01 <= y1 and y1 - y0 < 0.0205
    # the uniform map with as many nodes as the cells examined misses it too
    side = int(math.sqrt(certified.cells))
    assert classify_grid(compiled, SQUARE.with_grid(side, side)).count(TypeCode.HYPERBOLIC) == 0


def test_a_strictly_elliptic_equation_is_certified_elliptic_everywhere():
    certified = certify_map(compile_equation(Equation(a="1 + y**2", b="x*y", c="1 + x**2")), SQUARE)
    assert certified.area["hyperbolic"] == (0.0, 0.0)
    assert certified.area["parabolic"] == (0.0, 0.0)
    assert certified.area["elliptic"] == (4.0, 4.0)
    assert certified.undecided_area == 0.0
    assert [p.type for p in certified.pockets] == ["elliptic"] and certified.pockets[0].proven
    assert certified.tangencies == ()


def test_a_tangency_is_reported_as_such_and_never_as_hyperbolic():
    # D = b^2 - 4ac = -4 (x - 0.3)^2: elliptic on both sides of x = 0.3, parabolic on the line
    certified = certify_map(compile_equation(Equation(a="1", b="0", c="(x - 0.3)**2")), SQUARE)
    assert certified.area["hyperbolic"] == (0.0, 0.0)
    assert certified.area["elliptic"][0] > 4.0 - 1e-3
    assert len(certified.tangencies) == 1
    tangency = certified.tangencies[0]
    assert tangency.side == "elliptic"
    assert np.all(np.abs(tangency.points[:, 0] - 0.3) <= certified.min_cell)
    assert tangency.points[:, 1].min() < -0.99 and tangency.points[:, 1].max() > 0.99
    assert certified.undecided_area <= 2 * certified.min_cell * 2.0


def test_a_type_change_line_is_undecided_in_a_thin_band_only():
    certified = certify_map(compile_equation(Equation(a="y", b="0", c="1")), SQUARE, min_cell=1e-3)
    assert certified.area["elliptic"][0] > 2.0 - 4e-3 and certified.area["hyperbolic"][0] > 2.0 - 4e-3
    assert certified.area["elliptic"][0] <= 2.0 <= certified.area["elliptic"][1]
    assert 0.0 < certified.undecided_area <= 2 * 2 * 1e-3 * 2.0
    assert certified.tangencies == ()
    assert max(level.cell_width for level in certified.levels[-1:]) <= 1e-3


def test_undefined_zones_are_bounded_and_surely_undefined_only_where_proven():
    certified = certify_map(compile_equation(Equation(a="1", b="0", c="sqrt(x)")), SQUARE, min_cell=1e-2)
    low, high = certified.area["undefined"]
    assert low <= 2.0 <= high and low > 2.0 - 0.05      # sqrt(x) is undefined where x < 0: half the square
    assert certified.area["elliptic"][0] > 2.0 - 0.05


def test_the_cell_budget_stops_the_refinement_and_says_so():
    compiled = compile_equation(Equation(a="y - 0.3*sin(3*x)", b="0", c="1"))
    certified = certify_map(compiled, SQUARE, max_cells=700, min_cell=1e-2)   # the first level is 25 x 25
    assert certified.budget_reached and certified.cells <= 700
    assert certified.undecided_area > 0.05
    full = certify_map(compiled, SQUARE, min_cell=1e-2)
    assert not full.budget_reached and full.undecided_area < certified.undecided_area


def test_cancel_and_progress():
    compiled = compile_equation(Equation(a="y", b="0", c="1"))
    seen: list[float] = []
    certify_map(compiled, SQUARE, min_cell=1e-2, progress=seen.append)
    assert seen == sorted(seen) and seen[-1] == 1.0 and len(seen) >= 3
    with pytest.raises(Cancelled):
        certify_map(compiled, SQUARE, cancel=lambda: True)


def test_bad_options_are_refused():
    compiled = compile_equation(Equation(a="y", b="0", c="1"))
    with pytest.raises(ValueError, match="minimum cell"):
        certify_map(compiled, SQUARE, min_cell=0.0)
    with pytest.raises(ValueError, match="cell budget"):
        certify_map(compiled, SQUARE, max_cells=0)


def test_data_quantities_are_enclosed_by_the_nodal_values_they_touch(tmp_path):
    x = np.linspace(-1.0, 1.0, 41)
    y = np.linspace(-1.0, 1.0, 31)
    u = np.broadcast_to(x - 0.25, (31, 41)).copy()          # linear data: interpolation is exact
    np.savez(tmp_path / "flow.npz", x=x, y=y, u=u)
    data = DataSources([load_data(tmp_path / "flow.npz")])
    compiled = compile_equation(Equation(a="u", b="0", c="1"), data_names=data.names)
    certified = certify_map(compiled, SQUARE, data=data, min_cell=1e-3)
    # D = -4u: hyperbolic where x < 0.25 (area 1.25 * 2), elliptic where x > 0.25 (area 0.75 * 2)
    assert certified.area["hyperbolic"][0] <= 2.5 <= certified.area["hyperbolic"][1]
    assert certified.area["elliptic"][0] <= 1.5 <= certified.area["elliptic"][1]
    # undecided only within a few data cells (0.05 wide) of x = 0.25, where the touched nodes hold both signs
    assert certified.area["hyperbolic"][0] > 2.5 - 2 * 4 * 0.05 and certified.area["elliptic"][0] > 1.5 - 2 * 4 * 0.05
    assert certified.area["undefined"] == (0.0, 0.0)
    derivative = compile_equation(Equation(a="diff(u, x) - 2", b="0", c="1"), data_names=data.names)
    assert certify_map(derivative, SQUARE, data=data).area["hyperbolic"] == (4.0, 4.0)   # du/dx = 1


def test_data_outside_their_extent_are_undefined(tmp_path):
    x = np.linspace(0.0, 1.0, 11)
    np.savez(tmp_path / "half.npz", x=x, y=x, u=np.ones((11, 11)))
    data = DataSources([load_data(tmp_path / "half.npz")])
    compiled = compile_equation(Equation(a="u", b="0", c="1"), data_names=data.names)
    certified = certify_map(compiled, SQUARE, data=data, min_cell=1e-2)
    assert certified.area["undefined"][0] >= 3.0 - 0.05 and certified.area["undefined"][1] <= 3.0 + 0.05
    assert certified.area["elliptic"][0] >= 1.0 - 0.05


# -- the command line -------------------------------------------------------------------------------------
def test_the_command_line_reports_the_certified_map():
    document = run_json("classify", "--a", "1", "--b", "0", "--c",
                        f"((x - {POCKET_X!r})**2 + (y - {POCKET_Y!r})**2 - 1e-4) / 4", "--domain", "-1", "1", "-1",
                        "1", "--grid", "64", "--certify")
    certified = document["certified"]
    assert document["fractions"]["hyperbolic"] == 0.0
    assert certified["min_cell"] == pytest.approx(2e-4)
    low, high = certified["area"]["hyperbolic"]
    assert low <= math.pi * 1e-4 <= high
    pocket = next(p for p in certified["pockets"] if p["type"] == "hyperbolic")
    assert pocket["proven"] is True and pocket["missed_by_grid"] is True
    assert certified["cells"] > 1000 and certified["tangencies"] == []
    status, out, err = run("classify", "--a", "1", "--b", "0", "--c", "(x - 0.3)**2", "--domain", "-1", "1", "-1",
                           "1", "--certify", "--min-cell", "0.01")
    assert status == 0 and err == ""
    assert "certified map:" in out and "parabolic tangencies (D touches 0 without changing sign): 1" in out
    assert "  hyperbolic  0 .. 0\n" in out


@pytest.mark.parametrize(("option", "value"), [("--min-cell", "0"), ("--min-cell", "nan"), ("--max-cells", "0"),
                                               ("--max-cells", "many")])
def test_bad_certify_options_get_one_line(option, value):
    status, out, err = run("classify", "--a", "1", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1",
                           "--certify", option, value)
    assert status == 2 and out == "" and len(err.strip().splitlines()) <= 2 and option in err
