"""The project document: equations, domains, pins, seeds, view settings and notes, as frozen dataclasses.

A ``Project`` is what Mixtype stores in its own JSON project files (see core.project_io for reading and
writing). It is plain data: expressions are kept as the text the user typed and are only ever parsed by the
whitelist parser. Every change makes a new Project (``dataclasses.replace`` or the ``with_*`` helpers), so an
undo stack can simply keep old ones.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

import core
from core.classify import DEFAULT_TOLERANCE
from core.domain import Domain
from core.equation import Equation

__all__ = [
    "FAMILIES",
    "MAX_SEED_CURVES",
    "PROJECT_SUFFIX",
    "Metadata",
    "Pin",
    "Project",
    "Seed",
    "ViewSettings",
    "demo_project_names",
    "demo_project_path",
    "new_project",
    "utc_timestamp",
]

FAMILIES = (1, 2)
MAX_SEED_CURVES = 1000
PROJECT_SUFFIX = ".mixtype.json"
DEFAULT_DEMO = "transonic_bump"


def _point(value, what: str) -> tuple[float, float]:
    try:
        x, y = (float(v) for v in value)
    except (TypeError, ValueError):
        raise ValueError(f"{what} must be a pair of numbers (x, y), got {value!r}") from None
    if not (math.isfinite(x) and math.isfinite(y)):
        raise ValueError(f"{what} must be finite, got ({x}, {y})")
    return x, y


@dataclass(frozen=True)
class Pin:
    """A probed point (x, y) of the plane, in the units of the equation's variables, with an optional label."""

    x: float
    y: float
    label: str = ""

    def __post_init__(self) -> None:
        _point((self.x, self.y), "a pin")


@dataclass(frozen=True)
class Seed:
    """Where characteristic curves start: one point, or ``curves`` points evenly spread along a segment.

    ``end`` is None for a single point (then ``curves`` is 1). ``families`` lists which characteristic
    families (1 and/or 2) are traced from each seed point.
    """

    start: tuple[float, float]
    end: tuple[float, float] | None = None
    curves: int = 1
    families: tuple[int, ...] = FAMILIES
    label: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "start", _point(self.start, "a seed start"))
        if self.end is not None:
            object.__setattr__(self, "end", _point(self.end, "a seed end"))
        if isinstance(self.curves, bool) or not isinstance(self.curves, int):
            raise TypeError(f"the number of curves must be an integer, got {self.curves!r}")
        if self.end is None and self.curves != 1:
            raise ValueError(f"a single-point seed starts exactly 1 curve per family, got {self.curves}")
        if not 1 <= self.curves <= MAX_SEED_CURVES:
            raise ValueError(f"the number of curves must be in [1, {MAX_SEED_CURVES}], got {self.curves}")
        families = tuple(self.families)
        if not families or len(set(families)) != len(families) or not set(families) <= set(FAMILIES):
            raise ValueError(f"families must be 1, 2 or both (each once), got {self.families!r}")
        object.__setattr__(self, "families", tuple(sorted(families)))

    @property
    def is_segment(self) -> bool:
        return self.end is not None

    def points(self) -> np.ndarray:
        """The seed points, shape (curves, 2): the segment's end points included (its midpoint if curves=1)."""
        if self.end is None:
            return np.array([self.start], dtype=np.float64)
        start, end = np.array(self.start), np.array(self.end)
        if self.curves == 1:
            return ((start + end) / 2.0)[None, :]
        t = np.linspace(0.0, 1.0, self.curves)[:, None]
        return start + t * (end - start)


@dataclass(frozen=True)
class ViewSettings:
    """What the map shows, kept with the project so a study reopens as it was left."""

    show_type_map: bool = True
    show_type_change_lines: bool = True
    show_characteristics: bool = True
    show_pins: bool = True
    show_legend: bool = True
    parabolic_tolerance: float = DEFAULT_TOLERANCE

    def __post_init__(self) -> None:
        if not 0.0 <= float(self.parabolic_tolerance) < 1.0:
            raise ValueError(f"parabolic tolerance must be in [0, 1), got {self.parabolic_tolerance!r}")


def utc_timestamp(now: datetime | None = None) -> str:
    """ISO 8601 UTC time to the second, e.g. '2024-03-05T14:07:09Z' (``now`` defaults to the current time)."""
    now = datetime.now(UTC) if now is None else now
    if now.tzinfo is None:
        raise ValueError(f"a timestamp needs a time zone, got the naive time {now.isoformat()}")
    return now.astimezone(UTC).replace(microsecond=0).strftime("%Y-%m-%dT%H:%M:%SZ")


@dataclass(frozen=True)
class Metadata:
    """When the project was created and last changed (ISO 8601 UTC), and which Mixtype version wrote it."""

    created: str
    modified: str
    written_by: str = core.__version__

    def touched(self, now: datetime | None = None) -> Metadata:
        """A copy marked as changed at ``now`` by this Mixtype version."""
        return Metadata(created=self.created, modified=utc_timestamp(now), written_by=core.__version__)


def _unique(names: list[str], what: str) -> None:
    seen: set[str] = set()
    for name in names:
        if name in seen:
            raise ValueError(f"two {what}s are named {name!r}; names must be unique")
        seen.add(name)


@dataclass(frozen=True)
class Project:
    """Everything a Mixtype study holds. Equation names are unique, and so are domain names.

    ``shown_equation`` and ``shown_domain`` name the pair the window shows and the command line uses by
    default.
    """

    equations: tuple[Equation, ...]
    domains: tuple[Domain, ...]
    shown_equation: str
    shown_domain: str
    pins: tuple[Pin, ...] = ()
    seeds: tuple[Seed, ...] = ()
    view: ViewSettings = field(default_factory=ViewSettings)
    notes: str = ""
    metadata: Metadata = field(default_factory=lambda: Metadata(utc_timestamp(), utc_timestamp()))

    def __post_init__(self) -> None:
        for name in ("equations", "domains", "pins", "seeds"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
        if not self.equations:
            raise ValueError("a project holds at least one equation")
        if not self.domains:
            raise ValueError("a project holds at least one domain")
        _unique([e.name for e in self.equations], "equation")
        _unique([d.name for d in self.domains], "domain")
        self.equation(self.shown_equation)
        self.domain(self.shown_domain)

    @property
    def equation_names(self) -> tuple[str, ...]:
        return tuple(e.name for e in self.equations)

    @property
    def domain_names(self) -> tuple[str, ...]:
        return tuple(d.name for d in self.domains)

    def equation(self, name: str) -> Equation:
        """The equation called ``name``; KeyError listing the names there are otherwise."""
        for equation in self.equations:
            if equation.name == name:
                return equation
        raise KeyError(f"no equation named {name!r}; the project has {', '.join(map(repr, self.equation_names))}")

    def domain(self, name: str) -> Domain:
        """The domain called ``name``; KeyError listing the names there are otherwise."""
        for domain in self.domains:
            if domain.name == name:
                return domain
        raise KeyError(f"no domain named {name!r}; the project has {', '.join(map(repr, self.domain_names))}")

    def shown(self) -> tuple[Equation, Domain]:
        """The (equation, domain) pair the window shows."""
        return self.equation(self.shown_equation), self.domain(self.shown_domain)

    def with_equation(self, equation: Equation, *, replacing: str | None = None) -> Project:
        """A copy with ``equation`` added, or put in place of the equation named ``replacing``.

        Renaming the shown equation keeps it shown.
        """
        if replacing is None:
            return replace(self, equations=(*self.equations, equation))
        self.equation(replacing)
        equations = tuple(equation if e.name == replacing else e for e in self.equations)
        shown = equation.name if self.shown_equation == replacing else self.shown_equation
        return replace(self, equations=equations, shown_equation=shown)

    def with_domain(self, domain: Domain, *, replacing: str | None = None) -> Project:
        """A copy with ``domain`` added, or put in place of the domain named ``replacing``."""
        if replacing is None:
            return replace(self, domains=(*self.domains, domain))
        self.domain(replacing)
        domains = tuple(domain if d.name == replacing else d for d in self.domains)
        shown = domain.name if self.shown_domain == replacing else self.shown_domain
        return replace(self, domains=domains, shown_domain=shown)

    def content_equals(self, other: Project) -> bool:
        """True when the two projects differ at most in their metadata (definition order counts)."""
        def key(project: Project):
            return tuple((e, tuple(e.definitions.items()), tuple(e.parameters.items()))
                         for e in project.equations)
        return (replace(self, metadata=other.metadata) == other) and key(self) == key(other)


def new_project(equation: Equation, domain: Domain, *, now: datetime | None = None) -> Project:
    """A project holding one equation and one domain, both shown, created at ``now`` (default: current time)."""
    stamp = utc_timestamp(now)
    return Project(equations=(equation,), domains=(domain,), shown_equation=equation.name,
                   shown_domain=domain.name, metadata=Metadata(created=stamp, modified=stamp))


def _demo_folder() -> Path:
    return Path(core.__file__).resolve().parent.parent / "resources" / "demo"


def demo_project_names() -> tuple[str, ...]:
    """Names of the demo projects shipped in resources/demo (without the .mixtype.json suffix)."""
    return tuple(sorted(p.name[: -len(PROJECT_SUFFIX)] for p in _demo_folder().glob("*" + PROJECT_SUFFIX)))


def demo_project_path(name: str | None = None) -> Path:
    """The path of a demo project: ``name`` with or without its suffix; the default demo when None."""
    name = DEFAULT_DEMO if name is None else name
    name = name.removesuffix(PROJECT_SUFFIX)
    if name not in demo_project_names():
        raise FileNotFoundError(f"no demo project named {name!r}; there are {', '.join(demo_project_names())}")
    return _demo_folder() / (name + PROJECT_SUFFIX)
