"""How a characteristic goes on past the domain edge or the type-change line: as the other family.

A wave path that reaches a wall reflects, and one that reaches a turning line (D = 0 with the characteristics
crossing it, the Tricomi case) turns back in a cusp. In both cases the path goes on along the OTHER family
from the point where it stopped:

- at an edge, in the other family's direction that points into the domain (at a corner, into it across both
  edges); where that direction runs along the edge, or no direction leaves a corner, the path cannot go on;
- at the type-change line, in the other family's direction that turns back from the way the path arrived
  (both families share the parabolic direction on the line, so this is the other branch of the cusp, back
  into the hyperbolic zone). Where the parabolic direction runs along the line (characteristics touch it
  tangentially, the Keldysh case) the path cannot go on.

core.analysis.tracing uses these directions to continue curves through their events (``CurveEvent``).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from core.analysis.directions import unit_direction
from core.analysis.discriminant import discriminant

__all__ = ["EVENT_KINDS", "CurveEvent", "continuation_directions"]

# What a curve went on through.
EVENT_KINDS = {
    "edge": "reflected at the edge of the domain, going on as the other family",
    "type_change": "turned back at the type-change line D = 0 (a cusp), going on as the other family",
}

# A continuation must leave every edge it starts on by at least this component (of a unit direction) along
# the inward normal, or it would run along the edge.
_LEAVING = 1e-9
# The parabolic direction must cross the type-change line at least this steeply (cosine to the line's normal):
# below it the characteristics touch the line tangentially and a turned-back path would only graze it.
_CROSSING = 1e-3
# Step of the central differences giving the normal of D = 0, as a fraction of the domain diagonal.
_GRADIENT_STEP = 1e-6
# Points within this fraction of the diagonal (plus rounding of the bound) from an edge lie on it.
_ON_EDGE = 1e-12


@dataclass(frozen=True)
class CurveEvent:
    """A point where a characteristic went on as the other family.

    ``kind`` is a key of EVENT_KINDS; ``at`` is the point (x, y), which is ``points[index]`` of its curve.
    """

    kind: str
    at: tuple[float, float]
    index: int


Coefficients = Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray]]


def continuation_directions(coefficients: Coefficients, x, y, sign, at_edge, arrival_x, arrival_y,
                            bounds: tuple[float, float, float, float], scale: float):
    """Unit directions (dx, dy) of the family ``sign`` (+1: family 1, -1: family 2) at points (x, y) (k,),
    oriented to go on past an edge (``at_edge`` True) or the type-change line (False), and ``ok`` (k,):
    False where the path cannot go on (see the module docstring) or the coefficients are undefined there.

    ``arrival`` is the direction the path arrived in; ``bounds`` = (xmin, xmax, ymin, ymax); ``scale`` is
    the domain diagonal. ``coefficients(x, y)`` returns a, b, c broadcast to the shape of x.
    """
    x, y = np.asarray(x, dtype=np.float64), np.asarray(y, dtype=np.float64)
    at_edge = np.asarray(at_edge, dtype=bool)
    with np.errstate(all="ignore"):
        a, b, c = coefficients(x, y)
        dx, dy = unit_direction(a, b, c, sign, discriminant(a, b, c))
        ok = np.isfinite(dx) & np.isfinite(dy)
        edge_flip, edge_ok = _into_domain(x, y, dx, dy, bounds, scale)
        line_flip = np.where(dx * arrival_x + dy * arrival_y > 0.0, -1.0, 1.0)
        line_ok = _crosses_line(coefficients, x, y, a, b, c, scale)
        flip = np.where(at_edge, edge_flip, line_flip)
        ok &= np.where(at_edge, edge_ok, line_ok)
    return dx * flip, dy * flip, ok


def _into_domain(x, y, dx, dy, bounds, scale):
    """The flip (+1 or -1) that turns (dx, dy) into the domain across every edge (x, y) lies on, and
    whether it then leaves each of them."""
    xmin, xmax, ymin, ymax = bounds
    tolerance = _ON_EDGE * scale + 8.0 * np.finfo(float).eps * max(abs(xmin), abs(xmax), abs(ymin), abs(ymax))
    inward = ((x - xmin <= tolerance, dx), (xmax - x <= tolerance, -dx),
              (y - ymin <= tolerance, dy), (ymax - y <= tolerance, -dy))
    total = sum(np.where(on, component, 0.0) for on, component in inward)
    flip = np.where(total < 0.0, -1.0, 1.0)
    on_any = np.zeros(np.shape(x), dtype=bool)
    leaves = np.ones(np.shape(x), dtype=bool)
    for on, component in inward:
        on_any |= on
        leaves &= ~on | (flip * component > _LEAVING)
    return flip, on_any & leaves


def _crosses_line(coefficients, x, y, a, b, c, scale):
    """True where the parabolic direction at (x, y) crosses the line D = 0 rather than running along it.

    The line's normal is the gradient of D by central differences; where it cannot be formed (undefined
    coefficients nearby, or D flat), nothing is known against going on and the answer is True.
    """
    step = _GRADIENT_STEP * scale
    around_x = np.stack([x + step, x - step, x, x])
    around_y = np.stack([y, y, y + step, y - step])
    d = discriminant(*coefficients(around_x, around_y))
    gx, gy = d[0] - d[1], d[2] - d[3]
    px, py = unit_direction(a, b, c, 1.0, np.zeros_like(x))
    norm = np.hypot(gx, gy)
    cosine = np.abs(px * gx + py * gy) / norm
    known = np.isfinite(cosine) & (norm > 0.0)
    return ~known | (cosine >= _CROSSING)
