"""Hypothesis strategies for corrupted data files of every format core.data.readers reads.

A case puts a corrupted file where a demo project expects its data (or gives it with --data) and runs check,
classify or probe. Corruptions of any file: truncation, flipped bytes, inserted bytes. Per format: NumPy .npz
zip bombs, huge declared shapes, corrupt compressed members, pickled objects (whose loading would open the
canary file), odd dtypes; CSV with text, NaN, infinite and huge numbers, huge and ragged rows, many
scattered points, bytes that are not UTF-8; VTU with entity expansion, external entities naming the canary
file, huge declared sizes, broken base64; NetCDF (classic and HDF5) with huge declared dimensions.
"""

from __future__ import annotations

import io
import json
import pickle
import struct
import tempfile
import zipfile
import zlib
from functools import cache
from pathlib import Path

import meshio
import netCDF4
import numpy as np
from hypothesis import strategies as st

from core.bundled import bundled_path
from tests.fuzz.cases import CANARY_PLACEHOLDER, Case

__all__ = ["data_cases", "zip_bomb"]

# demo project, the data path it lists, the quantity a --data case uses, its variables
_TARGETS = {
    "csv": ("thermocline_csv_profile", "data/stratification_profile.csv", "N", ("x", "z")),
    "npz": ("bump_flow_grid_data", "data/bump_flow.npz", "u", ("x", "y")),
    "vtu": ("bump_flow_mesh_data", "data/bump_flow.vtu", "velocity_x", ("x", "y")),
    "vtk": ("bump_flow_mesh_data", "data/bump_flow.vtk", "velocity_x", ("x", "y")),
    "netcdf": ("thermocline_netcdf_profile", "data/stratification_profile.nc", "N", ("x", "z")),
}


@cache
def _originals() -> dict[str, bytes]:
    """The demo data files, plus an HDF5-based NetCDF file and a legacy VTK file made from them."""
    folder = bundled_path("demo") / "data"
    files = {"csv": (folder / "stratification_profile.csv").read_bytes(),
             "npz": (folder / "bump_flow.npz").read_bytes(),
             "vtu": (folder / "bump_flow.vtu").read_bytes(),
             "netcdf": (folder / "stratification_profile.nc").read_bytes()}
    with tempfile.TemporaryDirectory() as scratch:
        vtk = Path(scratch) / "flow.vtk"
        meshio.write(vtk, meshio.read(folder / "bump_flow.vtu"), binary=True)
        files["vtk"] = vtk.read_bytes()
        hdf5 = Path(scratch) / "profile.nc"
        with netCDF4.Dataset(folder / "stratification_profile.nc") as source, \
                netCDF4.Dataset(hdf5, "w", format="NETCDF4") as target:
            depth = source.variables["depth"][:]
            target.createDimension("depth", depth.size)
            target.createVariable("depth", "f8", ("depth",))[:] = depth
            target.variables["depth"].setncatts({"axis": "Z", "positive": "down", "units": "m"})
            target.createVariable("N", "f8", ("depth",), zlib=True)[:] = source.variables["N"][:]
        files["netcdf4"] = hdf5.read_bytes()
    return files


def _npz(arrays: dict[str, np.ndarray], *, compressed: bool = False) -> bytes:
    buffer = io.BytesIO()
    (np.savez_compressed if compressed else np.savez)(buffer, **arrays)
    return buffer.getvalue()


def _npy_header(shape: tuple[int, ...], descr: str = "<f8") -> bytes:
    header = repr({"descr": descr, "fortran_order": False, "shape": shape}).encode()
    header += b" " * (63 - (len(header) + 10) % 64) + b"\n"
    return b"\x93NUMPY\x01\x00" + struct.pack("<H", len(header)) + header


def _zip(members: dict[str, bytes], *, method: int = zipfile.ZIP_STORED) -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", compression=method) as archive:
        for name, data in members.items():
            archive.writestr(name, data)
    return buffer.getvalue()


def _raw_zip(members: list[tuple[str, int, bytes, int, int]]) -> bytes:
    """A zip archive of (name, method, stored bytes, uncompressed size, CRC-32) written byte by byte, so a
    member can declare what its stored bytes would not give."""
    local, central = io.BytesIO(), io.BytesIO()
    for name, method, stored, size, crc in members:
        offset = local.tell()
        encoded = name.encode()
        local.write(struct.pack("<IHHHHHIIIHH", 0x04034B50, 20, 0, method, 0, 0x21, crc, len(stored), size,
                                len(encoded), 0) + encoded + stored)
        central.write(struct.pack("<IHHHHHHIIIHHHHHII", 0x02014B50, 20, 20, 0, method, 0, 0x21, crc, len(stored),
                                  size, len(encoded), 0, 0, 0, 0, 0, offset) + encoded)
    directory = central.getvalue()
    end = struct.pack("<IHHHHIIH", 0x06054B50, 0, 0, len(members), len(members), len(directory), local.tell(), 0)
    return local.getvalue() + directory + end


def _stored(name: str, data: bytes) -> tuple[str, int, bytes, int, int]:
    return name, zipfile.ZIP_STORED, data, len(data), zlib.crc32(data)


@cache
def zip_bomb(gibibytes: float = 2.0) -> bytes:
    """An npz of a few megabytes whose array 'u' (zeros over axes 'x' and 'y') decompresses to ``gibibytes``.

    The deflate stream is one compressed mebibyte of zeros repeated (each block ends in a full flush, so the
    blocks are independent), which costs no more than compressing two mebibytes. The declared CRC-32 is 0: a
    reader meets it only after decompressing everything."""
    side = int((gibibytes * 2**30 / 8) ** 0.5)
    header = _npy_header((side, side))
    zeros = side * side * 8
    chunk = 1 << 20
    compressor = zlib.compressobj(9, zlib.DEFLATED, -15)
    head = compressor.compress(header) + compressor.flush(zlib.Z_FULL_FLUSH)
    block = compressor.compress(bytes(chunk)) + compressor.flush(zlib.Z_FULL_FLUSH)
    tail = compressor.compress(bytes(zeros % chunk)) + compressor.flush()
    deflated = head + block * (zeros // chunk) + tail
    axis = _npy_header((side,)) + np.linspace(0, 1, side).tobytes()
    return _raw_zip([_stored("x.npy", axis), _stored("y.npy", axis),
                     ("u.npy", zipfile.ZIP_DEFLATED, deflated, len(header) + zeros, 0)])


class _OpensCanary:
    """Pickled, it would open the canary file when loaded (no reader may ever unpickle)."""

    def __reduce__(self):
        return (open, (CANARY_PLACEHOLDER,))


def _npz_specials() -> st.SearchStrategy[tuple[bytes, str]]:
    grid_x, grid_y = np.linspace(0, 1, 5), np.linspace(0, 1, 4)
    values = np.ones((4, 5))
    pickled = _zip({"x.npy": _npy_header((5,)) + grid_x.tobytes(), "y.npy": _npy_header((4,)) + grid_y.tobytes(),
                    "u.npy": _npy_header((1,), "|O") + pickle.dumps(_OpensCanary(), protocol=0)})
    corrupt_member = bytearray(_npz({"x": grid_x, "y": grid_y, "u": values}, compressed=True))
    corrupt_member[120:140] = bytes(20)
    return st.sampled_from([
        (zip_bomb(2.0), "npz zip bomb, 2 GiB of zeros"),
        (_zip({"x.npy": _npy_header((5,)) + grid_x.tobytes(), "y.npy": _npy_header((4,)) + grid_y.tobytes(),
               "u.npy": _npy_header((10**6, 10**6))}), "npz declaring a (10^6, 10^6) array"),
        (_zip({"x.npy": _npy_header((2**62,)) + grid_x.tobytes()}), "npz declaring a 2^62 axis"),
        (bytes(corrupt_member), "compressed npz with a corrupt member"),
        (pickled, "npz holding a pickled object that opens the canary"),
        (_npz({"x": grid_x, "y": grid_y, "u": values.astype(complex)}), "npz with a complex array"),
        (_npz({"x": grid_x, "y": grid_y, "u": np.array([["a"] * 5] * 4)}), "npz with a text array"),
        (_npz({"x": np.array([0, np.nan, 1, 2, 3.0]), "y": grid_y, "u": values}), "npz with a NaN coordinate"),
        (_npz({"x": grid_x * 1e308, "y": grid_y, "u": values}), "npz with huge coordinates"),
        (_npz({"x": np.zeros(5), "y": grid_y, "u": values}), "npz with repeated coordinates"),
        (_npz({"x": grid_x, "y": grid_y, "u": np.full((4, 5), np.inf)}), "npz with infinite values"),
        (_npz({"x": grid_x, "y": grid_y, "u": values.T}), "npz with transposed values"),
        (_npz({"x": grid_x[None, :], "y": grid_y, "u": values}), "npz with a 2-D axis"),
        (_npz({"x": grid_x.astype(">f8"), "y": grid_y, "u": np.asfortranarray(values)}), "npz big-endian axis"),
        (_npz({"x": np.array(1.0), "y": grid_y, "u": values}), "npz with a scalar axis"),
        (_npz({}), "empty npz"),
        (_npy_header((5,)) + grid_x.tobytes(), "a single .npy, not npz"),
        (b"PK\x03\x04" + bytes(100), "zip header and zeros"),
    ])


def _csv_specials() -> st.SearchStrategy[tuple[bytes, str]]:
    header = b"x,z,N\n"

    def scattered(count: int) -> bytes:
        generator = np.random.default_rng(count)
        points = generator.uniform(0, 1, (count, 3))
        return header + "\n".join(f"{a!r},{b!r},{c!r}" for a, b, c in points).encode()

    return st.one_of(
        st.sampled_from([
            (b"z,N\n0,1\n1,text\n2,3\n", "CSV with text in a number column"),
            (b"z,N\n0,nan\n1,NaN\n2,3\n", "CSV with NaN values"),
            (b"z,N\nnan,1\n1,2\n2,3\n", "CSV with a NaN coordinate"),
            (b"z,N\n0,inf\n1,-inf\n2,1e400\n", "CSV with infinite numbers"),
            (b"z,N\n0,1e308\n1e308,1\n1.7976931348623157e308,2\n", "CSV with huge numbers"),
            (b"z,N\n0,1\n1\n2,3,4\n", "CSV with ragged rows"),
            (b"z,N\n" + b"0," + b"1" * 100_000 + b"\n1,2\n2,3\n", "CSV with a 100,000-digit number"),
            (b"z," + b",".join(b"c%d" % i for i in range(50_000)) + b"\n", "CSV header of 50,000 columns"),
            (b"z,N\n0,1\x00\n1,2\n2,3\n", "CSV with a NUL byte"),
            (b"z,N\n0,1\n1,\xff\xfe\n", "CSV that is not UTF-8"),
            (b"\xef\xbb\xbfz,N\n0,1\n1,2\n2,3\n", "CSV with a byte-order mark"),
            (b"z,N\n", "CSV with only a header"),
            (b"", "empty CSV"),
            (b"# only a comment\n", "CSV of comments"),
            (b"z,z\n0,1\n1,2\n", "CSV repeating a column"),
            (b'z,"N\n2"\n0,1\n1,2\n', "CSV with a quoted line break in the header"),
            (b"z,\x1b[2J\n0,1\n1,2\n2,3\n", "CSV with an escape sequence in the header"),
            (b"z,N\n" + b"0,1\n" * 3, "CSV with repeated coordinates"),
            (b"z,N\n" + b"".join(b"%d,1\n" % i for i in range(200_000)), "CSV with 200,000 rows"),
            (b"x,z,N\n0,0,1\n1,0,2\n0,1,3\n1,1,4\n1,1,5\n", "CSV grid with a repeated point"),
        ]),
        st.sampled_from((100, 1000, 4000, 10_000, 40_000)).map(lambda n: (scattered(n), f"CSV of {n} scattered points")),
    )


_VTU_HEAD = b'<?xml version="1.0"?>\n'


def _vtu_specials() -> st.SearchStrategy[tuple[bytes, str]]:
    original = _originals()["vtu"]
    laughs = (b'<?xml version="1.0"?>\n<!DOCTYPE VTKFile [<!ENTITY a "aaaaaaaaaa">'
              + b"".join(b'<!ENTITY %c "%s">' % (98 + i, (b"&%c;" % (97 + i)) * 10) for i in range(9))
              + b']>\n<VTKFile type="UnstructuredGrid" version="0.1"><UnstructuredGrid><Piece NumberOfPoints="1" '
                b'NumberOfCells="0">&j;</Piece></UnstructuredGrid></VTKFile>\n')
    external = (b'<?xml version="1.0"?>\n<!DOCTYPE VTKFile [<!ENTITY secret SYSTEM "file://'
                + CANARY_PLACEHOLDER.encode() + b'">]>\n<VTKFile type="UnstructuredGrid" version="0.1">'
                b'<UnstructuredGrid><Piece NumberOfPoints="1" NumberOfCells="0">&secret;</Piece></UnstructuredGrid>'
                b'</VTKFile>\n')
    return st.sampled_from([
        (laughs, "VTU with nested entity expansion"),
        (external, "VTU with an external entity naming the canary"),
        (original.replace(b'NumberOfPoints="3036"', b'NumberOfPoints="999999999999"'), "VTU declaring 10^12 points"),
        (original.replace(b'NumberOfCells="5704"', b'NumberOfCells="4000000000"'), "VTU declaring 4e9 cells"),
        (original.replace(b'NumberOfComponents="3"', b'NumberOfComponents="100000000"', 1),
         "VTU declaring 10^8 components"),
        (original.replace(b"AwAAAACAAAC", b"!!!!AAAAAAA", 1), "VTU with broken base64"),
        (original.replace(b'compressor="vtkZLibDataCompressor"', b'compressor="vtkLZ4DataCompressor"'),
         "VTU naming another compressor"),
        (original.replace(b'format="binary"', b'format="appended" offset="99999999999"', 1),
         "VTU with an appended offset past the end"),
        (_VTU_HEAD + b"<VTKFile>" * 100_000, "VTU nested 100,000 deep"),
        (b"# vtk DataFile Version 4.2\nx\nASCII\nDATASET UNSTRUCTURED_GRID\nPOINTS 999999999999 double\n",
         "legacy VTK declaring 10^12 points"),
    ])


def _netcdf_specials() -> st.SearchStrategy[tuple[bytes, str]]:
    classic = _originals()["netcdf"]
    # the first dimension's length follows its name "depth" (padded to 8 bytes) in the classic header
    at = classic.index(b"depth") + 8
    huge_dimension = classic[:at] + b"\x7f\xff\xff\xff" + classic[at + 4:]
    return st.sampled_from([
        (huge_dimension, "classic NetCDF declaring a dimension of 2^31 - 1"),
        (classic[:at] + b"\x00\x00\x00\x00" + classic[at + 4:], "classic NetCDF with a dimension of 0"),
        (_originals()["netcdf4"], "NetCDF-4 (HDF5) profile"),
        (b"CDF\x01" + bytes(4) + b"\x00\x00\x00\x0a" + b"\xff" * 8, "classic NetCDF header of 0xff"),
        (b"\x89HDF\r\n\x1a\n" + bytes(200), "HDF5 signature and zeros"),
    ])


def _generic(kind: str) -> st.SearchStrategy[tuple[bytes, str]]:
    original = _originals()[kind]

    def truncated(fraction: float) -> tuple[bytes, str]:
        return original[: int(len(original) * fraction)], f"{kind} truncated to {fraction:.0%}"

    def flipped(positions: list[int], masks: list[int]) -> tuple[bytes, str]:
        data = bytearray(original)
        for position, mask in zip(positions, masks, strict=False):
            data[position % len(data)] ^= mask
        return bytes(data), f"{kind} with {len(positions)} flipped bytes at {positions[:3]}"

    def inserted(position: int, extra: bytes) -> tuple[bytes, str]:
        spot = position % len(original)
        return original[:spot] + extra + original[spot:], f"{kind} with {len(extra)} bytes inserted at {spot}"

    return st.one_of(
        st.floats(0, 1).map(truncated),
        st.builds(flipped, st.lists(st.integers(0, 10**6), min_size=1, max_size=20),
                  st.lists(st.integers(1, 255), min_size=20, max_size=20)),
        st.builds(inserted, st.integers(0, 10**6), st.binary(min_size=1, max_size=64)),
    )


def _files_for(kind: str) -> st.SearchStrategy[tuple[str, bytes, str]]:
    """(target format, corrupted bytes, description)."""
    specials = {"csv": _csv_specials, "npz": _npz_specials, "vtu": _vtu_specials, "netcdf": _netcdf_specials}
    generic = _generic("netcdf4" if kind == "netcdf4" else kind)
    target = "netcdf" if kind == "netcdf4" else kind
    chosen = st.one_of(generic, specials[kind]()) if kind in specials else generic
    return chosen.map(lambda pair: (target, pair[0], pair[1]))


@cache
def _demo_project(name: str) -> dict:
    return json.loads((bundled_path("demo") / f"{name}.mixtype.json").read_text(encoding="utf-8"))


def _case(target: str, data: bytes, description: str, command: str) -> Case:
    project_name, data_path, quantity, variables = _TARGETS[target]
    project = json.loads(json.dumps(_demo_project(project_name)))
    project["data_sources"][0]["path"] = data_path
    files = ((data_path, data),)
    if command == "data":
        argv = ("classify", "--vars", *variables, "--a=1", "--b=0", f"--c={quantity}", "--domain", "0", "1", "-1", "1",
                "--grid", "8", "--data", data_path, "--json")
    else:
        files += (("case.mixtype.json", json.dumps(project).encode()),)
        argv = {"check": ("check", "case.mixtype.json", "--json"),
                "classify": ("classify", "case.mixtype.json", "--grid", "8", "--json"),
                "probe": ("probe", "case.mixtype.json", "--json")}[command]
    return Case("data", argv, files, description)


def data_cases() -> st.SearchStrategy[Case]:
    """Cases reading one corrupted data file through a demo project (check, classify, probe) or --data."""
    kinds = st.sampled_from(("csv", "npz", "vtu", "vtk", "netcdf", "netcdf4"))
    return st.builds(lambda chosen, command: _case(*chosen, command),
                     kinds.flatmap(_files_for), st.sampled_from(("check", "check", "classify", "probe", "data")))
