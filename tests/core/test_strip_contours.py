"""Contouring in strips of rows gives the lines of contouring the whole field at once, joined whole."""

from types import SimpleNamespace

import contourpy
import numpy as np
import pytest

from core.analysis import strip_contours
from core.analysis.classify import TypeCode, classify_grid
from core.analysis.type_change_lines import find_type_boundaries
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation

CASES = {
    # D = 4 (x^2 + y^2 - 1): the unit circle, through nodes where D is exactly 0 (odd node counts)
    "circle through nodes": (Equation("1", "-2*x", "1 - y**2"), Domain(-2, 2, -2, 2, 101, 97)),
    "circle": (Equation("1", "-2*x", "1 - y**2"), Domain(-2, 2, -2, 2, 100, 96)),
    "islands": (Equation("1", "0", "-w", definitions={"w": "sin(7*x)*sin(5*y) + 0.1*cos(11*x*y) - 0.3"}),
                Domain(-1, 1.3, -0.7, 1, 97, 61)),
    "crossing at a node": (Equation("1", "0", "-x*y"), Domain(-1, 1, -1, 1, 41, 41)),
    "zero row of nodes": (Equation("y", "0", "1"), Domain(-1, 1, -1, 1, 41, 41)),
    "line ending at an undefined zone": (Equation("sqrt(x)*(y - 0.2)", "0", "1"), Domain(-1, 1, -1, 1, 81, 80)),
    "undefined hole": (Equation("sqrt(x*x + y*y - 0.2)", "0", "-w", definitions={"w": "sin(5*x)*cos(4*y)"}),
                       Domain(-1, 1, -1, 1, 60, 70)),
}


def whole_field_lines(type_map):
    """contourpy on the whole float64 field at once: the reference the strips must reproduce."""
    field = np.asarray(type_map.normalized, dtype=np.float64).copy()
    field[type_map.codes == TypeCode.PARABOLIC] = 0.0
    field[type_map.codes == TypeCode.UNDEFINED] = np.nan
    generator = contourpy.contour_generator(type_map.x, type_map.y, field, name="serial",
                                            line_type="SeparateCode", corner_mask=False, quad_as_tri=False)
    lines, codes = generator.lines(0.0)
    closed = [bool(len(code) > 2 and code[-1] == 79) for code in codes]
    return [line[:-1] if is_closed else line for line, is_closed in zip(lines, closed)], closed


def same_line(a, a_closed, b, b_closed):
    """Equal vertices in order; a closed line may start anywhere on the loop."""
    if a_closed != b_closed or a.shape != b.shape:
        return False
    if not a_closed:
        return np.array_equal(a, b)
    return any(np.array_equal(np.roll(a, -k, axis=0), b) for k in range(len(a)))


@pytest.mark.parametrize("rows", [1, 2, 3, 7, 1000])
@pytest.mark.parametrize("case", sorted(CASES))
def test_strips_give_the_whole_field_lines(monkeypatch, case, rows):
    equation, domain = CASES[case]
    type_map = classify_grid(compile_equation(equation), domain)
    monkeypatch.setattr(strip_contours, "_STRIP_NODES", rows * domain.nx)
    lines, closed = strip_contours.zero_lines(type_map.codes, type_map.normalized, type_map.x, type_map.y)
    expected, expected_closed = whole_field_lines(type_map)
    assert len(lines) == len(expected) >= 1
    unmatched = list(range(len(lines)))
    for line, is_closed in zip(expected, expected_closed):
        match = next(k for k in unmatched if same_line(lines[k], closed[k], line, is_closed))
        unmatched.remove(match)
    if rows >= domain.ny:            # one strip: contourpy's own lines, in its order and from its starts
        assert all(np.array_equal(a, b) for a, b in zip(lines, expected)) and closed == expected_closed


def test_refined_unit_circle_is_the_same_from_strips(monkeypatch):
    # D = 4 (x^2 + y^2 - 1) (algebra, common practice): one closed line on the unit circle either way
    compiled = compile_equation(CASES["circle through nodes"][0])
    type_map = classify_grid(compiled, CASES["circle through nodes"][1])
    whole = find_type_boundaries(compiled, type_map)
    monkeypatch.setattr(strip_contours, "_STRIP_NODES", 3 * type_map.x.size)
    strips = find_type_boundaries(compiled, type_map)
    (a,), (b,) = whole.curves, strips.curves
    assert a.closed and b.closed and a.unrefined == b.unrefined == 0
    assert same_line(a.points[:-1], True, b.points[:-1], True)
    assert np.abs(np.hypot(*b.points.T) - 1).max() <= 1e-12 * type_map.domain.size


def hand_made_map(field):
    """A map with the codes and float32 D/S a classification would give for ``field`` (ny, nx) on [0, 1]^2:
    F > 0 hyperbolic, F < 0 elliptic, F = 0 parabolic, NaN undefined."""
    ny, nx = field.shape
    codes = np.select([np.isnan(field), field > 0, field < 0], [TypeCode.UNDEFINED, TypeCode.HYPERBOLIC,
                                                                TypeCode.ELLIPTIC], TypeCode.PARABOLIC)
    return SimpleNamespace(codes=codes.astype(np.int8), normalized=field.astype(np.float32),
                           x=np.linspace(0, 1, nx), y=np.linspace(0, 1, ny))


def islands_in_columns():
    """Blobs in groups of node columns, some groups one cell column apart (the narrowest gap between
    clusters), the blobs' heights crossing strips; a row of exact zeros and an undefined node among them."""
    pattern = np.array([-1, -1, 1, -1, -1, 1, 1, -1, -1, -1, 1, -1, 1, 1, 1, -1, -1, 1, -1, -1, -1, -1, 1, -1])
    ny = 40
    y = np.linspace(0, 1, ny)[:, np.newaxis]
    height = 0.3 + 0.02 * np.arange(pattern.size)            # each group's blob has its own height
    wobble = 0.003 * np.sin(7 * y + np.arange(pattern.size))
    field = np.where(pattern > 0, height - np.abs(y - 0.5) + wobble, -0.2 + wobble)
    field[31, 12:15] = 0.0
    field[12, 6] = np.nan
    return field


def many_islands():
    """Dozens of small islands, many per row of the grid: many clusters in every strip."""
    y, x = np.mgrid[0:1:83j, 0:1:131j]
    return np.sin(37 * x) * np.sin(29 * y) + 0.2 * np.cos(5 * x * y) - 0.55


@pytest.mark.parametrize("rows", [1, 2, 5, 16, 1000])
@pytest.mark.parametrize(("make_field", "narrowest_gap"), [(islands_in_columns, 1), (many_islands, 4)])
def test_lines_across_clusters_and_strips_are_the_whole_field_lines(monkeypatch, make_field, narrowest_gap,
                                                                    rows):
    # Reference: contourpy on the whole float64 field at once (whole_field_lines). Strips contour only the
    # clusters of columns with a sign change, packed side by side: the lines must not notice.
    type_map = hand_made_map(make_field())
    _, nx = type_map.codes.shape
    clusters = strip_contours._changing_columns(type_map.codes[14:20])              # in a strip of 5 cells
    assert len(clusters) >= 5 and (clusters[1:, 0] - clusters[:-1, 1]).min() == narrowest_gap   # in cells
    monkeypatch.setattr(strip_contours, "_STRIP_NODES", rows * nx)
    lines, closed = strip_contours.zero_lines(type_map.codes, type_map.normalized, type_map.x, type_map.y)
    expected, expected_closed = whole_field_lines(type_map)
    assert len(lines) == len(expected) >= 9
    unmatched = list(range(len(lines)))
    for line, is_closed in zip(expected, expected_closed):
        match = next(k for k in unmatched if same_line(lines[k], closed[k], line, is_closed))
        unmatched.remove(match)
    if rows >= type_map.codes.shape[0]:      # one strip: contourpy's own lines, in its order, from its starts
        assert all(np.array_equal(a, b) for a, b in zip(lines, expected)) and closed == expected_closed


def test_clusters_hold_every_cell_with_a_sign_change():
    # The cells with a change, found corner by corner; columns between clusters have none.
    rng = np.random.default_rng(5)
    codes = rng.choice(np.array([0, 1, 2, 3], dtype=np.int8), size=(9, 300), p=[0.02, 0.9, 0.02, 0.06])
    above = codes == TypeCode.HYPERBOLIC
    corner = above[:-1, :-1]
    changes = (corner != above[:-1, 1:]) | (corner != above[1:, :-1]) | (corner != above[1:, 1:])
    in_cluster = np.zeros(codes.shape[1] - 1, dtype=bool)
    for first, stop in strip_contours._changing_columns(codes):
        assert changes[:, first].any() and changes[:, stop - 1].any()
        in_cluster[first:stop] = True
    np.testing.assert_array_equal(in_cluster, changes.any(axis=0))
