"""The demo projects load, show a mixed-type map, and their zones agree with the physics they illustrate."""

from __future__ import annotations

import numpy as np
import pytest

from core.analysis.classify import TypeCode, classify_grid, classify_points
from core.project.data_files import compile_with_data, open_project_data
from core.project.io import dumps_project, load_project
from core.project.model import demo_project_names, demo_project_path

RADIUS = 1.0  # the bump of the flow demos (resources/demo/make_data.py)


def _opened(name):
    project = load_project(demo_project_path(name))
    data = open_project_data(project, demo_project_path(name))
    assert data.ok and data.changed == (), (data.problems, data.changed)
    return project, data


def _shown(name):
    project, data = _opened(name)
    equation, domain = project.shown()
    return project, compile_with_data(equation, data), domain, data.sources


def test_the_default_demo_is_the_transonic_bump():
    assert demo_project_path() == demo_project_path("transonic_bump.mixtype.json")
    assert demo_project_path().name == "transonic_bump.mixtype.json"
    assert {"transonic_bump", "ocean_turning_depth", "tricomi"} <= set(demo_project_names())
    with pytest.raises(FileNotFoundError, match="no demo project named 'nothing'"):
        demo_project_path("nothing")


@pytest.mark.parametrize("name", demo_project_names())
def test_every_demo_loads_and_shows_a_mixed_type_map(name):
    project, data = _opened(name)
    assert dumps_project(project) == demo_project_path(name).read_text(encoding="utf-8")
    shown_domain = project.shown()[1]
    for equation in project.equations:
        compiled = compile_with_data(equation, data)
        fractions = classify_grid(compiled, shown_domain, data=data.sources).fractions
        assert fractions["elliptic"] > 0 and fractions["hyperbolic"] > 0, equation.name
        for domain in project.domains:  # other domains may zoom into one zone, but all are defined...
            type_map = classify_grid(compiled, domain, data=data.sources)
            undefined = type_map.codes == TypeCode.UNDEFINED
            if name.startswith("bump_flow"):  # ...except inside the bump, where the data hold no flow
                # (and within a data cell of it: 0.05 m grid, diagonal 0.071 m; 0.04 m mesh cells near it)
                x, y = np.meshgrid(type_map.x, type_map.y)
                assert np.all(np.hypot(x, y)[undefined] < RADIUS + 0.08), name
            else:
                assert not undefined.any(), name


@pytest.mark.parametrize("name", [n for n in demo_project_names() if load_project(demo_project_path(n)).data_sources])
def test_data_demos_record_their_files_beside_them(name):
    project = load_project(demo_project_path(name))
    (source,) = project.data_sources
    assert source.path.startswith("data/") and (demo_project_path(name).parent / source.path).is_file()


@pytest.mark.parametrize("name", demo_project_names())
def test_pin_labels_name_the_type_found_there(name):
    project, compiled, _, data = _shown(name)
    words = {"elliptic": TypeCode.ELLIPTIC, "evanescent": TypeCode.ELLIPTIC, "subsonic": TypeCode.ELLIPTIC,
             "hyperbolic": TypeCode.HYPERBOLIC, "propagate": TypeCode.HYPERBOLIC,
             "supersonic": TypeCode.HYPERBOLIC, "parabolic": TypeCode.PARABOLIC}
    checked = 0
    for pin in project.pins:
        expected = [code for word, code in words.items() if word in pin.label]
        if expected:
            codes, _ = classify_points(compiled, np.array([pin.x]), np.array([pin.y]), data=data)
            assert codes[0] == expected[0], pin
            checked += 1
    assert checked >= 2
    for seed in project.seeds:  # characteristics start where there are characteristics
        points = seed.points()
        codes, _ = classify_points(compiled, points[:, 0], points[:, 1], data=data)
        assert np.all(codes == TypeCode.HYPERBOLIC), seed


def test_tricomi_demo_type_is_the_sign_of_y():
    # Tricomi equation y u_xx + u_yy = 0: D = -4y (closed form, common practice, no source)
    _, compiled, domain, _ = _shown("tricomi")
    type_map = classify_grid(compiled, domain)
    y = type_map.y[:, None] * np.ones_like(type_map.x)[None, :]
    expected = np.where(y > 0, TypeCode.ELLIPTIC, np.where(y < 0, TypeCode.HYPERBOLIC, TypeCode.PARABOLIC))
    np.testing.assert_array_equal(type_map.codes, expected)


def test_transonic_demo_is_hyperbolic_exactly_where_the_flow_is_supersonic():
    # full potential equation: D = 4 u^2 v^2 - 4 (c^2 - u^2)(c^2 - v^2) = 4 c^2 (q^2 - c^2), so the type is
    # hyperbolic where the local Mach number exceeds one (common practice, no source). The speed of sound
    # follows the energy equation of isentropic flow, c^2 = c0^2 - (gamma - 1)/2 q^2, the relation behind the
    # tables of NACA Report 1135 (from memory).
    project, compiled, domain, _ = _shown("transonic_bump")
    p = project.shown()[0].parameter_values()
    type_map = classify_grid(compiled, domain)
    x, y = np.meshgrid(type_map.x, type_map.y)
    bump = np.exp(-(x / p["width"]) ** 2)
    decay = 1.0 / (1.0 + (y / p["width"]) ** 2)
    u = 1.0 + 2.0 * (p["height"] / p["width"]) * bump * decay
    v = -2.0 * p["height"] * x / p["width"] ** 2 * bump * decay
    c2 = 1.0 / p["mach"] ** 2 + (p["gamma"] - 1.0) / 2.0 * (1.0 - u * u - v * v)
    mach2 = (u * u + v * v) / c2
    clear = np.abs(mach2 - 1.0) > 1e-9
    supersonic = type_map.codes == TypeCode.HYPERBOLIC
    np.testing.assert_array_equal(supersonic[clear], mach2[clear] > 1.0)
    # a pocket on the crest, closed by the sonic line: no supersonic node on the outer edges
    assert supersonic[0, np.argmin(np.abs(type_map.x))]
    assert not supersonic[:, 0].any() and not supersonic[:, -1].any() and not supersonic[-1, :].any()
    # the slider range of the free-stream Mach number reaches below the critical Mach number
    low = project.shown()[0].parameters["mach"].minimum
    assert classify_grid(compiled, domain, parameters={"mach": low}).fractions["hyperbolic"] == 0


def test_ocean_demo_changes_type_at_the_turning_depths():
    # (N^2 - omega^2) psi_xx + (f^2 - omega^2) psi_zz = 0 with f < omega: hyperbolic where N > omega, elliptic
    # where N < omega; turning depths where N(z) = omega (common practice, no source)
    project, compiled, domain, _ = _shown("ocean_turning_depth")
    p = project.shown()[0].parameter_values()
    assert p["f"] < p["omega"]
    # below the mixed layer N = N0 exp(z / scale_depth), so the deep turning depth is scale_depth ln(omega/N0)
    deep = p["scale_depth"] * np.log(p["omega"] / p["N0"])
    z = np.array([deep - 1.0, deep + 1.0, -p["mixed_layer"] - 5 * p["transition"], -p["mixed_layer"] / 2])
    codes, _ = classify_points(compiled, np.full(4, 1000.0), z)
    assert list(codes) == [TypeCode.ELLIPTIC, TypeCode.HYPERBOLIC, TypeCode.HYPERBOLIC, TypeCode.ELLIPTIC]
    type_map = classify_grid(compiled, domain)
    column = type_map.codes[:, 0]
    assert np.all(type_map.codes == column[:, None])  # the type depends on depth only
    changes = np.flatnonzero(np.diff(column.astype(int)) != 0)
    assert len(changes) == 2  # two turning depths: one in the abyss, one under the mixed layer
    assert type_map.y[changes[0]] <= deep <= type_map.y[changes[0] + 1]
