"""The window's picture of a study: equations, domains, pins, seeds and layer visibility, as frozen values.

Every edit in the window produces a new ``Study``; the undo stack keeps the ones before. ``gui.project_bridge``
converts to and from core's project document for files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from core.classify import DEFAULT_TOLERANCE
from core.domain import Domain
from core.equation import Equation

__all__ = ["FAMILIES", "LAYER_LABELS", "Layers", "PinMark", "SeedLine", "Study"]

FAMILIES = (1, 2)


@dataclass(frozen=True)
class PinMark:
    """A pinned point of the (x, y) plane, with an optional label."""

    x: float
    y: float
    label: str = ""

    def __post_init__(self) -> None:
        if not (math.isfinite(self.x) and math.isfinite(self.y)):
            raise ValueError(f"a pin needs finite coordinates, got ({self.x}, {self.y})")


@dataclass(frozen=True)
class SeedLine:
    """Where characteristics start: one point (``end`` None) or ``curves`` points spread along a segment.

    The segment's end points are included; with ``curves`` = 1 a segment seeds its midpoint.
    """

    start: tuple[float, float]
    end: tuple[float, float] | None = None
    curves: int = 1
    families: tuple[int, ...] = FAMILIES
    label: str = ""

    def __post_init__(self) -> None:
        values = (*self.start, *(self.end or ()))
        if len(values) not in (2, 4) or not all(math.isfinite(v) for v in values):
            raise ValueError(f"seed ends must be finite points, got {self.start} and {self.end}")
        if not 1 <= int(self.curves) <= 1000:
            raise ValueError(f"the number of curves must be in [1, 1000], got {self.curves}")
        if self.end is None and self.curves != 1:
            raise ValueError(f"a single-point seed starts exactly 1 curve per family, got {self.curves}")
        if not self.families or any(f not in FAMILIES for f in self.families):
            raise ValueError(f"families must be a non-empty subset of {FAMILIES}, got {self.families}")

    @property
    def is_point(self) -> bool:
        return self.end is None

    def points(self) -> np.ndarray:
        """The seed points, shape (curves, 2)."""
        if self.end is None:
            return np.array([self.start], dtype=np.float64)
        start, end = np.asarray(self.start, dtype=np.float64), np.asarray(self.end, dtype=np.float64)
        if self.curves == 1:
            return ((start + end) / 2.0)[None, :]
        t = np.linspace(0.0, 1.0, self.curves)[:, None]
        return start + t * (end - start)


LAYER_LABELS = {
    "type_map": "Type zones",
    "type_lines": "Type-change lines",
    "family_1": "Characteristics, family 1",
    "family_2": "Characteristics, family 2",
    "pins": "Pins",
    "seeds": "Seed segments",
    "legend": "Legend",
}


@dataclass(frozen=True)
class Layers:
    """Which map layers are drawn."""

    type_map: bool = True
    type_lines: bool = True
    family_1: bool = True
    family_2: bool = True
    pins: bool = True
    seeds: bool = True
    legend: bool = True

    def with_layer(self, name: str, visible: bool) -> Layers:
        if name not in LAYER_LABELS:
            raise ValueError(f"unknown layer {name!r}; expected one of {', '.join(LAYER_LABELS)}")
        return replace(self, **{name: bool(visible)})

    def visible(self, name: str) -> bool:
        return bool(getattr(self, name))


@dataclass(frozen=True)
class Study:
    """Everything the window edits; ``shown_equation`` and ``shown_domain`` index the two tuples."""

    equations: tuple[Equation, ...]
    domains: tuple[Domain, ...]
    shown_equation: int = 0
    shown_domain: int = 0
    pins: tuple[PinMark, ...] = ()
    seeds: tuple[SeedLine, ...] = ()
    layers: Layers = field(default_factory=Layers)
    tolerance: float = DEFAULT_TOLERANCE
    notes: str = ""
    metadata: object = None   # carried unchanged for the project file (creation time, writer)
    data_sources: tuple = ()  # core.project.DataSourceRef, each path absolute (made relative in the file)

    def __post_init__(self) -> None:
        if not self.equations or not self.domains:
            raise ValueError("a study needs at least one equation and one domain")
        if not 0 <= self.shown_equation < len(self.equations):
            raise ValueError(f"shown_equation {self.shown_equation} is outside 0..{len(self.equations) - 1}")
        if not 0 <= self.shown_domain < len(self.domains):
            raise ValueError(f"shown_domain {self.shown_domain} is outside 0..{len(self.domains) - 1}")

    @property
    def equation(self) -> Equation:
        return self.equations[self.shown_equation]

    @property
    def domain(self) -> Domain:
        return self.domains[self.shown_domain]

    def with_equation(self, equation: Equation) -> Study:
        equations = list(self.equations)
        equations[self.shown_equation] = equation
        return replace(self, equations=tuple(equations))

    def with_domain(self, domain: Domain) -> Study:
        domains = list(self.domains)
        domains[self.shown_domain] = domain
        return replace(self, domains=tuple(domains))
