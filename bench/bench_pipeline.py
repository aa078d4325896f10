"""The whole ``mixtype classify`` pipeline on big grids: peak memory and the time of lines and pockets.

Each case runs in a fresh interpreter (``python bench/bench_pipeline.py --case NAME --nodes N``) that
imports everything, compiles the equation and runs the pipeline once on a tiny grid (so that every lazy
import and cache is in place), then reads its resident-set high-water mark (VmHWM of /proc/self/status on
Linux, ``resource.getrusage`` elsewhere) as the baseline and runs classify_grid, find_type_boundaries and
pocket_statistics as the command does. Peak memory is the high-water mark after the pipeline minus the
baseline: it counts every allocation (numpy, contourpy's C++ vectors, scipy.ndimage's buffers), which
tracemalloc would not, and includes the type map itself. Times are the best of ``repeats`` runs in the same
process; the figure is (lines + pockets time) / classification time.

Targets: peak memory <= 1.2 GiB above the baseline at every size and equation, and the time ratio <= 5.
The equations are bench_classify's (the unit circle, and a formula flow whose pockets report the peak of
the flow speed u). Run by hand: ``python bench/bench_pipeline.py`` (all cases, about a minute at 8192^2).
"""

from __future__ import annotations

import argparse
import json
import pathlib
import resource
import subprocess
import sys
import time
from dataclasses import replace

HERE = pathlib.Path(__file__).resolve().parent
if __name__ == "__main__":                 # run as a case: the checkout's code first, as bench/run.py does
    sys.path.insert(0, str(HERE.parent))
    sys.path.insert(0, str(HERE))

from bench_classify import CASES
from records import figure

from core.analysis.classify import classify_grid
from core.analysis.pockets import pocket_statistics
from core.analysis.type_change_lines import find_type_boundaries
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.results.readouts import peak_quantity

PEAK_QUANTITIES = {"formula_flow": "u"}     # what each case's pockets report the peak of
MEMORY_TARGET_GIB = 1.2
RATIO_TARGET = 5.0


def _case_equation(name: str):
    equation = CASES[name]
    return replace(equation, peak_quantity=PEAK_QUANTITIES.get(name, ""))


def _pipeline(compiled, equation, domain: Domain) -> tuple[float, float, float, int, int]:
    """classify_grid, find_type_boundaries, pocket_statistics as ``mixtype classify`` runs them: times (s),
    curves and pockets found."""
    start = time.perf_counter()
    type_map = classify_grid(compiled, domain)
    classified = time.perf_counter()
    boundaries = find_type_boundaries(compiled, type_map)
    lined = time.perf_counter()
    pockets = pocket_statistics(compiled, type_map, quantity=peak_quantity(equation, compiled))
    done = time.perf_counter()
    return classified - start, lined - classified, done - lined, len(boundaries.curves), len(pockets)


def _peak_rss_bytes() -> int:
    """This process's resident high-water mark. On Linux VmHWM of /proc/self/status: ru_maxrss would carry
    the parent's high-water mark across fork and exec (bench/run.py's own peak then hid every case's)."""
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024     # Linux reports KiB


def measure_case(name: str, nodes: int, repeats: int) -> dict:
    """One case in this interpreter; meaningful only in a fresh one (the high-water mark never drops)."""
    equation = _case_equation(name)
    compiled = compile_equation(equation)
    _pipeline(compiled, equation, Domain(-2.0, 2.0, -2.0, 2.0, 64, 64))        # imports, caches, threads
    baseline = _peak_rss_bytes()
    domain = Domain(-2.0, 2.0, -2.0, 2.0, nodes, nodes)
    runs = [_pipeline(compiled, equation, domain)]
    peak = _peak_rss_bytes()
    runs += [_pipeline(compiled, equation, domain) for _ in range(repeats - 1)]
    classify_s = min(run[0] for run in runs)
    lines_s = min(run[1] for run in runs)
    pockets_s = min(run[2] for run in runs)
    return {"nodes": nodes, "baseline_MiB": round(baseline / 2**20, 1),
            "peak_above_baseline_GiB": round((peak - baseline) / 2**30, 3),
            "classify_s": round(classify_s, 4), "lines_s": round(lines_s, 4), "pockets_s": round(pockets_s, 4),
            "lines_and_pockets_over_classify": round((lines_s + pockets_s) / classify_s, 2),
            "curves": runs[0][3], "pockets": runs[0][4]}


def _run_case(name: str, nodes: int, repeats: int) -> dict:
    command = [sys.executable, str(HERE / "bench_pipeline.py"), "--case", name, "--nodes", str(nodes),
               "--repeats", str(repeats)]
    result = subprocess.run(command, capture_output=True, text=True, check=False)
    if result.returncode != 0:
        raise RuntimeError(f"bench_pipeline case {name} at {nodes}^2 failed:\n{result.stderr}")
    return json.loads(result.stdout)


SMOKE = {"sizes": (48,), "repeats": 1}     # python bench/run.py --smoke: every line runs, figures meaningless


def run(sizes=(4096, 8192), repeats: int = 2, cases=tuple(CASES)) -> dict:
    """Every case at every size, each in its own interpreter; figures and target records."""
    results: dict = {"memory_method": "resident high-water mark (VmHWM) of a fresh interpreter per case, minus its value after "
                                      "imports and a warm-up run"}
    records = []
    for nodes in sizes:
        for name in cases:
            case = _run_case(name, nodes, repeats)
            results[f"{name}_{nodes}"] = case
            records.append(figure(f"classify pipeline {name} {nodes}^2: peak memory above baseline",
                                  case["peak_above_baseline_GiB"], MEMORY_TARGET_GIB, unit="GiB"))
            records.append(figure(f"classify pipeline {name} {nodes}^2: (lines + pockets) / classification time",
                                  case["lines_and_pockets_over_classify"], RATIO_TARGET))
    results["records"] = records
    return results


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--case", choices=sorted(CASES), help="run one case in this interpreter")
    parser.add_argument("--nodes", type=int, default=4096)
    parser.add_argument("--repeats", type=int, default=2)
    args = parser.parse_args()
    if args.case:
        print(json.dumps(measure_case(args.case, args.nodes, args.repeats)))
    else:
        print(json.dumps(run(), indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
