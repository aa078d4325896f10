"""Equation templates: every file loads and compiles, and each equation has the type structure and the
characteristics its trade knows from closed forms."""

import json
import math
import pathlib

import numpy as np
import pytest
from scipy import integrate, optimize

from core.analysis.classify import TypeCode, classify_grid, classify_points
from core.equations.compiled import compile_equation
from core.equations.templates import TemplateError, list_templates, load_template
from core.equations.trade import (
    internal_wave_ray_slope,
    isentropic_ratios,
    local_mach_number,
    small_disturbance_mach,
)
from core.results.readouts import read_trade

NAMES = ("full_potential", "internal_waves", "keldysh", "shallow_water", "small_disturbance", "tricomi")


def coefficient_slopes(compiled, x, y, **options):
    """The two characteristic slopes dy/dx = (b +- sqrt(D)) / (2a)."""
    a, b, c = (np.asarray(v, dtype=float) for v in compiled.coefficients(x, y, **options))
    root = np.sqrt(b * b - 4 * a * c)
    return (b + root) / (2 * a), (b - root) / (2 * a)


def test_every_template_loads_compiles_and_is_of_mixed_type():
    assert set(NAMES) <= set(list_templates())
    for name in NAMES:
        template = load_template(name)
        assert template.name == name and template.title and template.description
        compiled = compile_equation(template.equation)
        type_map = classify_grid(compiled, template.domain.with_grid(81, 61))
        assert type_map.fractions["elliptic"] > 0.05, name
        assert type_map.fractions["hyperbolic"] > 0.001, name
        for quantity in template.quantities:            # each data variant compiles too
            compile_equation(template.equation_with_data([quantity]), data_names=(quantity,))
        for parameter in template.equation.parameters.values():
            assert parameter.minimum <= parameter.value <= parameter.maximum
            assert parameter.unit and parameter.description


def test_data_quantities_replace_definitions():
    flow = load_template("full_potential")
    with_data = flow.equation_with_data(["u", "v", "pressure"])
    assert "u" not in with_data.definitions and "v" not in with_data.definitions
    assert with_data.definitions["c2"] == flow.equation.definitions["c2"]
    perturbation = load_template("small_disturbance")
    assert perturbation.equation_with_data(["phi"]).definitions["phix"] == "diff(phi, x)"
    assert "phix" not in perturbation.equation_with_data(["phix"]).definitions
    with pytest.raises(TemplateError, match="both stand for 'phix'"):
        perturbation.equation_with_data(["phi", "phix"])
    ocean = load_template("internal_waves")
    assert ocean.equation_with_data(["N2"]).definitions["N"] == "sqrt(N2)"


def test_full_potential_is_hyperbolic_exactly_above_the_sonic_speed():
    # D = 4 c^2 (q^2 - c^2), and q = c exactly at q = c* = c0 sqrt(2/(gamma+1)) (common practice, no source)
    template = load_template("full_potential")
    compiled = compile_equation(template.equation)
    values = template.equation.parameter_values()
    c_star = values["c0"] * math.sqrt(2.0 / (values["gamma"] + 1.0))

    def speed_over_sonic(y):
        v = compiled.evaluate(0.0, y)
        return math.sqrt(float(v["q2"])) - c_star

    sonic_y = optimize.brentq(speed_over_sonic, 1.0, 3.0, xtol=1e-14)     # above the crest
    evaluated = compiled.evaluate(0.0, sonic_y)
    a, b, c = (float(evaluated[k]) for k in "abc")
    c2 = float(evaluated["c2"])
    assert abs(b * b - 4 * a * c) < 1e-12 * c2 * c2                          # D = 4 c^2 (q^2 - c^2) = 0
    assert float(evaluated["M"]) == pytest.approx(1.0, abs=1e-12)
    codes, _ = classify_points(compiled, np.zeros(2), np.array([sonic_y - 1e-3, sonic_y + 1e-3]))
    assert codes.tolist() == [TypeCode.HYPERBOLIC, TypeCode.ELLIPTIC]
    # the crest of the bump: q = 2U (potential flow past a cylinder, common practice)
    crest = compiled.evaluate(0.0, 1.0)
    u_inf = values["Minf"] * values["c0"] / math.sqrt(1 + 0.2 * values["Minf"] ** 2)
    assert float(crest["u"]) == pytest.approx(2 * u_inf)
    assert float(crest["M"]) == pytest.approx(float(local_mach_number(2 * u_inf, 0.0, crest["c2"])))
    inside = compiled.evaluate(0.0, 0.5)
    assert math.isnan(float(inside["u"]))                                   # the body is undefined


def test_full_potential_readout_at_the_crest():
    template = load_template("full_potential")
    compiled = compile_equation(template.equation)
    readout = read_trade(template.trade, compiled, 0.0, 1.0).values
    mach = readout["mach"]
    assert mach == pytest.approx(float(compiled.evaluate(0.0, 1.0)["M"]))
    assert readout["flow_angle_deg"] == pytest.approx(0.0, abs=1e-9)
    assert readout["mach_angle_deg"] == pytest.approx(math.degrees(math.asin(1 / mach)))
    assert readout["pressure_ratio"] == pytest.approx(float(isentropic_ratios(mach, 1.4).pressure))


def test_small_disturbance_default_matches_thin_body_theory():
    # phi_x of the parabolic-arc bump against the source-sheet integral evaluated by scipy.integrate.quad:
    # phi_x = (1/(pi beta)) int_{-1}^{1} y_b'(s) (x - s) / ((x - s)^2 + (beta y)^2) ds, y_b = tau (1 - s^2)
    template = load_template("small_disturbance")
    compiled = compile_equation(template.equation)
    p = template.equation.parameter_values()
    beta = math.sqrt(1 - p["Minf"] ** 2)
    for x, y in ((0.0, 0.0), (0.3, 0.2), (-1.7, 0.5), (2.5, 1.0), (0.9, 0.05)):
        def integrand(s, x=x, y=y):
            return -2 * p["tau"] * s * (x - s) / ((x - s) ** 2 + (beta * y) ** 2)

        weight = {"weight": "cauchy", "wvar": x} if y == 0 else {}
        if y == 0:
            def integrand(s, x=x):                                           # principal value on the wall
                return 2 * p["tau"] * s
        reference, _ = integrate.quad(integrand, -1, 1, limit=200, **weight)
        reference /= math.pi * beta
        assert float(compiled.evaluate(x, y)["phix"]) == pytest.approx(reference, rel=1e-9, abs=1e-12)
    # crest value 4 tau/(pi beta) (the closed form above at x = y = 0)
    assert float(compiled.evaluate(0.0, 0.0)["phix"]) == pytest.approx(4 * p["tau"] / (math.pi * beta))
    # the coefficient a is 1 - M^2 with the small-disturbance local Mach number
    values = compiled.evaluate(np.array([0.0, 0.4, 2.0]), np.array([0.1, 0.3, 0.5]))
    mach = small_disturbance_mach(p["Minf"], p["gamma"], values["phix"])
    np.testing.assert_allclose(values["a"], 1 - mach**2, atol=1e-12)


def test_internal_waves_rays_and_turning_depths():
    template = load_template("internal_waves")
    compiled = compile_equation(template.equation)
    p = template.equation.parameter_values()
    z = np.linspace(-180, -60, 13)
    n = compiled.evaluate(0.0 * z, z)["N"]
    steep, shallow = coefficient_slopes(compiled, 0.0 * z, z)
    gill = internal_wave_ray_slope(n, p["f"], p["w"])                       # Gill (1982)
    hyperbolic = np.isfinite(gill)
    assert hyperbolic.sum() >= 8
    np.testing.assert_allclose(np.abs(steep[hyperbolic]), gill[hyperbolic], rtol=1e-12)
    np.testing.assert_allclose(shallow[hyperbolic], -steep[hyperbolic], rtol=1e-12)

    def n_minus_w(depth):
        return float(compiled.evaluate(0.0, depth)["N"]) - p["w"]

    for bracket in ((-400.0, -120.0), (-120.0, 0.0)):                      # below and above the thermocline
        turning = optimize.brentq(n_minus_w, *bracket, xtol=1e-10)
        codes, _ = classify_points(compiled, 0.0, np.array([turning - 0.5, turning + 0.5]))
        assert sorted(codes.tolist()) == [TypeCode.ELLIPTIC, TypeCode.HYPERBOLIC]


def test_shallow_water_is_hyperbolic_where_supercritical():
    template = load_template("shallow_water")
    compiled = compile_equation(template.equation)
    x, y = np.meshgrid(np.linspace(-3, 3, 61), np.linspace(-2, 2, 41))
    values = compiled.evaluate(x, y)
    codes, _ = classify_points(compiled, x, y)
    defined = codes != TypeCode.UNDEFINED
    supercritical = values["Fr"] > 1 + 1e-9
    subcritical = values["Fr"] < 1 - 1e-9
    assert supercritical.sum() > 5
    assert np.all(codes[defined & supercritical] == TypeCode.HYPERBOLIC)
    assert np.all(codes[defined & subcritical] == TypeCode.ELLIPTIC)
    # Bernoulli with constant specific head: h + q^2/(2g) = E everywhere in the flow
    energy = values["h"] + values["q2"] / (2 * 9.81)
    np.testing.assert_allclose(energy[defined], 1.0, rtol=1e-12)


def test_model_equations_characteristics_in_closed_form():
    tricomi = compile_equation(load_template("tricomi").equation)
    keldysh = compile_equation(load_template("keldysh").equation)
    y = np.linspace(-0.9, -0.1, 9)
    x = np.zeros_like(y)
    # Tricomi y u_xx + u_yy = 0: characteristics x +- (2/3)(-y)^(3/2) = const, slopes dy/dx = -+1/sqrt(-y)
    steep, other = coefficient_slopes(tricomi, x, y)
    np.testing.assert_allclose(sorted([steep[0], other[0]]), [-1 / math.sqrt(0.9), 1 / math.sqrt(0.9)])
    np.testing.assert_allclose(np.abs(steep), 1 / np.sqrt(-y))
    # Keldysh u_xx + y u_yy = 0: characteristics -y = (x - x1)^2 / 4, slopes dy/dx = +-sqrt(-y)
    steep, other = coefficient_slopes(keldysh, x, y)
    np.testing.assert_allclose(np.abs(steep), np.sqrt(-y))
    np.testing.assert_allclose(other, -steep)
    # both change type on y = y0
    for compiled in (tricomi, keldysh):
        codes, _ = classify_points(compiled, 0.0, np.array([-0.1, 0.0, 0.1]), parameters={"y0": 0.0})
        assert codes.tolist() == [TypeCode.HYPERBOLIC, TypeCode.PARABOLIC, TypeCode.ELLIPTIC]
        codes, _ = classify_points(compiled, 0.0, np.array([0.2, 0.4]), parameters={"y0": 0.3})
        assert codes.tolist() == [TypeCode.HYPERBOLIC, TypeCode.ELLIPTIC]


def write_template(tmp_path, **changes):
    document = json.loads(pathlib.Path(load_template("tricomi").path).read_text(encoding="utf-8"))
    document.update(changes)
    path = tmp_path / "custom.json"
    path.write_text(json.dumps(document))
    return path


def test_template_from_a_path_and_malformed_files(tmp_path):
    path = write_template(tmp_path, title="My Tricomi")
    assert load_template(str(path)).title == "My Tricomi"
    cases = [
        ({"coefficients": {"a": "y"}}, "'coefficients'"),
        ({"colour": "red"}, "unknown field(s) colour"),
        ({"mixtype_template": 2}, "'mixtype_template' must be 1"),
        ({"trade": {"reynolds": {}}}, "unknown trade quantity kind"),
        ({"trade": {"froude": {"u": "u", "v": "v", "h": "h", "g": "g"}}}, "'u' is not a variable"),
        ({"parameters": {"y0": {"value": 5.0, "minimum": -1.0, "maximum": 1.0}}}, "outside"),
        ({"parameters": {"y0": {"value": "zero"}}}, "finite number"),
        ({"peak_quantity": "M"}, "'peak_quantity'"),
        ({"domain": {"xmin": 1.0, "xmax": 0.0, "ymin": 0.0, "ymax": 1.0}}, "xmin"),
        ({"data_quantities": {"q": {"replaces": "nothing"}}}, "not a definition"),
    ]
    for change, words in cases:
        path = write_template(tmp_path, **change)
        with pytest.raises(TemplateError) as caught:
            load_template(str(path))
        assert str(path) in str(caught.value) and words in str(caught.value), str(caught.value)
    path.write_text("{not json")
    with pytest.raises(TemplateError, match="not valid JSON"):
        load_template(str(path))
    with pytest.raises(TemplateError, match="no template named 'nope'.*tricomi"):
        load_template("nope")


def test_template_equations_carry_their_readouts():
    for name in list_templates():
        template = load_template(name)
        assert dict(template.equation.trade) == {k: dict(v) for k, v in template.trade.items()}
        assert template.equation.peak_quantity == (template.peak_quantity or "")
        compile_equation(template.equation)  # the readouts name values the equation has
