"""Everything a study report shows, computed in one run: the same pipeline for the command line and the window.

``compute_report_results`` takes one study (an equation on a domain, its parameters, tolerance, background
data, pins, seeds and the project's layer settings) and runs what the window's analysis runs, in the same
order and with the same core functions: the type map, its refined type-change lines and filled zones, the
hyperbolic pockets with the peak of the equation's peak quantity, every pin's probe and trade readout, every
seed's characteristics, the field layer's quantity on the grid with its iso-lines and, when asked, the
certified map. ``mixtype report`` and the window's "Export report" both call it, so both reports hold the same
numbers; core.results.report turns the result into the report's document.

Long steps take ``cancel`` (raises core.progress.Cancelled) and report one overall fraction through
``progress``. The result is a frozen record of core results; nothing here draws.
"""

from __future__ import annotations

import threading
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from core.analysis.classify import TypeMap, classify_grid
from core.analysis.field_values import (
    FieldGrid,
    FieldQuantity,
    IsoLine,
    describe_quantity,
    field_on_grid,
    iso_lines,
)
from core.analysis.pockets import Pocket, pocket_statistics
from core.analysis.probe import ProbeResult, probe_point
from core.analysis.tracing import trace_characteristics
from core.analysis.type_change_lines import TypeBoundaries, find_type_boundaries
from core.analysis.zone_polygons import ZonePolygons, zone_polygons
from core.certify.refinement import CertifiedMap, certify_map
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import Equation
from core.progress import CancelCheck, Cancelled, ProgressReport
from core.project.model import CertifiedLayerSettings, FieldLayerSettings, Pin, Seed
from core.results.readouts import TradeReading, peak_quantity, read_trade

__all__ = ["ReportResults", "certified_min_cell", "compute_report_results", "project_report_results"]

# Share of the overall progress each step takes (measured on the demo studies; the certified map, when asked,
# takes the rest).
_STEPS = {"map": 0.30, "lines": 0.15, "zones": 0.05, "pockets": 0.10, "pins": 0.05, "seeds": 0.15, "field": 0.20}
_CERTIFIED_SHARE = 0.5     # of the whole, when the certified map is computed
EXACT_DEADLINE_SECONDS = 8.0     # the exact analysis in a report: what sympy has not found by then is noted


@dataclass(frozen=True, eq=False)
class ReportResults:
    """One study's results as the report shows them.

    ``traced`` holds one (seed, curves) pair per seed; ``probes`` and ``trades`` run parallel to ``pins``.
    ``field`` is the field layer's quantity on the grid (None with ``field_problem`` saying why), ``iso_lines``
    its iso-lines at the layer's values. ``certified`` is None when not asked (``certified_asked`` False).
    ``zones`` is None on maps too large for polygons (the figure then shows the grid's codes).
    """

    equation: Equation
    domain: Domain
    parameters: Mapping[str, float]
    tolerance: float
    compiled: CompiledEquation
    data: object | None
    type_map: TypeMap
    boundaries: TypeBoundaries
    zones: ZonePolygons | None
    pockets: tuple[Pocket, ...]
    pocket_quantity: str | None
    pins: tuple[Pin, ...]
    probes: tuple[ProbeResult, ...]
    trades: tuple[TradeReading, ...]
    traced: tuple[tuple[Seed, tuple], ...]
    bounces: int
    field_settings: FieldLayerSettings
    field_quantity: FieldQuantity | None
    field: FieldGrid | None
    iso_lines: tuple[IsoLine, ...]
    field_problem: str
    certified_asked: bool
    certified_settings: CertifiedLayerSettings
    certified: CertifiedMap | None
    exact: dict | None = None          # `mixtype analyze --json`'s document; None with exact_problem saying why
    exact_problem: str = ""


def certified_min_cell(settings: CertifiedLayerSettings, domain: Domain) -> float:
    """The smallest cell side the certified layer refines to, in the variables' units (its setting is a
    fraction of the domain's shorter side), as the window computes it."""
    return settings.min_cell * min(domain.xmax - domain.xmin, domain.ymax - domain.ymin)


class _Progress:
    """One overall fraction from the fractions of consecutive steps, each given its share; never reported going
    back (a step's threads may report out of order)."""

    def __init__(self, report: ProgressReport | None, shares: Mapping[str, float]) -> None:
        total = sum(shares.values())
        self._report, self._done, self._shares = report, 0.0, {k: v / total for k, v in shares.items()}
        self._reported = 0.0
        self._lock = threading.Lock()

    def step(self, name: str) -> ProgressReport:
        start, share = self._done, self._shares[name]
        self._done += share

        def part(fraction: float) -> None:
            if self._report is None:
                return
            overall = min(1.0, start + share * min(max(float(fraction), 0.0), 1.0))
            with self._lock:
                if overall <= self._reported:
                    return
                self._reported = overall
            self._report(overall)

        return part


def _checked(cancel: CancelCheck | None) -> None:
    if cancel is not None and cancel():
        raise Cancelled("report cancelled")


def compute_report_results(compiled: CompiledEquation, equation: Equation, domain: Domain, *,
                           parameters: Mapping[str, float], tolerance: float, data=None,
                           pins: Sequence[Pin] = (), seeds: Sequence[Seed] = (), bounces: int = 0,
                           field: FieldLayerSettings | None = None,
                           certified: CertifiedLayerSettings | None = None, certify: bool | None = None,
                           known_certified: CertifiedMap | None = None, cancel: CancelCheck | None = None,
                           progress: ProgressReport | None = None) -> ReportResults:
    """Compute everything the report of one study shows (see the module docstring).

    ``compiled`` is ``equation`` compiled with the data's names; ``data`` the QuantitySource it samples.
    ``field`` and ``certified`` are the project's layer settings (defaults when None). The certified map is
    computed when ``certify`` is True, or when it is None and the certified layer is shown; ``known_certified``
    (the window's map of the same study and settings) is used instead of computing it again.
    """
    field = field or FieldLayerSettings()
    certified = certified or CertifiedLayerSettings()
    asked = certified.shown if certify is None else bool(certify)
    shares = dict(_STEPS)
    if asked and known_certified is None:
        shares["certified"] = sum(_STEPS.values()) * _CERTIFIED_SHARE / (1.0 - _CERTIFIED_SHARE)
    steps = _Progress(progress, shares)
    options = {"parameters": parameters, "data": data}
    type_map = classify_grid(compiled, domain, tolerance=tolerance, cancel=cancel, progress=steps.step("map"),
                             **options)
    boundaries = find_type_boundaries(compiled, type_map, refine=True, cancel=cancel,
                                      progress=steps.step("lines"), **options)
    zones = zone_polygons(type_map, boundaries, cancel=cancel)
    steps.step("zones")(1.0)
    quantity = peak_quantity(equation, compiled, getattr(data, "names", ()))
    with np.errstate(all="ignore"):
        pockets = pocket_statistics(compiled, type_map, quantity=quantity, cancel=cancel,
                                    progress=steps.step("pockets"), **options)
    probes, trades = [], []
    pin_progress = steps.step("pins")
    for number, pin in enumerate(pins):
        _checked(cancel)
        probes.append(probe_point(compiled, pin.x, pin.y, tolerance=tolerance, domain=domain, **options))
        trades.append(read_trade(equation.trade, compiled, pin.x, pin.y, **options))
        pin_progress((number + 1) / len(pins))
    traced = []
    seed_progress = steps.step("seeds")
    for number, seed in enumerate(seeds):
        def part(fraction: float, number: int = number) -> None:
            seed_progress((number + fraction) / len(seeds))

        curves = trace_characteristics(compiled, domain, seed.points(), families=seed.families, bounces=bounces,
                                       cancel=cancel, progress=part, **options)
        traced.append((seed, tuple(curves)))
    field_quantity, grid, lines, problem = _field(compiled, equation, domain, field, data, cancel,
                                                  steps.step("field"), options)
    certified_map = known_certified
    if asked and certified_map is None:
        with np.errstate(all="ignore"):
            certified_map = certify_map(compiled, domain, tolerance=tolerance,
                                        min_cell=certified_min_cell(certified, domain),
                                        max_cells=certified.max_cells, sampled=type_map, cancel=cancel,
                                        progress=steps.step("certified"), **options)
    exact, exact_problem = _exact(compiled, equation, parameters, cancel)
    if progress is not None:
        progress(1.0)
    return ReportResults(
        equation=equation, domain=domain, parameters=dict(parameters), tolerance=float(tolerance), compiled=compiled,
        data=data, type_map=type_map, boundaries=boundaries, zones=zones, pockets=tuple(pockets),
        pocket_quantity=quantity, pins=tuple(pins), probes=tuple(probes), trades=tuple(trades), traced=tuple(traced),
        bounces=int(bounces), field_settings=field, field_quantity=field_quantity, field=grid, iso_lines=lines,
        field_problem=problem, certified_asked=asked, certified_settings=certified,
        certified=certified_map if asked else None, exact=exact, exact_problem=exact_problem)


def _exact(compiled: CompiledEquation, equation: Equation, parameters, cancel) -> tuple[dict | None, str]:
    """The exact analysis' document (core.results.exact_analysis), or None and why, within
    EXACT_DEADLINE_SECONDS (what sympy does not finish in time is reported as not found, with a note)."""
    from core.analysis.exact import analyze_equation  # sympy's heavier modules load only for a report
    from core.results.exact_analysis import document

    try:
        analysis = analyze_equation(compiled, parameters=parameters, lower_order=dict(equation.lower_order) or None,
                                    deadline_seconds=EXACT_DEADLINE_SECONDS, cancel=cancel)
    except (ValueError, ArithmeticError) as error:
        return None, f"the exact analysis failed: {error}"
    return document(analysis), ""


def _field(compiled, equation, domain, settings: FieldLayerSettings, data, cancel, progress, options):
    """The field layer's quantity on the grid and its iso-lines; a problem text instead when it cannot be shown
    (a quantity the equation no longer offers)."""
    try:
        quantity = describe_quantity(equation, settings.kind, settings.quantity, getattr(data, "names", ()))
    except ValueError as error:
        return None, None, (), str(error)
    try:
        with np.errstate(all="ignore"):
            grid = field_on_grid(compiled, domain, settings.kind, settings.quantity, cancel=cancel,
                                 progress=progress, **options)
    except ValueError as error:        # e.g. a trade field the equation's readouts cannot give
        return quantity, None, (), str(error)
    if not np.isfinite(grid.values).any():
        return quantity, None, (), f"{quantity.label} is undefined everywhere on the grid"
    return quantity, grid, iso_lines(grid, settings.iso_values), ""


def project_report_results(compiled: CompiledEquation, study, *, certify: bool | None = None,
                           known_certified: CertifiedMap | None = None, cancel: CancelCheck | None = None,
                           progress: ProgressReport | None = None) -> ReportResults:
    """``compute_report_results`` for a study read from a project: ``study`` has the fields of
    core.cli.study.Study (equation, domain, parameters, tolerance, data and the ``project``, whose pins, seeds,
    bounces and layer settings are used)."""
    project = study.project
    view = project.view
    return compute_report_results(
        compiled, study.equation, study.domain, parameters=study.parameters, tolerance=study.tolerance,
        data=study.data, pins=project.pins, seeds=project.seeds, bounces=view.characteristic_bounces,
        field=view.field, certified=view.certified, certify=certify, known_certified=known_certified,
        cancel=cancel, progress=progress)
