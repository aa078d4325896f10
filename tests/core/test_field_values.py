"""The field layer's quantities: what a study offers, values on grids and at points, colour ranges, iso-lines."""

import math

import numpy as np
import pytest

from core.analysis.field_values import (
    colour_range,
    describe_quantity,
    display_grid,
    field_at,
    field_on_grid,
    field_quantities,
    field_values,
    iso_lines,
)
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.equations.templates import load_template
from core.equations.trade import point_values
from core.progress import Cancelled

# a = 1, b = 2x, c = 1: D = 4x^2 - 4 and D / (b^2 + 4|ac|) = (x^2 - 1) / (x^2 + 1) (algebra, no source needed)
BENT = Equation("1", "2*x", "1", definitions={"speed": "1 + x", "across": "0*y", "c2": "k*k"},
                parameters={"k": Parameter(2.0, unit="m/s")}, name="bent",
                trade={"mach": {"u": "speed", "v": "across", "c2": "c2"}})
DOMAIN = Domain(-2.0, 2.0, -1.0, 1.0, 41, 11, "box")


def test_a_study_offers_discriminant_coefficients_definitions_data_parameters_and_trade_fields():
    offered = [(q.kind, q.name) for q in field_quantities(BENT, data_names=("depth", "speed"))]
    assert offered == [("discriminant", "normalized"), ("discriminant", "D"), ("coefficient", "a"),
                       ("coefficient", "b"), ("coefficient", "c"), ("value", "speed"), ("value", "across"), ("value", "c2"),
                       ("value", "depth"), ("value", "k"), ("trade", "mach")]
    assert describe_quantity(BENT, "value", "k").title == "k (parameter) (m/s)"
    assert describe_quantity(BENT, "discriminant", "normalized").unit == "dimensionless"
    with pytest.raises(ValueError, match="offers no trade field 'froude'"):
        describe_quantity(BENT, "trade", "froude")


def test_the_normalised_discriminant_and_d_on_the_grid_match_their_closed_forms():
    compiled = compile_equation(BENT)
    grid = field_on_grid(compiled, DOMAIN, "discriminant", "normalized")
    x = DOMAIN.x_nodes
    assert grid.values.shape == (11, 41) and not grid.coarsened
    assert np.allclose(grid.values, ((x ** 2 - 1) / (x ** 2 + 1))[np.newaxis, :], rtol=0, atol=1e-15)
    assert grid.low == pytest.approx(-1.0) and grid.high == pytest.approx(0.6)
    d = field_on_grid(compiled, DOMAIN, "discriminant", "D")
    assert np.allclose(d.values, (4 * x ** 2 - 4)[np.newaxis, :], rtol=1e-15, atol=1e-14)
    assert field_at(compiled, "coefficient", "b", 0.75, 0.3) == 1.5


def test_definitions_parameters_and_the_local_mach_number():
    compiled = compile_equation(BENT)
    xs, ys = np.array([-1.5, 0.0, 3.0]), np.array([0.0, 0.5, -0.5])
    assert np.array_equal(field_values(compiled, "value", "speed", xs, ys), 1 + xs)
    assert np.array_equal(field_values(compiled, "value", "k", xs, ys), [2.0, 2.0, 2.0])
    # M = |V| / c with c^2 = k^2 (core.equations.trade.local_mach_number; the definition of M)
    assert np.allclose(field_values(compiled, "trade", "mach", xs, ys), np.abs(1 + xs) / 2.0, rtol=1e-15)
    assert field_at(compiled, "trade", "mach", 1.0, 0.0, parameters={"k": 4.0}) == pytest.approx(0.5, rel=1e-15)


def test_the_ocean_templates_n_over_omega_and_undefined_values():
    template = load_template("internal_waves")
    compiled = compile_equation(template.equation)
    spec = template.equation.trade["internal_wave"]
    for x, z in ((0.3, -0.2), (0.9, -0.7)):
        known = point_values(compiled, x, z)       # every value at the point (core.equations.trade)
        expected = known[spec["N"]] / known[spec["w"]]
        assert math.isfinite(expected) and expected > 0
        assert field_at(compiled, "trade", "buoyancy_ratio", x, z) == pytest.approx(expected, rel=1e-14)
    # 1/x is undefined at x = 0: NaN, never inf
    inverse = compile_equation(Equation("1", "0", "1", definitions={"q": "1/x"}))
    assert np.isnan(field_values(inverse, "value", "q", np.array([0.0]), np.array([0.0]))).all()


def test_big_domains_are_shaded_on_a_coarser_grid_over_the_same_rectangle():
    domain = Domain(0.0, 3.0, 0.0, 1.0, 3000, 1000, "big")
    x, y = display_grid(domain, max_nodes=30_000)
    assert x.size * y.size <= 30_000 and x.size / y.size == pytest.approx(3.0, rel=0.02)
    assert (x[0], x[-1], y[0], y[-1]) == (0.0, 3.0, 0.0, 1.0)
    grid = field_on_grid(compile_equation(BENT), domain, "coefficient", "b", max_nodes=30_000)
    assert grid.coarsened and grid.values.shape == (y.size, x.size)
    with pytest.raises(Cancelled):
        field_on_grid(compile_equation(BENT), domain, "coefficient", "b", max_nodes=30_000, cancel=lambda: True)


def test_colour_ranges_centre_diverging_maps_on_zero():
    compiled = compile_equation(BENT)
    assert colour_range(field_on_grid(compiled, DOMAIN, "discriminant", "normalized"), diverging=True) == (-1, 1)
    b = field_on_grid(compiled, DOMAIN, "coefficient", "b")          # 2x on [-2, 2]
    speed = field_on_grid(compiled, DOMAIN, "value", "speed")        # 1 + x on [-2, 2]: -1 to 3
    assert colour_range(b, diverging=False) == (-4.0, 4.0)
    assert colour_range(speed, diverging=True) == (-3.0, 3.0)
    assert colour_range(speed, diverging=False) == (-1.0, 3.0)


def test_iso_lines_of_the_normalised_discriminant_lie_where_the_closed_form_says():
    compiled = compile_equation(BENT)
    grid = field_on_grid(compiled, Domain(-2.0, 2.0, -1.0, 1.0, 81, 11, "box"), "discriminant", "normalized")
    zero, level = iso_lines(grid, [0.0, 0.6])
    # D/S = 0 at x = +-1 (grid nodes: exact); D/S = 0.6 at x = +-2 (the domain's edge)
    xs = np.concatenate([p[:, 0] for p in zero.polylines])
    assert len(zero.polylines) == 2 and np.allclose(np.abs(xs), 1.0, rtol=0, atol=1e-12)
    assert all(np.allclose(np.abs(p[:, 0]), 2.0) for p in level.polylines)
    # iso-value between nodes: (x^2 - 1)/(x^2 + 1) = 0.3 at x = sqrt(1.3/0.7); linear interpolation is O(h^2)
    (third,) = iso_lines(grid, [0.3])
    xs = np.concatenate([p[:, 0] for p in third.polylines])
    assert np.allclose(np.abs(xs), math.sqrt(1.3 / 0.7), atol=0.05 ** 2)
