"""Quantities the trades read off a mixed-type problem: Mach and Froude numbers, wave and ray angles.

Vectorised functions over numpy arrays (float64 in, float64 out, broadcasting), each NaN exactly where the
quantity does not exist (a Mach angle in subsonic flow, a ray outside the frequency window), plus
``trade_readout``, which turns a template's trade spec and the values at one point into the numbers a probe
panel shows. Angles from the functions are in radians; readout angles are in degrees (keys end in ``_deg``).

Formulas (common practice): Mach angle mu = arcsin(1/M) and isentropic ratios as in NACA Report 1135
(1953); sonic speed c* = c0 sqrt(2/(gamma+1)); full-potential characteristics at theta +- mu; shallow-water
wave angle arcsin(1/Fr) (the hydraulic analogy); internal-wave rays dz/dx = +-sqrt((w^2-f^2)/(N^2-w^2))
(Gill 1982, Atmosphere-Ocean Dynamics).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

__all__ = [
    "READOUT_UNITS",
    "TRADE_INPUTS",
    "IsentropicRatios",
    "check_trade_spec",
    "directions_about_flow",
    "flow_angle",
    "froude_number",
    "in_frequency_window",
    "internal_wave_ray_slope",
    "isentropic_ratios",
    "local_mach_number",
    "mach_angle",
    "point_values",
    "small_disturbance_mach",
    "trade_readout",
    "wave_angle",
]

# kind -> (required inputs, optional inputs); a template's trade spec maps each input to a name whose value
# is known at a point (a definition, parameter, data quantity or variable).
TRADE_INPUTS: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "mach": (("u", "v", "c2"), ("gamma",)),
    "small_disturbance": (("Minf", "gamma", "phix"), ()),
    "froude": (("u", "v", "h", "g"), ()),
    "internal_wave": (("N", "f", "w"), ()),
}

READOUT_UNITS: dict[str, str] = {
    "speed": "velocity unit of the data",
    "mach": "dimensionless",
    "flow_angle_deg": "deg",
    "mach_angle_deg": "deg",
    "characteristic_plus_deg": "deg",
    "characteristic_minus_deg": "deg",
    "pressure_ratio": "dimensionless (p/p0)",
    "temperature_ratio": "dimensionless (T/T0)",
    "density_ratio": "dimensionless (rho/rho0)",
    "celerity": "velocity unit of the data (sqrt(g h))",
    "froude": "dimensionless",
    "wave_angle_deg": "deg",
    "ray_slope": "dimensionless (|dz/dx|)",
    "ray_angle_deg": "deg from the horizontal",
    "in_window": "1 if f < w < N else 0",
}


def _f64(*values) -> list[np.ndarray]:
    return [np.asarray(v, dtype=np.float64) for v in values]


def local_mach_number(u, v, c2) -> np.ndarray:
    """M = sqrt(u^2 + v^2) / c from velocity components and the squared sound speed (NaN where c2 <= 0)."""
    u, v, c2 = _f64(u, v, c2)
    with np.errstate(all="ignore"):
        return np.where(c2 > 0, np.sqrt((u * u + v * v) / c2), np.nan)


def flow_angle(u, v) -> np.ndarray:
    """theta = atan2(v, u) in radians, in (-pi, pi]; NaN where the flow is at rest (no direction)."""
    u, v = _f64(u, v)
    with np.errstate(all="ignore"):
        return np.where((u != 0) | (v != 0), np.arctan2(v, u), np.nan)


def mach_angle(mach) -> np.ndarray:
    """mu = arcsin(1/M) in radians for M >= 1; NaN for subsonic flow, where there are no Mach waves."""
    (mach,) = _f64(mach)
    with np.errstate(all="ignore"):
        return np.where(mach >= 1, np.arcsin(1.0 / np.where(mach >= 1, mach, 1.0)), np.nan)


def wave_angle(froude) -> np.ndarray:
    """arcsin(1/Fr) in radians for Fr >= 1 (supercritical flow); NaN for subcritical flow."""
    return mach_angle(froude)


def directions_about_flow(theta, mu) -> tuple[np.ndarray, np.ndarray]:
    """(theta + mu, theta - mu): the directions of the two characteristic families (radians)."""
    theta, mu = _f64(theta, mu)
    return theta + mu, theta - mu


@dataclass(frozen=True)
class IsentropicRatios:
    """Stagnation ratios p/p0, T/T0, rho/rho0 (dimensionless arrays of the broadcast shape of M, gamma)."""

    pressure: np.ndarray
    temperature: np.ndarray
    density: np.ndarray


def isentropic_ratios(mach, gamma=1.4) -> IsentropicRatios:
    """T/T0 = 1/(1 + (gamma-1)/2 M^2), p/p0 = (T/T0)^(gamma/(gamma-1)), rho/rho0 = (T/T0)^(1/(gamma-1)).

    NaN where M < 0 or gamma <= 1 (no isentropic perfect gas).
    """
    mach, gamma = _f64(mach, gamma)
    valid = (mach >= 0) & (gamma > 1)
    with np.errstate(all="ignore"):
        g = np.where(gamma > 1, gamma, np.nan)
        temperature = np.where(valid, 1.0 / (1.0 + 0.5 * (g - 1.0) * mach * mach), np.nan)
        pressure = temperature ** (g / (g - 1.0))
        density = temperature ** (1.0 / (g - 1.0))
    return IsentropicRatios(pressure=pressure, temperature=temperature, density=density)


def small_disturbance_mach(free_stream_mach, gamma, phix) -> np.ndarray:
    """Local Mach number of the small-disturbance theory: M^2 = Minf^2 (1 + (gamma+1) phi_x).

    Consistent with the equation's coefficient 1 - Minf^2 - (gamma+1) Minf^2 phi_x = 1 - M^2, so M = 1
    exactly on its type-change line; NaN where the estimate of M^2 is negative.
    """
    m, gamma, phix = _f64(free_stream_mach, gamma, phix)
    with np.errstate(all="ignore"):
        squared = m * m * (1.0 + (gamma + 1.0) * phix)
        return np.where(squared >= 0, np.sqrt(np.maximum(squared, 0.0)), np.nan)


def froude_number(u, v, h, g=9.81) -> np.ndarray:
    """Fr = sqrt(u^2 + v^2) / sqrt(g h): depth-averaged speed over the shallow-water wave speed (NaN if h<=0)."""
    u, v, h, g = _f64(u, v, h, g)
    with np.errstate(all="ignore"):
        return np.where((h > 0) & (g > 0), np.sqrt((u * u + v * v) / (g * h)), np.nan)


def in_frequency_window(buoyancy_frequency, coriolis, frequency) -> np.ndarray:
    """True where f < w < N: internal inertia-gravity waves of frequency w propagate (|f| is used)."""
    n, f, w = _f64(buoyancy_frequency, coriolis, frequency)
    return (np.abs(f) < w) & (w < n)


def internal_wave_ray_slope(buoyancy_frequency, coriolis, frequency) -> np.ndarray:
    """|dz/dx| = sqrt((w^2 - f^2)/(N^2 - w^2)) of internal-wave rays (Gill 1982); NaN outside f < w < N."""
    n, f, w = _f64(buoyancy_frequency, coriolis, frequency)
    inside = in_frequency_window(n, f, w)
    with np.errstate(all="ignore"):
        return np.where(inside, np.sqrt((w * w - f * f) / np.where(inside, n * n - w * w, 1.0)), np.nan)


# -- readout for one point -------------------------------------------------------------------------------
def check_trade_spec(spec: Mapping[str, Mapping[str, str]]) -> None:
    """Raise ValueError (TypeError for wrong types) unless every kind is known and its inputs are named."""
    if not isinstance(spec, Mapping):
        raise TypeError(f"a trade spec maps kinds to inputs, got {type(spec).__name__}")
    for kind, inputs in spec.items():
        if kind not in TRADE_INPUTS:
            raise ValueError(f"unknown trade quantity kind {kind!r}; expected one of {', '.join(TRADE_INPUTS)}")
        required, optional = TRADE_INPUTS[kind]
        if not isinstance(inputs, Mapping):
            raise TypeError(f"trade {kind!r}: inputs must map input names to value names")
        missing = [name for name in required if name not in inputs]
        unknown = [name for name in inputs if name not in required + optional]
        if missing:
            raise ValueError(f"trade {kind!r} needs input(s) {', '.join(missing)}")
        if unknown:
            raise ValueError(f"trade {kind!r} has no input(s) {', '.join(unknown)}; it takes "
                             f"{', '.join(required + optional)}")
        for name, source in inputs.items():
            if not isinstance(source, str) or not source:
                raise ValueError(f"trade {kind!r}: input {name!r} must name a value, got {source!r}")


def trade_readout(template_or_spec, values: Mapping[str, float]) -> dict[str, float]:
    """The trade quantities at one point, in a fixed order, NaN where a quantity does not exist there.

    ``template_or_spec`` is a core.equations.templates.Template or its ``trade`` mapping, e.g.
    {"mach": {"u": "u", "v": "v", "c2": "c2", "gamma": "gamma"}}; ``values`` holds the values at the point
    of every name the spec uses (definitions, parameters, data quantities, variables). Units: READOUT_UNITS.
    """
    spec = getattr(template_or_spec, "trade", template_or_spec)
    check_trade_spec(spec)
    result: dict[str, float] = {}
    for kind, inputs in spec.items():
        missing = sorted({source for source in inputs.values() if source not in values})
        if missing:
            raise KeyError(f"trade {kind!r} needs the value(s) of {', '.join(missing)} at the point")
        given = {name: float(values[source]) for name, source in inputs.items()}
        result.update(_READOUTS[kind](given))
    return result


def point_values(compiled, x: float, y: float, *, parameters: Mapping[str, float] | None = None,
                 data=None, extra_data: tuple[str, ...] = ()) -> dict[str, float]:
    """Every value known at the point (x, y) of a core.equations.equation.CompiledEquation, as floats.

    Variables, parameters, the data keys the equation uses plus ``extra_data`` keys, every definition and
    a, b, c: what ``trade_readout`` and a probe panel need.
    """
    x, y = float(x), float(y)
    values = {compiled.variables[0]: x, compiled.variables[1]: y}
    values.update(compiled.parameter_vector(parameters))
    if data is not None:
        for key in dict.fromkeys((*compiled.data_keys, *extra_data)):
            values[key] = float(np.asarray(data.sample(key, np.float64(x), np.float64(y))))
    evaluated = compiled.evaluate(np.float64(x), np.float64(y), parameters=parameters, data=data)
    values.update({name: float(value) for name, value in evaluated.items()})
    return values


def _degrees(radians) -> float:
    value = float(radians)
    return math.degrees(value) if math.isfinite(value) else math.nan


def _ratios(mach: float, gamma: float) -> dict[str, float]:
    ratios = isentropic_ratios(mach, gamma)
    return {"pressure_ratio": float(ratios.pressure), "temperature_ratio": float(ratios.temperature),
            "density_ratio": float(ratios.density)}


def _mach_readout(given: dict[str, float]) -> dict[str, float]:
    u, v = given["u"], given["v"]
    mach = float(local_mach_number(u, v, given["c2"]))
    theta, mu = flow_angle(u, v), mach_angle(mach)
    plus, minus = directions_about_flow(theta, mu)
    result = {"speed": math.hypot(u, v), "mach": mach, "flow_angle_deg": _degrees(theta),
              "mach_angle_deg": _degrees(mu), "characteristic_plus_deg": _degrees(plus),
              "characteristic_minus_deg": _degrees(minus)}
    if "gamma" in given:
        result.update(_ratios(mach, given["gamma"]))
    return result


def _small_disturbance_readout(given: dict[str, float]) -> dict[str, float]:
    mach = float(small_disturbance_mach(given["Minf"], given["gamma"], given["phix"]))
    mu = mach_angle(mach)
    return {"mach": mach, "mach_angle_deg": _degrees(mu), "characteristic_plus_deg": _degrees(mu),
            "characteristic_minus_deg": _degrees(-mu), **_ratios(mach, given["gamma"])}


def _froude_readout(given: dict[str, float]) -> dict[str, float]:
    u, v, h, g = given["u"], given["v"], given["h"], given["g"]
    froude = float(froude_number(u, v, h, g))
    theta, beta = flow_angle(u, v), wave_angle(froude)
    plus, minus = directions_about_flow(theta, beta)
    celerity = math.sqrt(g * h) if g * h > 0 else math.nan
    return {"speed": math.hypot(u, v), "celerity": celerity, "froude": froude,
            "flow_angle_deg": _degrees(theta), "wave_angle_deg": _degrees(beta),
            "characteristic_plus_deg": _degrees(plus), "characteristic_minus_deg": _degrees(minus)}


def _internal_wave_readout(given: dict[str, float]) -> dict[str, float]:
    n, f, w = given["N"], given["f"], given["w"]
    slope = float(internal_wave_ray_slope(n, f, w))
    return {"ray_slope": slope, "ray_angle_deg": _degrees(np.arctan(slope)),
            "in_window": float(bool(in_frequency_window(n, f, w)))}


_READOUTS = {"mach": _mach_readout, "small_disturbance": _small_disturbance_readout,
             "froude": _froude_readout, "internal_wave": _internal_wave_readout}
