"""Parameter sweeps: how the zones of each type grow, shrink, appear and vanish as one parameter moves.

``run_sweep`` classifies the study's grid at each value of one parameter and records, per value, what
``mixtype classify`` reports there (the type fractions, the number of hyperbolic pockets, the largest pocket
peak of the study's peak quantity) and the area of each type. The equation is compiled once by the caller:
parameters are inputs of every evaluation (core.equations.compiled), so a sweep of any length pays one
compilation and one start-up, and the grid's buffers are reused from value to value.

Fractions are ``TypeMap.ordered_fractions()`` of the map classify_grid makes with the same compiled equation,
domain, tolerance and parameters: the same numbers, to the bit, as ``mixtype classify --json`` at that value.
Areas come from the zones as polygons (core.analysis.zone_polygons) bounded by the type-change lines refined
onto D = 0 (core.analysis.type_change_lines): where a zone is closed by those lines and the domain's edges its
area converges as O(h^2) and is exact for straight lines, where node counts converge as O(h). Elsewhere it is a
grid quantity: a zone that ends at undefined nodes stops at the grid cells touching them (the undefined area is
the area of the cells with an undefined corner), and a zone where D vanishes on an area (parabolic) is its grid
cells' outline; both are accurate to O(h). Maps of more than MAX_POLYGON_NODES nodes have no polygons: every
area there is the trapezoid-rule area of the type's nodes (core.analysis.pockets.node_areas), O(h).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping

import numpy as np

from core.analysis.classify import DEFAULT_TOLERANCE, FRACTION_ORDER, TypeCode, TypeMap, classify_grid
from core.analysis.pockets import Pocket, node_areas, pocket_statistics
from core.analysis.sweep_values import MAX_SWEEP_VALUES, Sweep, SweepRow, sweep_values
from core.analysis.type_change_lines import find_type_boundaries
from core.analysis.zone_polygons import zone_polygons
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import QuantitySource
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = ["MAX_SWEEP_VALUES", "Sweep", "SweepRow", "run_sweep", "sweep_values", "zone_areas"]

# Shares of one value's work, for progress: the map, its lines, the zones' polygons, the pockets.
_MAP, _LINES, _ZONES = 0.55, 0.75, 0.85


def zone_areas(type_map: TypeMap, boundaries=None, *, cancel: CancelCheck | None = None) -> dict[str, float]:
    """The area of each type of ``type_map`` (names in FRACTION_ORDER), in units of the variables' product, from
    the zones' polygons with their vertices on the refined lines of ``boundaries`` (see the module docstring)."""
    codes = np.asarray(type_map.codes)
    zones = zone_polygons(type_map, boundaries, cancel=cancel)
    if zones is None:
        weights = node_areas(type_map.x, type_map.y)
        return {code.label: float(np.sum(weights, where=codes == code)) for code in FRACTION_ORDER}
    areas = {code.label: max(0.0, zones.area(code)) for code in FRACTION_ORDER if code != TypeCode.UNDEFINED}
    undefined = codes == TypeCode.UNDEFINED
    if undefined.any():
        # a cell is left out of every zone when one of its corners is undefined (contourpy, corner_mask=False)
        cells = undefined[:-1, :-1] | undefined[1:, :-1] | undefined[:-1, 1:] | undefined[1:, 1:]
        widths, heights = np.diff(type_map.x), np.diff(type_map.y)
        areas[TypeCode.UNDEFINED.label] = float(np.sum(np.outer(heights, widths), where=cells))
    else:
        areas[TypeCode.UNDEFINED.label] = 0.0
    return {code.label: areas[code.label] for code in FRACTION_ORDER}


def _largest_peak(pockets: Iterable[Pocket]) -> dict | None:
    best = None
    for pocket in pockets:
        if pocket.peak is not None and (best is None or pocket.peak > best.peak):
            best = pocket
    if best is None:
        return None
    return {"quantity": best.quantity, "value": float(best.peak), "at": [float(v) for v in best.peak_at]}


def _checked_values(compiled: CompiledEquation, parameter: str, values) -> tuple[float, ...]:
    known = tuple(compiled.parameter_defaults)
    if parameter not in known:
        have = f"its parameters are {', '.join(known)}" if known else "it has no parameters"
        raise ValueError(f"the equation has no parameter {parameter!r} to sweep; {have}")
    checked = []
    for value in values:
        number = float(value)
        if not math.isfinite(number):
            raise ValueError(f"a swept value of {parameter} must be a finite number, got {value!r}")
        checked.append(number)
    if not checked:
        raise ValueError(f"no values of {parameter} to sweep")
    if len(checked) > MAX_SWEEP_VALUES:
        raise ValueError(f"at most {MAX_SWEEP_VALUES} values in one sweep, got {len(checked)}")
    return tuple(checked)


def run_sweep(compiled: CompiledEquation, domain: Domain, parameter: str, values, *,
              parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
              tolerance: float = DEFAULT_TOLERANCE, quantity: str | None = None, refine: bool = True,
              cancel: CancelCheck | None = None, progress: ProgressReport | None = None,
              log: bool = False) -> Sweep:
    """Classify ``domain``'s grid at each of ``values`` of ``parameter`` and measure it (see SweepRow).

    ``compiled`` is compiled once for the whole sweep (with the data names, as the study's commands compile it);
    ``parameters`` give the other parameters' values (default: the equation's), the swept one being replaced by
    each value in turn; ``quantity`` is the name whose pocket peaks are reported (core.results.readouts.
    peak_quantity gives the study's; None: no peak); ``refine`` moves the lines onto D = 0 before the areas are
    measured (as classify does unless --raw). ``cancel`` is polled throughout (Cancelled), ``progress`` gets
    the fraction of the sweep done; ``log`` is recorded in the Sweep (the values came from a logarithmic
    sweep_values). ValueError for an unknown parameter or a value that is not finite.
    """
    checked = _checked_values(compiled, parameter, values)
    base = compiled.parameter_vector(parameters)
    buffers = (np.empty((domain.ny, domain.nx), dtype=np.int8), np.empty((domain.ny, domain.nx), dtype=np.float32))
    rows = []
    for index, value in enumerate(checked):
        if cancel is not None and cancel():
            raise Cancelled("sweep cancelled")

        def part(start: float, stop: float, index: int = index):
            if progress is None:
                return None
            return lambda fraction: progress((index + start + (stop - start) * fraction) / len(checked))

        at_value = {**base, parameter: value}
        type_map = classify_grid(compiled, domain, parameters=at_value, data=data, tolerance=tolerance,
                                 cancel=cancel, progress=part(0.0, _MAP), out=buffers)
        boundaries = find_type_boundaries(compiled, type_map, parameters=at_value, data=data, refine=refine,
                                          cancel=cancel, progress=part(_MAP, _LINES))
        areas = zone_areas(type_map, boundaries, cancel=cancel)
        pockets = pocket_statistics(compiled, type_map, quantity=quantity, parameters=at_value, data=data,
                                    cancel=cancel, progress=part(_ZONES, 1.0))
        rows.append(SweepRow(value=value, fractions=type_map.ordered_fractions(), areas=areas,
                             pockets=len(pockets), peak=_largest_peak(pockets)))
        if progress is not None:
            progress((index + 1) / len(checked))
    return Sweep(parameter=parameter, values=checked, rows=tuple(rows), log=bool(log))
