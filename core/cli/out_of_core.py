"""``mixtype classify`` on data larger than memory: the grid of one NetCDF file or zarr store, band by band.

A run goes out of core with --out-of-core, or by itself when a --data file is a zarr store (read only this
way) or a NetCDF file larger than the data cap (stated on stderr). The equation comes from the inline options
or a template as usual; the streamed file's quantities are offered by name like any data, the other --data
files are read into memory. The nodes are the streamed file's own (--stride K picks every K-th, --domain the
ones inside a rectangle); --grid, --certify, --save-project and a project FILE are refused with a reason.
The document has every field of ``classify --json`` (null where the whole map would be needed) plus
``out_of_core`` (core.results.out_of_core).
"""

from __future__ import annotations

import argparse
import json
import os
from typing import TextIO

from core.analysis.classify import DEFAULT_TOLERANCE
from core.analysis.out_of_core import DEFAULT_BLOCK_BUDGET, classify_out_of_core
from core.cli.command import compiled_with_names
from core.cli.options import EXIT_OK, UsageError
from core.cli.study import DataFile, _combined, _overridden, _read_data, _rectangle, inline_start
from core.data.gridded_store import gridded_format, open_gridded, store_checksum
from core.data.limits import data_cap, data_cap_raised, gib_text
from core.data.raw import DataError
from core.equations.equation import Equation
from core.results.document import data_files_document, study_fields
from core.results.out_of_core import out_of_core_fields

__all__ = ["automatic_reason", "run_out_of_core", "wants_out_of_core"]

_OWN_OPTIONS = ("stride", "block_mib", "codes_out")


def automatic_reason(args: argparse.Namespace) -> str | None:
    """Why a classify run goes out of core without --out-of-core, as a note for stderr: a NetCDF file over the
    data cap ('' for a zarr store, which is read no other way); None when it stays in memory."""
    with data_cap_raised(args.data_cap):
        cap = data_cap()
    for path, _ in args.data:
        kind = gridded_format(path)
        if kind == "zarr":
            return ""                                      # read no other way: nothing to point out
        if kind == "netcdf" and os.path.isfile(path) and os.path.getsize(path) > cap:
            return (f"{path} ({gib_text(os.path.getsize(path))}) is larger than the data cap of {gib_text(cap)}: "
                    f"classifying it a band of rows at a time on its own grid (--out-of-core)")
    return None


def wants_out_of_core(args: argparse.Namespace) -> bool:
    """True when this classify run is an out-of-core one; UsageError for its options given without it."""
    if args.out_of_core or automatic_reason(args) is not None:
        return True
    given = [f"--{name.replace('_', '-')}" for name in _OWN_OPTIONS if getattr(args, name) is not None]
    if given:
        raise UsageError(f"{given[0]} works with --out-of-core (classifying a NetCDF or zarr --data file on its "
                         "own grid, a band of rows at a time)")
    return False


def _refuse_others(args: argparse.Namespace, why: str) -> None:
    if args.file:
        raise UsageError(f"{why}: a project FILE's data sources are read into memory; give the equation inline "
                         "or with --template and the file with --data")
    for flag, name in (("--grid", "grid"), ("--certify", "certify"), ("--save-project", "save_project")):
        if getattr(args, name):
            reason = {"grid": "the nodes are the data's own (use --stride K to take every K-th)",
                      "certify": "a certified map encloses the data over cells, which needs them in memory",
                      "save_project": "a project reads its data files into memory"}[name]
            hint = "" if why == "--out-of-core" else "; or raise --data-cap to read the file into memory"
            raise UsageError(f"{flag}: not with {why}: {reason}{hint}")


def _streamed_file(args: argparse.Namespace, why: str) -> tuple[int, str, dict | None]:
    for index, (path, names) in enumerate(args.data):
        if gridded_format(path) is not None:
            return index, path, names
    raise UsageError(f"{why} needs a NetCDF file or zarr store among the --data files")


def _stride(args: argparse.Namespace) -> tuple[int, int]:
    stride = args.stride or [1]
    if len(stride) not in (1, 2):
        raise UsageError(f"--stride takes K or KX KY, got {len(stride)} numbers")
    return (stride[0], stride[0]) if len(stride) == 1 else (stride[0], stride[1])


def run_out_of_core(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Classify band by band and report (text or --json); returns the exit status."""
    reason = None if args.out_of_core else automatic_reason(args)
    why = "--out-of-core" if reason is None else "an out-of-core run"
    if reason:
        err.write(f"mixtype: note: {reason}\n")
    _refuse_others(args, why)
    index, path, names = _streamed_file(args, why)
    stride = _stride(args)
    budget = DEFAULT_BLOCK_BUDGET if args.block_mib is None else args.block_mib << 20
    codes_path = args.codes_out
    if codes_path is not None and not codes_path.lower().endswith(".npy"):
        raise UsageError(f"--codes-out {codes_path}: the codes are written as a NumPy .npy file (end the name "
                         "in .npy)")
    template, variables = inline_start(args)
    others = [DataFile(p, n) for k, (p, n) in enumerate(args.data) if k != index]
    with data_cap_raised(args.data_cap):
        try:
            store = open_gridded(path, variables=variables, names=names, chunk_budget=budget)
        except DataError as error:
            raise UsageError(f"--data: {error}") from None
        try:
            in_memory = _combined(_read_data(others, variables))
        except BaseException:
            store.close()
            raise
    with store:
        clash = sorted(set(store.quantities) & set(in_memory.names if in_memory else ()))
        if clash:
            raise UsageError(f"--data: quantity {clash[0]!r} is in both {path} and another --data file; rename one "
                             f"with PATH:{clash[0]}=other_name")
        names_offered = (*store.quantities, *(in_memory.names if in_memory else ()))
        equation = _equation(args, template, names_offered)
        compiled = compiled_with_names(equation, names_offered)
        rectangle = _rectangle(args)
        tolerance = DEFAULT_TOLERANCE if args.tolerance is None else args.tolerance
        try:
            result = classify_out_of_core(compiled, store, parameters=equation.parameter_values(),
                                          others=in_memory, tolerance=tolerance, stride=stride,
                                          rectangle=None if rectangle is None else tuple(rectangle),
                                          block_budget=budget, codes_path=codes_path)
            checksum = store_checksum(path)
        except DataError as error:
            raise UsageError(f"--data: {error}") from None
        files = [{"path": path, "checksum": checksum, "quantities": list(store.quantities)},
                 *data_files_document(in_memory)]
        document = {**out_of_core_fields(compiled.variables, result, files),
                    **study_fields(equation, equation.parameter_values())}
    if args.json:
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    _write_text(document, compiled.variables, out)
    return EXIT_OK


def _equation(args: argparse.Namespace, template, names: tuple[str, ...]) -> Equation:
    if template is None:
        return _overridden(Equation(a=args.a, b=args.b, c=args.c), args)
    from core.equations.templates import TemplateError  # only with a template (see core/cli/study.py)

    try:
        return _overridden(template.equation_with_data(names), args)
    except TemplateError as error:
        raise UsageError(f"--template {args.template}: {error}") from None


def _write_text(document: dict, variables: tuple[str, str], out: TextIO) -> None:
    x, y = variables
    ooc = document["out_of_core"]
    out.writelines(f"data {item['path']}: {', '.join(item['quantities'])}\n" for item in document["data"])
    x0, x1, y0, y1 = document["domain"]
    nx, ny = document["grid"]
    out.write(f"grid {nx} x {ny} of the nodes of {ooc['file']} over {x} in [{x0:g}, {x1:g}], {y} in "
              f"[{y0:g}, {y1:g}] (every {ooc['columns']['step']} along {x}, {ooc['rows']['step']} along {y}), "
              f"classified in {ooc['bands']} band(s) of at most {ooc['band_rows']} node rows\n")
    out.write(f"type         share of grid nodes   nodes            area (units of {x}*{y})\n")
    out.writelines(f"{label:<12} {100 * share:8.3f} %            {ooc['node_counts'][label]:<16d} "
                   f"{ooc['areas'][label]:.6g}\n" for label, share in document["fractions"].items())
    out.write("type-change lines, parabolic regions, pockets: not computed (an out-of-core run keeps no map in "
              "memory)\n")
    if ooc["codes"]:
        out.write(f"type codes written to {ooc['codes']} (int8, {ny} rows along {y} x {nx} columns along {x}; "
                  f"0 undefined, 1 elliptic, 2 parabolic, 3 hyperbolic)\n")
