"""A named rectangle of the (x, y) plane with the resolution of the grid laid over it."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["MAX_GRID", "MIN_GRID", "Domain"]

MIN_GRID = 2
MAX_GRID = 8192


@dataclass(frozen=True)
class Domain:
    """[xmin, xmax] x [ymin, ymax] sampled by nx x ny nodes (edges included).

    Grid arrays are row-major: index [j, i] is the node (x_i, y_j).
    """

    xmin: float
    xmax: float
    ymin: float
    ymax: float
    nx: int = 201
    ny: int = 201
    name: str = "domain"

    def __post_init__(self) -> None:
        for label, value in (("xmin", self.xmin), ("xmax", self.xmax), ("ymin", self.ymin),
                             ("ymax", self.ymax)):
            if not isinstance(value, int | float) or not math.isfinite(value):
                raise ValueError(f"domain {self.name!r}: {label} must be a finite number, got {value!r}")
        if not self.xmin < self.xmax:
            raise ValueError(f"domain {self.name!r}: xmin ({self.xmin}) must be less than xmax ({self.xmax})")
        if not self.ymin < self.ymax:
            raise ValueError(f"domain {self.name!r}: ymin ({self.ymin}) must be less than ymax ({self.ymax})")
        for label, value in (("nx", self.nx), ("ny", self.ny)):
            if isinstance(value, bool) or not isinstance(value, int) or not MIN_GRID <= value <= MAX_GRID:
                raise ValueError(f"domain {self.name!r}: {label} must be an integer in "
                                 f"[{MIN_GRID}, {MAX_GRID}], got {value!r}")
        width, height = self.xmax - self.xmin, self.ymax - self.ymin
        if not (math.isfinite(math.hypot(width, height)) and math.isfinite(width * height)):
            raise ValueError(f"domain {self.name!r}: too large: its width, height, diagonal or area overflows double "
                             f"precision (about 1.8e308); shift or rescale the variables")
        for axis, low, high, count in (("x", self.xmin, self.xmax, self.nx), ("y", self.ymin, self.ymax, self.ny)):
            _check_resolvable(self.name, axis, low, high, count)

    @property
    def x_nodes(self) -> np.ndarray:
        """The nx node abscissae, shape (nx,)."""
        return np.linspace(self.xmin, self.xmax, self.nx)

    @property
    def y_nodes(self) -> np.ndarray:
        """The ny node ordinates, shape (ny,)."""
        return np.linspace(self.ymin, self.ymax, self.ny)

    @property
    def size(self) -> float:
        """The diagonal length: the scale for distances in this domain."""
        return math.hypot(self.xmax - self.xmin, self.ymax - self.ymin)

    @property
    def spacing(self) -> tuple[float, float]:
        return ((self.xmax - self.xmin) / (self.nx - 1), (self.ymax - self.ymin) / (self.ny - 1))

    def contains(self, x: float, y: float) -> bool:
        return self.xmin <= x <= self.xmax and self.ymin <= y <= self.ymax

    def with_grid(self, nx: int, ny: int) -> Domain:
        return Domain(self.xmin, self.xmax, self.ymin, self.ymax, nx, ny, self.name)


def _doubles_between(low: float, high: float) -> int:
    """How many double-precision numbers lie in [low, high] (low <= high, both finite)."""
    def ordinal(value: float) -> int:            # doubles in order map to consecutive integers
        bits = int(np.float64(value).view(np.int64))
        return bits if bits >= 0 else -(bits & 0x7FFFFFFFFFFFFFFF)
    return ordinal(high) - ordinal(low) + 1


def _check_resolvable(name: str, axis: str, low: float, high: float, count: int) -> None:
    """Refuse an extent so narrow that its ``count`` grid nodes would not be distinct numbers."""
    nodes = np.linspace(low, high, count)
    if np.all(nodes[1:] > nodes[:-1]):
        return
    raise ValueError(f"domain {name!r}: {axis} from {low!r} to {high!r} is too narrow for {count} grid nodes "
                     f"(double precision holds only {_doubles_between(low, high)} numbers there); widen it or "
                     f"use fewer nodes")

