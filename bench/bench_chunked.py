"""Out-of-core classification: peak memory while a NetCDF cube larger than the memory budget is classified.

A synthetic NetCDF-4 file (two float64 quantities on a grid of ``rows`` x ``columns`` nodes, stored in
uncompressed chunks of 256 rows x 4096 columns) is written to a temporary folder a block of rows at a time.
A fresh interpreter (``python bench/bench_chunked.py --case FILE --budget-mib B``) imports everything and
classifies a small file of the same kind once (every lazy import, cache and thread in place), reads its
resident high-water mark (VmHWM, as bench/bench_pipeline.py) as the baseline, then classifies the big file
out of core with a band budget of B MiB, writing the codes to a .npy file, and reads the mark again. The
equation uses both quantities and a derivative along each variable, so every band reads a halo.

Figures: file bytes, peak bytes above the baseline, file bytes / peak bytes, and the peak against the bound
the README states: 1.5 x the band budget + 24 MiB per classification thread + 16 MiB above the interpreter.
The page cache the file passes through is the kernel's, not the process's, and is not counted.
Run by hand: ``python bench/bench_chunked.py`` (a 3.2 GB file: about a minute and 3.2 GB of free disk).
"""

from __future__ import annotations

import argparse
import json
import os
import pathlib
import subprocess
import sys
import tempfile
import time

HERE = pathlib.Path(__file__).resolve().parent
if __name__ == "__main__":                 # run as a case: the checkout's code first, as bench/run.py does
    sys.path.insert(0, str(HERE.parent))
    sys.path.insert(0, str(HERE))

import numpy as np
from bench_pipeline import _peak_rss_bytes
from records import figure

from core.analysis.classify import _WORKERS
from core.analysis.out_of_core import classify_out_of_core
from core.data.gridded_store import open_gridded
from core.equations.equation import Equation
from core.project.data_files import compile_with_data

EQUATION = Equation(a="h - 0.5 + 0.01 * diff(u, y)", b="u", c="0.25 * diff(h, x) - 0.1")
BOUND_FACTOR = 1.5          # peak above the interpreter <= BOUND_FACTOR x budget + threads x THREAD_MIB + EXTRA_MIB
THREAD_MIB = 24             # a classification thread's blocks (core.analysis.classify: 2**18 nodes)
EXTRA_MIB = 16


def bound_bytes(budget_mib: int) -> int:
    """The README's bound on peak memory above the interpreter for a band budget of ``budget_mib``."""
    return int(BOUND_FACTOR * (budget_mib << 20) + (_WORKERS * THREAD_MIB << 20) + (EXTRA_MIB << 20))


def write_cube(path: str, rows: int, columns: int) -> int:
    """Write the synthetic file, a block of rows at a time; returns its size in bytes."""
    import netCDF4  # only the bench writes NetCDF

    x = np.linspace(0.0, 40.0, columns)
    y = np.linspace(-10.0, 10.0, rows)
    with netCDF4.Dataset(path, "w", format="NETCDF4") as dataset:
        dataset.createDimension("x", columns)
        dataset.createDimension("y", rows)
        dataset.createVariable("x", "f8", ("x",))[:] = x
        dataset.createVariable("y", "f8", ("y",))[:] = y
        chunks = (min(256, rows), min(4096, columns))
        h = dataset.createVariable("h", "f8", ("y", "x"), chunksizes=chunks)
        u = dataset.createVariable("u", "f8", ("y", "x"), chunksizes=chunks)
        step = chunks[0] * 4
        for start in range(0, rows, step):
            yy = y[start:start + step, np.newaxis]
            h[start:start + step, :] = 0.5 + 0.4 * np.sin(0.3 * x[np.newaxis, :] + 0.2 * yy) * np.cos(0.5 * yy)
            u[start:start + step, :] = 0.3 * np.cos(0.2 * x[np.newaxis, :] - 0.4 * yy)
    return os.path.getsize(path)


def _classify(path: str, budget: int, codes: str | None):
    with open_gridded(path, chunk_budget=budget) as store:
        compiled = compile_with_data(EQUATION, store.quantities)
        return classify_out_of_core(compiled, store, block_budget=budget, codes_path=codes)


def measure_case(path: str, warm_path: str, budget_mib: int) -> dict:
    """In this interpreter: warm up on ``warm_path``, then the peak of classifying ``path`` out of core."""
    budget = budget_mib << 20
    folder = os.path.dirname(path)
    _classify(warm_path, budget, os.path.join(folder, "warm_codes.npy"))
    baseline = _peak_rss_bytes()
    start = time.perf_counter()
    result = _classify(path, budget, os.path.join(folder, "codes.npy"))
    seconds = time.perf_counter() - start
    peak = _peak_rss_bytes() - baseline
    return {"nodes": result.grid[0] * result.grid[1], "bands": result.bands, "band_rows": result.band_rows,
            "baseline_MiB": round(baseline / 2**20, 1), "peak_above_baseline_bytes": peak,
            "seconds": round(seconds, 2), "nodes_per_second": round(result.grid[0] * result.grid[1] / seconds),
            "fractions": {k: round(float(v), 6) for k, v in result.fractions.items()}}


SMOKE = {"rows": 96, "columns": 80, "budget_mib": 8}     # python bench/run.py --smoke: figures meaningless


def run(rows: int = 20_000, columns: int = 10_000, budget_mib: int = 128) -> dict:
    """Write the cube, classify it in a fresh interpreter, report its peak memory against the bound."""
    with tempfile.TemporaryDirectory(prefix="mixtype-bench-chunked-") as folder:
        path = os.path.join(folder, "cube.nc")
        warm = os.path.join(folder, "warm.nc")
        start = time.perf_counter()
        file_bytes = write_cube(path, rows, columns)
        written_s = time.perf_counter() - start
        write_cube(warm, 64, 64)
        command = [sys.executable, str(HERE / "bench_chunked.py"), "--case", path, "--warm", warm,
                   "--budget-mib", str(budget_mib)]
        done = subprocess.run(command, capture_output=True, text=True, check=False)
        if done.returncode != 0:
            raise RuntimeError(f"bench_chunked case failed:\n{done.stderr}")
        case = json.loads(done.stdout)
    peak = case["peak_above_baseline_bytes"]
    bound = bound_bytes(budget_mib)
    results = {"memory_method": "resident high-water mark (VmHWM) of a fresh interpreter, minus its value after "
                                "imports and a warm-up run on a small file",
               "grid": [columns, rows], "file_bytes": file_bytes, "write_s": round(written_s, 2),
               "budget_MiB": budget_mib, "threads": _WORKERS, "bound_bytes": bound, **case,
               "file_bytes_over_peak_bytes": round(file_bytes / max(peak, 1), 2)}
    results["records"] = [
        figure(f"out-of-core classify of a {file_bytes / 2**30:.2f} GiB NetCDF file: peak memory above the "
               f"interpreter / ({BOUND_FACTOR:g} x band budget + {THREAD_MIB} MiB x {_WORKERS} threads + {EXTRA_MIB} MiB)",
               peak / bound, 1.0),
    ]
    return results


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--case", help="classify this file in this interpreter")
    parser.add_argument("--warm", help="the small file of the warm-up run")
    parser.add_argument("--budget-mib", type=int, default=128)
    args = parser.parse_args()
    if args.case:
        print(json.dumps(measure_case(args.case, args.warm, args.budget_mib)))
    else:
        print(json.dumps(run(), indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
