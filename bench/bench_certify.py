"""Certified type maps: time against a uniform sampled map, undecided area per level, and a small pocket.

(1) The time to certify the bench's formula flow (bench_classify CASES) at a minimum cell of 1e-4 of the
domain's side, over the time of a uniform 1024^2 sampled map of the same study (classify_grid): the median
ratio over pairs of runs, the order alternating (bench/timing.py). (2) The undecided area left after each
level of the quadtree. (3) A hyperbolic pocket of radius 0.01 centred between the nodes of a 64^2 grid on
[-1, 1]^2: the certified map proves it and bounds its area (pi * 1e-4), while a uniform map with as many nodes
as the certified map examined cells finds no node in it.
"""

from __future__ import annotations

import math

import numpy as np
from bench_classify import CASES  # bench/ is on sys.path (script dir or bench/run.py)
from records import figure
from timing import paired_times

from core.analysis.classify import TypeCode, classify_grid
from core.certify.refinement import certify_map
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation

SMOKE = {"size": 48, "min_cell_fraction": 1e-2, "repeats": 1}   # python bench/run.py --smoke: figures meaningless


def _flow(size: int, min_cell_fraction: float, repeats: int) -> dict:
    domain = Domain(-2.0, 2.0, -2.0, 2.0, size, size)
    compiled = compile_equation(CASES["formula_flow"])
    min_cell = min_cell_fraction * 4.0
    out = (np.zeros((size, size), np.int8), np.zeros((size, size), np.float32))
    classify_grid(compiled, domain, out=out)
    certify_map(compiled, domain, min_cell=min_cell)          # warm: sympy's gradient, first imports
    certify_times, map_times, certified, _ = paired_times(
        lambda: certify_map(compiled, domain, min_cell=min_cell), lambda: classify_grid(compiled, domain, out=out),
        2 * repeats + 1)
    return {
        "size": size,
        "min_cell": min_cell,
        "certify_s": round(float(np.min(certify_times)), 4),
        "uniform_map_s": round(float(np.min(map_times)), 4),
        "certify_over_uniform_map": round(float(np.median(certify_times / map_times)), 2),
        "cells_examined": certified.cells,
        "undecided_area": certified.undecided_area,
        "area": {label: list(bounds) for label, bounds in certified.area.items()},
        "dependency_form": certified.dependency_form,
        "undecided_area_per_level": [[level.level, level.cell_width, level.cells, level.undecided_area]
                                     for level in certified.levels],
    }


def _pocket(grid: int = 64) -> dict:
    spacing = 2.0 / (grid - 1)
    x0, y0 = -1.0 + 20 * spacing + spacing / 2, -1.0 + 41 * spacing + spacing / 2
    compiled = compile_equation(Equation(a="1", b="0", c=f"((x - {x0!r})**2 + (y - {y0!r})**2 - 1e-4) / 4"))
    square = Domain(-1.0, 1.0, -1.0, 1.0, grid, grid)
    sampled = classify_grid(compiled, square)
    certified = certify_map(compiled, square, sampled=sampled)
    pocket = next(p for p in certified.pockets if p.type == "hyperbolic")
    side = int(math.sqrt(certified.cells))
    uniform = classify_grid(compiled, square.with_grid(side, side))
    return {
        "sampled_grid": grid,
        "sampled_hyperbolic_nodes": sampled.count(TypeCode.HYPERBOLIC),
        "certified_area": list(pocket.area),
        "holds_disc_area": pocket.area[0] <= math.pi * 1e-4 <= pocket.area[1],
        "proven": pocket.proven,
        "missed_by_grid": pocket.missed_by_grid,
        "cells_examined": certified.cells,
        "uniform_grid_same_count": side,
        "uniform_hyperbolic_nodes": uniform.count(TypeCode.HYPERBOLIC),
    }


def run(size: int = 1024, min_cell_fraction: float = 1e-4, repeats: int = 3) -> dict:
    flow = _flow(size, min_cell_fraction, repeats)
    pocket = _pocket()
    return {
        "formula_flow": flow,
        "pocket": pocket,
        "records": [
            figure(f"certified map at min cell {min_cell_fraction:g} of the side over a uniform {size}^2 map "
                   "(formula flow)", flow["certify_over_uniform_map"], 10.0),
            figure("undecided area left, share of the domain (formula flow)", flow["undecided_area"] / 16.0, None),
            figure("pocket of radius 0.01 off the grid: certified area bounds hold pi * 1e-4 (1 = yes)",
                   float(pocket["holds_disc_area"] and pocket["proven"]), 1.0, at_most=False),
            figure("uniform map with as many nodes as certified cells: hyperbolic nodes in the pocket",
                   float(pocket["uniform_hyperbolic_nodes"]), None),
        ],
    }


if __name__ == "__main__":
    import json

    print(json.dumps(run(), indent=1))
