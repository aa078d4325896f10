"""Everything known about the equation at one point: type, coefficients, characteristics, principal axes.

This backs the point readout of the map and the pins of a study. A point outside the domain is still computed
(the coefficients are defined there as anywhere) and is flagged by ``inside = False`` and a sentence in the
message. Undefined coefficients give type UNDEFINED and a message naming them, never an exception.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from core.analysis.classify import DEFAULT_TOLERANCE, TypeCode, classify_points
from core.analysis.directions import characteristic_directions, parabolic_direction
from core.analysis.discriminant import discriminant
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES, QuantitySource

__all__ = ["VERTICAL_TOLERANCE", "ProbeResult", "probe_point"]

# A direction whose first component is below this (unit vector) is vertical: its slope is reported as None.
VERTICAL_TOLERANCE = 1e-12


@dataclass(frozen=True)
class ProbeResult:
    """The equation at ``point`` = (x, y).

    ``discriminant`` D = b^2 - 4ac and ``normalized`` D / (b^2 + 4|ac|) are dimensionless ratios of the
    coefficients' units. ``directions_deg`` are the real characteristic directions, family 1 then family 2
    (one direction when parabolic, none when elliptic or undefined), as angles in [0, 180) degrees from the
    first axis; ``slopes`` the matching dy/dx (None when vertical); ``angle_between_deg`` the acute angle
    between the two families in [0, 90] (0 when parabolic). In the elliptic case ``principal_axes_deg`` are
    the eigenvector directions of [[a, b/2], [b/2, c]], the axis of the larger |eigenvalue| first, and
    ``anisotropy`` = sqrt(|larger| / |smaller|) >= 1: the equation becomes Laplace's equation once distances
    along the first axis are divided by it. ``definitions`` holds every definition's value (NaN if undefined).
    """

    point: tuple[float, float]
    type: TypeCode
    a: float
    b: float
    c: float
    discriminant: float
    normalized: float
    directions_deg: tuple[float, ...]
    slopes: tuple[float | None, ...]
    angle_between_deg: float | None
    principal_axes_deg: tuple[float, float] | None
    anisotropy: float | None
    definitions: dict[str, float]
    inside: bool
    message: str


def _angle_deg(vector: np.ndarray) -> float:
    """Angle of an upper-half-plane unit vector in [0, 180) degrees."""
    angle = math.degrees(math.atan2(float(vector[1]), float(vector[0]))) % 180.0
    return 0.0 if angle >= 180.0 else angle


def _slope(vector: np.ndarray) -> float | None:
    return None if abs(float(vector[0])) < VERTICAL_TOLERANCE else float(vector[1]) / float(vector[0])


def _principal_axes(a: float, b: float, c: float) -> tuple[tuple[float, float], float]:
    """Axes (larger |eigenvalue| first, degrees in [0, 180)) and sqrt of the |eigenvalue| ratio."""
    mean = 0.5 * (a + c)
    radius = math.hypot(0.5 * (a - c), 0.5 * b)
    upper_angle = 0.5 * math.degrees(math.atan2(b, a - c)) % 180.0   # eigenvector of mean + radius
    upper, lower = mean + radius, mean - radius
    if abs(upper) >= abs(lower):
        major, minor, major_angle = upper, lower, upper_angle
    else:
        major, minor, major_angle = lower, upper, (upper_angle + 90.0) % 180.0
    minor_angle = (major_angle + 90.0) % 180.0
    ratio = math.sqrt(abs(major) / abs(minor)) if minor != 0.0 else math.inf
    return (major_angle, minor_angle), ratio


def probe_point(compiled: CompiledEquation, x: float, y: float, *,
                parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                tolerance: float = DEFAULT_TOLERANCE, domain: Domain | None = None) -> ProbeResult:
    """Evaluate and describe the equation at (x, y); the type uses the map's rule (see core.analysis.classify).

    ``domain`` only decides ``inside``; without one the point counts as inside. Raises ValueError for a
    non-finite point, ExpressionError if the equation needs background data and ``data`` is None.
    """
    x, y = float(x), float(y)
    if not (math.isfinite(x) and math.isfinite(y)):
        raise ValueError(f"probe point must be finite, got ({x}, {y})")
    with np.errstate(all="ignore"):
        values = compiled.evaluate(np.float64(x), np.float64(y), parameters=parameters, data=data)
        codes, normalized = classify_points(compiled, np.float64(x), np.float64(y), parameters=parameters,
                                            data=data, tolerance=tolerance)
    a, b, c = (float(values[name]) for name in COEFFICIENT_NAMES)
    type_code = TypeCode(int(codes))
    notes: list[str] = []
    directions: list[np.ndarray] = []
    angle_between: float | None = None
    axes: tuple[float, float] | None = None
    anisotropy: float | None = None
    d = float(discriminant(a, b, c))
    if type_code is not TypeCode.UNDEFINED and (not math.isfinite(d) or (d == 0.0 and normalized != 0.0)):
        # b^2 or ac over- or underflowed: D itself is out of double range, its sign (the type) is not.
        size = "above 1.8e308" if not math.isfinite(d) else "below 1e-308"
        notes.append(f"D = b^2 - 4ac is {size} in size, beyond double precision; the type and directions come "
                     f"from a, b, c scaled by a power of two")
        d = math.nan

    if type_code is TypeCode.UNDEFINED:
        bad = [(name, value) for name, value in zip(COEFFICIENT_NAMES, (a, b, c)) if not math.isfinite(value)]
        if bad:
            names = ", ".join(name for name, _ in bad)
            shown = ", ".join(f"{name} = {value}" for name, value in bad)
            verb = "coefficient {} is" if len(bad) == 1 else "coefficients {} are"
            notes.append(f"undefined: {verb.format(names)} not finite ({shown})")
        else:
            notes.append("undefined: the discriminant overflows")
    elif type_code is TypeCode.HYPERBOLIC:
        first, second = characteristic_directions(a, b, c)
        directions = [first, second]
        notes.append("hyperbolic (D > 0): two real characteristic directions")
    elif type_code is TypeCode.PARABOLIC:
        if a == 0.0 and b == 0.0 and c == 0.0:
            notes.append("parabolic: a = b = c = 0, no second-order part and no characteristic direction")
        else:
            directions = [parabolic_direction(a, b, c)]
            notes.append("parabolic (D = 0 within tolerance): one characteristic direction")
    else:
        axes, anisotropy = _principal_axes(a, b, c)
        notes.append("elliptic (D < 0): no real characteristic; principal axes of [[a, b/2], [b/2, c]]")

    angles = tuple(_angle_deg(d) for d in directions)
    slopes = tuple(_slope(d) for d in directions)
    if len(angles) == 2:
        gap = abs(angles[0] - angles[1]) % 180.0
        angle_between = min(gap, 180.0 - gap)
    elif len(angles) == 1:
        angle_between = 0.0

    definitions = {name: float(values[name]) for name in compiled.definition_order}
    for name, value in definitions.items():
        if not math.isfinite(value):
            notes.append(f"definition {name} = {value} is not finite")
    inside = True if domain is None else domain.contains(x, y)
    if not inside:
        x_name, y_name = compiled.variables
        notes.append(f"outside domain {domain.name!r} ({x_name} in [{domain.xmin:g}, {domain.xmax:g}], "
                     f"{y_name} in [{domain.ymin:g}, {domain.ymax:g}]); values are computed all the same")
    return ProbeResult(
        point=(x, y), type=type_code, a=a, b=b, c=c, discriminant=d,
        normalized=float(normalized), directions_deg=angles, slopes=slopes, angle_between_deg=angle_between,
        principal_axes_deg=axes, anisotropy=anisotropy, definitions=definitions, inside=inside,
        message="; ".join(notes),
    )
