"""Connected hyperbolic pockets: labels, areas, boxes, centroids and peaks against closed forms."""

import math
from dataclasses import replace

import numpy as np
import pytest

from core.analysis.classify import TypeCode, classify_grid
from core.analysis.pockets import node_areas, pocket_outline, pocket_statistics, pockets_and_labels
from core.analysis.run_labels import label_runs
from core.data.sources import DataSources, load_data
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.equations.templates import load_template
from core.progress import Cancelled


def disc_equation():
    """Hyperbolic inside the disc of radius r about (x0, y0): D = 4 (r^2 - distance^2).

    The radius puts no grid node on the circle, where D would vanish to rounding.
    """
    return Equation("1", "0", "-lift", definitions={"lift": "r**2 - (x - x0)**2 - (y - y0)**2"},
                    parameters={"r": Parameter(0.5031), "x0": Parameter(0.2), "y0": Parameter(-0.1)})


def test_node_areas_sum_to_the_rectangle():
    x = np.array([0.0, 0.1, 0.4, 1.0])
    y = np.linspace(-2, 3, 7)
    areas = node_areas(x, y)
    assert areas.shape == (7, 4)
    assert areas.sum() == pytest.approx(5.0)
    assert areas[0, 0] == pytest.approx(0.05 * 5 / 6 / 2)


@pytest.mark.parametrize("n", [101, 201])
def test_disc_pocket_area_centroid_box_and_peak(n):
    compiled = compile_equation(disc_equation())
    domain = Domain(-1, 1, -1, 1, nx=n, ny=n)
    type_map = classify_grid(compiled, domain)
    (pocket,) = pocket_statistics(compiled, type_map, quantity="lift")
    h = 2 / (n - 1)
    assert pocket.type == TypeCode.HYPERBOLIC and pocket.label == 1
    r = 0.5031
    assert abs(pocket.area - math.pi * r * r) < 2 * math.pi * r * h          # within a node of the circle
    assert pocket.centroid == pytest.approx((0.2, -0.1), abs=h / 4)
    box = pocket.bounding_box
    assert box[0] == pytest.approx(0.2 - r, abs=h) and box[1] == pytest.approx(0.2 + r, abs=h)
    assert box[2] == pytest.approx(-0.1 - r, abs=h) and box[3] == pytest.approx(-0.1 + r, abs=h)
    assert not pocket.touches_boundary
    assert pocket.peak == pytest.approx(r * r) and pocket.peak_at == pytest.approx((0.2, -0.1))
    assert pocket.node_count == type_map.count("hyperbolic")


def test_half_plane_area_is_exact_on_the_grid():
    # Tricomi: hyperbolic for y < 0; with a node row on y = 0 the trapezoid area below is 2 (1 - h/2)
    compiled = compile_equation(load_template("tricomi").equation)
    domain = Domain(-1, 1, -1, 1, nx=41, ny=41)
    (pocket,) = pocket_statistics(compiled, classify_grid(compiled, domain))
    assert pocket.area == pytest.approx(2 * (1 - 0.05 / 2))
    assert pocket.touches_boundary
    assert pocket.peak is None and pocket.quantity is None
    elliptic = pocket_statistics(compiled, classify_grid(compiled, domain), code="elliptic")
    assert elliptic[0].type == TypeCode.ELLIPTIC and elliptic[0].area == pytest.approx(pocket.area)


def test_pockets_are_sorted_by_area_and_match_the_label_array():
    equation = Equation("1", "0", "-max(big, small)",
                        definitions={"big": "0.1681 - (x + 0.5)**2 - y**2", "small": "0.0441 - (x - 0.5)**2 - y**2"})
    compiled = compile_equation(equation)
    type_map = classify_grid(compiled, Domain(-1, 1, -1, 1, nx=81, ny=81))
    pockets = pocket_statistics(compiled, type_map, quantity="big")
    assert [p.label for p in pockets] == [1, 2]
    assert pockets[0].area > pockets[1].area
    assert pockets[0].centroid[0] == pytest.approx(-0.5, abs=0.01)
    assert pockets[1].centroid[0] == pytest.approx(0.5, abs=0.01)
    assert pockets[0].peak == pytest.approx(0.1681)
    assert pockets[1].peak == pytest.approx(0.1681 - 0.8**2)       # "big" at the small pocket's node (0.3, 0)
    assert pockets[1].peak_at == pytest.approx((0.3, 0.0))
    same, labels = pockets_and_labels(compiled, type_map, quantity="big")
    assert [(p.label, p.area) for p in same] == [(p.label, p.area) for p in pockets] and labels.max() == 2
    for pocket in pockets:
        assert np.count_nonzero(labels == pocket.label) == pocket.node_count


def test_diagonal_neighbours_join_only_with_eight_connectivity():
    # hyperbolic in the first and third quadrants; an even node count puts no node on the axes
    compiled = compile_equation(Equation("1", "0", "-x*y"))
    type_map = classify_grid(compiled, Domain(-1, 1, -1, 1, nx=20, ny=20))
    assert len(pocket_statistics(compiled, type_map)) == 1
    assert len(pocket_statistics(compiled, type_map, connectivity=4)) == 2
    with pytest.raises(ValueError, match="connectivity"):
        pocket_statistics(compiled, type_map, connectivity=6)


def test_supersonic_pocket_peak_mach_number_on_the_bump():
    template = load_template("full_potential")
    compiled = compile_equation(template.equation)
    type_map = classify_grid(compiled, template.domain)
    (pocket,) = pocket_statistics(compiled, type_map, quantity=template.peak_quantity)
    # the crest (0, R) is a node; there q = 2U and M = 2U/c with c^2 = c0^2 - (gamma-1)/2 (2U)^2
    p = template.equation.parameter_values()
    speed = 2 * p["Minf"] * p["c0"] / math.sqrt(1 + (p["gamma"] - 1) / 2 * p["Minf"] ** 2)
    expected = speed / math.sqrt(p["c0"] ** 2 - (p["gamma"] - 1) / 2 * speed**2)
    assert pocket.peak == pytest.approx(expected, rel=1e-12)
    assert pocket.peak_at == pytest.approx((0.0, 1.0), abs=1e-12)
    assert pocket.centroid[0] == pytest.approx(0.0, abs=0.01)
    slower = pocket_statistics(compiled, classify_grid(compiled, template.domain, parameters={"Minf": 0.5}),
                               quantity="M")
    assert slower[0].area < pocket.area and slower[0].peak < pocket.peak


def test_peak_of_a_data_quantity_and_errors(tmp_path):
    x = y = np.linspace(-1, 1, 41)
    np.savez(tmp_path / "w.npz", x=x, y=y, w=np.exp(-(x[None, :] ** 2 + y[:, None] ** 2)))
    data = DataSources([load_data(tmp_path / "w.npz")])
    compiled = compile_equation(Equation("1", "0", "0.25 - w"), data_names=data.names)
    type_map = classify_grid(compiled, Domain(-1, 1, -1, 1, nx=41, ny=41), data=data)
    (pocket,) = pocket_statistics(compiled, type_map, quantity="w", data=data)
    assert pocket.peak == pytest.approx(1.0) and pocket.peak_at == pytest.approx((0.0, 0.0))
    with pytest.raises(ValueError, match="unknown quantity 'speed'"):
        pocket_statistics(compiled, type_map, quantity="speed", data=data)
    with pytest.raises(Cancelled):
        pocket_statistics(compiled, type_map, quantity="a", data=data, cancel=lambda: True)
    fractions = []
    pocket_statistics(compiled, type_map, quantity="c", data=data, progress=fractions.append)
    assert fractions[-1] == 1.0


def test_no_pocket_and_undefined_peaks():
    compiled = compile_equation(Equation("1", "0", "1", definitions={"hole": "sqrt(-1 - x**2)"}))
    type_map = classify_grid(compiled, Domain(0, 1, 0, 1, nx=5, ny=5))
    assert pocket_statistics(compiled, type_map) == ()
    compiled = compile_equation(Equation("1", "0", "-1", definitions={"hole": "sqrt(-1 - x**2)"}))
    type_map = classify_grid(compiled, Domain(0, 1, 0, 1, nx=5, ny=5))
    (pocket,) = pocket_statistics(compiled, type_map, quantity="hole")
    assert pocket.peak is None and pocket.peak_at is None and pocket.area == pytest.approx(1.0)


def test_pocket_outline_runs_half_way_to_the_neighbouring_nodes():
    # A 2 x 3 block of True nodes on a unit grid: its outline is the rectangle half a spacing outside it
    # (contourpy's level 0.5 between 1 and 0 lies midway; common practice, no source).
    x = np.arange(6.0)
    y = np.arange(5.0)
    mask = np.zeros((5, 6), dtype=bool)
    mask[1:3, 2:5] = True
    (outline,) = pocket_outline(mask, x, y)
    np.testing.assert_allclose(outline[0], outline[-1])                 # closed
    assert outline[:, 0].min() == 1.5 and outline[:, 0].max() == 4.5
    assert outline[:, 1].min() == 0.5 and outline[:, 1].max() == 2.5
    # A pocket on the domain's edge closes beyond the last node.
    edge = np.zeros((5, 6), dtype=bool)
    edge[0, 0] = True
    (corner,) = pocket_outline(edge, x, y)
    assert corner[:, 0].min() == -0.5 and corner[:, 1].min() == -0.5


def _reference_pockets(compiled, type_map, quantity, code, connectivity):
    """The straightforward computation: one boolean mask per scipy.ndimage label, numpy sums over it."""
    from scipy import ndimage

    structure = np.ones((3, 3), dtype=bool) if connectivity == 8 else None
    labels, count = ndimage.label(type_map.codes == TypeCode.coerce(code), structure=structure)
    weights = node_areas(type_map.x, type_map.y)
    xx, yy = np.meshgrid(type_map.x, type_map.y)
    values = None
    if quantity is not None:
        raw = compiled.evaluate_raw(xx, yy, prepared=compiled.prepare(compiled.parameter_vector(None)))
        values = np.broadcast_to(raw[quantity], xx.shape)
    found = []
    for label in range(1, count + 1):
        nodes = labels == label
        rows, columns = np.nonzero(nodes)
        area = weights[nodes].sum()
        peak = peak_at = None
        if values is not None:
            finite = np.isfinite(values) & nodes
            if finite.any():
                peak = values[finite].max()
                last = np.flatnonzero((values == peak) & finite)[-1]          # ties: the last node in scan order
                peak_at = (xx.flat[last], yy.flat[last])
        found.append({"node_count": int(nodes.sum()), "area": area,
                      "centroid": ((weights * xx)[nodes].sum() / area, (weights * yy)[nodes].sum() / area),
                      "bounding_box": (type_map.x[columns.min()], type_map.x[columns.max()],
                                       type_map.y[rows.min()], type_map.y[rows.max()]),
                      "touches_boundary": bool(rows.min() == 0 or columns.min() == 0
                                               or rows.max() == labels.shape[0] - 1
                                               or columns.max() == labels.shape[1] - 1),
                      "peak": peak, "peak_at": peak_at})
    return sorted(found, key=lambda pocket: -pocket["area"])            # stable: ties stay in scan order


@pytest.mark.parametrize(("equation", "domain", "quantity", "code", "connectivity"), [
    # many pockets of every size, inside and on the edge, on a grid that is not square
    (Equation("1", "0", "-w", definitions={"w": "sin(7*x)*sin(5*y) + 0.1*cos(11*x*y) - 0.3"}),
     Domain(-1, 1.3, -0.7, 1, nx=97, ny=61), "w", "hyperbolic", 8),
    (Equation("1", "0", "-w", definitions={"w": "sin(7*x)*sin(5*y) + 0.2*cos(11*x*y)"}),
     Domain(-1, 1.3, -0.7, 1, nx=97, ny=61), "w", "elliptic", 4),
    # a constant quantity: every node ties, the peak is the pocket's last node in scan order
    (Equation("1", "0", "-x*y"), Domain(-1, 1, -1, 1, nx=20, ny=31), "a", "hyperbolic", 4),
    # an undefined band, and a pocket whose quantity is NaN everywhere beside one with a finite peak
    (Equation("sqrt(y + 0.9)", "0", "-x*y", definitions={"q": "sqrt(x)*cos(9*y)"}),
     Domain(-1, 1.2, -1, 1, nx=64, ny=64), "q", "hyperbolic", 4),
])
@pytest.mark.parametrize("labelled_on", ["runs", "nodes"])
def test_pockets_match_a_per_label_reference(monkeypatch, equation, domain, quantity, code, connectivity,
                                             labelled_on):
    # blocks of a few rows, so that sums and peaks are carried across blocks
    monkeypatch.setattr("core.analysis.pockets._CHUNK", 3 * domain.nx + 5)
    if labelled_on == "nodes":                   # the way maps with very many runs go: scipy.ndimage.label
        monkeypatch.setattr("core.analysis.pockets._run_budget", lambda nodes: 0)
    compiled = compile_equation(equation)
    type_map = classify_grid(compiled, domain)
    pockets = pocket_statistics(compiled, type_map, quantity=quantity, code=code, connectivity=connectivity)
    expected = _reference_pockets(compiled, type_map, quantity, code, connectivity)
    assert len(pockets) == len(expected) >= 1
    same, labels = pockets_and_labels(compiled, type_map, quantity=quantity, code=code, connectivity=connectivity)
    assert [(p.label, p.area) for p in same] == [(p.label, p.area) for p in pockets]
    assert labels.max() == len(pockets)
    for number, (pocket, reference) in enumerate(zip(pockets, expected), start=1):
        assert pocket.label == number
        assert pocket.node_count == reference["node_count"] == np.count_nonzero(labels == number)
        assert pocket.area == pytest.approx(reference["area"], rel=1e-13)
        assert pocket.centroid == pytest.approx(reference["centroid"], rel=1e-12, abs=1e-14)
        assert pocket.bounding_box == reference["bounding_box"]
        assert pocket.touches_boundary == reference["touches_boundary"]
        assert pocket.peak == reference["peak"] and pocket.peak_at == reference["peak_at"]


def test_noise_is_labelled_node_by_node_and_agrees_with_runs(monkeypatch):
    # pure noise: more runs than one in 32 nodes, so scipy.ndimage.label labels it node by node
    compiled = compile_equation(Equation("1", "0", "-1"))
    type_map = classify_grid(compiled, Domain(-1, 1, -0.5, 2, nx=90, ny=70))
    noise = np.random.default_rng(3).random(type_map.codes.shape) < 0.45
    type_map = replace(type_map, codes=np.where(noise, TypeCode.HYPERBOLIC, TypeCode.ELLIPTIC).astype(np.int8))
    monkeypatch.setattr("core.analysis.pockets._FEWEST_RUNS_LABELLED", 0)
    found = []
    monkeypatch.setattr("core.analysis.pockets.label_runs",
                        lambda *args, **options: found.append(label_runs(*args, **options)) or found[-1])
    by_nodes, labels_by_nodes = pockets_and_labels(compiled, type_map)
    assert found == [None]                        # past the budget: labelled node by node
    monkeypatch.setattr("core.analysis.pockets._run_budget", lambda nodes: nodes)
    by_runs, labels_by_runs = pockets_and_labels(compiled, type_map)
    assert found[-1] is not None and len(by_runs) > 50
    np.testing.assert_array_equal(labels_by_runs, labels_by_nodes)
    for on_runs, on_nodes in zip(by_runs, by_nodes, strict=True):
        assert on_runs.label == on_nodes.label and on_runs.node_count == on_nodes.node_count
        assert on_runs.area == pytest.approx(on_nodes.area, rel=1e-14)
        assert on_runs.centroid == pytest.approx(on_nodes.centroid, rel=1e-13, abs=1e-15)
        assert on_runs.bounding_box == on_nodes.bounding_box
