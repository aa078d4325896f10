"""Type zones as polygons bounded by the refined type-change lines: areas, shared vertices, holes, limits."""

import math

import numpy as np
import pytest

from core.analysis.classify import TypeCode, classify_grid
from core.analysis.pockets import pocket_statistics
from core.analysis.type_change_lines import find_type_boundaries
from core.analysis.zone_polygons import MAX_POLYGON_NODES, ring_area, zone_polygons
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation
from core.progress import Cancelled

# Hyperbolic inside the unit circle: D = -4 (x^2 + y^2 - 1); its area is pi (exact, no source needed).
CIRCLE = Equation("1", "0", "x**2 + y**2 - 1", name="unit circle")


def _study(equation: Equation, n: int, box=(-1.5, 1.5, -1.5, 1.5)):
    compiled = compile_equation(equation)
    type_map = classify_grid(compiled, Domain(*box, n, n, "d"))
    return compiled, type_map, find_type_boundaries(compiled, type_map)


@pytest.mark.parametrize("n", [31, 61, 121])
def test_the_unit_circle_zone_has_area_pi_to_second_order_better_than_node_counting(n):
    compiled, type_map, boundaries = _study(CIRCLE, n)
    polygons = zone_polygons(type_map, boundaries)
    h = 3.0 / (n - 1)
    (hyperbolic,) = polygons.of_type(TypeCode.HYPERBOLIC)
    (pocket,) = [p for p in pocket_statistics(compiled, type_map) if p.type == TypeCode.HYPERBOLIC]
    polygon_error, node_error = abs(hyperbolic.area - math.pi), abs(pocket.area - math.pi)
    assert polygon_error < 0.6 * h ** 2          # a polygon inscribed in the circle: O(h^2)
    assert polygon_error < node_error / 4        # the node count is only O(h)
    assert abs(hyperbolic.area - pocket.area) < 2 * math.pi * h   # they agree to O(h): perimeter times h
    # every vertex inside the domain lies on the circle: moved onto the refined line (to ~1e-13 of the size)
    ring = hyperbolic.rings[0]
    assert len(hyperbolic.rings) == 1 and polygons.snapped > len(ring)    # both zones snap their shared vertices
    assert np.abs(np.hypot(ring[:, 0], ring[:, 1]) - 1.0).max() < 1e-12
    # the elliptic zone is the square with the disc as a hole: the zones tile the domain exactly
    (elliptic,) = polygons.of_type(TypeCode.ELLIPTIC)
    assert len(elliptic.rings) == 2
    assert polygons.area("elliptic") + polygons.area("hyperbolic") == pytest.approx(9.0, rel=1e-13)


def test_the_zones_share_their_boundary_with_the_type_change_line():
    _, type_map, boundaries = _study(CIRCLE, 41)
    polygons = zone_polygons(type_map, boundaries)
    line = {tuple(p) for curve in boundaries.curves for p in curve.points}
    inner = {tuple(p) for p in polygons.of_type("hyperbolic")[0].rings[0]}
    hole = {tuple(p) for p in polygons.of_type("elliptic")[0].rings[1]}
    assert inner == hole == line                 # the very same refined vertices, bit for bit


def test_without_lines_the_vertices_stay_where_the_grid_put_them():
    _, type_map, _ = _study(CIRCLE, 41)
    raw = zone_polygons(type_map)
    assert raw.snapped == 0
    radii = np.hypot(*raw.of_type("hyperbolic")[0].rings[0].T)
    assert 1e-6 < np.abs(radii - 1.0).max() < 0.05


def test_pockets_give_one_polygon_each_with_areas_matching_the_pockets_to_first_order():
    # two hyperbolic discs of radius 0.4 about (-0.6, 0) and (0.6, 0): D = 4 max(...) > 0 inside either
    two = Equation("1", "0", "-max(0.16 - (x + 0.6)**2 - y**2, 0.16 - (x - 0.6)**2 - y**2)", name="two discs")
    compiled, type_map, boundaries = _study(two, 101)
    polygons = zone_polygons(type_map, boundaries)
    hyperbolic = sorted(p.area for p in polygons.of_type("hyperbolic"))
    pockets = sorted(p.area for p in pocket_statistics(compiled, type_map) if p.type == TypeCode.HYPERBOLIC)
    h = 3.0 / 100
    assert len(hyperbolic) == len(pockets) == 2
    for area, pocket in zip(hyperbolic, pockets, strict=True):
        assert area == pytest.approx(math.pi * 0.16, abs=0.5 * h ** 2)
        assert abs(area - pocket) < 2 * math.pi * 0.4 * h


def test_a_parabolic_zone_is_its_cells_outline_and_undefined_nodes_are_left_out():
    # parabolic (D = 0 exactly) for x <= 0.5, hyperbolic for x > 0.5, undefined on the rows y = -1 and -0.9
    # (log(0) and log of a negative number): the cells touching them are in no zone
    equation = Equation("1", "0", "-max(x - 0.5, 0) + 0*log(y + 0.9)", name="flat")
    _, type_map, boundaries = _study(equation, 21, box=(-1.0, 1.0, -1.0, 1.0))
    assert type_map.count("undefined") == 2 * 21
    polygons = zone_polygons(type_map, boundaries)
    parabolic = polygons.area("parabolic")
    assert parabolic == pytest.approx(sum(r.area for r in boundaries.parabolic_regions), rel=1e-12)
    assert parabolic == pytest.approx(1.5 * 1.8, rel=1e-12)
    assert polygons.area("hyperbolic") == pytest.approx(0.5 * 1.8, rel=1e-12)
    assert polygons.area("elliptic") == 0.0
    lowest = min(ring[:, 1].min() for polygon in polygons.polygons for ring in polygon.rings)
    assert lowest == pytest.approx(-0.8, abs=1e-12)


def test_rings_are_closed_and_signed_areas_follow_orientation():
    square = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0], [0.0, 0.0]])
    assert ring_area(square) == 1.0 and ring_area(square[::-1]) == -1.0
    _, type_map, boundaries = _study(CIRCLE, 21)
    for polygon in zone_polygons(type_map, boundaries).polygons:
        for ring in polygon.rings:
            assert np.array_equal(ring[0], ring[-1]) and not ring.flags.writeable


def test_huge_maps_are_left_to_the_image_and_cancel_stops_the_work():
    _, type_map, boundaries = _study(CIRCLE, 21)
    with pytest.raises(Cancelled):
        zone_polygons(type_map, boundaries, cancel=lambda: True)

    class Huge:
        codes = np.zeros((1, MAX_POLYGON_NODES + 1), dtype=np.int8)

    assert zone_polygons(Huge()) is None
