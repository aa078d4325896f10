"""``mixtype classify --certify``: the certified type map of the study, as JSON fields and in words."""

from __future__ import annotations

import argparse
from typing import TextIO

from core.analysis.classify import TypeMap
from core.certify.refinement import DEFAULT_MAX_CELLS, CertifiedMap, certify_map
from core.cli.options import UsageError
from core.cli.study import Study
from core.equations.compiled import CompiledEquation
from core.results.certified import CERTIFIED_AREA_ORDER

__all__ = ["MAX_CERTIFIED_ROWS", "certify_study", "write_certified"]

MAX_CERTIFIED_ROWS = 20


def certify_study(args: argparse.Namespace, study: Study, compiled: CompiledEquation,
                  sampled: TypeMap) -> CertifiedMap:
    """The certified map of the study's domain (``--min-cell``, ``--max-cells``), pockets checked against the
    sampled map ``sampled``."""
    max_cells = args.max_cells if args.max_cells is not None else DEFAULT_MAX_CELLS
    try:
        return certify_map(compiled, study.domain, parameters=study.parameters, data=study.data,
                           tolerance=study.tolerance, min_cell=args.min_cell, max_cells=max_cells, sampled=sampled)
    except ValueError as error:
        raise UsageError(f"--certify: {error}") from None


def write_certified(certified: CertifiedMap, x: str, y: str, out: TextIO) -> None:
    """The certified map in words: area bounds per type, what is left undecided, pockets and tangencies."""
    domain = certified.domain
    total = (domain.xmax - domain.xmin) * (domain.ymax - domain.ymin)
    out.write(f"certified map: {certified.cells} cells examined, down to {certified.min_cell:.6g} "
              f"(D enclosed by the {certified.dependency_form})\n")
    out.write(f"type         certified area (units of {x}*{y}): proven .. at most\n")
    for label in CERTIFIED_AREA_ORDER:
        low, high = certified.area[label]
        out.write(f"  {label:<11} {low:.6g} .. {high:.6g}\n")
    share = 100 * certified.undecided_area / total if total > 0 else 0.0
    out.write(f"undecided area: {certified.undecided_area:.6g} ({share:.4g} % of the domain)"
              f"{'; the cell budget ran out (raise --max-cells)' if certified.budget_reached else ''}\n")
    out.write(f"certified pockets: {len(certified.pockets)}\n")
    for index, pocket in enumerate(certified.pockets[:MAX_CERTIFIED_ROWS], 1):
        x0, x1, y0, y1 = pocket.bbox
        exists = "proven to exist" if pocket.proven else "not proven to exist"
        missed = f"; the sampled map has no {pocket.type} node in it" if pocket.missed_by_grid else ""
        out.write(f"  pocket {index}: {pocket.type}, {x} in [{x0:.6g}, {x1:.6g}], {y} in [{y0:.6g}, {y1:.6g}], "
                  f"area {pocket.area[0]:.6g} .. {pocket.area[1]:.6g}, {exists}{missed}\n")
    if len(certified.pockets) > MAX_CERTIFIED_ROWS:
        out.write(f"  ... and {len(certified.pockets) - MAX_CERTIFIED_ROWS} more (see --json)\n")
    out.write(f"parabolic tangencies (D touches 0 without changing sign): {len(certified.tangencies)}\n")
    for index, tangency in enumerate(certified.tangencies[:MAX_CERTIFIED_ROWS], 1):
        x0, x1, y0, y1 = tangency.bbox
        out.write(f"  tangency {index}: {x} in [{x0:.6g}, {x1:.6g}], {y} in [{y0:.6g}, {y1:.6g}], "
                  f"{tangency.side} on both sides\n")
    if len(certified.tangencies) > MAX_CERTIFIED_ROWS:
        out.write(f"  ... and {len(certified.tangencies) - MAX_CERTIFIED_ROWS} more (see --json)\n")
