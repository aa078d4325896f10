"""Grid classification speed and memory, as ratios measured in one run (not run by CI).

Against (1) the memory floor: one np.multiply of a grid-sized float64 array into a preallocated, already
touched array, on one thread and split between two threads (classification runs on every core, so the
two-thread floor is the honest one on two cores); and (2) the hand-made baseline: sympy.lambdify with numpy
on the whole meshgrid, then the same tolerance rule. Extra memory is the tracemalloc peak above the outputs,
with outputs preallocated, including the block arrays each pool thread keeps from call to call. A max of many arguments is timed against the sum of the same arguments: with
shared sub-expressions both cost about the same, and the generated program stays small. The target figures
are medians over pairs of runs (work and floor back to back, the order alternating: bench/timing.py), which
a busy moment of a shared machine moves far less than a ratio of two separate best times.
"""

from __future__ import annotations

import json
import tracemalloc
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import sympy
from records import figure  # bench/ is on sys.path (script dir or bench/run.py)
from timing import best_time, paired_times

from core.analysis.classify import DEFAULT_TOLERANCE, TypeCode, classify_grid
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter

CASES = {
    # D = 4(x^2 + y^2 - 1): a polynomial field that depends on both variables.
    "unit_circle": Equation(a="1", b="-2*x", c="1 - y**2"),
    # A full-potential operator on a formula flow: transcendental definitions, as in practice.
    "formula_flow": Equation(
        a="c2 - u**2", b="-2*u*v", c="c2 - v**2",
        definitions={"u": "U*(1 + 0.3*exp(-x**2)*cos(y))", "v": "0.1*U*sin(x)",
                     "c2": "1 - (gam - 1)/2*(u**2 + v**2)"},
        parameters={"U": Parameter(0.8), "gam": Parameter(1.4)}),
}


def _baseline(equation: Equation, domain: Domain):
    """The obvious hand-made way: lambdify D and the scale on a full meshgrid, then classify."""
    compiled = compile_equation(equation)
    x, y = (compiled.symbols[v] for v in compiled.variables)
    a, b, c = (compiled.substituted[k] for k in "abc")
    params = [compiled.symbols[p] for p in compiled.parameter_defaults]
    values = list(compiled.parameter_defaults.values())
    d_fn = sympy.lambdify([x, y, *params], b**2 - 4 * a * c, modules="numpy")
    s_fn = sympy.lambdify([x, y, *params], b**2 + 4 * sympy.Abs(a * c), modules="numpy")

    def run():
        xx, yy = np.meshgrid(domain.x_nodes, domain.y_nodes)
        with np.errstate(all="ignore"):
            d = np.broadcast_to(d_fn(xx, yy, *values), xx.shape)
            s = np.broadcast_to(s_fn(xx, yy, *values), xx.shape)
            normalized = d / s
        codes = np.full(xx.shape, TypeCode.PARABOLIC, dtype=np.int8)
        codes[normalized > DEFAULT_TOLERANCE] = TypeCode.HYPERBOLIC
        codes[normalized < -DEFAULT_TOLERANCE] = TypeCode.ELLIPTIC
        codes[~np.isfinite(normalized)] = TypeCode.UNDEFINED
        return codes

    return run


# The arguments of the max-of-many case: each depends on both variables, none can be compared symbolically.
MANY_ARGUMENTS = tuple(f"sin({k}*x + y)*exp(-{k}*y**2)" for k in range(1, 13))

SMOKE = {"sizes": (48,), "repeats": 1, "many_size": 32}   # python bench/run.py --smoke: figures meaningless


class _Floors:
    """np.multiply of an (n, n) array into a touched one: on one thread, and split between two threads."""

    def __init__(self, n: int, pool: ThreadPoolExecutor) -> None:
        self.source = np.random.default_rng(0).random((n, n))
        self.target = np.empty_like(self.source)
        self.halves = (slice(0, n // 2), slice(n // 2, n))
        self.pool = pool
        self.one()
        self.two()

    def one(self) -> None:
        np.multiply(self.source, 2.0, out=self.target)

    def two(self) -> None:
        list(self.pool.map(lambda rows: np.multiply(self.source[rows], 2.0, out=self.target[rows]), self.halves))


def _paired_ratio(work, floor, pairs: int) -> float:
    """Median over pairs, the order alternating, of work time / floor time: a busy moment of the machine
    falls on both halves of a pair (a ratio of two separate minima swung from 1.9 to 4.2 between runs)."""
    work_times, floor_times, _, _ = paired_times(work, floor, pairs)
    return float(np.median(work_times / floor_times))


def _max_of_many(n: int, repeats: int) -> dict:
    """Classification of max(...) of the twelve arguments against their sum, on an (n, n) grid."""
    domain = Domain(-2.0, 2.0, -2.0, 2.0, n, n)
    maximum = compile_equation(Equation(a=f"max({', '.join(MANY_ARGUMENTS)})", b="0", c="1"))
    half = compile_equation(Equation(a=f"max({', '.join(MANY_ARGUMENTS[:6])})", b="0", c="1"))
    total = compile_equation(Equation(a=" + ".join(MANY_ARGUMENTS), b="0", c="1"))
    out = (np.zeros((n, n), np.int8), np.zeros((n, n), np.float32))
    # pairs, the order alternating, and their median ratio: runs of a few milliseconds swing with the load
    max_times, sum_times, _, _ = paired_times(lambda: classify_grid(maximum, domain, out=out),
                                              lambda: classify_grid(total, domain, out=out), 10 * repeats + 1)
    return {
        "arguments": len(MANY_ARGUMENTS),
        "max_s": round(float(np.min(max_times)), 5),
        "sum_s": round(float(np.min(sum_times)), 5),
        "max_over_sum": round(float(np.median(max_times / sum_times)), 2),
        "max_program_characters": maximum.program_characters,
        "max_program_steps": len(maximum.program),
        "max_of_half_program_characters": half.program_characters,
    }


def run(sizes=(2048, 4096), repeats: int = 3, many_size: int = 256) -> dict:
    results: dict = {}
    pool = ThreadPoolExecutor(max_workers=2)
    for n in sizes:
        domain = Domain(-2.0, 2.0, -2.0, 2.0, n, n)
        floors = _Floors(n, pool)
        floor, floor_two = best_time(floors.one, repeats + 2), best_time(floors.two, repeats + 2)
        for name, equation in CASES.items():
            compiled = compile_equation(equation)
            out = (np.zeros((n, n), np.int8), np.zeros((n, n), np.float32))
            classify_grid(compiled, domain, out=out)
            warm = best_time(lambda c=compiled, d=domain, o=out: classify_grid(c, d, out=o), repeats)
            pairs = 10 * repeats + 1

            def classify(c=compiled, d=domain, o=out):
                classify_grid(c, d, out=o)

            paired_one = _paired_ratio(classify, floors.one, pairs)
            paired_two = _paired_ratio(classify, floors.two, pairs)
            cold = best_time(lambda c=compiled, d=domain: classify_grid(c, d), repeats)
            # Each pool thread keeps its block arrays for the next call of the same block shape: a grid one
            # column wider first, so that the measured call makes them again and they count.
            classify_grid(compiled, Domain(-2.0, 2.0, -2.0, 2.0, n + 1, n))
            tracemalloc.start()
            classify_grid(compiled, domain, out=out)
            _, peak = tracemalloc.get_traced_memory()
            tracemalloc.stop()
            baseline_run = _baseline(equation, domain)
            reference = baseline_run()
            baseline = best_time(baseline_run, 1)
            agree = float(np.mean(reference == out[0]))
            del reference
            results[f"{name}_{n}"] = {
                "floor_s": round(floor, 4),
                "floor_two_threads_s": round(floor_two, 4),
                "classify_preallocated_s": round(warm, 4),
                "classify_new_arrays_s": round(cold, 4),
                "ratio_to_floor_preallocated": round(warm / floor, 2),
                "ratio_to_floor_new_arrays": round(cold / floor, 2),
                "ratio_to_two_thread_floor": round(warm / floor_two, 2),
                "ratio_to_floor_median_of_pairs": round(paired_one, 2),
                "ratio_to_two_thread_floor_median_of_pairs": round(paired_two, 2),
                "baseline_lambdify_s": round(baseline, 4),
                "speedup_vs_baseline": round(baseline / warm, 2),
                "extra_memory_MiB": round(peak / 2**20, 2),
                "codes_agree_with_baseline": agree,
            }
    pool.shutdown()
    many = results["max_of_many"] = _max_of_many(many_size, repeats)
    n = sizes[-1]
    results["records"] = [
        figure(f"formula flow at {n}^2, time over the one-thread floor",
               results[f"formula_flow_{n}"]["ratio_to_floor_median_of_pairs"], 15.0, unit="x"),
        figure(f"unit circle at {n}^2, time over the two-thread floor",
               results[f"unit_circle_{n}"]["ratio_to_two_thread_floor_median_of_pairs"], 2.5, unit="x"),
        figure(f"max of {many['arguments']} arguments over their sum at {many_size}^2", many["max_over_sum"], 1.5,
               unit="x"),
        figure(f"generated program of a max of {many['arguments']} arguments", many["max_program_characters"],
               2000, unit="characters"),
        figure("program of max of 12 over max of 6 (linear growth: about 2)",
               many["max_program_characters"] / many["max_of_half_program_characters"], 2.5, unit="x"),
    ]
    return results


if __name__ == "__main__":
    print(json.dumps(run(), indent=2))
