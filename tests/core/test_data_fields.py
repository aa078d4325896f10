"""Interpolation and derivatives of background data: orders of accuracy, no extrapolation, NaN holes,
and safe concurrent sampling."""

import math
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest

from core.data.fields import GridField, MeshField, ProfileField, triangulate_points


def smooth(x, y):
    return np.sin(1.3 * x) * np.cos(0.7 * y) + 0.2 * x * y


def smooth_dx(x, y):
    return 1.3 * np.cos(1.3 * x) * np.cos(0.7 * y) + 0.2 * y


def smooth_dy(x, y):
    return -0.7 * np.sin(1.3 * x) * np.sin(0.7 * y) + 0.2 * x


def grid_field(n, stretch=0.0):
    s = np.linspace(0, 1, n)
    x = 2 * (s + stretch * s * (1 - s))              # non-uniform spacing when stretch > 0
    y = np.linspace(-1, 1, n)
    return GridField(x, y, {"f": smooth(x[None, :], y[:, None])})


PROBE_X, PROBE_Y = np.meshgrid(np.linspace(0, 2, 37), np.linspace(-1, 1, 29))   # edges included


@pytest.mark.parametrize("stretch", [0.0, 0.5])
def test_grid_values_and_derivatives_converge_at_second_order(stretch):
    errors = []
    for n in (21, 41, 81):
        field = grid_field(n, stretch)
        errors.append([
            np.max(np.abs(field.sample("f", PROBE_X, PROBE_Y) - smooth(PROBE_X, PROBE_Y))),
            np.max(np.abs(field.sample_derivative("f", 0, PROBE_X, PROBE_Y) - smooth_dx(PROBE_X, PROBE_Y))),
            np.max(np.abs(field.sample_derivative("f", 1, PROBE_X, PROBE_Y) - smooth_dy(PROBE_X, PROBE_Y))),
        ])
    errors = np.array(errors)
    ratios = errors[:-1] / errors[1:]                  # halving h should divide the error by about 4
    assert np.all(ratios > 3.3), ratios
    assert errors[-1].max() < 2e-3


def test_grid_row_and_column_points_match_pointwise_sampling():
    field = grid_field(31)
    x_row = np.linspace(-0.3, 2.3, 53)[None, :]
    y_column = np.linspace(-1.2, 1.2, 41)[:, None]
    fast = field.sample("f", x_row, y_column)
    xb, yb = np.broadcast_arrays(x_row, y_column)
    slow = field.sample("f", xb.copy(), yb.copy())
    np.testing.assert_array_equal(np.isnan(fast), np.isnan(slow))
    np.testing.assert_allclose(fast, slow, rtol=0, atol=1e-15)
    assert fast.shape == (41, 53)
    outside = (xb < 0) | (xb > 2) | (yb < -1) | (yb > 1)
    assert np.array_equal(np.isnan(fast), outside)    # never extrapolated


def test_grid_nan_hole_stays_local():
    x = y = np.linspace(0, 1, 11)
    values = np.ones((11, 11))
    values[5, 5] = np.nan
    field = GridField(x, y, {"f": values})
    assert math.isnan(field.sample("f", 0.52, 0.47))                       # a cell touching the hole
    assert field.sample("f", 0.2, 0.8) == 1.0                              # far from it
    assert math.isnan(field.sample_derivative("f", 0, 0.45, 0.5))          # difference through the hole
    assert field.sample_derivative("f", 0, 0.15, 0.85) == pytest.approx(0.0, abs=1e-12)


def test_profile_derivatives_and_extension():
    errors = []
    for n in (26, 51, 101):
        z = np.linspace(-500, 0, n)
        field = ProfileField(z, {"N": np.exp(z / 200)}, axis=1)
        probe = np.linspace(-500, 0, 77)
        errors.append(np.max(np.abs(field.sample_derivative("N", 1, 1234.0, probe) - np.exp(probe / 200) / 200)))
    assert errors[0] / errors[1] > 3.3 and errors[1] / errors[2] > 3.3
    x = np.array([[-1e9, 0.0, np.nan]])
    values = field.sample("N", x, np.array([[-100.0]]))
    np.testing.assert_allclose(values[0, :2], math.exp(-0.5), rtol=1e-4)
    assert math.isnan(values[0, 2])                                         # no x: no value
    assert math.isnan(field.sample("N", 0.0, 10.0))                          # above the profile
    assert np.array_equal(field.sample_derivative("N", 0, np.array([0.0, 5.0]), -20.0), [0.0, 0.0])


def structured_triangles(n, *, jitter=0.0, seed=0):
    """A triangulated square [0, 2] x [-1, 1] with n nodes a side, interior nodes jittered."""
    gx, gy = np.meshgrid(np.linspace(0, 2, n), np.linspace(-1, 1, n))
    h = 2 / (n - 1)
    rng = np.random.default_rng(seed)
    interior = (gx > 0) & (gx < 2) & (gy > -1) & (gy < 1)
    gx = gx + jitter * h * rng.uniform(-1, 1, gx.shape) * interior
    gy = gy + jitter * h * rng.uniform(-1, 1, gy.shape) * interior
    i, j = np.meshgrid(np.arange(n - 1), np.arange(n - 1))
    c = (j * n + i).ravel()
    triangles = np.vstack([np.column_stack([c, c + 1, c + n + 1]), np.column_stack([c, c + n + 1, c + n])])
    return gx.ravel(), gy.ravel(), triangles


def test_mesh_values_converge_at_second_order_and_gradients_converge():
    probe_x, probe_y = np.meshgrid(np.linspace(0.01, 1.99, 31), np.linspace(-0.99, 0.99, 23))
    interior = (probe_x > 0.25) & (probe_x < 1.75) & (np.abs(probe_y) < 0.75)
    value_errors, gradient_errors, interior_errors = [], [], []
    for n in (17, 33, 65):
        x, y, triangles = structured_triangles(n)
        field = MeshField(x, y, triangles, {"f": smooth(x, y)})
        value_errors.append(np.max(np.abs(field.sample("f", probe_x, probe_y) - smooth(probe_x, probe_y))))
        gx = field.sample_derivative("f", 0, probe_x, probe_y) - smooth_dx(probe_x, probe_y)
        gradient_errors.append(np.max(np.abs(gx)))
        interior_errors.append(np.max(np.abs(gx[interior])))
    value_ratios = np.array(value_errors[:-1]) / value_errors[1:]
    assert np.all(value_ratios > 3.3), value_ratios
    # area-weighted recovery: second order inside a regular mesh, first order at its edge
    interior_ratios = np.array(interior_errors[:-1]) / interior_errors[1:]
    assert np.all(interior_ratios > 3.0), interior_ratios
    assert np.all(np.array(gradient_errors[:-1]) / gradient_errors[1:] > 1.7)
    assert interior_errors[-1] < 1e-3


def test_mesh_is_exact_for_linear_fields_on_irregular_triangles():
    x, y, triangles = structured_triangles(15, jitter=0.3, seed=3)
    field = MeshField(x, y, triangles, {"f": 3 * x - y + 2})
    px, py = np.random.default_rng(1).uniform([0, -1], [2, 1], (1000, 2)).T
    np.testing.assert_allclose(field.sample("f", px, py), 3 * px - py + 2, atol=1e-12)
    np.testing.assert_allclose(field.sample_derivative("f", 0, px, py), 3.0, atol=1e-10)
    np.testing.assert_allclose(field.sample_derivative("f", 1, px, py), -1.0, atol=1e-10)
    # nodes and edges belong to the mesh
    np.testing.assert_allclose(field.sample("f", x, y), 3 * x - y + 2, atol=1e-12)


def test_mesh_does_not_fill_a_concave_notch():
    # an L-shaped region: the square [0, 2]^2 without its upper-right quarter
    n = 9
    x, y, triangles = structured_triangles(n)
    y = y + 1                                           # [0, 2] x [0, 2]
    centroid = np.column_stack([x[triangles].mean(1), y[triangles].mean(1)])
    keep = ~((centroid[:, 0] > 1) & (centroid[:, 1] > 1))
    field = MeshField(x, y, triangles[keep], {"f": x + y})
    assert math.isnan(field.sample("f", 1.5, 1.5))                      # inside the notch
    assert field.sample("f", 0.5, 1.5) == pytest.approx(2.0)
    assert field.sample("f", 1.5, 0.5) == pytest.approx(2.0)
    assert field.sample("f", 1.0, 1.5) == pytest.approx(2.5)            # on the notch's edge


def test_mesh_nan_value_makes_its_triangles_undefined():
    x, y, triangles = structured_triangles(5)
    values = x + y
    values[12] = np.nan                                                  # the centre node (1, 0)
    field = MeshField(x, y, triangles, {"f": values})
    assert math.isnan(field.sample("f", 1.1, 0.05))
    assert field.sample("f", 0.2, -0.8) == pytest.approx(-0.6)
    assert math.isnan(field.sample_derivative("f", 0, 1.1, 0.05))
    assert np.isfinite(field.sample_derivative("f", 0, 0.2, -0.8))


def test_mesh_location_cache_is_not_stale():
    x, y, triangles = structured_triangles(9)
    field = MeshField(x, y, triangles, {"f": x, "g": y})
    px = np.array([0.5, 1.5])
    py = np.array([0.0, 0.5])
    np.testing.assert_allclose(field.sample("f", px, py), px)
    np.testing.assert_allclose(field.sample("g", px, py), py)
    px[:] = [0.25, 1.75]                                                 # same arrays, new values
    np.testing.assert_allclose(field.sample("f", px, py), [0.25, 1.75])


def test_concurrent_sampling_gives_the_serial_results():
    x, y, triangles = structured_triangles(41, jitter=0.2)
    mesh = MeshField(x, y, triangles, {"f": smooth(x, y)})
    grid = grid_field(41)
    rng = np.random.default_rng(5)
    batches = [rng.uniform([0, -1], [2, 1], (2000, 2)).T for _ in range(16)]

    def work(batch):
        return (mesh.sample("f", *batch), mesh.sample_derivative("f", 1, *batch),
                grid.sample_derivative("f", 0, *batch))

    serial = [work(b) for b in batches]
    fresh_mesh = MeshField(x, y, triangles, {"f": smooth(x, y)})
    fresh_grid = grid_field(41)
    mesh, grid = fresh_mesh, fresh_grid                                  # lazy gradients built concurrently
    with ThreadPoolExecutor(max_workers=4) as pool:
        parallel = list(pool.map(work, batches))
    for a, b in zip(serial, parallel, strict=True):
        for u, v in zip(a, b, strict=True):
            np.testing.assert_array_equal(u, v)


def test_delaunay_of_scattered_points_and_degenerate_input():
    from core.data.raw import DataError

    rng = np.random.default_rng(2)
    x, y = rng.uniform(0, 1, 200), rng.uniform(0, 1, 200)
    triangles = triangulate_points(x, y, where="scatter.csv")
    field = MeshField(x, y, triangles, {"f": 2 * x + y})
    inside = (0.3, 0.6)
    assert field.sample("f", *inside) == pytest.approx(1.2)
    with pytest.raises(DataError, match="scatter.csv"):
        triangulate_points(np.arange(5.0), 2 * np.arange(5.0), where="scatter.csv")


def test_mesh_points_sampled_again_are_not_located_again(monkeypatch):
    x, y, triangles = structured_triangles(21, jitter=0.2)
    mesh = MeshField(x, y, triangles, {"f": smooth(x, y), "g": x - y})
    calls = []     # how many points each location located (scattered points or the nodes of a grid)
    locate, locate_grid = mesh._locator.locate, mesh._locator.locate_grid
    monkeypatch.setattr(mesh._locator, "locate", lambda qx, qy: calls.append(qx.size) or locate(qx, qy))
    monkeypatch.setattr(mesh._locator, "locate_grid",
                        lambda gx, gy: calls.append(gx.size * gy.size) or locate_grid(gx, gy))
    # classification's form: a row of x and a column of y per block of rows
    row = np.linspace(0, 2, 50)[np.newaxis, :]
    blocks = [np.linspace(-1, 0, 10)[:, np.newaxis], np.linspace(0.05, 1, 10)[:, np.newaxis]]
    first = [mesh.sample("f", row, block) for block in blocks]
    assert calls == [500, 500]
    again = [mesh.sample("f", row, block.copy()) for block in blocks]         # equal points, new arrays
    other_quantity = mesh.sample("g", row, blocks[0])
    assert calls == [500, 500]
    for a, b in zip(first, again, strict=True):
        np.testing.assert_array_equal(a, b)
    # the mesh is exact for a linear field (linear interpolation on triangles, common practice, no source)
    np.testing.assert_allclose(other_quantity, row - blocks[0], atol=1e-12)
    mesh.sample("f", row, blocks[0] + 1e-3)                                    # new points: located
    assert calls == [500, 500, 500]
    mesh.clear_location_cache()
    mesh.sample("f", row, blocks[0])
    assert calls == [500, 500, 500, 500]


def test_mesh_location_cache_stays_within_its_bound(monkeypatch):
    x, y, triangles = structured_triangles(9)
    monkeypatch.setattr("core.data.fields.LOCATION_CACHE_BYTES", 3 * 100 * 20)    # three sets of 100 points
    mesh = MeshField(x, y, triangles, {"f": x})
    calls = []
    locate = mesh._locator.locate
    monkeypatch.setattr(mesh._locator, "locate", lambda qx, qy: calls.append(1) or locate(qx, qy))
    sets = [np.full(100, 0.1 * k) for k in range(5)]
    for px in sets:
        np.testing.assert_allclose(mesh.sample("f", px, 0.0), px)
    mesh.sample("f", sets[4], 0.0)                   # the most recent set is kept
    assert len(calls) == 5
    mesh.sample("f", sets[0], 0.0)                   # the oldest was dropped
    assert len(calls) == 6
    assert mesh._locations._bytes <= 3 * 100 * 20
