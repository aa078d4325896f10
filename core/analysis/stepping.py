"""The integrator behind characteristic curves: many half-curves at once, each landing on an edge or on D = 0.

Curves are traced by arc length with an embedded Dormand-Prince 5(4) Runge-Kutta pair, one numpy step for every
curve still running, each with its own step size and error control; orientation is kept by turning each
direction to make a positive dot product with the previous one. A half-curve stops on the domain edge, on the
type-change line D = 0 or on an undefined point, or at a maximum length or number of steps. Near D = 0 the
direction field has a square-root singularity that the error estimate does not see, so a step with a stage
beyond the line is retried shorter until the curve is very close, and the last step is then cut by bisection
so that the curve lands on the line (or the edge) without overshooting it. core.analysis.tracing builds whole
curves (and their continuations) from these runs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from core.analysis.directions import unit_direction
from core.analysis.discriminant import discriminant, scaled_by_power_of_two
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES
from core.progress import Cancelled

__all__ = ["BLOCKED", "EDGE", "LENGTH", "MIN_STEP", "REASON_NAMES", "STALLED", "STEPS", "TYPE_CHANGE", "UNDEFINED",
           "DirectionField", "LegRun", "trace_legs"]

# Why a run stopped, as indices into REASON_NAMES (keys of core.analysis.tracing.END_REASONS). BLOCKED is
# never given here: tracing uses it for a continuation that cannot leave its event.
REASON_NAMES = ("edge", "type_change", "undefined", "length", "steps", "stalled", "blocked")
EDGE, TYPE_CHANGE, UNDEFINED, LENGTH, STEPS, STALLED, BLOCKED = range(7)

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
MIN_STEP = 1e-12       # of the domain diagonal: below this a curve has stalled
_LANDING = 1e-13       # of the domain diagonal: bracket width when landing on an edge or on D = 0
# Near D = 0 the direction field has a square-root singularity that no Runge-Kutta error estimate sees: a step
# with a stage beyond the line is retried at a quarter of its length, so the curve closes in with accurate
# steps, and only a step shorter than this (of the diagonal) is cut by bisection onto the line.
_APPROACH = 1e-5


class DirectionField:
    """Oriented unit directions at many points at once, for curves of mixed families."""

    def __init__(self, compiled: CompiledEquation, parameters, data) -> None:
        self.compiled = compiled
        self.prepared = compiled.prepare(compiled.parameter_vector(parameters))
        self.data = data

    def coefficients(self, x, y):
        """a, b, c at (x, y), each broadcast to the shape of x."""
        raw = self.compiled.evaluate_raw(x, y, data=self.data, prepared=self.prepared, names=COEFFICIENT_NAMES)
        return tuple(np.broadcast_to(raw[name], np.shape(x)) for name in COEFFICIENT_NAMES)

    def __call__(self, x, y, sign, ref_x, ref_y):
        """Directions at (x, y) turned to make a positive dot product with (ref_x, ref_y); also the sign of D
        there, as D of a, b, c scaled by a power of two (exact; only its sign is used, and it cannot overflow)."""
        raw = self.compiled.evaluate_raw(x, y, data=self.data, prepared=self.prepared, names=COEFFICIENT_NAMES)
        a, b, c = scaled_by_power_of_two(raw["a"], raw["b"], raw["c"])
        d = discriminant(a, b, c)
        dx, dy = unit_direction(a, b, c, sign, d)
        flip = np.where(dx * ref_x + dy * ref_y < 0.0, -1.0, 1.0)
        return dx * flip, dy * flip, np.broadcast_to(d, np.shape(x))


def _dormand_prince_step(field: DirectionField, x, y, k1x, k1y, h, sign):
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


@dataclass
class LegRun:
    """One vectorised run of trace_legs: per half-curve, the points after its start (k, 2), why it stopped
    (an index into REASON_NAMES), its last direction (kx, ky), and its length and accepted steps so far."""

    pieces: list[np.ndarray]
    reason: np.ndarray
    kx: np.ndarray
    ky: np.ndarray
    length: np.ndarray
    steps: np.ndarray


def trace_legs(field: DirectionField, domain: Domain, x, y, sign, start, local_error, max_length, max_steps,
               cancel, progress, *, length=None, steps=None) -> LegRun:
    """Integrate every half-curve together from (x, y) (k,) in the unit directions ``start`` (k, 2), family
    ``sign`` (k,) (+1: family 1, -1: family 2). ``local_error`` is absolute (units of x and y); ``length`` and
    ``steps`` (k,) are what each half used before this run (a continuation), counted against ``max_length``
    and ``max_steps``. ``cancel`` is polled at every step; ``progress`` gets the fraction of halves done."""
    count = len(start)
    if count == 0:
        return LegRun([], np.zeros(0, dtype=np.int64), np.zeros(0), np.zeros(0), np.zeros(0),
                      np.zeros(0, dtype=np.int64))
    scale = domain.size
    x = np.array(x, dtype=np.float64)
    y = np.array(y, dtype=np.float64)
    sign = np.asarray(sign, dtype=np.float64)
    kx, ky = start[:, 0].copy(), start[:, 1].copy()
    length = np.zeros(count) if length is None else np.array(length, dtype=np.float64)
    steps = np.zeros(count, dtype=np.int64) if steps is None else np.array(steps, dtype=np.int64)
    h = np.minimum(_FIRST_STEP * scale, max_length - length)
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
            why = np.where(outside, EDGE, np.where(finite & (nd <= 0.0), TYPE_CHANGE, UNDEFINED))
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
                last = np.hypot(end_x - x[jc], end_y - y[jc])
                moved = last > MIN_STEP * scale
                length[jc] += np.where(moved, last, 0.0)
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
            stalled = h[jr] < MIN_STEP * scale
            reason[jr[stalled]] = STALLED
            done[sub[rejected][stalled]] = True

            long_step = step[sub] > _APPROACH * scale
            crossing = ~rejected & bad[sub]
            closing_in = ~rejected & long_step & ((crossing & (why[sub] != EDGE)) | touched[sub])
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
            at_length = remaining <= MIN_STEP * scale
            at_steps = ~at_length & (steps[ja] >= max_steps)
            reason[ja[at_length]] = LENGTH
            reason[ja[at_steps]] = STEPS
            done[sa[at_length | at_steps]] = True

        active = idx[~done]
        if progress is not None:
            progress(1.0 - active.size / count)

    index = np.concatenate(log_index) if log_index else np.zeros(0, dtype=np.int64)
    order = np.argsort(index, kind="stable")
    points = np.stack([np.concatenate(log_x)[order], np.concatenate(log_y)[order]], axis=-1) \
        if log_index else np.zeros((0, 2))
    pieces = np.split(points, np.cumsum(np.bincount(index, minlength=count))[:-1])
    return LegRun(pieces, reason, kx, ky, length, steps)


def _landing_points(low_x, low_y, high_x, high_y, why, bounds):
    """The last point of each landing curve: on the edge it crossed, else the bracket's hyperbolic end."""
    end_x, end_y = low_x.copy(), low_y.copy()
    edge = why == EDGE
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
