"""Background data as named quantities: load a file, then sample its quantities anywhere in the plane.

A data set (a CFD velocity field, a buoyancy-frequency profile, a river model's depth) becomes named
quantities that equations use like any other name, with first derivatives written ``diff(NAME, VAR)``.
``load_data`` reads CSV, NumPy .npz, NetCDF (CF) and VTK/VTU meshes (see core.data.readers for the layouts)
and ``DataSources`` combines several data sets into the ``QuantitySource`` that core.equations.equation evaluates
with. Points outside a data set, or where its values are missing, get NaN: the equation is undefined there,
never extrapolated.
"""

from __future__ import annotations

import hashlib
import os
import re
import types
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from core.data.fields import GridField, MeshField, ProfileField, triangulate_points
from core.data.ranges import ValueRange
from core.data.raw import FORMATS, DataError, RawData, format_for_path
from core.data.readers import read_raw
from core.equations.language import ExpressionError, check_name, data_derivative_key

__all__ = [
    "FORMATS",
    "DataError",
    "DataSet",
    "DataSources",
    "file_checksum",
    "load_data",
    "parse_quantity_key",
]

_RESERVED = ("a", "b", "c")
_DERIVATIVE_KEY = re.compile(r"^diff\(\s*([A-Za-z][A-Za-z0-9_]*)\s*,\s*([A-Za-z][A-Za-z0-9_]*)\s*\)$")


def file_checksum(path: str | os.PathLike) -> str:
    """SHA-256 of the file's bytes, as 64 hex digits (records which data a study was computed on)."""
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    except OSError as error:
        raise DataError(f"{os.fspath(path)}: cannot be read ({error.strerror or error})") from None
    return digest.hexdigest()


def parse_quantity_key(key: str) -> tuple[str, str | None]:
    """(quantity, variable) for ``diff(NAME,VAR)``; (quantity, None) for a plain name."""
    match = _DERIVATIVE_KEY.match(key)
    if match:
        return match.group(1), match.group(2)
    return key, None


@dataclass(frozen=True, eq=False)
class DataSet:
    """One loaded data file and the quantities it provides.

    ``layout`` is "grid", "profile" or "mesh"; ``extent`` is (xmin, xmax, ymin, ymax) in the variables'
    order (infinite along the variable a profile does not depend on); ``size`` is (ny, nx) for a grid,
    (n,) for a profile, (points, triangles) for a mesh; ``source_names`` maps each quantity to its name in
    the file; ``notes`` say what was assumed or ignored while reading.
    """

    path: str
    format: str
    layout: str
    variables: tuple[str, str]
    quantities: tuple[str, ...]
    extent: tuple[float, float, float, float]
    checksum: str
    size: tuple[int, ...]
    source_names: Mapping[str, str]
    units: Mapping[str, str]
    notes: tuple[str, ...]
    interpolator: GridField | ProfileField | MeshField = field(repr=False)

    def sample(self, key: str, x, y) -> np.ndarray:
        """A quantity (``NAME``) or a first derivative (``diff(NAME,VAR)``) at the points, NaN outside.

        x and y broadcast together; the result is float64 of their broadcast shape.
        """
        quantity, variable = parse_quantity_key(key)
        if quantity not in self.quantities:
            raise DataError(f"{self.path}: no quantity {quantity!r} (it provides {', '.join(self.quantities)})")
        name = self.source_names[quantity]
        if variable is None:
            return self.interpolator.sample(name, x, y)
        if variable not in self.variables:
            raise DataError(f"{self.path}: {key!r} differentiates along {variable!r}, which is not a variable "
                            f"({self.variables[0]!r} or {self.variables[1]!r})")
        return self.interpolator.sample_derivative(name, self.variables.index(variable), x, y)

    def value_range(self, key: str, x0, x1, y0, y1) -> ValueRange:
        """The range of ``key`` (as in ``sample``) over boxes [x0, x1] x [y0, y1] (arrays (n,)): a conservative
        (low, high, maybe undefined, surely undefined) from the nodal values the boxes touch."""
        quantity, variable = parse_quantity_key(key)
        name = self.source_names[quantity]
        axis = None if variable is None else self.variables.index(variable)
        return self.interpolator.value_range(name, axis, x0, x1, y0, y1)

    def keys(self) -> tuple[str, ...]:
        """Every key ``sample`` accepts: the quantities and their first derivatives."""
        return tuple(k for q in self.quantities
                     for k in (q, *(data_derivative_key(q, v) for v in self.variables)))


def load_data(path: str | os.PathLike, *, variables: Sequence[str] = ("x", "y"),
              names: Sequence[str] | Mapping[str, str] | None = None, format: str | None = None) -> DataSet:
    """Read a data file into named quantities over the equation's two ``variables``.

    ``names``: None takes every usable quantity in the file; a sequence takes only those; a mapping
    {name in the file: quantity name} takes and renames (to avoid clashes between files, or to give a
    usable name to "Pressure Coefficient"). ``format`` overrides the file extension ("csv", "npz",
    "netcdf", "vtu", "vtk"). Raises DataError naming the file and the problem.
    """
    path = os.fspath(path)
    variables = _checked_variables(variables, path)
    fmt = format_for_path(path) if format is None else format
    if os.path.isdir(path):
        raise DataError(f"{path}: a folder, not a data file (zarr stores are read only by 'mixtype classify', a "
                        "band of rows at a time)")
    if not os.path.isfile(path):
        raise DataError(f"{path}: no such file")
    checksum = file_checksum(path)
    raw = read_raw(path, fmt, variables)
    chosen, skipped = _choose_quantities(raw, names, path, variables)
    arrays = {source: raw.arrays[source] for source in chosen.values()}
    if raw.layout == "grid":
        data_field = GridField(raw.coordinates[0], raw.coordinates[1], arrays)
    elif raw.layout == "profile":
        data_field = ProfileField(raw.coordinates[0], arrays, axis=raw.profile_axis)
    else:
        x, y = raw.coordinates
        triangles = raw.triangles if raw.layout == "mesh" else triangulate_points(x, y, where=path)
        data_field = MeshField(x, y, triangles, arrays, where=path)
    units = {quantity: raw.units[source] for quantity, source in chosen.items() if source in raw.units}
    return DataSet(path=path, format=fmt, layout=data_field.layout, variables=variables,
                   quantities=tuple(chosen), extent=data_field.extent, checksum=checksum,
                   size=tuple(int(n) for n in data_field.size),
                   source_names=types.MappingProxyType(dict(chosen)), units=types.MappingProxyType(units),
                   notes=tuple(raw.notes + skipped), interpolator=data_field)


def _checked_variables(variables: Sequence[str], path: str) -> tuple[str, str]:
    variables = tuple(variables)
    if len(variables) != 2 or variables[0] == variables[1]:
        raise DataError(f"{path}: data need two different variable names, got {variables!r}")
    for name in variables:
        try:
            check_name(name, what="variable")
        except ExpressionError as error:
            raise DataError(f"{path}: {error}") from None
    return variables  # type: ignore[return-value]


def _quantity_name_problem(name: str, variables: tuple[str, str]) -> str | None:
    try:
        check_name(name, what="quantity name")
    except ExpressionError as error:
        return str(error)
    if name in variables:
        return f"quantity name {name!r} is one of the variables"
    if name in _RESERVED:
        return f"quantity name {name!r} is reserved for a coefficient"
    return None


def _choose_quantities(raw: RawData, names, path: str, variables: tuple[str, str]
                       ) -> tuple[dict[str, str], list[str]]:
    """{quantity: name in the file} and notes about what was left out."""
    skipped: list[str] = []
    if names is None:
        if raw.rejected and raw.format in ("csv", "npz"):
            reason = next(iter(raw.rejected.values()))
            raise DataError(f"{path}: {reason} (pass names=[...] to load only some arrays)")
        skipped += [f"skipped: {reason}" for reason in raw.rejected.values()]
        chosen = {}
        for source in raw.arrays:
            problem = _quantity_name_problem(source, variables)
            if problem:
                skipped.append(f"skipped {source!r}: {problem}; rename it with names={{{source!r}: 'new_name'}}")
            else:
                chosen[source] = source
    else:
        if isinstance(names, str):
            raise DataError(f"{path}: names must be a list of names or a mapping, not the string {names!r}")
        mapping = dict(names) if isinstance(names, Mapping) else {n: n for n in names}
        chosen = {}
        for source, quantity in mapping.items():
            if source not in raw.arrays:
                if source in raw.rejected:
                    raise DataError(f"{path}: {raw.rejected[source]}")
                held = ", ".join(sorted(raw.arrays)) or "no quantities"
                raise DataError(f"{path}: missing quantity {source!r} (the file holds {held})")
            problem = _quantity_name_problem(quantity, variables)
            if problem:
                raise DataError(f"{path}: {problem}")
            if quantity in chosen:
                raise DataError(f"{path}: two file entries are both named {quantity!r}")
            chosen[quantity] = source
    if not chosen:
        why = "; ".join(raw.rejected.values()) or "only coordinates"
        raise DataError(f"{path}: holds no usable quantity ({why})")
    return chosen, skipped


@dataclass(frozen=True, eq=False)
class DataSources:
    """Several data sets as one ``QuantitySource``: each quantity name comes from exactly one file."""

    datasets: tuple[DataSet, ...] = ()
    _by_name: Mapping[str, DataSet] = field(init=False, repr=False)

    def __init__(self, datasets: Iterable[DataSet] = ()) -> None:
        datasets = tuple(datasets)
        by_name: dict[str, DataSet] = {}
        for dataset in datasets:
            if not isinstance(dataset, DataSet):
                raise TypeError(f"DataSources takes DataSet objects, got {type(dataset).__name__}")
            if dataset.variables != datasets[0].variables:
                raise DataError(f"{dataset.path}: loaded for variables {dataset.variables}, but "
                                f"{datasets[0].path} for {datasets[0].variables}; load all data for the same "
                                f"variables")
            for name in dataset.quantities:
                if name in by_name:
                    raise DataError(f"quantity {name!r} is in both {by_name[name].path} and {dataset.path}; "
                                    f"rename one with load_data(..., names={{{name!r}: 'other_name'}})")
                by_name[name] = dataset
        object.__setattr__(self, "datasets", datasets)
        object.__setattr__(self, "_by_name", types.MappingProxyType(by_name))

    @property
    def names(self) -> tuple[str, ...]:
        """Every quantity name, file by file: pass as ``compile_equation(..., data_names=...)``."""
        return tuple(self._by_name)

    @property
    def variables(self) -> tuple[str, str] | None:
        return self.datasets[0].variables if self.datasets else None

    def dataset_for(self, name: str) -> DataSet:
        quantity, _ = parse_quantity_key(name)
        try:
            return self._by_name[quantity]
        except KeyError:
            loaded = ", ".join(self._by_name) or "none"
            raise DataError(f"no data quantity {quantity!r} is loaded (loaded: {loaded})") from None

    def sample(self, key: str, x, y) -> np.ndarray:
        """``key`` (NAME or diff(NAME,VAR)) at the points; float64 of the broadcast shape, NaN outside."""
        return self.dataset_for(key).sample(key, x, y)

    def value_range(self, key: str, x0, x1, y0, y1) -> ValueRange:
        """``key``'s range over boxes (DataSet.value_range): how certified maps enclose data quantities."""
        return self.dataset_for(key).value_range(key, x0, x1, y0, y1)

    def checksums(self) -> dict[str, str]:
        """{path: sha256} of every file, to detect data changed since a study was saved."""
        return {d.path: d.checksum for d in self.datasets}
