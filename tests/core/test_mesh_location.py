"""Locating points in a triangle mesh, scattered and on a grid's nodes, against scipy's LinearNDInterpolator
on the same Delaunay triangles: nodes on vertices, on shared and outer edges, outside the hull, zero-area
triangles in the file, bands of rows, and memory linear in triangles + nodes."""

import tracemalloc

import numpy as np
import pytest
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import Delaunay

from core.data import mesh_location
from core.data.fields import MeshField
from core.data.mesh_location import TriangleLocator, grid_axes, search_nodes

# Grid nodes at multiples of 1/32 (exact in binary) hit the lattice's vertices, its edges (including the
# hull's) and points outside the hull.
X_NODES = np.linspace(-0.25, 1.25, 49)
Y_NODES = np.linspace(-0.125, 1.125, 41)


def lattice_points(extra: int, seed: int = 0) -> np.ndarray:
    s = np.linspace(0.0, 1.0, 9)                       # step 1/8
    gx, gy = np.meshgrid(s, s)
    points = np.column_stack([gx.ravel(), gy.ravel()])
    if extra:
        inner = np.random.default_rng(seed).uniform(0.02, 0.98, (extra, 2))
        points = np.vstack([points, inner])
    return points


def reference_and_field(points: np.ndarray, *, degenerate: bool = False, seed: int = 1):
    """scipy's interpolator on Delaunay(points) and our MeshField on the same triangles (zero-area ones
    put first when ``degenerate``)."""
    delaunay = Delaunay(points)
    values = np.random.default_rng(seed).normal(size=len(points))
    triangles = delaunay.simplices
    if degenerate:
        flat = np.array([[0, 1, 2], [0, 9, 18], [10, 10, 11], [4, 4, 4]])   # collinear, collinear, repeated
        triangles = np.vstack([flat, triangles])
    field = MeshField(points[:, 0], points[:, 1], triangles, {"f": values})
    return LinearNDInterpolator(delaunay, values), field, values


@pytest.mark.parametrize("extra", [0, 60])
@pytest.mark.parametrize("degenerate", [False, True])
def test_grid_nodes_match_scipy_linear_nd_interpolator(extra, degenerate):
    points = lattice_points(extra)
    reference, field, values = reference_and_field(points, degenerate=degenerate)
    xx, yy = np.meshgrid(X_NODES, Y_NODES)
    expected = reference(xx, yy)             # scipy.interpolate.LinearNDInterpolator is the reference
    ours = field.sample("f", X_NODES[np.newaxis, :], Y_NODES[:, np.newaxis])
    np.testing.assert_array_equal(np.isnan(ours), np.isnan(expected))
    assert np.isnan(expected).sum() > 500            # outside the hull
    np.testing.assert_allclose(ours, expected, rtol=0, atol=1e-12)
    # nodes a hair outside the hull (1e-6) are outside, nodes on it inside, as in scipy
    near_x = np.array([-1e-6, 0.0, 0.3, 1.0, 1.0 + 1e-6])
    near_y = np.array([-1e-6, 0.0, 0.6, 1.0, 1.0 + 1e-6])
    near = field.sample("f", near_x[np.newaxis, :], near_y[:, np.newaxis])
    expected_near = reference(*np.meshgrid(near_x, near_y))
    assert np.isnan(near).sum() == 16
    np.testing.assert_array_equal(np.isnan(near), np.isnan(expected_near))
    np.testing.assert_allclose(near, expected_near, rtol=0, atol=1e-12)
    if not extra:
        # the slack is 1e-9 in barycentric units; the lattice's outer triangles are 1/8 high: a node 0.5e-9
        # outside in those units is in, one 2e-9 outside is out, on the grid and as scattered points alike
        hair_x = np.array([-2e-9 / 8, -0.5e-9 / 8, 0.5])
        hair_y = np.array([0.3, 0.7])
        on_grid = field.sample("f", hair_x[np.newaxis, :], hair_y[:, np.newaxis])
        scattered = field.sample("f", *np.meshgrid(hair_x, hair_y))
        np.testing.assert_array_equal(np.isnan(on_grid), [[True, False, False]] * 2)
        np.testing.assert_array_equal(on_grid, scattered)
    # nodes on the lattice's vertices carry the vertices' values (common practice, no source)
    column, row = np.searchsorted(X_NODES, points[:81, 0]), np.searchsorted(Y_NODES, points[:81, 1])
    np.testing.assert_allclose(ours[row, column], values[:81], rtol=0, atol=1e-14)


@pytest.mark.parametrize("extra", [0, 60])
def test_scattered_points_match_scipy_and_the_grid_to_the_last_bit(extra):
    points = lattice_points(extra)
    reference, field, _ = reference_and_field(points, degenerate=True)
    triangles = Delaunay(points).simplices
    rng = np.random.default_rng(4)
    edge_middles = 0.5 * (points[triangles[:, 0]] + points[triangles[:, 1]])
    queries = np.vstack([rng.uniform(-0.3, 1.3, (3000, 2)), points, edge_middles,
                         [[-1e-3, 0.5], [0.5, 1 + 1e-3], [2.0, 2.0], [np.nan, 0.5]]])
    qx, qy = queries[:, 0].copy(), queries[:, 1].copy()
    expected = reference(qx, qy)             # scipy.interpolate.LinearNDInterpolator is the reference
    ours = field.sample("f", qx, qy)
    np.testing.assert_array_equal(np.isnan(ours), np.isnan(expected))
    np.testing.assert_allclose(ours, expected, rtol=0, atol=1e-12)
    # the grid's nodes given as scattered points: the same triangles and weights, bit for bit
    xx, yy = np.meshgrid(X_NODES, Y_NODES)
    locator = field._locator
    scattered = locator.locate(xx.ravel(), yy.ravel())
    rasterised = locator.locate_grid(X_NODES, Y_NODES)
    np.testing.assert_array_equal(rasterised.weights, scattered.weights)
    np.testing.assert_array_equal(rasterised.triangle, scattered.triangle)


def test_a_triangle_with_a_non_finite_corner_value_is_undefined():
    points = lattice_points(0)
    values = points[:, 0] + 2 * points[:, 1]
    values[40] = np.inf                                   # the centre vertex (0.5, 0.5)
    values[0] = np.nan                                    # the corner (0, 0)
    field = MeshField(points[:, 0], points[:, 1], Delaunay(points).simplices, {"f": values})
    qx = np.array([0.52, 0.5, 0.01, 0.9, 0.3])
    qy = np.array([0.51, 0.5, 0.01, 0.1, 0.8])
    scattered = field.sample("f", qx, qy)
    assert np.isnan(scattered[:3]).all()
    # elsewhere the linear field is reproduced (common practice, no source)
    np.testing.assert_allclose(scattered[3:], qx[3:] + 2 * qy[3:], atol=1e-14)
    gx, gy = np.array([0.01, 0.5, 0.9]), np.array([0.01, 0.5, 0.1])
    on_grid = field.sample("f", gx[np.newaxis, :], gy[:, np.newaxis])
    assert np.isnan(on_grid[0, 0]) and np.isnan(on_grid[1, 1])
    assert on_grid[2, 2] == pytest.approx(1.1, abs=1e-14)


def test_a_mesh_far_from_the_origin_keeps_the_nodes_on_its_edges():
    # map coordinates: cells of 10 m about 500 km and 4000 km from the origin; grid nodes on the cells' edges
    points = lattice_points(0) * 80.0 + [5e5, 4e6]
    triangles = Delaunay(points - [5e5, 4e6]).simplices
    field = MeshField(points[:, 0], points[:, 1], triangles, {"f": points[:, 0] - 5e5 + 3 * (points[:, 1] - 4e6)})
    gx, gy = 5e5 + np.linspace(0.0, 80.0, 33), 4e6 + np.linspace(0.0, 80.0, 17)
    on_grid = field.sample("f", gx[np.newaxis, :], gy[:, np.newaxis])
    xx, yy = np.meshgrid(gx, gy)
    np.testing.assert_array_equal(on_grid, field.sample("f", xx.ravel(), yy.ravel()).reshape(xx.shape))
    # linear interpolation is exact for a linear field (common practice, no source)
    np.testing.assert_allclose(on_grid, (xx - 5e5) + 3 * (yy - 4e6), rtol=0, atol=1e-8)


@pytest.mark.parametrize("nodes", [np.linspace(-3.0, 3.0, 1024), np.linspace(0.1, 0.7, 7), np.array([2.0]),
                                   np.cumsum(np.linspace(0.1, 1.0, 40)) ** 3, np.array([-1.0, 0.0, 1e-300, 5.0])])
def test_search_nodes_is_searchsorted(nodes):
    # numpy.searchsorted is the reference
    rng = np.random.default_rng(8)
    values = np.concatenate([rng.uniform(nodes[0] - 1, nodes[-1] + 1, 500), nodes, np.nextafter(nodes, -np.inf),
                             np.nextafter(nodes, np.inf), [np.nan, np.inf, -np.inf, 1e300, -1e300]])
    for side in ("left", "right"):
        np.testing.assert_array_equal(search_nodes(nodes, values, side), np.searchsorted(nodes, values, side=side))


def test_bands_of_rows_give_the_same_locations(monkeypatch):
    points = lattice_points(200, seed=3)
    _, field, _ = reference_and_field(points)
    whole = field._locator.locate_grid(X_NODES, Y_NODES)
    monkeypatch.setattr(mesh_location, "_BAND_BUDGET", 64)         # one row per band
    banded = field._locator.locate_grid(X_NODES, Y_NODES)
    np.testing.assert_array_equal(banded.weights, whole.weights)
    np.testing.assert_array_equal(banded.triangle, whole.triangle)


def test_tall_slivers_crossing_every_row():
    # 400 slivers, each as tall as the mesh and 1/400 wide: many triangles cross each row
    n = 401
    x = np.concatenate([np.linspace(0, 1, n), np.linspace(0, 1, n)])
    y = np.concatenate([np.zeros(n), np.ones(n)])
    i = np.arange(n - 1)
    triangles = np.vstack([np.column_stack([i, i + 1, n + i + 1]), np.column_stack([i, n + i + 1, n + i])])
    field = MeshField(x, y, triangles, {"f": 3 * x - 2 * y, "g": np.sin(7 * x) * y})
    gx, gy = np.linspace(-0.01, 1.01, 333), np.linspace(-0.02, 1.0, 97)
    grid = field.sample("f", gx[np.newaxis, :], gy[:, np.newaxis])
    # linear interpolation is exact for a linear field (common practice, no source)
    inside = (gx[np.newaxis, :] >= 0) & (gx[np.newaxis, :] <= 1) & (gy[:, np.newaxis] >= 0)
    np.testing.assert_array_equal(np.isnan(grid), ~inside)
    np.testing.assert_allclose(grid[inside], (3 * gx[np.newaxis, :] - 2 * gy[:, np.newaxis])[inside], atol=1e-12)
    xx, yy = np.meshgrid(gx, gy)
    np.testing.assert_array_equal(field.sample("g", xx.ravel(), yy.ravel()).reshape(xx.shape),
                                  field.sample("g", gx[np.newaxis, :], gy[:, np.newaxis]))


def test_a_meshgrid_is_located_as_a_grid_and_other_points_are_not(monkeypatch):
    points = lattice_points(30)
    _, field, _ = reference_and_field(points)
    calls = []
    locate_grid = field._locator.locate_grid
    monkeypatch.setattr(field._locator, "locate_grid",
                        lambda gx, gy: calls.append((gx.size, gy.size)) or locate_grid(gx, gy))
    xx, yy = np.meshgrid(X_NODES, Y_NODES)
    full = field.sample("f", xx, yy)
    again = field.sample("f", X_NODES[np.newaxis, :], Y_NODES[:, np.newaxis])    # the same nodes: cached
    assert calls == [(49, 41)]
    np.testing.assert_array_equal(full, again)
    assert grid_axes(xx, yy, xx.shape) is not None
    shuffled = xx.copy()
    shuffled[3, 5] += 1e-3
    assert grid_axes(shuffled, yy, xx.shape) is None
    assert grid_axes(X_NODES[::-1][np.newaxis, :], Y_NODES[:, np.newaxis], xx.shape) is None   # decreasing
    assert grid_axes(yy, xx, xx.shape) is None                                                  # transposed
    assert grid_axes(X_NODES, Y_NODES[:41], (41,)) is None                                      # 1-D points
    field.sample("f", shuffled, yy)
    assert calls == [(49, 41)]


def test_grid_location_memory_is_linear_in_triangles_and_nodes(monkeypatch):
    points = lattice_points(3000, seed=5)
    locator = TriangleLocator(points, Delaunay(points).simplices, where="test")
    m = locator.triangles.shape[0]
    monkeypatch.setattr(mesh_location, "_BAND_BUDGET", 1 << 14)
    for nx, ny in ((400, 300), (800, 600)):
        tracemalloc.start()
        located = locator.locate_grid(np.linspace(-0.1, 1.1, nx), np.linspace(-0.1, 1.1, ny))
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        result = located.weights.nbytes + located.triangle.nbytes
        assert result == 20 * nx * ny
        # beyond the result, bands of bounded size and per-triangle arrays whatever the grid (one float per
        # node of the 800 x 600 grid would be 3.8 MB; one per triangle and node 2.9e9 entries)
        assert peak - result < 200 * (mesh_location._BAND_BUDGET + m), (nx, ny, peak - result)
