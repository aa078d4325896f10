"""Trade quantities against published tables and closed forms."""

import math

import numpy as np
import pytest

from core.data.sources import DataSources, load_data
from core.equations.compiled import compile_equation
from core.equations.equation import Equation
from core.equations.trade import (
    READOUT_UNITS,
    check_trade_spec,
    directions_about_flow,
    flow_angle,
    froude_number,
    in_frequency_window,
    internal_wave_ray_slope,
    isentropic_ratios,
    local_mach_number,
    mach_angle,
    point_values,
    small_disturbance_mach,
    trade_readout,
    wave_angle,
)
from core.results.readouts import read_trade

# NACA Report 1135 (1953), Table I, gamma = 1.4: M, mu (deg), p/p0, T/T0, rho/rho0, to the printed
# 4 significant figures. Written from memory of the table (the M = 2 row as quoted in the task brief).
NACA_1135 = [
    (1.2, 56.44, 0.4124, 0.7764, 0.5311),
    (1.5, 41.81, 0.2724, 0.6897, 0.3950),
    (2.0, 30.00, 0.1278, 0.5556, 0.2300),
    (3.0, 19.47, 0.02722, 0.3571, 0.07623),
]


@pytest.mark.parametrize(("mach", "mu", "p", "t", "rho"), NACA_1135)
def test_mach_angle_and_isentropic_ratios_match_naca_1135(mach, mu, p, t, rho):
    assert math.degrees(mach_angle(mach)) == pytest.approx(mu, abs=0.005)
    ratios = isentropic_ratios(mach, 1.4)
    assert float(ratios.pressure) == pytest.approx(p, rel=5e-4)
    assert float(ratios.temperature) == pytest.approx(t, rel=5e-4)
    assert float(ratios.density) == pytest.approx(rho, rel=5e-4)


def test_vectorised_shapes_and_undefined_values():
    mach = np.array([[0.5, 1.0], [2.0, np.nan]])
    mu = mach_angle(mach)
    assert mu.shape == (2, 2)
    assert math.isnan(mu[0, 0]) and math.isnan(mu[1, 1])                 # subsonic, unknown
    assert mu[0, 1] == pytest.approx(math.pi / 2)                        # M = 1: Mach waves normal to flow
    ratios = isentropic_ratios(np.array([0.0, -1.0]), np.array([1.4, 1.4]))
    np.testing.assert_allclose(ratios.pressure[0], 1.0)                  # at rest: stagnation state
    assert math.isnan(ratios.pressure[1])
    assert math.isnan(float(isentropic_ratios(1.0, 1.0).pressure))       # gamma = 1 is not isentropic here
    assert math.isnan(float(local_mach_number(1.0, 0.0, -1.0)))
    assert math.isnan(float(flow_angle(0.0, 0.0)))


def test_characteristics_at_flow_angle_plus_minus_mach_angle_solve_the_full_potential_equation():
    # Directions of a (dy)^2 - b dx dy + c (dx)^2 = 0 for a = c^2 - u^2, b = -2uv, c = c^2 - v^2
    c2 = 1.0
    for speed, theta in ((1.5, 0.3), (2.0, -1.0), (1.1, 2.5)):
        u, v = speed * math.cos(theta), speed * math.sin(theta)
        a, b, c = c2 - u * u, -2 * u * v, c2 - v * v
        roots = sorted(math.atan((b + s * math.sqrt(b * b - 4 * a * c)) / (2 * a)) for s in (1, -1))
        plus, minus = directions_about_flow(flow_angle(u, v), mach_angle(local_mach_number(u, v, c2)))
        wrapped = sorted(math.atan(math.tan(float(angle))) for angle in (plus, minus))
        assert wrapped == pytest.approx(roots, abs=1e-12)


def test_froude_wave_angle():
    assert float(froude_number(3.0, 4.0, 2.5, 10.0)) == pytest.approx(1.0)
    assert math.degrees(float(wave_angle(2.0))) == pytest.approx(30.0)   # arcsin(1/2), common practice
    assert math.isnan(float(wave_angle(0.8)))                             # subcritical: no standing waves
    assert math.isnan(float(froude_number(1.0, 0.0, 0.0)))                # dry bed


def test_internal_wave_ray_slope_and_window():
    # dz/dx = +-sqrt((w^2 - f^2)/(N^2 - w^2)) (Gill 1982, Atmosphere-Ocean Dynamics)
    n, f = 5e-3, 1e-4
    w = np.array([5e-5, 1e-4, 1.405e-4, 2e-3, 5e-3, 6e-3])
    slope = internal_wave_ray_slope(n, f, w)
    window = in_frequency_window(n, f, w)
    assert window.tolist() == [False, False, True, True, False, False]
    assert np.isnan(slope[~window]).all()
    np.testing.assert_allclose(slope[window], np.sqrt((w[window] ** 2 - f**2) / (n**2 - w[window] ** 2)))
    # the dispersion relation w^2 = N^2 sin^2(alpha) + f^2 cos^2(alpha), alpha the ray's angle from the
    # horizontal (common practice, no source): the same relation rearranged
    angle = np.arctan(slope[window])
    np.testing.assert_allclose(w[window] ** 2, n**2 * np.sin(angle) ** 2 + f**2 * np.cos(angle) ** 2)


def test_small_disturbance_mach_is_one_where_the_coefficient_vanishes():
    m, gamma = 0.85, 1.4
    critical = (1 - m * m) / ((gamma + 1) * m * m)
    assert float(small_disturbance_mach(m, gamma, critical)) == pytest.approx(1.0, abs=1e-12)
    assert float(small_disturbance_mach(m, gamma, 0.0)) == pytest.approx(m)
    assert math.isnan(float(small_disturbance_mach(m, gamma, -1.0)))


def test_readout_from_a_spec():
    spec = {"mach": {"u": "U", "v": "V", "c2": "a2", "gamma": "g"}}
    values = {"U": 2.0 * math.cos(0.2), "V": 2.0 * math.sin(0.2), "a2": 1.0, "g": 1.4}
    readout = trade_readout(spec, values)
    assert readout["mach"] == pytest.approx(2.0)
    assert readout["mach_angle_deg"] == pytest.approx(30.0)
    assert readout["flow_angle_deg"] == pytest.approx(math.degrees(0.2))
    assert readout["characteristic_plus_deg"] == pytest.approx(math.degrees(0.2) + 30.0)
    assert readout["pressure_ratio"] == pytest.approx(0.1278, rel=5e-4)   # NACA 1135, M = 2
    assert set(readout) <= set(READOUT_UNITS)
    subsonic = trade_readout(spec, {**values, "a2": 9.0})
    assert math.isnan(subsonic["mach_angle_deg"]) and subsonic["mach"] == pytest.approx(2 / 3)
    with pytest.raises(KeyError, match="a2"):
        trade_readout(spec, {"U": 1.0, "V": 0.0, "g": 1.4})


def test_spec_errors():
    with pytest.raises(ValueError, match="unknown trade quantity kind 'reynolds'"):
        check_trade_spec({"reynolds": {}})
    with pytest.raises(ValueError, match="needs input"):
        check_trade_spec({"froude": {"u": "u", "v": "v"}})
    with pytest.raises(ValueError, match="has no input"):
        check_trade_spec({"internal_wave": {"N": "N", "f": "f", "w": "w", "k": "k"}})
    with pytest.raises(TypeError):
        check_trade_spec(["mach"])


def test_trade_readout_at_a_point_with_profile_data(tmp_path):
    z = np.linspace(-100, 0, 11)
    np.savez(tmp_path / "cast.npz", z=z, N=np.full(11, 4e-3))
    data = DataSources([load_data(tmp_path / "cast.npz", variables=("x", "z"))])
    equation = Equation("N**2 - w**2", "0", "f**2 - w**2", variables=("x", "z"),
                        parameters={"w": _parameter(2e-3), "f": _parameter(1e-4)})
    compiled = compile_equation(equation, data_names=data.names)
    readout = read_trade({"internal_wave": {"N": "N", "f": "f", "w": "w"}}, compiled, 10.0, -50.0,
                         data=data).values
    expected = math.sqrt((4e-6 - 1e-8) / (16e-6 - 4e-6))
    assert readout["ray_slope"] == pytest.approx(expected)
    assert readout["in_window"] == 1.0
    values = point_values(compiled, 10.0, -50.0, data=data)
    assert values["N"] == pytest.approx(4e-3) and values["a"] == pytest.approx(12e-6)
    outside = read_trade({"internal_wave": {"N": "N", "f": "f", "w": "w"}}, compiled, 10.0, 50.0,
                         data=data).values
    assert math.isnan(outside["ray_slope"]) and outside["in_window"] == 0.0


def _parameter(value):
    from core.equations.equation import Parameter

    return Parameter(value)
