"""The grid and mesh demos of one flow (resources/demo/bump_flow_*_data) agree as their notes say.

Both data files sample the full_potential template's default flow over the bump (resources/demo/make_data.py).
On the demos' own map the mesh, whose nodes lie on the wall, gives the formula's pocket to a ring of nodes; the
grid loses the band of data cells cut by the wall (undefined: bilinear interpolation needs four corners and the
bump holds NaN), and only that band.
"""

from __future__ import annotations

import numpy as np
import pytest

from core.analysis.classify import TypeCode, classify_grid
from core.analysis.pockets import pocket_statistics
from core.equations.compiled import compile_equation
from core.equations.templates import load_template
from core.project.data_files import compile_with_data, open_project_data
from core.project.io import load_project
from core.project.model import demo_project_path

RADIUS, DATA_CELL = 1.0, 0.05       # the bump's radius and the grid file's spacing (m), make_data.py


def _demo_map(name: str):
    path = demo_project_path(name)
    project = load_project(path)
    data = open_project_data(project, path)
    equation, domain = project.shown()
    compiled = compile_with_data(equation, data)
    type_map = classify_grid(compiled, domain, data=data.sources, tolerance=project.view.parabolic_tolerance)
    (pocket,) = pocket_statistics(compiled, type_map, quantity="M", data=data.sources)
    return project, type_map, pocket


@pytest.fixture(scope="module")
def maps():
    grid = _demo_map("bump_flow_grid_data")
    mesh = _demo_map("bump_flow_mesh_data")
    template = load_template("full_potential")
    compiled = compile_equation(template.equation)
    domain = grid[1].domain
    exact = classify_grid(compiled, domain, tolerance=grid[0].view.parabolic_tolerance)
    (exact_pocket,) = pocket_statistics(compiled, exact, quantity="M")
    return grid, mesh, (exact, exact_pocket)


def test_the_demos_sample_the_same_flow_on_the_same_map(maps):
    (grid_project, grid_map, _), (mesh_project, mesh_map, _), _ = maps
    assert grid_map.domain == mesh_map.domain
    assert grid_project.equations[0].a == mesh_project.equations[0].a
    assert grid_project.equations[0].parameters == mesh_project.equations[0].parameters


def test_mesh_pocket_matches_the_formula(maps):
    _, (_, mesh_map, mesh), (exact_map, exact) = maps
    dx, dy = mesh_map.domain.spacing
    # the sonic line moves by interpolation, a ring of nodes at most: perimeter (about 2 m) times a node
    assert abs(mesh.area - exact.area) <= 2.0 * max(dx, dy) * 0.25
    assert mesh.area == pytest.approx(0.146, abs=0.002)                    # what the demos' notes say
    # the peak sits on the crest (0, 1); the mesh's arc nodes straddle it: linear interpolation, 0.1 %
    # exact: M = 2 U / c there, isentropic c (common practice, no source)
    assert exact.peak == pytest.approx(1.21586, abs=1e-5)
    assert mesh.peak == pytest.approx(exact.peak, rel=1e-3)
    assert np.hypot(*mesh.peak_at) == pytest.approx(RADIUS, abs=dy)
    undefined = (mesh_map.codes == TypeCode.UNDEFINED) & (exact_map.codes != TypeCode.UNDEFINED)
    assert not undefined.any()                            # the mesh defines the whole flow region


def test_grid_pocket_lacks_only_the_cut_cells_along_the_wall(maps):
    (_, grid_map, grid), (_, mesh_map, mesh), _ = maps
    assert grid.area == pytest.approx(0.131, abs=0.002)                    # what the demos' notes say
    assert 0.85 * mesh.area < grid.area < 0.95 * mesh.area
    assert grid.peak == pytest.approx(mesh.peak, rel=1e-3)
    x, y = np.meshgrid(grid_map.x, grid_map.y)
    r = np.hypot(x, y)
    hyperbolic_mesh = mesh_map.codes == TypeCode.HYPERBOLIC
    lost = hyperbolic_mesh & (grid_map.codes == TypeCode.UNDEFINED)
    assert lost.sum() > 10                                                 # a real band is explained
    assert np.all(r[lost] < RADIUS + DATA_CELL * np.sqrt(2))               # within a data cell of the wall
    # where both define the flow, both have the same pocket but for nodes by the sonic line
    both = grid_map.codes != TypeCode.UNDEFINED
    differ = both & ((grid_map.codes == TypeCode.HYPERBOLIC) != hyperbolic_mesh)
    assert differ.sum() <= 6
