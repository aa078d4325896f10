"""Vectorised tracing of characteristics against a per-curve scipy loop, at equal accuracy.

Traces 1000 characteristics (500 seeds, both families, each both ways) of the Tricomi equation
y u_xx + u_yy = 0 in its hyperbolic half y < 0, many seeds close to the sonic line y = 0, with
``core.analysis.tracing.trace_characteristics``; then the same curves one at a time with
``scipy.integrate.solve_ivp`` (RK45, terminal events on D = 0 and on the domain edge). The accuracy measure is
the closed-form invariant x -+ (2/3)(-y)^(3/2), constant along each curve (Bers 1958, Mathematical Aspects of
Subsonic and Transonic Gas Dynamics). scipy's rtol is tightened step by step until its invariant error is no
larger than ours, then both are timed. Targets: speed ratio >= 40, both errors <= 1e-7.

Going on past edges (``bounces``): internal waves (N^2 - omega^2) psi_xx + (f^2 - omega^2) psi_zz = 0 with
constant N between a flat floor z = -H and the surface, rays reflecting as the other family. Successive
surface reflections are 2H / slope apart, slope = sqrt((omega^2 - f^2)/(N^2 - omega^2)) (Gill 1982,
Atmosphere-Ocean Dynamics, internal-wave ray geometry). Figures: the largest relative error of that spacing
(target <= 1e-9) and the time per leg of a continued curve over the time per bounce-free half-curve, both
traced in the same run (target <= 3: going on costs about as much as tracing anew).

Run: python -m bench.bench_tracing  (prints JSON). The vectorised time is the median of three runs, scipy's a
single run; ``run(baseline_curves=k)`` times scipy on about k evenly spread curves only and scales its time to
all of them (the full scipy loop takes some 20 s).
"""

from __future__ import annotations

import json
import math
import time

import numpy as np
from records import figure
from scipy.integrate import solve_ivp

from core.analysis.directions import Family, characteristic_directions
from core.analysis.tracing import trace_characteristics
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter

__all__ = ["main", "run"]

DOMAIN = Domain(-2.0, 2.0, -2.0, 1.0)


def _seeds(count: int, rng: np.random.Generator) -> np.ndarray:
    """Seeds in y < 0: a third within 1e-6 of the sonic line, the rest spread (denser near y = 0)."""
    near = count // 3
    x = rng.uniform(-1.5, 1.5, count)
    y = -rng.uniform(0.0, 1.0, count) ** 3
    y[:near] = -rng.uniform(0.0, 1e-6, near)
    return np.column_stack([x, y])


def _invariant(points: np.ndarray, family: Family) -> np.ndarray:
    # Family 1 has dy/dx = (b + sqrt(D)) / 2a = -1/sqrt(-y): x - (2/3)(-y)^(3/2) is constant along it.
    sign = -1.0 if family is Family.FIRST else 1.0
    return points[:, 0] + sign * (2.0 / 3.0) * np.maximum(-points[:, 1], 0.0) ** 1.5


def _invariant_error(points: np.ndarray, family: Family, seed: np.ndarray) -> float:
    values = _invariant(points, family)
    return float(np.abs(values - _invariant(seed[np.newaxis, :], family)[0]).max())


def _scipy_half(compiled, seed, family: Family, start, rtol: float, atol: float) -> np.ndarray:
    """One half-curve with solve_ivp: arc-length parameter, orientation kept by the previous direction."""
    prepared = compiled.prepare(None)
    sign = family.sign
    previous = np.array(start, dtype=np.float64)

    def coefficients(p):
        raw = compiled.evaluate_raw(np.float64(p[0]), np.float64(p[1]), prepared=prepared)
        return float(raw["a"]), float(raw["b"]), float(raw["c"])

    def direction(s, p):
        a, b, c = coefficients(p)
        root = math.sqrt(max(b * b - 4.0 * a * c, 0.0))
        v = (2.0 * a, b + sign * root)
        w = (b - sign * root, 2.0 * c)
        chosen = w if w[0] ** 2 + w[1] ** 2 > v[0] ** 2 + v[1] ** 2 else v
        norm = math.hypot(*chosen)
        dx, dy = chosen[0] / norm, chosen[1] / norm
        if dx * previous[0] + dy * previous[1] < 0.0:
            dx, dy = -dx, -dy
        previous[:] = dx, dy
        return [dx, dy]

    def sonic(s, p):
        a, b, c = coefficients(p)
        return b * b - 4.0 * a * c

    def edge(s, p):
        return min(p[0] - DOMAIN.xmin, DOMAIN.xmax - p[0], p[1] - DOMAIN.ymin, DOMAIN.ymax - p[1])

    sonic.terminal = True
    edge.terminal = True
    solution = solve_ivp(direction, (0.0, 10.0 * DOMAIN.size), seed, method="RK45", rtol=rtol, atol=atol,
                         events=(sonic, edge), max_step=0.05 * DOMAIN.size)
    points = solution.y.T
    for event_points in solution.y_events:
        if len(event_points):
            points = np.vstack([points[:-1], event_points[:1]])
    return points


def _scipy_curves(compiled, curves, rtol: float):
    errors, count = [], 0
    for curve in curves:
        seed = curve.seed
        a, b, c = (float(v) for v in compiled.coefficients(seed[0], seed[1]))
        forward = characteristic_directions(a, b, c)[curve.family - 1]
        for start in (forward, -forward):
            points = _scipy_half(compiled, seed, curve.family, start, rtol, rtol * 1e-2)
            errors.append(_invariant_error(points, curve.family, seed))
            count += 1
    return max(errors), count


def _bounce_figures(n_seeds: int, bounces: int) -> dict:
    """Reflections between floor and surface: spacing error against 2H / slope, and the cost of going on."""
    depth, n, f, omega = 1000.0, 2e-3, 1e-4, 1e-3
    slope = math.sqrt((omega**2 - f**2) / (n**2 - omega**2))
    spacing = 2.0 * depth / slope
    channel = Domain(0.0, spacing * (bounces + 2), -depth, 0.0)     # long enough: no side wall is reached
    compiled = compile_equation(Equation(a="N**2 - omega**2", b="0", c="f**2 - omega**2", variables=("x", "z"),
                                         parameters={"N": Parameter(n), "f": Parameter(f),
                                                     "omega": Parameter(omega)}))
    # Seeds at mid-depth across the middle spacing, so each half has room for every reflection.
    middle = 0.5 * (channel.xmin + channel.xmax)
    seeds = np.column_stack([np.linspace(middle, middle + spacing, n_seeds), np.full(n_seeds, -0.5 * depth)])
    trace_characteristics(compiled, channel, seeds, bounces=bounces)      # warm-up
    plain_times, bounce_times = [], []
    for _ in range(3):
        start = time.perf_counter()
        plain = trace_characteristics(compiled, channel, seeds)
        plain_times.append(time.perf_counter() - start)
        start = time.perf_counter()
        continued = trace_characteristics(compiled, channel, seeds, bounces=bounces)
        bounce_times.append(time.perf_counter() - start)
    errors, events = [], 0
    for curve in continued:
        events += len(curve.events)
        ahead = [e.at[0] for e in curve.events if e.index > curve.seed_index and e.at[1] == 0.0]
        behind = [e.at[0] for e in curve.events if e.index < curve.seed_index and e.at[1] == 0.0]
        for hits in (ahead, behind):
            if len(hits) > 1:
                errors.extend(np.abs(np.abs(np.diff(hits)) / spacing - 1.0))
    halves = 2 * len(plain)
    per_half = float(np.median(plain_times)) / halves
    per_leg = float(np.median(bounce_times)) / (halves + events)
    spacing_error = float(max(errors)) if errors else None
    return {"bounce_curves": len(continued), "bounces_per_half": bounces, "events": events,
            "bounce_free_seconds": float(np.median(plain_times)), "bounce_seconds": float(np.median(bounce_times)),
            "seconds_per_leg_over_seconds_per_bounce_free_half": per_leg / per_half,
            "max_reflection_spacing_error_relative": spacing_error,
            "records": [figure("tracing with bounces: largest relative error of the reflection spacing 2H/slope",
                               spacing_error, 1e-9),
                        figure("tracing with bounces: time per leg / time per bounce-free half-curve",
                               per_leg / per_half, 3.0)]}


SMOKE = {"n_seeds": 4, "baseline_curves": 4, "bounce_seeds": 3, "bounces": 3}   # bench/run.py --smoke: every line


def run(n_seeds: int = 500, baseline_curves: int | None = None, seed: int = 20240611, bounce_seeds: int = 200,
        bounces: int = 20) -> dict:
    """Time both tracers on 2 * n_seeds curves, and tracing with ``bounces`` on 2 * bounce_seeds curves;
    returns the figures as a dict (see module docstring)."""
    compiled = compile_equation(Equation(a="y", b="0", c="1", name="Tricomi"))
    seeds = _seeds(n_seeds, np.random.default_rng(seed))
    trace_characteristics(compiled, DOMAIN, seeds)  # warm-up (thread pools, caches)
    times = []
    for _ in range(3):
        start = time.perf_counter()
        curves = trace_characteristics(compiled, DOMAIN, seeds)
        times.append(time.perf_counter() - start)
    vectorised_seconds = float(np.median(times))
    ours = max(_invariant_error(c.points, c.family, c.seed) for c in curves)
    type_change_ends = [c.points[-1, 1] for c in curves if c.end_reasons[1] == "type_change"]

    # Loosest scipy tolerance whose invariant error does not exceed ours, found on a sample of the curves.
    sample = curves[:: max(1, len(curves) // 40)]
    rtol = 1e-6
    while rtol > 1e-13:
        sample_error, _ = _scipy_curves(compiled, sample, rtol)
        if sample_error <= ours:
            break
        rtol /= 10.0
    timed = curves if baseline_curves is None else curves[:: max(1, len(curves) // baseline_curves)]
    start = time.perf_counter()
    theirs, halves = _scipy_curves(compiled, timed, rtol)
    scipy_seconds = (time.perf_counter() - start) * len(curves) / len(timed)
    bouncing = _bounce_figures(bounce_seeds, bounces)
    return {
        "curves": len(curves),
        "half_curves_traced_by_scipy": halves,
        "points_per_curve_mean": float(np.mean([len(c.points) for c in curves])),
        "vectorised_seconds": vectorised_seconds,
        "scipy_seconds": scipy_seconds,
        "scipy_seconds_scaled_from": len(timed),
        "scipy_rtol": rtol,
        "speed_ratio": scipy_seconds / vectorised_seconds,
        "speed_ratio_target": 40.0,
        "records": [
            figure(f"tracing {len(curves)} characteristics: scipy solve_ivp time / vectorised time",
                   scipy_seconds / vectorised_seconds, 40.0, at_most=False),
            figure("tracing: largest error of the Tricomi invariant", ours, 1e-7),
            *bouncing.pop("records"),
        ],
        "max_invariant_error_vectorised": ours,
        "max_invariant_error_scipy": theirs,
        "max_invariant_error_target": 1e-7,
        "max_abs_y_at_sonic_ends": float(np.max(np.abs(type_change_ends))) if type_change_ends else None,
        **bouncing,
    }


def main() -> None:
    print(json.dumps(run(), indent=2))


if __name__ == "__main__":
    main()
