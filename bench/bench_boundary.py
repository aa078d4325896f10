"""Cost and accuracy of refining type-change lines onto D = 0, on the unit-circle case.

u_xx - 2x u_xy + (1 - y^2) u_yy = 0 has D = 4(x^2 + y^2 - 1) (algebra, common practice), so the exact line is
the unit circle. Measures the largest radius error of the raw contour and of the refined curve (as a fraction
of the domain diagonal) and the extra time refinement adds to raw contouring (the median over pairs of
runs with and without it). Targets: refined error <= 1e-12 of the domain size, at <= 20 % extra time. Run by hand: ``python -m bench.bench_boundary``.
"""

from __future__ import annotations

import json

import numpy as np
from records import figure
from timing import paired_times

from core.analysis.classify import classify_grid
from core.analysis.type_change_lines import find_type_boundaries
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation

NODES = 1024
REPEATS = 41      # pairs (about 1 s); the target's figure is their median ratio (best of 15 drifted by 0.2)


def _radius_error(curves, attribute: str) -> float:
    points = np.concatenate([getattr(curve, attribute) for curve in curves])
    return float(np.max(np.abs(np.hypot(points[:, 0], points[:, 1]) - 1.0)))


SMOKE = {"nodes": 48}     # python bench/run.py --smoke: every line runs, figures meaningless


def run(nodes: int = NODES) -> dict:
    """Measure on a nodes x nodes grid over [-2, 2]^2; returns the figures as a dict."""
    domain = Domain(-2.0, 2.0, -2.0, 2.0, nodes, nodes)
    compiled = compile_equation(Equation(a="1", b="-2*x", c="1 - y**2"))
    type_map = classify_grid(compiled, domain)
    find_type_boundaries(compiled, type_map)                       # warm up imports and caches
    raw_times, refined_times, raw, refined = paired_times(
        lambda: find_type_boundaries(compiled, type_map, refine=False),
        lambda: find_type_boundaries(compiled, type_map, refine=True))
    raw_time, refined_time = float(raw_times.min()), float(refined_times.min())
    # the median of the pairs' ratios: steadier on a shared machine than a ratio of two separate minima
    extra = float(np.median(refined_times / raw_times)) - 1.0
    return {
        "grid": f"{nodes}x{nodes}",
        "curves": len(refined.curves),
        "vertices": int(sum(len(curve.points) for curve in refined.curves)),
        "unrefined_vertices": refined.unrefined,
        "raw_max_radius_error_relative": _radius_error(raw.curves, "raw_points") / domain.size,
        "refined_max_radius_error_relative": _radius_error(refined.curves, "points") / domain.size,
        "raw_contouring_seconds": raw_time,
        "contouring_and_refinement_seconds": refined_time,
        "extra_time_ratio": refined_time / raw_time - 1.0,
        "extra_time_ratio_median_of_pairs": extra,
        "targets": {"refined_max_radius_error_relative": 1e-12, "extra_time_ratio": 0.20},
        "records": [
            figure(f"type-change lines {nodes}^2: refined radius error / domain size",
                   _radius_error(refined.curves, "points") / domain.size, 1e-12),
            figure(f"type-change lines {nodes}^2: refinement time / contouring time - 1",
                   extra, 0.20),
        ],
    }


if __name__ == "__main__":
    print(json.dumps(run(), indent=2))
