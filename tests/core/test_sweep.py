"""Parameter sweeps (core.analysis.sweep): areas against closed forms, fractions equal to classify's to the bit.

The closed forms are elementary geometry, derived beside each study (common practice, no source). With a = 1,
b = 0 the discriminant is D = b^2 - 4ac = -4c, so the equation is hyperbolic exactly where c < 0.
"""

import math

import numpy as np
import pytest

import core.analysis.zone_polygons as zones
from core.analysis.classify import classify_grid
from core.analysis.sweep import MAX_SWEEP_VALUES, run_sweep, sweep_values, zone_areas
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.progress import Cancelled
from core.project.model import demo_project_path
from tests.core.cli_runner import run_json

BUMP = str(demo_project_path("transonic_bump"))


def _sweep(c: str, box, n: tuple[int, int], values, **options):
    equation = Equation(a="1", b="0", c=c, definitions=options.pop("definitions", {}),
                        parameters={"p": Parameter(0.5)})
    return run_sweep(compile_equation(equation), Domain(*box, *n, name="box"), "p", values, **options)


def test_a_level_line_gives_the_hyperbolic_area_p_minus_ymin_times_the_width():
    # c = y - p on [0, 3] x [-1, 2]: hyperbolic where y < p, a band of area (p - ymin) * width = 3 (p + 1),
    # elliptic above it, 3 (2 - p). A coarse grid whose rows never hold p: node counts are off by O(h).
    values = sweep_values(-0.8, 1.7, 11)
    sweep = _sweep("y - p", (0.0, 3.0, -1.0, 2.0), (31, 23), values)
    assert sweep.parameter == "p" and sweep.values == tuple(values) and not sweep.log
    for row in sweep.rows:
        p = row.value
        assert row.areas["hyperbolic"] == pytest.approx(3.0 * (p + 1.0), rel=1e-12)
        assert row.areas["elliptic"] == pytest.approx(3.0 * (2.0 - p), rel=1e-12)
        assert row.areas["parabolic"] == 0.0 and row.areas["undefined"] == 0.0
        assert row.pockets == 1 and row.peak is None
        assert list(row.areas) == list(row.fractions) == ["elliptic", "parabolic", "hyperbolic", "undefined"]
    # the share of nodes is a coarser measure: it misses the band's area by up to a row of nodes
    shares = [row.fractions["hyperbolic"] * 9.0 for row in sweep.rows]
    assert max(abs(s - 3.0 * (p + 1.0)) for s, p in zip(shares, values, strict=True)) > 0.05


def test_a_slanted_line_follows_the_quadratic_closed_form():
    # c = x + y - p on [-1, 1]^2: hyperbolic below the line x + y = p. The triangle cut off below it has legs
    # p + 2 for p <= 0 (area (p + 2)^2 / 2); above 0 the triangle above the line, legs 2 - p, is elliptic.
    values = sweep_values(-1.7, 1.7, 9)
    sweep = _sweep("x + y - p", (-1.0, 1.0, -1.0, 1.0), (41, 37), values)
    for row in sweep.rows:
        p = row.value
        expected = (p + 2.0) ** 2 / 2.0 if p <= 0 else 4.0 - (2.0 - p) ** 2 / 2.0
        assert row.areas["hyperbolic"] == pytest.approx(expected, rel=1e-6)
        assert row.areas["elliptic"] == pytest.approx(4.0 - expected, rel=1e-6)


def test_a_disc_grows_as_pi_p_from_below_and_its_peak_is_p_at_the_centre():
    # c = x^2 + y^2 - p: hyperbolic in the disc of radius r = sqrt(p), area pi p. Its polygon is inscribed in
    # the circle (every vertex refined onto it), so it falls short of pi p, by at most the circular segments
    # over its chords: a chord subtending theta cuts off r^2 (theta - sin theta) / 2 <= r^2 theta^3 / 12, and
    # each chord lies in one grid cell (length <= the cell diagonal l, theta <= 2 asin(l / 2r)), the thetas
    # summing to 2 pi: a deficit of at most pi r^2 theta_max^2 / 6.
    # The peak quantity q = p - x^2 - y^2 is largest, p, at the centre (a node of the odd grid).
    values = sweep_values(0.04, 0.81, 6)
    sweep = _sweep("x**2 + y**2 - p", (-1.0, 1.0, -1.0, 1.0), (81, 81), values, definitions={"q": "p - x**2 - y**2"},
                   quantity="q")
    diagonal = math.hypot(2.0 / 80, 2.0 / 80)
    for row in sweep.rows:
        p = row.value
        theta = 2.0 * math.asin(diagonal / (2.0 * math.sqrt(p)))
        deficit = math.pi * p - row.areas["hyperbolic"]
        assert -1e-12 <= deficit <= math.pi * p * theta ** 2 / 6.0
        assert row.areas["elliptic"] + row.areas["hyperbolic"] == pytest.approx(4.0, rel=1e-13)
        assert row.pockets == 1
        assert row.peak == {"quantity": "q", "value": p, "at": [0.0, 0.0]}


def test_undefined_cells_are_measured_and_the_zones_stop_at_them():
    # c = sqrt(x) - p on [-1, 2] x [0, 1.5]: undefined for x < 0; the cells left of the node column x = 0 (an
    # area of 1 * 1.5) have an undefined corner. Hyperbolic where sqrt(x) < p: 0 <= x < p^2, area 1.5 p^2;
    # elliptic the rest of the defined part, 1.5 (2 - p^2).
    values = sweep_values(0.3, 1.3, 5)
    sweep = _sweep("sqrt(x) - p", (-1.0, 2.0, 0.0, 1.5), (31, 16), values)
    for row in sweep.rows:
        p = row.value
        assert row.areas["undefined"] == pytest.approx(1.5, rel=1e-12)
        assert row.areas["hyperbolic"] == pytest.approx(1.5 * p * p, rel=1e-9)
        assert row.areas["elliptic"] == pytest.approx(1.5 * (2.0 - p * p), rel=1e-9)


def test_fractions_pockets_and_peak_equal_what_classify_prints_at_each_value():
    # The transonic bump study with its peak quantity (the local Mach number), swept over the free-stream
    # Mach number through the appearance of the supersonic pocket; classify run on its own at each value.
    sweep = run_json("sweep", BUMP, "--grid", "61", "31", "--sweep", "mach=0.7:0.9:4")
    assert sweep["values"] == [row["value"] for row in sweep["rows"]] == list(sweep_values(0.7, 0.9, 4))
    appeared = 0
    for row in sweep["rows"]:
        classified = run_json("classify", BUMP, "--grid", "61", "31", "--param", f"mach={row['value']!r}")
        assert row["fractions"] == classified["fractions"]            # the same floats, bit for bit
        assert row["pockets"] == len(classified["pockets"])
        peaks = [p["peak"] for p in classified["pockets"] if p["peak"] is not None]
        assert row["peak"] == (max(peaks, key=lambda peak: peak["value"]) if peaks else None)
        appeared += row["pockets"] > 0
    assert 0 < appeared < len(sweep["rows"])      # the range holds the pocket's appearance


def test_logarithmic_values_are_geometric_with_exact_ends():
    values = sweep_values(1e-3, 10.0, 5, log=True)
    assert values[0] == 1e-3 and values[-1] == 10.0
    assert np.allclose(values, [1e-3, 1e-2, 1e-1, 1.0, 10.0], rtol=1e-14)
    linear = sweep_values(-1.0, 1.0, 5)
    assert list(linear) == [-1.0, -0.5, 0.0, 0.5, 1.0]
    sweep = _sweep("y - p", (0.0, 1.0, 0.0, 1.0), (11, 11), sweep_values(0.1, 0.9, 3, log=True), log=True)
    assert sweep.log and [row.value for row in sweep.rows] == list(sweep.values)


@pytest.mark.parametrize(("arguments", "options", "message"), [
    ((0.0, 1.0, 1), {}, "number of values must be a whole number from 2"),
    ((0.0, 1.0, MAX_SWEEP_VALUES + 1), {}, "number of values must be a whole number from 2"),
    ((0.0, 1.0, 2.5), {}, "number of values must be a whole number"),
    ((1.0, 1.0, 5), {}, "low end must be below its high end"),
    ((2.0, 1.0, 5), {}, "low end must be below its high end"),
    ((math.nan, 1.0, 5), {}, "low end must be a finite number"),
    ((0.0, math.inf, 5), {}, "high end must be a finite number"),
    ((0.0, 1.0, 5), {"log": True}, "logarithmic sweep needs a low end above 0"),
    ((-1.0, 1.0, 5), {"log": True}, "logarithmic sweep needs a low end above 0"),
    ((1.0, 1.0 + 4e-16, 5), {}, "not all distinct"),
    ((-1e308, 1e308, 5), {}, "too wide"),
])
def test_bad_ranges_are_refused_with_a_reason(arguments, options, message):
    with pytest.raises(ValueError, match=message):
        sweep_values(*arguments, **options)


def test_an_unknown_parameter_or_a_value_that_is_not_finite_is_refused():
    compiled = compile_equation(Equation("1", "0", "y - p", parameters={"p": Parameter(0.5)}))
    with pytest.raises(ValueError, match="no parameter 'q' to sweep; its parameters are p"):
        run_sweep(compiled, Domain(0.0, 1.0, 0.0, 1.0, 11, 11), "q", [0.5])
    with pytest.raises(ValueError, match="must be a finite number"):
        _sweep("y - p", (0.0, 1.0, 0.0, 1.0), (11, 11), [0.5, math.nan])


def test_progress_rises_to_one_and_cancel_stops_between_and_within_values():
    reported = []
    _sweep("y - p", (0.0, 1.0, 0.0, 1.0), (21, 21), [0.2, 0.5, 0.8], progress=reported.append)
    assert reported == sorted(reported) and reported[-1] == 1.0 and len(reported) > 6
    seen: list[float] = []

    def cancel_on_second_value() -> bool:
        return any(fraction > 0.34 for fraction in seen)

    with pytest.raises(Cancelled):
        _sweep("y - p", (0.0, 1.0, 0.0, 1.0), (21, 21), [0.2, 0.5, 0.8], progress=seen.append,
               cancel=cancel_on_second_value)
    assert max(seen) < 2 / 3       # stopped during the second value


def test_zone_areas_fall_back_to_node_weights_beyond_the_polygon_limit(monkeypatch):
    # Above MAX_POLYGON_NODES the zones have no polygons; every area is then the trapezoid area of the type's
    # nodes. For the band y < p = 0.55 on an 11 x 11 grid over [0, 1]^2 the hyperbolic rows are y = 0, 0.1,
    # ..., 0.5, of trapezoid heights 0.05 (the edge row) and 0.1: (0.05 + 5 * 0.1) * 1 = 0.55; the elliptic
    # rows 0.6 to 1: 4 * 0.1 + 0.05 = 0.45.
    compiled = compile_equation(Equation("1", "0", "y - p", parameters={"p": Parameter(0.55)}))
    type_map = classify_grid(compiled, Domain(0.0, 1.0, 0.0, 1.0, 11, 11))
    monkeypatch.setattr(zones, "MAX_POLYGON_NODES", 100)
    areas = zone_areas(type_map)
    assert areas["hyperbolic"] == pytest.approx(0.55, rel=1e-12)
    assert areas["elliptic"] == pytest.approx(0.45, rel=1e-12)
