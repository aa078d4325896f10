"""The project document: equations, domains, pins, seeds, view settings and notes, as frozen dataclasses.

A ``Project`` is what Mixtype stores in its own JSON project files (see core.project.io for reading and
writing). It is plain data: expressions are kept as the text the user typed and are only ever parsed by the
whitelist parser. Every change makes a new Project (``dataclasses.replace`` or the ``with_*`` helpers), so an
undo stack can simply keep old ones.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

import core
from core.analysis.classify import DEFAULT_TOLERANCE
from core.analysis.field_values import TRADE_FIELDS
from core.analysis.tracing import MAX_BOUNCES, seeds_along_segment
from core.bundled import bundled_path
from core.certify.settings import DEFAULT_MAX_CELLS, DEFAULT_MIN_CELL_FRACTION
from core.data.raw import FORMATS
from core.domain import Domain
from core.equations.equation import COEFFICIENT_NAMES, Equation
from core.equations.language import ExpressionError, check_name
from core.project.sweeps import MAX_SWEEPS, SavedSweep

__all__ = [
    "DATA_FORMATS",
    "FAMILIES",
    "FIELD_COLOUR_MAPS",
    "FIELD_KINDS",
    "MAX_CELLS_RANGE",
    "MAX_ISO_VALUES",
    "MAX_SEED_CURVES",
    "MIN_CELL_FRACTION_RANGE",
    "PROJECT_SUFFIX",
    "CertifiedLayerSettings",
    "DataSourceRef",
    "FieldLayerSettings",
    "Metadata",
    "Pin",
    "Project",
    "SavedSweep",
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
DATA_FORMATS = tuple(sorted(set(FORMATS.values())))
MIN_CELL_FRACTION_RANGE = (1e-7, 0.5)     # the certified layer's minimum cell, of the domain's shorter side
MAX_CELLS_RANGE = (1_000, 100_000_000)   # the certified layer's cell budget
_CHECKSUM = re.compile(r"^[0-9a-fA-F]{64}$")
_FILE_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")


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
    """A probed point (x, y) of the plane, in the units of the equation's variables, with an optional label.

    ``study`` is the (equation name, domain name) pair the pin was set in: its coordinates mean something only
    there, so the window shows it only while that pair is shown. None (a pin made by code, or a file that
    says no study) belongs to every study. It came with format version 4.
    """

    x: float
    y: float
    label: str = ""
    study: tuple[str, str] | None = None

    def __post_init__(self) -> None:
        _point((self.x, self.y), "a pin")
        if self.study is not None:
            study = tuple(self.study)
            if len(study) != 2 or not all(isinstance(name, str) and name for name in study):
                raise ValueError(f"a pin's study is an (equation name, domain name) pair, got {self.study!r}")
            object.__setattr__(self, "study", study)

    def belongs_to(self, equation: str, domain: str) -> bool:
        """True when the pin was set in the study of that equation and domain (or in no particular one)."""
        return self.study is None or self.study == (equation, domain)


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
        return seeds_along_segment(self.start, self.end, self.curves)


# The field layer (format version 4): which quantity shades the map. kind -> the names it takes (None: any
# name the equation knows: a definition, a parameter or a data quantity). Trade names are those of
# core.analysis.field_values.TRADE_FIELDS.
FIELD_KINDS: dict[str, tuple[str, ...] | None] = {
    "discriminant": ("normalized", "D"),
    "coefficient": COEFFICIENT_NAMES,
    "value": None,
    "trade": tuple(TRADE_FIELDS),
}
# Colour maps of the field layer: perceptually uniform and readable with the common colour-vision
# deficiencies. "blue_yellow" is diverging (centred on 0), the others sequential.
FIELD_COLOUR_MAPS = ("blue_yellow", "cividis", "viridis")
MAX_ISO_VALUES = 24


@dataclass(frozen=True)
class FieldLayerSettings:
    """The field layer: a quantity of the study shaded over the map, with iso-lines at ``iso_values``.

    ``kind`` and ``quantity`` name it (FIELD_KINDS; e.g. ("discriminant", "normalized") is D / (b^2 + 4|ac|),
    ("value", "M") a definition or data quantity M, ("trade", "mach") the local Mach number); ``colour_map``
    is one of FIELD_COLOUR_MAPS; ``shown`` says whether it is drawn (the type zones stay the default view).
    """

    shown: bool = False
    kind: str = "discriminant"
    quantity: str = "normalized"
    colour_map: str = "blue_yellow"
    iso_values: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        if self.kind not in FIELD_KINDS:
            raise ValueError(f"unknown field kind {self.kind!r}; expected one of {', '.join(FIELD_KINDS)}")
        names = FIELD_KINDS[self.kind]
        if names is None:
            try:
                check_name(self.quantity, what="field quantity")
            except ExpressionError as error:
                raise ValueError(str(error)) from None
        elif self.quantity not in names:
            raise ValueError(f"a {self.kind} field is one of {', '.join(names)}, got {self.quantity!r}")
        if self.colour_map not in FIELD_COLOUR_MAPS:
            raise ValueError(f"unknown colour map {self.colour_map!r}; expected one of {', '.join(FIELD_COLOUR_MAPS)}")
        values = tuple(float(v) for v in self.iso_values)
        if len(values) > MAX_ISO_VALUES or not all(math.isfinite(v) for v in values):
            raise ValueError(f"iso values are at most {MAX_ISO_VALUES} finite numbers, got {self.iso_values!r}")
        object.__setattr__(self, "iso_values", tuple(sorted(set(values))))


@dataclass(frozen=True)
class CertifiedLayerSettings:
    """The certified layer (core.certify): proven zones, undecided cells and the pockets the sampled map misses.

    ``min_cell`` is the smallest cell side refined, as a fraction of the domain's shorter side (dimensionless);
    ``max_cells`` bounds the cells examined in all; ``shown`` says whether it is computed and drawn.
    """

    shown: bool = False
    min_cell: float = DEFAULT_MIN_CELL_FRACTION
    max_cells: int = DEFAULT_MAX_CELLS

    def __post_init__(self) -> None:
        fraction = float(self.min_cell)
        if not (math.isfinite(fraction) and MIN_CELL_FRACTION_RANGE[0] <= fraction <= MIN_CELL_FRACTION_RANGE[1]):
            raise ValueError(f"the certified layer's minimum cell is a fraction of the shorter side in "
                             f"[{MIN_CELL_FRACTION_RANGE[0]:g}, {MIN_CELL_FRACTION_RANGE[1]:g}], got {self.min_cell!r}")
        object.__setattr__(self, "min_cell", fraction)
        cells = self.max_cells
        if isinstance(cells, bool) or not isinstance(cells, int) or not MAX_CELLS_RANGE[0] <= cells <= MAX_CELLS_RANGE[1]:
            raise ValueError(f"the certified layer's cell budget is a whole number in [{MAX_CELLS_RANGE[0]}, "
                             f"{MAX_CELLS_RANGE[1]}], got {cells!r}")


@dataclass(frozen=True)
class ViewSettings:
    """What the map shows, kept with the project so a study reopens as it was left.

    The two characteristic families are switched separately (family 1 and family 2 as numbered by
    core.analysis.directions). ``show_seed_segments`` draws the segments characteristics start from; it is
    optional in the file (absent means shown). ``characteristic_bounces`` (0 to MAX_BOUNCES) is how many times
    each half of a characteristic goes on as the other family past the domain edge or the type-change line
    (core.analysis.tracing); it came with format version 3, ``field`` (the field layer) with version 4,
    ``certified`` (the certified layer) with version 5. New fields come last.
    """

    show_type_map: bool = True
    show_type_change_lines: bool = True
    show_characteristics_family_1: bool = True
    show_characteristics_family_2: bool = True
    show_pins: bool = True
    show_legend: bool = True
    parabolic_tolerance: float = DEFAULT_TOLERANCE
    show_seed_segments: bool = True
    characteristic_bounces: int = 0
    field: FieldLayerSettings = FieldLayerSettings()
    certified: CertifiedLayerSettings = CertifiedLayerSettings()

    def __post_init__(self) -> None:
        if not isinstance(self.field, FieldLayerSettings):
            raise TypeError(f"the field layer is a FieldLayerSettings, got {type(self.field).__name__}")
        if not isinstance(self.certified, CertifiedLayerSettings):
            raise TypeError(f"the certified layer is a CertifiedLayerSettings, got {type(self.certified).__name__}")
        if not 0.0 <= float(self.parabolic_tolerance) < 1.0:
            raise ValueError(f"parabolic tolerance must be in [0, 1), got {self.parabolic_tolerance!r}")
        bounces = self.characteristic_bounces
        if isinstance(bounces, bool) or not isinstance(bounces, int) or not 0 <= bounces <= MAX_BOUNCES:
            raise ValueError(f"characteristic bounces must be a whole number in [0, {MAX_BOUNCES}], got {bounces!r}")

    @property
    def show_characteristics(self) -> bool:
        """True when at least one characteristic family is shown."""
        return self.show_characteristics_family_1 or self.show_characteristics_family_2


@dataclass(frozen=True)
class DataSourceRef:
    """A data file a project uses (core.data.sources reads it), as the project file records it.

    ``path`` is relative to the project file's folder with '/' separators (absolute only when the data lie on
    another drive); ``checksum`` the SHA-256 (64 hex digits, stored in lower case) of the file when the
    project was saved, so a changed file is noticed; ``format`` overrides the file extension (one of
    DATA_FORMATS) or is None; ``names`` says which quantities to take, as {name in the file: quantity name}
    (empty: every usable quantity under its own name); ``note`` is free text.
    """

    path: str
    checksum: str
    format: str | None = None
    names: Mapping[str, str] = field(default_factory=dict)
    note: str = ""

    def __post_init__(self) -> None:
        if not isinstance(self.path, str) or not self.path.strip():
            raise ValueError(f"a data source needs a file path, got {self.path!r}")
        if any(ord(ch) < 32 or ord(ch) == 127 for ch in self.path):
            raise ValueError(f"the data file path {self.path!r} holds control characters")
        if not isinstance(self.checksum, str) or not _CHECKSUM.match(self.checksum):
            raise ValueError(f"a data source checksum is a SHA-256 of 64 hex digits, got {self.checksum!r}")
        object.__setattr__(self, "checksum", self.checksum.lower())
        if self.format is not None and self.format not in DATA_FORMATS:
            raise ValueError(f"unknown data format {self.format!r}; expected one of {', '.join(DATA_FORMATS)}")
        names = dict(self.names)
        for source, quantity in names.items():
            if not isinstance(source, str) or not _FILE_NAME.match(source):
                raise ValueError(f"{self.path}: the name in the file {source!r} must start with a letter and "
                                 "hold only ASCII letters, digits and '_'")
            try:
                check_name(quantity, what="quantity name")
            except ExpressionError as error:
                raise ValueError(f"{self.path}: {error}") from None
            if quantity in COEFFICIENT_NAMES:
                raise ValueError(f"{self.path}: quantity name {quantity!r} is reserved for a coefficient")
        taken = list(names.values())
        for quantity in taken:
            if taken.count(quantity) > 1:
                raise ValueError(f"{self.path}: two names in the file both become {quantity!r}")
        object.__setattr__(self, "names", names)


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
    default. ``sweeps`` (format version 6) are the parameter sweeps of its studies, at most one per equation,
    domain and parameter (core.project.sweeps).
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
    data_sources: tuple[DataSourceRef, ...] = ()
    sweeps: tuple[SavedSweep, ...] = ()

    def __post_init__(self) -> None:
        for name in ("equations", "domains", "pins", "seeds", "data_sources", "sweeps"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
        for source in self.data_sources:
            if not isinstance(source, DataSourceRef):
                raise TypeError(f"data sources are DataSourceRef objects, got {type(source).__name__}")
        paths = [s.path for s in self.data_sources]
        for path in paths:
            if paths.count(path) > 1:
                raise ValueError(f"two data sources have the path {path!r}; list each file once")
        if not self.equations:
            raise ValueError("a project holds at least one equation")
        if not self.domains:
            raise ValueError("a project holds at least one domain")
        _unique([e.name for e in self.equations], "equation")
        _unique([d.name for d in self.domains], "domain")
        self.equation(self.shown_equation)
        self.domain(self.shown_domain)
        for pin in self.pins:
            if pin.study is not None and (pin.study[0] not in self.equation_names
                                          or pin.study[1] not in self.domain_names):
                raise ValueError(f"pin {pin.label!r} was set in equation {pin.study[0]!r} on domain {pin.study[1]!r}, "
                                 "which the project does not hold")
        self._check_sweeps()

    def _check_sweeps(self) -> None:
        if len(self.sweeps) > MAX_SWEEPS:
            raise ValueError(f"a project holds at most {MAX_SWEEPS} sweeps, got {len(self.sweeps)}")
        keys = set()
        for sweep in self.sweeps:
            if not isinstance(sweep, SavedSweep):
                raise TypeError(f"sweeps are SavedSweep objects, got {type(sweep).__name__}")
            equation, domain = sweep.study
            if equation not in self.equation_names or domain not in self.domain_names:
                raise ValueError(f"a sweep of {sweep.parameter!r} belongs to equation {equation!r} on domain "
                                 f"{domain!r}, which the project does not hold")
            if sweep.key in keys:
                raise ValueError(f"two sweeps of {sweep.parameter!r} in equation {equation!r} on domain {domain!r}; "
                                 "a study keeps one sweep per parameter")
            keys.add(sweep.key)

    def sweeps_of(self, equation: str, domain: str) -> tuple[SavedSweep, ...]:
        """The sweeps of the study of that equation and domain, in the order they were added."""
        return tuple(sweep for sweep in self.sweeps if sweep.study == (equation, domain))

    def with_sweep(self, sweep: SavedSweep) -> Project:
        """A copy with ``sweep`` put in place of the sweep of the same study and parameter, or added last."""
        if any(s.key == sweep.key for s in self.sweeps):
            return replace(self, sweeps=tuple(sweep if s.key == sweep.key else s for s in self.sweeps))
        return replace(self, sweeps=(*self.sweeps, sweep))

    def _sweeps_renamed(self, position: int, old: str, new: str) -> tuple[SavedSweep, ...]:
        """The sweeps with the equation (position 0) or domain (1) name ``old`` in their study changed to ``new``."""
        def renamed(sweep: SavedSweep) -> SavedSweep:
            if sweep.study[position] != old:
                return sweep
            study = (new, sweep.study[1]) if position == 0 else (sweep.study[0], new)
            return replace(sweep, study=study)
        return tuple(renamed(sweep) for sweep in self.sweeps)

    @property
    def shown_study(self) -> tuple[str, str]:
        """The (equation name, domain name) pair shown: the study new pins belong to."""
        return self.shown_equation, self.shown_domain

    def pins_shown(self) -> tuple[bool, ...]:
        """For each pin, whether it belongs to the shown study (pins of other studies are not shown)."""
        return tuple(pin.belongs_to(*self.shown_study) for pin in self.pins)

    def pins_of(self, equation: str, domain: str) -> tuple[Pin, ...]:
        """The pins set in the study of that equation and domain (and those of no particular study)."""
        return tuple(pin for pin in self.pins if pin.belongs_to(equation, domain))

    def _pins_renamed(self, position: int, old: str, new: str) -> tuple[Pin, ...]:
        """The pins with the equation (position 0) or domain (1) name ``old`` in their study changed to ``new``."""
        def renamed(pin: Pin) -> Pin:
            if pin.study is None or pin.study[position] != old:
                return pin
            study = (new, pin.study[1]) if position == 0 else (pin.study[0], new)
            return replace(pin, study=study)
        return tuple(renamed(pin) for pin in self.pins)

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

        Renaming the shown equation keeps it shown; the pins set in it follow the new name.
        """
        if replacing is None:
            return replace(self, equations=(*self.equations, equation))
        self.equation(replacing)
        equations = tuple(equation if e.name == replacing else e for e in self.equations)
        shown = equation.name if self.shown_equation == replacing else self.shown_equation
        return replace(self, equations=equations, shown_equation=shown,
                       pins=self._pins_renamed(0, replacing, equation.name),
                       sweeps=self._sweeps_renamed(0, replacing, equation.name))

    def with_shown(self, *, equation: str | None = None, domain: str | None = None) -> Project:
        """A copy showing the equation and/or domain of those names (KeyError for a name there is not)."""
        if equation is not None:
            self.equation(equation)
        if domain is not None:
            self.domain(domain)
        return replace(self, shown_equation=self.shown_equation if equation is None else equation,
                       shown_domain=self.shown_domain if domain is None else domain)

    @property
    def shown_equation_index(self) -> int:
        """Position of the shown equation in ``equations``."""
        return self.equation_names.index(self.shown_equation)

    @property
    def shown_domain_index(self) -> int:
        """Position of the shown domain in ``domains``."""
        return self.domain_names.index(self.shown_domain)

    def with_domain(self, domain: Domain, *, replacing: str | None = None) -> Project:
        """A copy with ``domain`` added, or put in place of the domain named ``replacing``."""
        if replacing is None:
            return replace(self, domains=(*self.domains, domain))
        self.domain(replacing)
        domains = tuple(domain if d.name == replacing else d for d in self.domains)
        shown = domain.name if self.shown_domain == replacing else self.shown_domain
        return replace(self, domains=domains, shown_domain=shown, pins=self._pins_renamed(1, replacing, domain.name),
                       sweeps=self._sweeps_renamed(1, replacing, domain.name))

    def data_source(self, path: str) -> DataSourceRef:
        """The data source whose recorded ``path`` is ``path``; KeyError listing the paths otherwise."""
        for source in self.data_sources:
            if source.path == path:
                return source
        listed = ", ".join(repr(s.path) for s in self.data_sources) or "none"
        raise KeyError(f"no data source with the path {path!r}; the project has {listed}")

    def with_data_source(self, source: DataSourceRef) -> Project:
        """A copy with ``source`` added, or put in place of the data source with the same path (to accept a
        changed file with its new checksum, or change its names or note)."""
        if any(s.path == source.path for s in self.data_sources):
            return replace(self, data_sources=tuple(source if s.path == source.path else s
                                                    for s in self.data_sources))
        return replace(self, data_sources=(*self.data_sources, source))

    def without_data_source(self, path: str) -> Project:
        """A copy without the data source recorded under ``path`` (KeyError if there is none)."""
        self.data_source(path)
        return replace(self, data_sources=tuple(s for s in self.data_sources if s.path != path))

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
    return bundled_path("demo")


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
