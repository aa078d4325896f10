"""Proof that a zone of a type is absent from a region at one parameter value, with certified maps.

A critical value found by core.analysis.critical is a root of a maximum computed by local searches: another
place could reach the threshold first unseen. At the bracket end where the zone does not exist, a certified
map (core.certify.refinement.certify_map: interval bounds of D/S over a quadtree of cells) that shows no cell
which may hold the type proves there is none anywhere in the region at that value. Right beside the place
where the zone is born, D/S is within about rtol of the threshold, closer than the bounds of cells of the
default size can tell; cells left undecided only there (within ``near`` of it) are certified again on a small
box around that place, whose cells are 1e-4 of its side. Where D/S meets the threshold to the last bit at the
bracket's end (c = 0 exactly in double precision, say), or where the bounds are coarse (data quantities are
enclosed by the nodal values a cell touches, so a whole data cell shares the bound of its lowest node), no
bound can be strict: the proof is tried again 4 and 16 bracket widths farther from the root, and the note
says at which value it holds.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from core.certify.discriminant_bounds import ELLIPTIC_BIT, HYPERBOLIC_BIT, PARABOLIC_BIT
from core.certify.enclosure import UnsupportedExpression
from core.certify.refinement import certify_map
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import QuantitySource
from core.progress import CancelCheck

__all__ = ["PROOF_MAX_CELLS", "prove_absent"]

PROOF_MAX_CELLS = 250_000        # cells one certified map may examine (half a second or so)
_STEPS = (0, 4, 16)              # bracket widths beyond the bracket a proof is tried at, in turn
_BITS = {"hyperbolic": HYPERBOLIC_BIT, "elliptic": ELLIPTIC_BIT, "parabolic": PARABOLIC_BIT}


def prove_absent(compiled: CompiledEquation, region: Domain, *, parameter: str, value: float, step: float,
                 at: tuple[float, float], type: str, parameters: Mapping[str, float],
                 data: QuantitySource | None = None, tolerance: float, near: float,
                 cancel: CancelCheck | None = None) -> tuple[bool, str]:
    """Whether certified maps prove no point of ``region`` holds ``type`` at ``parameter`` = ``value`` (or,
    failing that, at ``value`` + k ``step`` for k in _STEPS: ``step`` is the bracket's width, signed away from
    the root), and a note saying at which value it holds, or where a cell may still hold the type."""
    try:
        for k in _STEPS:
            tried = value + k * step
            far = _farthest_from(compiled, region, {**parameters, parameter: tried}, at, type, data, tolerance,
                                 near, cancel)
            if far is None:
                break
    except (ValueError, ArithmeticError, UnsupportedExpression) as error:
        return False, f"at {parameter} = {value:.17g}: the certified map could not be made ({error})"
    where = f"at {parameter} = {tried:.17g}" + (f" ({k} bracket widths beyond the bracket)" if k else "")
    if far is None:
        return True, (f"{where} a certified map shows no {type} cell in [{region.xmin:.10g}, {region.xmax:.10g}] x "
                      f"[{region.ymin:.10g}, {region.ymax:.10g}]: proven")
    return False, (f"{where} a certified map leaves cells that may be {type}, the farthest {far:.3g} from "
                   f"({at[0]:.10g}, {at[1]:.10g}): not proven that no other place reaches the threshold first "
                   "(D/S there is closer to the threshold than the bounds can tell, or the type is really there)")


def _farthest_from(compiled: CompiledEquation, region: Domain, parameters: Mapping[str, float],
                   at: tuple[float, float], type: str, data, tolerance: float, near: float,
                   cancel: CancelCheck | None) -> float | None:
    """How far from ``at`` a cell of ``region`` may hold ``type`` (None: nowhere), cells within ``near`` of
    it certified again on a box around ``at``."""
    far, cell = _farthest_possible(compiled, region, parameters, at, type, data, tolerance, cancel)
    if far is not None and far <= near:
        half = far + cell
        box = Domain(max(region.xmin, at[0] - half), min(region.xmax, at[0] + half),
                     max(region.ymin, at[1] - half), min(region.ymax, at[1] + half), nx=2, ny=2)
        far, _ = _farthest_possible(compiled, box, parameters, at, type, data, tolerance, cancel)
    return far


def _farthest_possible(compiled: CompiledEquation, region: Domain, parameters: Mapping[str, float],
                       at: tuple[float, float], type: str, data, tolerance: float, cancel: CancelCheck | None
                       ) -> tuple[float | None, float]:
    """The largest distance from ``at`` of a cell that may hold ``type`` (None: no such cell), and the side
    of the largest such cell."""
    certified = certify_map(compiled, region, parameters=parameters, data=data, tolerance=tolerance,
                            max_cells=PROOF_MAX_CELLS, cancel=cancel)
    cells = certified.leaves
    possible = (cells.types & _BITS[type]) != 0
    if not possible.any():
        return None, 0.0
    x0, x1, y0, y1 = (v[possible] for v in (cells.x0, cells.x1, cells.y0, cells.y1))
    dx = np.maximum(np.abs(x0 - at[0]), np.abs(x1 - at[0]))
    dy = np.maximum(np.abs(y0 - at[1]), np.abs(y1 - at[1]))
    far = float(np.max(np.hypot(dx, dy)))
    cell = float(np.max(np.maximum(x1 - x0, y1 - y0)))
    return (far if math.isfinite(far) else math.inf), cell
