"""How readouts read, the same in the window, the command line's text and its JSON values.

- Rounding noise reads 0: a coordinate (a point, a centroid, the end of a traced curve) whose size is below
  ``NOISE_FRACTION`` of the domain's extent along its axis is a sum of rounding errors (x = 1.1102e-16 where
  the user clicked 0, a centroid of 7.7e-17 of a symmetric pocket), so it is shown and written as exactly 0.
  ``without_noise`` does it for one value, ``point_without_noise`` and ``points_without_noise`` per axis.
- One wording for characteristic directions: a direction along the second variable's axis has the slope
  ``VERTICAL_SLOPE`` (its dy/dx does not exist), and a point with no real characteristic (elliptic, undefined,
  or a = b = c = 0) reads ``NO_REAL_DIRECTION``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

__all__ = [
    "NOISE_FRACTION",
    "NO_REAL_DIRECTION",
    "VERTICAL_SLOPE",
    "axis_extents",
    "direction_rows",
    "directions_text",
    "point_without_noise",
    "points_without_noise",
    "slope_text",
    "slopes_text",
    "without_noise",
]

NOISE_FRACTION = 1e-12
NO_REAL_DIRECTION = "none (no real direction)"
VERTICAL_SLOPE = "vertical"


def axis_extents(domain) -> tuple[float, float]:
    """The domain's extent along each axis (xmax - xmin, ymax - ymin); (0, 0) without a domain (nothing is
    then taken for noise)."""
    if domain is None:
        return 0.0, 0.0
    return abs(float(domain.xmax) - float(domain.xmin)), abs(float(domain.ymax) - float(domain.ymin))


def without_noise(value, extent: float):
    """``value`` as a float, or exactly 0.0 when its size is at most NOISE_FRACTION of ``extent`` (-0.0 also
    reads 0.0); None stays None and NaN stays NaN."""
    if value is None:
        return None
    value = float(value)
    if math.isfinite(value) and abs(value) <= NOISE_FRACTION * extent:
        return 0.0
    return value + 0.0


def point_without_noise(point: Sequence[float], domain) -> tuple[float, float]:
    """An (x, y) point with each coordinate cleaned against the domain's extent along its axis."""
    width, height = axis_extents(domain)
    return without_noise(point[0], width), without_noise(point[1], height)


def points_without_noise(points, domain) -> np.ndarray:
    """An (n, 2) float64 copy of ``points`` with rounding noise set to 0 per axis (see ``without_noise``)."""
    points = np.array(points, dtype=np.float64).reshape(-1, 2)
    width, height = axis_extents(domain)
    for column, extent in ((0, width), (1, height)):
        values = points[:, column]
        values[np.abs(values) <= NOISE_FRACTION * extent] = 0.0
    return points


def _number(value: float, digits: int) -> str:
    return f"{float(value) + 0.0:.{digits}g}"


def slope_text(slope: float | None, digits: int = 9) -> str:
    """One slope dy/dx: the number, or VERTICAL_SLOPE for a direction along the second axis (None)."""
    if slope is None or (isinstance(slope, float) and math.isnan(slope)):
        return VERTICAL_SLOPE
    return _number(slope, digits)


def slopes_text(slopes: Sequence[float | None] | None, digits: int = 9) -> str:
    """The slopes of a point's characteristic directions, comma-separated; NO_REAL_DIRECTION when none."""
    if not slopes:
        return NO_REAL_DIRECTION
    return ", ".join(slope_text(slope, digits) for slope in slopes)


def directions_text(directions_deg: Sequence[float] | None, spec: str = ".6g", unit: str = " deg",
                    axis: str = "") -> str:
    """A point's characteristic directions in degrees, each formatted with ``spec`` and followed by ``unit``,
    then "from the AXIS axis" when ``axis`` is given; NO_REAL_DIRECTION when there is none."""
    shown = [d for d in (directions_deg or ()) if d is not None and math.isfinite(d)]
    if not shown:
        return NO_REAL_DIRECTION
    text = ", ".join(f"{float(d) + 0.0:{spec}}{unit}" for d in shown)
    return f"{text} from the {axis} axis" if axis else text


def direction_rows(result, variables: Sequence[str] = ("x", "y"), *, spec: str = ".6g", unit: str = " deg",
                   slope_digits: int = 9) -> list[tuple[str, str]]:
    """(label, text) rows of a probe result's (core.analysis.probe.ProbeResult) characteristic directions
    and their slopes, for every readout that lists them: none where the type has no real characteristic
    (elliptic, undefined); for a parabolic or hyperbolic point the directions, or NO_REAL_DIRECTION
    (a = b = c = 0), then the slopes d(second)/d(first) with VERTICAL_SLOPE along the second axis."""
    label = getattr(getattr(result, "type", None), "label", "")
    if label not in ("parabolic", "hyperbolic"):
        return []
    x_name, y_name = variables
    directions = tuple(getattr(result, "directions_deg", ()) or ())
    rows = [("characteristic directions", directions_text(directions, spec, unit, x_name))]
    if directions:
        rows.append((f"slopes d{y_name}/d{x_name}", slopes_text(getattr(result, "slopes", ()), slope_digits)))
    return rows
