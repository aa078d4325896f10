"""Characteristic curves: many seeds at once, both ways, by an embedded Runge-Kutta method with step control.

Curves are traced by arc length with an embedded Dormand-Prince 5(4) Runge-Kutta pair, one numpy step for every
curve still running, each with its own step size and error control; orientation is kept by turning each
direction to make a positive dot product with the previous one. A curve stops on the domain edge, on the
type-change line D = 0 or on an undefined point, or at a maximum length or number of steps. Near D = 0 the
direction field has a square-root singularity that the error estimate does not see, so a step with a stage
beyond the line is retried shorter until the curve is very close, and the last step is then cut by bisection
so that the curve lands on the line (or the edge) without overshooting it. The directions and the family
labels are those of core.analysis.directions.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from core.analysis.directions import Family, characteristic_directions, unit_direction
from core.analysis.discriminant import discriminant
from core.domain import Domain
from core.equations.equation import CompiledEquation, QuantitySource
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["END_REASONS", "CharacteristicCurve", "seeds_along_segment", "trace_characteristics"]


# Why each end of a curve stopped.
END_REASONS = {
    "edge": "reached the edge of the domain",
    "type_change": "reached the type-change line D = 0",
    "undefined": "reached a point where a coefficient is undefined",
    "length": "reached the maximum length",
    "steps": "reached the maximum number of steps",
    "stalled": "the step size fell below the smallest allowed step",
    "elliptic_seed": "the seed lies where the equation is elliptic: no real characteristic",
    "undefined_seed": "a coefficient is undefined at the seed",
    "outside_seed": "the seed lies outside the domain",
}
_REASON_NAMES = ("edge", "type_change", "undefined", "length", "steps", "stalled")
_EDGE, _TYPE_CHANGE, _UNDEFINED, _LENGTH, _STEPS, _STALLED = range(6)


@dataclass(frozen=True, eq=False)
class CharacteristicCurve:
    """One characteristic through a seed, traced both ways.

    ``points`` (n, 2) are ordered along the curve and include ``seed`` at ``seed_index``; points before it
    were traced backwards. ``end_reasons`` = (why the backward end stopped, why the forward end stopped),
    keys of END_REASONS. Forward is the direction of ``characteristic_directions`` (upper half-plane).
    """

    family: Family
    seed: np.ndarray
    points: np.ndarray
    seed_index: int
    end_reasons: tuple[str, str]

    @property
    def length(self) -> float:
        """Arc length of the polyline through ``points`` (units of x and y)."""
        return float(np.hypot(*np.diff(self.points, axis=0).T).sum()) if len(self.points) > 1 else 0.0

    @property
    def backward(self) -> np.ndarray:
        """Points from the seed to the backward end, (k, 2)."""
        return self.points[self.seed_index::-1]

    @property
    def forward(self) -> np.ndarray:
        """Points from the seed to the forward end, (k, 2)."""
        return self.points[self.seed_index:]


# Dormand-Prince 5(4) tableau (Dormand and Prince 1980, J. Comput. Appl. Math. 6, 19-26).
_A = (
    (),
    (1 / 5,),
    (3 / 40, 9 / 40),
    (44 / 45, -56 / 15, 32 / 9),
    (19372 / 6561, -25360 / 2187, 64448 / 6561, -212 / 729),
    (9017 / 3168, -355 / 33, 46732 / 5247, 49 / 176, -5103 / 18656),
    (35 / 384, 0.0, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84),
)
_A = tuple(np.array(row) for row in _A)
# Fifth-order weights minus fourth-order weights: the local error estimate.
_E = np.array([71 / 57600, 0.0, -71 / 16695, 71 / 1920, -17253 / 339200, 22 / 525, -1 / 40])

_MAX_STEP = 0.05       # of the domain diagonal
_FIRST_STEP = 1e-6     # of the domain diagonal
_MIN_STEP = 1e-12      # of the domain diagonal: below this a curve has stalled
_LANDING = 1e-13       # of the domain diagonal: bracket width when landing on an edge or on D = 0
# Near D = 0 the direction field has a square-root singularity that no Runge-Kutta error estimate sees: a step
# with a stage beyond the line is retried at a quarter of its length, so the curve closes in with accurate
# steps, and only a step shorter than this (of the diagonal) is cut by bisection onto the line.
_APPROACH = 1e-5


class _Field:
    """Oriented unit directions at many points at once, for curves of mixed families."""

    def __init__(self, compiled: CompiledEquation, parameters, data) -> None:
        self.compiled = compiled
        self.prepared = compiled.prepare(compiled.parameter_vector(parameters))
        self.data = data

    def __call__(self, x, y, sign, ref_x, ref_y):
        """Directions at (x, y) turned to make a positive dot product with (ref_x, ref_y); also D there."""
        raw = self.compiled.evaluate_raw(x, y, data=self.data, prepared=self.prepared)
        a, b, c = raw["a"], raw["b"], raw["c"]
        d = discriminant(a, b, c)
        dx, dy = unit_direction(a, b, c, sign, d)
        flip = np.where(dx * ref_x + dy * ref_y < 0.0, -1.0, 1.0)
        return dx * flip, dy * flip, np.broadcast_to(d, np.shape(x))


def _dormand_prince_step(field: _Field, x, y, k1x, k1y, h, sign):
    """One DP5(4) step of length h for every curve.

    Returns (x, y, k7x, k7y) at the end, D at the end, the smallest D met by any stage (NaN if a stage was
    undefined) and the norm of the local error estimate.
    """
    n = np.shape(x)[0]
    kx, ky = np.empty((7, n)), np.empty((7, n))
    kx[0], ky[0] = k1x, k1y
    smallest = None
    for i, weights in enumerate(_A[1:], start=1):
        sx = x + h * (weights @ kx[:i])
        sy = y + h * (weights @ ky[:i])
        kx[i], ky[i], d = field(sx, sy, sign, k1x, k1y)
        smallest = d if smallest is None else np.minimum(smallest, d)
    error = h * np.hypot(_E @ kx, _E @ ky)
    return sx, sy, kx[6], ky[6], d, smallest, error


def _check_seeds(seeds) -> np.ndarray:
    seeds = np.asarray(seeds, dtype=np.float64)
    if seeds.shape == (2,):
        seeds = seeds[np.newaxis, :]
    if seeds.ndim != 2 or seeds.shape[1] != 2:
        raise ValueError(f"seeds must have shape (m, 2), got {seeds.shape}")
    if not np.isfinite(seeds).all():
        raise ValueError(f"seeds must be finite, got {seeds[~np.isfinite(seeds).all(axis=1)][0].tolist()}")
    return seeds


def _check_families(families) -> tuple[Family, ...]:
    try:
        result = tuple(dict.fromkeys(Family(int(f)) for f in families))
    except (TypeError, ValueError):
        raise ValueError(f"families must be a sequence of 1 and/or 2, got {families!r}") from None
    if not result:
        raise ValueError("families must name at least one family (1, 2)")
    return result


def trace_characteristics(compiled: CompiledEquation, domain: Domain, seeds, *,
                          families: Sequence[int] = (1, 2), parameters: Mapping[str, float] | None = None,
                          data: QuantitySource | None = None, local_error: float = 1e-9,
                          max_length: float | None = None, max_steps: int = 20000,
                          cancel: CancelCheck | None = None, progress: ProgressReport | None = None
                          ) -> tuple[CharacteristicCurve, ...]:
    """Characteristics of the chosen families through every seed (m, 2), traced both ways.

    Returns one curve per seed and family, in the order seed by seed, families as given. ``local_error`` is the
    local error allowed per step as a fraction of the domain diagonal; ``max_length`` (default ten diagonals)
    bounds each half of a curve, as does ``max_steps`` (accepted steps). A seed where the equation is
    elliptic, undefined or outside the domain gives a one-point curve with that reason at both ends. A seed
    on a type-change line that characteristics touch tangentially (Keldysh type) also gives one point: the
    line itself solves the direction equation there, and the tracer does not leave it.
    ``cancel`` is polled at every step (raises Cancelled); ``progress`` gets the fraction of halves done.
    """
    seeds = _check_seeds(seeds)
    chosen = _check_families(families)
    if not 0.0 < float(local_error) <= 1e-2:
        raise ValueError(f"local_error must be in (0, 0.01], got {local_error}")
    scale = domain.size
    max_length = 10.0 * scale if max_length is None else float(max_length)
    if not (math.isfinite(max_length) and max_length > 0.0):
        raise ValueError(f"max_length must be a positive finite number, got {max_length}")
    if isinstance(max_steps, bool) or not isinstance(max_steps, int) or max_steps < 1:
        raise ValueError(f"max_steps must be a positive integer, got {max_steps!r}")
    field = _Field(compiled, parameters, data)

    # The seeds: which ones can be traced, and the starting direction of every half-curve.
    with np.errstate(all="ignore"):
        raw = compiled.evaluate_raw(seeds[:, 0], seeds[:, 1], data=data, prepared=field.prepared)
        a, b, c = np.broadcast_arrays(raw["a"], raw["b"], raw["c"], np.empty(len(seeds)))[:3]
        d = discriminant(a, b, c)
        directions = dict(zip(Family, characteristic_directions(a, b, c)))
    inside = ((seeds[:, 0] >= domain.xmin) & (seeds[:, 0] <= domain.xmax)
              & (seeds[:, 1] >= domain.ymin) & (seeds[:, 1] <= domain.ymax))
    seed_reason = np.full(len(seeds), "", dtype=object)
    seed_reason[~inside] = "outside_seed"
    undefined = inside & (~np.isfinite(d) | ((a == 0) & (b == 0) & (c == 0)))
    seed_reason[undefined] = "undefined_seed"
    seed_reason[inside & ~undefined & (d < 0)] = "elliptic_seed"
    traced = seed_reason == ""

    owner = []   # (seed, family) for each traced curve; its halves are 2k (backward) and 2k + 1 (forward)
    start = []
    for i in np.flatnonzero(traced):
        for family in chosen:
            owner.append((i, family))
            forward = directions[family][i]
            start.extend([-forward, forward])
    halves = _trace_halves(field, domain, seeds, owner, np.array(start).reshape(-1, 2),
                           local_error * scale, max_length, max_steps, cancel, progress)

    curves = []
    k = 0
    for i, seed in enumerate(seeds):
        for family in chosen:
            if not traced[i]:
                points = seed[np.newaxis, :].copy()
                reasons = (seed_reason[i], seed_reason[i])
                curves.append(_curve(family, seed, points, 0, reasons))
                continue
            (back, back_reason), (ahead, ahead_reason) = halves[2 * k], halves[2 * k + 1]
            points = np.concatenate([back[::-1], seed[np.newaxis, :], ahead])
            curves.append(_curve(family, seed, points, len(back), (back_reason, ahead_reason)))
            k += 1
    return tuple(curves)


def _curve(family, seed, points, seed_index, reasons) -> CharacteristicCurve:
    seed = seed.copy()
    seed.setflags(write=False)
    points.setflags(write=False)
    return CharacteristicCurve(family=family, seed=seed, points=points, seed_index=int(seed_index),
                               end_reasons=tuple(reasons))


def _trace_halves(field: _Field, domain: Domain, seeds, owner, start, local_error, max_length, max_steps,
                  cancel, progress) -> list[tuple[np.ndarray, str]]:
    """Integrate every half-curve together; returns [(points after the seed (k, 2), end reason), ...]."""
    count = len(start)
    if count == 0:
        return []
    scale = domain.size
    seed_index = np.repeat([i for i, _ in owner], 2)
    x = seeds[seed_index, 0].copy()
    y = seeds[seed_index, 1].copy()
    sign = np.repeat([family.sign for _, family in owner], 2)
    kx, ky = start[:, 0].copy(), start[:, 1].copy()
    h = np.full(count, _FIRST_STEP * scale)
    length = np.zeros(count)
    steps = np.zeros(count, dtype=np.int64)
    reason = np.full(count, -1)
    landing = np.zeros(count, dtype=bool)
    low, high = np.zeros(count), np.zeros(count)
    low_x, low_y, high_x, high_y = x.copy(), y.copy(), x.copy(), y.copy()
    high_reason = np.zeros(count, dtype=np.int64)
    log_index: list[np.ndarray] = []
    log_x: list[np.ndarray] = []
    log_y: list[np.ndarray] = []
    bounds = (domain.xmin, domain.xmax, domain.ymin, domain.ymax)

    active = np.arange(count)
    while active.size:
        if cancel is not None and cancel():
            raise Cancelled("tracing of characteristics cancelled")
        idx = active
        is_landing = landing[idx]
        step = np.where(is_landing, 0.5 * (low[idx] + high[idx]), h[idx])
        with np.errstate(all="ignore"):
            nx, ny, nkx, nky, nd, smallest, error = _dormand_prince_step(
                field, x[idx], y[idx], kx[idx], ky[idx], step, sign[idx])
            finite = np.isfinite(nx) & np.isfinite(ny)
            outside = finite & ((nx < bounds[0]) | (nx > bounds[1]) | (ny < bounds[2]) | (ny > bounds[3]))
            bad = ~finite | outside | ~(nd > 0.0)
            why = np.where(outside, _EDGE, np.where(finite & (nd <= 0.0), _TYPE_CHANGE, _UNDEFINED))
            # A stage beyond D = 0 (clamped to the parabolic direction) or on an undefined point.
            touched = ~(smallest > 0.0)
            ratio = local_error / error
        done = np.zeros(idx.size, dtype=bool)

        # Curves landing on an edge or on D = 0: halve the bracket [low, high] of the last step.
        sub = np.flatnonzero(is_landing)
        if sub.size:
            j = idx[sub]
            to_high = bad[sub]
            jh, sh = j[to_high], sub[to_high]
            high[jh], high_x[jh], high_y[jh], high_reason[jh] = step[sh], nx[sh], ny[sh], why[sh]
            jl, sl = j[~to_high], sub[~to_high]
            low[jl], low_x[jl], low_y[jl] = step[sl], nx[sl], ny[sl]
            closed = high[j] - low[j] <= _LANDING * scale
            if closed.any():
                jc = j[closed]
                end_x, end_y = _landing_points(low_x[jc], low_y[jc], high_x[jc], high_y[jc],
                                               high_reason[jc], bounds)
                moved = np.hypot(end_x - x[jc], end_y - y[jc]) > _MIN_STEP * scale
                log_index.append(jc[moved])
                log_x.append(end_x[moved])
                log_y.append(end_y[moved])
                reason[jc] = high_reason[jc]
                done[sub[closed]] = True

        # Curves stepping freely: reject inaccurate steps, start landing on bad ones, accept the rest.
        sub = np.flatnonzero(~is_landing)
        if sub.size:
            j = idx[sub]
            with np.errstate(all="ignore"):
                factor = np.clip(0.9 * ratio[sub] ** 0.2, 0.2, 5.0)
            factor = np.where(np.isfinite(factor), factor, 5.0)
            rejected = error[sub] > local_error
            jr = j[rejected]
            h[jr] = step[sub[rejected]] * factor[rejected]
            stalled = h[jr] < _MIN_STEP * scale
            reason[jr[stalled]] = _STALLED
            done[sub[rejected][stalled]] = True

            long_step = step[sub] > _APPROACH * scale
            crossing = ~rejected & bad[sub]
            closing_in = ~rejected & long_step & ((crossing & (why[sub] != _EDGE)) | touched[sub])
            h[j[closing_in]] = 0.25 * step[sub[closing_in]]
            starts = crossing & ~closing_in
            js, ss = j[starts], sub[starts]
            landing[js] = True
            low[js], low_x[js], low_y[js] = 0.0, x[js], y[js]
            high[js], high_x[js], high_y[js], high_reason[js] = step[ss], nx[ss], ny[ss], why[ss]

            accepted = ~rejected & ~bad[sub] & ~closing_in
            ja, sa = j[accepted], sub[accepted]
            x[ja], y[ja], kx[ja], ky[ja] = nx[sa], ny[sa], nkx[sa], nky[sa]
            length[ja] += step[sa]
            steps[ja] += 1
            log_index.append(ja)
            log_x.append(nx[sa])
            log_y.append(ny[sa])
            remaining = max_length - length[ja]
            h[ja] = np.minimum(np.minimum(step[sa] * factor[accepted], _MAX_STEP * scale), remaining)
            at_length = remaining <= _MIN_STEP * scale
            at_steps = ~at_length & (steps[ja] >= max_steps)
            reason[ja[at_length]] = _LENGTH
            reason[ja[at_steps]] = _STEPS
            done[sa[at_length | at_steps]] = True

        active = idx[~done]
        if progress is not None:
            progress(1.0 - active.size / count)

    index = np.concatenate(log_index) if log_index else np.zeros(0, dtype=np.int64)
    order = np.argsort(index, kind="stable")
    points = np.stack([np.concatenate(log_x)[order], np.concatenate(log_y)[order]], axis=-1) \
        if log_index else np.zeros((0, 2))
    pieces = np.split(points, np.cumsum(np.bincount(index, minlength=count))[:-1])
    return [(piece, _REASON_NAMES[r]) for piece, r in zip(pieces, reason)]


def _landing_points(low_x, low_y, high_x, high_y, why, bounds):
    """The last point of each landing curve: on the edge it crossed, else the bracket's hyperbolic end."""
    end_x, end_y = low_x.copy(), low_y.copy()
    edge = why == _EDGE
    if edge.any():
        lx, ly, hx, hy = low_x[edge], low_y[edge], high_x[edge], high_y[edge]
        fraction = np.ones(lx.size)
        with np.errstate(all="ignore"):
            for low_v, high_v, limit in ((lx, hx, bounds[0]), (lx, hx, bounds[1]),
                                         (ly, hy, bounds[2]), (ly, hy, bounds[3])):
                crossing = (high_v - limit) * (low_v - limit) < 0
                t = np.where(crossing, (limit - low_v) / (high_v - low_v), 1.0)
                fraction = np.minimum(fraction, np.clip(t, 0.0, 1.0))
        end_x[edge] = np.clip(lx + fraction * (hx - lx), bounds[0], bounds[1])
        end_y[edge] = np.clip(ly + fraction * (hy - ly), bounds[2], bounds[3])
    return end_x, end_y



def seeds_along_segment(start, end, count: int) -> np.ndarray:
    """``count`` evenly spaced seeds from ``start`` to ``end`` (both included), shape (count, 2).

    One seed is placed at the midpoint.
    """
    start = np.asarray(start, dtype=np.float64)
    end = np.asarray(end, dtype=np.float64)
    if start.shape != (2,) or end.shape != (2,):
        raise ValueError(f"start and end must be points of shape (2,), got {start.shape} and {end.shape}")
    if not (np.isfinite(start).all() and np.isfinite(end).all()):
        raise ValueError(f"start and end must be finite, got {start.tolist()} and {end.tolist()}")
    if isinstance(count, bool) or not isinstance(count, int | np.integer) or count < 1:
        raise ValueError(f"count must be a positive integer, got {count!r}")
    if count == 1:
        return (0.5 * (start + end))[np.newaxis, :]
    t = np.linspace(0.0, 1.0, int(count))[:, np.newaxis]
    return start + t * (end - start)
