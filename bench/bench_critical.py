"""Critical values: the time of a whole search against one sampled map, and its accuracy.

The supersonic zone of a potential vortex in the full-potential equation with an isentropic sound speed
(tests/core/test_critical.py): it appears when G reaches 0.5 c*, c*^2 = 2 / (gamma + 1) (NACA Report 1135).
(1) The time of find_critical_values over G in [0.2, 0.8] (scan, root, proof) over the time of one
classify_grid of the same study on its grid: the median ratio over pairs of runs, the order alternating
(bench/timing.py). (2) The relative error of the value found, and the width of its bracket, against 1e-9.
"""

from __future__ import annotations

import math

import numpy as np
from records import figure  # bench/ is on sys.path (script dir or bench/run.py)
from timing import paired_times

from core.analysis.classify import classify_grid
from core.analysis.critical import find_critical_values
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter

SMOKE = {"grid": 33, "repeats": 1}   # python bench/run.py --smoke: figures meaningless
GAMMA = 1.4


def run(grid: int = 201, repeats: int = 3) -> dict:
    compiled = compile_equation(Equation(
        a="c2 - u**2", b="-2*u*v", c="c2 - v**2",
        definitions={"u": "-G*y/(x**2 + y**2)", "v": "G*x/(x**2 + y**2)", "c2": "1 - (gamma - 1)/2*(u**2 + v**2)"},
        parameters={"G": Parameter(0.3), "gamma": Parameter(GAMMA)}))
    domain = Domain(0.5, 2.0, -1.0, 1.0, grid, grid)
    expected = 0.5 * math.sqrt(2.0 / (GAMMA + 1.0))

    def search():
        return find_critical_values(compiled, domain, "G", (0.2, 0.8))

    search()                                                   # warm: first imports, sympy's gradient
    searches, maps, result, _ = paired_times(search, lambda: classify_grid(compiled, domain), 2 * repeats + 1)
    event = result.events[0]
    ratio = float(np.median(searches / maps))
    error = abs(event.value - expected) / expected
    width = (event.bracket[1] - event.bracket[0]) / expected
    return {
        "grid": grid,
        "search_s": round(float(np.min(searches)), 4),
        "classify_s": round(float(np.min(maps)), 5),
        "search_over_classify": round(ratio, 1),
        "relative_error": error,
        "relative_bracket_width": width,
        "proven": result.proven,
        "records": [
            figure(f"critical value search over one sampled map ({grid}^2, vortex)", ratio, 300.0),
            figure("critical value: relative error against the closed form (vortex)", error, 1e-9),
            figure("critical value: proven by certified maps (1 = yes)", float(result.proven is True), 1.0,
                   at_most=False),
        ],
    }


if __name__ == "__main__":
    import json

    print(json.dumps(run(), indent=1))
