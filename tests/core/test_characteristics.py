"""Characteristic directions and traced characteristic curves, checked against closed-form cases."""

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from core.analysis.directions import Family, characteristic_directions, parabolic_direction
from core.analysis.tracing import END_REASONS, seeds_along_segment, trace_characteristics
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.progress import Cancelled
from core.project.model import Seed

BOX = Domain(-2.0, 2.0, -2.0, 1.0, name="box")


def compiled(a, b, c, **parameters):
    return compile_equation(Equation(a=a, b=b, c=c,
                                     parameters={k: Parameter(v) for k, v in parameters.items()}))


def angle_deg(vector) -> float:
    return math.degrees(math.atan2(vector[1], vector[0])) % 180.0


def line_angles_deg(points) -> np.ndarray:
    steps = np.diff(points, axis=0)
    return np.degrees(np.arctan2(steps[:, 1], steps[:, 0])) % 180.0


def tricomi_invariant(points, family):
    # y u_xx + u_yy = 0 in y < 0: characteristics x -+ (2/3)(-y)^(3/2) = const (Bers 1958, Mathematical
    # Aspects of Subsonic and Transonic Gas Dynamics). Family 1 has dy/dx = (b + sqrt(D))/2a = -1/sqrt(-y),
    # hence the minus sign.
    sign = -1.0 if family == Family.FIRST else 1.0
    return points[:, 0] + sign * (2.0 / 3.0) * np.maximum(-points[:, 1], 0.0) ** 1.5


# -- directions -------------------------------------------------------------------------------------------

coefficient = st.floats(-1e3, 1e3, allow_nan=False, allow_infinity=False)


@settings(max_examples=200, deadline=None)
@given(coefficient, coefficient, coefficient)
def test_directions_solve_the_characteristic_quadratic(a, b, c):
    # a dy^2 - b dx dy + c dx^2 = 0 defines the characteristic directions (common practice, no source).
    scale = b * b + 4 * abs(a * c)
    assume(scale > 1e-6 and b * b - 4 * a * c > 1e-6 * scale)
    for direction in characteristic_directions(a, b, c):
        dx, dy = direction
        assert math.hypot(dx, dy) == pytest.approx(1.0, abs=1e-12)
        assert dy > 0 or (dy == 0 and dx > 0)
        residual = a * dy * dy - b * dx * dy + c * dx * dx
        assert abs(residual) <= 1e-12 * (abs(a) + abs(b) + abs(c))
    first, second = characteristic_directions(a, b, c)
    assert abs(first[0] * second[1] - first[1] * second[0]) > 1e-9  # two distinct families


@settings(max_examples=200, deadline=None)
@given(coefficient, coefficient, coefficient, st.floats(1e-3, 1e3))
def test_directions_do_not_change_when_the_equation_is_scaled_by_a_positive_factor(a, b, c, factor):
    # Multiplying the PDE by a positive function leaves its characteristics unchanged (common practice, no
    # source); the labelling must not change either.
    scale = b * b + 4 * abs(a * c)
    assume(scale > 1e-6 and b * b - 4 * a * c > 1e-6 * scale)
    for plain, scaled in zip(characteristic_directions(a, b, c),
                             characteristic_directions(factor * a, factor * b, factor * c)):
        np.testing.assert_allclose(scaled, plain, atol=1e-12)


def test_negating_the_equation_swaps_the_family_labels():
    # (2a, b + sqrt D) for (a, b, c) equals -(2(-a), -b - sqrt D): the second family of -(a, b, c).
    first, second = characteristic_directions(0.7, -0.4, -1.3)
    negated_first, negated_second = characteristic_directions(-0.7, 0.4, 1.3)
    np.testing.assert_allclose(negated_first, second, atol=1e-15)
    np.testing.assert_allclose(negated_second, first, atol=1e-15)


def test_directions_are_nan_where_no_real_characteristic_exists():
    a = np.array([1.0, np.nan, 0.0, 1.0, 1.0])
    b = np.array([0.0, 0.0, 0.0, 0.0, 2.0])
    c = np.array([1.0, 1.0, 0.0, -np.inf, 1.0])   # elliptic, NaN, all zero, infinite, parabolic
    first, second = characteristic_directions(a, b, c)
    assert first.shape == second.shape == (5, 2)
    assert np.isnan(first[:4]).all() and np.isnan(second[:4]).all()
    # u_xx + 2u_xy + u_yy: double root dy/dx = 1 (common practice, no source).
    np.testing.assert_allclose(first[4], [math.sqrt(0.5), math.sqrt(0.5)], atol=1e-15)
    np.testing.assert_allclose(second[4], first[4], atol=1e-15)
    np.testing.assert_allclose(parabolic_direction(1.0, 2.0, 1.0), first[4], atol=1e-15)
    # Slightly elliptic points count as parabolic within a tolerance on D / (b^2 + 4|ac|).
    assert np.isnan(characteristic_directions(1.0, 2.0, 1.0 + 1e-9)[0]).all()
    near = characteristic_directions(1.0, 2.0, 1.0 + 1e-9, tolerance=1e-8)[0]
    np.testing.assert_allclose(near, first[4], atol=1e-12)


def test_mixed_derivative_only_has_the_coordinate_axes_as_characteristics():
    # u_xy = 0 (a = 0, b = 1, c = 0): characteristics x = const and y = const (common practice, no source);
    # a = 0 must not be divided by.
    first, second = characteristic_directions(0.0, 1.0, 0.0)
    np.testing.assert_array_equal(first, [0.0, 1.0])
    np.testing.assert_array_equal(second, [1.0, 0.0])
    first, second = characteristic_directions(0.0, -1.0, 0.0)
    np.testing.assert_array_equal(first, [1.0, 0.0])
    np.testing.assert_array_equal(second, [0.0, 1.0])
    curves = trace_characteristics(compiled("0", "1", "0"), BOX, [(0.25, -0.5)])
    vertical, horizontal = curves
    np.testing.assert_array_equal(vertical.points[:, 0], 0.25)
    np.testing.assert_array_equal(horizontal.points[:, 1], -0.5)
    assert vertical.points[[0, -1], 1].tolist() == [BOX.ymin, BOX.ymax]
    assert horizontal.points[[0, -1], 0].tolist() == [BOX.xmin, BOX.xmax]
    assert vertical.end_reasons == horizontal.end_reasons == ("edge", "edge")


def test_directions_on_a_grid():
    # Tricomi: slopes -+1/sqrt(-y) below the sonic line, none above (Bers 1958).
    x, y = np.meshgrid([-1.0, 0.0, 1.0], [-0.25, 0.5])
    first, second = characteristic_directions(*compiled("y", "0", "1").coefficients(x, y))
    assert first.shape == (2, 3, 2)
    np.testing.assert_array_equal(np.isfinite(first[..., 0]), [[True] * 3, [False] * 3])
    np.testing.assert_allclose(first[0, :, 1] / first[0, :, 0], -2.0, rtol=1e-14)
    np.testing.assert_allclose(second[0, :, 1] / second[0, :, 0], 2.0, rtol=1e-14)


# -- tracing against closed forms ---------------------------------------------------------------------------

def test_wave_equation_characteristics_are_straight_lines_at_45_degrees():
    # u_xx - u_yy = 0: x - y = const and x + y = const (d'Alembert; common practice, no source).
    first, second = trace_characteristics(compiled("1", "0", "-1"), BOX, [(0.1, 0.2)])
    np.testing.assert_allclose(first.points[:, 0] - first.points[:, 1], -0.1, atol=1e-13)
    np.testing.assert_allclose(second.points[:, 0] + second.points[:, 1], 0.3, atol=1e-13)
    np.testing.assert_allclose(line_angles_deg(first.points), 45.0, atol=1e-9)
    np.testing.assert_allclose(line_angles_deg(second.points), 135.0, atol=1e-9)
    np.testing.assert_allclose(first.points[[0, -1]], [[-2.0, -1.9], [0.9, 1.0]], atol=1e-13)
    np.testing.assert_allclose(second.points[[0, -1]], [[2.0, -1.7], [-0.7, 1.0]], atol=1e-13)
    assert first.end_reasons == second.end_reasons == ("edge", "edge")
    np.testing.assert_array_equal(first.points[first.seed_index], [0.1, 0.2])


@pytest.mark.parametrize(("mach", "mach_angle_deg"), [(2.0, 30.0), (1.5, 41.81)])
@pytest.mark.parametrize("flow_deg", [0.0, 25.0])
def test_supersonic_flow_characteristics_are_mach_lines(mach, mach_angle_deg, flow_deg):
    # Full potential equation for a uniform flow of Mach number M in direction theta, divided by the sound
    # speed squared: (1 - Mx^2) u_xx - 2 Mx My u_xy + (1 - My^2) u_yy (common practice, no source). Its
    # characteristics are the Mach lines at theta +- mu, mu = arcsin(1/M), tabulated in NACA Report 1135
    # (1953): 30.00 deg at M = 2, 41.81 deg at M = 1.5.
    equation = compiled("1 - (M*cos(t))**2", "-2*M**2*cos(t)*sin(t)", "1 - (M*sin(t))**2",
                        M=mach, t=math.radians(flow_deg))
    a, b, c = (float(v) for v in equation.coefficients(0.0, 0.0))
    assert math.degrees(math.asin(1 / mach)) == pytest.approx(mach_angle_deg, abs=0.005)
    expected = sorted([(flow_deg + mach_angle_deg) % 180, (flow_deg - mach_angle_deg) % 180])
    found = sorted(angle_deg(d) for d in characteristic_directions(a, b, c))
    np.testing.assert_allclose(found, expected, atol=0.005)
    curves = trace_characteristics(equation, BOX, [(0.3, -0.4)])
    for curve in curves:
        angles = line_angles_deg(curve.points)
        assert np.ptp(angles) < 1e-8                     # straight
        assert min(abs(angles[0] - e) for e in expected) < 0.005
    gap = abs(line_angles_deg(curves[0].points)[0] - line_angles_deg(curves[1].points)[0])
    assert min(gap, 180 - gap) == pytest.approx(2 * mach_angle_deg, abs=0.01)   # 2 mu <= 90 here


def test_tricomi_characteristics_keep_their_invariant_and_land_on_the_sonic_line():
    equation = compiled("y", "0", "1")
    seeds = np.array([[0.0, -1.0], [0.5, -0.3], [-1.2, -0.01], [1.1, -1e-5], [-0.4, -1e-11], [0.7, 0.0]])
    curves = trace_characteristics(equation, BOX, seeds)
    assert len(curves) == 2 * len(seeds)
    for k, curve in enumerate(curves):
        assert curve.family == (Family.FIRST if k % 2 == 0 else Family.SECOND)
        np.testing.assert_array_equal(curve.seed, seeds[k // 2])
        np.testing.assert_array_equal(curve.points[curve.seed_index], seeds[k // 2])
        invariant = tricomi_invariant(curve.points, curve.family)
        assert np.abs(invariant - invariant[curve.seed_index]).max() <= 1e-7
        # Forward is upwards: towards the sonic line, where the curve lands without crossing.
        assert curve.end_reasons[1] == "type_change"
        assert -1e-10 <= curve.points[-1, 1] <= 0.0
        assert (curve.points[:, 1] <= 0.0).all()
        # Backward it runs down to an edge and ends exactly on it.
        assert curve.end_reasons[0] == "edge"
        start = curve.points[0]
        assert start[1] == BOX.ymin or start[0] in (BOX.xmin, BOX.xmax)
    # A seed on the sonic line itself: the two families leave it as the two branches of a cusp.
    on_line = curves[-2:]
    assert [len(c.points) - 1 for c in on_line] == [c.seed_index for c in on_line]
    assert on_line[0].points[0, 0] > 0.7 > on_line[1].points[0, 0]


def test_keldysh_characteristics_touch_the_type_change_line_tangentially():
    # u_xx + y u_yy = 0 (a = 1, b = 0, c = y), hyperbolic for y < 0. Derived here: dy/dx = (b +- sqrt D)/2a
    # = +-sqrt(-y), so x +- 2 sqrt(-y) = const, i.e. the parabolas y = -(x - x0)^2 / 4, which touch y = 0 at
    # x0 with zero slope (tangential contact, as described by Otway, The Dirichlet Problem for
    # Elliptic-Hyperbolic Equations of Keldysh Type, 2012 -- from memory). Near y = 0 the invariant itself
    # is ill-conditioned, so the check is the residual y + (x - x0)^2 / 4 of the parabola.
    equation = compiled("1", "0", "y")
    seeds = np.array([[0.3, -0.5], [-0.6, -0.04]])
    curves = trace_characteristics(equation, BOX, seeds)
    for curve in curves:
        seed = curve.seed
        sign = 1.0 if curve.family == Family.FIRST else -1.0
        x0 = seed[0] + sign * 2.0 * math.sqrt(-seed[1])
        residual = curve.points[:, 1] + (curve.points[:, 0] - x0) ** 2 / 4.0
        assert np.abs(residual).max() <= 1e-7
        assert curve.end_reasons == ("edge", "type_change")
        end = curve.points[-1]
        assert -1e-10 <= end[1] <= 0.0
        assert end[0] == pytest.approx(x0, abs=1e-4)
        last = curve.points[-1] - curve.points[-2]
        assert abs(last[1] / last[0]) < 1e-3           # arriving flat: tangent to y = 0


def test_curves_are_invariant_when_the_equation_is_scaled_by_a_positive_function():
    # (1 + x^2)(y u_xx + u_yy) = 0 has the characteristics of the Tricomi equation (common practice).
    plain = trace_characteristics(compiled("y", "0", "1"), BOX, [(0.2, -0.6)])
    scaled = trace_characteristics(compiled("y*(1 + x**2)", "0", "1 + x**2"), BOX, [(0.2, -0.6)])
    for p, s in zip(plain, scaled):
        assert p.end_reasons == s.end_reasons
        np.testing.assert_allclose(s.points[[0, -1]], p.points[[0, -1]], atol=1e-8)


@pytest.mark.parametrize(("a", "b", "c", "seed"), [
    ("y", "0", "1", (0.3, -0.7)),
    ("1", "-2*x", "1 - y**2", (1.5, 0.5)),   # hyperbolic outside the unit circle
    ("1 - (2*cos(t))**2", "-2*4*cos(t)*sin(t)", "1 - (2*sin(t))**2", (0.0, 0.0)),
    ("sin(3*x)", "1", "y", (0.1, -0.3)),
])
def test_orientation_never_turns_back(a, b, c, seed):
    equation = compile_equation(Equation(a=a, b=b, c=c, parameters={"t": Parameter(1.2)}))
    for curve in trace_characteristics(equation, BOX, [seed]):
        assert len(curve.points) > 5
        steps = np.diff(curve.points, axis=0)
        assert (np.einsum("ij,ij->i", steps[1:], steps[:-1]) > 0).all()
        assert set(curve.end_reasons) <= set(END_REASONS)


# -- stops and seeds ----------------------------------------------------------------------------------------

def test_seeds_without_characteristics_give_one_point_curves():
    equation = compiled("y", "0", "1")
    seeds = [(0.0, 0.5), (5.0, -1.0), (0.0, -0.5)]
    curves = trace_characteristics(equation, BOX, seeds, families=(2,))
    assert [c.end_reasons for c in curves[:2]] == [("elliptic_seed", "elliptic_seed"),
                                                   ("outside_seed", "outside_seed")]
    for curve, seed in zip(curves[:2], seeds):
        np.testing.assert_array_equal(curve.points, [seed])
        assert curve.seed_index == 0 and curve.family == Family.SECOND and curve.length == 0.0
    assert len(curves[2].points) > 2
    undefined = trace_characteristics(compiled("log(x)", "0", "1"), BOX, [(-1.0, 0.0)])
    assert [c.end_reasons for c in undefined] == [("undefined_seed", "undefined_seed")] * 2


class HalfPlaneData:
    """Background quantity q = 1 for x < 0.5, undefined (NaN) beyond: a data set with a hole."""

    def sample(self, key, x, y):
        x = np.asarray(x, dtype=np.float64)
        return np.where(x < 0.5, 1.0, np.nan) + 0.0 * np.asarray(y)


def test_curves_stop_where_the_data_are_undefined():
    equation = compile_equation(Equation(a="1", b="0", c="-q"), data_names=("q",))
    first, second = trace_characteristics(equation, BOX, [(0.0, 0.0)], data=HalfPlaneData())
    assert first.end_reasons == ("edge", "undefined")
    assert second.end_reasons == ("undefined", "edge")
    assert first.points[-1, 0] == pytest.approx(0.5, abs=1e-9) and first.points[-1, 0] < 0.5
    assert second.points[0, 0] == pytest.approx(0.5, abs=1e-9)


def test_length_and_step_limits():
    equation = compiled("1", "0", "-1")
    first = trace_characteristics(equation, BOX, [(0.0, 0.0)], families=(1,), max_length=0.5)[0]
    assert first.end_reasons == ("length", "length")
    assert first.length == pytest.approx(1.0, abs=1e-9)
    np.testing.assert_allclose(first.points[-1], [0.5 / math.sqrt(2)] * 2, atol=1e-9)
    short = trace_characteristics(equation, BOX, [(0.0, 0.0)], families=(1,), max_steps=3)[0]
    assert short.end_reasons == ("steps", "steps")
    assert len(short.points) == 7


def test_cancel_and_progress():
    equation = compiled("y", "0", "1")
    seeds = seeds_along_segment((-1.0, -0.5), (1.0, -0.5), 5)
    reports = []
    trace_characteristics(equation, BOX, seeds, progress=reports.append)
    assert reports == sorted(reports) and reports[-1] == 1.0 and 0.0 <= reports[0] < 1.0
    with pytest.raises(Cancelled):
        trace_characteristics(equation, BOX, seeds, cancel=lambda: True)


def test_seeds_along_a_segment_and_nets():
    np.testing.assert_allclose(seeds_along_segment((0, 0), (1, 2), 3), [[0, 0], [0.5, 1], [1, 2]])
    np.testing.assert_allclose(seeds_along_segment((0, 0), (1, 2), 1), [[0.5, 1]])
    equation = compiled("1", "0", "-1")
    family = trace_characteristics(equation, BOX, seeds_along_segment((-1.0, 0.0), (1.0, 0.0), 4), families=(2,))
    assert [c.family for c in family] == [Family.SECOND] * 4
    for curve in family:   # x + y = const through each seed
        np.testing.assert_allclose(curve.points.sum(axis=1), curve.seed.sum(), atol=1e-13)
    # A net: both families through the same seeds, seed by seed (as a segment seed of a project traces).
    seeds = Seed(start=(-1.0, 0.0), end=(1.0, 0.0), curves=3).points()
    np.testing.assert_array_equal(seeds, seeds_along_segment((-1.0, 0.0), (1.0, 0.0), 3))
    net = trace_characteristics(equation, BOX, seeds)
    first, second = net[0::2], net[1::2]
    assert len(net) == 6
    assert all(c.family == Family.FIRST for c in first)
    assert all(c.family == Family.SECOND for c in second)
    for k, seed in enumerate(seeds):
        np.testing.assert_array_equal(first[k].seed, seed)
        np.testing.assert_array_equal(second[k].seed, seed)


@pytest.mark.parametrize(("kwargs", "message"), [
    ({"seeds": np.zeros((3, 3))}, r"\(m, 2\), got \(3, 3\)"),
    ({"seeds": [[0.0, np.nan]]}, "finite"),
    ({"families": (3,)}, "1 and/or 2"),
    ({"families": ()}, "at least one"),
    ({"local_error": 0.0}, r"\(0, 0.01\], got 0.0"),
    ({"max_length": -1.0}, "got -1.0"),
    ({"max_steps": 0}, "got 0"),
])
def test_bad_options_are_reported(kwargs, message):
    options = {"seeds": [(0.0, -0.5)], **kwargs}
    with pytest.raises(ValueError, match=message):
        trace_characteristics(compiled("y", "0", "1"), BOX, options.pop("seeds"), **options)
    with pytest.raises(ValueError, match=r"got 0"):
        seeds_along_segment((0, 0), (1, 1), 0)


@pytest.mark.parametrize("scale", ["1e-170", "1e160"])
def test_tracing_does_not_depend_on_the_size_of_the_coefficients(scale):
    # The wave equation times a constant: the same straight characteristics x -+ y = const (common practice,
    # no source), traced point for point as the unscaled equation's (scaling by a power of two is exact).
    plain = trace_characteristics(compiled("1", "0", "-1"), BOX, [(0.1, 0.2)])
    scaled = trace_characteristics(compiled(scale, "0", f"-{scale}"), BOX, [(0.1, 0.2)])
    for one, other in zip(plain, scaled):
        assert other.end_reasons == one.end_reasons == ("edge", "edge")
        np.testing.assert_allclose(other.points, one.points, rtol=0, atol=1e-13)
