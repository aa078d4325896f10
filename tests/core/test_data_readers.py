"""Data files written by the reference libraries themselves (numpy, csv, netCDF4, meshio) read back exactly,
and bad files give a DataError that names the file and the problem."""

import csv
import math

import meshio
import netCDF4
import numpy as np
import pytest

from core.data.sources import DataError, load_data


def plane(x, y):
    """A linear field: every interpolation scheme used here reproduces it exactly."""
    return 2.0 * x - 3.0 * y + 0.5


RNG = np.random.default_rng(7)


# -- NumPy .npz -------------------------------------------------------------------------------------------
def test_npz_grid_round_trip_and_decreasing_axis(tmp_path):
    x = np.linspace(0.0, 2.0, 21)
    y = np.linspace(1.0, -1.0, 11)                      # decreasing: accepted and reversed
    path = tmp_path / "field.npz"
    np.savez(path, x=x, y=y, u=plane(x[None, :], y[:, None]), gamma=np.float64(1.4))
    data = load_data(path)
    assert data.layout == "grid" and data.format == "npz"
    assert data.quantities == ("u",)
    assert data.extent == (0.0, 2.0, -1.0, 1.0)
    assert data.size == (11, 21)
    assert any("gamma" in note for note in data.notes)
    px, py = RNG.uniform(0, 2, 500), RNG.uniform(-1, 1, 500)
    np.testing.assert_allclose(data.sample("u", px, py), plane(px, py), atol=1e-12)
    np.testing.assert_allclose(data.sample("diff(u,x)", px, py), 2.0, atol=1e-12)
    np.testing.assert_allclose(data.sample("diff(u,y)", px, py), -3.0, atol=1e-12)


def test_npz_profile_along_second_variable(tmp_path):
    z = np.linspace(-100.0, 0.0, 51)
    path = tmp_path / "cast.npz"
    np.savez(path, z=z, N=0.01 + 1e-4 * z)
    data = load_data(path, variables=("x", "z"))
    assert data.layout == "profile"
    assert data.extent == (-math.inf, math.inf, -100.0, 0.0)
    np.testing.assert_allclose(data.sample("N", np.array([-5e3, 0.0, 7e4]), -50.0), 0.005, atol=1e-15)
    np.testing.assert_allclose(data.sample("diff(N,z)", 3.0, -20.0), 1e-4, rtol=1e-9)
    assert data.sample("diff(N,x)", 3.0, -20.0) == 0.0


def test_npz_checksum_is_sha256_of_the_bytes(tmp_path):
    import hashlib

    path = tmp_path / "field.npz"
    np.savez(path, x=np.arange(3.0), y=np.arange(2.0), u=np.ones((2, 3)))
    assert load_data(path).checksum == hashlib.sha256(path.read_bytes()).hexdigest()


# -- CSV --------------------------------------------------------------------------------------------------
def write_csv(path, header, rows, comments=()):
    with open(path, "w", newline="", encoding="utf-8") as handle:
        handle.writelines(f"# {line}\n" for line in comments)
        writer = csv.writer(handle)
        writer.writerow(header)
        writer.writerows(rows)


def test_csv_scattered_points_interpolate_linearly_inside_the_hull_only(tmp_path):
    points = RNG.uniform(0, 1, size=(300, 2))
    points = np.vstack([points, [[0, 0], [1, 0], [0, 1], [1, 1]]])   # the hull is the unit square
    path = tmp_path / "scattered.csv"
    write_csv(path, ["x", "y", "depth"], [(px, py, plane(px, py)) for px, py in points],
              comments=["river survey, invented"])
    data = load_data(path)
    assert data.layout == "mesh" and data.format == "csv"
    px, py = RNG.uniform(0, 1, 400), RNG.uniform(0, 1, 400)
    np.testing.assert_allclose(data.sample("depth", px, py), plane(px, py), atol=1e-11)
    np.testing.assert_allclose(data.sample("diff(depth,y)", px, py), -3.0, atol=1e-9)
    outside = data.sample("depth", np.array([-0.01, 1.01, 0.5]), np.array([0.5, 0.5, 1.2]))
    assert np.isnan(outside).all()


def test_csv_full_grid_written_point_by_point_is_a_grid(tmp_path):
    x, y = np.linspace(0, 1, 5), np.linspace(0, 2, 4)
    rows = [(yi, xi, plane(xi, yi)) for xi in x for yi in y]            # columns in any order
    path = tmp_path / "grid.csv"
    write_csv(path, ["y", "x", "h"], rows)
    data = load_data(path)
    assert data.layout == "grid" and data.size == (4, 5)
    assert data.sample("h", 0.3, 1.1) == pytest.approx(plane(0.3, 1.1), abs=1e-12)


def test_csv_profile_and_missing_values(tmp_path):
    path = tmp_path / "cast.csv"
    write_csv(path, ["z", "N", "T"], [(-30, 0.01, 12.0), (-20, 0.02, ""), (-10, 0.03, 14.0), (0, 0.04, 15.0)])
    data = load_data(path, variables=("x", "z"))
    assert data.layout == "profile"
    assert data.sample("N", 1e6, -15.0) == pytest.approx(0.025)
    assert math.isnan(data.sample("T", 0.0, -25.0))                     # next to the missing value
    assert data.sample("T", 0.0, -5.0) == pytest.approx(14.5)


# -- NetCDF (CF) ------------------------------------------------------------------------------------------
def test_netcdf_grid_with_transposed_variable_time_axis_and_fill_values(tmp_path):
    x, y = np.linspace(0, 4, 9), np.linspace(-1, 1, 5)
    path = tmp_path / "flow.nc"
    with netCDF4.Dataset(path, "w", format="NETCDF4") as nc:
        nc.Conventions = "CF-1.8"
        nc.createDimension("time", 1)
        nc.createDimension("easting", x.size)
        nc.createDimension("northing", y.size)
        ex = nc.createVariable("easting", "f8", ("easting",))
        ex.axis = "X"
        ex[:] = x
        ny = nc.createVariable("northing", "f8", ("northing",))
        ny.axis = "Y"
        ny[:] = y[::-1]                                                   # decreasing
        u = nc.createVariable("u", "f4", ("time", "northing", "easting"), fill_value=-999.0)
        u.units = "m/s"
        values = plane(x[None, :], y[::-1, None]).astype(np.float32)
        values[0, 0] = -999.0                                             # a missing value (masked)
        u[0] = values
        v = nc.createVariable("v", "f8", ("easting", "northing"))       # transposed storage
        v[:] = plane(x[:, None], y[None, ::-1]) * 2
        nc.createVariable("label", str, ("easting",))
    data = load_data(path)
    assert data.layout == "grid" and set(data.quantities) == {"u", "v"}
    assert data.units["u"] == "m/s"
    assert any("label" in note for note in data.notes)
    px, py = RNG.uniform(0, 4, 200), RNG.uniform(-1, 0.4, 200)   # away from the masked node
    np.testing.assert_allclose(data.sample("u", px, py), plane(px, py), atol=1e-5)
    np.testing.assert_allclose(data.sample("v", px, py), 2 * plane(px, py), atol=1e-12)
    # the masked node (x, y) = (0, 1) makes the cell next to it undefined, not a -999 spike
    assert math.isnan(data.sample("u", 0.1, 0.9))


def test_netcdf_depth_positive_down_becomes_upward_z(tmp_path):
    depth = np.linspace(0, 500, 26)
    path = tmp_path / "cast.nc"
    with netCDF4.Dataset(path, "w", format="NETCDF3_CLASSIC") as nc:
        nc.createDimension("depth", depth.size)
        d = nc.createVariable("depth", "f8", ("depth",))
        d.axis, d.positive, d.units = "Z", "down", "m"
        d[:] = depth
        n = nc.createVariable("N", "f8", ("depth",))
        n[:] = 0.01 - 1e-5 * depth
    data = load_data(path, variables=("x", "z"))
    assert data.layout == "profile" and data.extent[2:] == (-500.0, 0.0)
    assert data.sample("N", 0.0, -100.0) == pytest.approx(0.009)
    assert data.sample("diff(N,z)", 0.0, -100.0) == pytest.approx(1e-5)  # N grows upward
    assert any("positive down" in note for note in data.notes)


# -- VTU / VTK meshes -------------------------------------------------------------------------------------
def quad_mesh(nx=6, ny=4):
    gx, gy = np.meshgrid(np.linspace(0, 1, nx), np.linspace(0, 1, ny))
    points = np.column_stack([gx.ravel(), gy.ravel(), np.full(gx.size, 3.0)])
    i, j = np.meshgrid(np.arange(nx - 1), np.arange(ny - 1))
    corner = (j * nx + i).ravel()
    quads = np.column_stack([corner, corner + 1, corner + nx + 1, corner + nx])
    return points, quads


@pytest.mark.parametrize("suffix", [".vtu", ".vtk"])
def test_mesh_of_quads_with_vector_point_data(tmp_path, suffix):
    points, quads = quad_mesh()
    velocity = np.column_stack([plane(points[:, 0], points[:, 1]), -points[:, 0], 0 * points[:, 0]])
    path = tmp_path / f"cfd{suffix}"
    meshio.write(path, meshio.Mesh(points, [("quad", quads)], point_data={"velocity": velocity},
                                   cell_data={"rank": [np.zeros(len(quads))]}))
    data = load_data(path, names={"velocity_x": "u", "velocity_y": "v"})
    assert data.layout == "mesh" and data.quantities == ("u", "v")
    assert data.size == (points.shape[0], 2 * quads.shape[0])
    assert data.source_names["u"] == "velocity_x"
    px, py = RNG.uniform(0, 1, 300), RNG.uniform(0, 1, 300)
    np.testing.assert_allclose(data.sample("u", px, py), plane(px, py), atol=1e-12)
    np.testing.assert_allclose(data.sample("v", px, py), -px, atol=1e-12)
    np.testing.assert_allclose(data.sample("diff(u,x)", px, py), 2.0, atol=1e-9)
    assert np.isnan(data.sample("u", 1.5, 0.5))


def test_mesh_without_cells_is_triangulated(tmp_path):
    points = np.column_stack([RNG.uniform(0, 1, (50, 2)), np.zeros(50)])
    path = tmp_path / "cloud.vtu"
    meshio.write(path, meshio.Mesh(points, [("vertex", np.arange(50)[:, None])],
                                   point_data={"h": plane(points[:, 0], points[:, 1])}))
    data = load_data(path)
    assert data.layout == "mesh" and any("Delaunay" in note for note in data.notes)
    centre = points[:, :2].mean(axis=0)
    assert data.sample("h", *centre) == pytest.approx(plane(*centre))


# -- bad files --------------------------------------------------------------------------------------------
def assert_data_error(path, *words, **options):
    with pytest.raises(DataError) as caught:
        load_data(path, **options)
    message = str(caught.value)
    assert str(path) in message
    for word in words:
        assert word in message, message
    return message


def test_missing_variables(tmp_path):
    np.savez(tmp_path / "a.npz", lon=np.arange(3.0), lat=np.arange(2.0), u=np.ones((2, 3)))
    # names found in a file not recognised as data are not quoted (a project may point at any file)
    assert "lat" not in assert_data_error(tmp_path / "a.npz", "missing variables", "'x'", "3 array(s)")
    np.savez(tmp_path / "b.npz", x=np.arange(3.0), u=np.ones((2, 3)))
    assert_data_error(tmp_path / "b.npz", "missing variable", "'y'")
    write_csv(tmp_path / "c.csv", ["east", "north", "h"], [(0, 0, 1), (1, 0, 1), (0, 1, 1)])
    assert "east" not in assert_data_error(tmp_path / "c.csv", "missing variables", "3 column(s)")
    with netCDF4.Dataset(tmp_path / "d.nc", "w") as nc:
        nc.createDimension("n", 3)
        nc.createVariable("h", "f8", ("n",))[:] = [1, 2, 3]
    assert_data_error(tmp_path / "d.nc", "missing variables")


def test_wrong_shapes(tmp_path):
    np.savez(tmp_path / "a.npz", x=np.arange(4.0), y=np.arange(3.0), u=np.ones((4, 3)))
    assert_data_error(tmp_path / "a.npz", "'u'", "(4, 3)", "(3, 4)")
    np.savez(tmp_path / "b.npz", x=np.arange(4.0), y=np.arange(3.0), u=np.ones((3, 4)), w=np.ones(7))
    assert load_data(tmp_path / "b.npz", names=["u"]).quantities == ("u",)   # choosing avoids the bad one
    with netCDF4.Dataset(tmp_path / "c.nc", "w") as nc:
        for name, size in (("x", 4), ("y", 3), ("t", 2)):
            nc.createDimension(name, size)
            nc.createVariable(name, "f8", (name,))[:] = np.arange(size)
        nc.createVariable("u", "f8", ("t", "y", "x"))[:] = np.ones((2, 3, 4))
        nc.createVariable("h", "f8", ("y", "x"))[:] = np.ones((3, 4))
    assert load_data(tmp_path / "c.nc").quantities == ("h",)
    assert_data_error(tmp_path / "c.nc", "'u'", "dimensions", names=["u"])


def test_holes_in_coordinates(tmp_path):
    np.savez(tmp_path / "a.npz", x=np.array([0.0, np.nan, 2.0]), y=np.arange(2.0), u=np.ones((2, 3)))
    assert_data_error(tmp_path / "a.npz", "'x'", "non-finite", "holes")
    write_csv(tmp_path / "b.csv", ["x", "y", "h"], [(0, 0, 1), ("", 1, 1), (1, 1, 1)])
    assert_data_error(tmp_path / "b.csv", "'x'", "line 3")
    points = np.array([[0, 0, 0], [1, 0, 0], [np.nan, 1, 0]], dtype=float)
    meshio.write(tmp_path / "c.vtu", meshio.Mesh(points, [("triangle", np.array([[0, 1, 2]]))],
                                                 point_data={"h": np.ones(3)}))
    assert_data_error(tmp_path / "c.vtu", "non-finite")


def test_non_monotonic_coordinates(tmp_path):
    np.savez(tmp_path / "a.npz", x=np.array([0.0, 2.0, 1.0, 3.0]), y=np.arange(2.0), u=np.ones((2, 4)))
    assert_data_error(tmp_path / "a.npz", "'x'", "not monotonic", "x[1] = 2, x[2] = 1")
    np.savez(tmp_path / "b.npz", x=np.array([0.0, 1.0, 1.0]), y=np.arange(2.0), u=np.ones((2, 3)))
    assert_data_error(tmp_path / "b.npz", "repeats a value")
    write_csv(tmp_path / "c.csv", ["z", "N"], [(0, 1), (-1, 1), (-0.5, 1)])
    assert_data_error(tmp_path / "c.csv", "'z'", "not monotonic", variables=("x", "z"))
    write_csv(tmp_path / "d.csv", ["x", "y", "h"], [(0, 0, 1), (1, 0, 1), (0, 1, 1), (1, 0, 2)])
    assert_data_error(tmp_path / "d.csv", "appears more than once")


def test_truncated_files(tmp_path):
    np.savez(tmp_path / "full.npz", x=np.arange(50.0), y=np.arange(40.0), u=np.ones((40, 50)))
    with netCDF4.Dataset(tmp_path / "full3.nc", "w", format="NETCDF3_CLASSIC") as nc:
        for name, size in (("x", 50), ("y", 40)):
            nc.createDimension(name, size)
            nc.createVariable(name, "f8", (name,))[:] = np.arange(size)
        nc.createVariable("u", "f8", ("y", "x"))[:] = np.ones((40, 50))
    with netCDF4.Dataset(tmp_path / "full4.nc", "w", format="NETCDF4") as nc:
        for name, size in (("x", 50), ("y", 40)):
            nc.createDimension(name, size)
            nc.createVariable(name, "f8", (name,))[:] = np.arange(size)
        nc.createVariable("u", "f8", ("y", "x"))[:] = np.ones((40, 50))
    points, quads = quad_mesh(20, 20)
    meshio.write(tmp_path / "full.vtu", meshio.Mesh(points, [("quad", quads)], point_data={"h": points[:, 0]}))
    for name in ("full.npz", "full3.nc", "full4.nc", "full.vtu"):
        whole = (tmp_path / name).read_bytes()
        load_data(tmp_path / name)                                        # intact: reads
        cut = tmp_path / name.replace("full", "cut")
        cut.write_bytes(whole[: len(whole) // 2])
        message = assert_data_error(cut)
        assert "truncated" in message or "cannot be read" in message
    write_csv(tmp_path / "cut.csv", ["x", "y", "h"], [(0, 0, 1), (1, 0, 1), (0, 1, 1)])
    text = (tmp_path / "cut.csv").read_text()
    (tmp_path / "cut.csv").write_text(text[:-4])                        # the last row loses a value
    assert_data_error(tmp_path / "cut.csv", "line 4", "truncated")


def test_other_bad_inputs(tmp_path):
    (tmp_path / "data.xlsx").write_bytes(b"PK")
    assert_data_error(tmp_path / "data.xlsx", "unknown file extension")
    assert_data_error(tmp_path / "absent.csv", "no such file")
    write_csv(tmp_path / "a.csv", ["x", "y", "h"], [(0, 0, 1), (1, 0, "deep"), (0, 1, 1)])
    assert "deep" not in assert_data_error(tmp_path / "a.csv", "line 3", "'h'", "is not a number")
    write_csv(tmp_path / "b.csv", ["x", "y", "h"], [(0, 0, 1), (1, 1, 1), (2, 2, 1)])
    assert_data_error(tmp_path / "b.csv", "cannot be triangulated")
    np.savez(tmp_path / "c.npz", x=np.arange(3.0), y=np.arange(2.0), u=np.ones((2, 3)))
    assert_data_error(tmp_path / "c.npz", "missing quantity 'w'", names=["w"])
    assert_data_error(tmp_path / "c.npz", "reserved", names={"u": "c"})
    assert_data_error(tmp_path / "c.npz", "one of the variables", names={"u": "y"})
    assert_data_error(tmp_path / "c.npz", "must start with a letter", names={"u": "Pressure Coefficient"})
    np.save(tmp_path / "single.npy", np.ones(3))
    (tmp_path / "single.npz").write_bytes((tmp_path / "single.npy").read_bytes())
    assert_data_error(tmp_path / "single.npz", "single array")
    np.savez(tmp_path / "objects.npz", x=np.arange(2.0), y=np.arange(2.0), u=np.array([[{}, {}], [{}, {}]]))
    assert_data_error(tmp_path / "objects.npz", "pickled objects are never loaded")
    points, _quads = quad_mesh()
    meshio.write(tmp_path / "solid.vtu", meshio.Mesh(points, [("tetra", np.array([[0, 1, 6, 7]]))],
                                                     point_data={"h": points[:, 0]}))
    assert_data_error(tmp_path / "solid.vtu", "tetra", "2-D")


def test_unusable_names_are_skipped_and_can_be_renamed(tmp_path):
    points, quads = quad_mesh()
    path = tmp_path / "cfd.vtu"
    meshio.write(path, meshio.Mesh(points, [("quad", quads)],
                                   point_data={"Pressure Coefficient": points[:, 0], "h": points[:, 1]}))
    data = load_data(path)
    assert data.quantities == ("h",)
    assert any("Pressure Coefficient" in note for note in data.notes)
    renamed = load_data(path, names={"Pressure Coefficient": "cp"})
    assert renamed.sample("cp", 0.25, 0.5) == pytest.approx(0.25)
