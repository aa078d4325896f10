"""Point readouts: type, coefficients, characteristic angles, principal axes, JSON form."""

import json
import math

import numpy as np
import pytest

from core.analysis.classify import TypeCode, classify_points
from core.analysis.probe import probe_point
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.results.document import probe_to_dict

SQUARE = Domain(-1.0, 1.0, -1.0, 1.0, name="square")


def compiled(a, b, c, definitions=None, **parameters):
    return compile_equation(Equation(a=a, b=b, c=c, definitions=definitions or {},
                                     parameters={k: Parameter(v) for k, v in parameters.items()}))


FLOW = ("1 - (M*cos(t))**2", "-2*M**2*cos(t)*sin(t)", "1 - (M*sin(t))**2")


@pytest.mark.parametrize(("mach", "mach_angle_deg"), [(2.0, 30.0), (1.5, 41.81)])
@pytest.mark.parametrize("flow_deg", [0.0, 20.0])
def test_mach_lines_at_a_point(mach, mach_angle_deg, flow_deg):
    # Uniform flow at Mach M in direction theta (full potential equation over the sound speed squared):
    # characteristics at theta +- mu with mu = arcsin(1/M), tabulated in NACA Report 1135 (1953):
    # 30.00 deg at M = 2, 41.81 deg at M = 1.5. The angle between the two Mach lines is 2 mu.
    result = probe_point(compiled(*FLOW, M=mach, t=math.radians(flow_deg)), 0.2, 0.1)
    assert result.type is TypeCode.HYPERBOLIC
    assert result.discriminant == pytest.approx(4 * (mach**2 - 1), rel=1e-12)   # D = 4(M^2 - 1)
    expected = sorted([(flow_deg + mach_angle_deg) % 180, (flow_deg - mach_angle_deg) % 180])
    np.testing.assert_allclose(sorted(result.directions_deg), expected, atol=0.005)
    assert result.angle_between_deg == pytest.approx(2 * mach_angle_deg, abs=0.01)
    for angle, slope in zip(result.directions_deg, result.slopes):
        assert 0.0 <= angle < 180.0
        assert slope == pytest.approx(math.tan(math.radians(angle)), rel=1e-12)
    assert result.principal_axes_deg is None and result.anisotropy is None


def test_tricomi_readouts():
    # y u_xx + u_yy: D = -4y, characteristic slopes dy/dx = -+1/sqrt(-y) below y = 0 (Bers 1958,
    # Mathematical Aspects of Subsonic and Transonic Gas Dynamics).
    equation = compiled("y", "0", "1")
    below = probe_point(equation, 0.3, -0.25)
    assert below.type is TypeCode.HYPERBOLIC
    assert (below.a, below.b, below.c) == (-0.25, 0.0, 1.0)
    assert below.discriminant == 1.0 and below.normalized == 1.0
    assert below.slopes == pytest.approx((-2.0, 2.0), rel=1e-14)
    assert below.directions_deg == pytest.approx((180 - math.degrees(math.atan(2)), math.degrees(math.atan(2))))
    assert below.angle_between_deg == pytest.approx(180 - 2 * math.degrees(math.atan(2)))
    on_line = probe_point(equation, 0.3, 0.0)
    assert on_line.type is TypeCode.PARABOLIC
    assert on_line.directions_deg == (90.0,) and on_line.slopes == (None,)    # cusps meet it at right angles
    assert on_line.angle_between_deg == 0.0
    above = probe_point(equation, 0.3, 0.5)
    assert above.type is TypeCode.ELLIPTIC
    assert above.directions_deg == () and above.slopes == () and above.angle_between_deg is None
    # 0.5 u_xx + u_yy: the larger eigenvalue (1) is along y; Laplace after dividing y by sqrt(2).
    assert above.principal_axes_deg == (90.0, 0.0)
    assert above.anisotropy == pytest.approx(math.sqrt(2.0), rel=1e-14)


@pytest.mark.parametrize(("a", "b", "c", "axes", "ratio"), [
    # [[3, 1], [1, 3]]: eigenvalues 4 along 45 deg and 2 along 135 deg (common practice, no source).
    (3.0, 2.0, 3.0, (45.0, 135.0), math.sqrt(2.0)),
    # The same, negative definite: still the axis of larger |eigenvalue| first.
    (-3.0, -2.0, -3.0, (45.0, 135.0), math.sqrt(2.0)),
    # [[1, -1.5], [-1.5, 5]]: eigenvalues 3 -+ sqrt(6.25) = 0.5, 5.5.
    (1.0, -3.0, 5.0, None, math.sqrt(11.0)),
    (2.0, 0.0, 2.0, (0.0, 90.0), 1.0),   # isotropic: any axes, ratio 1
])
def test_elliptic_principal_axes(a, b, c, axes, ratio):
    result = probe_point(compiled(str(a), str(b), str(c)), 0.0, 0.0)
    assert result.type is TypeCode.ELLIPTIC
    assert result.anisotropy == pytest.approx(ratio, rel=1e-12)
    if axes is not None:
        np.testing.assert_allclose(result.principal_axes_deg, axes, atol=1e-12)
    # Reference: numpy.linalg.eigh on the coefficient matrix.
    values, vectors = np.linalg.eigh([[a, b / 2], [b / 2, c]])
    major = int(np.argmax(np.abs(values)))
    reference = math.degrees(math.atan2(vectors[1, major], vectors[0, major])) % 180.0
    if ratio != 1.0:
        gap = abs(result.principal_axes_deg[0] - reference) % 180.0
        assert min(gap, 180.0 - gap) < 1e-9
    assert abs(result.principal_axes_deg[0] - result.principal_axes_deg[1]) == pytest.approx(90.0)


def test_mixed_derivative_only():
    # u_xy = 0: characteristics along the axes (common practice, no source).
    result = probe_point(compiled("0", "1", "0"), 0.5, 0.5)
    assert result.directions_deg == (90.0, 0.0)
    assert result.slopes == (None, 0.0)
    assert result.angle_between_deg == 90.0


def test_undefined_coefficients_are_named_not_raised():
    equation = compiled("log(x)", "0", "1/x", definitions={"r": "sqrt(x)"})
    result = probe_point(equation, -1.0, 0.0)
    assert result.type is TypeCode.UNDEFINED
    assert math.isnan(result.a) and math.isnan(result.discriminant) and math.isnan(result.normalized)
    assert result.c == -1.0
    assert "coefficient a is not finite (a = nan)" in result.message
    assert "definition r = nan is not finite" in result.message
    at_zero = probe_point(equation, 0.0, 0.0)
    assert "coefficients a, c are not finite (a = -inf, c = inf)" in at_zero.message
    record = probe_to_dict(at_zero)
    assert record["coefficients"] == {"a": None, "b": 0.0, "c": None}
    assert record["type"] == "undefined" and record["discriminant"] is None
    json.dumps(record, allow_nan=False)


def test_definitions_outside_points_and_json():
    equation = compiled("1 - M**2*q", "0", "1", definitions={"q": "x**2"}, M=2.0)
    result = probe_point(equation, 1.5, 0.0, domain=SQUARE)
    assert result.definitions == {"q": 2.25}
    assert result.a == 1 - 4 * 2.25
    assert not result.inside
    assert "outside domain 'square'" in result.message and "computed all the same" in result.message
    assert probe_point(equation, 0.5, 0.0, domain=SQUARE).inside
    assert probe_point(equation, 1.5, 0.0).inside     # no domain, nothing to be outside of
    record = probe_to_dict(result)
    assert record == json.loads(json.dumps(record, allow_nan=False))
    assert record["point"] == [1.5, 0.0]
    assert record["type"] == "hyperbolic"
    assert record["definitions"] == {"q": 2.25}
    assert record["directions_deg"] == list(result.directions_deg)
    assert record["principal_axes_deg"] is None and record["inside"] is False
    assert set(record) == {"point", "type", "coefficients", "discriminant", "normalized_discriminant",
                           "directions_deg", "slopes", "angle_between_deg", "principal_axes_deg",
                           "anisotropy", "definitions", "inside", "message"}


def test_type_agrees_with_the_map_rule():
    equation = compiled("1", "-2*x", "1 - y**2")
    rng = np.random.default_rng(7)
    for x, y in rng.uniform(-2, 2, (40, 2)):
        code, normalized = classify_points(equation, x, y)
        result = probe_point(equation, x, y)
        assert result.type == int(code)
        assert result.normalized == float(normalized)


def test_no_second_order_part_and_bad_points():
    result = probe_point(compiled("0", "0", "0"), 0.0, 0.0)
    assert result.type is TypeCode.PARABOLIC
    assert result.directions_deg == () and result.angle_between_deg is None
    assert "a = b = c = 0" in result.message
    with pytest.raises(ValueError, match=r"\(nan, 0.0\)"):
        probe_point(compiled("1", "0", "1"), math.nan, 0.0)


@pytest.mark.parametrize("scale", [1e-170, 1e160])
def test_a_discriminant_beyond_double_range_keeps_type_and_directions(scale):
    # 2 u_xx + 3 u_xy - 2 u_yy scaled: D = 25 scale^2, hyperbolic; directions solve 2 dy^2 - 3 dx dy - 2 dx^2 = 0,
    # dy/dx = 2 or -1/2 (algebra), whatever the scale.
    plain = probe_point(compiled("2", "3", "-2"), 0.0, 0.0)
    scaled = probe_point(compiled(f"2*{scale!r}", f"3*{scale!r}", f"-2*{scale!r}"), 0.0, 0.0)
    assert plain.type == scaled.type == TypeCode.HYPERBOLIC
    assert sorted(scaled.slopes) == pytest.approx([-0.5, 2.0], rel=1e-15)
    assert scaled.directions_deg == pytest.approx(plain.directions_deg, abs=1e-12)
    assert plain.discriminant == pytest.approx(25.0) and math.isnan(scaled.discriminant)
    assert "beyond double precision" in scaled.message and "beyond" not in plain.message
