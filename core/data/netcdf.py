"""NetCDF files with CF conventions: coordinate variables by name or ``axis``, data on (y, x) or one axis.

A coordinate variable matches an equation variable by its name, or by its CF ``axis`` attribute when the
variable is called x, y, z or t; a vertical coordinate matched by axis with ``positive = "down"`` (a depth)
is negated so that the variable points up. Data variables on both coordinates' dimensions (in either
order, extra dimensions of length 1 allowed) make a grid; on one coordinate's dimension, a profile. Masked
(fill) values become NaN. Classic-format files are checked against the length their header describes,
because the netCDF library reads past the end of a truncated classic file without complaint. Every variable's
declared shape is counted against the data cap (core.data.limits) before its values are read, so a small
file declaring huge (or compressed) variables is refused before anything is allocated.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field

import numpy as np

from core.data.limits import ValueBudget
from core.data.raw import DataError, RawData, checked_axis, failure_reason, float_array

__all__ = ["NetcdfLayout", "NetcdfVariable", "netcdf_layout", "open_netcdf", "read_netcdf"]

# CF axis letters an equation variable of that name may be matched by
_AXIS_LETTERS = {"x": "X", "y": "Y", "z": "Z", "t": "T"}


def read_netcdf(path: str, variables: tuple[str, str]) -> RawData:
    """Coordinate variables found by name or CF ``axis``; data variables on (y, x) or on one axis."""
    dataset = open_netcdf(path)
    try:
        layout = netcdf_layout(dataset, path, variables)
        return _netcdf_contents(layout, path)
    except DataError:
        raise
    except (OSError, RuntimeError, ValueError, IndexError) as error:
        raise DataError(f"{path}: cannot be read as NetCDF ({failure_reason(error)})") from None
    finally:
        dataset.close()


def open_netcdf(path: str):
    """The file as an open ``netCDF4.Dataset`` (the caller closes it), after the truncation check; DataError
    when it cannot be opened."""
    import netCDF4  # here, not at the top: about 0.25 s to import (python -X importtime); only NetCDF files need it

    try:
        with open(path, "rb") as handle:
            header = handle.read(1 << 20)
            size = handle.seek(0, os.SEEK_END)
    except OSError as error:
        raise DataError(f"{path}: cannot be read ({failure_reason(error)})") from None
    data_end = _classic_netcdf_data_end(header)
    if data_end is not None and size < data_end:
        raise DataError(f"{path}: the NetCDF file is truncated: {size} bytes where its header needs at "
                        f"least {data_end}")
    try:
        return netCDF4.Dataset(path, "r")
    except (OSError, RuntimeError, ValueError) as error:
        raise DataError(f"{path}: cannot be read as NetCDF (truncated or another format: "
                        f"{failure_reason(error)})") from None


_CLASSIC_TYPE_SIZES = {1: 1, 2: 1, 3: 2, 4: 4, 5: 4, 6: 8, 7: 1, 8: 2, 9: 4, 10: 8, 11: 8}


def _classic_netcdf_data_end(header: bytes) -> int | None:
    """The byte offset where a classic NetCDF file's data end, from its header; None if not classic.

    The netCDF library reads past the end of a truncated classic (CDF-1/2/5) file without complaint, so
    the file's length is checked against this. Layout from the NetCDF Classic Format Specification.
    """
    if len(header) < 8 or header[:3] != b"CDF" or header[3] not in (1, 2, 5):
        return None
    version = header[3]
    count_size = 8 if version == 5 else 4
    offset_size = 4 if version == 1 else 8
    position = 4

    def number(size: int) -> int:
        nonlocal position
        if position + size > len(header):
            raise EOFError
        value = int.from_bytes(header[position:position + size], "big")
        position += size
        return value

    def name() -> None:
        nonlocal position
        length = number(count_size)
        position += (length + 3) // 4 * 4

    def attributes() -> None:
        nonlocal position
        number(4)                                          # NC_ATTRIBUTE or ABSENT
        for _ in range(number(count_size)):
            name()
            size = _CLASSIC_TYPE_SIZES.get(number(4), 1)
            count = number(count_size)
            position += (count * size + 3) // 4 * 4

    try:
        records = number(count_size)
        number(4)                                          # NC_DIMENSION or ABSENT
        lengths = []
        for _ in range(number(count_size)):
            name()
            lengths.append(number(count_size))
        attributes()
        number(4)                                          # NC_VARIABLE or ABSENT
        end, record_size, record_vars = 0, 0, []
        for _ in range(number(count_size)):
            name()
            dims = [number(count_size) for _ in range(number(count_size))]
            attributes()
            number(4)                                      # the variable's type
            size = number(count_size)
            begin = number(offset_size)
            if dims and dims[0] < len(lengths) and lengths[dims[0]] == 0:
                record_size += size
                record_vars.append((begin, size))
            else:
                end = max(end, begin + size)
    except EOFError:
        return len(header) + 1                             # the header itself is cut short
    if records and records != (1 << (8 * count_size)) - 1:  # the maximum value marks a streaming file
        for begin, size in record_vars:
            end = max(end, begin + (records - 1) * record_size + size)
    return end


def _netcdf_coordinate(dataset, variable: str, path: str):
    """(netCDF variable, how it was found) for the equation variable ``variable``, or None."""
    candidates = dataset.variables
    if variable in candidates and candidates[variable].ndim == 1:
        return candidates[variable], "name"
    letter = _AXIS_LETTERS.get(variable.lower())
    if letter is None:
        return None
    matches = [v for v in candidates.values()
               if v.ndim == 1 and str(getattr(v, "axis", "")).upper() == letter]
    if len(matches) > 1:
        raise DataError(f"{path}: several coordinate variables have axis = {letter!r} "
                        f"({', '.join(v.name for v in matches)}); cannot tell which is {variable!r}")
    return (matches[0], "axis") if matches else None


@dataclass
class NetcdfVariable:
    """How one data variable of the file maps onto (y, x) (or the profile's axis): the file's variable, the
    transpose that puts the coordinates' dimensions first in (y, x) order, and its unit."""

    variable: object                       # the netCDF4.Variable
    axes: tuple[int, ...]                  # positions of the (y, x) (or (s,)) dimensions among the file's
    unit: str


@dataclass
class NetcdfLayout:
    """What a NetCDF file holds for the equation's variables, before any data variable's values are read.

    ``found`` maps each equation variable found to (netCDF4 variable, increasing coordinate, reversed?);
    ``order`` are the coordinates' dimension names in (y, x) (or (s,)) order; ``usable`` the data variables
    on those dimensions; ``budget`` has the coordinates' values counted already.
    """

    variables: tuple[str, str]
    found: dict[str, tuple[object, np.ndarray, bool]]
    order: list[str]
    usable: dict[str, NetcdfVariable]
    rejected: dict[str, str]
    notes: list[str]
    budget: ValueBudget = field(repr=False)

    @property
    def grid(self) -> bool:
        return len(self.found) == 2

    def oriented(self, name: str, values: np.ndarray) -> np.ndarray:
        """Values read from data variable ``name`` (every file dimension, or with the extra length-1 ones
        indexed away when ``values`` has only the coordinates' dimensions) put in (y, x) order, each axis
        increasing: how the whole-file reader and a window of rows see them alike."""
        axes = self.usable[name].axes
        if values.ndim == len(axes):                  # the coordinates' dimensions only, in the file's order
            values = np.transpose(values, [sorted(axes).index(k) for k in axes])
        else:
            squeeze = tuple(k for k in range(values.ndim) if k not in axes)
            values = np.transpose(values, list(axes) + list(squeeze)).reshape([values.shape[k] for k in axes])
        for k, variable in enumerate(v for v in reversed(self.variables) if v in self.found):
            if self.found[variable][2]:
                values = np.flip(values, axis=k)
        return values


def netcdf_layout(dataset, path: str, variables: tuple[str, str]) -> NetcdfLayout:
    """The coordinates (read and checked) and the data variables on their dimensions; DataError when no
    coordinate matches."""
    budget = ValueBudget(path)
    notes = []
    found = {}
    for variable in variables:
        match = _netcdf_coordinate(dataset, variable, path)
        if match is None:
            continue
        nc_variable, how = match
        budget.take(nc_variable.size, f"coordinate {nc_variable.name!r}")
        values = float_array(nc_variable[:], nc_variable.name, path)
        positive = str(getattr(nc_variable, "positive", "")).lower()
        if how == "axis" and positive == "down":
            values = -values
            notes.append(f"{variable} = -{nc_variable.name} ({nc_variable.name} is positive down; "
                         f"{variable} points up)")
        elif how == "axis":
            notes.append(f"{variable} = {nc_variable.name} (axis {nc_variable.axis})")
        coordinate, flipped = checked_axis(values, nc_variable.name, path)
        found[variable] = (nc_variable, coordinate, flipped)
    if not found:
        raise DataError(f"{path}: missing variables: no coordinate variable named {variables[0]!r} or "
                        f"{variables[1]!r} or with a matching CF axis attribute (the file holds "
                        f"{len(dataset.variables)} variable(s))")
    dims = {variable: item[0].dimensions[0] for variable, item in found.items()}
    if len(found) == 2 and dims[variables[0]] == dims[variables[1]]:
        raise DataError(f"{path}: coordinates {variables[0]!r} and {variables[1]!r} share the dimension "
                        f"{dims[variables[0]]!r}; scattered NetCDF data are not supported")
    order = [dims[v] for v in reversed(variables) if v in dims]          # (y, x) or (s,)
    coordinate_names = {item[0].name for item in found.values()}
    usable, rejected = {}, {}
    for name, nc_variable in dataset.variables.items():
        if name in coordinate_names or nc_variable.dimensions == (name,):
            continue                                         # coordinates, of these axes or of others
        kept = [d for d, n in zip(nc_variable.dimensions, nc_variable.shape, strict=True)
                if d in order or n != 1]
        if sorted(kept) != sorted(order):
            rejected[name] = (f"variable {name!r} has dimensions {nc_variable.dimensions}; expected "
                              f"{tuple(order)} (extra dimensions of length 1 are allowed)")
            continue
        if not isinstance(nc_variable.dtype, np.dtype) or nc_variable.dtype.kind not in "biuf":
            rejected[name] = f"variable {name!r} does not hold numbers"
            continue
        all_dims = list(nc_variable.dimensions)
        usable[name] = NetcdfVariable(nc_variable, tuple(all_dims.index(d) for d in order),
                                      str(getattr(nc_variable, "units", "") or ""))
    return NetcdfLayout(variables, found, order, usable, rejected, notes, budget)


def _netcdf_contents(layout: NetcdfLayout, path: str) -> RawData:
    arrays, units = {}, {}
    for name, plan in layout.usable.items():
        layout.budget.take(plan.variable.size, f"variable {name!r}")
        values = float_array(plan.variable[:], name, path)
        arrays[name] = np.ascontiguousarray(layout.oriented(name, values))
        if plan.unit:
            units[name] = plan.unit
    found, variables, notes = layout.found, layout.variables, layout.notes
    if layout.grid:
        raw = RawData("netcdf", "grid", (found[variables[0]][1], found[variables[1]][1]), arrays)
    else:
        (variable,) = found
        raw = RawData("netcdf", "profile", (found[variable][1],), arrays,
                      profile_axis=variables.index(variable))
        notes.append(f"a profile along {variable}, extended over {variables[1 - raw.profile_axis]}")
    raw.units, raw.rejected, raw.notes = units, layout.rejected, notes
    return raw
