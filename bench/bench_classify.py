"""Grid classification speed and memory, as ratios measured in one run (not run by CI).

Against (1) the memory floor: one np.multiply of a grid-sized float64 array into a preallocated, already
touched array; and (2) the hand-made baseline: sympy.lambdify with numpy on the whole meshgrid, then the same
tolerance rule. Extra memory is the tracemalloc peak above the outputs, with outputs preallocated.
"""

from __future__ import annotations

import json
import tracemalloc

import numpy as np
import sympy
from timing import best_time  # bench/ is on sys.path (script dir or bench/run.py)

from core.analysis.classify import DEFAULT_TOLERANCE, TypeCode, classify_grid
from core.domain import Domain
from core.equations.equation import Equation, Parameter, compile_equation

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


SMOKE = {"sizes": (48,), "repeats": 1}     # python bench/run.py --smoke: every line runs, figures meaningless


def run(sizes=(2048, 4096), repeats: int = 3) -> dict:
    results: dict = {}
    for n in sizes:
        domain = Domain(-2.0, 2.0, -2.0, 2.0, n, n)
        source = np.random.default_rng(0).random((n, n))
        target = np.empty_like(source)
        np.multiply(source, 2.0, out=target)
        floor = best_time(lambda s=source, t=target: np.multiply(s, 2.0, out=t), repeats + 2)
        del source, target
        for name, equation in CASES.items():
            compiled = compile_equation(equation)
            out = (np.zeros((n, n), np.int8), np.zeros((n, n), np.float32))
            classify_grid(compiled, domain, out=out)
            warm = best_time(lambda c=compiled, d=domain, o=out: classify_grid(c, d, out=o), repeats)
            cold = best_time(lambda c=compiled, d=domain: classify_grid(c, d), repeats)
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
                "classify_preallocated_s": round(warm, 4),
                "classify_new_arrays_s": round(cold, 4),
                "ratio_to_floor_preallocated": round(warm / floor, 2),
                "ratio_to_floor_new_arrays": round(cold / floor, 2),
                "baseline_lambdify_s": round(baseline, 4),
                "speedup_vs_baseline": round(baseline / warm, 2),
                "extra_memory_MiB": round(peak / 2**20, 2),
                "codes_agree_with_baseline": agree,
            }
    return results


if __name__ == "__main__":
    print(json.dumps(run(), indent=2))
