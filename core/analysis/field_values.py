"""A quantity of the study as a field over the domain: values on a grid, at a point, and its iso-lines.

The field layer of the window shades one quantity: the normalised discriminant D / (b^2 + 4|ac|) (how close
to changing type each place is), D itself, a coefficient, a definition, a parameter or a data quantity, or a
trade quantity the equation's trade spec offers (local Mach number, Froude number, N / omega). This module
says which quantities a study offers, evaluates one on a grid (in blocks of rows, on at most
``MAX_FIELD_NODES`` nodes: a display needs no more) or at points, gives the colour range (symmetric about 0
for a diverging colour map) and contours iso-lines with contourpy. NaN marks where the quantity is undefined.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import contourpy
import numpy as np

from core.analysis.discriminant import discriminant, normalized_discriminant
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import COEFFICIENT_NAMES, Equation, QuantitySource
from core.equations.trade import froude_number, local_mach_number, small_disturbance_mach
from core.progress import CancelCheck, Cancelled, ProgressReport

__all__ = [
    "MAX_FIELD_NODES",
    "TRADE_FIELDS",
    "FieldGrid",
    "FieldQuantity",
    "IsoLine",
    "colour_range",
    "describe_quantity",
    "display_grid",
    "field_at",
    "field_on_grid",
    "field_quantities",
    "field_values",
    "grid_of",
    "iso_lines",
]

MAX_FIELD_NODES = 1_000_000
_BLOCK_NODES = 1 << 16

# trade field name -> (label, trade kinds that offer it, in order of preference); every one is dimensionless.
TRADE_FIELDS: dict[str, tuple[str, tuple[str, ...]]] = {
    "mach": ("local Mach number M", ("mach", "small_disturbance")),
    "froude": ("Froude number Fr", ("froude",)),
    "buoyancy_ratio": ("N / ω (buoyancy over wave frequency)", ("internal_wave",)),
}


@dataclass(frozen=True)
class FieldQuantity:
    """One quantity a study can shade: ``kind`` and ``name`` as the project stores them
    (core.project.model.FIELD_KINDS), with the ``label`` and ``unit`` a colour bar shows ('' when unknown)."""

    kind: str
    name: str
    label: str
    unit: str

    @property
    def title(self) -> str:
        """Label and unit in one line, e.g. 'D / (b² + 4|ac|) (dimensionless)'."""
        return f"{self.label} ({self.unit})" if self.unit else self.label


def field_quantities(equation: Equation, data_names: Iterable[str] = ()) -> tuple[FieldQuantity, ...]:
    """Every quantity of ``equation`` (with the loaded ``data_names``) that a field layer can show, in menu order:
    the discriminant forms, a, b, c, the definitions, the data quantities, the parameters, the trade fields."""
    found = [FieldQuantity("discriminant", "normalized", "D / (b² + 4|ac|)", "dimensionless"),
             FieldQuantity("discriminant", "D", "D = b² − 4ac", "units of b²")]
    found += [FieldQuantity("coefficient", name, f"coefficient {name}", "") for name in COEFFICIENT_NAMES]
    found += [FieldQuantity("value", name, f"{name} (definition)", "") for name in equation.definitions]
    found += [FieldQuantity("value", name, f"{name} (data)", "") for name in data_names
              if name not in equation.definitions and name not in equation.parameters]
    found += [FieldQuantity("value", name, f"{name} (parameter)", parameter.unit)
              for name, parameter in equation.parameters.items()]
    for name, (label, kinds) in TRADE_FIELDS.items():
        if any(kind in equation.trade for kind in kinds):
            found.append(FieldQuantity("trade", name, label, "dimensionless"))
    return tuple(found)


def describe_quantity(equation: Equation, kind: str, name: str, data_names: Iterable[str] = ()) -> FieldQuantity:
    """The FieldQuantity of (kind, name) for ``equation``; ValueError naming the choices when it offers none."""
    offered = field_quantities(equation, data_names)
    for quantity in offered:
        if (quantity.kind, quantity.name) == (kind, name):
            return quantity
    if kind == "value" and name not in equation.parameters:
        return FieldQuantity("value", name, name, "")   # a data quantity not loaded yet: its values will say
    same_kind = ", ".join(q.name for q in offered if q.kind == kind) or "none"
    raise ValueError(f"“{equation.name}” offers no {kind} field {name!r} (its {kind} fields: {same_kind})")


def _known(compiled: CompiledEquation, names: Iterable[str], x: np.ndarray, y: np.ndarray,
           parameters: Mapping[str, float] | None, data: QuantitySource | None) -> dict[str, np.ndarray]:
    """The values of ``names`` (variables, parameters, definitions, a, b, c, data quantities) at the points."""
    names = list(dict.fromkeys(names))
    values: dict[str, np.ndarray] = {}
    first, second = compiled.variables
    parameter_values = compiled.parameter_vector(parameters)
    evaluated = [n for n in names if n in compiled.definition_order or n in COEFFICIENT_NAMES]
    if evaluated:
        values.update(compiled.evaluate(x, y, parameters=parameters, data=data, names=evaluated))
    for name in names:
        if name in values:
            continue
        if name == first:
            values[name] = x
        elif name == second:
            values[name] = y
        elif name in parameter_values:
            values[name] = np.full(x.shape, parameter_values[name])
        elif data is not None:
            values[name] = np.asarray(data.sample(name, x, y), dtype=np.float64)
        else:
            raise ValueError(f"{name!r} is not a variable, parameter, definition or loaded data quantity")
    return values


def _trade_values(spec: Mapping[str, Mapping[str, str]], name: str, compiled: CompiledEquation,
                  x: np.ndarray, y: np.ndarray, parameters, data) -> np.ndarray:
    label, kinds = TRADE_FIELDS[name]
    kind = next((k for k in kinds if k in spec), None)
    if kind is None:
        raise ValueError(f"the equation's trade readouts do not give the {label}")
    inputs = spec[kind]
    given = _known(compiled, inputs.values(), x, y, parameters, data)
    value = {key: given[source] for key, source in inputs.items()}
    if kind == "mach":
        return local_mach_number(value["u"], value["v"], value["c2"])
    if kind == "small_disturbance":
        return small_disturbance_mach(value["Minf"], value["gamma"], value["phix"])
    if kind == "froude":
        return froude_number(value["u"], value["v"], value["h"], value["g"])
    return value["N"] / value["w"]          # internal waves: N / omega


def field_values(compiled: CompiledEquation, kind: str, name: str, x, y, *,
                 parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                 trade: Mapping[str, Mapping[str, str]] | None = None) -> np.ndarray:
    """The quantity (kind, name) at the points (x, y) (broadcast together), float64, NaN where undefined.

    ``trade`` is the equation's trade spec (for kind "trade"; default: the compiled equation's own).
    """
    x, y = np.broadcast_arrays(np.asarray(x, dtype=np.float64), np.asarray(y, dtype=np.float64))
    with np.errstate(all="ignore"):
        if kind in ("discriminant", "coefficient"):
            a, b, c = compiled.coefficients(x, y, parameters=parameters, data=data)
            if kind == "coefficient":
                result = {"a": a, "b": b, "c": c}[name]
            else:
                result = normalized_discriminant(a, b, c) if name == "normalized" else discriminant(a, b, c)
        elif kind == "value":
            result = _known(compiled, [name], x, y, parameters, data)[name]
        elif kind == "trade":
            spec = compiled.equation.trade if trade is None else trade
            result = _trade_values(spec, name, compiled, x, y, parameters, data)
        else:
            raise ValueError(f"unknown field kind {kind!r}")
        result = np.array(np.broadcast_to(result, x.shape), dtype=np.float64)
    result[~np.isfinite(result)] = np.nan
    return result


def field_at(compiled: CompiledEquation, kind: str, name: str, x: float, y: float, **options) -> float:
    """The quantity at one point (NaN where undefined); options as ``field_values``."""
    return float(field_values(compiled, kind, name, np.array([float(x)]), np.array([float(y)]), **options)[0])


@dataclass(frozen=True, eq=False)
class FieldGrid:
    """A quantity on a grid over a domain: ``values`` (ny, nx) float64, NaN where undefined, at nodes ``x`` (nx,)
    and ``y`` (ny,); ``low``/``high`` its finite range (NaN when nowhere defined); ``coarsened`` when the grid
    has fewer nodes than the domain's (a display needs at most MAX_FIELD_NODES)."""

    kind: str
    name: str
    domain: Domain
    x: np.ndarray
    y: np.ndarray
    values: np.ndarray
    low: float
    high: float
    coarsened: bool


def display_grid(domain: Domain, max_nodes: int = MAX_FIELD_NODES) -> tuple[np.ndarray, np.ndarray]:
    """The domain's nodes, or a coarser grid over the same rectangle with at most ``max_nodes`` nodes."""
    nx, ny = domain.nx, domain.ny
    if nx * ny <= max_nodes:
        return domain.x_nodes, domain.y_nodes
    factor = math.sqrt(nx * ny / max_nodes)
    nx, ny = max(2, int(nx / factor)), max(2, int(ny / factor))
    return np.linspace(domain.xmin, domain.xmax, nx), np.linspace(domain.ymin, domain.ymax, ny)


def field_on_grid(compiled: CompiledEquation, domain: Domain, kind: str, name: str, *,
                  parameters: Mapping[str, float] | None = None, data: QuantitySource | None = None,
                  trade: Mapping[str, Mapping[str, str]] | None = None, max_nodes: int = MAX_FIELD_NODES,
                  cancel: CancelCheck | None = None, progress: ProgressReport | None = None) -> FieldGrid:
    """The quantity on the domain's grid (or a coarser one, see ``display_grid``), a block of rows at a time."""
    return grid_of(domain, kind, name, lambda xx, yy: field_values(compiled, kind, name, xx, yy,
                                                                   parameters=parameters, data=data, trade=trade),
                   max_nodes=max_nodes, cancel=cancel, progress=progress)


def grid_of(domain: Domain, kind: str, name: str, function, *, max_nodes: int = MAX_FIELD_NODES,
            cancel: CancelCheck | None = None, progress: ProgressReport | None = None) -> FieldGrid:
    """``function(x, y)`` (arrays of one shape -> values) on the domain's display grid (``display_grid``) as
    a FieldGrid of ``kind`` and ``name``, a block of rows at a time (any field a layer can draw: a quantity
    of the study, a Cauchy solution)."""
    x, y = display_grid(domain, max_nodes)
    values = np.empty((y.size, x.size))
    rows = max(1, _BLOCK_NODES // x.size)
    for start in range(0, y.size, rows):
        if cancel is not None and cancel():
            raise Cancelled(f"{name} on the grid cancelled")
        stop = min(y.size, start + rows)
        xx, yy = np.meshgrid(x, y[start:stop])
        values[start:stop] = function(xx, yy)
        if progress is not None:
            progress(stop / y.size)
    finite = values[np.isfinite(values)]
    low, high = (float(finite.min()), float(finite.max())) if finite.size else (math.nan, math.nan)
    for array in (x, y, values):
        array.flags.writeable = False
    return FieldGrid(kind=kind, name=name, domain=domain, x=x, y=y, values=values, low=low, high=high,
                     coarsened=(x.size, y.size) != (domain.nx, domain.ny))


def colour_range(grid: FieldGrid, *, diverging: bool) -> tuple[float, float]:
    """The values at the two ends of the colour map: the field's range, or for a diverging map a range
    symmetric about 0 (so 0 takes the middle colour); D / (b^2 + 4|ac|) always spans [-1, 1]."""
    if (grid.kind, grid.name) == ("discriminant", "normalized"):
        return -1.0, 1.0
    low, high = grid.low, grid.high
    if not (math.isfinite(low) and math.isfinite(high)):
        return (-1.0, 1.0) if diverging else (0.0, 1.0)
    if diverging:
        reach = max(abs(low), abs(high)) or 1.0
        return -reach, reach
    if low == high:
        spread = abs(low) * 1e-6 or 1.0
        return low - spread, high + spread
    return low, high


@dataclass(frozen=True, eq=False)
class IsoLine:
    """The polylines ((n, 2) arrays of (x, y)) where a field equals ``value``."""

    value: float
    polylines: tuple[np.ndarray, ...]


def iso_lines(grid: FieldGrid, values: Iterable[float]) -> tuple[IsoLine, ...]:
    """Iso-lines of the field at each of ``values`` (contourpy, linear interpolation along grid edges; undefined
    nodes masked)."""
    z = np.ma.masked_invalid(grid.values) if np.isnan(grid.values).any() else grid.values
    generator = contourpy.contour_generator(grid.x, grid.y, z, name="serial", line_type="Separate",
                                            corner_mask=False)
    return tuple(IsoLine(value=float(v), polylines=tuple(np.asarray(p) for p in generator.lines(float(v))))
                 for v in values)
