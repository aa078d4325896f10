"""Hostile and huge data files: sizes are checked before anything is allocated, and every failure is one line
naming the file, never quoting what it holds (real files made here: zip bombs, lying headers, corrupt streams)."""

from __future__ import annotations

import base64
import csv
import tracemalloc
import zipfile
import zlib

import meshio
import netCDF4
import numpy as np
import pytest

from core.data.limits import (
    DATA_CAP_VARIABLE,
    DEFAULT_DATA_CAP,
    MAX_CSV_LINE,
    data_cap,
    data_cap_raised,
)
from core.data.readers import read_raw
from core.data.sources import DataError, load_data

MIB = 1 << 20


def one_line_error(path, *words, **options) -> str:
    """The DataError load_data raises for ``path``: one line naming the file and holding ``words``."""
    with pytest.raises(DataError) as caught:
        load_data(path, **options)
    message = str(caught.value)
    assert "\n" not in message and str(path) in message, message
    for word in words:
        assert word in message, message
    return message


def write_npz_member(archive: zipfile.ZipFile, name: str, header: dict, body_bytes: int) -> None:
    """A .npy member with ``header`` (descr, fortran_order, shape) and ``body_bytes`` zero bytes after it."""
    with archive.open(f"{name}.npy", "w", force_zip64=True) as stream:
        np.lib.format.write_array_header_1_0(stream, header)
        block = bytes(MIB)
        for _ in range(body_bytes // MIB):
            stream.write(block)
        stream.write(bytes(body_bytes % MIB))


def bomb(path, zeros: int, shape: tuple[int, ...]) -> None:
    """A real zip bomb: x and y axes, then a member of ``zeros`` zero bytes deflated (ZIP_DEFLATED)."""
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, values in (("x", np.arange(3.0)), ("y", np.arange(2.0))):
            with archive.open(f"{name}.npy", "w") as stream:
                np.lib.format.write_array(stream, values)
        write_npz_member(archive, "u", {"descr": "<f8", "fortran_order": False, "shape": shape}, zeros)


# -- the cap itself ------------------------------------------------------------------------------------------
def test_the_cap_defaults_to_one_gib_and_the_environment_or_a_block_changes_it(monkeypatch):
    monkeypatch.delenv(DATA_CAP_VARIABLE, raising=False)
    assert data_cap() == DEFAULT_DATA_CAP == 1 << 30
    monkeypatch.setenv(DATA_CAP_VARIABLE, "0.5")
    assert data_cap() == 1 << 29
    with data_cap_raised(3 * MIB):
        assert data_cap() == 3 * MIB
    assert data_cap() == 1 << 29
    monkeypatch.setenv(DATA_CAP_VARIABLE, "lots")
    with pytest.raises(DataError, match=DATA_CAP_VARIABLE):
        data_cap()


def test_a_file_larger_than_the_cap_is_refused_before_it_is_read(tmp_path, monkeypatch):
    path = tmp_path / "big.csv"
    with open(path, "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["x", "h"])
        writer.writerows((k, k * 0.5) for k in range(20_000))
    size = path.stat().st_size
    assert load_data(path, variables=("x", "y")).size == (20_000,)
    monkeypatch.setenv(DATA_CAP_VARIABLE, str((size - 1) / (1 << 30)))
    message = one_line_error(path, "the file is", "data cap", "--data-cap", DATA_CAP_VARIABLE)
    assert "KiB" in message


# -- NumPy .npz ------------------------------------------------------------------------------------------------
def test_a_zip_bomb_is_refused_from_its_declared_sizes_without_decompressing(tmp_path):
    path = tmp_path / "bomb.npz"
    bomb(path, 64 * MIB, (8 * MIB,))
    assert path.stat().st_size < MIB // 4                      # 64 MiB of zeros deflate to about 64 KiB
    with data_cap_raised(16 * MIB):
        tracemalloc.start()
        try:
            one_line_error(path, "decompressed", "64 MiB", "data cap of 16 MiB")
            _, peak = tracemalloc.get_traced_memory()
        finally:
            tracemalloc.stop()
    assert peak < 4 * MIB                                        # nothing near the 64 MiB was decompressed
    # under a raised cap the same file reads (and its 1-D u is then the wrong shape)
    with data_cap_raised(128 * MIB), pytest.raises(DataError, match="has shape"):
        load_data(path)


def test_a_header_declaring_a_huge_shape_is_refused_before_allocating(tmp_path):
    path = tmp_path / "huge.npz"
    bomb(path, 4096, (10**6, 10**6))                             # 8 TB declared, 4 KiB held
    one_line_error(path, "(1000000, 1000000)", "more than the member holds")
    honest = tmp_path / "bytes.npz"                             # 16 MiB of int8 held: 128 MiB as float64
    with zipfile.ZipFile(honest, "w", zipfile.ZIP_DEFLATED) as archive:
        write_npz_member(archive, "u", {"descr": "|i1", "fortran_order": False, "shape": (16 * MIB,)}, 16 * MIB)
    with data_cap_raised(64 * MIB):
        one_line_error(honest, "its arrays would take 128 MiB", "data cap of 64 MiB")


def test_a_corrupt_or_truncated_deflate_stream_is_one_line(tmp_path):
    path = tmp_path / "good.npz"
    np.savez_compressed(path, x=np.arange(200.0), y=np.arange(100.0), u=np.sin(np.arange(20_000.0)).reshape(100, 200))
    assert load_data(path).quantities == ("u",)
    whole = bytearray(path.read_bytes())
    start = whole.index(b"u.npy") + len(b"u.npy") + 200         # inside u's compressed data
    corrupt = bytearray(whole)
    corrupt[start:start + 64] = bytes(range(64))
    (tmp_path / "corrupt.npz").write_bytes(bytes(corrupt))
    one_line_error(tmp_path / "corrupt.npz", "cannot be read")
    (tmp_path / "cut.npz").write_bytes(bytes(whole[: len(whole) * 2 // 3]))
    one_line_error(tmp_path / "cut.npz", "cannot be read")


def test_arrays_of_objects_are_refused_without_unpickling(tmp_path):
    path = tmp_path / "objects.npz"
    np.savez(path, x=np.arange(2.0), y=np.arange(2.0), u=np.array([[{}, {}], [{}, {}]]))
    one_line_error(path, "Python objects", "never loaded")


# -- CSV ---------------------------------------------------------------------------------------------------------
def test_300000_scattered_points_take_memory_linear_in_the_points(tmp_path):
    rng = np.random.default_rng(3)
    x, y = rng.random(300_000), rng.random(300_000)
    path = tmp_path / "scattered.csv"
    with open(path, "w") as handle:
        handle.write("x,y,h\n")
        handle.writelines(f"{a!r},{b!r},{2 * a - b!r}\n" for a, b in zip(x.tolist(), y.tolist(), strict=True))
    tracemalloc.start()
    try:
        raw = read_raw(str(path), "csv", ("x", "y"))
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert raw.layout == "points" and raw.coordinates[0].size == 300_000
    assert np.array_equal(raw.coordinates[0], x) and np.array_equal(raw.arrays["h"], 2 * x - y)
    # the values are 7.2 MB; counting over the 300,000 x 300,000 lattice needed 670 GiB
    assert peak < 100 * MIB, peak


def test_a_shuffled_grid_is_a_grid_and_one_missing_node_makes_it_scattered(tmp_path):
    xs, ys = np.arange(5.0), np.arange(4.0) * 10
    points = [(a, b, a + b) for a in xs for b in ys]
    order = np.random.default_rng(5).permutation(len(points))
    path = tmp_path / "grid.csv"
    with open(path, "w", newline="") as handle:
        csv.writer(handle).writerows([("x", "y", "h"), *(points[k] for k in order)])
    raw = read_raw(str(path), "csv", ("x", "y"))
    assert raw.layout == "grid" and np.array_equal(raw.arrays["h"], ys[:, None] + xs[None, :])
    with open(path, "w", newline="") as handle:
        csv.writer(handle).writerows([("x", "y", "h"), *(points[k] for k in order[1:])])
    assert read_raw(str(path), "csv", ("x", "y")).layout == "points"


def test_csv_failures_deep_in_a_stream_are_one_line_without_the_text(tmp_path):
    rows = "".join(f"{k},{k % 7},1\n" for k in range(100_000))
    path = tmp_path / "latin.csv"
    path.write_bytes(b"x,y,h\n" + rows.encode() + b"3,4,caf\xe9\n")
    one_line_error(path, "not a UTF-8 text file")
    long_line = tmp_path / "long.csv"
    long_line.write_text("x,y,h\n0,0,1\n1,0," + "9" * (MAX_CSV_LINE + 10) + "\n")
    one_line_error(long_line, "line 3", "longer than")
    secret = tmp_path / "cell.csv"
    secret.write_text("x,y,h\n0,0,1\n1,0,hunter2-canary\n0,1,1\n")
    assert "hunter2" not in one_line_error(secret, "line 3", "'h'", "not a number")
    quoted = tmp_path / "quoted.csv"
    quoted.write_text('x,y,h\n0,0,"' + "7" * 200_000 + '"\n')              # a field above csv's own limit
    one_line_error(quoted, "not well-formed CSV")


# -- NetCDF and meshes -------------------------------------------------------------------------------------------
def test_netcdf_declared_sizes_are_checked_before_reading(tmp_path):
    path = tmp_path / "huge.nc"
    with netCDF4.Dataset(path, "w", format="NETCDF4") as nc:
        for name in ("x", "y"):
            nc.createDimension(name, 100_000)
            nc.createVariable(name, "f8", (name,))[:] = np.arange(100_000.0)
        nc.createVariable("u", "f4", ("y", "x"), zlib=True, chunksizes=(100, 100))   # 10^10 values declared
    assert path.stat().st_size < 10 * MIB
    one_line_error(path, "variable 'u' would take", "data cap")


def vtu_array(values: np.ndarray, *, declared: int | None = None, stream: bytes | None = None) -> str:
    """One compressed binary DataArray's text (VTK XML: a UInt32 block header in base64, then the blocks)."""
    data = values.tobytes()
    compressed = zlib.compress(data) if stream is None else stream
    size = len(data) if declared is None else declared
    header = np.array([1, size, size, len(compressed)], dtype="<u4").tobytes()
    return base64.b64encode(header).decode() + base64.b64encode(compressed).decode()


def write_vtu(path, h_text: str) -> None:
    points = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0]], dtype="<f8")
    arrays = {"connectivity": np.array([0, 1, 2], "<i8"), "offsets": np.array([3], "<i8"),
              "types": np.array([5], "u1")}
    cells = "".join(f'<DataArray type="{kind}" Name="{name}" format="binary">{vtu_array(arrays[name])}</DataArray>'
                    for name, kind in (("connectivity", "Int64"), ("offsets", "Int64"), ("types", "UInt8")))
    path.write_text(
        '<?xml version="1.0"?>\n<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" '
        'header_type="UInt32" compressor="vtkZLibDataCompressor"><UnstructuredGrid>'
        '<Piece NumberOfPoints="3" NumberOfCells="1"><Points><DataArray type="Float64" NumberOfComponents="3" '
        f'format="binary">{vtu_array(points)}</DataArray></Points><Cells>{cells}</Cells><PointData>'
        f'<DataArray type="Float64" Name="h" format="binary">{h_text}</DataArray></PointData></Piece>'
        '</UnstructuredGrid></VTKFile>\n')


def test_a_compressed_vtu_block_holding_more_than_it_declares_is_refused(tmp_path):
    honest = tmp_path / "honest.vtu"
    write_vtu(honest, vtu_array(np.array([1.0, 2.0, 3.0])))
    assert load_data(honest).sample("h", 0.25, 0.25) == pytest.approx(1.75)  # 1/2*1 + 1/4*2 + 1/4*3
    lying = tmp_path / "lying.vtu"                               # declares 24 bytes, inflates to 64 MiB
    write_vtu(lying, vtu_array(np.zeros(3), stream=zlib.compress(bytes(64 * MIB), 9)))
    tracemalloc.start()
    try:
        one_line_error(lying, "holds more than its header declares")
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak < 16 * MIB
    greedy = tmp_path / "greedy.vtu"                             # declares (and holds) 64 MiB
    write_vtu(greedy, vtu_array(np.zeros(8 * MIB)))
    with data_cap_raised(16 * MIB):
        one_line_error(greedy, "decompressed", "data cap")


def test_a_mesh_declaring_more_points_than_the_cap_is_refused(tmp_path):
    points = np.column_stack([np.arange(200_000.0), np.zeros(200_000), np.zeros(200_000)])
    path = tmp_path / "points.vtu"
    meshio.write(path, meshio.Mesh(points, [("triangle", np.array([[0, 1, 2]]))], point_data={"h": points[:, 0]}))
    with data_cap_raised(2 * MIB):
        one_line_error(path, "declared points and cells", "data cap")


# -- every failure is a DataError -----------------------------------------------------------------------------------
@pytest.mark.parametrize("suffix", [".csv", ".npz", ".nc", ".vtu", ".vtk"])
def test_corrupted_files_of_every_format_fail_with_one_line(tmp_path, suffix):
    good = tmp_path / f"good{suffix}"
    x, y = np.linspace(0, 1, 6), np.linspace(0, 2, 5)
    if suffix == ".csv":
        good.write_text("x,y,h\n" + "".join(f"{a},{b},{a + b}\n" for a in x for b in y))
    elif suffix == ".npz":
        np.savez_compressed(good, x=x, y=y, h=np.add.outer(y, x))
    elif suffix == ".nc":
        with netCDF4.Dataset(good, "w") as nc:
            for name, values in (("x", x), ("y", y)):
                nc.createDimension(name, values.size)
                nc.createVariable(name, "f8", (name,))[:] = values
            nc.createVariable("h", "f8", ("y", "x"), zlib=True)[:] = np.add.outer(y, x)
    else:
        points = np.column_stack([np.repeat(x, 5), np.tile(y, 6), np.zeros(30)])
        triangles = np.array([[k, k + 1, k + 5] for k in range(20) if k % 5 != 4])
        meshio.write(good, meshio.Mesh(points, [("triangle", triangles)], point_data={"h": points[:, 0]}),
                     binary=True)
    load_data(good)
    whole = good.read_bytes()
    rng = np.random.default_rng(11)
    for case in range(12):
        damaged = bytearray(whole)
        if case % 3 == 0:
            damaged = damaged[: int(rng.integers(1, len(whole)))]
        else:
            for where in rng.integers(0, len(whole), size=1 + case):
                damaged[where] = int(rng.integers(0, 256))
        path = tmp_path / f"damaged{case}{suffix}"
        path.write_bytes(bytes(damaged))
        try:
            load_data(path)
        except DataError as error:
            assert "\n" not in str(error) and str(path) in str(error)


def test_a_path_too_long_for_the_system_is_a_data_error(tmp_path):
    path = tmp_path / ("d" * 300 + ".csv")
    with pytest.raises(DataError) as caught:
        read_raw(str(path), "csv", ("x", "y"))
    assert "\n" not in str(caught.value) and "cannot be read" in str(caught.value)


def test_a_header_of_50000_columns_is_checked_in_linear_time(tmp_path):
    # found by the fuzz campaign: duplicates were counted with list.count, 18 s for 50,000 columns
    names = ["x", "y", *(f"c{k}" for k in range(49_997)), "c7"]
    path = tmp_path / "wide.csv"
    path.write_text(",".join(names) + "\n")
    with pytest.raises(DataError, match=r"names column\(s\) c7 more than once"):
        read_raw(str(path), "csv", ("x", "y"))
