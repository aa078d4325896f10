"""Data quantities inside equations: several files as one source, and a flow given both as a formula and as
sampled data classified alike (the sonic line from data matches the formula's to interpolation accuracy)."""

import pathlib

import meshio
import numpy as np
import pytest
from scipy import ndimage

from core.analysis.classify import TypeCode, classify_grid
from core.data.sources import DataError, DataSources, load_data, parse_quantity_key
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation
from core.equations.templates import load_template

DEMO = pathlib.Path(__file__).resolve().parents[2] / "resources" / "demo" / "data"


def write_grid(path, x, y, **arrays):
    np.savez(path, x=x, y=y, **arrays)
    return path


def test_sources_combine_files_and_refuse_duplicate_names(tmp_path):
    x, y = np.linspace(0, 1, 11), np.linspace(0, 1, 11)
    a = load_data(write_grid(tmp_path / "a.npz", x, y, u=np.ones((11, 11))))
    b = load_data(write_grid(tmp_path / "b.npz", x, y, h=2 * np.ones((11, 11))))
    sources = DataSources([a, b])
    assert sources.names == ("u", "h")
    assert sources.sample("h", 0.5, 0.5) == 2.0
    assert sources.sample("diff(u, y)", 0.5, 0.5) == 0.0
    assert sources.checksums() == {a.path: a.checksum, b.path: b.checksum}
    again = load_data(tmp_path / "b.npz", names={"h": "u"})
    with pytest.raises(DataError, match=r"'u' is in both .*a\.npz and .*b\.npz"):
        DataSources([a, again])
    with pytest.raises(DataError, match="no data quantity 'w'"):
        sources.sample("w", 0.5, 0.5)
    with pytest.raises(DataError, match="not a variable"):
        a.sample("diff(u,z)", 0.5, 0.5)


def test_sources_refuse_files_loaded_for_other_variables(tmp_path):
    z = np.linspace(-10, 0, 5)
    np.savez(tmp_path / "p.npz", z=z, N=np.ones(5))
    grid = load_data(write_grid(tmp_path / "g.npz", z, z, u=np.ones((5, 5))))
    profile = load_data(tmp_path / "p.npz", variables=("x", "z"))
    with pytest.raises(DataError, match="same variables"):
        DataSources([grid, profile])


def test_quantity_keys():
    assert parse_quantity_key("u") == ("u", None)
    assert parse_quantity_key("diff(u,x)") == ("u", "x")
    assert parse_quantity_key("diff( phi , y )") == ("phi", "y")


def test_equation_with_data_and_derivatives(tmp_path):
    """An equation whose coefficient is a data quantity's derivative sees the finite-difference value."""
    x = np.linspace(-1, 1, 81)
    y = np.linspace(-1, 1, 81)
    path = write_grid(tmp_path / "phi.npz", x, y, phi=0.5 * x[None, :] ** 2 - y[:, None])   # phi_x = x
    sources = DataSources([load_data(path)])
    compiled = compile_equation(Equation("-diff(phi, x)", "0", "1"), data_names=sources.names)
    type_map = classify_grid(compiled, Domain(-1.5, 1.5, -1, 1, nx=61, ny=41), data=sources)
    codes = type_map.codes
    columns = type_map.x
    assert np.all(codes[:, columns < -1.0] == TypeCode.UNDEFINED)           # outside the data
    assert np.all(codes[:, (columns > 0.01) & (columns <= 1)] == TypeCode.HYPERBOLIC)
    assert np.all(codes[:, (columns < -0.01) & (columns >= -1)] == TypeCode.ELLIPTIC)


# -- one flow, two representations ------------------------------------------------------------------------
FLOW = load_template("full_potential")
FORMULA = compile_equation(FLOW.equation)
WITH_DATA = compile_equation(FLOW.equation_with_data(["u", "v"]), data_names=("u", "v"))
BOX = (-1.6, 1.6, 0.0, 1.8)      # around the supersonic pocket on the bump's crest


def formula_velocity(x, y):
    values = FORMULA.evaluate(x, y)
    return values["u"], values["v"]


def scaled_discriminant(compiled, x, y, data=None):
    """D / c0^4: smooth in the velocity (unlike D/(b^2 + 4|ac|), which has kinks where a or c vanish)."""
    a, b, c = compiled.coefficients(x, y, data=data)
    return (b * b - 4 * a * c) / FLOW.equation.parameters["c0"].value ** 4


def grid_source(tmp_path, h):
    x = np.arange(BOX[0], BOX[1] + h / 2, h)
    y = np.arange(BOX[2], BOX[3] + h / 2, h)
    u, v = formula_velocity(x[None, :], y[:, None])
    return DataSources([load_data(write_grid(tmp_path / f"flow_{h}.npz", x, y, u=u, v=v))])


def mesh_source(tmp_path, h):
    gx, gy = np.meshgrid(np.arange(BOX[0], BOX[1] + h / 2, h), np.arange(BOX[2], BOX[3] + h / 2, h))
    nx = gx.shape[1]
    i, j = np.meshgrid(np.arange(nx - 1), np.arange(gx.shape[0] - 1))
    c = (j * nx + i).ravel()
    triangles = np.vstack([np.column_stack([c, c + 1, c + nx + 1]), np.column_stack([c, c + nx + 1, c + nx])])
    u, v = formula_velocity(gx.ravel(), gy.ravel())
    points = np.column_stack([gx.ravel(), gy.ravel(), np.zeros(gx.size)])
    path = tmp_path / f"flow_{h}.vtu"
    meshio.write(path, meshio.Mesh(points, [("triangle", triangles)],
                                   point_data={"velocity": np.column_stack([u, v, 0 * u])}))
    return DataSources([load_data(path, names={"velocity_x": "u", "velocity_y": "v"})])


@pytest.mark.parametrize("make_source", [grid_source, mesh_source])
def test_discriminant_from_data_converges_to_the_formula_at_second_order(tmp_path, make_source):
    # random probes away from the bump (r > 1.15), so that every data cell used lies in the flow
    px, py = np.random.default_rng(11).uniform([-1.5, 0.0], [1.5, 1.7], size=(4000, 2)).T
    keep = np.hypot(px, py) > 1.15
    px, py = px[keep], py[keep]
    exact = scaled_discriminant(FORMULA, px, py)
    errors = []
    for h in (0.1, 0.05, 0.025):
        source = make_source(tmp_path, h)
        difference = scaled_discriminant(WITH_DATA, px, py, source) - exact
        errors.append(np.sqrt(np.mean(difference**2)))                # root-mean-square error
    ratios = np.array(errors[:-1]) / errors[1:]
    assert np.all(ratios > 3.5), (errors, ratios)
    assert errors[-1] < 5e-4


@pytest.mark.parametrize("make_source", [grid_source, mesh_source])
def test_types_from_data_differ_from_the_formula_only_next_to_the_sonic_line(tmp_path, make_source):
    source = make_source(tmp_path, 0.04)
    domain = Domain(*BOX, nx=161, ny=91)
    exact = classify_grid(FORMULA, domain)
    sampled = classify_grid(WITH_DATA, domain, data=source)
    both_defined = (exact.codes != TypeCode.UNDEFINED) & (sampled.codes != TypeCode.UNDEFINED)
    differ = both_defined & (exact.codes != sampled.codes)
    hyperbolic = exact.codes == TypeCode.HYPERBOLIC
    line = hyperbolic ^ ndimage.binary_erosion(hyperbolic) | ndimage.binary_dilation(hyperbolic) & ~hyperbolic
    near_line = ndimage.binary_dilation(line, iterations=2)          # within 2 nodes (0.04) of the line
    assert hyperbolic.sum() > 300                                   # a real pocket is compared
    assert not np.any(differ & ~near_line)
    assert differ.sum() < 0.1 * hyperbolic.sum()
    # undefined nodes of the data map: the bump (formula undefined too) and cells cut by it, nothing else
    extra_undefined = (sampled.codes == TypeCode.UNDEFINED) & (exact.codes != TypeCode.UNDEFINED)
    r = np.hypot(*np.meshgrid(exact.x, exact.y))
    assert np.all(r[extra_undefined] < 1.0 + 0.04 * 1.5)


# -- the demo files ---------------------------------------------------------------------------------------
def test_demo_bump_flow_files_hold_the_template_flow():
    grid = load_data(DEMO / "bump_flow.npz")
    x, y = grid.interpolator.x, grid.interpolator.y
    u, v = formula_velocity(x[None, :], y[:, None])
    assert np.array_equal(np.isnan(grid.interpolator.arrays["u"]), np.isnan(u))
    np.testing.assert_allclose(grid.interpolator.arrays["u"], u, rtol=1e-12)
    np.testing.assert_allclose(grid.interpolator.arrays["v"], v, rtol=1e-12, atol=1e-9)
    mesh = load_data(DEMO / "bump_flow.vtu", names={"velocity_x": "u", "velocity_y": "v", "p_ratio": "p"})
    points = mesh.interpolator.points
    u, v = formula_velocity(points[:, 0], points[:, 1])
    np.testing.assert_allclose(mesh.interpolator.arrays["velocity_x"], u, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(mesh.interpolator.arrays["velocity_y"], v, rtol=1e-12, atol=1e-9)
    for path in DEMO.iterdir():
        assert path.stat().st_size < 300_000, path


def test_demo_profiles_agree_and_have_turning_depths():
    csv = load_data(DEMO / "stratification_profile.csv", variables=("x", "z"))
    netcdf = load_data(DEMO / "stratification_profile.nc", variables=("x", "z"))
    z = np.linspace(-1000, 0, 301)
    for key in ("N", "N2", "diff(N,z)"):
        np.testing.assert_allclose(csv.sample(key, 0.0, z), netcdf.sample(key, 250.0, z), rtol=1e-12)
    n = csv.sample("N", 0.0, z)
    crossings = np.flatnonzero(np.diff(np.sign(n - 0.002)))           # N = w for the template's w
    assert len(crossings) >= 2
