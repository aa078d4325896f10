"""Characteristic curves: many seeds at once, both ways, optionally going on past edges and turning lines.

Each seed gives one curve per family, traced backward and forward from it by the vectorised Dormand-Prince
integrator of core.analysis.stepping until it stops on the domain edge, on the type-change line D = 0, on an
undefined point, or at a maximum length or number of steps. With ``bounces`` a half-curve that stops on an edge
or on the type-change line goes on as the other family (core.analysis.continuation), and the curve records
each such event. The directions and the family labels are those of core.analysis.directions.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from core.analysis.continuation import EVENT_KINDS, CurveEvent, continuation_directions
from core.analysis.directions import Family, characteristic_directions
from core.analysis.discriminant import normalized_discriminant
from core.analysis.stepping import (
    BLOCKED,
    EDGE,
    MIN_STEP,
    REASON_NAMES,
    TYPE_CHANGE,
    DirectionField,
    trace_legs,
)
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES, QuantitySource
from core.progress import CancelCheck, ProgressReport

__all__ = ["END_REASONS", "EVENT_KINDS", "MAX_BOUNCES", "CharacteristicCurve", "CurveEvent", "seeds_along_segment",
           "trace_characteristics"]


# Why each end of a curve stopped.
END_REASONS = {
    "edge": "reached the edge of the domain",
    "type_change": "reached the type-change line D = 0",
    "undefined": "reached a point where a coefficient is undefined",
    "length": "reached the maximum length",
    "steps": "reached the maximum number of steps",
    "stalled": "the step size fell below the smallest allowed step",
    "blocked": "could not go on past the edge or the type-change line (a corner, or the other family runs "
               "along it)",
    "elliptic_seed": "the seed lies where the equation is elliptic: no real characteristic",
    "undefined_seed": "a coefficient is undefined at the seed",
    "outside_seed": "the seed lies outside the domain",
}
MAX_BOUNCES = 1000     # the most events a half-curve may go on through


@dataclass(frozen=True, eq=False)
class CharacteristicCurve:
    """One characteristic through a seed, traced both ways.

    ``points`` (n, 2) are ordered along the curve and include ``seed`` at ``seed_index``; points before it
    were traced backwards. ``end_reasons`` = (why the backward end stopped, why the forward end stopped),
    keys of END_REASONS. Forward is the direction of ``characteristic_directions`` (upper half-plane).
    ``family`` is the family through the seed; ``events`` are the points, in path order, where the curve went
    on as the other family (traced with ``bounces``), so the family changes at each of them (see ``legs``);
    the first ``backward_events`` of them were met tracing backwards.
    """

    family: Family
    seed: np.ndarray
    points: np.ndarray
    seed_index: int
    end_reasons: tuple[str, str]
    events: tuple[CurveEvent, ...] = ()
    backward_events: int = 0

    def legs(self) -> tuple[tuple[Family, np.ndarray], ...]:
        """The curve cut at its events, in path order: (family, points (k, 2)) per leg; neighbouring legs
        share their event point. One leg, the whole curve, without events."""
        cuts = [event.index for event in self.events]
        bounds = [0, *cuts, len(self.points) - 1]
        legs = []
        for number in range(len(cuts) + 1):
            flips = abs(number - self.backward_events)
            family = self.family if flips % 2 == 0 else Family(3 - int(self.family))
            legs.append((family, self.points[bounds[number]:bounds[number + 1] + 1]))
        return tuple(legs)

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
                          max_length: float | None = None, max_steps: int = 20000, bounces: int = 0,
                          cancel: CancelCheck | None = None, progress: ProgressReport | None = None
                          ) -> tuple[CharacteristicCurve, ...]:
    """Characteristics of the chosen families through every seed (m, 2), traced both ways.

    Returns one curve per seed and family, in the order seed by seed, families as given. ``local_error`` is the
    local error allowed per step as a fraction of the domain diagonal; ``max_length`` (default ten diagonals)
    bounds each half of a curve, as does ``max_steps`` (accepted steps). A seed where the equation is
    elliptic, undefined or outside the domain gives a one-point curve with that reason at both ends. A seed
    on a type-change line that characteristics touch tangentially (Keldysh type) also gives one point: the
    line itself solves the direction equation there, and the tracer does not leave it.

    ``bounces`` (0 to MAX_BOUNCES) is how many times EACH HALF of a curve (backward and forward from the seed)
    goes on as the other family where it would stop at the domain edge (reflected into the domain) or at the
    type-change line (turned back in a cusp), so a curve holds up to 2 * bounces events; see
    core.analysis.continuation. ``max_length`` and ``max_steps`` bound a half with all its continuations.
    Where a half cannot go on (a corner, a tangency) it ends with the reason "blocked".
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
    if isinstance(bounces, bool) or not isinstance(bounces, int | np.integer) or not 0 <= bounces <= MAX_BOUNCES:
        raise ValueError(f"bounces must be an integer in [0, {MAX_BOUNCES}], got {bounces!r}")
    field = DirectionField(compiled, parameters, data)

    # The seeds: which ones can be traced, and the starting direction of every half-curve.
    with np.errstate(all="ignore"):
        raw = compiled.evaluate_raw(seeds[:, 0], seeds[:, 1], data=data, prepared=field.prepared,
                                    names=COEFFICIENT_NAMES)
        a, b, c = np.broadcast_arrays(raw["a"], raw["b"], raw["c"], np.empty(len(seeds)))[:3]
        d = normalized_discriminant(a, b, c)   # its sign only: the one type formula, free of over- and underflow
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
    seed_index = np.repeat(np.array([i for i, _ in owner], dtype=np.int64), 2)
    halves = _trace_with_events(field, domain, seeds[seed_index], np.repeat([f.sign for _, f in owner], 2),
                                np.array(start).reshape(-1, 2), local_error * scale, max_length, max_steps,
                                int(bounces), cancel, progress)

    curves = []
    k = 0
    for i, seed in enumerate(seeds):
        for family in chosen:
            if not traced[i]:
                points = seed[np.newaxis, :].copy()
                reasons = (seed_reason[i], seed_reason[i])
                curves.append(_curve(family, seed, points, 0, reasons))
                continue
            (back, back_reason, back_events), (ahead, ahead_reason, ahead_events) = halves[2 * k], halves[2 * k + 1]
            points = np.concatenate([back[::-1], seed[np.newaxis, :], ahead])
            # An event at position p of a half (-1: the seed) is at len(back) - 1 - p (backward, reversed)
            # or len(back) + 1 + p (forward) of the curve.
            events = [CurveEvent(kind, at, len(back) - 1 - p) for kind, p, at in reversed(back_events)]
            events += [CurveEvent(kind, at, len(back) + 1 + p) for kind, p, at in ahead_events]
            curves.append(_curve(family, seed, points, len(back), (back_reason, ahead_reason), tuple(events),
                                 len(back_events)))
            k += 1
    return tuple(curves)


def _curve(family, seed, points, seed_index, reasons, events=(), backward_events=0) -> CharacteristicCurve:
    seed = seed.copy()
    seed.setflags(write=False)
    points.setflags(write=False)
    return CharacteristicCurve(family=family, seed=seed, points=points, seed_index=int(seed_index),
                               end_reasons=tuple(reasons), events=events, backward_events=int(backward_events))


def _trace_with_events(field: DirectionField, domain: Domain, starts, sign, directions, local_error, max_length,
                       max_steps, bounces, cancel, progress) -> list[tuple[np.ndarray, str, list]]:
    """Every half-curve from ``starts`` (k, 2) in ``directions`` (k, 2), going on through up to ``bounces``
    events each; returns [(points after the start (n, 2), end reason, [(kind, position, (x, y)), ...]), ...]
    where position indexes the half's points (-1: the start itself).

    Each pass integrates every half still going in one vectorised run (trace_legs); the halves that
    stopped on an edge or the type-change line and may go on start the next pass from where they stopped.
    """
    count = len(directions)
    pieces: list[list[np.ndarray]] = [[] for _ in range(count)]
    sizes = np.zeros(count, dtype=np.int64)
    events: list[list] = [[] for _ in range(count)]
    pending: list = [None] * count          # the event a half is going on through, kept once it moves
    final = np.full(count, -1)
    x, y = starts[:, 0].copy(), starts[:, 1].copy()      # where each half's current leg starts, then ends
    sign = np.asarray(sign, dtype=np.float64).copy()
    directions = directions.copy()
    length, steps = np.zeros(count), np.zeros(count, dtype=np.int64)
    bounds = (domain.xmin, domain.xmax, domain.ymin, domain.ymax)
    active = np.arange(count)
    finished = 0
    shown = 0.0

    def report(fraction: float) -> None:       # fraction of this pass's halves done -> of all halves, monotone
        nonlocal shown
        shown = max(shown, (finished + fraction * active.size) / count)
        progress(shown)

    while active.size:
        run = trace_legs(field, domain, x[active], y[active], sign[active], directions[active], local_error,
                            max_length, max_steps, cancel, None if progress is None else report,
                            length=length[active], steps=steps[active])
        going_on = []
        for n, j in enumerate(active):
            piece, reason = run.pieces[n], int(run.reason[n])
            if pending[j] is not None:
                if not len(piece):           # the continuation did not get away from its event
                    reason = BLOCKED if reason in (EDGE, TYPE_CHANGE) else reason
                    final[j] = reason
                    continue
                events[j].append(pending[j])
                pending[j] = None
            if len(piece):
                pieces[j].append(piece)
                sizes[j] += len(piece)
                x[j], y[j] = piece[-1]
            room = max_length - run.length[n] > MIN_STEP * domain.size
            if reason in (EDGE, TYPE_CHANGE) and len(events[j]) < bounces and room:
                going_on.append(n)
            else:
                final[j] = reason
        going_on = np.array(going_on, dtype=np.int64)
        finished += active.size - going_on.size
        if not going_on.size:
            break
        j = active[going_on]
        ends = np.stack([x[j], y[j]], axis=-1)
        at_edge = run.reason[going_on] == EDGE
        with np.errstate(all="ignore"):
            dx, dy, ok = continuation_directions(field.coefficients, ends[:, 0], ends[:, 1], -sign[j], at_edge,
                                                 run.kx[going_on], run.ky[going_on], bounds, domain.size)
        final[j[~ok]] = BLOCKED
        finished += int((~ok).sum())
        for n in np.flatnonzero(ok):
            i = j[n]
            pending[i] = ("edge" if at_edge[n] else "type_change", int(sizes[i]) - 1,
                          (float(ends[n, 0]), float(ends[n, 1])))
        going = j[ok]
        sign[going] = -sign[going]
        directions[going, 0], directions[going, 1] = dx[ok], dy[ok]
        length[j], steps[j] = run.length[going_on], run.steps[going_on]
        active = going

    result = []
    for i in range(count):
        points = np.concatenate(pieces[i]) if pieces[i] else np.zeros((0, 2))
        result.append((points, REASON_NAMES[final[i]], events[i]))
    return result


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
