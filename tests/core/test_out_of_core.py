"""Out-of-core classification (core.analysis.out_of_core): the data's own grid classified band by band.

The reference is the in-memory run on the same nodes: classify_grid (through the command line where the
nodes are a Domain's) or classify_nodes on the file's own axes, with the file read whole by
core.data.sources. Codes and fractions must be equal to the last bit while tiny band budgets cut the grid
into many bands, with derivatives of data along both variables across band edges, missing values, a
decreasing coordinate, transposed storage and chunked, compressed storage. Window derivatives are checked
against numpy's np.gradient of the whole array (reference library). No test measures memory or time:
bench/bench_chunked.py does.
"""

import json
import math
import os
import sys

import netCDF4
import numpy as np
import pytest

from core.analysis.classify import classify_grid, classify_nodes
from core.analysis.out_of_core import classify_out_of_core, node_weights
from core.data.band_source import axis_spacing, window_gradient
from core.data.gridded_store import open_gridded
from core.data.raw import DataError
from core.data.sources import DataSources, load_data
from core.domain import Domain
from core.equations.equation import Equation
from core.progress import Cancelled
from core.project.data_files import compile_with_data
from tests.core.cli_runner import run, run_json
from tests.core.test_cli_json_fields import CLASSIFY_FIELDS, key_paths

RNG = np.random.default_rng(20240611)
# Derivatives along both variables, a product and a data quantity in each coefficient: every band reads a halo.
EQUATION = Equation(a="u + 0.3 * diff(u, y)", b="0.02 * diff(w, x) + 0.1 * u", c="w * 0.5 - 0.05 * diff(u, x)")


def fields(x: np.ndarray, y: np.ndarray) -> dict[str, np.ndarray]:
    """u and w (ny, nx): smooth with noise, so that the type changes often, and a few missing values."""
    xx, yy = np.meshgrid(x, y)
    u = np.sin(2.5 * xx) * np.cos(1.7 * yy) + 0.2 * RNG.standard_normal(xx.shape)
    w = (np.cos(xx + yy) + 0.3 * RNG.standard_normal(xx.shape)).astype(np.float32)
    u[3, 4] = np.nan
    u[-1, 7] = np.nan
    w[min(10, y.size - 1), -2] = -999.0                  # the fill value: missing
    return {"u": u, "w": w}


def write_netcdf(path, x, y, arrays, *, y_decreasing=False, transposed=False, chunks=None) -> str:
    """A CF NetCDF-4 file: u float64 on (y, x) (or (x, y) transposed, with a time axis of length 1), w float32
    with fill value -999; y stored decreasing if asked; chunked and compressed if ``chunks`` (rows, columns)."""
    order = slice(None, None, -1) if y_decreasing else slice(None)
    with netCDF4.Dataset(path, "w", format="NETCDF4") as nc:
        nc.createDimension("time", 1)
        nc.createDimension("x", x.size)
        nc.createDimension("y", y.size)
        nc.createVariable("x", "f8", ("x",))[:] = x
        nc.createVariable("y", "f8", ("y",))[:] = y[order]
        options = {} if chunks is None else {"zlib": True, "chunksizes": chunks}
        if transposed:
            u = nc.createVariable("u", "f8", ("time", "x", "y"),
                                  **({} if chunks is None else {"zlib": True, "chunksizes": (1, chunks[1], chunks[0])}))
            u[0] = arrays["u"][order].T
        else:
            nc.createVariable("u", "f8", ("y", "x"), **options)[:] = arrays["u"][order]
        w = nc.createVariable("w", "f4", ("y", "x"), fill_value=-999.0, **options)
        w.units = "1/s"
        w[:] = arrays["w"][order]
    return str(path)


def in_memory(path, x_nodes, y_nodes, equation=EQUATION, extra=()):
    """Codes and counts of classify_nodes on these nodes with the file read whole (the in-memory reference)."""
    data = DataSources([load_data(path), *extra])
    compiled = compile_with_data(equation, data)
    out = (np.empty((y_nodes.size, x_nodes.size), np.int8), np.empty((y_nodes.size, x_nodes.size), np.float32))
    counts = classify_nodes(compiled, x_nodes, y_nodes, data=data, out=out)
    return out[0], counts, compiled


# -- window derivatives against numpy ----------------------------------------------------------------------
@pytest.mark.parametrize("kind", ["uniform", "stretched", "locally_uniform"])
@pytest.mark.parametrize("rows", [2, 3, 17])
def test_window_gradient_is_numpys_gradient_of_the_whole_axis(kind, rows):
    # reference: numpy.gradient of the whole array, compared bit for bit on the rows each window answers for
    if kind == "uniform":
        y = np.linspace(-1.0, 2.0, rows)
    elif kind == "stretched":
        y = np.cumsum(RNG.uniform(0.5, 1.5, rows))
    else:                                                     # equal steps except the last: numpy's non-uniform path
        y = np.concatenate([np.arange(rows - 1) * 0.25, [(rows - 2) * 0.25 + 0.4]])
    values = RNG.standard_normal((rows, 5))
    order = 2 if rows >= 3 else 1
    whole = np.gradient(values, y, axis=0, edge_order=order)
    spacing = axis_spacing(y)
    assert (np.ndim(spacing) == 0) == (kind == "uniform" or rows == 2)   # one step is always uniform
    for start in range(rows):
        for stop in range(start + 1, rows + 1):
            window = window_gradient(values[start:stop], spacing, start, rows, order)
            edges = (0, rows - 1) if stop - start > order else ()   # a grid edge needs order + 1 rows
            answered = [k for k in range(start, stop) if start < k < stop - 1 or k in edges]
            assert np.isnan(window[[k - start for k in range(start, stop) if k not in answered]]).all()
            for k in answered:
                np.testing.assert_array_equal(window[k - start], whole[k])


# -- bit-identical to the in-memory run --------------------------------------------------------------------
@pytest.mark.parametrize("layout", ["plain", "decreasing_y_transposed", "chunked_compressed"])
def test_codes_and_fractions_equal_the_in_memory_run_in_many_bands(tmp_path, layout):
    x = np.linspace(-1.0, 2.0, 61)
    y = np.linspace(-1.5, 1.0, 47)
    arrays = fields(x, y)
    path = write_netcdf(tmp_path / "f.nc", x, y, arrays, y_decreasing=layout != "plain",
                        transposed=layout == "decreasing_y_transposed",
                        chunks=(8, 16) if layout == "chunked_compressed" else None)
    data = DataSources([load_data(path)])
    compiled = compile_with_data(EQUATION, data)
    reference = classify_grid(compiled, Domain(-1.0, 2.0, -1.5, 1.0, 61, 47), data=data)
    assert 0.2 < reference.fractions["hyperbolic"] < 0.8 and reference.count("undefined") > 0
    with open_gridded(path, chunk_budget=1 << 20) as store:
        for budget in (24_000, 40_000, 1 << 20):
            codes_path = str(tmp_path / f"codes_{budget}.npy")
            result = classify_out_of_core(compiled, store, block_budget=budget, codes_path=codes_path)
            np.testing.assert_array_equal(np.load(codes_path), reference.codes)
            assert result.fractions == reference.fractions
            assert result.counts == {code: reference.count(code) for code in reference.fractions}
        assert result.bands == 1
    assert classify_out_of_core(compiled, open_gridded(path), block_budget=24_000).bands >= 10


def test_stride_rectangle_and_a_file_read_into_memory_beside_the_streamed_one(tmp_path):
    x = np.cumsum(RNG.uniform(0.02, 0.08, 70))              # non-uniform: no Domain has these nodes
    y = np.linspace(0.0, 2.0, 53)
    path = write_netcdf(tmp_path / "f.nc", x, y, fields(x, y))
    profile = tmp_path / "profile.csv"
    levels = np.linspace(-1, 3, 40)
    profile.write_text("y,N\n" + "".join(f"{v!r},{1 + 0.5 * math.sin(3 * v)!r}\n" for v in levels.tolist()))
    equation = Equation(a="u + 0.3 * diff(u, y) + N - 1", b="diff(w, x)", c="w - diff(N, y)")
    side = load_data(profile)
    rectangle = (float(x[5]) - 1e-9, float(x[60]), 0.31, 1.77)
    for stride in ((1, 1), (3, 2), (1, 4)):
        columns = np.flatnonzero((x >= rectangle[0]) & (x <= rectangle[1]))[::stride[0]]
        rows = np.flatnonzero((y >= rectangle[2]) & (y <= rectangle[3]))[::stride[1]]
        codes, counts, compiled = in_memory(path, x[columns], y[rows], equation, extra=[side])
        with open_gridded(path) as store:
            result = classify_out_of_core(compiled, store, others=DataSources([side]), stride=stride,
                                          rectangle=rectangle, block_budget=30_000,
                                          codes_path=str(tmp_path / "c.npy"))
        np.testing.assert_array_equal(np.load(tmp_path / "c.npy"), codes)
        assert result.grid == (columns.size, rows.size) and result.bands > 2
        assert result.columns == (columns[0], columns[-1], stride[0])
        assert [result.counts[k] for k in ("undefined", "elliptic", "parabolic", "hyperbolic")] == list(counts)


def test_zarr_store_gives_the_codes_of_the_same_values_in_netcdf(tmp_path):
    xarray = pytest.importorskip("xarray")
    x = np.linspace(-1.0, 2.0, 40)
    y = np.linspace(-1.5, 1.0, 33)
    arrays = fields(x, y)
    path = write_netcdf(tmp_path / "f.nc", x, y, arrays)
    reference, counts, compiled = in_memory(path, x, y)
    store_path = str(tmp_path / "f.zarr")
    xarray.open_dataset(path).load().chunk({"y": 5, "x": 16}).to_zarr(store_path, consolidated=False)
    with open_gridded(store_path, chunk_budget=1 << 20) as store:
        assert store.format == "zarr" and store.chunk_rows == 5 and sorted(store.quantities) == ["u", "w"]
        result = classify_out_of_core(compiled, store, block_budget=60_000, codes_path=str(tmp_path / "z.npy"))
    np.testing.assert_array_equal(np.load(tmp_path / "z.npy"), reference)
    assert result.bands > 2 and [result.counts[k] for k in ("undefined", "elliptic", "parabolic", "hyperbolic")] \
        == list(counts)
    with pytest.raises(DataError, match="storage chunk of 'u' takes .* more than the block budget"):
        open_gridded(store_path, chunk_budget=100)


def test_zarr_without_the_extra_names_it(tmp_path, monkeypatch):
    store = tmp_path / "f.zarr"
    store.mkdir()
    (store / "zarr.json").write_text("{}")
    monkeypatch.setitem(sys.modules, "xarray", None)
    with pytest.raises(DataError, match=r"pip install 'mixtype\[large-data\]'"):
        open_gridded(str(store))
    status, _, err = run("classify", "--a", "u", "--b", "0", "--c", "1", "--data", str(store), "--json")
    assert status == 2 and "mixtype[large-data]" in err and len(err.strip().splitlines()) == 1


# -- areas, cancel, progress -------------------------------------------------------------------------------
def test_areas_are_the_node_cells_of_each_type(tmp_path):
    # a u_xx + u_yy with a = x: hyperbolic left of x = 0, parabolic on it, elliptic right of it. Each node
    # stands for the cell between the midpoints to its neighbours (common practice, no source).
    x = np.linspace(-1.0, 1.5, 11)                            # h = 0.25, x = 0 is a node
    y = np.linspace(0.0, 2.0, 9)
    ones = np.ones((y.size, x.size))
    path = write_netcdf(tmp_path / "f.nc", x, y, {"u": ones, "w": ones.astype(np.float32)})
    with open_gridded(path) as store:
        compiled = compile_with_data(Equation(a="x", b="0", c="1 + 0 * w"), store.quantities)
        result = classify_out_of_core(compiled, store, block_budget=10_000)
    assert result.areas["hyperbolic"] == pytest.approx((1.0 - 0.125) * 2.0, rel=1e-14)
    assert result.areas["parabolic"] == pytest.approx(0.25 * 2.0, rel=1e-14)
    assert result.areas["elliptic"] == pytest.approx((1.5 - 0.125) * 2.0, rel=1e-14)
    assert result.counts == {"undefined": 0, "elliptic": 54, "parabolic": 9, "hyperbolic": 36}
    assert node_weights(x).sum() == pytest.approx(2.5, rel=1e-15)


def test_cancel_leaves_no_codes_file_and_progress_reaches_one(tmp_path):
    x, y = np.linspace(0, 1, 30), np.linspace(0, 1, 40)
    path = write_netcdf(tmp_path / "f.nc", x, y, fields(x, y))
    target = tmp_path / "codes.npy"
    target.write_bytes(b"old")
    polls, reports = [], []
    with open_gridded(path) as store:
        compiled = compile_with_data(EQUATION, store.quantities)
        with pytest.raises(Cancelled):
            classify_out_of_core(compiled, store, block_budget=12_000, codes_path=str(target),
                                 cancel=lambda: polls.append(1) or len(polls) > 2)
        assert target.read_bytes() == b"old" and sorted(os.listdir(tmp_path)) == ["codes.npy", "f.nc"]
        classify_out_of_core(compiled, store, block_budget=12_000, progress=reports.append)
    assert len(reports) > 3 and reports == sorted(reports) and reports[-1] == 1.0


# -- the command line --------------------------------------------------------------------------------------
def test_cli_out_of_core_fractions_equal_the_in_memory_command(tmp_path):
    nx, ny = 8000, 90                                           # rows of 8000 values: several bands in 8 MiB
    x, y = np.linspace(0.0, 4.0, nx), np.linspace(-1.0, 1.0, ny)
    xx, yy = np.meshgrid(x, y)
    path = str(tmp_path / "wide.nc")
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("x", nx)
        nc.createDimension("y", ny)
        nc.createVariable("x", "f8", ("x",))[:] = x
        nc.createVariable("y", "f8", ("y",))[:] = y
        nc.createVariable("h", "f8", ("y", "x"))[:] = np.sin(3 * xx) * yy + 0.01 * RNG.standard_normal(xx.shape)
    equation = ("--a", "h + 0.1 * diff(h, y)", "--b", "0", "--c", "-1")
    memory = run_json("classify", *equation, "--data", path, "--domain", "0", "4", "-1", "1", "--grid", str(nx),
                      str(ny))
    codes = str(tmp_path / "codes.npy")
    streamed = run_json("classify", *equation, "--data", path, "--out-of-core", "--block-mib", "8",
                        "--codes-out", codes)
    assert streamed["fractions"] == memory["fractions"]
    assert streamed["grid"] == [nx, ny] and streamed["domain"] == [0.0, 4.0, -1.0, 1.0]
    assert streamed["out_of_core"]["bands"] >= 3
    # every field of classify --json is there; what needs the whole map is null, and the note says so
    assert CLASSIFY_FIELDS - key_paths(memory) <= {"parabolic_regions[].area", "parabolic_regions[].outline"}
    assert {p for p in CLASSIFY_FIELDS if "[]" not in p} <= set(key_paths(streamed))
    assert all(streamed[k] is None for k in ("boundaries", "parabolic_regions", "pockets", "refined"))
    assert "null" in streamed["out_of_core"]["note"]
    assert streamed["data"][0]["checksum"] == memory["data"][0]["checksum"]
    study = DataSources([load_data(path)])
    compiled = compile_with_data(Equation(a="h + 0.1 * diff(h, y)", b="0", c="-1"), study)
    np.testing.assert_array_equal(np.load(codes), classify_grid(compiled, Domain(0, 4, -1, 1, nx, ny),
                                                                 data=study).codes)


def test_cli_goes_out_of_core_for_a_file_over_the_cap_and_explains_refusals(tmp_path):
    x, y = np.linspace(0, 1, 20), np.linspace(0, 1, 15)
    path = write_netcdf(tmp_path / "f.nc", x, y, fields(x, y))
    equation = ("classify", "--a", "u", "--b", "0", "--c", "1", "--data", path)
    status, out, err = run(*equation, "--data-cap", "0.00001", "--json")
    assert status == 0 and "larger than the data cap" in err and "--out-of-core" in err
    assert json.loads(out)["out_of_core"]["file"] == path
    status, _, err = run(*equation, "--data-cap", "0.00001", "--grid", "50")
    assert status == 2 and err.splitlines()[-1].startswith("mixtype: --grid: not with an out-of-core run")
    assert err.splitlines()[-1].endswith("or raise --data-cap to read the file into memory")
    status, _, err = run(*equation, "--stride", "2")
    assert status == 2 and "--stride works with --out-of-core" in err
    status, _, err = run(*equation, "--out-of-core", "--codes-out", str(tmp_path / "codes.bin"))
    assert status == 2 and "end the name in .npy" in err
    status, _, err = run("classify", "--a", "1", "--b", "0", "--c", "1", "--out-of-core")
    assert status == 2 and "needs a NetCDF file or zarr store among the --data files" in err
    status, out, _ = run(*equation, "--out-of-core", "--stride", "2", "3", "--domain", "0.1", "0.9", "0", "1")
    assert status == 0 and "grid 8 x 5 of the nodes of" in out   # x = 2/19 ... 17/19, every 2nd and "not computed" in out
