"""Regenerate the demo data files in resources/demo/data/ (deterministic: same bytes on every run).

    python resources/demo/make_data.py

Two invented scenarios, each written in two formats from the same formulas:

- bump_flow.npz / bump_flow.vtu: the incompressible potential flow over a circular bump of radius 1 m on the
  wall y = 0 (a cylinder's flow, upper half), free-stream Mach 0.55 with stagnation sound speed 340.3 m/s and
  gamma = 1.4: the full_potential template's default flow, so its sonic pocket on the crest can be compared
  with the formula's. The .npz is a 121 x 61 grid (NaN inside the bump); the .vtu a triangle mesh of the
  flow region only, with a point vector "velocity" and the isentropic pressure ratio "p_ratio".
- stratification_profile.csv / .nc: a buoyancy-frequency profile N(z) of a thermocline 120 m deep over a
  weakly stratified deep ocean, with a small fixed-seed roughness standing in for a cast's noise. The CSV
  column z points up (negative below the surface); the CF NetCDF file uses depth (positive down, axis Z).
"""

from __future__ import annotations

import io
import pathlib
import zipfile

import numpy as np

OUT = pathlib.Path(__file__).resolve().parent / "data"
GAMMA, C0, MINF, RADIUS = 1.4, 340.3, 0.55, 1.0


def bump_velocity(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Velocity (m/s) of the flow over the bump; NaN inside it."""
    c_inf = C0 / np.sqrt(1 + (GAMMA - 1) / 2 * MINF**2)
    speed = MINF * c_inf
    r2 = x**2 + y**2
    with np.errstate(all="ignore"):
        u = speed * (1 - RADIUS**2 * (x**2 - y**2) / r2**2)
        v = -2 * speed * RADIUS**2 * x * y / r2**2
    solid = r2 < RADIUS**2
    return np.where(solid, np.nan, u), np.where(solid, np.nan, v)


def write_npz(path: pathlib.Path, arrays: dict[str, np.ndarray]) -> None:
    """An .npz archive with fixed member dates, so the bytes do not depend on the time of writing."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for name, array in arrays.items():
            member = io.BytesIO()
            np.lib.format.write_array(member, np.ascontiguousarray(array), allow_pickle=False)
            info = zipfile.ZipInfo(f"{name}.npy", date_time=(2024, 1, 1, 0, 0, 0))
            info.compress_type = zipfile.ZIP_DEFLATED
            archive.writestr(info, member.getvalue())
    path.write_bytes(buffer.getvalue())


def bump_mesh(coarse: float = 0.1, fine: float = 0.04) -> tuple[np.ndarray, np.ndarray]:
    """Points (n, 2) and triangles (m, 3) covering [-3, 3] x [0, 3] outside the bump, finer near it."""
    from scipy.spatial import Delaunay

    def lattice(x0, x1, y0, y1, step):
        gx, gy = np.meshgrid(np.arange(x0, x1 + step / 2, step), np.arange(y0, y1 + step / 2, step))
        return np.column_stack([gx.ravel(), gy.ravel()])

    box = (-1.2, 1.2, 0.0, 1.6)                          # the fine region around the crest
    outer = lattice(-3.0, 3.0, 0.0, 3.0, coarse)
    outer = outer[~((outer[:, 0] > box[0]) & (outer[:, 0] < box[1]) & (outer[:, 1] < box[3]))]
    inner = lattice(*box, fine)
    grid = np.vstack([outer, inner])
    grid = grid[np.hypot(grid[:, 0], grid[:, 1]) > RADIUS + 0.5 * fine]
    count = int(np.ceil(np.pi * RADIUS / fine))
    angle = np.linspace(0, np.pi, count + 1)
    arc = np.column_stack([RADIUS * np.cos(angle), RADIUS * np.sin(angle)])
    # On the wall, not a rounding error inside it: bump_velocity is NaN where x^2 + y^2 < R^2, and a NaN
    # corner would leave every triangle on the wall undefined.
    for _ in range(4):
        low = np.sum(arc**2, axis=1) < RADIUS**2
        arc[low] *= 1 + 2.0**-52
    points = np.vstack([arc, grid])
    triangles = Delaunay(points).simplices
    corners = points[triangles]
    midpoints = np.concatenate([(corners + np.roll(corners, 1, axis=1)) / 2, corners.mean(axis=1)[:, None]],
                               axis=1)
    # The midpoint of a chord between neighbouring arc nodes lies inside the circle by the chord's sagitta,
    # R (1 - cos(step / 2)) (about 2e-4 m here): a test against R itself would drop every triangle resting on
    # the wall and leave the flow's fastest layer, at the crest, outside the mesh. Chords that skip an arc node
    # (triangles across the solid) lie deeper and are still dropped.
    chord = RADIUS * np.cos(0.5 * np.pi / count)
    outside = np.all(np.hypot(midpoints[..., 0], midpoints[..., 1]) > chord * (1 - 1e-9), axis=1)
    return points, triangles[outside]


def stratification(z: np.ndarray) -> np.ndarray:
    """N(z) in rad/s for z <= 0 (m, up): thermocline peak 0.011 rad/s at 120 m, rough to a few percent."""
    thermocline = 0.011 * np.exp(-(((z + 120.0) / 35.0) ** 2))
    deep = 0.0016 * np.exp(z / 900.0) * (1 - np.exp(z / 15.0))      # mixed layer: N falls to 0 at the top
    roughness = 1 + 0.03 * np.random.default_rng(20240101).standard_normal(z.size)
    return (thermocline + deep) * roughness


def main() -> None:
    OUT.mkdir(parents=True, exist_ok=True)
    x = np.linspace(-3.0, 3.0, 121)
    y = np.linspace(0.0, 3.0, 61)
    u, v = bump_velocity(x[np.newaxis, :], y[:, np.newaxis])
    write_npz(OUT / "bump_flow.npz", {"x": x, "y": y, "u": u, "v": v})

    import meshio

    points, triangles = bump_mesh()
    pu, pv = bump_velocity(points[:, 0], points[:, 1])
    c2 = C0**2 - (GAMMA - 1) / 2 * (pu**2 + pv**2)
    p_ratio = (1 + (GAMMA - 1) / 2 * (pu**2 + pv**2) / c2) ** (-GAMMA / (GAMMA - 1))
    mesh = meshio.Mesh(np.column_stack([points, np.zeros(len(points))]), [("triangle", triangles)],
                       point_data={"velocity": np.column_stack([pu, pv, np.zeros(len(points))]),
                                   "p_ratio": p_ratio})
    meshio.write(OUT / "bump_flow.vtu", mesh, binary=True)

    z = np.linspace(-1000.0, 0.0, 201)
    n = np.array([float(f"{value:.6e}") for value in stratification(z)])     # as written in the CSV
    n2 = np.array([float(f"{value * value:.6e}") for value in n])
    with open(OUT / "stratification_profile.csv", "w", encoding="utf-8", newline="\n") as handle:
        handle.write("# Invented buoyancy-frequency profile (a thermocline at 120 m), demo data.\n")
        handle.write("# z: height above the sea surface in m (negative below); N: rad/s; N2: rad^2/s^2\n")
        handle.write("z,N,N2\n")
        handle.writelines(f"{zi:.1f},{ni:.6e},{n2i:.6e}\n" for zi, ni, n2i in zip(z, n, n2, strict=True))

    import netCDF4

    depth = -z[::-1]                                   # 0 .. 1000 m, positive down
    with netCDF4.Dataset(OUT / "stratification_profile.nc", "w", format="NETCDF3_CLASSIC") as nc:
        nc.Conventions = "CF-1.8"
        nc.title = "Invented buoyancy-frequency profile (a thermocline at 120 m), demo data"
        nc.createDimension("depth", depth.size)
        coordinate = nc.createVariable("depth", "f8", ("depth",))
        coordinate.standard_name = "depth"
        coordinate.units = "m"
        coordinate.positive = "down"
        coordinate.axis = "Z"
        coordinate[:] = depth
        frequency = nc.createVariable("N", "f8", ("depth",))
        frequency.long_name = "buoyancy frequency"
        frequency.units = "rad s-1"
        frequency[:] = n[::-1]
        squared = nc.createVariable("N2", "f8", ("depth",))
        squared.long_name = "squared buoyancy frequency"
        squared.units = "rad2 s-2"
        squared[:] = n2[::-1]


if __name__ == "__main__":
    main()
