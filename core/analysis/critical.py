"""Critical parameter values: where, as one parameter grows, a zone of a type appears or vanishes.

"At what free-stream Mach number does the supersonic pocket appear?", "above which frequency do waves stop
propagating in this layer?": for a parameter value p let g(p) be the extreme over the domain of how far a
point is from holding the type (max over the domain of D/S - tolerance for hyperbolic, of -D/S - tolerance for
elliptic). A zone of the type exists iff g(p) > 0, so the critical values are the roots of g.

g is computed with the smooth margins of core.analysis.type_margin, which have the sign of D/S - tolerance
(resp. -D/S - tolerance) at every point but can be climbed where D/S is a step (b = 0): the margin on the
study's grid (at most 257 nodes a side) for candidates, then bounded L-BFGS-B searches from the best local
maxima, Brent searches along the four edges and the corners. For parabolic, g(p) = min(max(-hyperbolic
margin), max(-elliptic margin)): some point is parabolic iff some point is not hyperbolic and some point is not
elliptic (a continuous D on a connected domain, defined everywhere), so the parabolic type is present iff
g(p) >= 0.

The parameter is scanned (DEFAULT_SCAN values, evenly, or geometrically when 0 < lo and hi >= 100 lo); where g
changes sign between neighbouring scan values, scipy.optimize.brentq on g brackets the root to the relative
tolerance ``rtol`` (absolute 1e-3 rtol max(|lo|, |hi|) near 0), and ``at`` is the maximiser at the bracket end
where the zone exists. Zones that appear or vanish while another zone of the type exists leave g positive:
they are found by labelling the zones on the grid at each scan value (8-connected); a zone that shares no node
with the zones of the previous scan value (or the next one) is located the same way, with g taken over its
bounding box widened by one grid step (searching earlier scan values while the box still holds the zone
below the grid's resolution). Events already found in the same box at the same value are not repeated.

What is detected and what is not: every sign change of g at the scan values; a zone born or dying apart from
the others, once it covers a grid node at a scan value. Not detected: a zone that appears and vanishes between
two scan values, two events of one zone closer than the scan step, a zone that splits in two or merges
(reported in the notes, not as events), a second zone that never covers a node of the grid, and parabolic
zones other than the first and last (no zone labelling for the parabolic type).

Proof (``certify``): at the bracket end where the zone does not exist yet (or any more), a certified map
(core.certify.refinement.certify_map) over the domain (over the box for zones found beside others) must show
no cell that may hold the type. Cells left undecided within two grid steps of ``at`` (D/S is within about
rtol of the threshold there) are certified again on a small box around ``at`` with cells 1e-4 of its side;
where that fails, the proof is tried 4 and 16 bracket widths farther from the root (core.analysis.
critical_proof; the note names the value that was proven). ``proven`` is True when every event was proven so,
False when one was not (the notes say where), None without events or without ``certify``. A zone born along a
whole line at once (coefficients that vary along one variable only) is often not proven when that line lies
inside the domain: the bounds cannot separate a whole line of cells from the threshold.

Exactness: the value is a root of g as computed in double precision, to ``rtol``; g is exact where the
optimiser found the maximum (a local method: see core.analysis.type_margin). With background data the
coefficients are the interpolated data (core.data.fields), so the value is exact for that interpolant only.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from core.analysis.classify import DEFAULT_TOLERANCE
from core.analysis.critical_proof import prove_absent
from core.analysis.run_labels import bounding_slices, label_runs, paint_labels
from core.analysis.type_margin import Box, MarginField, SampledMargin, largest_margin, sample_margin
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES, QuantitySource
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["CRITICAL_TYPES", "DEFAULT_SCAN", "CriticalEvent", "CriticalSearch", "find_critical_values"]

CRITICAL_TYPES = ("hyperbolic", "elliptic", "parabolic")
DEFAULT_SCAN = 33                 # parameter values scanned for sign changes (32 steps)
_MAX_SEARCH_NODES = 257           # grid nodes a side the candidates come from (the study's grid, at most this)
_TINY = sys.float_info.min        # what stands for 0 in g: "absent" is negative, "present" positive, never 0


@dataclass(frozen=True)
class CriticalEvent:
    """A zone of ``type`` appears or vanishes (``event``, as the parameter increases) at ``value`` of
    ``parameter`` (within ``bracket``, width about rtol |value|), at the place ``at`` of the domain."""

    parameter: str
    value: float
    bracket: tuple[float, float]
    event: str
    at: tuple[float, float]
    type: str = "hyperbolic"


@dataclass(frozen=True)
class CriticalSearch:
    """Every event of ``type`` zones for ``parameter`` in ``between``, in parameter order; ``proven`` whether
    certified maps proved that no other place reaches the threshold first (None: not tried or no event)."""

    parameter: str
    type: str
    between: tuple[float, float]
    rtol: float
    events: tuple[CriticalEvent, ...]
    proven: bool | None
    notes: tuple[str, ...]


@dataclass(frozen=True, eq=False)
class _Scan:
    """g at one scan value (``presence``: > 0 present, < 0 absent) with its place, and the zones of the type
    on the search grid (labels 1..count, 0 elsewhere; None for parabolic)."""

    value: float
    presence: float
    at: tuple[float, float]
    mask: np.ndarray | None
    labels: np.ndarray | None
    count: int


def find_critical_values(compiled: CompiledEquation, domain: Domain, parameter: str, between: tuple[float, float],
                         *, type: str = "hyperbolic", parameters: Mapping[str, float] | None = None,
                         data: QuantitySource | None = None, tolerance: float = DEFAULT_TOLERANCE,
                         rtol: float = 1e-9, certify: bool = True, scan: int = DEFAULT_SCAN,
                         cancel: CancelCheck | None = None, progress: ProgressReport | None = None
                         ) -> CriticalSearch:
    """Every value of ``parameter`` in ``between`` = (lo, hi) where a zone of ``type`` appears or vanishes
    over ``domain`` (method: module docstring). ``parameters`` are the other parameters' values (defaults:
    the equation's); ``scan`` the number of parameter values scanned; ``cancel`` and ``progress`` as in
    core.progress. Bad input raises ValueError naming what is wrong."""
    lo, hi = _checked(compiled, parameter, between, type, tolerance, rtol, scan)
    base = compiled.parameter_vector(parameters)
    search = _Search(compiled, domain, parameter, base, type, float(tolerance), float(rtol), data, cancel)
    notes: list[str] = []
    scans = []
    for index, value in enumerate(_scan_values(lo, hi, scan)):
        scans.append(search.scan(value, scans[-1].at if scans else None))
        if progress is not None:
            progress(0.5 * (index + 1) / scan)
    found: list[tuple[CriticalEvent, Box]] = []
    for k in range(scan - 1):
        candidates = []
        if (scans[k].presence > 0) != (scans[k + 1].presence > 0):
            candidates.append((search.locate(search.whole, scans[k], scans[k + 1]), search.whole))
        if type != "parabolic":
            candidates.extend(search.separate_zones(scans, k, notes))
        for candidate in candidates:
            if not any(_same(candidate, known) for known, _ in found):
                found.append(candidate)
        if progress is not None:
            progress(0.5 + 0.4 * (k + 1) / (scan - 1))
    found.sort(key=lambda item: (item[0].value, item[0].bracket[0] + item[0].bracket[1]))
    events = tuple(event for event, _ in found)
    proven = None
    if certify and events:
        outcomes = [prove_absent(compiled, search.region(box), parameter=parameter,
                                 value=event.bracket[0] if event.event == "appears" else event.bracket[1],
                                 step=(event.bracket[0] - event.bracket[1]) * (1 if event.event == "appears" else -1),
                                 at=event.at, type=type, parameters=base, data=data, tolerance=tolerance,
                                 near=2 * search.spacing, cancel=cancel) for event, box in found]
        proven = all(ok for ok, _ in outcomes)
        notes.extend(note for _, note in outcomes)
    if progress is not None:
        progress(1.0)
    notes[:0] = _summary(scans, events, type, parameter, lo, hi, data is not None)
    if not _coefficients_use(compiled, parameter):
        notes.insert(0, f"the coefficients a, b, c do not depend on {parameter}")
    return CriticalSearch(parameter=parameter, type=type, between=(lo, hi), rtol=float(rtol), events=events,
                          proven=proven, notes=tuple(notes))


def _checked(compiled: CompiledEquation, parameter: str, between, type: str, tolerance: float, rtol: float,
             scan: int) -> tuple[float, float]:
    if parameter not in compiled.parameter_defaults:
        known = ", ".join(sorted(compiled.parameter_defaults)) or "none"
        raise ValueError(f"{parameter!r} is not a parameter of the equation (its parameters: {known})")
    if type not in CRITICAL_TYPES:
        raise ValueError(f"unknown type {type!r}; expected one of {', '.join(CRITICAL_TYPES)}")
    try:
        lo, hi = (float(v) for v in between)
    except (TypeError, ValueError):
        raise ValueError(f"the interval must be two numbers LO HI, got {between!r}") from None
    if not (math.isfinite(lo) and math.isfinite(hi)) or not lo < hi:
        raise ValueError(f"the interval must be two finite numbers with LO below HI, got [{lo}, {hi}]")
    if not math.isfinite(hi - lo):
        raise ValueError(f"the interval [{lo:g}, {hi:g}] is too wide: its width overflows double precision")
    if not (isinstance(rtol, int | float) and 1e-15 <= rtol <= 0.1):
        raise ValueError(f"the relative tolerance must be from 1e-15 to 0.1, got {rtol!r}")
    if not 0.0 <= float(tolerance) < 1.0:
        raise ValueError(f"parabolic tolerance must be in [0, 1), got {tolerance}")
    if isinstance(scan, bool) or not isinstance(scan, int) or not 2 <= scan <= 10_000:
        raise ValueError(f"the scan must be a whole number of values from 2 to 10000, got {scan!r}")
    return lo, hi


def _scan_values(lo: float, hi: float, count: int) -> np.ndarray:
    """Evenly spaced, or evenly in the logarithm when the interval is positive and spans two decades."""
    if lo > 0 and hi >= 100 * lo:
        values = np.geomspace(lo, hi, count)
    else:
        values = np.linspace(lo, hi, count)
    values[0], values[-1] = lo, hi
    return values


def _same(candidate: tuple[CriticalEvent, Box], known: CriticalEvent) -> bool:
    """An event already found: same kind, same value to a few brackets, ``known.at`` in the candidate's box."""
    new, box = candidate
    width = max(new.bracket[1] - new.bracket[0], known.bracket[1] - known.bracket[0])
    return (new.event == known.event and abs(new.value - known.value) <= 4 * width
            and box.contains(*known.at))


class _Search:
    """g and its roots for one study, parameter and type, over the whole domain or a box of it."""

    def __init__(self, compiled: CompiledEquation, domain: Domain, parameter: str, base: dict[str, float],
                 type: str, tolerance: float, rtol: float, data: QuantitySource | None,
                 cancel: CancelCheck | None) -> None:
        self.compiled, self.domain, self.parameter, self.base = compiled, domain, parameter, base
        self.type, self.tolerance, self.rtol, self.data, self.cancel = type, tolerance, rtol, data, cancel
        search = domain.with_grid(min(domain.nx, _MAX_SEARCH_NODES), min(domain.ny, _MAX_SEARCH_NODES))
        self.x_nodes, self.y_nodes = search.x_nodes, search.y_nodes
        self.spacing = max(search.spacing)
        self.whole = Box(domain.xmin, domain.xmax, domain.ymin, domain.ymax)
        self.kinds = ("not_hyperbolic", "not_elliptic") if type == "parabolic" else (type,)

    def region(self, box: Box) -> Domain:
        return Domain(box.x0, box.x1, box.y0, box.y1, nx=2, ny=2, name=self.domain.name)

    def presence(self, value: float, box: Box, hint: tuple[float, float] | None, *, sign_only: bool = False
                 ) -> tuple[float, tuple[float, float], SampledMargin]:
        """g at ``value`` over ``box`` as a signed number (> 0 present, < 0 absent), the place, and the
        margin sampled on the grid (of the type; for parabolic of the first of its two margins). With
        ``sign_only`` a grid node holding the type ends the search (g is then only a lower bound)."""
        if self.cancel is not None and self.cancel():
            raise Cancelled("critical value search cancelled")
        parameters = {**self.base, self.parameter: float(value)}
        results = []
        for kind in self.kinds:
            field = MarginField(self.compiled, parameters, kind=kind, tolerance=self.tolerance, data=self.data)
            sampled = sample_margin(field, box, self.x_nodes, self.y_nodes)
            inside = hint if hint is not None and box.contains(*hint) else None
            results.append((largest_margin(field, box, self.x_nodes, self.y_nodes, hint=inside, sampled=sampled,
                                           positive_enough=sign_only), sampled))
        maximum, sampled = min(results, key=lambda item: item[0].value)
        g = max(maximum.value, -10.0)      # finite for brentq (a defined margin is above -3; -inf: undefined)
        if self.type == "parabolic":
            signed = max(g, _TINY) if g >= 0 else g
        else:
            signed = g if g > 0 else min(g, -_TINY)
        return signed, maximum.at, results[0][1]

    def scan(self, value: float, hint: tuple[float, float] | None) -> _Scan:
        presence, at, sampled = self.presence(value, self.whole, hint, sign_only=True)
        if self.type == "parabolic":
            return _Scan(float(value), presence, at, None, None, 0)
        mask = sampled.values > 0
        runs = label_runs(mask, True, 8)
        labels = paint_labels(runs)
        return _Scan(float(value), presence, at, mask, labels, runs.count)

    def locate(self, box: Box, low: _Scan | tuple, high: _Scan | tuple) -> CriticalEvent:
        """The root of g over ``box`` between two parameter values where its signs differ (scipy brentq)."""
        (lo, f_lo, at_lo), (hi, f_hi, at_hi) = (_triple(item) for item in (low, high))
        record = {lo: (f_lo, at_lo), hi: (f_hi, at_hi)}
        hint = [at_hi if f_hi > 0 else at_lo]

        def g(value: float) -> float:
            if value not in record:
                presence, at, _ = self.presence(value, box, hint[0])
                record[value] = (presence, at)
                hint[0] = at
            return record[value][0]

        scale = max(abs(lo), abs(hi))
        root = brentq(g, lo, hi, xtol=max(1e-3 * self.rtol * scale, 1e-300),
                      rtol=max(self.rtol / 2, 4 * np.finfo(float).eps), maxiter=500)
        g(root)
        points = sorted(record)
        index = points.index(root)
        neighbours = [points[i] for i in (index - 1, index + 1) if 0 <= i < len(points)
                      and (record[points[i]][0] > 0) != (record[root][0] > 0)]
        other = min(neighbours, key=lambda p: abs(p - root))
        bracket = (min(root, other), max(root, other))
        appears = record[bracket[1]][0] > 0
        inside = record[bracket[1] if appears else bracket[0]][1]
        return CriticalEvent(parameter=self.parameter, value=float(root), bracket=bracket,
                             event="appears" if appears else "vanishes", at=(float(inside[0]), float(inside[1])),
                             type=self.type)

    def separate_zones(self, scans: list[_Scan], k: int, notes: list[str]) -> list[tuple[CriticalEvent, Box]]:
        """Events of zones that share no grid node with the zones of the neighbouring scan value."""
        before, after = scans[k], scans[k + 1]
        found = []
        for zones, other, step in ((after, before, -1), (before, after, +1)):
            if not zones.count:
                continue
            touching = np.bincount(zones.labels[other.mask], minlength=zones.count + 1)
            slices = bounding_slices(label_runs(zones.mask, True, 8))
            for label in range(1, zones.count + 1):
                if touching[label]:
                    continue
                box = self._widened(slices[label - 1])
                event = self._walk(scans, box, k + 1 if step < 0 else k, step)
                if event is not None:
                    found.append((event, box))
        if after.count != before.count and not found and before.count and after.count:
            notes.append(f"between {self.parameter} = {before.value:.10g} and {after.value:.10g} the number of "
                         f"{self.type} zones on the grid goes from {before.count} to {after.count} without a zone "
                         "appearing or vanishing apart from the others (zones split or merge there): not an event")
        return found

    def _widened(self, slices: tuple[slice, slice]) -> Box:
        rows, columns = slices
        nx, ny = self.x_nodes.size, self.y_nodes.size
        i0, i1 = max(columns.start - 1, 0), min(columns.stop, nx - 1)
        j0, j1 = max(rows.start - 1, 0), min(rows.stop, ny - 1)
        return Box(float(self.x_nodes[i0]), float(self.x_nodes[i1]), float(self.y_nodes[j0]),
                   float(self.y_nodes[j1]))

    def _walk(self, scans: list[_Scan], box: Box, index: int, step: int) -> CriticalEvent | None:
        """From scan ``index`` (where the box holds the zone) step through the scan values (back for an
        appearance, on for a vanishing) to the first where the box holds none, and locate the root there."""
        inside = scans[index].at if box.contains(*scans[index].at) else None
        present = self.presence(scans[index].value, box, inside, sign_only=True)
        while True:
            following = index + step
            if not 0 <= following < len(scans) or present[0] <= 0:
                return None
            absent = self.presence(scans[following].value, box, present[1], sign_only=True)
            if absent[0] < 0:
                break
            index, present = following, absent
        ends = [(scans[index].value, *present[:2]), (scans[following].value, *absent[:2])]
        ends.sort(key=lambda end: end[0])
        return self.locate(box, ends[0], ends[1])


def _article(word: str) -> str:
    return "an" if word[0] in "aeiou" else "a"


def _coefficients_use(compiled: CompiledEquation, name: str) -> bool:
    """Whether a, b or c use ``name``, directly or through definitions."""
    names = {symbol: key for key, symbol in compiled.symbols.items()}
    seen: set[str] = set()
    pending = list(COEFFICIENT_NAMES)
    while pending:
        key = pending.pop()
        for symbol in compiled.symbolic[key].free_symbols:
            used = names.get(symbol)
            if used == name:
                return True
            if used in compiled.symbolic and used not in seen:
                seen.add(used)
                pending.append(used)
    return False


def _triple(item: _Scan | tuple) -> tuple[float, float, tuple[float, float]]:
    if isinstance(item, _Scan):
        return item.value, item.presence, item.at
    return item


def _summary(scans: list[_Scan], events: tuple[CriticalEvent, ...], type: str, parameter: str, lo: float,
             hi: float, with_data: bool) -> list[str]:
    """Notes on the whole search: no event, present from the start, the scan's resolution, data."""
    notes = []
    if not events:
        state = "present" if scans[0].presence > 0 else "absent"
        notes.append(f"no {type} zone appears or vanishes for {parameter} in [{lo:.10g}, {hi:.10g}]: the zone is "
                     f"{state} at all {len(scans)} scanned values")
    elif scans[0].presence > 0:
        notes.append(f"{_article(type)} {type} zone exists already at {parameter} = {lo:.10g}")
    notes.append(f"{len(scans)} values of {parameter} scanned: an event closer than one scan step to another "
                 "of the same zone, or a zone that appears and vanishes between two scanned values, is not seen")
    if with_data:
        notes.append("the coefficients come from interpolated background data: the values are exact for the "
                     "interpolant, not for the field the data sample")
    return notes
