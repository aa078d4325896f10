"""Type-change lines refined onto D = 0, and zones where D vanishes on an area."""

import math

import mpmath
import numpy as np
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from core.analysis.classify import TypeCode, classify_grid, classify_points
from core.analysis.discriminant import discriminant
from core.analysis.type_change_lines import (
    ParabolicRegion,
    TypeBoundaries,
    TypeChangeCurve,
    find_type_boundaries,
)
from core.analysis.zero_refinement import discriminant_function, roots_on_segments
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.progress import Cancelled

X, Y = sympy.symbols("x y", real=True)


def boundaries(a, b, c, domain, *, parameters=None, data_names=(), data=None, **options):
    compiled = compile_equation(Equation(a=a, b=b, c=c, parameters=parameters or {}), data_names=data_names)
    type_map = classify_grid(compiled, domain, data=data)
    return compiled, type_map, find_type_boundaries(compiled, type_map, data=data, **options)


def signed_area(loop):
    """Shoelace formula (common practice, no source): positive for a counter-clockwise closed loop."""
    return 0.5 * float(np.sum(loop[:-1, 0] * loop[1:, 1] - loop[1:, 0] * loop[:-1, 1]))


def side_types(compiled, curve, offset):
    """Types found by classify_points a small step left and right of each segment's midpoint."""
    p = curve.points
    middle = 0.5 * (p[1:] + p[:-1])
    tangent = p[1:] - p[:-1]
    length = np.hypot(tangent[:, 0], tangent[:, 1])
    keep = length > 0
    normal = np.column_stack([-tangent[keep, 1], tangent[keep, 0]]) / length[keep, np.newaxis]
    left, _ = classify_points(compiled, *(middle[keep] + offset * normal).T)
    right, _ = classify_points(compiled, *(middle[keep] - offset * normal).T)
    return left, right


# -- Tricomi equation --------------------------------------------------------------------------------------
@pytest.mark.parametrize("domain", [Domain(-1, 1, -1, 1, 41, 41), Domain(-1, 1, -0.97, 1.05, 41, 37)],
                         ids=["node-on-line", "line-between-nodes"])
def test_tricomi_line_is_the_x_axis(domain):
    # y u_xx + u_yy = 0: D = -4y, hyperbolic for y < 0, elliptic for y > 0, parabolic on y = 0
    # (Bers 1958, Mathematical Aspects of Subsonic and Transonic Gas Dynamics; from memory).
    compiled, _, result = boundaries("y", "0", "1", domain)
    assert sympy.simplify(compiled.symbolic_discriminant - (-4 * Y)) == 0
    assert len(result.curves) == 1 and result.parabolic_regions == ()
    curve = result.curves[0]
    assert not curve.closed and curve.unrefined == 0
    assert np.abs(curve.points[:, 1]).max() <= 1e-12 * domain.size
    assert curve.points[:, 0].min() == domain.xmin and curve.points[:, 0].max() == domain.xmax
    assert curve.left_type == TypeCode.HYPERBOLIC and curve.right_type == TypeCode.ELLIPTIC
    # Hyperbolic below: walking along the line with y < 0 on the left means walking towards -x.
    assert curve.points[-1, 0] < curve.points[0, 0]
    left, right = side_types(compiled, curve, 0.01)
    assert (left == TypeCode.HYPERBOLIC).all() and (right == TypeCode.ELLIPTIC).all()


def test_tricomi_raw_line_is_half_a_cell_off_when_no_node_lies_on_it():
    # D/S = -sign(y) for the Tricomi equation, so linear interpolation puts the raw line mid-way between
    # the nodes on either side of y = 0: h = 2.02 / 36, nodes -0.97 + 17h = -0.016111 and -0.97 + 18h = 0.04.
    domain = Domain(-1, 1, -0.97, 1.05, 41, 37)
    _, _, result = boundaries("y", "0", "1", domain)
    np.testing.assert_allclose(result.curves[0].raw_points[:, 1], (0.04 - 0.97 + 17 * 2.02 / 36) / 2,
                               atol=1e-12)
    _, _, raw_only = boundaries("y", "0", "1", domain, refine=False)
    assert raw_only.refined is False
    np.testing.assert_array_equal(raw_only.curves[0].points, raw_only.curves[0].raw_points)


# -- the unit circle ---------------------------------------------------------------------------------------
def test_unit_circle_is_found_and_refined():
    # u_xx - 2x u_xy + (1 - y^2) u_yy = 0: D = 4x^2 - 4(1 - y^2) = 4(x^2 + y^2 - 1), elliptic inside the
    # unit circle (algebra checked with sympy below; an exercise of this kind is in Brown and Churchill,
    # Fourier Series and Boundary Value Problems, ch. 1, from memory).
    domain = Domain(-2, 2, -2, 2, 101, 101)
    compiled, _, result = boundaries("1", "-2*x", "1 - y**2", domain)
    assert sympy.expand(compiled.symbolic_discriminant - 4 * (X**2 + Y**2 - 1)) == 0
    assert len(result.curves) == 1
    curve = result.curves[0]
    assert curve.closed and curve.unrefined == 0
    np.testing.assert_array_equal(curve.points[0], curve.points[-1])
    radius_error = np.abs(np.hypot(*curve.points.T) - 1)
    raw_error = np.abs(np.hypot(*curve.raw_points.T) - 1)
    assert radius_error.max() <= 1e-12 * domain.size
    assert raw_error.max() > 1e-8 * domain.size           # refinement is what makes the difference
    # Every vertex stayed on its grid edge: one coordinate is still a grid node coordinate.
    on_column = np.isin(curve.points[:, 0], domain.x_nodes)
    on_row = np.isin(curve.points[:, 1], domain.y_nodes)
    assert (on_column | on_row).all()
    # Outside (hyperbolic) on the left means a clockwise loop; the inscribed polygon's area is pi to O(h^2)
    # (area of the unit disc, common practice).
    assert signed_area(curve.points) == pytest.approx(-math.pi, abs=1e-3)
    assert curve.left_type == TypeCode.HYPERBOLIC and curve.right_type == TypeCode.ELLIPTIC
    left, right = side_types(compiled, curve, 0.01)
    assert (left == TypeCode.HYPERBOLIC).all() and (right == TypeCode.ELLIPTIC).all()
    assert curve.length == pytest.approx(2 * math.pi, abs=1e-3)


# Centres and radii on a 1e-3 lattice: many circles then pass exactly through grid nodes. (Offsets such as
# 1e-194, where b^2 underflows to 0 beside ac = 0, make classification call a node undefined.)
@settings(max_examples=12, deadline=None)
@given(st.integers(-400, 400), st.integers(-400, 400), st.integers(300, 900))
def test_shifted_circles_through_parameters(x0, y0, radius):
    # Shifted version of the case above: D = 4((x - x0)^2 + (y - y0)^2 - r^2) (same algebra).
    x0, y0, radius = x0 / 1000, y0 / 1000, radius / 1000
    parameters = {"x0": Parameter(0.0), "y0": Parameter(0.0), "r": Parameter(0.5)}
    compiled = compile_equation(Equation(a="1", b="-2*(x - x0)", c="r**2 - (y - y0)**2",
                                         parameters=parameters))
    domain = Domain(-1.5, 1.5, -1.5, 1.5, 61, 61)
    values = {"x0": x0, "y0": y0, "r": radius}
    type_map = classify_grid(compiled, domain, parameters=values)
    result = find_type_boundaries(compiled, type_map)       # parameters come from the map
    assert len(result.curves) == 1 and result.curves[0].closed
    points = result.curves[0].points
    assert np.abs(np.hypot(points[:, 0] - x0, points[:, 1] - y0) - radius).max() <= 1e-12 * domain.size


# -- parabolic everywhere, and parabolic zones -----------------------------------------------------------
def test_parabolic_everywhere_gives_one_region_and_no_noise_lines():
    # x^2 u_xx + 2xy u_xy + y^2 u_yy = 0: D = 4x^2y^2 - 4x^2y^2 = 0 everywhere (common practice, no source).
    domain = Domain(-1, 1, -1, 1, 51, 51)
    compiled, _, result = boundaries("x**2", "2*x*y", "y**2", domain)
    assert compiled.symbolic_discriminant == 0
    xx, yy = np.meshgrid(domain.x_nodes, domain.y_nodes)
    rounding = discriminant(*compiled.coefficients(xx, yy))
    assert (rounding > 0).any() and (rounding < 0).any()  # D is zero only to rounding, of both signs
    assert result.curves == ()
    assert len(result.parabolic_regions) == 1
    region = result.parabolic_regions[0]
    assert region.area == pytest.approx(4.0, rel=1e-12)
    assert region.cells == 50 * 50 and region.holes == ()
    np.testing.assert_array_equal(region.outline, [[-1, -1], [1, -1], [1, 1], [-1, 1], [-1, -1]])


def test_parabolic_band_between_hyperbolic_and_elliptic():
    # a = y - clip(y, -0.3, 0.3), c = 1: D = -4a is 0 exactly on |y| <= 0.3, > 0 below (hyperbolic) and < 0
    # above (elliptic) (algebra). The band's area is 2 * 0.6; whole cells inside it miss at most a strip
    # of one cell height on each side.
    domain = Domain(-1, 1, -1, 1, 101, 101)
    h = domain.spacing[1]
    compiled, _, result = boundaries("y - min(max(y, -0.3), 0.3)", "0", "1", domain)
    assert len(result.parabolic_regions) == 1
    region = result.parabolic_regions[0]
    assert 0 <= 1.2 - region.area <= 2 * 2 * h + 1e-12
    assert region.outline[:, 0].min() == -1 and region.outline[:, 0].max() == 1
    assert abs(region.outline[:, 1].min() + 0.3) <= h and abs(region.outline[:, 1].max() - 0.3) <= h
    assert signed_area(region.outline) == pytest.approx(region.area)
    # One line, on the hyperbolic edge of the band only: elliptic-to-parabolic is the region's outline.
    assert len(result.curves) == 1
    curve = result.curves[0]
    assert curve.left_type == TypeCode.HYPERBOLIC and curve.right_type == TypeCode.PARABOLIC
    assert np.abs(curve.points[:, 1] + 0.3).max() <= h
    assert (discriminant(*compiled.coefficients(*curve.points.T)) == 0).all()     # on the zero set of D


def test_parabolic_region_with_a_hole_around_a_hyperbolic_disc():
    # a = min(x^2 + y^2 - 0.25, 0), c = 1: D = -4a > 0 inside the circle of radius 1/2, 0 outside (algebra).
    # The zone is the square minus the disc, area 4 - pi/4, less at most the cells the circle crosses.
    domain = Domain(-1, 1, -1, 1, 81, 81)
    h = domain.spacing[0]
    _, _, result = boundaries("min(x**2 + y**2 - 0.25, 0)", "0", "1", domain)
    (region,) = result.parabolic_regions
    exact = 4 - math.pi / 4
    assert 0 <= exact - region.area <= 2 * math.sqrt(2) * h * (math.pi + 8 * h)
    assert len(region.holes) == 1
    assert signed_area(region.outline) == pytest.approx(4.0)
    assert signed_area(region.holes[0]) < 0
    assert signed_area(region.outline) + signed_area(region.holes[0]) == pytest.approx(region.area)
    (curve,) = result.curves
    assert curve.closed and curve.right_type == TypeCode.PARABOLIC
    assert np.abs(np.hypot(*curve.points.T) - 0.5).max() <= h
    assert signed_area(curve.points) > 0          # hyperbolic inside, on the left: counter-clockwise


def test_touching_zero_without_change_of_type_is_not_a_line():
    # y^2 u_xx - u_yy = 0: D = 4y^2 >= 0, hyperbolic on both sides of the parabolic line y = 0 (algebra).
    _, _, result = boundaries("y**2", "0", "-1", Domain(-1, 1, -1, 1, 41, 41))
    assert result.curves == () and result.parabolic_regions == ()


# -- comparison with an independent root finder ------------------------------------------------------------
def test_refined_roots_match_mpmath():
    # D = 0.04x^2 - 4(1 - 0.5x^2 - 0.15 sin 3y) vanishes near |x| = 1.4: two open lines. Each refined vertex
    # is compared with mpmath.findroot at 30 digits along the same grid line (reference library).
    domain = Domain(-2, 2, -1.5, 1.5, 81, 61)
    compiled, _, result = boundaries("1 - 0.5*(x**2 + 0.3*sin(3*y))", "0.2*x", "1", domain)
    assert len(result.curves) == 2
    discriminant = sympy.lambdify((X, Y), compiled.symbolic_discriminant, modules="mpmath")
    errors, raw_errors = [], []
    with mpmath.workdps(30):
        for curve in result.curves:
            assert curve.unrefined == 0 and curve.right_type == TypeCode.ELLIPTIC
            for (x, y), raw in zip(curve.points, curve.raw_points):
                if x in domain.x_nodes:               # on a vertical edge: solve for y at this x
                    root = mpmath.findroot(lambda t, x=x: discriminant(mpmath.mpf(x), t), mpmath.mpf(y))
                    errors.append(abs(float(root) - y))
                    raw_errors.append(abs(float(root) - raw[1]))
                else:                                  # on a horizontal edge: solve for x at this y
                    root = mpmath.findroot(lambda t, y=y: discriminant(t, mpmath.mpf(y)), mpmath.mpf(x))
                    errors.append(abs(float(root) - x))
                    raw_errors.append(abs(float(root) - raw[0]))
    worst, worst_raw = max(errors), max(raw_errors)
    assert worst <= 1e-12 * domain.size
    assert worst_raw > 1e-6 * domain.size


def test_roots_of_the_discriminant_on_rays_across_the_unit_circle():
    # D = 4(x^2 + y^2 - 1) (as above): on the ray from the origin at angle theta the root is (cos, sin).
    compiled = compile_equation(Equation(a="1", b="-2*x", c="1 - y**2"))
    function = discriminant_function(compiled, None, None)
    theta = np.linspace(0.1, 6.0, 25)
    start = np.zeros((theta.size, 2))
    end = 2 * np.column_stack([np.cos(theta), np.sin(theta)])
    roots, found = roots_on_segments(function, start, end, xtol=1e-14)
    assert found.all()
    np.testing.assert_allclose(roots, end / 2, rtol=0, atol=1e-13)
    # No sign change on a segment outside the circle -> not found; a zero at an end -> that end exactly.
    roots, found = roots_on_segments(function, [[1.5, 0.0], [1.0, 0.0]], [[1.9, 0.5], [3.0, 0.0]], xtol=1e-13)
    assert found.tolist() == [False, True]
    np.testing.assert_array_equal(roots[1], [1.0, 0.0])
    with pytest.raises(ValueError, match=r"\(3,\)"):
        roots_on_segments(function, [0.0, 0.0, 1.0], [1.0, 1.0, 1.0], xtol=1e-13)
    with pytest.raises(ValueError, match="xtol"):
        roots_on_segments(function, start, end, xtol=-1.0)


# -- undefined zones, background data, cancellation ----------------------------------------------------------
@pytest.mark.parametrize("a", ["sqrt(x)", "-sqrt(x)"])
@pytest.mark.parametrize("nx", [41, 40], ids=["node-on-x=0", "no-node-on-x=0"])
def test_undefined_zone_gives_no_line_along_its_edge(a, nx):
    # a = +-sqrt(x), c = 1: undefined for x < 0, D = -+4 sqrt(x) does not change sign for x > 0 (algebra).
    _, type_map, result = boundaries(a, "0", "1", Domain(-1, 1, -1, 1, nx, 41))
    assert type_map.count("undefined") > 0
    assert result.curves == () and result.parabolic_regions == ()


def test_line_ending_at_an_undefined_zone():
    # a = sqrt(x) (y - 0.2), c = 1: D = -4 sqrt(x) (y - 0.2) changes sign on y = 0.2 for x > 0 (algebra).
    domain = Domain(-1, 1, -1, 1, 81, 80)
    _, _, result = boundaries("sqrt(x)*(y - 0.2)", "0", "1", domain)
    (curve,) = result.curves
    assert curve.unrefined == 0 and curve.right_type == TypeCode.ELLIPTIC
    assert np.abs(curve.points[:, 1] - 0.2).max() <= 1e-12 * domain.size
    assert curve.points[:, 0].min() >= 0 and curve.points[:, 0].max() == 1


class MachField:
    """A background quantity M(x, y) = x, standing in for a measured Mach number field."""

    def sample(self, key, x, y):
        assert key == "M"
        return np.broadcast_to(np.asarray(x, dtype=float), np.broadcast_shapes(np.shape(x), np.shape(y)))


def test_sonic_lines_from_background_data():
    # Small-disturbance potential flow (1 - M^2) phi_xx + phi_yy = 0 changes type where M = 1, the sonic
    # line (common practice, no source). With M = x the lines are x = -1 and x = 1.
    domain = Domain(-2, 2, -1, 1, 64, 31)
    _, _, result = boundaries("1 - M**2", "0", "1", domain, data_names=("M",), data=MachField())
    assert len(result.curves) == 2
    for curve in result.curves:
        assert np.abs(np.abs(curve.points[:, 0]) - 1).max() <= 1e-12 * domain.size
        assert curve.right_type == TypeCode.ELLIPTIC


def test_cancel_and_progress():
    compiled = compile_equation(Equation(a="1", b="-2*x", c="1 - y**2"))
    type_map = classify_grid(compiled, Domain(-2, 2, -2, 2, 61, 61))
    with pytest.raises(Cancelled):
        find_type_boundaries(compiled, type_map, cancel=lambda: True)
    reports = []
    result = find_type_boundaries(compiled, type_map, progress=reports.append)
    assert reports == sorted(reports) and reports[-1] == 1.0
    assert isinstance(result, TypeBoundaries) and isinstance(result.curves[0], TypeChangeCurve)
    with pytest.raises(ValueError):
        result.curves[0].points[0, 0] = 5.0       # results are read-only
    assert ParabolicRegion(outline=np.zeros((0, 2)), area=0.0).holes == ()


def test_fully_undefined_map_and_bad_tolerance():
    compiled = compile_equation(Equation(a="sqrt(x - 5)", b="0", c="1"))
    type_map = classify_grid(compiled, Domain(-1, 1, -1, 1, 11, 11))
    result = find_type_boundaries(compiled, type_map)
    assert result.curves == () and result.parabolic_regions == () and result.unrefined == 0
    with pytest.raises(ValueError, match="xtol"):
        find_type_boundaries(compiled, type_map, xtol=0.0)
